#pragma once
// Checks shared by the runnel HDF5 and CSV readers (private to libseq::io): choosing variables and sites, building
// the regular time axis from raw instants, and the final pass over a filled panel (±Inf refused, units converted,
// all-missing sites dropped with a warning).

#include <cstdint>
#include <functional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "libseq/data/panel.hpp"
#include "libseq/io/read_options.hpp"

namespace libseq::io::detail {

/// Indices into `available` of the variables `requested` names (by name, then standard_name), in request order;
/// every variable in file order when `requested` is empty.
/// @throws DataError naming `source`, the missing key and every variable present.
std::vector<std::size_t> select_variables(const std::vector<data::VariableInfo>& available,
                                          const std::vector<std::string>& requested, std::string_view source);

/// Indices into `ids` of the requested site ids, in file order; all when `requested` is empty.
/// @throws DataError naming `source`, the unknown id and (up to 20 of) the ids present.
std::vector<std::size_t> select_sites(const std::vector<std::string>& ids, const std::vector<std::string>& requested,
                                      std::string_view source);

/// A regular axis from instants in file order. `where(i)` describes instant i for messages (e.g. "line 12").
/// A single instant gives a one-step axis of step `default_step_seconds`.
/// @throws DataError naming `source`, the place and the time when instants are duplicated, go backwards or the
/// step changes; or when there are no instants.
data::TimeAxis regular_axis(std::span<const data::UtcSeconds> times, std::string_view source,
                            const std::function<std::string(std::size_t)>& where,
                            std::int64_t default_step_seconds = 86400);

/// Final pass over a filled panel, the same for every reader: refuses ±Inf (DataError naming source, variable,
/// site and time), converts units listed in options.target_units through data::convert_units, drops sites whose
/// values are all missing (one warning each). @throws DataError when no site is left.
void finish_panel(ReadResult& result, const ReadOptions& options, std::string_view source);

/// Comma-separated list of names, for messages.
std::string join(const std::vector<std::string>& names, std::size_t limit = 20);

}  // namespace libseq::io::detail
