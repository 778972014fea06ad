// Every baseline through the one Forecaster interface on tseries::ice.river (validation/datasets/ice_river.csv):
// fit on 1972, calibrate intervals on 1973, score on 1974. These are sanity properties of daily river flow, not
// outside reference values: each method forecasts every lead, and the 10–90 % intervals from the calibration year
// cover a plausible share of the test year.

#include <gtest/gtest.h>

#include <cmath>
#include <memory>
#include <vector>

#include "baselines/reference_file.hpp"
#include "libseq/baselines/climatology.hpp"
#include "libseq/baselines/exp_smoothing.hpp"
#include "libseq/baselines/intervals.hpp"
#include "libseq/baselines/local_level.hpp"
#include "libseq/baselines/persistence.hpp"
#include "libseq/baselines/ridge_arx.hpp"
#include "libseq/baselines/seasonal_naive.hpp"
#include "libseq/data/time_axis.hpp"

namespace lb = libseq::baselines;
namespace ld = libseq::data;

TEST(BaselineInterface, EveryMethodForecastsAndCalibratesOnIceRiver) {
  const auto flow = libseq::test::read_csv_column("validation/datasets/ice_river.csv", "flow_vat");
  const auto prec = libseq::test::read_csv_column("validation/datasets/ice_river.csv", "prec");
  const auto temp = libseq::test::read_csv_column("validation/datasets/ice_river.csv", "temp");
  ASSERT_EQ(flow.size(), 1096u);
  const ld::TimeAxis axis(ld::to_utc_seconds({1972, 1, 1, 0, 0, 0}), 86400, flow.size());
  const lb::SeriesSet s{flow, {prec, temp}, axis};
  const lb::IndexRange fit{0, 366}, calibration{366, 731}, test{731, 1096};
  constexpr std::size_t horizon = 3;

  lb::RidgeArxOptions ridge;
  ridge.max_lead = horizon;
  ridge.target_lags = 3;
  ridge.input_lags = 2;
  lb::ExpSmoothingOptions holt;
  holt.model = lb::SmoothingModel::holt;
  holt.starts = 3;
  std::vector<std::unique_ptr<lb::Forecaster>> methods;
  methods.push_back(std::make_unique<lb::Persistence>());
  methods.push_back(std::make_unique<lb::SeasonalNaive>(lb::SeasonalNaiveOptions{.period_steps = 7}));
  methods.push_back(std::make_unique<lb::Climatology>(lb::ClimatologyOptions{}));
  methods.push_back(std::make_unique<lb::RidgeArx>(ridge));
  methods.push_back(std::make_unique<lb::ExpSmoothing>(holt));
  methods.push_back(std::make_unique<lb::LocalLevel>());

  std::vector<std::size_t> issues;
  for (std::size_t t = test.begin; t + horizon < test.end; ++t) issues.push_back(t);
  const std::vector<double> probs{0.1, 0.9};
  double persistence_mae = 0.0, climatology_mae = 0.0;
  for (auto& m : methods) {
    SCOPED_TRACE(m->name());
    // Ridge chooses its penalty on the calibration year; the others ignore the validation range.
    m->fit(s, fit, calibration);
    const auto q = lb::forecast_quantiles(*m, s, issues, horizon, probs, calibration);
    const auto f = m->forecast(s, issues, horizon);
    std::size_t inside = 0, count = 0;
    double abs_error = 0.0;
    for (std::size_t i = 0; i < issues.size(); ++i) {
      const double y = flow[issues[i] + 1];
      ASSERT_FALSE(std::isnan(f.value(i, 0)));
      abs_error += std::abs(y - f.value(i, 0));
      inside += (y >= q.value(i, 0, 0) && y <= q.value(i, 0, 1)) ? 1 : 0;
      ++count;
    }
    const double coverage = static_cast<double>(inside) / static_cast<double>(count);
    RecordProperty(m->name() + "_coverage", std::to_string(coverage));
    // Nominal 80 %; a different year shifts it, but a broken error collection would give ~0 or ~1.
    EXPECT_GT(coverage, 0.5);
    EXPECT_LT(coverage, 0.97);
    if (m->name() == "persistence") persistence_mae = abs_error / static_cast<double>(count);
    if (m->name() == "climatology") climatology_mae = abs_error / static_cast<double>(count);
  }
  // Daily river flow is strongly persistent: one day ahead, yesterday beats the seasonal mean.
  EXPECT_LT(persistence_mae, climatology_mae);
}
