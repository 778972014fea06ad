#pragma once
/// @file periods.hpp
/// Named periods of a job (fit, validation, calibration, test): closed UTC intervals on the data's time axis.

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "libseq/data/time_axis.hpp"

namespace libseq::data {

/// A closed interval of UTC times [first, last].
struct Period {
  UtcSeconds first = 0;
  UtcSeconds last = 0;

  bool contains(UtcSeconds t) const { return t >= first && t <= last; }
  bool overlaps(const Period& other) const { return first <= other.last && other.first <= last; }
  /// "2001-01-01T00:00:00Z..2001-12-31T00:00:00Z".
  std::string to_string() const;
  friend bool operator==(const Period&, const Period&) = default;
};

/// Parses "START..END" with ISO 8601 times (see parse_iso8601). A date-only END means the whole day, i.e. its last
/// second, so "1974-01-01..1974-12-31" covers every step of 1974 whatever the step.
/// @throws libseq::ConfigError naming `key` when the text is malformed or END is before START.
Period parse_period(std::string_view text, std::string_view key);

/// Index range [begin, end) of the axis steps that fall in `period`; empty when none do.
struct IndexRange {
  std::size_t begin = 0;
  std::size_t end = 0;
  std::size_t size() const { return end > begin ? end - begin : 0; }
  bool empty() const { return size() == 0; }
  bool contains(std::size_t i) const { return i >= begin && i < end; }
};
IndexRange index_range(const TimeAxis& axis, const Period& period);

/// The periods of a job. Validation and calibration may be the same period (a common choice with short
/// records); every other pair must be disjoint.
struct JobPeriods {
  Period fit;
  std::optional<Period> validation;
  std::optional<Period> calibration;
  std::optional<Period> test;

  /// Every broken rule, each naming its key under `prefix` (e.g. "periods.fit"): overlaps, and periods with no
  /// step on `axis`. Empty when all is well.
  std::vector<std::string> problems(const TimeAxis& axis, std::string_view prefix = "periods") const;
};

}  // namespace libseq::data
