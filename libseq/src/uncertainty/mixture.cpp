#include "libseq/uncertainty/mixture.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <exception>
#include <limits>
#include <numbers>

#include <boost/math/distributions/normal.hpp>

#include "libseq/error.hpp"

namespace libseq::uncertainty {

namespace {

constexpr double nan_value = std::numeric_limits<double>::quiet_NaN();

std::string number(double x) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.17g", x);
  return buffer;
}

// Standard normal CDF through erfc, accurate in both tails (1 - erf would lose the lower tail).
double standard_normal_cdf(double z) { return 0.5 * std::erfc(-z / std::sqrt(2.0)); }

double standard_normal_pdf(double z) { return std::exp(-0.5 * z * z) / std::sqrt(2.0 * std::numbers::pi); }

void check_probability(double p, const char* what) {
  if (!(p > 0.0 && p < 1.0)) {
    throw DataError(std::string(what) + ": level " + number(p) + " is not in the open interval (0, 1)");
  }
}

void check_gaussian_members(std::span<const double> means, std::span<const double> variances) {
  if (means.size() != variances.size()) {
    throw DataError("Gaussian mixture: " + std::to_string(means.size()) + " means but " +
                    std::to_string(variances.size()) + " variances; expected one variance per mean");
  }
  for (std::size_t m = 0; m < variances.size(); ++m) {
    if (variances[m] < 0.0) {
      throw DataError("Gaussian mixture: member " + std::to_string(m) + " has variance " + number(variances[m]) +
                      ", expected >= 0");
    }
  }
}

bool usable(double mean, double variance) { return std::isfinite(mean) && std::isfinite(variance); }

// One member's CDF as knots (x, F), both non-decreasing; equal x on consecutive knots is a jump. Between knots the
// CDF is linear, so the member's distribution is a mixture of uniforms (and point masses at jumps).
struct Knots {
  std::vector<double> x;
  std::vector<double> f;
};

Knots member_knots(std::span<const double> levels, std::span<const double> raw, QuantileTail tail) {
  std::vector<double> v(raw.begin(), raw.end());
  std::sort(v.begin(), v.end());  // repairs crossing quantiles (monotone rearrangement)
  const std::size_t k = v.size();
  Knots out;
  out.x.reserve(k + 2);
  out.f.reserve(k + 2);
  double lower_end = v.front();
  double upper_end = v.back();
  if (tail == QuantileTail::linear) {
    // Extend the first and last segments with their own slope until the CDF reaches 0 and 1.
    lower_end = v[0] - levels[0] * (v[1] - v[0]) / (levels[1] - levels[0]);
    upper_end = v[k - 1] + (1.0 - levels[k - 1]) * (v[k - 1] - v[k - 2]) / (levels[k - 1] - levels[k - 2]);
  }
  out.x.push_back(lower_end);
  out.f.push_back(0.0);
  for (std::size_t i = 0; i < k; ++i) {
    out.x.push_back(v[i]);
    out.f.push_back(levels[i]);
  }
  out.x.push_back(upper_end);
  out.f.push_back(1.0);
  return out;
}

// Right-continuous value F(x) (right = true) or left limit F(x-) (right = false) of one member.
double knot_cdf(const Knots& knots, double x, bool right) {
  const auto& xs = knots.x;
  const auto it = right ? std::upper_bound(xs.begin(), xs.end(), x) : std::lower_bound(xs.begin(), xs.end(), x);
  const auto k = static_cast<std::size_t>(it - xs.begin());
  if (k == 0) return 0.0;
  if (k == xs.size()) return 1.0;
  // right: xs[k-1] <= x < xs[k]; left: xs[k-1] < x <= xs[k]. Either way xs[k] > xs[k-1].
  const double t = (x - xs[k - 1]) / (xs[k] - xs[k - 1]);
  return knots.f[k - 1] + t * (knots.f[k] - knots.f[k - 1]);
}

void finish_summary(MixtureSummary& s) {
  s.variance = std::max(s.variance, 0.0);  // E[X^2] - E[X]^2 may round a hair below zero
  s.spread = std::sqrt(s.variance);
}

MixtureSummary empty_summary(const MixtureOptions& options, std::size_t members) {
  MixtureSummary s;
  s.mean = s.variance = s.spread = s.median = nan_value;
  s.quantiles.assign(options.levels.size(), nan_value);
  if (options.keep_member_values) s.member_values.assign(members, nan_value);
  return s;
}

}  // namespace

std::string to_string(MemberKind kind) {
  switch (kind) {
    case MemberKind::gaussian:
      return "gaussian";
    case MemberKind::quantiles:
      return "quantiles";
    case MemberKind::points:
      return "points";
  }
  return "unknown";
}

MemberKind parse_member_kind(std::string_view text, std::string_view key) {
  for (auto kind : {MemberKind::gaussian, MemberKind::quantiles, MemberKind::points}) {
    if (text == to_string(kind)) return kind;
  }
  throw ConfigError(std::string(key) + " = '" + std::string(text) + "': expected one of gaussian, quantiles, points");
}

std::string to_string(QuantileTail tail) {
  switch (tail) {
    case QuantileTail::linear:
      return "linear";
    case QuantileTail::point_mass:
      return "point_mass";
  }
  return "unknown";
}

QuantileTail parse_quantile_tail(std::string_view text, std::string_view key) {
  for (auto tail : {QuantileTail::linear, QuantileTail::point_mass}) {
    if (text == to_string(tail)) return tail;
  }
  throw ConfigError(std::string(key) + " = '" + std::string(text) + "': expected one of linear, point_mass");
}

void MixtureOptions::validate() const {
  std::string problems;
  for (std::size_t i = 0; i < levels.size(); ++i) {
    if (!(levels[i] > 0.0 && levels[i] < 1.0)) {
      problems += "\n  mixture.levels[" + std::to_string(i) + "] = " + number(levels[i]) +
                  ": expected a level in the open interval (0, 1)";
    }
  }
  if (!(relative_tolerance >= 1e-15 && relative_tolerance <= 1e-3)) {
    problems += "\n  mixture.relative_tolerance = " + number(relative_tolerance) + ": expected 1e-15..1e-3";
  }
  if (quantile_tail != QuantileTail::linear && quantile_tail != QuantileTail::point_mass) {
    problems += "\n  mixture.quantile_tail = " + std::to_string(static_cast<int>(quantile_tail)) +
                ": expected linear or point_mass";
  }
  if (!problems.empty()) throw ConfigError("invalid mixture options:" + problems);
}

double gaussian_mixture_cdf(double x, std::span<const double> means, std::span<const double> variances) {
  check_gaussian_members(means, variances);
  double sum = 0.0;
  std::size_t used = 0;
  for (std::size_t m = 0; m < means.size(); ++m) {
    if (!usable(means[m], variances[m])) continue;
    ++used;
    if (variances[m] == 0.0) {
      sum += x >= means[m] ? 1.0 : 0.0;
    } else {
      sum += standard_normal_cdf((x - means[m]) / std::sqrt(variances[m]));
    }
  }
  return used == 0 ? nan_value : sum / static_cast<double>(used);
}

double gaussian_mixture_quantile(double p, std::span<const double> means, std::span<const double> variances,
                                 double relative_tolerance) {
  check_probability(p, "Gaussian mixture quantile");
  check_gaussian_members(means, variances);
  const double z = boost::math::quantile(boost::math::normal_distribution<double>(0.0, 1.0), p);
  double lo = std::numeric_limits<double>::infinity();
  double hi = -lo;
  double first = 0.0, second = 0.0;
  std::size_t used = 0;
  for (std::size_t m = 0; m < means.size(); ++m) {
    if (!usable(means[m], variances[m])) continue;
    ++used;
    const double q = means[m] + std::sqrt(variances[m]) * z;
    lo = std::min(lo, q);
    hi = std::max(hi, q);
    first += means[m];
    second += variances[m] + means[m] * means[m];
  }
  if (used == 0) return nan_value;
  const double mean = first / static_cast<double>(used);
  const double sd = std::sqrt(std::max(second / static_cast<double>(used) - mean * mean, 0.0));

  auto cdf_and_pdf = [&](double x, double& pdf) {
    double f = 0.0;
    pdf = 0.0;
    for (std::size_t m = 0; m < means.size(); ++m) {
      if (!usable(means[m], variances[m])) continue;
      if (variances[m] == 0.0) {
        f += x >= means[m] ? 1.0 : 0.0;
      } else {
        const double s = std::sqrt(variances[m]);
        const double u = (x - means[m]) / s;
        f += standard_normal_cdf(u);
        pdf += standard_normal_pdf(u) / s;
      }
    }
    pdf /= static_cast<double>(used);
    return f / static_cast<double>(used);
  };

  double pdf = 0.0;
  // Below the smallest member quantile every member CDF is < p, so the answer is >= lo; if F(lo) >= p it is lo.
  if (cdf_and_pdf(lo, pdf) >= p || hi <= lo) return lo;
  // Invariant: F(lo) < p <= F(hi). Newton from the bracket midpoint, bisecting whenever a step leaves the bracket
  // or the density vanishes (point masses, far tails).
  double x = 0.5 * (lo + hi);
  for (int iteration = 0; iteration < 400; ++iteration) {
    const double f = cdf_and_pdf(x, pdf) - p;
    if (f < 0.0) {
      lo = x;
    } else {
      hi = x;
    }
    const double scale = std::max(std::abs(x), sd);
    const double tolerance = relative_tolerance * (scale > 0.0 ? scale : 1.0);
    if (hi - lo <= tolerance) return hi;
    double next = pdf > 0.0 ? x - f / pdf : std::numeric_limits<double>::quiet_NaN();
    const bool newton = next > lo && next < hi;
    if (!newton) next = 0.5 * (lo + hi);
    if (newton && std::abs(next - x) <= tolerance && f != 0.0) {
      // A converged Newton step: confirm by bracketing one tolerance on the far side of the root.
      const double probe = f < 0.0 ? std::min(next + tolerance, hi) : std::max(next - tolerance, lo);
      double unused = 0.0;
      if ((cdf_and_pdf(probe, unused) >= p) == (f < 0.0)) return next;
    }
    if (f == 0.0) return x;
    x = next;
  }
  return 0.5 * (lo + hi);
}

double empirical_quantile(std::span<const double> sorted_values, double p) {
  if (!(p >= 0.0 && p <= 1.0)) {
    throw DataError("empirical quantile: level " + number(p) + " is not in [0, 1]");
  }
  if (sorted_values.empty()) return nan_value;
  // Hyndman & Fan (1996), Sect. 2, definition 7: p(k) = (k - 1)/(n - 1), linear between order statistics.
  const double h = static_cast<double>(sorted_values.size() - 1) * p;
  const auto below = static_cast<std::size_t>(std::floor(h));
  if (below + 1 >= sorted_values.size()) return sorted_values.back();
  const double t = h - static_cast<double>(below);
  return sorted_values[below] + t * (sorted_values[below + 1] - sorted_values[below]);
}

MixtureSummary mix_gaussian(std::span<const double> means, std::span<const double> variances,
                            const MixtureOptions& options) {
  options.validate();
  check_gaussian_members(means, variances);
  MixtureSummary s = empty_summary(options, means.size());
  double first = 0.0, second = 0.0;
  for (std::size_t m = 0; m < means.size(); ++m) {
    if (!usable(means[m], variances[m])) continue;
    ++s.members_used;
    first += means[m];
    second += variances[m] + means[m] * means[m];
    if (options.keep_member_values) s.member_values[m] = means[m];
  }
  if (s.members_used == 0) return s;
  const auto n = static_cast<double>(s.members_used);
  s.mean = first / n;
  s.variance = second / n - s.mean * s.mean;  // law of total variance: E[var] + var[E]
  finish_summary(s);
  s.median = gaussian_mixture_quantile(0.5, means, variances, options.relative_tolerance);
  for (std::size_t i = 0; i < options.levels.size(); ++i) {
    s.quantiles[i] = gaussian_mixture_quantile(options.levels[i], means, variances, options.relative_tolerance);
  }
  return s;
}

MixtureSummary mix_quantile_sets(std::span<const double> levels, std::span<const double> values,
                                 const MixtureOptions& options) {
  options.validate();
  if (levels.size() < 2) {
    throw DataError("quantile-set mixture: " + std::to_string(levels.size()) +
                    " member levels given, expected at least 2");
  }
  for (std::size_t i = 0; i < levels.size(); ++i) {
    check_probability(levels[i], "quantile-set mixture member levels");
    if (i > 0 && !(levels[i] > levels[i - 1])) {
      throw DataError("quantile-set mixture: member levels must be strictly increasing; level " + std::to_string(i) +
                      " = " + number(levels[i]) + " follows " + number(levels[i - 1]));
    }
  }
  if (values.size() % levels.size() != 0) {
    throw DataError("quantile-set mixture: " + std::to_string(values.size()) + " values is not a multiple of the " +
                    std::to_string(levels.size()) + " levels");
  }
  const std::size_t k = levels.size();
  const std::size_t members = values.size() / k;
  MixtureSummary s = empty_summary(options, members);

  std::vector<Knots> knots;
  knots.reserve(members);
  double first = 0.0, second = 0.0;
  for (std::size_t m = 0; m < members; ++m) {
    const auto own = values.subspan(m * k, k);
    if (!std::all_of(own.begin(), own.end(), [](double v) { return std::isfinite(v); })) continue;
    knots.push_back(member_knots(levels, own, options.quantile_tail));
    // Moments of a mixture of uniforms: mass w on [a, b] adds w (a + b)/2 and w (a^2 + ab + b^2)/3.
    const Knots& kn = knots.back();
    double member_mean = 0.0, member_second = 0.0;
    for (std::size_t j = 1; j < kn.x.size(); ++j) {
      const double w = kn.f[j] - kn.f[j - 1];
      const double a = kn.x[j - 1], b = kn.x[j];
      member_mean += w * 0.5 * (a + b);
      member_second += w * (a * a + a * b + b * b) / 3.0;
    }
    first += member_mean;
    second += member_second;
    if (options.keep_member_values) s.member_values[m] = member_mean;
  }
  s.members_used = knots.size();
  if (knots.empty()) return s;
  const auto n = static_cast<double>(knots.size());
  s.mean = first / n;
  s.variance = second / n - s.mean * s.mean;
  finish_summary(s);

  // The average of piecewise-linear CDFs is piecewise linear between the union of all knots: evaluate it (right
  // value and left limit) at each union knot and invert segment by segment, exactly.
  std::vector<double> grid;
  for (const auto& kn : knots) grid.insert(grid.end(), kn.x.begin(), kn.x.end());
  std::sort(grid.begin(), grid.end());
  grid.erase(std::unique(grid.begin(), grid.end()), grid.end());
  std::vector<double> right(grid.size()), left(grid.size());
  for (std::size_t j = 0; j < grid.size(); ++j) {
    double r = 0.0, l = 0.0;
    for (const auto& kn : knots) {
      r += knot_cdf(kn, grid[j], true);
      l += knot_cdf(kn, grid[j], false);
    }
    right[j] = r / n;
    left[j] = l / n;
  }
  auto invert = [&](double p) {
    const auto j = static_cast<std::size_t>(std::lower_bound(right.begin(), right.end(), p) - right.begin());
    if (j >= grid.size()) return grid.back();  // p above the top after rounding
    if (j > 0 && left[j] >= p && left[j] > right[j - 1]) {
      const double t = (p - right[j - 1]) / (left[j] - right[j - 1]);
      return grid[j - 1] + t * (grid[j] - grid[j - 1]);
    }
    return grid[j];  // p falls inside the jump at grid[j]
  };
  s.median = invert(0.5);
  for (std::size_t i = 0; i < options.levels.size(); ++i) s.quantiles[i] = invert(options.levels[i]);
  return s;
}

MixtureSummary mix_points(std::span<const double> values, const MixtureOptions& options) {
  options.validate();
  MixtureSummary s = empty_summary(options, values.size());
  std::vector<double> sorted;
  sorted.reserve(values.size());
  for (std::size_t m = 0; m < values.size(); ++m) {
    if (!std::isfinite(values[m])) continue;
    sorted.push_back(values[m]);
    if (options.keep_member_values) s.member_values[m] = values[m];
  }
  s.members_used = sorted.size();
  if (sorted.empty()) return s;
  std::sort(sorted.begin(), sorted.end());
  const auto n = static_cast<double>(sorted.size());
  double sum = 0.0;
  for (double v : sorted) sum += v;
  s.mean = sum / n;
  double squares = 0.0;  // two-pass: no cancellation for values far from zero
  for (double v : sorted) squares += (v - s.mean) * (v - s.mean);
  s.variance = squares / n;
  finish_summary(s);
  s.median = empirical_quantile(sorted, 0.5);
  for (std::size_t i = 0; i < options.levels.size(); ++i)
    s.quantiles[i] = empirical_quantile(sorted, options.levels[i]);
  return s;
}

void MemberForecasts::validate() const {
  const std::size_t cells = case_count * member_count;
  auto expect = [&](const std::vector<double>& field, const char* name, std::size_t size) {
    if (field.size() != size) {
      throw DataError(std::string("member forecasts (") + to_string(kind) + "): field '" + name + "' has " +
                      std::to_string(field.size()) + " values, expected " + std::to_string(size));
    }
  };
  switch (kind) {
    case MemberKind::gaussian:
      expect(means, "means", cells);
      expect(variances, "variances", cells);
      for (std::size_t i = 0; i < variances.size(); ++i) {
        if (variances[i] < 0.0) {
          throw DataError("member forecasts (gaussian): variance of case " + std::to_string(i / member_count) +
                          ", member " + std::to_string(i % member_count) + " is " + number(variances[i]) +
                          ", expected >= 0");
        }
      }
      break;
    case MemberKind::quantiles:
      if (levels.size() < 2) {
        throw DataError("member forecasts (quantiles): field 'levels' has " + std::to_string(levels.size()) +
                        " values, expected at least 2");
      }
      for (std::size_t i = 0; i < levels.size(); ++i) {
        if (!(levels[i] > 0.0 && levels[i] < 1.0) || (i > 0 && !(levels[i] > levels[i - 1]))) {
          throw DataError("member forecasts (quantiles): levels[" + std::to_string(i) + "] = " + number(levels[i]) +
                          ", expected strictly increasing levels in (0, 1)");
        }
      }
      expect(values, "values", cells * levels.size());
      break;
    case MemberKind::points:
      expect(values, "values", cells);
      break;
  }
}

MixtureTable mix(const MemberForecasts& forecasts, const MixtureOptions& options) {
  options.validate();
  forecasts.validate();
  const std::size_t cases = forecasts.case_count;
  const std::size_t members = forecasts.member_count;
  const std::size_t levels = options.levels.size();
  MixtureTable table;
  table.case_count = cases;
  table.levels = options.levels;
  table.mean.assign(cases, nan_value);
  table.variance.assign(cases, nan_value);
  table.spread.assign(cases, nan_value);
  table.median.assign(cases, nan_value);
  table.quantiles.assign(cases * levels, nan_value);
  if (options.keep_member_values) table.member_values.assign(cases * members, nan_value);
  table.members_used.assign(cases, 0);

  std::exception_ptr failure;
  const auto signed_cases = static_cast<std::ptrdiff_t>(cases);
  // Each case writes only its own slots, so the result does not depend on the schedule or thread count.
#pragma omp parallel for schedule(dynamic, 64)
  for (std::ptrdiff_t c = 0; c < signed_cases; ++c) {
    try {
      const auto i = static_cast<std::size_t>(c);
      MixtureSummary s;
      const std::span<const double> means(forecasts.means);
      const std::span<const double> variances(forecasts.variances);
      const std::span<const double> values(forecasts.values);
      switch (forecasts.kind) {
        case MemberKind::gaussian:
          s = mix_gaussian(means.subspan(i * members, members), variances.subspan(i * members, members), options);
          break;
        case MemberKind::quantiles: {
          const std::size_t k = forecasts.levels.size();
          s = mix_quantile_sets(forecasts.levels, values.subspan(i * members * k, members * k), options);
          break;
        }
        case MemberKind::points:
          s = mix_points(values.subspan(i * members, members), options);
          break;
      }
      table.mean[i] = s.mean;
      table.variance[i] = s.variance;
      table.spread[i] = s.spread;
      table.median[i] = s.median;
      table.members_used[i] = s.members_used;
      std::copy(s.quantiles.begin(), s.quantiles.end(),
                table.quantiles.begin() + static_cast<std::ptrdiff_t>(i * levels));
      if (options.keep_member_values) {
        std::copy(s.member_values.begin(), s.member_values.end(),
                  table.member_values.begin() + static_cast<std::ptrdiff_t>(i * members));
      }
    } catch (...) {
#pragma omp critical(libseq_uncertainty_mix_failure)
      if (!failure) failure = std::current_exception();
    }
  }
  if (failure) std::rethrow_exception(failure);
  return table;
}

}  // namespace libseq::uncertainty
