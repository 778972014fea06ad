#pragma once
// Private helpers shared by the baselines: range checks and the empirical quantile.

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "libseq/baselines/forecaster.hpp"
#include "libseq/error.hpp"

namespace libseq::baselines::detail {

inline std::string range_text(IndexRange r) {
  return "[" + std::to_string(r.begin) + ", " + std::to_string(r.end) + ")";
}

/// Throws DataError unless `range` is non-empty and inside a series of `length` steps.
inline void require_range(std::string_view method, std::string_view what, IndexRange range, std::size_t length) {
  if (range.empty() || range.end > length) {
    throw DataError(std::string(method) + ": " + std::string(what) + " " + range_text(range) +
                    " must be a non-empty range inside the series of " + std::to_string(length) + " steps");
  }
}

/// Throws DataError when an issue index lies outside [first, length).
inline void require_issues(std::string_view method, std::span<const std::size_t> issues, std::size_t first,
                           std::size_t length) {
  for (std::size_t t : issues) {
    if (t < first || t >= length) {
      throw DataError(std::string(method) + ": issue index " + std::to_string(t) + " must lie in [" +
                      std::to_string(first) + ", " + std::to_string(length) + ") of the series");
    }
  }
}

inline PointForecasts make_points(std::span<const std::size_t> issues, std::size_t horizon) {
  PointForecasts out;
  out.issues.assign(issues.begin(), issues.end());
  out.horizon = horizon;
  out.values.assign(issues.size() * horizon, std::nan(""));
  return out;
}

/// Quantile of ascending `sorted` values, definition 7 of Hyndman & Fan (1996): h = (n − 1)p, linear
/// interpolation between the order statistics floor(h) and floor(h) + 1 (0-based). NaN for no values.
inline double sorted_quantile(const std::vector<double>& sorted, double p) {
  if (sorted.empty()) return std::nan("");
  const double h = static_cast<double>(sorted.size() - 1) * p;
  const auto lo = static_cast<std::size_t>(std::floor(h));
  const std::size_t hi = std::min(lo + 1, sorted.size() - 1);
  return sorted[lo] + (h - static_cast<double>(lo)) * (sorted[hi] - sorted[lo]);
}

inline void require_probability(std::string_view what, double p, bool open) {
  const bool ok = open ? (p > 0.0 && p < 1.0) : (p >= 0.0 && p <= 1.0);
  if (!ok || std::isnan(p)) {
    throw ConfigError(std::string(what) + ": probability " + std::to_string(p) + " must lie in " +
                      (open ? "(0, 1)" : "[0, 1]"));
  }
}

}  // namespace libseq::baselines::detail
