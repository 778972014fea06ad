#include "libseq/baselines/persistence.hpp"

#include <cmath>

#include "baselines/common_impl.hpp"
#include "libseq/baselines/seasonal_naive.hpp"
#include "libseq/error.hpp"

namespace libseq::baselines {

void Persistence::fit(const SeriesSet& series, IndexRange fit_range, IndexRange /*validation_range*/) {
  series.check(name());
  detail::require_range(name(), "fit range", fit_range, series.length());
}

PointForecasts Persistence::forecast(const SeriesSet& series, std::span<const std::size_t> issues,
                                     std::size_t horizon) const {
  detail::require_issues(name(), issues, 0, series.length());
  auto out = detail::make_points(issues, horizon);
  for (std::size_t i = 0; i < issues.size(); ++i) {
    // The latest observed value at or before the issue: a gauge that missed one reading still has its last one.
    double last = std::nan("");
    for (std::size_t s = issues[i] + 1; s-- > 0;) {
      if (!std::isnan(series.target[s])) {
        last = series.target[s];
        break;
      }
    }
    for (std::size_t h = 0; h < horizon; ++h) out.value(i, h) = last;
  }
  return out;
}

void SeasonalNaiveOptions::validate() const {
  if (period_steps == 0) {
    throw ConfigError("seasonal_naive.period_steps = 0: expected a season length of at least 1 step");
  }
}

SeasonalNaive::SeasonalNaive(SeasonalNaiveOptions options) : options_(options) { options_.validate(); }

void SeasonalNaive::fit(const SeriesSet& series, IndexRange fit_range, IndexRange /*validation_range*/) {
  series.check(name());
  detail::require_range(name(), "fit range", fit_range, series.length());
}

PointForecasts SeasonalNaive::forecast(const SeriesSet& series, std::span<const std::size_t> issues,
                                       std::size_t horizon) const {
  detail::require_issues(name(), issues, 0, series.length());
  auto out = detail::make_points(issues, horizon);
  const std::size_t m = options_.period_steps;
  for (std::size_t i = 0; i < issues.size(); ++i) {
    for (std::size_t h = 1; h <= horizon; ++h) {
      // k = ceil(h / m) whole seasons back lands on a step at or before the issue: t + h − k·m <= t.
      const std::size_t back = ((h + m - 1) / m) * m;
      const std::size_t target_step = issues[i] + h;
      if (back > target_step) continue;  // precedes the series: NaN
      out.value(i, h - 1) = series.target[target_step - back];
    }
  }
  return out;
}

}  // namespace libseq::baselines
