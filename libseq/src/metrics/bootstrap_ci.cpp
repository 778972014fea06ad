#include "libseq/metrics/bootstrap_ci.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <random>
#include <string>

#include "libseq/error.hpp"
#include "metrics/checks_impl.hpp"

namespace libseq::metrics {

namespace {

// Uniform integer in [0, bound) by rejection, so that the draws are the same with every standard library
// (std::uniform_int_distribution's algorithm is implementation-defined; std::mt19937_64's output is not).
std::size_t uniform_below(std::mt19937_64& engine, std::uint64_t bound) {
  const std::uint64_t max = std::mt19937_64::max();
  const std::uint64_t limit = max - (max % bound + 1) % bound;  // accept x ≤ limit: limit + 1 is a multiple of bound
  std::uint64_t x = engine();
  while (x > limit) x = engine();
  return static_cast<std::size_t>(x % bound);
}

}  // namespace

void BootstrapOptions::validate() const {
  std::string problems;
  auto add = [&](const std::string& text) { problems += (problems.empty() ? "" : "; ") + text; };
  if (resamples < 2) add("'resamples' is " + std::to_string(resamples) + "; expected at least 2");
  if (block_length < 1) add("'block_length' is 0; expected at least 1 case");
  if (!(confidence > 0.0 && confidence < 1.0)) {
    char buffer[64];
    std::snprintf(buffer, sizeof buffer, "%.17g", confidence);
    add(std::string("'confidence' is ") + buffer + "; expected a value strictly between 0 and 1");
  }
  if (!problems.empty()) throw ConfigError("bootstrap options: " + problems);
}

std::vector<std::size_t> moving_block_indices(std::size_t case_count, std::size_t block_length, std::uint64_t seed,
                                              std::uint64_t stream) {
  if (block_length == 0 || block_length > case_count) {
    throw ConfigError("moving_block_indices: 'block_length' is " + std::to_string(block_length) +
                      "; expected between 1 and the number of cases (" + std::to_string(case_count) + ")");
  }
  // Künsch (1989): blocks of consecutive cases keep the serial dependence within a block; start positions are
  // uniform over the case_count − block_length + 1 blocks that fit.
  std::mt19937_64 engine(detail::splitmix64(detail::splitmix64(seed) ^ stream));
  const std::uint64_t starts = case_count - block_length + 1;
  std::vector<std::size_t> indices;
  indices.reserve(case_count + block_length);
  while (indices.size() < case_count) {
    const std::size_t start = uniform_below(engine, starts);
    for (std::size_t k = 0; k < block_length && indices.size() < case_count; ++k) indices.push_back(start + k);
  }
  return indices;
}

double sample_quantile(std::span<const double> values, double p) {
  if (!(p >= 0.0 && p <= 1.0)) throw DataError("sample_quantile: 'p' is outside [0, 1]");
  if (values.empty()) return detail::nan;
  std::vector<double> sorted(values.begin(), values.end());
  if (std::any_of(sorted.begin(), sorted.end(), [](double v) { return std::isnan(v); })) {
    throw DataError("sample_quantile: a value is NaN; expected numbers only");
  }
  std::sort(sorted.begin(), sorted.end());
  // Hyndman & Fan (1996), definition 7: h = (n − 1)p, interpolate between order statistics floor(h) and ceil(h).
  const double h = static_cast<double>(sorted.size() - 1) * p;
  const auto below = static_cast<std::size_t>(std::floor(h));
  const std::size_t above = std::min(below + 1, sorted.size() - 1);
  return sorted[below] + (h - static_cast<double>(below)) * (sorted[above] - sorted[below]);
}

ConfidenceInterval bootstrap_ci(std::size_t case_count,
                                const std::function<double(std::span<const std::size_t>)>& statistic,
                                const BootstrapOptions& options) {
  options.validate();
  ConfidenceInterval interval;
  interval.confidence = options.confidence;
  interval.block_length = options.block_length;
  if (case_count == 0) return interval;
  std::vector<std::size_t> identity(case_count);
  for (std::size_t i = 0; i < case_count; ++i) identity[i] = i;
  interval.estimate = statistic(identity);

  std::vector<double> replicates;
  replicates.reserve(options.resamples);
  for (std::size_t r = 0; r < options.resamples; ++r) {
    const auto indices = moving_block_indices(case_count, options.block_length, options.seed, r);
    const double value = statistic(indices);
    if (std::isnan(value)) {
      ++interval.resamples_failed;
    } else {
      replicates.push_back(value);
    }
  }
  interval.resamples_used = replicates.size();
  if (replicates.size() >= 2) {
    // Percentile interval (Efron & Tibshirani 1993, ch. 13): the (1 ∓ c)/2 quantiles of the replicates.
    interval.lower = sample_quantile(replicates, (1.0 - options.confidence) / 2.0);
    interval.upper = sample_quantile(replicates, (1.0 + options.confidence) / 2.0);
  }
  return interval;
}

}  // namespace libseq::metrics
