#include "libseq/metrics/scorecard.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <set>
#include <string>
#include <vector>

#include "libseq/error.hpp"
#include "libseq/metrics/deterministic.hpp"
#include "libseq/metrics/skill.hpp"

namespace libseq::metrics {

namespace {
const double nan = std::numeric_limits<double>::quiet_NaN();

ForecastCases gaussian_cases() {
  ForecastCases cases;
  cases.observed = {2, 4, nan, 6, 8, 10};
  cases.form = PredictiveForm::gaussian;
  cases.means = {3, 4, 5, 8, 7, 13};
  cases.sds = {1, 1, 1, 2, 2, 2};
  return cases;
}

ForecastCases quantile_cases() {
  ForecastCases cases;
  cases.observed = {1, 2, 3, 4};
  cases.form = PredictiveForm::quantiles;
  cases.levels = {0.05, 0.5, 0.95};
  cases.quantiles = {0, 1.5, 3, 1, 2, 3, 2, 2.5, 3.5, 1, 3, 5};
  return cases;
}
}  // namespace

TEST(Scorecard, EveryMetricNameRoundTripsAndUnknownNamesAreListed) {
  std::set<std::string> names;
  for (Metric metric : all_metrics()) {
    const std::string name = to_string(metric);
    EXPECT_EQ(parse_metric(name), metric);
    names.insert(name);
    EXPECT_FALSE(metric_info(metric).description.empty()) << name;
  }
  EXPECT_EQ(names.size(), all_metrics().size());
  EXPECT_EQ(all_metrics().size(), 18u);
  try {
    parse_metric("r2", "score.metrics[2]");
    FAIL() << "no exception";
  } catch (const ConfigError& e) {
    const std::string message = e.what();
    EXPECT_NE(message.find("score.metrics[2]"), std::string::npos) << message;
    EXPECT_NE(message.find("'r2'"), std::string::npos) << message;
    EXPECT_NE(message.find("kge_prime_gamma"), std::string::npos) << message;
  }
  EXPECT_EQ(parse_predictive_form("ensemble"), PredictiveForm::ensemble);
  EXPECT_THROW(parse_predictive_form("mixture"), ConfigError);
}

// A Gaussian forecast: point metrics use the mean; CRPS is the closed form; fair CRPS, pinball and MASE (no scales)
// do not apply and are absent; every value carries the missing observation.
TEST(Scorecard, GaussianCasesGetPointAndProbabilisticMetricsWithCounts) {
  const ForecastCases cases = gaussian_cases();
  const ScoreRecord record = score_cases(cases, ScoreOptions{});
  EXPECT_EQ(record.cases, 6u);
  EXPECT_EQ(record.missing_observation, 1u);
  EXPECT_DOUBLE_EQ(record.value(Metric::nse), nse(cases.observed, cases.means).value);
  EXPECT_DOUBLE_EQ(record.value(Metric::nse), 0.625);  // the hand-worked series of deterministic_test.cpp
  EXPECT_DOUBLE_EQ(record.value(Metric::crps), crps_gaussian(cases.observed, cases.means, cases.sds).value);
  EXPECT_EQ(record.values.at(Metric::crps).counts.missing_observation, 1u);
  EXPECT_EQ(record.values.count(Metric::crps_fair), 0u);
  EXPECT_EQ(record.values.count(Metric::pinball), 0u);
  EXPECT_EQ(record.values.count(Metric::mase), 0u);
  EXPECT_TRUE(std::isnan(record.value(Metric::mase)));
  EXPECT_TRUE(record.values.count(Metric::coverage));
  std::size_t pit_total = 0;
  for (auto c : record.pit.counts) pit_total += c;
  EXPECT_EQ(pit_total, 5u);
  EXPECT_EQ(record.pit.missing, 1u);
}

// A quantile set with levels 0.05, 0.5, 0.95: the median is the point forecast, the 90 % interval comes from the
// outer levels. Case bounds [0, 3], [1, 3], [2, 3.5], [1, 5] for y = 1, 2, 3, 4: all inside → coverage 1; widths 3,
// 2, 1.5, 4 → mean 2.625. The pinball metric is half the quantile-set CRPS. An 80 % interval has no levels → absent.
TEST(Scorecard, QuantileCasesUseTheirMedianAndOuterLevels) {
  const ForecastCases cases = quantile_cases();
  const ScoreRecord record = score_cases(cases, ScoreOptions{});
  EXPECT_DOUBLE_EQ(record.value(Metric::mae), mae(cases.observed, std::vector<double>{1.5, 2, 2.5, 3}).value);
  EXPECT_DOUBLE_EQ(record.value(Metric::coverage), 1.0);
  EXPECT_DOUBLE_EQ(record.value(Metric::mean_width), 2.625);
  EXPECT_DOUBLE_EQ(record.value(Metric::pinball), record.value(Metric::crps) / 2.0);
  EXPECT_EQ(record.reliability.size(), 3u);
  ScoreOptions eighty;
  eighty.interval_coverage = 0.8;
  EXPECT_EQ(score_cases(cases, eighty).values.count(Metric::interval_score), 0u);
}

TEST(Scorecard, EnsembleCasesGetPlainAndFairCrpsAndTheMemberMeanAsPoint) {
  ForecastCases cases;
  cases.observed = {3, 5};
  cases.form = PredictiveForm::ensemble;
  cases.member_count = 3;
  cases.members = {4, 1, 2, 5, 5, nan};
  ScoreOptions options;
  options.metrics = {Metric::crps, Metric::crps_fair, Metric::mae};
  const ScoreRecord record = score_cases(cases, options);
  EXPECT_EQ(record.values.size(), 3u);
  // Case 1: plain 2/3, fair 1/3 (hand-worked in probabilistic_test.cpp). Case 2: members {5, 5} equal y → 0.
  EXPECT_NEAR(record.value(Metric::crps), (2.0 / 3.0 + 0.0) / 2.0, 1e-15);
  EXPECT_NEAR(record.value(Metric::crps_fair), (1.0 / 3.0 + 0.0) / 2.0, 1e-15);
  // Point = member mean: 7/3 and 5 → errors 2/3 and 0.
  EXPECT_NEAR(record.value(Metric::mae), (2.0 / 3.0) / 2.0, 1e-15);
}

// Pooling: per (site, lead) one record each; per lead the sites' cases are concatenated; pooled RMSE equals the
// RMSE of the concatenated cases (not the mean of the per-site RMSEs).
TEST(Scorecard, PoolingConcatenatesCasesAcrossSitesAndLeads) {
  std::vector<ScoreInput> inputs;
  for (const char* site : {"A", "B"}) {
    for (std::int64_t lead : {1, 2}) {
      ScoreInput input{site, "lstm", lead, {}};
      const double offset = (site[0] == 'A' ? 0.0 : 10.0) + static_cast<double>(lead);
      input.cases.observed = {offset, offset + 1, offset + 2, nan};
      input.cases.point = {offset + 0.5, offset + 1, offset + 4, offset};
      input.cases.mase_scales = std::vector<double>(4, site[0] == 'A' ? 1.0 : 2.0);
      inputs.push_back(input);
    }
  }
  ScoreOptions options;
  options.metrics = {Metric::rmse, Metric::mase};
  const Scorecard each = score_per_site_and_lead(inputs, options);
  EXPECT_EQ(each.records().size(), 4u);
  ASSERT_NE(each.find("B", "lstm", 2), nullptr);
  EXPECT_EQ(each.find("B", "lstm", 2)->cases, 4u);
  const Scorecard per_lead = score_per_lead(inputs, options);
  ASSERT_EQ(per_lead.records().size(), 2u);
  const ScoreRecord* lead1 = per_lead.find(pooled_site, "lstm", 1);
  ASSERT_NE(lead1, nullptr);
  EXPECT_EQ(lead1->cases, 8u);
  EXPECT_EQ(lead1->missing_observation, 2u);
  EXPECT_EQ(score_per_site(inputs, options).records().size(), 2u);
  const Scorecard pooled = score_pooled(inputs, options);
  ASSERT_EQ(pooled.records().size(), 1u);
  // Every case has errors 0.5, 0, 2 → RMSE √((0.25 + 0 + 4)/3) whatever the pooling.
  EXPECT_NEAR(pooled.records()[0].value(Metric::rmse), std::sqrt(4.25 / 3.0), 1e-14);
  // MASE: site A errors /1, site B /2 → (2.5/1·2 + 2.5/2·2)/12 = (5 + 2.5)/12 = 0.625.
  EXPECT_NEAR(pooled.records()[0].value(Metric::mase), 0.625, 1e-15);
  EXPECT_EQ(pooled.records()[0].values.at(Metric::mase).counts.used, 12u);
}

TEST(Scorecard, PoolingRefusesDifferentForms) {
  std::vector<ScoreInput> inputs{{"A", "m", 1, gaussian_cases()}, {"B", "m", 1, quantile_cases()}};
  EXPECT_THROW(score_per_lead(inputs, ScoreOptions{}), DataError);
}

TEST(Scorecard, BootstrapIntervalsAreAddedOnRequest) {
  ForecastCases cases;
  for (int i = 0; i < 60; ++i) {
    cases.observed.push_back(std::sin(0.3 * i) * 5.0 + 10.0);
    cases.point.push_back(std::sin(0.3 * i + 0.2) * 5.0 + 10.0);
  }
  ScoreOptions options;
  options.metrics = {Metric::rmse, Metric::nse};
  BootstrapOptions bootstrap;
  bootstrap.resamples = 300;
  bootstrap.block_length = 6;
  options.bootstrap = bootstrap;
  const ScoreRecord record = score_cases(cases, options);
  ASSERT_EQ(record.intervals.size(), 2u);
  const ConfidenceInterval& rmse_ci = record.intervals.at(Metric::rmse);
  EXPECT_DOUBLE_EQ(rmse_ci.estimate, record.value(Metric::rmse));
  EXPECT_LT(rmse_ci.lower, rmse_ci.upper);
  EXPECT_LE(rmse_ci.lower, rmse_ci.estimate);
  EXPECT_GE(rmse_ci.upper, rmse_ci.estimate);
  EXPECT_EQ(rmse_ci.block_length, 6u);
  EXPECT_EQ(score_cases(cases, ScoreOptions{}).intervals.size(), 0u);
}

TEST(Scorecard, OptionsAndCaseShapesAreValidated) {
  ScoreOptions options;
  options.interval_coverage = 1.0;
  options.pit_bins = 0;
  try {
    options.validate();
    FAIL() << "no exception";
  } catch (const ConfigError& e) {
    const std::string message = e.what();
    EXPECT_NE(message.find("interval_coverage"), std::string::npos) << message;
    EXPECT_NE(message.find("pit_bins"), std::string::npos) << message;
  }
  ForecastCases bad = gaussian_cases();
  bad.sds.pop_back();
  try {
    bad.validate("site G1, method lstm, lead 3");
    FAIL() << "no exception";
  } catch (const DataError& e) {
    const std::string message = e.what();
    EXPECT_NE(message.find("site G1"), std::string::npos) << message;
    EXPECT_NE(message.find("'sds'"), std::string::npos) << message;
  }
}

// Skill score 1 − S/S_ref: CRPS 0.5 against a climatology CRPS of 2.0 → 1 − 0.25 = 0.75; equal scores → 0; twice
// the reference → −1; a zero reference → NaN.
TEST(Skill, SkillScoreIsOneMinusTheRatioToTheReference) {
  EXPECT_DOUBLE_EQ(skill_score(0.5, 2.0), 0.75);
  EXPECT_DOUBLE_EQ(skill_score(2.0, 2.0), 0.0);
  EXPECT_DOUBLE_EQ(skill_score(4.0, 2.0), -1.0);
  EXPECT_TRUE(std::isnan(skill_score(1.0, 0.0)));
  MetricValue score{0.5, {}};
  score.counts.used = 7;
  const MetricValue skill = skill_score(score, MetricValue{2.0, {}});
  EXPECT_DOUBLE_EQ(skill.value, 0.75);
  EXPECT_EQ(skill.counts.used, 7u);
}

}  // namespace libseq::metrics
