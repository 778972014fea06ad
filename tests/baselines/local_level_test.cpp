// Local level model checks. Outside reference: Durbin & Koopman (2012), Time Series Analysis by State Space
// Methods, 2nd ed., ch. 2 (Nile example): ML estimates σ²_ε = 15099 and σ²_η = 1469.1. Data: R datasets::Nile via
// validation/datasets/nile.csv. See validation/nile_local_level/README.md for the tolerance and pass rule.

#include <gtest/gtest.h>

#include <cmath>
#include <numeric>
#include <vector>

#include "baselines/reference_file.hpp"
#include "libseq/baselines/intervals.hpp"
#include "libseq/baselines/local_level.hpp"
#include "libseq/error.hpp"

namespace lb = libseq::baselines;

namespace {
std::vector<double> nile() { return libseq::test::read_csv_column("validation/datasets/nile.csv", "flow"); }
}  // namespace

TEST(LocalLevel, NileMaximumLikelihoodVariancesMatchDurbinKoopman) {
  const auto y = nile();
  ASSERT_EQ(y.size(), 100u);
  lb::SeriesSet s{y, {}, {}};
  lb::LocalLevel model;
  model.fit(s, {0, 100}, {});
  // Durbin & Koopman (2012, 2nd ed.), ch. 2, Nile: σ̂²_ε = 15099, σ̂²_η = 1469.1; within 0.5 %.
  EXPECT_NEAR(model.observation_variance(), 15099.0, 0.005 * 15099.0);
  EXPECT_NEAR(model.level_variance(), 1469.1, 0.005 * 1469.1);
  RecordProperty("sigma2_eps", std::to_string(model.observation_variance()));
  RecordProperty("sigma2_eta", std::to_string(model.level_variance()));
}

TEST(LocalLevel, EstimatesMaximiseTheLikelihoodLocally) {
  // Property of an ML estimate, no outside source: nudging either variance by 2 % lowers the likelihood.
  const auto y = nile();
  lb::SeriesSet s{y, {}, {}};
  lb::LocalLevel model;
  model.fit(s, {0, 100}, {});
  const double best = model.log_likelihood();
  for (double fe : {0.98, 1.02}) {
    for (double fh : {0.98, 1.0, 1.02}) {
      const auto r = lb::LocalLevel::filter(y, {0, 100}, fe * model.observation_variance(),
                                            fh * model.level_variance());
      EXPECT_LT(r.log_likelihood, best);
    }
  }
}

TEST(LocalLevel, ForecastsAreTheFilteredLevelWithGrowingVariance) {
  // D&K (2012) §2.8: forecasts of every lead equal a_{n+1}; variance P_{n+1} + (h − 1)σ²_η + σ²_ε.
  const auto y = nile();
  lb::SeriesSet s{y, {}, {}};
  lb::LocalLevelOptions options;
  options.fixed_variances = std::pair{15099.0, 1469.1};
  lb::LocalLevel model(options);
  model.fit(s, {0, 100}, {});
  const std::vector<std::size_t> issues{99};
  const auto f = model.forecast(s, issues, 3);
  const auto v = model.forecast_variance(s, issues, 3);
  // Independent recomputation of the last filter step from the filter's own one-step prediction at t = 99.
  const auto r = lb::LocalLevel::filter(y, {0, 100}, 15099.0, 1469.1);
  const double a = r.predicted_level[99], p = r.predicted_variance[99];
  const double k = p / (p + 15099.0);
  const double a_next = a + k * (y[99] - a);
  const double p_next = p * (1.0 - k) + 1469.1;
  for (std::size_t h = 0; h < 3; ++h) {
    EXPECT_NEAR(f.value(0, h), a_next, 1e-9);
    EXPECT_NEAR(v.value(0, h), p_next + static_cast<double>(h) * 1469.1 + 15099.0, 1e-6);
  }
}

TEST(LocalLevel, MissingValuesOnlyWidenTheVariance) {
  // D&K (2012) §2.7: a missing observation leaves a_t unchanged and adds σ²_η to P_t.
  auto y = nile();
  for (std::size_t t = 20; t < 40; ++t) y[t] = std::nan("");
  const auto r = lb::LocalLevel::filter(y, {0, 100}, 15099.0, 1469.1);
  for (std::size_t t = 21; t < 41; ++t) {
    EXPECT_DOUBLE_EQ(r.predicted_level[t], r.predicted_level[20]);
    EXPECT_NEAR(r.predicted_variance[t], r.predicted_variance[t - 1] + 1469.1, 1e-6);
  }
  EXPECT_EQ(r.observed, 80u);
}

TEST(LocalLevel, RejectsTooShortFitAndEarlyIssues) {
  const std::vector<double> y{1.0, std::nan(""), 2.0, 3.0, 4.0};
  lb::SeriesSet s{y, {}, {}};
  lb::LocalLevel model;
  EXPECT_THROW(model.fit(s, {0, 3}, {}), libseq::DataError);
  model.fit(s, {1, 5}, {});
  const std::vector<std::size_t> early{0};
  EXPECT_THROW(model.forecast(s, early, 1), libseq::DataError);
  lb::LocalLevelOptions bad;
  bad.log_ratio_min = 5.0;
  bad.log_ratio_max = 1.0;
  EXPECT_THROW(lb::LocalLevel{bad}, libseq::ConfigError);
}
