#pragma once
/// @file seasonal_naive.hpp
/// Seasonal naive: the forecast of step t + h is the value one (or more) whole seasons earlier that is already
/// observed at the issue, y[t + h − k·m] with k = ceil(h / m).

#include <cstddef>

#include "libseq/baselines/forecaster.hpp"

namespace libseq::baselines {

/// Options of the seasonal naive forecaster.
struct SeasonalNaiveOptions {
  /// Season length in steps (24 or 168 for hourly data, 48 or 336 for half-hourly, 365 or 7 for daily). Must be >= 1;
  /// 1 gives persistence without gap filling.
  std::size_t period_steps = 24;
  /// @throws libseq::ConfigError naming `seasonal_naive.period_steps` when it is 0.
  void validate() const;
};

/// Seasonal naive forecaster: y[t + h − k·m], k = ceil(h / m). The forecast is NaN when that value is missing or
/// precedes the series (no substitution, so its skill is not flattered by gap filling).
class SeasonalNaive final : public Forecaster {
 public:
  /// @throws libseq::ConfigError from options.validate().
  explicit SeasonalNaive(SeasonalNaiveOptions options);
  std::string name() const override { return "seasonal_naive"; }
  /// @throws libseq::DataError when fit_range lies outside the series.
  void fit(const SeriesSet& series, IndexRange fit_range, IndexRange validation_range) override;
  /// @throws libseq::DataError when an issue lies outside the series.
  PointForecasts forecast(const SeriesSet& series, std::span<const std::size_t> issues,
                          std::size_t horizon) const override;
  const SeasonalNaiveOptions& options() const { return options_; }

 private:
  SeasonalNaiveOptions options_;
};

}  // namespace libseq::baselines
