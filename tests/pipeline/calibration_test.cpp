// Interval calibration details of the batch job (libseq/src/pipeline/run_impl.hpp): the scale of conformity scores
// (calibration.scale), pooling of leads (calibration.leads), and the standard error of a mean loss difference used
// by the final forecast's one-standard-error rule.

#include <gtest/gtest.h>

#include <cmath>
#include <algorithm>
#include <fstream>
#include <limits>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "../libseq/src/pipeline/run_impl.hpp"
#include "libseq/data/features.hpp"
#include "libseq/data/periods.hpp"
#include "support/paths.hpp"

namespace libseq::pipeline {
namespace {

constexpr double inf = std::numeric_limits<double>::infinity();

// One site, 20 daily steps of flow 1..20 (only used to fit a plan: the transform does not depend on the data).
data::Panel flow_panel() {
  std::vector<data::SiteInfo> sites{{"A", "", 0, 0, 0, {}}};
  std::vector<data::VariableInfo> variables{{"flow", "m3 s-1", "", ""}};
  data::Panel panel(data::TimeAxis(data::parse_iso8601("2001-01-01"), 86400, 20), sites, variables);
  for (std::size_t t = 0; t < 20; ++t) panel.at(0, t, 0) = static_cast<float>(1 + t);
  return panel;
}

struct Fixture {
  JobConfig job;
  data::Panel panel = flow_panel();
  data::FeaturePlan plan;
  Fixture(data::TargetTransform transform, double offset, double lambda = 0.5)
      : plan(make(transform, offset, lambda)) {}
  data::FeaturePlan make(data::TargetTransform transform, double offset, double lambda) {
    job.features.target.assign("flow");
    job.features.transform = transform;
    job.features.transform_offset = offset;
    job.features.box_cox_lambda = lambda;
    return data::FeaturePlan::fit(panel, job.features, data::parse_period("2001-01-01..2001-01-20", "fit"));
  }
};

TEST(ScoreScale, LogScaleMapsBothWaysAndSendsTheDomainEdgeToMinusInfinity) {
  Fixture f(data::TargetTransform::log, 0.5);
  const detail::ScoreScale scale(f.job, f.plan);
  EXPECT_FALSE(scale.identity());
  EXPECT_DOUBLE_EQ(scale.forward(2.0), std::log(2.5));
  for (double y : {0.01, 1.0, 37.5, 4000.0}) EXPECT_NEAR(scale.inverse(scale.forward(y)), y, 1e-12 * y);
  EXPECT_EQ(scale.forward(-0.5), -inf);  // y + offset = 0
  EXPECT_EQ(scale.forward(-3.0), -inf);  // below the domain: the limit there, never NaN
  EXPECT_DOUBLE_EQ(scale.inverse(-inf), -0.5);
  EXPECT_EQ(scale.inverse(inf), inf);
  EXPECT_TRUE(std::isnan(scale.forward(NAN)));
}

TEST(ScoreScale, SqrtAndBoxCoxFloorsAndTheTargetScaleIsTheIdentity) {
  Fixture sq(data::TargetTransform::sqrt, 0.0);
  const detail::ScoreScale sqrt_scale(sq.job, sq.plan);
  EXPECT_DOUBLE_EQ(sqrt_scale.forward(9.0), 3.0);
  EXPECT_DOUBLE_EQ(sqrt_scale.forward(-4.0), 0.0);
  EXPECT_DOUBLE_EQ(sqrt_scale.inverse(-1.0), 0.0);  // a widened lower bound below the floor stays at the edge
  Fixture bc(data::TargetTransform::box_cox, 0.0, 0.5);
  const detail::ScoreScale bc_scale(bc.job, bc.plan);
  EXPECT_DOUBLE_EQ(bc_scale.forward(4.0), (2.0 - 1.0) / 0.5);  // Box & Cox (1964): (y^λ − 1)/λ
  EXPECT_DOUBLE_EQ(bc_scale.forward(-1.0), -2.0);              // the limit −1/λ at y = 0
  EXPECT_DOUBLE_EQ(bc_scale.inverse(-5.0), 0.0);
  Fixture target(data::TargetTransform::log, 0.0);
  target.job.calibration_scale = CalibrationScale::target;
  const detail::ScoreScale identity(target.job, target.plan);
  EXPECT_TRUE(identity.identity());
  EXPECT_EQ(identity.forward(-7.0), -7.0);
  EXPECT_EQ(identity.inverse(3.25), 3.25);
}

// Split conformal keeps its finite-sample guarantee for any score computed from the calibration cases alone
// (Romano et al. 2019, Theorem 1: 1 − α ≤ P(covered) ≤ 1 − α + 1/(n + 1) for exchangeable cases without ties), so
// a fixed increasing transform of observations and bounds keeps it too. Exchangeable lognormal flows whose raw
// 90 % quantile pair is too narrow (σ assumed 0.3, true 0.6), 2000 calibration/test draws (n = 99 calibration, 50
// test cases each): the mean coverage of the log-scale calibrated interval must lie in [0.90, 0.91] widened by 3
// standard errors of the mean over draws. And the relative widening must cover the high-flow half as well as the
// low-flow half (within 0.04), which the additive widening of the target scale does not (the reason for the
// default scale, docs/methods.md).
TEST(ScoreScale, LogScaleCalibrationKeepsTheConformalGuaranteeAndCoversHighAndLowFlowsAlike) {
  Fixture f(data::TargetTransform::log, 0.0);
  const detail::ScoreScale log_scale(f.job, f.plan);
  Fixture t(data::TargetTransform::log, 0.0);
  t.job.calibration_scale = CalibrationScale::target;
  const detail::ScoreScale target_scale(t.job, t.plan);
  std::mt19937_64 rng(20261202);
  std::normal_distribution<double> normal(0.0, 1.0);
  const double z95 = 1.6448536269514722;  // standard normal 0.95 quantile
  const std::size_t draws = 2000, n = 99, m = 50;
  std::vector<double> coverage_draws;
  double high_log = 0, low_log = 0, high_target = 0, low_target = 0;
  std::size_t highs = 0, lows = 0;
  for (std::size_t d = 0; d < draws; ++d) {
    auto make_case = [&](double& y, double& lo, double& hi, double& mu) {
      mu = 1.0 + 2.0 * normal(rng);  // flows spanning two orders of magnitude
      y = std::exp(mu + 0.6 * normal(rng));
      lo = std::exp(mu - 0.3 * z95);
      hi = std::exp(mu + 0.3 * z95);
    };
    std::vector<double> yl, ll, ul, yt, lt, ut;
    const std::vector<std::size_t> lead(n, 0);
    for (std::size_t i = 0; i < n; ++i) {
      double y, lo, hi, mu;
      make_case(y, lo, hi, mu);
      yl.push_back(log_scale.forward(y));
      ll.push_back(log_scale.forward(lo));
      ul.push_back(log_scale.forward(hi));
      yt.push_back(y);
      lt.push_back(lo);
      ut.push_back(hi);
    }
    const auto cal_log = detail::fit_interval_calibrator(yl, ll, ul, lead, 0.9, true);
    const auto cal_target = detail::fit_interval_calibrator(yt, lt, ut, lead, 0.9, true);
    std::size_t covered = 0;
    for (std::size_t i = 0; i < m; ++i) {
      double y, lo, hi, mu;
      make_case(y, lo, hi, mu);
      const auto a = cal_log.quantile_interval(log_scale.forward(lo), log_scale.forward(hi), 0);
      const bool in_log = log_scale.inverse(a.lower) <= y && y <= log_scale.inverse(a.upper);
      const auto b = cal_target.quantile_interval(lo, hi, 0);
      const bool in_target = b.lower <= y && y <= b.upper;
      covered += in_log;
      if (mu > 1.0) {
        ++highs;
        high_log += in_log;
        high_target += in_target;
      } else {
        ++lows;
        low_log += in_log;
        low_target += in_target;
      }
    }
    coverage_draws.push_back(static_cast<double>(covered) / m);
  }
  double mean = 0, var = 0;
  for (double c : coverage_draws) mean += c / draws;
  for (double c : coverage_draws) var += (c - mean) * (c - mean) / (draws - 1);
  const double se = std::sqrt(var / draws);
  std::printf("[figures] log-scale coverage %.4f (se %.4f); high/low flows: log %.3f / %.3f, target %.3f / %.3f\n",
              mean, se, high_log / highs, low_log / lows, high_target / highs, low_target / lows);
  EXPECT_GE(mean, 0.90 - 3 * se);
  EXPECT_LE(mean, 0.90 + 1.0 / (n + 1) + 3 * se);
  EXPECT_NEAR(high_log / highs, low_log / lows, 0.04);
  EXPECT_GT(std::abs(high_target / highs - low_target / lows), 0.04);
}

TEST(CalibrationLeads, AutoCalibratesEachLeadOnlyWhenEveryLeadHasEnoughCases) {
  JobConfig job;
  job.calibration_min_cases = 3;
  std::vector<double> observed{1, 2, 3, 4, 5, 6, NAN, 8};
  std::vector<std::size_t> lead{0, 1, 0, 1, 0, 1, 0, 1};  // lead 0: 3 observed, lead 1: 4
  EXPECT_TRUE(detail::calibrate_per_lead(job, observed, lead, 2));
  job.calibration_min_cases = 4;
  EXPECT_FALSE(detail::calibrate_per_lead(job, observed, lead, 2));  // the missing observation is not counted
  job.calibration_leads = CalibrationLeads::each;
  EXPECT_TRUE(detail::calibrate_per_lead(job, observed, lead, 2));
  job.calibration_leads = CalibrationLeads::pooled;
  EXPECT_FALSE(detail::calibrate_per_lead(job, observed, lead, 2));
  job.calibration_leads = CalibrationLeads::automatic;
  job.calibration_min_cases = 1000;
  EXPECT_TRUE(detail::calibrate_per_lead(job, observed, std::vector<std::size_t>(8, 0), 1));  // one lead: no choice
}

// Hand-worked: levels 0.025, 0.05, 0.1, 0.5, 0.9, 0.95, 0.975 and intervals 80 % (0.1, 0.9) and 95 % (0.025,
// 0.975). Calibration widened the 80 % interval to [5, 95] but narrowed the 95 % one to [8, 92]; the 0.05 and 0.95
// levels (no interval's bounds) stayed at 12 and 88. Nesting makes the 95 % interval [5, 95]; the 0.05 level lies
// between bounds 5 (0.025) and 5 (0.1), so it becomes 5, and the 0.95 level becomes 95. Sorting alone would give
// 5, 8, 12, 50, 88, 92, 95: an 80 % interval of [12, 88], narrower than calibrated.
TEST(OrderCalibratedQuantiles, NestsIntervalsAndClampsOtherLevelsInsteadOfSwappingBounds) {
  const std::vector<double> levels{0.025, 0.05, 0.1, 0.5, 0.9, 0.95, 0.975};
  const std::vector<double> intervals{0.95, 0.8};  // any order
  std::vector<double> q{8, 12, 5, 50, 95, 88, 92,
                        // a second case already in order is left as it is
                        1, 2, 3, 4, 5, 6, 7};
  detail::order_calibrated_quantiles(q, levels, intervals);
  const std::vector<double> expected{5, 5, 5, 50, 95, 95, 95, 1, 2, 3, 4, 5, 6, 7};
  EXPECT_EQ(q, expected);
  // An interval narrowed past its centre (lower bound above upper): the clamp has no room, so the case is sorted.
  std::vector<double> crossed{1, 2, 60, 50, 40, 8, 9};
  detail::order_calibrated_quantiles(crossed, levels, {0.8});
  EXPECT_TRUE(std::is_sorted(crossed.begin(), crossed.end()));
}

// Reference: R `forecast::dm.test` (forecast 8.20, R 4.2.2; Diebold & Mariano 1995 with the correction of Harvey,
// Leybourne & Newbold 1997) on two forecasts of the Nile flow (validation/dm_test/dm_reference.R): its statistic is
// mean(d)/SE × k, so mean(d)/SE must equal statistic/k, for h = 1, 3 and 6 (autocovariances to lag h − 1).
TEST(DifferenceStandardError, MatchesRForecastDmTestOnTheNileSeries) {
  std::ifstream nile(test::source_dir() / "validation/datasets/nile.csv");
  ASSERT_TRUE(nile) << "validation/datasets/nile.csv";
  std::string line;
  std::getline(nile, line);
  std::vector<double> y;
  while (std::getline(nile, line)) y.push_back(std::stod(line.substr(line.find(',') + 1)));
  ASSERT_EQ(y.size(), 100u);
  std::vector<double> a, b;  // absolute errors of the naive and the 10-year-mean forecasts, years 11..100
  for (std::size_t t = 10; t < 100; ++t) {
    double mean10 = 0;
    for (std::size_t i = t - 10; i < t; ++i) mean10 += y[i] / 10;
    a.push_back(std::abs(y[t] - y[t - 1]));
    b.push_back(std::abs(y[t] - mean10));
  }
  std::ifstream reference(test::source_dir() / "validation/dm_test/dm_reference.csv");
  ASSERT_TRUE(reference) << "validation/dm_test/dm_reference.csv";
  std::getline(reference, line);
  std::size_t rows = 0;
  while (std::getline(reference, line)) {
    std::stringstream fields(line);
    std::string h, n, mean_d, statistic, k;
    std::getline(fields, h, ',');
    std::getline(fields, n, ',');
    std::getline(fields, mean_d, ',');
    std::getline(fields, statistic, ',');
    std::getline(fields, k, ',');
    double ours_mean = 0;
    for (std::size_t i = 0; i < a.size(); ++i) ours_mean += (a[i] - b[i]) / a.size();
    EXPECT_NEAR(ours_mean, std::stod(mean_d), 1e-12 * std::abs(std::stod(mean_d)));
    const double se = detail::difference_standard_error(a, b, std::stoul(h) - 1);
    const double expected = std::stod(statistic) / std::stod(k);
    EXPECT_NEAR(ours_mean / se, expected, 1e-12 * std::abs(expected)) << "h = " << h;
    ++rows;
  }
  EXPECT_EQ(rows, 3u);
  EXPECT_EQ(detail::difference_standard_error({1.0}, {2.0}, 0), 0.0);  // fewer than two cases
}

}  // namespace
}  // namespace libseq::pipeline
