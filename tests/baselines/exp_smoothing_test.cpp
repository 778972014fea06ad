// Exponential smoothing checks against statsmodels 0.13.5 (Debian python3-statsmodels),
// statsmodels.tsa.holtwinters.ExponentialSmoothing, values stored by validation/exp_smoothing/make_reference.py in
// validation/exp_smoothing/reference.txt. Both fitters use the same fixed initial states, so they minimise the same
// SSE over the same smoothing parameters. Tolerances and pass rules: validation/exp_smoothing/README.md.

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <map>
#include <string>
#include <vector>

#include "baselines/reference_file.hpp"
#include "libseq/baselines/exp_smoothing.hpp"
#include "libseq/baselines/intervals.hpp"
#include "libseq/error.hpp"

namespace lb = libseq::baselines;

namespace {

const std::map<std::string, std::vector<double>>& reference() {
  static const auto table = libseq::test::read_reference("validation/exp_smoothing/reference.txt");
  return table;
}
const std::vector<double>& ref_values(const std::string& key) {
  const auto it = reference().find(key);
  if (it == reference().end()) throw std::runtime_error("reference.txt has no key " + key);
  return it->second;
}

struct Case {
  std::string key;
  std::string file;
  std::string column;
  bool log;
  lb::SmoothingModel model;
  std::size_t period;
};

std::vector<double> load(const Case& c) {
  auto y = libseq::test::read_csv_column("validation/datasets/" + c.file, c.column);
  if (c.log) {
    for (double& v : y) v = std::log(v);
  }
  if (c.key == "hw_taylor48") y.resize(672);
  return y;
}

const std::vector<Case> cases{
    {"ses_nile", "nile.csv", "flow", false, lb::SmoothingModel::simple, 0},
    {"holt_nile", "nile.csv", "flow", false, lb::SmoothingModel::holt, 0},
    {"hw_log_air", "air_passengers.csv", "passengers", true, lb::SmoothingModel::holt_winters, 12},
    {"hw_co2", "co2.csv", "co2_ppm", false, lb::SmoothingModel::holt_winters, 12},
};

lb::ExpSmoothingOptions options_for(const Case& c) {
  lb::ExpSmoothingOptions o;
  o.model = c.model;
  o.period_steps = c.period;
  return o;
}

lb::SmoothingParameters statsmodels_parameters(const std::string& key) {
  lb::SmoothingParameters p;
  p.level = ref_values(key + ".smoothing_level")[0];
  const double trend = ref_values(key + ".smoothing_trend")[0];
  const double seasonal = ref_values(key + ".smoothing_seasonal")[0];
  p.trend = std::isnan(trend) ? 0.0 : trend;
  p.seasonal = std::isnan(seasonal) ? 0.0 : seasonal;
  p.second_seasonal = 0.0;
  return p;
}

double max_abs_diff(const std::vector<double>& a, const std::vector<double>& b) {
  EXPECT_EQ(a.size(), b.size());
  double d = 0.0;
  for (std::size_t i = 0; i < std::min(a.size(), b.size()); ++i) d = std::max(d, std::abs(a[i] - b[i]));
  return d;
}

}  // namespace

TEST(ExpSmoothing, FilterWithStatsmodelsParametersReproducesItsFittedValues) {
  // statsmodels ExponentialSmoothing(...).fit().fittedvalues, with its fitted parameters plugged in: isolates the
  // recursions from the optimiser. Pass: every fitted value within 1e-8 (relative to the series' magnitude).
  for (const auto& c : cases) {
    SCOPED_TRACE(c.key);
    const auto y = load(c);
    auto o = options_for(c);
    o.fixed_parameters = statsmodels_parameters(c.key);
    lb::ExpSmoothing model(o);
    lb::SeriesSet s{y, {}, {}};
    model.fit(s, {0, y.size()}, {});
    const double scale = std::max(1.0, std::abs(y[0]));
    EXPECT_LT(max_abs_diff(model.fitted_values(), ref_values(c.key + ".fitted")), 1e-8 * scale);
    EXPECT_NEAR(model.sse(), ref_values(c.key + ".sse")[0], 1e-9 * ref_values(c.key + ".sse")[0]);
  }
}

TEST(ExpSmoothing, DoubleSeasonalWithFrozenWeeklyTermReducesToStatsmodelsHoltWinters) {
  // Two weeks of forecast::taylor: the double-seasonal filter with ω = 0 and zero weekly states must match
  // statsmodels' one-season (48 half-hours) Holt-Winters fitted values (no outside double-seasonal reference
  // exists for the additive model: R forecast::dshw is multiplicative only).
  const std::string key = "hw_taylor48";
  Case c{key, "taylor.csv", "demand_mw", false, lb::SmoothingModel::double_seasonal, 48};
  const auto y = load(c);
  lb::ExpSmoothingOptions o;
  o.model = lb::SmoothingModel::double_seasonal;
  o.period_steps = 48;
  o.second_period_steps = 336;
  o.fixed_parameters = statsmodels_parameters(key);
  lb::SmoothingState init;
  double first = 0.0, second = 0.0;
  for (std::size_t j = 0; j < 48; ++j) {
    first += y[j] / 48.0;
    second += y[48 + j] / 48.0;
  }
  init.level = first;
  init.trend = (second - first) / 48.0;
  for (std::size_t j = 0; j < 48; ++j) init.seasonal.push_back(y[j] - first);
  init.second_seasonal.assign(336, 0.0);
  o.initial_state = init;
  lb::ExpSmoothing model(o);
  lb::SeriesSet s{y, {}, {}};
  model.fit(s, {0, y.size()}, {});
  EXPECT_LT(max_abs_diff(model.fitted_values(), ref_values(key + ".fitted")), 1e-8 * y[0]);
  const std::vector<std::size_t> last{y.size() - 1};
  const auto f = model.forecast(s, last, 48);
  const auto& theirs = ref_values(key + ".forecast");
  ASSERT_EQ(theirs.size(), 48u);
  // statsmodels 0.13.5 forecast() uses, at leads that are whole multiples of the period, the seasonal term from
  // before the last observation's update (found while building this check); the forecast function of additive
  // Holt-Winters (Hyndman et al. 2008, Table 2.1) uses the updated one. They must differ by exactly γ·e_n there
  // and agree to 1e-8 at every other lead.
  const double last_error = y.back() - model.fitted_values().back();
  for (std::size_t h = 1; h <= 48; ++h) {
    const double expected_gap = h % 48 == 0 ? model.parameters().seasonal * last_error : 0.0;
    EXPECT_NEAR(f.value(0, h - 1) - theirs[h - 1], expected_gap, 1e-8 * y[0]) << "lead " << h;
  }
}

TEST(ExpSmoothing, ForecastsWithStatsmodelsParametersMatchItsForecastFunction) {
  // statsmodels fit.forecast(h) with its parameters plugged in; pass rule as in the test above (1e-8 relative,
  // leads k·m differ by exactly γ·e_n because of the statsmodels 0.13.5 seasonal index at those leads).
  for (const auto& c : cases) {
    SCOPED_TRACE(c.key);
    const auto y = load(c);
    auto o = options_for(c);
    o.fixed_parameters = statsmodels_parameters(c.key);
    lb::ExpSmoothing model(o);
    lb::SeriesSet s{y, {}, {}};
    model.fit(s, {0, y.size()}, {});
    const auto& theirs = ref_values(c.key + ".forecast");
    const std::vector<std::size_t> last{y.size() - 1};
    const auto f = model.forecast(s, last, theirs.size());
    const double last_error = y.back() - model.fitted_values().back();
    const double scale = std::max(1.0, std::abs(y[0]));
    for (std::size_t h = 1; h <= theirs.size(); ++h) {
      const bool whole_season = c.period > 0 && h % c.period == 0;
      const double expected_gap = whole_season ? model.parameters().seasonal * last_error : 0.0;
      EXPECT_NEAR(f.value(0, h - 1) - theirs[h - 1], expected_gap, 1e-8 * scale) << "lead " << h;
    }
  }
}

TEST(ExpSmoothing, FittedSseIsNoWorseThanStatsmodelsAndForecastsAgree) {
  // Pass: our SSE <= statsmodels SSE × (1 + 1e-3); forecasts (statsmodels fit.forecast) within 0.5 % of the
  // series' range, since both optimisers stop at slightly different points of a flat optimum.
  for (const auto& c : cases) {
    SCOPED_TRACE(c.key);
    const auto y = load(c);
    lb::ExpSmoothing model(options_for(c));
    lb::SeriesSet s{y, {}, {}};
    model.fit(s, {0, y.size()}, {});
    const double theirs = ref_values(c.key + ".sse")[0];
    EXPECT_LE(model.sse(), theirs * (1.0 + 1e-3));
    RecordProperty(c.key + "_sse_ratio", std::to_string(model.sse() / theirs));
    const auto& expected = ref_values(c.key + ".forecast");
    const std::vector<std::size_t> last{y.size() - 1};
    const auto f = model.forecast(s, last, expected.size());
    const auto [lo, hi] = std::minmax_element(y.begin(), y.end());
    EXPECT_LT(max_abs_diff(f.values, expected), 0.005 * (*hi - *lo));
  }
}

TEST(ExpSmoothing, DoubleSeasonalFitBeatsOneSeasonOnFourWeeksOfTaylor) {
  // Property, no outside reference: with the weekly season added (Taylor 2003, JORS 54:799) the in-sample SSE of
  // four weeks of half-hourly demand does not exceed that of the daily-season model, which it nests (ω = 0).
  auto y = libseq::test::read_csv_column("validation/datasets/taylor.csv", "demand_mw");
  y.resize(4 * 336);
  lb::SeriesSet s{y, {}, {}};
  lb::ExpSmoothingOptions daily;
  daily.model = lb::SmoothingModel::holt_winters;
  daily.period_steps = 48;
  daily.starts = 3;
  lb::ExpSmoothingOptions both = daily;
  both.model = lb::SmoothingModel::double_seasonal;
  both.second_period_steps = 336;
  lb::ExpSmoothing one(daily), two(both);
  one.fit(s, {0, y.size()}, {});
  two.fit(s, {0, y.size()}, {});
  EXPECT_LT(two.sse(), one.sse());
}

TEST(ExpSmoothing, ForecastFromAnIssueUsesOnlyDataUpToIt) {
  const auto y = libseq::test::read_csv_column("validation/datasets/nile.csv", "flow");
  lb::ExpSmoothingOptions o;
  o.model = lb::SmoothingModel::holt;
  lb::ExpSmoothing model(o);
  lb::SeriesSet s{y, {}, {}};
  model.fit(s, {0, 80}, {});
  auto changed = y;
  for (std::size_t t = 61; t < changed.size(); ++t) changed[t] += 500.0;
  lb::SeriesSet s2{changed, {}, {}};
  const std::vector<std::size_t> issues{60, 30};
  const auto a = model.forecast(s, issues, 5);
  const auto b = model.forecast(s2, issues, 5);
  for (std::size_t k = 0; k < a.values.size(); ++k) EXPECT_DOUBLE_EQ(a.values[k], b.values[k]);
  // Issue order does not matter.
  const std::vector<std::size_t> one{30};
  EXPECT_DOUBLE_EQ(model.forecast(s, one, 5).value(0, 2), a.value(1, 2));
}

TEST(ExpSmoothing, OptionsReportEveryBrokenRule) {
  lb::ExpSmoothingOptions o;
  o.model = lb::SmoothingModel::double_seasonal;
  o.period_steps = 48;
  o.second_period_steps = 24;
  o.starts = 0;
  try {
    o.validate();
    FAIL() << "validate accepted broken options";
  } catch (const libseq::ConfigError& e) {
    const std::string m = e.what();
    EXPECT_NE(m.find("second_period_steps"), std::string::npos);
    EXPECT_NE(m.find("starts"), std::string::npos);
  }
  EXPECT_EQ(lb::parse_smoothing_model("holt_winters"), lb::SmoothingModel::holt_winters);
  EXPECT_THROW(lb::parse_smoothing_model("winters"), libseq::ConfigError);
}
