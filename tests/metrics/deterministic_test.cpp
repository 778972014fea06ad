#include "libseq/metrics/deterministic.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <vector>

#include "libseq/error.hpp"

namespace libseq::metrics {

namespace {
const double nan = std::numeric_limits<double>::quiet_NaN();

// The 5-value series of the hand-worked examples below.
const std::vector<double> observed{2, 4, 6, 8, 10};
const std::vector<double> simulated{3, 4, 8, 7, 13};
}  // namespace

// KGE components worked by hand (Gupta et al. 2009, eq. 9):
//   μo = (2+4+6+8+10)/5 = 30/5 = 6;           μs = (3+4+8+7+13)/5 = 35/5 = 7.
//   o − μo = −4, −2, 0, 2, 4  → Σ(o−μo)² = 16+4+0+4+16 = 40.
//   s − μs = −4, −3, 1, 0, 6  → Σ(s−μs)² = 16+9+1+0+36 = 62.
//   Σ(o−μo)(s−μs) = 16 + 6 + 0 + 0 + 24 = 46.
//   r = 46/√(40·62) = 46/√2480 = 46/49.799598 = 0.9237022.
//   α = σs/σo = √(62/5)/√(40/5) = √(62/40) = √1.55 = 1.2449900.
//   β = μs/μo = 7/6 = 1.1666667.
//   (r−1)² = 0.0058213, (α−1)² = 0.0600201, (β−1)² = 1/36 = 0.0277778; sum = 0.0936192, √ = 0.3059726.
//   KGE = 1 − 0.3059726 = 0.6940274.
TEST(Deterministic, KgeComponentsMatchTheHandWorkedFiveValueSeries) {
  const KgeResult result = kge(observed, simulated);
  EXPECT_NEAR(result.r, 0.9237022, 5e-8);
  EXPECT_NEAR(result.alpha, 1.2449900, 5e-8);
  EXPECT_NEAR(result.beta, 7.0 / 6.0, 1e-15);
  EXPECT_NEAR(result.value, 0.6940274, 5e-8);
  EXPECT_EQ(result.counts.used, 5u);
  EXPECT_EQ(result.counts.skipped(), 0u);
}

// KGE′ (Kling et al. 2012) on the same series:
//   γ = (σs/μs)/(σo/μo) = α/β = 1.2449900/1.1666667 = 1.0671343; (γ−1)² = 0.0045070.
//   KGE′ = 1 − √(0.0058213 + 0.0045070 + 0.0277778) = 1 − √0.0381061 = 1 − 0.1952079 = 0.8047921.
TEST(Deterministic, KgePrimeUsesTheRatioOfCoefficientsOfVariation) {
  const KgePrimeResult result = kge_prime(observed, simulated);
  EXPECT_NEAR(result.gamma, 1.0671343, 5e-8);
  EXPECT_NEAR(result.value, 0.8047921, 5e-8);
  EXPECT_NEAR(result.r, 0.9237022, 5e-8);
}

// NSE = 1 − Σ(s−o)²/Σ(o−μo)² (Nash & Sutcliffe 1970):
//   s − o = 1, 0, 2, −1, 3 → Σ(s−o)² = 1+0+4+1+9 = 15; Σ(o−μo)² = 40 (above) → NSE = 1 − 15/40 = 0.625.
//   A perfect forecast has Σ(s−o)² = 0 → NSE = 1; the mean forecast s = μo = 6 has Σ(s−o)² = Σ(o−μo)² → NSE = 0.
TEST(Deterministic, NseIsOneForPerfectZeroForTheMeanAndMatchesTheHandValue) {
  EXPECT_DOUBLE_EQ(nse(observed, simulated).value, 0.625);
  EXPECT_DOUBLE_EQ(nse(observed, observed).value, 1.0);
  const std::vector<double> mean_forecast(5, 6.0);
  EXPECT_NEAR(nse(observed, mean_forecast).value, 0.0, 1e-15);
}

// PBIAS = 100·Σ(s−o)/Σo, positive = overestimation (the convention of this library, docs/methods-metrics.md):
//   Σ(s−o) = 1+0+2−1+3 = 5, Σo = 30 → PBIAS = 100·5/30 = +16.667 % (the simulation is too high on the whole).
//   Swapping roles (s = 2,4,6,8,10 against o = 3,4,8,7,13): Σ(s−o) = −5, Σo = 35 → −14.286 % (too low).
TEST(Deterministic, PbiasIsPositiveWhenTheForecastOverestimates) {
  EXPECT_NEAR(pbias(observed, simulated).value, 100.0 * 5.0 / 30.0, 1e-12);
  EXPECT_NEAR(pbias(simulated, observed).value, -100.0 * 5.0 / 35.0, 1e-12);
}

// RMSE = √(15/5) = √3 = 1.7320508; MAE = (1+0+2+1+3)/5 = 7/5 = 1.4;
// MAPE = 100/5·(1/2 + 0/4 + 2/6 + 1/8 + 3/10) = 20·1.2583333 = 25.166667 %.
TEST(Deterministic, RmseMaeMapeMatchTheHandValues) {
  EXPECT_NEAR(rmse(observed, simulated).value, std::sqrt(3.0), 1e-15);
  EXPECT_NEAR(mae(observed, simulated).value, 1.4, 1e-15);
  EXPECT_NEAR(mape(observed, simulated).value, 25.166666666666667, 1e-12);
}

// MAPE excludes zero observations and counts them: o = 0, 2, NaN, 4 and s = 1, 3, 5, 2 use cases 2 and 4:
// 100/2·(1/2 + 2/4) = 50 %; one excluded (zero), one missing observation.
TEST(Deterministic, MapeExcludesAndCountsZeroObservations) {
  const std::vector<double> o{0, 2, nan, 4};
  const std::vector<double> s{1, 3, 5, 2};
  const MetricValue result = mape(o, s);
  EXPECT_DOUBLE_EQ(result.value, 50.0);
  EXPECT_EQ(result.counts.used, 2u);
  EXPECT_EQ(result.counts.excluded, 1u);
  EXPECT_EQ(result.counts.missing_observation, 1u);
}

// MASE (Hyndman & Koehler 2006), scale from a training series y = 1, 3, 2, 5, 4:
//   period 1: |3−1|, |2−3|, |5−2|, |4−5| = 2, 1, 3, 1 → scale = 7/4 = 1.75; MASE = MAE/scale = 1.4/1.75 = 0.8.
//   period 2: |2−1|, |5−3|, |4−2| = 1, 2, 2 → scale = 5/3.
//   A NaN in the training series drops only the pairs it belongs to: y = 1, NaN, 2, 5 at period 1 keeps |5−2| = 3.
TEST(Deterministic, MaseScalesByTheInSampleNaiveError) {
  const std::vector<double> training{1, 3, 2, 5, 4};
  EXPECT_DOUBLE_EQ(naive_mae_scale(training, 1), 1.75);
  EXPECT_DOUBLE_EQ(naive_mae_scale(training, 2), 5.0 / 3.0);
  EXPECT_DOUBLE_EQ(naive_mae_scale(std::vector<double>{1, nan, 2, 5}, 1), 3.0);
  EXPECT_NEAR(mase(observed, simulated, 1.75).value, 0.8, 1e-15);
  EXPECT_TRUE(std::isnan(mase(observed, simulated, 0.0).value));
  EXPECT_THROW(naive_mae_scale(training, 0), ConfigError);
}

// Pooled MASE with per-case scales: errors 1, 0, 2, 1, 3 scaled by 1, 1, 2, 2, 0 (zero = excluded):
// (1/1 + 0/1 + 2/2 + 1/2)/4 = 2.5/4 = 0.625.
TEST(Deterministic, PooledMaseScalesEachCaseByItsOwnSeries) {
  const std::vector<double> scales{1, 1, 2, 2, 0};
  const MetricValue result = mase(observed, simulated, scales);
  EXPECT_DOUBLE_EQ(result.value, 0.625);
  EXPECT_EQ(result.counts.used, 4u);
  EXPECT_EQ(result.counts.excluded, 1u);
}

// Missing observations are skipped and counted; the value equals the one on the remaining cases.
TEST(Deterministic, MissingObservationsAndForecastsAreSkippedAndCounted) {
  const std::vector<double> o{2, nan, 4, 6, 8, 10, nan};
  const std::vector<double> s{3, 1, 4, 8, 7, 13, nan};
  const std::vector<double> s_with_gap{3, 1, 4, nan, 7, 13, nan};
  const MetricValue full = nse(o, s);
  EXPECT_DOUBLE_EQ(full.value, 0.625);
  EXPECT_EQ(full.counts.used, 5u);
  EXPECT_EQ(full.counts.missing_observation, 2u);
  EXPECT_EQ(full.counts.missing_forecast, 0u);
  const KgeResult gap = kge(o, s_with_gap);
  EXPECT_EQ(gap.counts.used, 4u);
  EXPECT_EQ(gap.counts.missing_forecast, 1u);
  EXPECT_EQ(gap.counts.total(), 7u);
}

TEST(Deterministic, UndefinedCasesGiveNanNotExceptions) {
  const std::vector<double> flat{3, 3, 3};
  const std::vector<double> any{1, 2, 3};
  EXPECT_TRUE(std::isnan(nse(flat, any).value));  // zero observed variance
  EXPECT_TRUE(std::isnan(kge(flat, any).value));  // σo = 0 → α, r undefined
  EXPECT_TRUE(std::isnan(kge(flat, any).r));
  const std::vector<double> none{nan, nan};
  const std::vector<double> two{1, 2};
  EXPECT_TRUE(std::isnan(rmse(none, two).value));
  EXPECT_EQ(rmse(none, two).counts.missing_observation, 2u);
  EXPECT_TRUE(std::isnan(pbias(std::vector<double>{1, -1}, two).value));  // Σo = 0
}

TEST(Deterministic, MismatchedLengthsThrowDataErrorNamingTheFunction) {
  const std::vector<double> three{1, 2, 3};
  const std::vector<double> two{1, 2};
  try {
    nse(three, two);
    FAIL() << "no exception";
  } catch (const DataError& e) {
    const std::string message = e.what();
    EXPECT_NE(message.find("nse"), std::string::npos) << message;
    EXPECT_NE(message.find("3"), std::string::npos) << message;
  }
  EXPECT_THROW(mase(three, three, two), DataError);
}

}  // namespace libseq::metrics
