#include "libseq/metrics/probabilistic.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <numbers>
#include <string>

#include "libseq/error.hpp"
#include "libseq/metrics/distributions.hpp"
#include "metrics/checks_impl.hpp"

namespace libseq::metrics {

namespace {

using detail::nan;

std::string number(double x) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.17g", x);
  return buffer;
}

void require_finite(const char* function, const char* name, double x) {
  if (!std::isfinite(x)) {
    throw DataError(std::string(function) + ": '" + name + "' is " + number(x) + "; expected a finite number");
  }
}

void require_ensemble_layout(const char* function, std::size_t cases, std::size_t members, std::size_t member_count) {
  if (member_count == 0) throw DataError(std::string(function) + ": 'member_count' is 0; expected at least 1 member");
  if (members != cases * member_count) {
    throw DataError(std::string(function) + ": 'members' has " + std::to_string(members) + " values; expected " +
                    std::to_string(cases) + " cases x " + std::to_string(member_count) +
                    " members = " + std::to_string(cases * member_count));
  }
}

void require_quantile_layout(const char* function, std::size_t cases, std::span<const double> levels,
                             std::size_t quantiles) {
  detail::require_valid_levels(function, levels);
  if (quantiles != cases * levels.size()) {
    throw DataError(std::string(function) + ": 'quantiles' has " + std::to_string(quantiles) + " values; expected " +
                    std::to_string(cases) + " cases x " + std::to_string(levels.size()) +
                    " levels = " + std::to_string(cases * levels.size()));
  }
}

bool all_finite(std::span<const double> values) {
  return std::all_of(values.begin(), values.end(), [](double v) { return std::isfinite(v); });
}

// Sorted finite members of one case.
std::vector<double> sorted_finite(std::span<const double> members) {
  std::vector<double> finite;
  finite.reserve(members.size());
  for (double v : members) {
    if (std::isfinite(v)) finite.push_back(v);
  }
  std::sort(finite.begin(), finite.end());
  return finite;
}

// CRPS of sorted members: E|X − y| − ½E|X − X′|. For sorted x_(1) ≤ ... ≤ x_(m), Σ_{i,j}|x_i − x_j| =
// 2·Σ_i (2i − m − 1)·x_(i) (each x_(i) is the larger of i − 1 pairs and the smaller of m − i), so the pair term
// costs O(m) after the sort. The plain form divides the pair sum by m² (empirical distribution, Gneiting & Raftery
// 2007, kernel representation of the CRPS), the fair form by m(m − 1) (Ferro 2014): it averages over distinct pairs
// only, which removes the ensemble-size dependence of the expected score.
double crps_sorted(const std::vector<double>& x, double y, EnsembleCrps kind) {
  const std::size_t m = x.size();
  if (m == 0 || (kind == EnsembleCrps::fair && m < 2)) return nan;
  double absolute = 0.0, weighted = 0.0;
  for (std::size_t i = 0; i < m; ++i) {
    absolute += std::abs(x[i] - y);
    weighted += (2.0 * static_cast<double>(i + 1) - static_cast<double>(m) - 1.0) * x[i];
  }
  const double md = static_cast<double>(m);
  const double pair_term = kind == EnsembleCrps::plain ? weighted / (md * md) : weighted / (md * (md - 1.0));
  return absolute / md - pair_term;
}

}  // namespace

namespace detail {
void require_valid_levels(std::string_view function, std::span<const double> levels) {
  if (levels.empty()) throw DataError(std::string(function) + ": 'levels' is empty; expected at least one level");
  for (std::size_t k = 0; k < levels.size(); ++k) {
    if (!(levels[k] > 0.0 && levels[k] < 1.0)) {
      throw DataError(std::string(function) + ": levels[" + std::to_string(k) + "] is " + number(levels[k]) +
                      "; expected a probability strictly between 0 and 1");
    }
    if (k > 0 && !(levels[k] > levels[k - 1])) {
      throw DataError(std::string(function) + ": levels[" + std::to_string(k) + "] = " + number(levels[k]) +
                      " is not greater than levels[" + std::to_string(k - 1) + "] = " + number(levels[k - 1]) +
                      "; expected strictly increasing levels");
    }
  }
}
}  // namespace detail

// --- CRPS --------------------------------------------------------------------------------------------------------

double crps_gaussian(double mean, double sd, double observed) {
  require_finite("crps_gaussian", "mean", mean);
  require_finite("crps_gaussian", "sd", sd);
  require_finite("crps_gaussian", "observed", observed);
  if (sd < 0.0) throw DataError("crps_gaussian: 'sd' is " + number(sd) + "; expected a value >= 0");
  if (sd == 0.0) return std::abs(observed - mean);  // the limit: CRPS of a point mass is the absolute error
  // Gneiting et al. (2005), eq. 5: CRPS(N(μ, σ²), y) = σ[z(2Φ(z) − 1) + 2φ(z) − 1/√π], z = (y − μ)/σ.
  const double z = (observed - mean) / sd;
  return sd * (z * (2.0 * normal_cdf(z) - 1.0) + 2.0 * normal_pdf(z) - std::numbers::inv_sqrtpi);
}

MetricValue crps_gaussian(std::span<const double> observed, std::span<const double> means,
                          std::span<const double> sds) {
  detail::require_same_length("crps_gaussian", "observed", observed.size(), "means", means.size());
  detail::require_same_length("crps_gaussian", "observed", observed.size(), "sds", sds.size());
  MetricValue result;
  double sum = 0.0;
  for (std::size_t i = 0; i < observed.size(); ++i) {
    if (!std::isfinite(observed[i])) {
      ++result.counts.missing_observation;
    } else if (!std::isfinite(means[i]) || !std::isfinite(sds[i]) || sds[i] < 0.0) {
      ++result.counts.missing_forecast;
    } else {
      sum += crps_gaussian(means[i], sds[i], observed[i]);
      ++result.counts.used;
    }
  }
  if (result.counts.used > 0) result.value = sum / static_cast<double>(result.counts.used);
  return result;
}

std::string to_string(EnsembleCrps kind) { return kind == EnsembleCrps::plain ? "plain" : "fair"; }

EnsembleCrps parse_ensemble_crps(std::string_view text, std::string_view key) {
  if (text == "plain") return EnsembleCrps::plain;
  if (text == "fair") return EnsembleCrps::fair;
  throw ConfigError("'" + std::string(key) + "' is '" + std::string(text) + "'; expected one of: plain, fair");
}

double crps_ensemble(std::span<const double> members, double observed, EnsembleCrps kind) {
  if (std::isnan(observed)) throw DataError("crps_ensemble: 'observed' is NaN; expected a number");
  return crps_sorted(sorted_finite(members), observed, kind);
}

MetricValue crps_ensemble(std::span<const double> observed, std::span<const double> members, std::size_t member_count,
                          EnsembleCrps kind) {
  require_ensemble_layout("crps_ensemble", observed.size(), members.size(), member_count);
  MetricValue result;
  double sum = 0.0;
  for (std::size_t i = 0; i < observed.size(); ++i) {
    if (!std::isfinite(observed[i])) {
      ++result.counts.missing_observation;
      continue;
    }
    const double score = crps_sorted(sorted_finite(members.subspan(i * member_count, member_count)), observed[i], kind);
    if (std::isnan(score)) {
      ++result.counts.missing_forecast;
    } else {
      sum += score;
      ++result.counts.used;
    }
  }
  if (result.counts.used > 0) result.value = sum / static_cast<double>(result.counts.used);
  return result;
}

double pinball_loss(double level, double quantile, double observed) {
  if (!(level > 0.0 && level < 1.0)) {
    throw DataError("pinball_loss: 'level' is " + number(level) + "; expected a probability strictly in (0, 1)");
  }
  if (std::isnan(quantile) || std::isnan(observed)) throw DataError("pinball_loss: an argument is NaN");
  // Koenker & Bassett (1978): the check function ρ_τ(u) = u(τ − 1{u < 0}) of the residual u = y − q.
  return observed >= quantile ? level * (observed - quantile) : (1.0 - level) * (quantile - observed);
}

double crps_quantiles(std::span<const double> levels, std::span<const double> quantiles, double observed) {
  detail::require_valid_levels("crps_quantiles", levels);
  detail::require_same_length("crps_quantiles", "levels", levels.size(), "quantiles", quantiles.size());
  // CRPS(F, y) = 2∫₀¹ ρ_τ(y − F⁻¹(τ)) dτ (Laio & Tamea 2007; Gneiting & Ranjan 2011); the rectangle rule with
  // weight 1/Q per level gives (2/Q)·Σ_k ρ_{τ_k}, exact in the limit for midpoint levels (k − ½)/Q.
  double sum = 0.0;
  for (std::size_t k = 0; k < levels.size(); ++k) sum += pinball_loss(levels[k], quantiles[k], observed);
  return 2.0 * sum / static_cast<double>(levels.size());
}

MetricValue crps_quantiles(std::span<const double> observed, std::span<const double> levels,
                           std::span<const double> quantiles) {
  require_quantile_layout("crps_quantiles", observed.size(), levels, quantiles.size());
  const std::size_t q = levels.size();
  MetricValue result;
  double sum = 0.0;
  for (std::size_t i = 0; i < observed.size(); ++i) {
    const auto row = quantiles.subspan(i * q, q);
    if (!std::isfinite(observed[i])) {
      ++result.counts.missing_observation;
    } else if (!all_finite(row)) {
      ++result.counts.missing_forecast;
    } else {
      sum += crps_quantiles(levels, row, observed[i]);
      ++result.counts.used;
    }
  }
  if (result.counts.used > 0) result.value = sum / static_cast<double>(result.counts.used);
  return result;
}

std::vector<MetricValue> pinball_by_level(std::span<const double> observed, std::span<const double> levels,
                                          std::span<const double> quantiles) {
  require_quantile_layout("pinball_by_level", observed.size(), levels, quantiles.size());
  const std::size_t q = levels.size();
  std::vector<MetricValue> result(q);
  std::vector<double> sums(q, 0.0);
  for (std::size_t i = 0; i < observed.size(); ++i) {
    for (std::size_t k = 0; k < q; ++k) {
      const double value = quantiles[i * q + k];
      if (!std::isfinite(observed[i])) {
        ++result[k].counts.missing_observation;
      } else if (!std::isfinite(value)) {
        ++result[k].counts.missing_forecast;
      } else {
        sums[k] += pinball_loss(levels[k], value, observed[i]);
        ++result[k].counts.used;
      }
    }
  }
  for (std::size_t k = 0; k < q; ++k) {
    if (result[k].counts.used > 0) result[k].value = sums[k] / static_cast<double>(result[k].counts.used);
  }
  return result;
}

// --- Intervals ---------------------------------------------------------------------------------------------------

double interval_score(double lower, double upper, double observed, double alpha) {
  if (!(alpha > 0.0 && alpha < 1.0)) {
    throw DataError("interval_score: 'alpha' is " + number(alpha) + "; expected a probability strictly in (0, 1)");
  }
  if (std::isnan(lower) || std::isnan(upper) || std::isnan(observed)) {
    throw DataError("interval_score: an argument is NaN");
  }
  if (lower > upper) {
    throw DataError("interval_score: 'lower' " + number(lower) + " exceeds 'upper' " + number(upper));
  }
  // Gneiting & Raftery (2007), eq. 43: width plus 2/α times the distance by which y falls outside.
  double score = upper - lower;
  if (observed < lower) score += 2.0 / alpha * (lower - observed);
  if (observed > upper) score += 2.0 / alpha * (observed - upper);
  return score;
}

MetricValue interval_score(std::span<const double> observed, std::span<const double> lower,
                           std::span<const double> upper, double alpha) {
  detail::require_same_length("interval_score", "observed", observed.size(), "lower", lower.size());
  detail::require_same_length("interval_score", "observed", observed.size(), "upper", upper.size());
  if (!(alpha > 0.0 && alpha < 1.0)) {
    throw DataError("interval_score: 'alpha' is " + number(alpha) + "; expected a probability strictly in (0, 1)");
  }
  MetricValue result;
  double sum = 0.0;
  for (std::size_t i = 0; i < observed.size(); ++i) {
    if (!std::isfinite(observed[i])) {
      ++result.counts.missing_observation;
    } else if (!std::isfinite(lower[i]) || !std::isfinite(upper[i]) || lower[i] > upper[i]) {
      ++result.counts.missing_forecast;
    } else {
      sum += interval_score(lower[i], upper[i], observed[i], alpha);
      ++result.counts.used;
    }
  }
  if (result.counts.used > 0) result.value = sum / static_cast<double>(result.counts.used);
  return result;
}

CoverageResult coverage(std::span<const double> observed, std::span<const double> lower,
                        std::span<const double> upper) {
  detail::require_same_length("coverage", "observed", observed.size(), "lower", lower.size());
  detail::require_same_length("coverage", "observed", observed.size(), "upper", upper.size());
  CoverageResult result;
  std::size_t inside = 0;
  double width = 0.0;
  for (std::size_t i = 0; i < observed.size(); ++i) {
    if (!std::isfinite(observed[i])) {
      ++result.counts.missing_observation;
    } else if (!std::isfinite(lower[i]) || !std::isfinite(upper[i]) || lower[i] > upper[i]) {
      ++result.counts.missing_forecast;
    } else {
      if (observed[i] >= lower[i] && observed[i] <= upper[i]) ++inside;
      width += upper[i] - lower[i];
      ++result.counts.used;
    }
  }
  if (result.counts.used > 0) {
    result.coverage = static_cast<double>(inside) / static_cast<double>(result.counts.used);
    result.mean_width = width / static_cast<double>(result.counts.used);
  }
  return result;
}

// --- PIT, histogram, reliability ---------------------------------------------------------------------------------

std::vector<double> pit_gaussian(std::span<const double> observed, std::span<const double> means,
                                 std::span<const double> sds) {
  detail::require_same_length("pit_gaussian", "observed", observed.size(), "means", means.size());
  detail::require_same_length("pit_gaussian", "observed", observed.size(), "sds", sds.size());
  std::vector<double> pit(observed.size(), nan);
  for (std::size_t i = 0; i < observed.size(); ++i) {
    if (std::isfinite(observed[i]) && std::isfinite(means[i]) && std::isfinite(sds[i]) && sds[i] > 0.0) {
      pit[i] = normal_cdf(observed[i], means[i], sds[i]);
    }
  }
  return pit;
}

std::vector<double> pit_ensemble(std::span<const double> observed, std::span<const double> members,
                                 std::size_t member_count, std::uint64_t seed) {
  require_ensemble_layout("pit_ensemble", observed.size(), members.size(), member_count);
  std::vector<double> pit(observed.size(), nan);
  const std::uint64_t seed_mix = detail::splitmix64(seed);
  for (std::size_t i = 0; i < observed.size(); ++i) {
    if (!std::isfinite(observed[i])) continue;
    std::size_t finite = 0, below = 0, equal = 0;
    for (double x : members.subspan(i * member_count, member_count)) {
      if (!std::isfinite(x)) continue;
      ++finite;
      if (x < observed[i]) ++below;
      if (x == observed[i]) ++equal;
    }
    if (finite == 0) continue;
    // Rank of y among the m + 1 values with ties broken at random (Hamill 2001), then spread uniformly within the
    // rank's bin of width 1/(m + 1): W ~ U(0, e + 1) covers both steps at once.
    const double u = detail::open_unit(detail::splitmix64(seed_mix ^ static_cast<std::uint64_t>(i)));
    pit[i] = (static_cast<double>(below) + u * static_cast<double>(equal + 1)) / static_cast<double>(finite + 1);
  }
  return pit;
}

std::vector<double> pit_quantiles(std::span<const double> observed, std::span<const double> levels,
                                  std::span<const double> quantiles) {
  require_quantile_layout("pit_quantiles", observed.size(), levels, quantiles.size());
  const std::size_t q = levels.size();
  std::vector<double> pit(observed.size(), nan);
  std::vector<double> row(q);
  for (std::size_t i = 0; i < observed.size(); ++i) {
    const auto raw = quantiles.subspan(i * q, q);
    if (!std::isfinite(observed[i]) || !all_finite(raw)) continue;
    // Monotone rearrangement: sorting crossed quantiles gives a valid quantile function at the same levels.
    std::copy(raw.begin(), raw.end(), row.begin());
    std::sort(row.begin(), row.end());
    const double y = observed[i];
    if (y < row.front()) {
      pit[i] = levels.front() / 2.0;
    } else if (y > row.back()) {
      pit[i] = (1.0 + levels.back()) / 2.0;
    } else {
      const auto lo = static_cast<std::size_t>(std::lower_bound(row.begin(), row.end(), y) - row.begin());
      const auto hi = static_cast<std::size_t>(std::upper_bound(row.begin(), row.end(), y) - row.begin());
      if (lo < hi) {
        double sum = 0.0;
        for (std::size_t k = lo; k < hi; ++k) sum += levels[k];
        pit[i] = sum / static_cast<double>(hi - lo);
      } else {
        // row[lo − 1] < y < row[lo]: linear interpolation of the level.
        const double t = (y - row[lo - 1]) / (row[lo] - row[lo - 1]);
        pit[i] = levels[lo - 1] + t * (levels[lo] - levels[lo - 1]);
      }
    }
  }
  return pit;
}

PitHistogram pit_histogram(std::span<const double> pit, std::size_t bins) {
  if (bins == 0) throw ConfigError("pit_histogram: 'bins' is 0; expected at least 1 bin");
  PitHistogram histogram;
  histogram.counts.assign(bins, 0);
  for (std::size_t i = 0; i < pit.size(); ++i) {
    const double u = pit[i];
    if (std::isnan(u)) {
      ++histogram.missing;
      continue;
    }
    if (!(u >= 0.0 && u <= 1.0)) {
      throw DataError("pit_histogram: value " + std::to_string(i) + " is " + number(u) + "; expected a PIT in [0, 1]");
    }
    const auto bin = std::min(bins - 1, static_cast<std::size_t>(u * static_cast<double>(bins)));
    ++histogram.counts[bin];
  }
  return histogram;
}

std::vector<ReliabilityRow> reliability_table(std::span<const double> observed, std::span<const double> levels,
                                              std::span<const double> quantiles) {
  require_quantile_layout("reliability_table", observed.size(), levels, quantiles.size());
  const std::size_t q = levels.size();
  std::vector<ReliabilityRow> table(q);
  std::vector<std::size_t> below(q, 0);
  for (std::size_t i = 0; i < observed.size(); ++i) {
    for (std::size_t k = 0; k < q; ++k) {
      const double value = quantiles[i * q + k];
      if (!std::isfinite(observed[i])) {
        ++table[k].counts.missing_observation;
      } else if (!std::isfinite(value)) {
        ++table[k].counts.missing_forecast;
      } else {
        if (observed[i] <= value) ++below[k];
        ++table[k].counts.used;
      }
    }
  }
  for (std::size_t k = 0; k < q; ++k) {
    table[k].nominal = levels[k];
    if (table[k].counts.used > 0) {
      table[k].observed = static_cast<double>(below[k]) / static_cast<double>(table[k].counts.used);
    }
  }
  return table;
}

}  // namespace libseq::metrics
