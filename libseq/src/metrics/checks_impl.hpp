#pragma once
// Shared argument checks and small numerical helpers of the metrics module (private).

#include <cmath>
#include <cstddef>
#include <cstdint>
#include <limits>
#include <span>
#include <string>
#include <string_view>

#include "libseq/error.hpp"

namespace libseq::metrics::detail {

inline constexpr double nan = std::numeric_limits<double>::quiet_NaN();

inline void require_same_length(std::string_view function, std::string_view name_a, std::size_t a,
                                std::string_view name_b, std::size_t b) {
  if (a != b) {
    throw DataError(std::string(function) + ": '" + std::string(name_a) + "' has " + std::to_string(a) +
                    " values but '" + std::string(name_b) + "' has " + std::to_string(b) + "; expected equal lengths");
  }
}

/// Levels strictly increasing in (0, 1), at least one.
void require_valid_levels(std::string_view function, std::span<const double> levels);

/// SplitMix64 (Steele, Lea & Flood 2014): a full-period mixer used to derive independent seeds and per-case
/// uniforms from (seed, index) so that results do not depend on evaluation order.
inline std::uint64_t splitmix64(std::uint64_t x) {
  x += 0x9E3779B97F4A7C15ULL;
  x = (x ^ (x >> 30)) * 0xBF58476D1CE4E5B9ULL;
  x = (x ^ (x >> 27)) * 0x94D049BB133111EBULL;
  return x ^ (x >> 31);
}

/// Uniform in the open interval (0, 1) from 64 random bits (53-bit mantissa, shifted off 0).
inline double open_unit(std::uint64_t bits) { return (static_cast<double>(bits >> 11) + 0.5) * 0x1.0p-53; }

}  // namespace libseq::metrics::detail
