#include "libseq/baselines/climatology.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <numeric>
#include <utility>

#include "baselines/common_impl.hpp"
#include "libseq/error.hpp"

namespace libseq::baselines {

namespace {
constexpr std::array<std::pair<ClimatologySlot, const char*>, 4> slot_names{{
    {ClimatologySlot::automatic, "automatic"},
    {ClimatologySlot::day_of_year, "day_of_year"},
    {ClimatologySlot::step_of_week, "step_of_week"},
    {ClimatologySlot::step_of_day, "step_of_day"},
}};
constexpr std::int64_t seconds_per_day = 86400;
constexpr std::int64_t seconds_per_week = 7 * seconds_per_day;
// 1970-01-01 was a Thursday, so Monday 1970-01-05 00:00 UTC is 4 days after the epoch.
constexpr std::int64_t first_monday = 4 * seconds_per_day;

// Day of year in a 366-day (leap-year) calendar, 0-based, so 29 February is slot 59 in every year and 1 March is
// always slot 60: the same calendar day shares a slot across leap and common years.
std::size_t leap_calendar_day(int month, int day) {
  static constexpr std::array<int, 12> start{0, 31, 60, 91, 121, 152, 182, 213, 244, 274, 305, 335};
  return static_cast<std::size_t>(start[static_cast<std::size_t>(month - 1)] + day - 1);
}

std::int64_t floor_mod(std::int64_t a, std::int64_t b) { return ((a % b) + b) % b; }
}  // namespace

std::string to_string(ClimatologySlot slot) {
  for (const auto& [s, n] : slot_names) {
    if (s == slot) return n;
  }
  return "unknown";
}

ClimatologySlot parse_climatology_slot(std::string_view text) {
  std::string accepted;
  for (const auto& [s, n] : slot_names) {
    if (text == n) return s;
    accepted += accepted.empty() ? n : std::string(", ") + n;
  }
  throw ConfigError("climatology.slot = \"" + std::string(text) + "\": expected one of " + accepted);
}

void ClimatologyOptions::validate() const {
  if (min_count == 0) throw ConfigError("climatology.min_count = 0: expected at least 1 value per slot");
}

Climatology::Climatology(ClimatologyOptions options) : options_(options) { options_.validate(); }

std::size_t Climatology::slot_of(const data::TimeAxis& axis, std::size_t step) const {
  const data::UtcSeconds t = axis.time_at(step);
  switch (resolved_) {
    case ClimatologySlot::day_of_year: {
      const auto c = data::to_civil(t);
      return leap_calendar_day(c.month, c.day);
    }
    case ClimatologySlot::step_of_week:
      return static_cast<std::size_t>(floor_mod(t - first_monday, seconds_per_week) / axis.step_seconds());
    case ClimatologySlot::step_of_day:
      return static_cast<std::size_t>(floor_mod(t, seconds_per_day) / axis.step_seconds());
    case ClimatologySlot::automatic:
      break;
  }
  throw DataError("climatology: slot_of called before fit");
}

void Climatology::fit(const SeriesSet& series, IndexRange fit_range, IndexRange /*validation_range*/) {
  series.check(name());
  detail::require_range(name(), "fit range", fit_range, series.length());
  const auto& axis = series.axis;
  if (axis.length() != series.length()) {
    throw DataError("climatology: the time axis has " + std::to_string(axis.length()) + " steps, expected " +
                    std::to_string(series.length()) + " like the target");
  }
  const std::int64_t step = axis.step_seconds();
  resolved_ = options_.slot;
  if (resolved_ == ClimatologySlot::automatic) {
    resolved_ = step == seconds_per_day ? ClimatologySlot::day_of_year : ClimatologySlot::step_of_week;
  }
  std::size_t slots = 0;
  if (resolved_ == ClimatologySlot::day_of_year) {
    if (step != seconds_per_day) {
      throw DataError("climatology: slot day_of_year needs a daily axis, got a step of " + axis.describe_step());
    }
    slots = 366;
  } else {
    if (step > seconds_per_day || seconds_per_day % step != 0 || axis.start() % step != 0) {
      throw DataError("climatology: slot " + to_string(resolved_) + " needs a step dividing one day and a start on "
                      "that grid, got a step of " + axis.describe_step());
    }
    slots = static_cast<std::size_t>((resolved_ == ClimatologySlot::step_of_week ? seconds_per_week
                                                                                  : seconds_per_day) / step);
  }
  const std::size_t w = options_.window_half_width;
  if (2 * w + 1 > slots) {
    throw ConfigError("climatology.window_half_width = " + std::to_string(w) + ": the window 2w+1 must not exceed the " +
                      std::to_string(slots) + " slots of " + to_string(resolved_));
  }
  // Values by own slot first, then pooled over the circular window d − w .. d + w.
  std::vector<std::vector<double>> by_slot(slots);
  for (std::size_t s = fit_range.begin; s < fit_range.end; ++s) {
    const double y = series.target[s];
    if (!std::isnan(y)) by_slot[slot_of(axis, s)].push_back(y);
  }
  pooled_.assign(slots, {});
  means_.assign(slots, std::nan(""));
  for (std::size_t d = 0; d < slots; ++d) {
    auto& pool = pooled_[d];
    for (std::size_t k = 0; k < 2 * w + 1; ++k) {
      const std::size_t src = (d + slots + k - w) % slots;
      pool.insert(pool.end(), by_slot[src].begin(), by_slot[src].end());
    }
    std::sort(pool.begin(), pool.end());
    if (pool.size() >= options_.min_count) {
      means_[d] = std::accumulate(pool.begin(), pool.end(), 0.0) / static_cast<double>(pool.size());
    }
  }
}

PointForecasts Climatology::forecast(const SeriesSet& series, std::span<const std::size_t> issues,
                                     std::size_t horizon) const {
  if (means_.empty()) throw DataError("climatology: forecast called before fit");
  detail::require_issues(name(), issues, 0, series.length());
  auto out = detail::make_points(issues, horizon);
  for (std::size_t i = 0; i < issues.size(); ++i) {
    for (std::size_t h = 0; h < horizon; ++h) out.value(i, h) = means_[slot_of(series.axis, issues[i] + h + 1)];
  }
  return out;
}

QuantileForecasts Climatology::climatological_quantiles(const SeriesSet& series, std::span<const std::size_t> issues,
                                                        std::size_t horizon,
                                                        std::span<const double> probabilities) const {
  if (means_.empty()) throw DataError("climatology: climatological_quantiles called before fit");
  detail::require_issues(name(), issues, 0, series.length());
  for (double p : probabilities) detail::require_probability("climatology quantiles", p, false);
  QuantileForecasts out;
  out.issues.assign(issues.begin(), issues.end());
  out.horizon = horizon;
  out.probabilities.assign(probabilities.begin(), probabilities.end());
  out.values.reserve(issues.size() * horizon * probabilities.size());
  for (std::size_t t : issues) {
    for (std::size_t h = 0; h < horizon; ++h) {
      const std::size_t slot = slot_of(series.axis, t + h + 1);
      const bool enough = pooled_[slot].size() >= options_.min_count;
      for (double p : probabilities) {
        out.values.push_back(enough ? detail::sorted_quantile(pooled_[slot], p) : std::nan(""));
      }
    }
  }
  return out;
}

}  // namespace libseq::baselines
