#pragma once
/// @file intervals.hpp
/// Prediction intervals for any baseline from the empirical quantiles of its own forecast errors per lead, taken
/// over a fit or calibration range, so that all baselines are given intervals the same way and compare like with
/// like.

#include <cstddef>
#include <span>
#include <vector>

#include "libseq/baselines/forecaster.hpp"

namespace libseq::baselines {

/// Sorted forecast errors (observed − forecast) per lead, collected from a fitted Forecaster.
class ErrorQuantiles {
 public:
  /// Collects errors of `forecaster` at every issue t in `range` whose target step t + h also lies in `range`,
  /// for h = 1..horizon, skipping missing observations and NaN forecasts.
  /// @throws libseq::DataError when some lead gets no error at all (range too short or all missing).
  static ErrorQuantiles collect(const Forecaster& forecaster, const SeriesSet& series, IndexRange range,
                                std::size_t horizon);

  /// Number of leads covered.
  std::size_t horizon() const { return errors_.size(); }
  /// Errors of lead index h (lead h + 1), ascending.
  const std::vector<double>& errors(std::size_t lead_index) const { return errors_.at(lead_index); }

  /// Empirical quantile of the errors of one lead: linear interpolation between order statistics, definition 7 of
  /// Hyndman & Fan (1996, Am. Stat. 50:361) (the default of R `quantile` and NumPy `quantile`).
  /// @throws libseq::ConfigError when probability is outside [0, 1].
  double quantile(std::size_t lead_index, double probability) const;

  /// Point forecast + error quantile for each (issue, lead, probability).
  /// @throws libseq::ConfigError when a probability is outside (0, 1) or the forecasts have more leads than
  /// horizon().
  QuantileForecasts apply(const PointForecasts& points, std::span<const double> probabilities) const;

 private:
  std::vector<std::vector<double>> errors_;
};

/// Point forecasts of `forecaster` from `issues`, turned into quantiles with errors collected over
/// `calibration_range` (pass the fit range to use in-sample errors).
QuantileForecasts forecast_quantiles(const Forecaster& forecaster, const SeriesSet& series,
                                     std::span<const std::size_t> issues, std::size_t horizon,
                                     std::span<const double> probabilities, IndexRange calibration_range);

}  // namespace libseq::baselines
