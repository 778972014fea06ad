#pragma once
/// @file csv_reader.hpp
/// Reader for comma-separated text: one file per site (`time,<var>...`) or one long file (`site,time,<var>...`).
/// The exact format, with an example, is in docs/input-formats.md.

#include <filesystem>

#include "libseq/io/read_options.hpp"

namespace libseq::io {

/// Reads a CSV file into a Panel.
///
/// Header comment lines (`# key: value`) give site metadata in the one-site form (`site_id`, `name`, `latitude`,
/// `longitude`, `elevation`) and variable metadata in both forms (`units <var>`, `standard_name <var>`). Times are
/// ISO 8601, with or without a UTC offset, on one regular step. Empty cells, `NA` and `NaN` are missing. In the long
/// form the sites may cover different spans on the same grid; the panel spans them all, padded with NaN. The shared
/// checks of docs/input-formats.md follow (units conversion, all-missing sites dropped with a warning).
///
/// Thread-safety: reentrant; distinct calls share nothing.
/// @throws IoError when the file cannot be opened or read.
/// @throws FormatError when the header is not `time,...` or `site,time,...`, a column name repeats, or a row has
///         the wrong number of fields (message names file and line).
/// @throws DataError when a time or number is malformed or infinite (file, line, column and text), when times are
///         duplicated, go backwards or the step is irregular (file, line, time), or when a requested variable or
///         site is absent (listing those present).
ReadResult read_csv(const std::filesystem::path& path, const ReadOptions& options = {});

}  // namespace libseq::io
