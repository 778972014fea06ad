#include "libseq/data/features.hpp"

#include <gtest/gtest.h>

#include <cmath>

#include "libseq/data/windows.hpp"
#include "libseq/error.hpp"

namespace libseq::data {

namespace {

// Two sites, 10 daily steps from Monday 2000-06-05, variables q (target) and p (input); site attribute "area".
Panel two_site_panel() {
  std::vector<SiteInfo> sites{{"S1", "", 0, 0, 0, {{"area", 10.0}}}, {"S2", "", 0, 0, 0, {{"area", 30.0}}}};
  std::vector<VariableInfo> variables{{"q", "m3 s-1", "", ""}, {"p", "mm day-1", "", ""}};
  Panel panel(TimeAxis(parse_iso8601("2000-06-05"), 86400, 10), sites, variables);
  for (std::size_t s = 0; s < 2; ++s) {
    for (std::size_t t = 0; t < 10; ++t) {
      panel.at(s, t, 0) = static_cast<float>(1 + t + 10 * s);
      panel.at(s, t, 1) = static_cast<float>(t % 3);
    }
  }
  return panel;
}

FeatureOptions basic_options() {
  FeatureOptions options;
  options.target.assign(1, 'q');  // assign, not "=": sidesteps a GCC 12 -Wrestrict false positive at -O3
  options.dynamic_inputs = {"p"};
  options.static_inputs = {"area"};
  return options;
}

}  // namespace

TEST(Periods, ParsesDateRangesAsWholeDays) {
  const Period p = parse_period("1974-01-01..1974-12-31", "periods.test");
  EXPECT_EQ(p.first, parse_iso8601("1974-01-01"));
  EXPECT_EQ(p.last, parse_iso8601("1974-12-31T23:59:59Z"));
  const TimeAxis half_hourly(parse_iso8601("1974-12-31"), 1800, 96);
  EXPECT_EQ(index_range(half_hourly, p).size(), 48u);
  EXPECT_THROW(parse_period("1974-12-31..1974-01-01", "periods.test"), ConfigError);
  EXPECT_THROW(parse_period("1974", "periods.test"), ConfigError);
}

TEST(Periods, ReportsOverlapsAndPeriodsOutsideTheData) {
  const TimeAxis axis(parse_iso8601("2000-01-01"), 86400, 366);
  JobPeriods periods;
  periods.fit = parse_period("2000-01-01..2000-06-30", "fit");
  periods.validation = parse_period("2000-06-01..2000-08-31", "validation");
  periods.calibration = periods.validation;  // allowed: same period for validation and calibration
  periods.test = parse_period("2003-01-01..2003-12-31", "test");
  const auto problems = periods.problems(axis);
  ASSERT_EQ(problems.size(), 3u);  // test outside data; validation/fit and calibration/fit overlaps
  EXPECT_NE(problems[0].find("periods.test"), std::string::npos);
  EXPECT_NE(problems[1].find("periods.validation"), std::string::npos);
  EXPECT_NE(problems[2].find("periods.calibration"), std::string::npos);
}

TEST(Features, ScalingUsesTheFitPeriodOnly) {
  Panel panel = two_site_panel();
  const Period fit = parse_period("2000-06-05..2000-06-09", "fit");  // steps 0..4
  const FeaturePlan before = FeaturePlan::fit(panel, basic_options(), fit);
  for (std::size_t t = 5; t < 10; ++t) panel.at(0, t, 0) = 1e6f;  // changes after the fit period
  const FeaturePlan after = FeaturePlan::fit(panel, basic_options(), fit);
  EXPECT_DOUBLE_EQ(before.all_target_scaling()[0].mean, after.all_target_scaling()[0].mean);
  // Pooled target mean over steps 0..4 of both sites: (1+..+5 + 11+..+15)/10 = 8.
  EXPECT_DOUBLE_EQ(before.all_target_scaling()[0].mean, 8.0);
  // Static attribute: mean 20, sample deviation sqrt(200) of {10, 30}.
  EXPECT_DOUBLE_EQ(before.static_scaling()[0].mean, 20.0);
  EXPECT_NEAR(before.static_scaling()[0].deviation, std::sqrt(200.0), 1e-12);
}

TEST(Features, TransformsInvertExactly) {
  FeatureOptions options = basic_options();
  const Panel panel = two_site_panel();
  const Period fit = parse_period("2000-06-05..2000-06-14", "fit");
  for (auto transform : {TargetTransform::none, TargetTransform::log, TargetTransform::sqrt, TargetTransform::box_cox}) {
    options.transform = transform;
    options.transform_offset = 0.5;
    const FeaturePlan plan = FeaturePlan::fit(panel, options, fit);
    for (double y : {0.0, 0.3, 2.0, 150.0}) {
      EXPECT_NEAR(plan.inverse_transform_target(plan.transform_target(y)), y, 1e-9 * (1 + y)) << to_string(transform);
    }
  }
  // Box-Cox with λ = 0.5 and no offset: (4^0.5 − 1)/0.5 = 2 (Box & Cox 1964 definition, worked by hand).
  options.transform = TargetTransform::box_cox;
  options.box_cox_lambda = 0.5;
  options.transform_offset = 0.0;
  EXPECT_DOUBLE_EQ(FeaturePlan::fit(panel, options, fit).transform_target(4.0), 2.0);
}

TEST(Features, CalendarColumnsFollowTheWeek) {
  FeatureOptions options = basic_options();
  options.calendar = {CalendarEncoding::weekend, CalendarEncoding::day_of_week};
  const Panel panel = two_site_panel();
  const FeaturePlan plan = FeaturePlan::fit(panel, options, parse_period("2000-06-05..2000-06-14", "fit"));
  const FeatureTable table(panel, plan);
  ASSERT_EQ(table.column_count(), 4u);  // p, weekend, dow_sin, dow_cos
  // 2000-06-05 was a Monday (the start date of R forecast::taylor, per its help page); 06-10/11 the weekend.
  EXPECT_EQ(table.dynamic(0, 0)[1], 0.0f);
  EXPECT_EQ(table.dynamic(0, 5)[1], 1.0f);
  EXPECT_EQ(table.dynamic(0, 6)[1], 1.0f);
  EXPECT_EQ(table.dynamic(0, 7)[1], 0.0f);
  EXPECT_FLOAT_EQ(table.dynamic(0, 0)[3], 1.0f);  // cos(0) on Monday
}

TEST(Features, MissingInputsAreNamedWithThePresentOnes) {
  FeatureOptions options = basic_options();
  options.dynamic_inputs = {"tas"};
  const Panel panel = two_site_panel();
  EXPECT_THROW(FeaturePlan::fit(panel, options, parse_period("2000-06-05..2000-06-14", "fit")), DataError);
  options = basic_options();
  options.static_inputs = {"slope"};
  try {
    FeaturePlan::fit(panel, options, parse_period("2000-06-05..2000-06-14", "fit"));
    FAIL();
  } catch (const DataError& e) {
    EXPECT_NE(std::string(e.what()).find("present: area"), std::string::npos);
  }
}

TEST(Windows, ForecastWindowsHideTheFuture) {
  const Panel panel = two_site_panel();
  const FeaturePlan plan = FeaturePlan::fit(panel, basic_options(), parse_period("2000-06-05..2000-06-14", "fit"));
  const FeatureTable table(panel, plan);
  WindowOptions options;
  options.lookback_steps = 3;
  options.horizon_steps = 2;
  const auto windows = make_windows(table, options, {0, 10}, true);
  // Issues 2..7 per site (history 3 steps, targets issue+1..issue+2 inside 10 steps): 6 per site.
  ASSERT_EQ(windows.size(), 12u);
  WindowBatch batch;
  const std::vector<std::size_t> pick{0};
  fill_batch(table, options, windows, pick, batch);
  ASSERT_EQ(batch.steps, 5u);
  ASSERT_EQ(batch.input_size, 3u);  // p, observed q, known flag
  // Steps 0..2 are history (flag 1), 3..4 the target steps: p hidden (0), observed q and flag 0.
  for (std::size_t t = 0; t < 5; ++t) {
    const float* row = batch.inputs.data() + t * batch.input_size;
    EXPECT_EQ(row[2], t < 3 ? 1.0f : 0.0f) << t;
    if (t >= 3) {
      EXPECT_EQ(row[0], 0.0f);
      EXPECT_EQ(row[1], 0.0f);
    }
  }
  // Targets are steps 3 and 4 of site 0: scaled (4 − mean)/sd and (5 − mean)/sd.
  const Scaling& sc = plan.target_scaling(0);
  EXPECT_FLOAT_EQ(batch.targets[0], static_cast<float>((4 - sc.mean) / sc.deviation));
  EXPECT_FLOAT_EQ(batch.targets[1], static_cast<float>((5 - sc.mean) / sc.deviation));
  EXPECT_NEAR(table.unscale_target(0, batch.targets[1]), 5.0, 1e-5);

  options.future_inputs_known = true;
  fill_batch(table, options, windows, pick, batch);
  EXPECT_EQ(batch.inputs[3 * batch.input_size], table.dynamic(0, 3)[0]);
}

TEST(Windows, SimulationWindowsUseInputsUpToTheStepOnly) {
  const Panel panel = two_site_panel();
  const FeaturePlan plan = FeaturePlan::fit(panel, basic_options(), parse_period("2000-06-05..2000-06-14", "fit"));
  const FeatureTable table(panel, plan);
  WindowOptions options;
  options.mode = WindowMode::simulation;
  options.lookback_steps = 4;
  const auto windows = make_windows(table, options, {5, 10}, true);
  ASSERT_EQ(windows.size(), 10u);  // steps 5..9 of each site
  WindowBatch batch;
  const std::vector<std::size_t> pick{0, 9};
  fill_batch(table, options, windows, pick, batch);
  EXPECT_EQ(batch.input_size, 1u);
  EXPECT_EQ(batch.steps, 4u);
  EXPECT_NEAR(table.unscale_target(1, batch.targets[1]), 20.0, 1e-4);  // site 2, step 9: 1 + 9 + 10
  options.horizon_steps = 2;
  EXPECT_THROW(options.validate(), ConfigError);
}

}  // namespace libseq::data

namespace libseq::data {

TEST(Windows, IssueEveryAlignsTheFirstLeadToMidnight) {
  // Hourly panel from 2000-06-05T00:00Z, 72 steps; day-ahead windows issued once a day.
  std::vector<SiteInfo> sites{{"F1", "", 0, 0, 0, {}}};
  std::vector<VariableInfo> variables{{"load", "MW", "", ""}};
  Panel panel(TimeAxis(parse_iso8601("2000-06-05"), 3600, 72), sites, variables);
  for (std::size_t t = 0; t < 72; ++t) panel.at(0, t, 0) = static_cast<float>(t);
  FeatureOptions options;
  options.target.assign("load");
  const FeaturePlan plan = FeaturePlan::fit(panel, options, parse_period("2000-06-05..2000-06-07", "fit"));
  const FeatureTable table(panel, plan);
  WindowOptions w;
  w.lookback_steps = 12;
  w.horizon_steps = 24;
  w.issue_every = 24;
  const auto windows = make_windows(table, w, {0, 72}, true);
  // Issues at 23:00 on day 1 (step 23) and day 2 (step 47); day 3 has no full day ahead.
  ASSERT_EQ(windows.size(), 2u);
  EXPECT_EQ(windows[0].issue, 23u);
  EXPECT_EQ(windows[1].issue, 47u);
}

}  // namespace libseq::data
