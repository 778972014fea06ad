#pragma once
/// @file persistence.hpp
/// Persistence: every lead is forecast by the last observed target value at or before the issue step.

#include "libseq/baselines/forecaster.hpp"

namespace libseq::baselines {

/// Persistence ("naive") forecaster. The last observed value is the latest non-missing one at or before the issue;
/// the forecast is NaN when there is none. fit() only checks the range; it learns nothing.
class Persistence final : public Forecaster {
 public:
  std::string name() const override { return "persistence"; }
  /// @throws libseq::DataError when fit_range lies outside the series.
  void fit(const SeriesSet& series, IndexRange fit_range, IndexRange validation_range) override;
  /// @throws libseq::DataError when an issue lies outside the series.
  PointForecasts forecast(const SeriesSet& series, std::span<const std::size_t> issues,
                          std::size_t horizon) const override;
};

}  // namespace libseq::baselines
