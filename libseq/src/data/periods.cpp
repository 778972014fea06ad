#include "libseq/data/periods.hpp"

#include "libseq/error.hpp"

namespace libseq::data {

std::string Period::to_string() const { return format_iso8601(first) + ".." + format_iso8601(last); }

Period parse_period(std::string_view text, std::string_view key) {
  const auto dots = text.find("..");
  if (dots == std::string_view::npos) {
    throw ConfigError(std::string(key) + ": '" + std::string(text) +
                      "' is not a period; expected START..END, e.g. 1974-01-01..1974-12-31");
  }
  const std::string_view start_text = text.substr(0, dots);
  const std::string_view end_text = text.substr(dots + 2);
  Period period;
  try {
    period.first = parse_iso8601(start_text, key);
    period.last = parse_iso8601(end_text, key);
  } catch (const DataError& e) {
    throw ConfigError(e.what());
  }
  // A bare date as END stands for the whole day.
  if (end_text.find_first_of("Tt ") == std::string_view::npos) period.last += 86400 - 1;
  if (period.last < period.first) {
    throw ConfigError(std::string(key) + ": period '" + std::string(text) + "' ends before it starts");
  }
  return period;
}

IndexRange index_range(const TimeAxis& axis, const Period& period) {
  IndexRange range;
  range.begin = axis.lower_bound(period.first);
  range.end = axis.lower_bound(period.last + 1);
  if (range.end < range.begin) range.end = range.begin;
  return range;
}

std::vector<std::string> JobPeriods::problems(const TimeAxis& axis, std::string_view prefix) const {
  std::vector<std::string> out;
  const std::string p(prefix);
  struct Named {
    std::string key;
    const Period* period;
  };
  std::vector<Named> named{{p + ".fit", &fit}};
  if (validation) named.push_back({p + ".validation", &*validation});
  if (calibration) named.push_back({p + ".calibration", &*calibration});
  if (test) named.push_back({p + ".test", &*test});
  const std::string data_range =
      axis.length() ? format_iso8601(axis.start()) + ".." + format_iso8601(axis.end()) : std::string("(no data)");
  for (const auto& n : named) {
    if (index_range(axis, *n.period).empty()) {
      out.push_back(n.key + ": period " + n.period->to_string() + " has no time step in the data (data cover " +
                    data_range + ")");
    }
  }
  for (std::size_t a = 0; a < named.size(); ++a) {
    for (std::size_t b = a + 1; b < named.size(); ++b) {
      const bool validation_calibration_pair =
          (named[a].key == p + ".validation" && named[b].key == p + ".calibration");
      if (validation_calibration_pair && *named[a].period == *named[b].period) continue;
      if (named[a].period->overlaps(*named[b].period)) {
        out.push_back(named[b].key + ": period " + named[b].period->to_string() + " overlaps " + named[a].key + " (" +
                      named[a].period->to_string() + "); periods must be disjoint");
      }
    }
  }
  return out;
}

}  // namespace libseq::data
