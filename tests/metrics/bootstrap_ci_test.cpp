#include "libseq/metrics/bootstrap_ci.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <iostream>
#include <random>
#include <string>
#include <vector>

#include "libseq/error.hpp"
#include "libseq/metrics/distributions.hpp"

namespace libseq::metrics {

namespace {
// Statistic: the mean of the resampled values.
auto mean_of(const std::vector<double>& values) {
  return [&values](std::span<const std::size_t> indices) {
    double sum = 0.0;
    for (std::size_t i : indices) sum += values[i];
    return sum / static_cast<double>(indices.size());
  };
}

double sample_sd(const std::vector<double>& x) {
  double mean = 0.0;
  for (double v : x) mean += v;
  mean /= static_cast<double>(x.size());
  double ss = 0.0;
  for (double v : x) ss += (v - mean) * (v - mean);
  return std::sqrt(ss / static_cast<double>(x.size() - 1));
}
}  // namespace

TEST(MovingBlocks, IndicesComeInConsecutiveBlocksAndAreSeeded) {
  const auto indices = moving_block_indices(103, 10, 42, 0);
  ASSERT_EQ(indices.size(), 103u);
  for (std::size_t start = 0; start < indices.size(); start += 10) {
    EXPECT_LE(indices[start], 93u);  // a block must fit: start ≤ n − b
    for (std::size_t k = 1; k < 10 && start + k < indices.size(); ++k) {
      EXPECT_EQ(indices[start + k], indices[start] + k);
    }
  }
  EXPECT_EQ(indices, moving_block_indices(103, 10, 42, 0));
  EXPECT_NE(indices, moving_block_indices(103, 10, 42, 1));
  EXPECT_NE(indices, moving_block_indices(103, 10, 43, 0));
  // One block as long as the series has one possible start: the resample is the series itself.
  const auto whole = moving_block_indices(5, 5, 1, 0);
  EXPECT_EQ(whole, (std::vector<std::size_t>{0, 1, 2, 3, 4}));
  EXPECT_THROW(moving_block_indices(5, 6, 1, 0), ConfigError);
  EXPECT_THROW(moving_block_indices(5, 0, 1, 0), ConfigError);
}

// Hyndman & Fan (1996) definition 7, by hand: values 4, 1, 3, 2 sorted 1, 2, 3, 4; p = 0.25 → h = 3·0.25 = 0.75 →
// 1 + 0.75·(2 − 1) = 1.75; p = 0.9 → h = 2.7 → 3 + 0.7·(4 − 3) = 3.7; p = 0 → 1; p = 1 → 4 (the same as numpy
// quantile's default "linear" method).
TEST(SampleQuantile, InterpolatesBetweenOrderStatisticsAsDefinitionSeven) {
  const std::vector<double> values{4, 1, 3, 2};
  EXPECT_DOUBLE_EQ(sample_quantile(values, 0.25), 1.75);
  EXPECT_DOUBLE_EQ(sample_quantile(values, 0.9), 3.7);
  EXPECT_DOUBLE_EQ(sample_quantile(values, 0.0), 1.0);
  EXPECT_DOUBLE_EQ(sample_quantile(values, 1.0), 4.0);
  EXPECT_TRUE(std::isnan(sample_quantile(std::vector<double>{}, 0.5)));
}

// Independent N(0, 1) values, block length 1: the percentile interval of the mean should match the normal-theory
// interval mean ± z_0.95·s/√n (central limit theorem; common practice), width 2·1.645·s/√n. With 2000 resamples the
// Monte Carlo error of each percentile is a few percent of the width; pass rule: width within 10 % of theory and the
// estimate inside the interval.
TEST(Bootstrap, IidPercentileIntervalOfTheMeanMatchesNormalTheory) {
  std::mt19937_64 engine(2024);
  std::normal_distribution<double> normal(0.0, 1.0);
  std::vector<double> values(400);
  for (auto& v : values) v = normal(engine);
  BootstrapOptions options;
  options.resamples = 2000;
  options.block_length = 1;
  options.confidence = 0.9;
  options.seed = 5;
  const ConfidenceInterval interval = bootstrap_ci(values.size(), mean_of(values), options);
  const double theory = 2.0 * normal_quantile(0.95) * sample_sd(values) / std::sqrt(400.0);
  const double width = interval.upper - interval.lower;
  std::cout << "iid bootstrap width " << width << ", normal theory " << theory << "\n";
  EXPECT_NEAR(width / theory, 1.0, 0.10);
  EXPECT_LT(interval.lower, interval.estimate);
  EXPECT_GT(interval.upper, interval.estimate);
  EXPECT_EQ(interval.resamples_used, 2000u);
  // Seeded: the same options give the same interval.
  const ConfidenceInterval again = bootstrap_ci(values.size(), mean_of(values), options);
  EXPECT_EQ(again.lower, interval.lower);
  EXPECT_EQ(again.upper, interval.upper);
}

// Serially dependent values, AR(1) x_t = 0.8·x_{t−1} + e_t, e_t ~ N(0, 1). The process variance is
// σ_e²/(1 − φ²) = 2.78, but the variance of the mean is about the long-run variance σ_e²/(1 − φ)² = 25 over n
// (standard AR(1) result, common practice): 9× what an iid resampling sees, 3× in interval width. Moving blocks of
// length b keep the lags below b, so their expected variance is Σ_{|k|<b}(1 − |k|/b)γ(k) ≈ 0.77 of the long-run value
// for b = 20 (width ≈ 0.88×). Pass rule: block-20 width ≥ 2× the iid width and within [0.7, 1.1]× the long-run width
// 2·z_0.95·σ_e/((1 − φ)√n).
TEST(Bootstrap, MovingBlocksWidenTheIntervalForSeriallyDependentErrors) {
  const double phi = 0.8;
  const std::size_t n = 4000;
  std::mt19937_64 engine(77);
  std::normal_distribution<double> normal(0.0, 1.0);
  std::vector<double> values(n);
  double x = 0.0;
  for (std::size_t burn = 0; burn < 100; ++burn) x = phi * x + normal(engine);
  for (auto& v : values) v = x = phi * x + normal(engine);
  BootstrapOptions options;
  options.resamples = 1000;
  options.seed = 9;
  options.block_length = 1;
  const ConfidenceInterval iid = bootstrap_ci(n, mean_of(values), options);
  options.block_length = 20;
  const ConfidenceInterval blocks = bootstrap_ci(n, mean_of(values), options);
  const double long_run = 2.0 * normal_quantile(0.95) / ((1.0 - phi) * std::sqrt(static_cast<double>(n)));
  const double iid_width = iid.upper - iid.lower, block_width = blocks.upper - blocks.lower;
  std::cout << "AR(1) widths: iid " << iid_width << ", blocks of 20 " << block_width << ", long-run theory " << long_run
            << "\n";
  EXPECT_GE(block_width, 2.0 * iid_width);
  EXPECT_GE(block_width / long_run, 0.7);
  EXPECT_LE(block_width / long_run, 1.1);
}

TEST(Bootstrap, NanReplicatesAreCountedAndLeftOut) {
  // Statistic undefined (NaN) when the resample contains index 0: those replicates are counted as failed.
  const auto statistic = [](std::span<const std::size_t> indices) {
    for (std::size_t i : indices) {
      if (i == 0) return std::nan("");
    }
    return static_cast<double>(indices.size());
  };
  BootstrapOptions options;
  options.resamples = 200;
  const ConfidenceInterval interval = bootstrap_ci(3, statistic, options);
  EXPECT_EQ(interval.resamples_used + interval.resamples_failed, 200u);
  EXPECT_GT(interval.resamples_failed, 0u);
  EXPECT_GT(interval.resamples_used, 0u);
}

TEST(Bootstrap, ValidateReportsEveryBrokenRule) {
  BootstrapOptions options;
  options.resamples = 1;
  options.block_length = 0;
  options.confidence = 1.5;
  try {
    options.validate();
    FAIL() << "no exception";
  } catch (const ConfigError& e) {
    const std::string message = e.what();
    EXPECT_NE(message.find("'resamples' is 1"), std::string::npos) << message;
    EXPECT_NE(message.find("'block_length' is 0"), std::string::npos) << message;
    EXPECT_NE(message.find("'confidence' is 1.5"), std::string::npos) << message;
  }
}

}  // namespace libseq::metrics
