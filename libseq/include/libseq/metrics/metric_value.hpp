#pragma once
/// @file metric_value.hpp
/// What every metric returns: the value and how many cases it used and skipped, so that a score is never reported
/// without the sample it rests on.

#include <cstddef>
#include <limits>

namespace libseq::metrics {

/// How many (observation, forecast) cases a metric used and why it skipped the others.
///
/// A case is skipped, in this order of precedence: when the observation is not finite (NaN marks a missing
/// observation throughout libseq); else when the forecast is not finite (a member that diverged, a gap in the
/// forecast); else when a rule of the metric excludes it (MAPE: an observation equal to zero).
struct SampleCounts {
  std::size_t used = 0;                 ///< Cases that entered the value.
  std::size_t missing_observation = 0;  ///< Cases skipped because the observation is NaN (or infinite).
  std::size_t missing_forecast = 0;     ///< Cases with an observation but a non-finite forecast.
  std::size_t excluded = 0;             ///< Cases excluded by a rule of the metric (see each metric).

  /// All skipped cases: missing_observation + missing_forecast + excluded.
  std::size_t skipped() const { return missing_observation + missing_forecast + excluded; }
  /// All cases offered: used + skipped().
  std::size_t total() const { return used + skipped(); }
  friend bool operator==(const SampleCounts&, const SampleCounts&) = default;
};

/// A scalar metric value with its counts. The value is NaN when the metric is undefined on the cases used (no case
/// used, zero variance of the observations for NSE, ...); that is an expected outcome, not an error.
struct MetricValue {
  double value = std::numeric_limits<double>::quiet_NaN();  ///< The metric, in the units the metric states.
  SampleCounts counts;                                      ///< Cases used and skipped.
};

}  // namespace libseq::metrics
