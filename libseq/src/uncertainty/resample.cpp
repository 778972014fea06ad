#include "libseq/uncertainty/resample.hpp"

#include <algorithm>
#include <cmath>

#include "libseq/error.hpp"
#include "uncertainty/random_impl.hpp"

namespace libseq::uncertainty {

std::string to_string(ResampleScheme scheme) {
  switch (scheme) {
    case ResampleScheme::none:
      return "none";
    case ResampleScheme::moving_block:
      return "moving_block";
    case ResampleScheme::stationary:
      return "stationary";
    case ResampleScheme::sites:
      return "sites";
  }
  return "unknown";
}

ResampleScheme parse_resample_scheme(std::string_view text, std::string_view key) {
  for (auto scheme :
       {ResampleScheme::none, ResampleScheme::moving_block, ResampleScheme::stationary, ResampleScheme::sites}) {
    if (text == to_string(scheme)) return scheme;
  }
  throw ConfigError(std::string(key) + " = '" + std::string(text) +
                    "': expected one of none, moving_block, stationary, sites");
}

void ResampleOptions::validate() const {
  std::string problems;
  if (lookback_steps < 1) {
    problems += "\n  resample.lookback_steps = " + std::to_string(lookback_steps) + ": expected >= 1";
  }
  if (scheme != ResampleScheme::none && scheme != ResampleScheme::moving_block &&
      scheme != ResampleScheme::stationary && scheme != ResampleScheme::sites) {
    problems += "\n  resample.scheme = " + std::to_string(static_cast<int>(scheme)) + ": not a known scheme";
  }
  if (!problems.empty()) throw ConfigError("invalid resample options:" + problems);
}

std::size_t default_block_length(std::size_t window_count, std::size_t lookback_steps) {
  if (window_count == 0) return 1;
  auto cube_root = static_cast<std::size_t>(std::ceil(std::cbrt(static_cast<double>(window_count))));
  // cbrt of a perfect cube may land a hair above the integer; ceil would then overshoot by one.
  while (cube_root > 1 && (cube_root - 1) * (cube_root - 1) * (cube_root - 1) >= window_count) --cube_root;
  const std::size_t rule = std::max(std::max<std::size_t>(lookback_steps, 1), cube_root);
  return std::min(rule, window_count);
}

std::uint64_t member_seed(std::uint64_t ensemble_seed, std::size_t member) {
  return detail::mix_seed(ensemble_seed, member);
}

namespace {

Resample finish(std::size_t window_count, Resample out) {
  out.multiplicity.assign(window_count, 0);
  for (std::size_t i : out.indices) ++out.multiplicity[i];
  return out;
}

}  // namespace

Resample moving_block_bootstrap(std::size_t window_count, std::size_t block_length, std::uint64_t seed) {
  if (window_count == 0) return Resample{};
  if (block_length == 0 || block_length > window_count) {
    throw ConfigError("moving-block bootstrap: block_length = " + std::to_string(block_length) + ": expected 1.." +
                      std::to_string(window_count) + " (the window count)");
  }
  detail::SplitMix64 rng(seed);
  Resample out;
  out.indices.reserve(window_count);
  // Künsch (1989), Sect. 2: the n - b + 1 overlapping blocks are equally likely; ceil(n / b) of them are drawn.
  const std::uint64_t start_count = window_count - block_length + 1;
  while (out.indices.size() < window_count) {
    const auto start = static_cast<std::size_t>(rng.below(start_count));
    out.block_lengths.push_back(block_length);
    const std::size_t take = std::min(block_length, window_count - out.indices.size());
    for (std::size_t k = 0; k < take; ++k) out.indices.push_back(start + k);
  }
  return finish(window_count, std::move(out));
}

Resample stationary_bootstrap(std::size_t window_count, double mean_block_length, std::uint64_t seed) {
  if (!std::isfinite(mean_block_length) || mean_block_length < 1.0) {
    throw ConfigError("stationary bootstrap: mean block length = " + std::to_string(mean_block_length) +
                      ": expected a finite number >= 1");
  }
  if (window_count == 0) return Resample{};
  detail::SplitMix64 rng(seed);
  Resample out;
  out.indices.reserve(window_count);
  // Politis & Romano (1994), Sect. 2: X*_1 uniform; each next value continues the block (circularly) with
  // probability 1 - p or starts a new uniform block with probability p. Drawing whole geometric lengths is the
  // same process, and keeps the block lengths for inspection.
  const double p = 1.0 / mean_block_length;
  while (out.indices.size() < window_count) {
    const auto start = static_cast<std::size_t>(rng.below(window_count));
    const std::uint64_t length = rng.geometric(p);
    const std::size_t remaining = window_count - out.indices.size();
    const std::size_t take = length < remaining ? static_cast<std::size_t>(length) : remaining;
    out.block_lengths.push_back(static_cast<std::size_t>(length));
    for (std::size_t k = 0; k < take; ++k) out.indices.push_back((start + k) % window_count);
  }
  return finish(window_count, std::move(out));
}

Resample site_bootstrap(std::span<const std::size_t> window_site, std::size_t site_count, std::uint64_t seed) {
  std::vector<std::vector<std::size_t>> windows_of_site(site_count);
  for (std::size_t i = 0; i < window_site.size(); ++i) {
    if (window_site[i] >= site_count) {
      throw DataError("site bootstrap: window " + std::to_string(i) + " belongs to site " +
                      std::to_string(window_site[i]) + ", expected a site index below " + std::to_string(site_count));
    }
    windows_of_site[window_site[i]].push_back(i);
  }
  Resample out;
  if (site_count == 0) return finish(window_site.size(), std::move(out));
  detail::SplitMix64 rng(seed);
  for (std::size_t draw = 0; draw < site_count; ++draw) {
    const auto site = static_cast<std::size_t>(rng.below(site_count));
    out.indices.insert(out.indices.end(), windows_of_site[site].begin(), windows_of_site[site].end());
  }
  return finish(window_site.size(), std::move(out));
}

Resample resample_windows(std::span<const std::size_t> window_site, std::size_t site_count,
                          const ResampleOptions& options, std::size_t member) {
  options.validate();
  const std::uint64_t seed = member_seed(options.seed, member);
  if (options.scheme == ResampleScheme::sites) return site_bootstrap(window_site, site_count, seed);

  std::vector<std::vector<std::size_t>> windows_of_site(site_count);
  for (std::size_t i = 0; i < window_site.size(); ++i) {
    if (window_site[i] >= site_count) {
      throw DataError("resample: window " + std::to_string(i) + " belongs to site " + std::to_string(window_site[i]) +
                      ", expected a site index below " + std::to_string(site_count));
    }
    windows_of_site[window_site[i]].push_back(i);
  }
  Resample out;
  out.indices.reserve(window_site.size());
  for (std::size_t site = 0; site < site_count; ++site) {
    const auto& own = windows_of_site[site];
    const std::size_t n = own.size();
    if (n == 0) continue;
    if (options.scheme == ResampleScheme::none) {
      out.indices.insert(out.indices.end(), own.begin(), own.end());
      continue;
    }
    const std::size_t b =
        options.block_length == 0 ? default_block_length(n, options.lookback_steps) : std::min(options.block_length, n);
    const std::uint64_t site_seed = detail::mix_seed(seed, site);
    Resample local = options.scheme == ResampleScheme::moving_block
                         ? moving_block_bootstrap(n, b, site_seed)
                         : stationary_bootstrap(n, static_cast<double>(b), site_seed);
    for (std::size_t k : local.indices) out.indices.push_back(own[k]);
    out.block_lengths.insert(out.block_lengths.end(), local.block_lengths.begin(), local.block_lengths.end());
  }
  return finish(window_site.size(), std::move(out));
}

}  // namespace libseq::uncertainty
