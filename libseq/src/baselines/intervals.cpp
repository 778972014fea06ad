#include "libseq/baselines/intervals.hpp"

#include <algorithm>
#include <cmath>
#include <numeric>
#include <string>

#include "baselines/common_impl.hpp"
#include "libseq/error.hpp"

namespace libseq::baselines {

ErrorQuantiles ErrorQuantiles::collect(const Forecaster& forecaster, const SeriesSet& series, IndexRange range,
                                       std::size_t horizon) {
  detail::require_range(forecaster.name(), "calibration range", range, series.length());
  if (horizon == 0) throw ConfigError(forecaster.name() + ": horizon must be >= 1 to collect errors");
  ErrorQuantiles out;
  out.errors_.assign(horizon, {});
  if (range.size() < 2) {
    throw DataError(forecaster.name() + ": calibration range " + detail::range_text(range) +
                    " is too short to hold an issue and a target step");
  }
  // Issues whose lead-1 target is inside the range; later leads fall outside for the last issues and are skipped.
  const std::size_t first = std::max(range.begin, forecaster.first_issue());
  std::vector<std::size_t> issues;
  for (std::size_t t = first; t + 1 < range.end; ++t) issues.push_back(t);
  const PointForecasts points = forecaster.forecast(series, issues, horizon);
  for (std::size_t i = 0; i < points.issues.size(); ++i) {
    const std::size_t t = points.issues[i];
    for (std::size_t h = 0; h < horizon; ++h) {
      const std::size_t target_step = t + h + 1;
      if (target_step >= range.end) break;
      const double y = series.target[target_step];
      const double f = points.value(i, h);
      if (std::isnan(y) || std::isnan(f)) continue;
      out.errors_[h].push_back(y - f);
    }
  }
  for (std::size_t h = 0; h < horizon; ++h) {
    if (out.errors_[h].empty()) {
      throw DataError(forecaster.name() + ": no forecast error for lead " + std::to_string(h + 1) +
                      " in calibration range " + detail::range_text(range));
    }
    std::sort(out.errors_[h].begin(), out.errors_[h].end());
  }
  return out;
}

double ErrorQuantiles::quantile(std::size_t lead_index, double probability) const {
  detail::require_probability("error quantile", probability, false);
  return detail::sorted_quantile(errors_.at(lead_index), probability);
}

QuantileForecasts ErrorQuantiles::apply(const PointForecasts& points, std::span<const double> probabilities) const {
  if (points.horizon > errors_.size()) {
    throw ConfigError("error quantiles: forecasts have " + std::to_string(points.horizon) +
                      " leads but errors were collected for " + std::to_string(errors_.size()));
  }
  for (double p : probabilities) detail::require_probability("error quantiles", p, true);
  QuantileForecasts out;
  out.issues = points.issues;
  out.horizon = points.horizon;
  out.probabilities.assign(probabilities.begin(), probabilities.end());
  out.values.resize(points.issues.size() * points.horizon * probabilities.size());
  std::vector<double> offsets(points.horizon * probabilities.size());
  for (std::size_t h = 0; h < points.horizon; ++h) {
    for (std::size_t k = 0; k < probabilities.size(); ++k) {
      offsets[h * probabilities.size() + k] = detail::sorted_quantile(errors_[h], probabilities[k]);
    }
  }
  for (std::size_t i = 0; i < points.issues.size(); ++i) {
    for (std::size_t h = 0; h < points.horizon; ++h) {
      for (std::size_t k = 0; k < probabilities.size(); ++k) {
        out.values[(i * points.horizon + h) * probabilities.size() + k] =
            points.value(i, h) + offsets[h * probabilities.size() + k];
      }
    }
  }
  return out;
}

QuantileForecasts forecast_quantiles(const Forecaster& forecaster, const SeriesSet& series,
                                     std::span<const std::size_t> issues, std::size_t horizon,
                                     std::span<const double> probabilities, IndexRange calibration_range) {
  const auto errors = ErrorQuantiles::collect(forecaster, series, calibration_range, horizon);
  return errors.apply(forecaster.forecast(series, issues, horizon), probabilities);
}

}  // namespace libseq::baselines
