#pragma once
// Private: the seeded generator of the uncertainty module. Hand-written integer and real mappings, because the
// std:: distributions are implementation-defined and would make resamples differ between standard libraries.

#include <cmath>
#include <cstdint>
#include <limits>

namespace libseq::uncertainty::detail {

/// SplitMix64 (Steele, Lea & Flood 2014, "Fast splittable pseudorandom number generators", OOPSLA): a 64-bit state
/// advanced by a Weyl increment and mixed by two xor-shift-multiply rounds. Passes BigCrush per the paper; ample for
/// drawing block starts and lengths. Not thread-safe; each task owns its own.
class SplitMix64 {
 public:
  explicit SplitMix64(std::uint64_t seed) : state_(seed) {}

  std::uint64_t next() {
    std::uint64_t z = (state_ += 0x9E3779B97F4A7C15ULL);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
  }

  /// Uniform integer in [0, n), n >= 1, by rejection of the incomplete top range (no modulo bias).
  std::uint64_t below(std::uint64_t n) {
    const std::uint64_t max = std::numeric_limits<std::uint64_t>::max();
    const std::uint64_t limit = max - max % n;  // a multiple of n
    std::uint64_t x = next();
    while (x >= limit) x = next();
    return x % n;
  }

  /// Uniform real in [0, 1) with 53 random bits.
  double uniform() { return static_cast<double>(next() >> 11) * 0x1.0p-53; }

  /// Geometric on {1, 2, ...} with success probability p in (0, 1], by inversion: 1 + floor(log(1-u) / log(1-p)).
  std::uint64_t geometric(double p) {
    if (p >= 1.0) return 1;
    const double draws = std::floor(std::log1p(-uniform()) / std::log1p(-p));
    if (!(draws < 9.0e18)) return std::numeric_limits<std::uint64_t>::max();  // tiny p: longer than any series
    return 1 + static_cast<std::uint64_t>(draws);
  }

 private:
  std::uint64_t state_;
};

/// One SplitMix64 output of a value: used to derive independent seeds from (seed, index) pairs.
inline std::uint64_t mix_seed(std::uint64_t seed, std::uint64_t index) {
  SplitMix64 g(seed ^ (0xD1B54A32D192ED03ULL * (index + 1)));
  g.next();
  return g.next();
}

}  // namespace libseq::uncertainty::detail
