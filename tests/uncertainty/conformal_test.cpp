#include "libseq/uncertainty/conformal.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <numeric>
#include <random>
#include <vector>

#include "libseq/error.hpp"

namespace libseq::uncertainty {
namespace {

double mean_of(const std::vector<double>& x) {
  return std::accumulate(x.begin(), x.end(), 0.0) / static_cast<double>(x.size());
}

double standard_error(const std::vector<double>& x) {
  const double m = mean_of(x);
  double ss = 0.0;
  for (double v : x) ss += (v - m) * (v - m);
  return std::sqrt(ss / static_cast<double>(x.size() - 1) / static_cast<double>(x.size()));
}

// Lei et al. (2018), Sect. 2.2: k = ceil((n + 1)(1 - α)); k > n means no finite quantile has the guarantee.
TEST(Conformal, RankIsTheFiniteSampleCeilingAndCanExceedN) {
  EXPECT_EQ(conformal_rank(99, 0.1), 90u);  // (n + 1)(1 - α) = 90 exactly: no rounding up
  EXPECT_EQ(conformal_rank(50, 0.1), 46u);  // 45.9
  EXPECT_EQ(conformal_rank(19, 0.05), 19u);
  EXPECT_EQ(conformal_rank(5, 0.1), 6u);  // 5.4 -> 6 > 5
  const std::vector<double> scores = {0.3, 0.1, 0.5, 0.2, 0.4};
  EXPECT_TRUE(std::isinf(conformal_quantile(scores, 0.1)));
  EXPECT_DOUBLE_EQ(conformal_quantile(scores, 0.4), 0.4);  // k = ceil(3.6) = 4: fourth smallest
  EXPECT_THROW(conformal_rank(10, 0.0), ConfigError);

  const std::vector<double> y = {1, 2, 3, 4, 5}, yhat = {1.1, 2.2, 2.7, 4.4, 5.0};
  const auto calibrator = Calibrator::fit({.observed = y, .point = yhat}, ConformalOptions{});
  const Interval i = calibrator.symmetric_interval(3.0, 0);
  EXPECT_TRUE(i.unbounded()) << "n = 5 at alpha 0.1 must give (-inf, +inf), got [" << i.lower << ", " << i.upper << "]";
}

// Exchangeable synthetic data: y = 2 x + 1 + e, e i.i.d. N(0, 1), forecast 2 x + 1 from a fixed model. Lei et al.
// (2018), Theorem 2.2 (number from memory): 1 - α <= P(cover) <= 1 - α + 1/(n + 1) for continuous scores; in fact
// P(cover) = k/(n + 1) (same proof). R = 2000 repetitions of n = 50 calibration and 100 test cases; the mean
// coverage estimates P(cover) with a standard error estimated from the repetitions (about 0.001); tolerance 4 of
// them. A rank off by one (e.g. ceil(n (1 - α)) = 45) moves the expectation by 1/51 = 0.02 and fails.
TEST(Conformal, SplitConformalCoverageLiesInTheFiniteSampleBand) {
  const std::size_t n = 50, m = 100, repetitions = 2000;
  const double alpha = 0.1;
  std::mt19937_64 rng(20260101);
  std::normal_distribution<double> noise(0.0, 1.0);
  std::uniform_real_distribution<double> input(-1.0, 1.0);
  std::vector<double> coverage;
  for (std::size_t r = 0; r < repetitions; ++r) {
    std::vector<double> y(n), yhat(n);
    for (std::size_t i = 0; i < n; ++i) {
      const double x = input(rng);
      yhat[i] = 2.0 * x + 1.0;
      y[i] = yhat[i] + noise(rng);
    }
    ConformalOptions options;
    options.miscoverage = alpha;
    const auto calibrator = Calibrator::fit({.observed = y, .point = yhat}, options);
    std::size_t covered = 0;
    for (std::size_t j = 0; j < m; ++j) {
      const double x = input(rng);
      const double forecast = 2.0 * x + 1.0;
      covered += calibrator.symmetric_interval(forecast, 0).contains(forecast + noise(rng)) ? 1 : 0;
    }
    coverage.push_back(static_cast<double>(covered) / static_cast<double>(m));
  }
  const double mean = mean_of(coverage), tolerance = 4.0 * standard_error(coverage);
  const double k = static_cast<double>(conformal_rank(n, alpha));
  std::printf("split conformal: mean coverage %.5f (4 SE %.5f), band [%.5f, %.5f], k/(n+1) %.5f\n", mean, tolerance,
              1.0 - alpha, 1.0 - alpha + 1.0 / static_cast<double>(n + 1), k / static_cast<double>(n + 1));
  EXPECT_GE(mean, 1.0 - alpha - tolerance);
  EXPECT_LE(mean, 1.0 - alpha + 1.0 / static_cast<double>(n + 1) + tolerance);
  EXPECT_NEAR(mean, k / static_cast<double>(n + 1), tolerance) << "standard error " << tolerance / 4.0;
}

struct Heteroscedastic {
  std::vector<double> y, lower, upper;
};

// y = 3 sin(x) + (0.2 + x) e, x ~ U(0, 5), e ~ N(0, 1): noise grows with x. The "quantile model" is deliberately
// wrong: 3 sin(x) -/+ half_width, a constant width.
Heteroscedastic heteroscedastic_sample(std::mt19937_64& rng, std::size_t count, double half_width) {
  std::normal_distribution<double> noise(0.0, 1.0);
  std::uniform_real_distribution<double> input(0.0, 5.0);
  Heteroscedastic out;
  for (std::size_t i = 0; i < count; ++i) {
    const double x = input(rng);
    out.y.push_back(3.0 * std::sin(x) + (0.2 + x) * noise(rng));
    out.lower.push_back(3.0 * std::sin(x) - half_width);
    out.upper.push_back(3.0 * std::sin(x) + half_width);
  }
  return out;
}

// Romano, Patterson & Candès (2019), Theorem 1: CQR covers with probability >= 1 - α, and <= 1 - α + 1/(n + 1) for
// continuous scores. Checked for a too-narrow pair (Q > 0 widens it) and a too-wide pair (Q < 0 narrows it).
// R = 2400 repetitions of n = 200 calibration and 200 test cases; tolerance 4 standard errors of the mean coverage
// (about 0.0025, so that a rank one too small, which costs 1/201 = 0.005, fails).
TEST(Conformal, CqrReachesNominalCoverageOnHeteroscedasticData) {
  const std::size_t n = 200, m = 200, repetitions = 2400;
  const double alpha = 0.1;
  for (double half_width : {1.0, 12.0}) {
    std::mt19937_64 rng(7 + static_cast<std::uint64_t>(half_width));
    std::vector<double> coverage, raw;
    double q_sum = 0.0;
    for (std::size_t r = 0; r < repetitions; ++r) {
      const auto cal = heteroscedastic_sample(rng, n, half_width);
      ConformalOptions options;
      options.score = ConformalScore::quantile_pair;
      options.miscoverage = alpha;
      const auto calibrator = Calibrator::fit({.observed = cal.y, .lower = cal.lower, .upper = cal.upper}, options);
      q_sum += calibrator.state().leads[0].score_quantile;
      const auto test = heteroscedastic_sample(rng, m, half_width);
      std::size_t covered = 0, raw_covered = 0;
      for (std::size_t j = 0; j < m; ++j) {
        covered += calibrator.quantile_interval(test.lower[j], test.upper[j], 0).contains(test.y[j]) ? 1 : 0;
        raw_covered += (test.lower[j] <= test.y[j] && test.y[j] <= test.upper[j]) ? 1 : 0;
      }
      coverage.push_back(static_cast<double>(covered) / static_cast<double>(m));
      raw.push_back(static_cast<double>(raw_covered) / static_cast<double>(m));
    }
    const double mean = mean_of(coverage), tolerance = 4.0 * standard_error(coverage);
    std::printf("CQR half width %.0f: raw coverage %.4f, calibrated %.5f (4 SE %.5f), mean Q %.4f\n", half_width,
                mean_of(raw), mean, tolerance, q_sum / static_cast<double>(repetitions));
    EXPECT_GE(mean, 1.0 - alpha - tolerance) << "half width " << half_width;
    EXPECT_LE(mean, 1.0 - alpha + 1.0 / static_cast<double>(n + 1) + tolerance) << "half width " << half_width;
    if (half_width < 5.0) {
      EXPECT_LT(mean_of(raw), 0.6) << "the narrow pair should under-cover before calibration";
      EXPECT_GT(q_sum, 0.0);
    } else {
      EXPECT_GT(mean_of(raw), 0.97) << "the wide pair should over-cover before calibration";
      EXPECT_LT(q_sum, 0.0) << "CQR should narrow an over-wide pair";
    }
  }
}

// Errors grow with lead (noise scale 1, 2, 4). One calibrator per lead reaches nominal coverage at every lead; a
// calibrator pooled over leads over-covers lead 0 and under-covers lead 2. With n = 600 per lead the coverage
// given the calibration set has standard deviation sqrt(k (n + 1 - k) / ((n + 1)^2 (n + 2))) ≈ 0.012 (the Beta law
// of split-conformal coverage; Vovk 2012 / Angelopoulos & Bates 2021, from memory), and 20 000 test cases per lead
// add 0.002; tolerance 4 × 0.0125 = 0.05.
TEST(Conformal, PerLeadCalibrationCoversEveryLead) {
  const std::vector<double> scale = {1.0, 2.0, 4.0};
  std::mt19937_64 rng(99);
  std::normal_distribution<double> noise(0.0, 1.0);
  std::vector<double> y, yhat;
  std::vector<std::size_t> lead;
  for (std::size_t i = 0; i < 600; ++i) {
    for (std::size_t h = 0; h < 3; ++h) {
      yhat.push_back(10.0);
      y.push_back(10.0 + scale[h] * noise(rng));
      lead.push_back(h);
    }
  }
  ConformalOptions per_lead;
  const auto separate = Calibrator::fit({.observed = y, .point = yhat, .lead = lead}, per_lead);
  ConformalOptions pooled_options;
  pooled_options.per_lead = false;
  const auto pooled = Calibrator::fit({.observed = y, .point = yhat, .lead = lead}, pooled_options);
  ASSERT_EQ(separate.state().leads.size(), 3u);
  ASSERT_EQ(pooled.state().leads.size(), 1u);
  for (std::size_t h = 0; h < 3; ++h) {
    std::size_t covered_separate = 0, covered_pooled = 0;
    const std::size_t m = 20000;
    for (std::size_t j = 0; j < m; ++j) {
      const double obs = 10.0 + scale[h] * noise(rng);
      covered_separate += separate.symmetric_interval(10.0, h).contains(obs) ? 1 : 0;
      covered_pooled += pooled.symmetric_interval(10.0, h).contains(obs) ? 1 : 0;
    }
    const double c_separate = static_cast<double>(covered_separate) / m;
    const double c_pooled = static_cast<double>(covered_pooled) / m;
    EXPECT_NEAR(c_separate, 0.9, 0.05) << "lead " << h;
    std::printf("lead %zu: coverage per lead %.4f, pooled %.4f\n", h, c_separate, c_pooled);
    if (h == 0) {
      EXPECT_GT(c_pooled, 0.97) << "pooled, lead 0";
    }
    if (h == 2) {
      EXPECT_LT(c_pooled, 0.80) << "pooled, lead 2";
    }
  }
  EXPECT_THROW(separate.symmetric_interval(10.0, 3), DataError);
}

TEST(Conformal, ReportsCoverageBeforeAndAfterOnTheCalibrationData) {
  std::mt19937_64 rng(3);
  const auto cal = heteroscedastic_sample(rng, 400, 1.0);
  ConformalOptions options;
  options.score = ConformalScore::quantile_pair;
  const auto calibrator = Calibrator::fit({.observed = cal.y, .lower = cal.lower, .upper = cal.upper}, options);
  const auto& e = calibrator.state().leads[0];
  EXPECT_EQ(e.count, 400u);
  EXPECT_EQ(e.rank, 361u);  // ceil(401 * 0.9) = ceil(360.9)
  // In-sample, the k-th smallest score covers at least k of n cases: after >= 361/400 by construction.
  EXPECT_GE(e.coverage_after, 361.0 / 400.0);
  EXPECT_LT(e.coverage_before, e.coverage_after);
  std::size_t raw = 0;
  for (std::size_t i = 0; i < cal.y.size(); ++i) raw += cal.lower[i] <= cal.y[i] && cal.y[i] <= cal.upper[i];
  EXPECT_DOUBLE_EQ(e.coverage_before, static_cast<double>(raw) / 400.0);
  EXPECT_NE(calibrator.brief_report().find("lead 0: n 400, rank 361"), std::string::npos) << calibrator.brief_report();
  // Absolute residuals without a raw interval: no "before" figure.
  const auto plain = Calibrator::fit({.observed = cal.y, .point = cal.lower}, ConformalOptions{});
  EXPECT_TRUE(std::isnan(plain.state().leads[0].coverage_before));
}

TEST(Conformal, CalibratorStateRoundTripsAndRejectsTampering) {
  std::vector<double> y, yhat;
  std::vector<std::size_t> lead;
  for (std::size_t i = 0; i < 90; ++i) {
    y.push_back(std::sin(static_cast<double>(i)) * (1.0 + static_cast<double>(i % 3)));
    yhat.push_back(0.0);
    lead.push_back(i % 3);
  }
  const auto fitted = Calibrator::fit({.observed = y, .point = yhat, .lead = lead}, ConformalOptions{});
  const auto restored = Calibrator::from_state(fitted.state());
  for (std::size_t h = 0; h < 3; ++h) {
    EXPECT_EQ(restored.symmetric_interval(1.5, h).lower, fitted.symmetric_interval(1.5, h).lower);
    EXPECT_EQ(restored.symmetric_interval(1.5, h).upper, fitted.symmetric_interval(1.5, h).upper);
  }
  auto bad = fitted.state();
  bad.leads[1].rank += 1;
  EXPECT_THROW(Calibrator::from_state(bad), DataError);
  bad = fitted.state();
  bad.options.per_lead = false;
  EXPECT_THROW(Calibrator::from_state(bad), DataError);
  EXPECT_THROW(fitted.quantile_interval(0.0, 1.0, 0), DataError);
}

TEST(Conformal, OptionsReportEveryBrokenRule) {
  AdaptiveOptions options;
  options.miscoverage = 1.5;
  options.step_size = 0.0;
  options.initial_miscoverage = -0.2;
  try {
    options.validate();
    FAIL() << "no exception";
  } catch (const ConfigError& e) {
    const std::string message = e.what();
    EXPECT_NE(message.find("adaptive.miscoverage = 1.5"), std::string::npos) << message;
    EXPECT_NE(message.find("adaptive.step_size = 0"), std::string::npos) << message;
    EXPECT_NE(message.find("adaptive.initial_miscoverage = -0.2"), std::string::npos) << message;
  }
  ConformalOptions split;
  split.miscoverage = 0.0;
  EXPECT_THROW(split.validate(), ConfigError);
  EXPECT_EQ(parse_conformal_score("quantile_pair"), ConformalScore::quantile_pair);
  EXPECT_THROW(parse_conformal_score("cqr2"), ConfigError);
  const std::vector<double> y = {1.0, 2.0};
  EXPECT_THROW(Calibrator::fit({.observed = y, .point = std::vector<double>{1.0}}, ConformalOptions{}), DataError);
}

// A stream with two distribution shifts: noise scale 1, then 3, then 0.5 (T = 3000). Gibbs & Candès (2021),
// Proposition 4.1 (number and form from memory; the proof is two lines: α_{T+1} = α_1 + γ Σ (α − err_t) and
// α_t stays in [−γ, 1 + γ]): for every T, |mean err − α| <= (max(α_1, 1 − α_1) + γ)/(γ T), deterministically.
// Checked at every prefix, for three step sizes and both score windows; α_t checked against [−γ, 1 + γ].
TEST(AdaptiveConformal, LongRunMiscoverageObeysTheDeterministicBound) {
  const double alpha = 0.1;
  for (double gamma : {0.002, 0.01, 0.05}) {
    for (std::size_t window : {std::size_t{0}, std::size_t{250}}) {
      std::mt19937_64 rng(5);
      std::normal_distribution<double> noise(0.0, 1.0);
      std::vector<double> calibration;
      for (int i = 0; i < 200; ++i) calibration.push_back(std::abs(noise(rng)));
      AdaptiveOptions options;
      options.miscoverage = alpha;
      options.step_size = gamma;
      options.score_window = window;
      AdaptiveConformal aci(options, calibration);
      const double alpha1 = aci.current_miscoverage();
      for (std::size_t t = 1; t <= 3000; ++t) {
        const double sd = t <= 1000 ? 1.0 : (t <= 2000 ? 3.0 : 0.5);
        aci.step_symmetric(0.0, sd * noise(rng));
        const double bound = (std::max(alpha1, 1.0 - alpha1) + gamma) / (gamma * static_cast<double>(t));
        ASSERT_LE(std::abs(aci.observed_miscoverage() - alpha), bound + 1e-12) << "gamma " << gamma << ", T " << t;
        ASSERT_GE(aci.current_miscoverage(), -gamma - 1e-12);
        ASSERT_LE(aci.current_miscoverage(), 1.0 + gamma + 1e-12);
      }
    }
  }
}

// After a shift to three times the noise, fixed split-conformal intervals miss about P(|3 e| > 1.645) = 0.58 of the
// time; ACI (γ = 0.01, window 250) must come back near α. Pass rule: over the shifted stretch, ACI's miscoverage is
// within 0.05 of α while the fixed calibrator's is more than 0.3 away (both are far apart; common practice, no
// source beyond the method's purpose).
TEST(AdaptiveConformal, TracksAShiftThatBreaksFixedCalibration) {
  std::mt19937_64 rng(17);
  std::normal_distribution<double> noise(0.0, 1.0);
  std::vector<double> y0(300), yhat0(300, 0.0);
  for (auto& v : y0) v = noise(rng);
  const auto fixed = Calibrator::fit({.observed = y0, .point = yhat0}, ConformalOptions{});
  std::vector<double> scores;
  for (double v : y0) scores.push_back(std::abs(v));
  AdaptiveOptions options;
  options.step_size = 0.01;
  options.score_window = 250;
  AdaptiveConformal aci(options, scores);
  std::size_t aci_miss = 0, fixed_miss = 0, counted = 0;
  for (std::size_t t = 0; t < 4000; ++t) {
    const double obs = 3.0 * noise(rng);
    const Interval issued = aci.step_symmetric(0.0, obs);
    if (t >= 1000) {  // after ACI has had time to adapt
      ++counted;
      aci_miss += issued.contains(obs) ? 0 : 1;
      fixed_miss += fixed.symmetric_interval(0.0, 0).contains(obs) ? 0 : 1;
    }
  }
  const double aci_rate = static_cast<double>(aci_miss) / counted;
  const double fixed_rate = static_cast<double>(fixed_miss) / counted;
  std::printf("after the shift: ACI miscoverage %.4f, fixed split conformal %.4f\n", aci_rate, fixed_rate);
  EXPECT_NEAR(aci_rate, 0.1, 0.05);
  EXPECT_GT(fixed_rate, 0.4);
}

// The empty interval when α_t >= 1 and the whole line when α_t <= 0 are what give the bound above; and the CQR form.
TEST(AdaptiveConformal, ExtremeLevelsGiveEmptyOrUnboundedIntervals) {
  AdaptiveOptions options;
  options.score = ConformalScore::quantile_pair;
  options.step_size = 1.0;
  options.miscoverage = 0.5;
  AdaptiveConformal aci(options, std::vector<double>{0.1, 0.2, 0.3});
  // γ = 1, α = 0.5: a miss lowers α by 0.5 (to 0, the whole line); each cover raises it by 0.5 (to 1, empty).
  aci.update(false, 0.4);
  EXPECT_DOUBLE_EQ(aci.current_miscoverage(), 0.0);
  EXPECT_TRUE(aci.quantile_interval(0.0, 1.0).unbounded());
  aci.update(true, 0.1);
  aci.update(true, 0.1);
  EXPECT_DOUBLE_EQ(aci.current_miscoverage(), 1.0);
  const Interval empty = aci.quantile_interval(0.0, 1.0);
  EXPECT_FALSE(empty.contains(0.5));
  EXPECT_GT(empty.lower, empty.upper);
  EXPECT_THROW(aci.symmetric_interval(0.0), DataError);
  EXPECT_EQ(aci.steps(), 3u);
  EXPECT_EQ(aci.misses(), 1u);
}

}  // namespace
}  // namespace libseq::uncertainty
