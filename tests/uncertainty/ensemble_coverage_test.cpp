// Calibrated coverage of an ensemble on a synthetic process whose predictive distribution is known exactly.
//
// Process (linear reservoir with multiplicative lognormal observation error; all draws seeded):
//   rain          r_t = exp(z_t),                    z_t iid N(0, 1)
//   storage flow  q_t = k q_{t-1} + (1 - k) r_t,     k = 0.7, q_0 = E[r] = exp(1/2)
//   observation   Q_t = q_t exp(σ ε_t - σ²/2),       ε_t iid N(0, 1), σ = 0.2
// A network sees the rain of the last L = 20 steps (r_{t-19..t}) and forecasts y_t = log Q_t. Given the whole rain
// history, y_t ~ N(log q_t - σ²/2, σ²) exactly; the lookback drops k^20 q_{t-20} / q_t <= 8e-4 relative
// (k^20 = 7.98e-4), far below σ. So the true central 90 % interval of y_t is log q_t - σ²/2 ± z σ with
// z = Φ⁻¹(0.95) = 1.6448536269514722 (scipy.stats.norm.ppf(0.95); Boost.Math gives the same below), width 2 z σ in
// log space, and q_t e^{-σ²/2} (e^{zσ} - e^{-zσ}) in flow space.
//
// Procedure: ensemble of 4 GRU members (H = 12, Gaussian head on standardised y, moving-block bootstrap of the
// training windows, early stopping on a validation block), mixture 5 % / 95 % quantiles from mix(), split conformal
// CQR on a calibration period (Calibrator, quantile_pair score; Romano, Patterson & Candès 2019), coverage on a test
// period of 4000 steps. Three independent replications without MC dropout (each checked, then pooled) and one with
// 8 MC-dropout passes per member.
//
// Tolerance (pass rule |coverage - 0.90| <= tol): conditional on the calibration set, split-conformal coverage is
// Beta(k, n + 1 - k) distributed with variance about α(1-α)/n (Vovk 2012, "Conditional validity of inductive
// conformal predictors", from memory), and the test-period fraction adds α(1-α)/m for m test cases. Misses are
// serially dependent through the model's error, which persists with the reservoir memory; we allow a variance
// inflation of (1 + ρ)/(1 - ρ) = 3 (an AR(1) indicator with ρ = 0.5) and check that the measured lag-1
// autocorrelation of the test misses is below 0.5, so the allowance is checked, not only assumed. With n = 3000,
// m = 4000: tol = 3 sqrt(3 · 0.09 (1/3000 + 1/4000)) = 0.0377. The oracle interval (the true distribution) must
// cover 0.90 within 3 binomial standard errors on the same test period (its misses are iid), which checks the
// harness itself.
#include <gtest/gtest.h>

#include <boost/math/distributions/normal.hpp>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <random>
#include <vector>

#include "libseq/uncertainty/conformal.hpp"
#include "libseq/uncertainty/ensemble.hpp"
#include "libseq/uncertainty/mixture.hpp"

namespace libseq::uncertainty {
namespace {

constexpr double kRecession = 0.7;  // k
constexpr double kNoise = 0.2;      // σ
constexpr std::size_t kLookback = 20;
constexpr std::size_t kBurnIn = 100;
constexpr double kAlpha = 0.1;  // target miscoverage α
constexpr std::size_t kTrain = 2000, kValidation = 500, kCalibration = 3000, kTest = 4000;

class Normal {
 public:
  explicit Normal(std::uint64_t seed) : engine_(seed) {}
  double operator()() {  // Box-Muller on raw 64-bit outputs (no implementation-defined std:: distribution)
    const double u1 = (static_cast<double>(engine_() >> 11) + 0.5) * 0x1.0p-53;
    const double u2 = static_cast<double>(engine_() >> 11) * 0x1.0p-53;
    return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * 3.14159265358979323846 * u2);
  }

 private:
  std::mt19937_64 engine_;
};

struct Series {
  std::vector<double> rain, flow, observed_log;  // r_t, q_t, y_t = log Q_t
};

Series simulate(std::size_t steps, std::uint64_t seed) {
  Normal rain_draw(seed), noise_draw(seed + 1);
  Series s;
  double q = std::exp(0.5);
  for (std::size_t t = 0; t < steps; ++t) {
    const double r = std::exp(rain_draw());
    q = kRecession * q + (1.0 - kRecession) * r;
    s.rain.push_back(r);
    s.flow.push_back(q);
    s.observed_log.push_back(std::log(q) + kNoise * noise_draw() - 0.5 * kNoise * kNoise);
  }
  return s;
}

struct Scaling {
  double rain_mean, rain_sd, target_mean, target_sd;
};

double mean_of(const std::vector<double>& x, std::size_t first, std::size_t count) {
  double sum = 0.0;
  for (std::size_t t = first; t < first + count; ++t) sum += x[t];
  return sum / static_cast<double>(count);
}
double sd_of(const std::vector<double>& x, std::size_t first, std::size_t count) {
  const double m = mean_of(x, first, count);
  double ss = 0.0;
  for (std::size_t t = first; t < first + count; ++t) ss += (x[t] - m) * (x[t] - m);
  return std::sqrt(ss / static_cast<double>(count - 1));
}

// Windows ending at steps first .. first + count - 1: scaled rain of the last kLookback steps, scaled y_t.
train::InMemorySequences<float> windows(const Series& s, const Scaling& c, std::size_t first, std::size_t count) {
  std::vector<float> inputs, targets;
  for (std::size_t t = first; t < first + count; ++t) {
    for (std::size_t j = 0; j < kLookback; ++j) {
      inputs.push_back(static_cast<float>((s.rain[t + 1 - kLookback + j] - c.rain_mean) / c.rain_sd));
    }
    targets.push_back(static_cast<float>((s.observed_log[t] - c.target_mean) / c.target_sd));
  }
  return train::InMemorySequences<float>(kLookback, 1, 1, std::move(inputs), std::move(targets), "reservoir");
}

struct CoverageResult {
  std::size_t covered = 0, oracle_covered = 0;
  double log_width_ratio = 0.0;
};

// One replication: simulate with `seed`, train, calibrate, score the test period; checks of this replication
// are made here, pooled checks by the caller.
CoverageResult run_replication(std::uint64_t seed, std::size_t mc_passes, double output_dropout) {
  std::printf("--- replication: process seed %llu, mc_passes %zu, output_dropout %.2f\n",
              static_cast<unsigned long long>(seed), mc_passes, output_dropout);
  const auto started = std::chrono::steady_clock::now();
  const std::size_t train_start = kBurnIn, validation_start = train_start + kTrain;
  const std::size_t calibration_start = validation_start + kValidation;
  const std::size_t test_start = calibration_start + kCalibration;
  const Series s = simulate(test_start + kTest, seed);

  // Scaling fitted on the training period only.
  const Scaling scaling{mean_of(s.rain, train_start, kTrain), sd_of(s.rain, train_start, kTrain),
                        mean_of(s.observed_log, train_start, kTrain), sd_of(s.observed_log, train_start, kTrain)};
  const auto training = windows(s, scaling, train_start, kTrain);
  const auto validation = windows(s, scaling, validation_start, kValidation);
  const auto calibration = windows(s, scaling, calibration_start, kCalibration);
  const auto test = windows(s, scaling, test_start, kTest);

  EnsembleOptions options;
  options.members = 4;
  options.resampling.scheme = ResampleScheme::moving_block;
  options.resampling.lookback_steps = kLookback;  // default block length max(L, n^(1/3)) = 20
  options.resampling.seed = seed + 7;
  options.mc_passes = mc_passes;
  options.network.output_dropout = output_dropout;
  options.network.cell = nn::CellType::gru;
  options.network.input_size = 1;
  options.network.hidden_size = 12;
  options.network.horizon = 1;
  options.network.head = nn::HeadType::gaussian;
  options.training.loss.type = nn::LossType::gaussian_nll;
  options.training.epochs = 40;
  options.training.batch_size = 32;
  options.training.optimizer.learning_rate = 5e-3;
  options.training.early_stopping.patience = 6;
  options.training.gradient_diagnostic = false;
  const std::vector<std::size_t> window_site(training.size(), 0);
  const Ensemble ensemble = Ensemble::train(options, training, window_site, 1, &validation);
  EXPECT_EQ(ensemble.usable_members().size(), options.members);
  for (const auto& member : ensemble.members()) std::printf("member: %s\n", member.summary.brief_report().c_str());

  MixtureOptions mixture;
  mixture.levels = {0.05, 0.95};
  const MixtureTable calibration_mix = mix(ensemble.predict(calibration, 1), mixture);
  const MixtureTable test_mix = mix(ensemble.predict(test, 2), mixture);
  EXPECT_EQ(calibration_mix.case_count, kCalibration);
  EXPECT_EQ(test_mix.case_count, kTest);
  if (calibration_mix.case_count != kCalibration || test_mix.case_count != kTest) return {};

  // Conformal calibration in the scaled space (a positive affine map of y, so coverage is unchanged by it).
  std::vector<double> observed(kCalibration), lower(kCalibration), upper(kCalibration);
  for (std::size_t i = 0; i < kCalibration; ++i) {
    observed[i] = (s.observed_log[calibration_start + i] - scaling.target_mean) / scaling.target_sd;
    lower[i] = calibration_mix.quantiles[2 * i];
    upper[i] = calibration_mix.quantiles[2 * i + 1];
  }
  ConformalOptions conformal;
  conformal.score = ConformalScore::quantile_pair;
  conformal.miscoverage = 0.1;
  CalibrationSet set;
  set.observed = observed;
  set.lower = lower;
  set.upper = upper;
  const Calibrator calibrator = Calibrator::fit(set, conformal);
  std::printf("%s\n", calibrator.brief_report().c_str());

  const double z = boost::math::quantile(boost::math::normal(), 0.95);
  EXPECT_NEAR(z, 1.6448536269514722, 1e-12);  // scipy.stats.norm.ppf(0.95)
  std::size_t covered = 0, raw_covered = 0, oracle_covered = 0;
  double log_width = 0.0, flow_width = 0.0, true_flow_width = 0.0;
  std::vector<double> miss(kTest);
  for (std::size_t i = 0; i < kTest; ++i) {
    const std::size_t t = test_start + i;
    const double y = s.observed_log[t];
    const double lo = test_mix.quantiles[2 * i], hi = test_mix.quantiles[2 * i + 1];
    const Interval scaled = calibrator.quantile_interval(lo, hi, 0);
    const double lower_log = scaling.target_mean + scaling.target_sd * scaled.lower;
    const double upper_log = scaling.target_mean + scaling.target_sd * scaled.upper;
    const bool hit = lower_log <= y && y <= upper_log;
    covered += hit ? 1 : 0;
    miss[i] = hit ? 0.0 : 1.0;
    const double raw_lower = scaling.target_mean + scaling.target_sd * lo;
    const double raw_upper = scaling.target_mean + scaling.target_sd * hi;
    raw_covered += (raw_lower <= y && y <= raw_upper) ? 1 : 0;
    log_width += upper_log - lower_log;
    flow_width += std::exp(upper_log) - std::exp(lower_log);
    const double centre = std::log(s.flow[t]) - 0.5 * kNoise * kNoise;
    oracle_covered += std::abs(y - centre) <= z * kNoise ? 1 : 0;
    true_flow_width += std::exp(centre + z * kNoise) - std::exp(centre - z * kNoise);
  }
  const double m = static_cast<double>(kTest);
  const double coverage = static_cast<double>(covered) / m;
  const double oracle_coverage = static_cast<double>(oracle_covered) / m;
  const double true_log_width = 2.0 * z * kNoise;
  log_width /= m;
  flow_width /= m;
  true_flow_width /= m;

  // Lag-1 autocorrelation of the miss indicator.
  const double miss_mean = 1.0 - coverage;
  double c0 = 0.0, c1 = 0.0;
  for (std::size_t i = 0; i < kTest; ++i) c0 += (miss[i] - miss_mean) * (miss[i] - miss_mean);
  for (std::size_t i = 1; i < kTest; ++i) c1 += (miss[i] - miss_mean) * (miss[i - 1] - miss_mean);
  const double lag1 = c0 > 0 ? c1 / c0 : 0.0;

  const double alpha = kAlpha;
  const double tolerance = 3.0 * std::sqrt(3.0 * alpha * (1 - alpha) * (1.0 / kCalibration + 1.0 / m));
  const double oracle_tolerance = 3.0 * std::sqrt(alpha * (1 - alpha) / m);
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
  std::printf("test steps %zu: coverage raw %.4f, calibrated %.4f (0.90 +/- %.4f), oracle %.4f (+/- %.4f)\n", kTest,
              static_cast<double>(raw_covered) / m, coverage, tolerance, oracle_coverage, oracle_tolerance);
  std::printf("lag-1 autocorrelation of misses %.4f (allowance assumes <= 0.5)\n", lag1);
  std::printf("mean width log space %.4f vs true %.4f (ratio %.3f); flow space %.4f vs true %.4f (ratio %.3f)\n",
              log_width, true_log_width, log_width / true_log_width, flow_width, true_flow_width,
              flow_width / true_flow_width);
  std::printf("elapsed %.1f s\n", seconds);

  EXPECT_NEAR(oracle_coverage, 0.90, oracle_tolerance) << "the harness's true distribution is wrong";
  EXPECT_NEAR(coverage, 0.90, tolerance);
  EXPECT_LT(lag1, 0.5) << "misses are more dependent than the tolerance allows for";
  // Width: an interval rule with marginal coverage c has mean width >= 2 Φ⁻¹((1 + c)/2) σ for a homoscedastic
  // Gaussian truth (coverage of a width-w interval is at most 2Φ(w/2σ) - 1, concave in w; Jensen). At the lower
  // tolerance edge this gives the lower bound below. The upper bound 1.5 is our own regression guard (no source):
  // an ensemble that learnt nothing would give about the climatological width, sqrt(Var y)/σ ≈ 2.7 times the true.
  const double width_floor = boost::math::quantile(boost::math::normal(), (1.0 + 0.90 - tolerance) / 2.0) / z;
  EXPECT_GT(log_width / true_log_width, width_floor);
  EXPECT_LT(log_width / true_log_width, 1.5);
  const double climatology_ratio = sd_of(s.observed_log, test_start, kTest) / kNoise;
  std::printf("climatological spread / σ = %.3f\n", climatology_ratio);
  EXPECT_GT(climatology_ratio, 2.0) << "the process is too flat to tell learning from climatology";
  return {covered, oracle_covered, log_width / true_log_width};
}

TEST(EnsembleCoverage, CalibratedNinetyPercentIntervalsCoverTheKnownProcess) {
  // Three independent replications (own process and ensemble seeds). Each must pass on its own; their pooled
  // coverage (12000 test cases over 3 independent series, 9000 calibration cases) must lie within
  // 3 sqrt(3 · 0.09 (1/9000 + 1/12000)) = 0.0218 of 0.90, the same rule with three times the cases.
  std::size_t covered = 0, oracle_covered = 0;
  const std::size_t replications = 3;
  for (std::size_t r = 0; r < replications; ++r) {
    const CoverageResult result = run_replication(20261202 + 1000 * r, 0, 0.0);
    covered += result.covered;
    oracle_covered += result.oracle_covered;
  }
  const double cases = static_cast<double>(replications * kTest);
  const double pooled = static_cast<double>(covered) / cases;
  const double pooled_tolerance =
      3.0 * std::sqrt(3.0 * kAlpha * (1 - kAlpha) * (1.0 / (replications * kCalibration) + 1.0 / cases));
  std::printf("pooled calibrated coverage %.4f (0.90 +/- %.4f), pooled oracle %.4f\n", pooled, pooled_tolerance,
              static_cast<double>(oracle_covered) / cases);
  EXPECT_NEAR(pooled, 0.90, pooled_tolerance);
}

TEST(EnsembleCoverage, McDropoutMembersAlsoCalibrateToNinetyPercent) {
  // The same check with 8 MC-dropout passes per member (output dropout 0.1): 32 Gaussian components per case.
  (void)run_replication(20261202 + 77, 8, 0.1);
}

}  // namespace
}  // namespace libseq::uncertainty
