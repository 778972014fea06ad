#include "libseq/baselines/local_level.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>

#include "baselines/common_impl.hpp"
#include "libseq/error.hpp"

namespace libseq::baselines {

void LocalLevelOptions::validate() const {
  std::string problems;
  auto add = [&](const std::string& p) { problems += (problems.empty() ? "" : "; ") + p; };
  if (!(log_ratio_min < log_ratio_max)) {
    add("local_level.log_ratio_min = " + std::to_string(log_ratio_min) + " must be below local_level.log_ratio_max = " +
        std::to_string(log_ratio_max));
  }
  if (!(log_ratio_tolerance > 0.0)) {
    add("local_level.log_ratio_tolerance = " + std::to_string(log_ratio_tolerance) + ": expected > 0");
  }
  if (fixed_variances && !(fixed_variances->first > 0.0 && fixed_variances->second >= 0.0)) {
    add("local_level.fixed_variances = (" + std::to_string(fixed_variances->first) + ", " +
        std::to_string(fixed_variances->second) + "): expected σ²_ε > 0 and σ²_η >= 0");
  }
  if (!problems.empty()) throw ConfigError(problems);
}

LocalLevel::LocalLevel(LocalLevelOptions options) : options_(options) { options_.validate(); }

// Kalman filter of the local level model, D&K (2012) §2.2, eq. (2.15): v_t = y_t − a_t, F_t = P_t + σ²_ε,
// K_t = P_t/F_t, a_{t+1} = a_t + K_t v_t, P_{t+1} = P_t(1 − K_t) + σ²_η; a missing y_t gives a_{t+1} = a_t,
// P_{t+1} = P_t + σ²_η (§2.7). Exact diffuse start (§2.9): with P_1 → ∞ the first observation sets a_2 = y_1,
// P_2 = σ²_ε + σ²_η, and its term is left out of the diffuse log-likelihood (§2.10.1):
//   log L_d = −½ Σ_{t ≥ 2} (log 2π + log F_t + v_t² / F_t).
LocalLevelFilterResult LocalLevel::filter(std::span<const double> target, IndexRange range, double var_eps,
                                          double var_eta) {
  LocalLevelFilterResult r;
  const std::size_t n = range.size();
  const double inf = std::numeric_limits<double>::infinity();
  const double nan = std::nan("");
  r.predicted_level.assign(n, nan);
  r.predicted_variance.assign(n, inf);
  r.innovation.assign(n, nan);
  r.innovation_variance.assign(n, inf);
  bool diffuse = true;
  double a = 0.0, p = inf;
  for (std::size_t k = 0; k < n; ++k) {
    const double y = target[range.begin + k];
    if (!diffuse) {
      r.predicted_level[k] = a;
      r.predicted_variance[k] = p;
      r.innovation_variance[k] = p + var_eps;
    }
    if (std::isnan(y)) {
      if (!diffuse) p += var_eta;
      continue;
    }
    ++r.observed;
    if (diffuse) {
      a = y;
      p = var_eps + var_eta;
      diffuse = false;
      continue;
    }
    const double f = p + var_eps;
    const double v = y - a;
    const double gain = p / f;
    r.innovation[k] = v;
    r.log_likelihood -= 0.5 * (std::log(2.0 * std::numbers::pi) + std::log(f) + v * v / f);
    a += gain * v;
    p = p * (1.0 - gain) + var_eta;
  }
  return r;
}

namespace {

// Concentrated diffuse log-likelihood in ψ = log q, q = σ²_η/σ²_ε (D&K 2012 §2.10.2): running the filter with
// σ²_ε = 1, σ²_η = q gives F*_t; σ̂²_ε = Σ_{t≥2} v_t²/F*_t / (n − 1) and
//   log L_dc = −(n − 1)/2 · (log 2π + 1 + log σ̂²_ε) − ½ Σ_{t≥2} log F*_t
// (n observed values; the 2π term differs from D&K's n/2 by a constant, which does not move the maximum).
struct Concentrated {
  double log_likelihood;
  double var_eps;
};
Concentrated concentrated(std::span<const double> target, IndexRange range, double psi) {
  const auto r = LocalLevel::filter(target, range, 1.0, std::exp(psi));
  double sum_scaled = 0.0, sum_log_f = 0.0;
  std::size_t m = 0;
  for (std::size_t k = 0; k < r.innovation.size(); ++k) {
    if (std::isnan(r.innovation[k])) continue;
    sum_scaled += r.innovation[k] * r.innovation[k] / r.innovation_variance[k];
    sum_log_f += std::log(r.innovation_variance[k]);
    ++m;
  }
  const double var_eps = sum_scaled / static_cast<double>(m);
  const double md = static_cast<double>(m);
  return {-0.5 * md * (std::log(2.0 * std::numbers::pi) + 1.0 + std::log(var_eps)) - 0.5 * sum_log_f, var_eps};
}

}  // namespace

void LocalLevel::fit(const SeriesSet& series, IndexRange fit_range, IndexRange /*validation_range*/) {
  series.check(name());
  detail::require_range(name(), "fit range", fit_range, series.length());
  std::size_t observed = 0;
  for (std::size_t t = fit_range.begin; t < fit_range.end; ++t) observed += std::isnan(series.target[t]) ? 0 : 1;
  if (observed < 3) {
    throw DataError("local_level: fit range " + detail::range_text(fit_range) + " holds " + std::to_string(observed) +
                    " observed values, expected at least 3");
  }
  if (options_.fixed_variances) {
    var_eps_ = options_.fixed_variances->first;
    var_eta_ = options_.fixed_variances->second;
  } else {
    // Coarse scan of ψ (the likelihood can have more than one local maximum), then golden-section refinement of
    // the best bracket (Kiefer 1953), to the tolerance on ψ.
    auto f = [&](double psi) { return concentrated(series.target, fit_range, psi).log_likelihood; };
    const double lo = options_.log_ratio_min, hi = options_.log_ratio_max;
    constexpr int grid = 121;
    const double dx = (hi - lo) / (grid - 1);
    int best = 0;
    double best_value = -HUGE_VAL;
    for (int i = 0; i < grid; ++i) {
      const double v = f(lo + dx * i);
      if (v > best_value) {
        best_value = v;
        best = i;
      }
    }
    double a = lo + dx * std::max(best - 1, 0), b = lo + dx * std::min(best + 1, grid - 1);
    const double ratio = (std::sqrt(5.0) - 1.0) / 2.0;
    double c = b - ratio * (b - a), d = a + ratio * (b - a);
    double fc = f(c), fd = f(d);
    while (b - a > options_.log_ratio_tolerance) {
      if (fc > fd) {
        b = d;
        d = c;
        fd = fc;
        c = b - ratio * (b - a);
        fc = f(c);
      } else {
        a = c;
        c = d;
        fc = fd;
        d = a + ratio * (b - a);
        fd = f(d);
      }
    }
    const double psi = 0.5 * (a + b);
    const auto best_fit = concentrated(series.target, fit_range, psi);
    var_eps_ = best_fit.var_eps;
    var_eta_ = best_fit.var_eps * std::exp(psi);
  }
  log_likelihood_ = filter(series.target, fit_range, var_eps_, var_eta_).log_likelihood;
  fit_range_ = fit_range;
  fitted_ = true;
}

namespace {
// Filtered a_{t+1}, P_{t+1} after each issue t, by one pass of the recursions of LocalLevel::filter from the fit
// range start (NaN level and infinite variance while still diffuse).
void filtered_at(std::span<const double> target, std::size_t begin, std::span<const std::size_t> issues,
                 double var_eps, double var_eta, std::vector<double>& level, std::vector<double>& variance) {
  level.assign(issues.size(), std::nan(""));
  variance.assign(issues.size(), std::numeric_limits<double>::infinity());
  std::vector<std::size_t> order(issues.size());
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::sort(order.begin(), order.end(), [&](std::size_t x, std::size_t y) { return issues[x] < issues[y]; });
  bool diffuse = true;
  double a = 0.0, p = 0.0;
  std::size_t next = begin;
  for (std::size_t i : order) {
    for (; next <= issues[i]; ++next) {
      const double y = target[next];
      if (std::isnan(y)) {
        if (!diffuse) p += var_eta;
      } else if (diffuse) {
        a = y;
        p = var_eps + var_eta;
        diffuse = false;
      } else {
        const double gain = p / (p + var_eps);
        a += gain * (y - a);
        p = p * (1.0 - gain) + var_eta;
      }
    }
    if (!diffuse) {
      level[i] = a;
      variance[i] = p;
    }
  }
}
}  // namespace

PointForecasts LocalLevel::forecast(const SeriesSet& series, std::span<const std::size_t> issues,
                                    std::size_t horizon) const {
  if (!fitted_) throw DataError("local_level: forecast called before fit");
  detail::require_issues(name(), issues, fit_range_.begin, series.length());
  std::vector<double> level, variance;
  filtered_at(series.target, fit_range_.begin, issues, var_eps_, var_eta_, level, variance);
  auto out = detail::make_points(issues, horizon);
  for (std::size_t i = 0; i < issues.size(); ++i) {
    for (std::size_t h = 0; h < horizon; ++h) out.value(i, h) = level[i];  // D&K 2012 §2.8: ȳ_{n+h} = a_{n+1}
  }
  return out;
}

PointForecasts LocalLevel::forecast_variance(const SeriesSet& series, std::span<const std::size_t> issues,
                                             std::size_t horizon) const {
  if (!fitted_) throw DataError("local_level: forecast_variance called before fit");
  detail::require_issues(name(), issues, fit_range_.begin, series.length());
  std::vector<double> level, variance;
  filtered_at(series.target, fit_range_.begin, issues, var_eps_, var_eta_, level, variance);
  auto out = detail::make_points(issues, horizon);
  for (std::size_t i = 0; i < issues.size(); ++i) {
    for (std::size_t h = 0; h < horizon; ++h) {
      // D&K 2012 §2.8: F̄_{n+h} = P̄_{n+h} + σ²_ε with P̄_{n+h} = P_{n+1} + (h − 1)σ²_η.
      out.value(i, h) = variance[i] + static_cast<double>(h) * var_eta_ + var_eps_;  // h is lead − 1
    }
  }
  return out;
}

}  // namespace libseq::baselines
