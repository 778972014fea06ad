#pragma once
/// @file resample.hpp
/// Bootstrap resampling of training windows for the members of an ensemble: moving-block bootstrap (Künsch 1989),
/// stationary bootstrap (Politis & Romano 1994) and resampling of whole sites. Every draw is a pure function of the
/// seed (own generator and integer/real mappings, no implementation-defined std:: distributions), so a member's
/// resample is the same on every platform, compiler and thread count.

#include <cstddef>
#include <cstdint>
#include <span>
#include <string>
#include <string_view>
#include <vector>

namespace libseq::uncertainty {

/// How the training windows of one ensemble member are drawn.
enum class ResampleScheme {
  none,          ///< Every window once (members differ only by their initial weights and dropout).
  moving_block,  ///< Künsch (1989) moving-block bootstrap within each site, blocks of fixed length.
  stationary,    ///< Politis & Romano (1994) stationary bootstrap within each site, geometric block lengths, circular.
  sites,         ///< Whole sites drawn with replacement, each with all its windows.
};

/// "none", "moving_block", "stationary", "sites".
std::string to_string(ResampleScheme scheme);

/// Inverse of to_string. @throws libseq::ConfigError naming `key`, the text and the accepted names.
ResampleScheme parse_resample_scheme(std::string_view text, std::string_view key = "resample.scheme");

/// Options of resample_windows. Plain values; copy freely.
struct ResampleOptions {
  /// Which bootstrap to use.
  ResampleScheme scheme = ResampleScheme::moving_block;
  /// Block length b in windows (moving_block: every block; stationary: mean block length). 0 selects
  /// default_block_length() per site. Longer blocks keep more serial dependence inside a resample but make
  /// members more alike; ignored by `none` and `sites`.
  std::size_t block_length = 0;
  /// Lookback length L of the windows in time steps; used only by the default block-length rule. Must be >= 1.
  std::size_t lookback_steps = 1;
  /// Base seed of the ensemble. Member m uses member_seed(seed, m), so members are independent and reproducible.
  std::uint64_t seed = 0;

  /// @throws libseq::ConfigError listing every broken rule (key, value, expectation).
  void validate() const;
};

/// Windows of one resample.
struct Resample {
  /// Drawn window indices in draw order (length = number of windows drawn; for the block schemes this equals the
  /// input window count, for `sites` it is the total window count of the drawn sites).
  std::vector<std::size_t> indices;
  /// How often each input window was drawn (length = input window count); sums to indices.size().
  std::vector<std::uint32_t> multiplicity;
  /// Length of every block as drawn, before the last block is cut to fit (block schemes; empty otherwise).
  /// For the stationary bootstrap these are the geometric draws, kept so that callers and tests can inspect them.
  std::vector<std::size_t> block_lengths;
};

/// Default block length: max(lookback_steps, ceil(window_count^(1/3))), capped at window_count (at least 1).
/// Why: the mean-squared-error-optimal block length of block bootstrap estimates of variance and distribution grows
/// like n^(1/3) (Hall, Horowitz & Jing 1995, Biometrika 82, from memory); and windows one step apart share
/// lookback_steps - 1 inputs, so a block shorter than the lookback would split windows that overlap in their inputs
/// and understate the dependence the network sees in training.
std::size_t default_block_length(std::size_t window_count, std::size_t lookback_steps);

/// Seed of ensemble member `member` derived from the ensemble seed (SplitMix64 mixing; Steele, Lea & Flood 2014).
std::uint64_t member_seed(std::uint64_t ensemble_seed, std::size_t member);

/// Moving-block bootstrap (Künsch 1989) of `window_count` windows in time order: ceil(n/b) blocks of b consecutive
/// indices, each starting uniformly in [0, n-b], concatenated and cut to n. Returns indices 0..n-1 based.
/// @throws libseq::ConfigError when block_length is 0 or exceeds window_count (window_count 0 gives an empty result).
Resample moving_block_bootstrap(std::size_t window_count, std::size_t block_length, std::uint64_t seed);

/// Stationary bootstrap (Politis & Romano 1994): blocks start uniformly in [0, n-1], have geometric lengths
/// P(len = k) = p (1-p)^(k-1), k >= 1, with p = 1/mean_block_length, and wrap circularly (index n follows n-1 by 0).
/// Blocks are concatenated and cut to n.
/// @throws libseq::ConfigError when mean_block_length < 1 or is not finite.
Resample stationary_bootstrap(std::size_t window_count, double mean_block_length, std::uint64_t seed);

/// Resampling of whole sites: site_count sites drawn uniformly with replacement; each drawn site contributes all its
/// windows in their input order. `window_site[i]` is the site index of window i (values < site_count).
/// @throws libseq::DataError when a window names a site >= site_count.
Resample site_bootstrap(std::span<const std::size_t> window_site, std::size_t site_count, std::uint64_t seed);

/// The resample of ensemble member `member` over windows of several sites. `window_site[i]` is the site of window i;
/// windows of a site must be listed in time order (they need not be contiguous). Block schemes resample within
/// each site separately (blocks never cross sites; each site keeps its window count) using the seed
/// member_seed(options.seed, member) mixed with the site index; block_length is capped at the window count of
/// each site, and 0 selects default_block_length(site window count, lookback_steps). Indices refer to positions
/// in `window_site`.
/// @throws libseq::ConfigError from options.validate(); libseq::DataError as site_bootstrap.
Resample resample_windows(std::span<const std::size_t> window_site, std::size_t site_count,
                          const ResampleOptions& options, std::size_t member);

}  // namespace libseq::uncertainty
