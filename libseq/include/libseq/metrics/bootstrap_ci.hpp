#pragma once
/// @file bootstrap_ci.hpp
/// Percentile bootstrap confidence intervals for any statistic of a sequence of cases, resampled by moving blocks
/// (Künsch 1989) because forecast errors are serially dependent: consecutive errors of one site share weather.
/// Seeded and deterministic: the same options give the same interval on every platform and thread count.

#include <cstddef>
#include <cstdint>
#include <functional>
#include <limits>
#include <span>
#include <vector>

namespace libseq::metrics {

/// How to resample.
struct BootstrapOptions {
  /// Number of bootstrap resamples. More gives a steadier interval; cost is linear. 1000 is common practice for
  /// 90 % percentile intervals (no source).
  std::size_t resamples = 1000;
  /// Length of each moving block, in cases (time steps). 1 is the ordinary (iid) bootstrap; choose roughly the lag
  /// at which the errors' autocorrelation has died out. Must not exceed the number of cases.
  std::size_t block_length = 1;
  /// Nominal coverage of the central percentile interval, in (0, 1).
  double confidence = 0.9;
  /// Seed of the resampling; resample r draws from its own generator seeded from (seed, r).
  std::uint64_t seed = 0;

  /// @throws libseq::ConfigError listing every broken rule (key, value, expectation): resamples ≥ 2,
  /// block_length ≥ 1, confidence in (0, 1).
  void validate() const;
};

/// A percentile bootstrap interval.
struct ConfidenceInterval {
  double estimate = std::numeric_limits<double>::quiet_NaN();    ///< The statistic on the original cases.
  double lower = std::numeric_limits<double>::quiet_NaN();       ///< Percentile (1 − confidence)/2 of the replicates.
  double upper = std::numeric_limits<double>::quiet_NaN();       ///< Percentile (1 + confidence)/2 of the replicates.
  double confidence = std::numeric_limits<double>::quiet_NaN();  ///< As requested.
  std::size_t block_length = 0;                                  ///< As requested.
  std::size_t resamples_used = 0;    ///< Replicates with a finite statistic (the ones the percentiles come from).
  std::size_t resamples_failed = 0;  ///< Replicates whose statistic was NaN (e.g. a resample of constant values).
};

/// Indices 0..case_count-1 of one moving-block resample: blocks of `block_length` consecutive indices, each
/// starting at a position drawn uniformly from 0..case_count−block_length, concatenated and cut to case_count.
/// `stream` selects an independent sequence for the same seed (resample number).
/// @throws libseq::ConfigError when block_length is 0 or exceeds case_count.
std::vector<std::size_t> moving_block_indices(std::size_t case_count, std::size_t block_length, std::uint64_t seed,
                                              std::uint64_t stream);

/// Percentile bootstrap interval of `statistic`, which receives the resampled case indices (each of size
/// case_count, with repeats) and returns the statistic on those cases (NaN when undefined). The estimate is the
/// statistic on 0..case_count−1. Percentiles interpolate linearly between order statistics (Hyndman & Fan 1996,
/// definition 7). When fewer than 2 replicates are finite, lower and upper are NaN.
/// @throws libseq::ConfigError from options.validate() or when block_length exceeds case_count (and case_count > 0).
ConfidenceInterval bootstrap_ci(std::size_t case_count,
                                const std::function<double(std::span<const std::size_t>)>& statistic,
                                const BootstrapOptions& options);

/// Sample quantile at probability p in [0, 1] of the values (copied and sorted), linear interpolation between order
/// statistics (Hyndman & Fan 1996, definition 7, the default of R `quantile` and numpy `quantile`). NaN when empty.
/// @throws libseq::DataError when p is outside [0, 1] or a value is NaN.
double sample_quantile(std::span<const double> values, double p);

}  // namespace libseq::metrics
