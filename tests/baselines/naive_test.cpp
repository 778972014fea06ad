// Persistence, seasonal naive, climatology and the empirical error-quantile intervals on small hand-worked
// examples (the expected numbers are worked out by hand in the comments; no outside library).

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "libseq/baselines/climatology.hpp"
#include "libseq/baselines/intervals.hpp"
#include "libseq/baselines/persistence.hpp"
#include "libseq/baselines/seasonal_naive.hpp"
#include "libseq/data/time_axis.hpp"
#include "libseq/error.hpp"

namespace lb = libseq::baselines;
namespace ld = libseq::data;

namespace {
const double missing = std::nan("");
}

TEST(Persistence, RepeatsTheLastObservedValueForEveryLead) {
  const std::vector<double> y{1.0, 2.0, missing, 4.0, missing, missing};
  lb::SeriesSet s{y, {}, {}};
  lb::Persistence p;
  p.fit(s, {0, 6}, {});
  const std::vector<std::size_t> issues{0, 2, 5};
  const auto f = p.forecast(s, issues, 2);
  // Issue 0 -> 1; issue 2 (missing) -> last observed 2; issue 5 -> last observed 4.
  EXPECT_EQ(f.values, (std::vector<double>{1.0, 1.0, 2.0, 2.0, 4.0, 4.0}));
  const std::vector<double> gap{missing, 3.0};
  lb::SeriesSet g{gap, {}, {}};
  const std::vector<std::size_t> first{0};
  EXPECT_TRUE(std::isnan(p.forecast(g, first, 1).value(0, 0)));
  const std::vector<std::size_t> outside{6};
  EXPECT_THROW(p.forecast(s, outside, 1), libseq::DataError);
}

TEST(SeasonalNaive, TakesTheValueWholeSeasonsBeforeTheTarget) {
  // Period 3, series 10..19. From issue 5 (value 15): lead 1 -> step 6 − 3 = 3 (13); lead 2 -> 4 (14);
  // lead 3 -> 5 (15); lead 4 -> step 9 − 6 = 3 (13); lead 5 -> 10 − 6 = 4 (14).
  std::vector<double> y(10);
  for (std::size_t i = 0; i < y.size(); ++i) y[i] = 10.0 + static_cast<double>(i);
  lb::SeriesSet s{y, {}, {}};
  lb::SeasonalNaive m({.period_steps = 3});
  m.fit(s, {0, 10}, {});
  const std::vector<std::size_t> issues{5, 1};
  const auto f = m.forecast(s, issues, 5);
  EXPECT_EQ(std::vector<double>(f.values.begin(), f.values.begin() + 5),
            (std::vector<double>{13.0, 14.0, 15.0, 13.0, 14.0}));
  // From issue 1: lead 1 -> step 2 − 3 < 0: NaN; lead 2 -> step 0 (10); lead 3 -> 1 (11); lead 4 -> 5 − 6 < 0.
  EXPECT_TRUE(std::isnan(f.value(1, 0)));
  EXPECT_EQ(f.value(1, 1), 10.0);
  EXPECT_EQ(f.value(1, 2), 11.0);
  EXPECT_TRUE(std::isnan(f.value(1, 3)));
  EXPECT_THROW(lb::SeasonalNaive({.period_steps = 0}), libseq::ConfigError);
}

TEST(Climatology, DayOfYearMeanPoolsACircularWindow) {
  // Two years of daily data from 2001-01-01 (730 steps, no leap day) with value = 100·year_index + slot, where
  // slot = day of year in the 366-day calendar (1 March = 60, since 29 February keeps slot 59).
  const auto start = ld::to_utc_seconds({2001, 1, 1, 0, 0, 0});
  ld::TimeAxis axis(start, 86400, 730);
  lb::Climatology c({.slot = lb::ClimatologySlot::automatic, .window_half_width = 1, .min_count = 1});
  std::vector<double> y(730);
  lb::SeriesSet s{y, {}, axis};
  c.fit(s, {0, 1}, {});  // resolves the slot kind so slot_of works for building the data
  for (std::size_t i = 0; i < 730; ++i) y[i] = (i < 365 ? 0.0 : 100.0) + static_cast<double>(c.slot_of(axis, i));
  c.fit(s, {0, 730}, {});
  ASSERT_EQ(c.slot_count(), 366u);
  // Issue 2001-01-09 (step 8) lead 1 -> 10 January, slot 9: window slots 8, 9, 10 of both years:
  // (8 + 9 + 10 + 108 + 109 + 110) / 6 = 59.
  const std::vector<std::size_t> issues{8};
  EXPECT_DOUBLE_EQ(c.forecast(s, issues, 1).value(0, 0), 59.0);
  // 1 January (slot 0) pools slot 365 (31 Dec), 0 and 1: (365 + 0 + 1 + 465 + 100 + 101) / 6 = 172.
  const std::vector<std::size_t> new_year_eve{364};
  EXPECT_DOUBLE_EQ(c.forecast(s, new_year_eve, 1).value(0, 0), 172.0);
  // Slot 59 (29 Feb) has no values itself; its window holds slots 58 and 60 of both years:
  // {58, 60, 158, 160}, mean 109.
  EXPECT_EQ(c.pooled_values(59), (std::vector<double>{58.0, 60.0, 158.0, 160.0}));
  // Quantiles of the pooled values of slot 9 {8, 9, 10, 108, 109, 110}: median (type 7) = (10 + 108) / 2 = 59.
  const std::vector<double> probs{0.0, 0.5, 1.0};
  const auto q = c.climatological_quantiles(s, issues, 1, probs);
  EXPECT_DOUBLE_EQ(q.value(0, 0, 0), 8.0);
  EXPECT_DOUBLE_EQ(q.value(0, 0, 1), 59.0);
  EXPECT_DOUBLE_EQ(q.value(0, 0, 2), 110.0);
}

TEST(Climatology, StepOfWeekStartsOnMondayUtc) {
  // Hourly axis from Monday 2000-06-05 00:00 UTC: step i has slot i mod 168. Three weeks with value = week index;
  // fit on the first two weeks, no pooling: every slot's mean is (0 + 1) / 2 = 0.5.
  const auto start = ld::to_utc_seconds({2000, 6, 5, 0, 0, 0});
  ld::TimeAxis axis(start, 3600, 504);
  std::vector<double> y(504);
  for (std::size_t i = 0; i < 504; ++i) y[i] = static_cast<double>(i / 168);
  lb::SeriesSet s{y, {}, axis};
  lb::Climatology c({.slot = lb::ClimatologySlot::automatic, .window_half_width = 0, .min_count = 1});
  c.fit(s, {0, 336}, {});
  EXPECT_EQ(c.slot_count(), 168u);
  EXPECT_EQ(c.slot_of(axis, 0), 0u);
  EXPECT_EQ(c.slot_of(axis, 170), 2u);
  const std::vector<std::size_t> issues{400};
  EXPECT_DOUBLE_EQ(c.forecast(s, issues, 3).value(0, 2), 0.5);
  // A Sunday-start axis: 2000-06-04 00:00 is slot 144 (6 days × 24 h after Monday).
  ld::TimeAxis sunday(ld::to_utc_seconds({2000, 6, 4, 0, 0, 0}), 3600, 504);
  EXPECT_EQ(c.slot_of(sunday, 0), 144u);
  lb::Climatology wide({.slot = lb::ClimatologySlot::step_of_day, .window_half_width = 12, .min_count = 1});
  EXPECT_THROW(wide.fit(s, {0, 336}, {}), libseq::ConfigError);  // 25 > 24 slots
  lb::Climatology daily_only({.slot = lb::ClimatologySlot::day_of_year, .window_half_width = 0, .min_count = 1});
  EXPECT_THROW(daily_only.fit(s, {0, 336}, {}), libseq::DataError);
}

TEST(ErrorQuantiles, PerLeadEmpiricalQuantilesOfPersistenceErrors) {
  // Series 0, 1, 3, 6, 10 on range [0, 5): persistence errors lead 1 = y[t+1] − y[t] for t = 0..3 = {1, 2, 3, 4};
  // lead 2 = y[t+2] − y[t] for t = 0..2 = {3, 5, 7}. Type-7 quantiles: lead 1, p = 0.25 -> 1 + 0.75·1 = 1.75;
  // lead 2, p = 0.5 -> 5; p = 0.9 -> 5 + 0.8·2 = 6.6.
  const std::vector<double> y{0.0, 1.0, 3.0, 6.0, 10.0};
  lb::SeriesSet s{y, {}, {}};
  lb::Persistence p;
  p.fit(s, {0, 5}, {});
  const auto e = lb::ErrorQuantiles::collect(p, s, {0, 5}, 2);
  EXPECT_EQ(e.errors(0), (std::vector<double>{1.0, 2.0, 3.0, 4.0}));
  EXPECT_EQ(e.errors(1), (std::vector<double>{3.0, 5.0, 7.0}));
  EXPECT_DOUBLE_EQ(e.quantile(0, 0.25), 1.75);
  EXPECT_DOUBLE_EQ(e.quantile(1, 0.9), 6.6);
  const std::vector<std::size_t> issues{4};
  const std::vector<double> probs{0.25, 0.5};
  const auto q = lb::forecast_quantiles(p, s, issues, 2, probs, {0, 5});
  EXPECT_DOUBLE_EQ(q.value(0, 0, 0), 11.75);  // 10 + 1.75
  EXPECT_DOUBLE_EQ(q.value(0, 0, 1), 12.5);   // 10 + 2.5
  EXPECT_DOUBLE_EQ(q.value(0, 1, 1), 15.0);   // 10 + 5
  const std::vector<double> bad{1.0};
  EXPECT_THROW(e.apply(p.forecast(s, issues, 2), bad), libseq::ConfigError);
}

TEST(BaselineKind, NamesRoundTrip) {
  for (auto k : {lb::BaselineKind::persistence, lb::BaselineKind::seasonal_naive, lb::BaselineKind::climatology,
                 lb::BaselineKind::ridge_arx, lb::BaselineKind::exp_smoothing, lb::BaselineKind::local_level}) {
    EXPECT_EQ(lb::parse_baseline_kind(lb::to_string(k)), k);
  }
  EXPECT_THROW(lb::parse_baseline_kind("naive"), libseq::ConfigError);
  EXPECT_EQ(lb::parse_climatology_slot("step_of_week"), lb::ClimatologySlot::step_of_week);
}
