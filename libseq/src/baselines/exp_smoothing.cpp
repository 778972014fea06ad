#include "libseq/baselines/exp_smoothing.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <random>
#include <utility>

#include "baselines/common_impl.hpp"
#include "baselines/nelder_mead_impl.hpp"
#include "libseq/error.hpp"

namespace libseq::baselines {

namespace {
constexpr std::array<std::pair<SmoothingModel, const char*>, 4> model_names{{
    {SmoothingModel::simple, "simple"},
    {SmoothingModel::holt, "holt"},
    {SmoothingModel::holt_winters, "holt_winters"},
    {SmoothingModel::double_seasonal, "double_seasonal"},
}};

bool has_trend(SmoothingModel m) { return m != SmoothingModel::simple; }
std::size_t season_count(SmoothingModel m) {
  return m == SmoothingModel::holt_winters ? 1 : m == SmoothingModel::double_seasonal ? 2 : 0;
}

// Running state of the additive recursions. Seasonal buffers are indexed by r mod m, where r counts steps from the
// fit range start: slot r mod m holds the seasonal term used at step r, and after the update the one of r + m.
struct State {
  double level = 0.0;
  double trend = 0.0;
  std::vector<double> s1, s2;
  std::size_t r = 0;  // steps processed

  // ŷ of step r + h − 1 given the state after r steps (h >= 1).
  double forecast(std::size_t h) const {
    double y = level + static_cast<double>(h) * trend;
    if (!s1.empty()) y += s1[(r + h - 1) % s1.size()];
    if (!s2.empty()) y += s2[(r + h - 1) % s2.size()];
    return y;
  }

  // One step of the error-correction form (Hyndman, Koehler, Ord & Snyder 2008, Forecasting with Exponential
  // Smoothing, Springer, Table 2.3, additive-error models), written with statsmodels' parameters: with
  // e = y − ŷ, level ℓ ← ℓ + b + α e; trend b ← b + αβ e (β smooths the level change, Holt 1957); seasons
  // s ← s + γ e and s' ← s' + ω e (Winters 1960; two seasons as Taylor 2003, JORS 54:799, eqs. 1–4, whose
  // δ, ω relate by γ = δ(1 − α), ω = ω_Taylor (1 − α)). Returns the one-step forecast used.
  double step(double y, const SmoothingParameters& p, bool trended) {
    const double yhat = forecast(1);
    const double e = std::isnan(y) ? 0.0 : y - yhat;  // missing: states follow their forecast path
    const double old_trend = trend;
    level = level + old_trend + p.level * e;
    if (trended) trend = old_trend + p.level * p.trend * e;
    if (!s1.empty()) s1[r % s1.size()] += p.seasonal * e;
    if (!s2.empty()) s2[r % s2.size()] += p.second_seasonal * e;
    ++r;
    return yhat;
  }
};

State start_state(const SmoothingState& init) {
  State s;
  s.level = init.level;
  s.trend = init.trend;
  s.s1 = init.seasonal;
  s.s2 = init.second_seasonal;
  return s;
}

double nan_mean(std::span<const double> v) {
  double sum = 0.0;
  std::size_t n = 0;
  for (double x : v) {
    if (!std::isnan(x)) {
      sum += x;
      ++n;
    }
  }
  return n ? sum / static_cast<double>(n) : std::nan("");
}

}  // namespace

std::string to_string(SmoothingModel model) {
  for (const auto& [m, n] : model_names) {
    if (m == model) return n;
  }
  return "unknown";
}

SmoothingModel parse_smoothing_model(std::string_view text) {
  std::string accepted;
  for (const auto& [m, n] : model_names) {
    if (text == n) return m;
    accepted += accepted.empty() ? n : std::string(", ") + n;
  }
  throw ConfigError("exp_smoothing.model = \"" + std::string(text) + "\": expected one of " + accepted);
}

void ExpSmoothingOptions::validate() const {
  std::string problems;
  auto add = [&](const std::string& p) { problems += (problems.empty() ? "" : "; ") + p; };
  const std::size_t seasons = season_count(model);
  if (seasons >= 1 && period_steps < 2) {
    add("exp_smoothing.period_steps = " + std::to_string(period_steps) + ": expected >= 2 for model " +
        to_string(model));
  }
  if (seasons == 2 && second_period_steps <= period_steps) {
    add("exp_smoothing.second_period_steps = " + std::to_string(second_period_steps) +
        ": expected more than period_steps = " + std::to_string(period_steps) + " for double_seasonal");
  }
  if (starts == 0) add("exp_smoothing.starts = 0: expected at least 1 optimiser start");
  if (max_evaluations < 10) add("exp_smoothing.max_evaluations = " + std::to_string(max_evaluations) + ": expected >= 10");
  if (fixed_parameters) {
    const auto& p = *fixed_parameters;
    for (auto [key, v] : std::array<std::pair<const char*, double>, 4>{
             {{"level", p.level}, {"trend", p.trend}, {"seasonal", p.seasonal}, {"second_seasonal", p.second_seasonal}}}) {
      if (!(v >= 0.0 && v <= 1.0)) {
        add(std::string("exp_smoothing.fixed_parameters.") + key + " = " + std::to_string(v) + ": expected in [0, 1]");
      }
    }
  }
  if (initial_state) {
    const std::size_t want1 = seasons >= 1 ? period_steps : 0;
    const std::size_t want2 = seasons == 2 ? second_period_steps : 0;
    if (initial_state->seasonal.size() != want1) {
      add("exp_smoothing.initial_state.seasonal has " + std::to_string(initial_state->seasonal.size()) +
          " values: expected " + std::to_string(want1));
    }
    if (initial_state->second_seasonal.size() != want2) {
      add("exp_smoothing.initial_state.second_seasonal has " + std::to_string(initial_state->second_seasonal.size()) +
          " values: expected " + std::to_string(want2));
    }
  }
  if (!problems.empty()) throw ConfigError(problems);
}

ExpSmoothing::ExpSmoothing(ExpSmoothingOptions options) : options_(std::move(options)) { options_.validate(); }

namespace {

// Default initial states from the first values of the fit range (a simple fixed rule, documented in
// docs/methods-baselines.md; cf. the heuristic starts in Hyndman et al. 2008 §2.6.1):
//   simple: ℓ₀ = y₀;  holt: ℓ₀ = y₀, b₀ = y₁ − y₀;
//   one season m: ℓ₀ = mean(y₀..y_{m−1}), b₀ = (mean(y_m..y_{2m−1}) − ℓ₀)/m, s_j = y_j − ℓ₀;
//   two seasons m₁ < m₂: ℓ₀, b₀ as above with m₂; s¹_j = mean over k of (y_{j+k m₁} − ℓ₀) within the first m₂
//   values; s²_j = y_j − ℓ₀ − s¹_{j mod m₁}. Missing values are left out of means and give zero seasonal terms.
SmoothingState default_state(const ExpSmoothingOptions& o, std::span<const double> y) {
  SmoothingState s;
  const std::size_t seasons = season_count(o.model);
  const std::size_t m = seasons == 2 ? o.second_period_steps : seasons == 1 ? o.period_steps : 0;
  const std::size_t needed = seasons ? 2 * m : has_trend(o.model) ? 2 : 1;
  if (y.size() < needed) {
    throw DataError("exp_smoothing: model " + to_string(o.model) + " needs at least " + std::to_string(needed) +
                    " steps in the fit range to set its initial states, got " + std::to_string(y.size()));
  }
  if (seasons == 0) {
    s.level = y[0];
    if (has_trend(o.model)) s.trend = y[1] - y[0];
    if (std::isnan(s.level) || std::isnan(s.trend)) {
      throw DataError("exp_smoothing: the first values of the fit range are missing; initial states need them");
    }
    return s;
  }
  s.level = nan_mean(y.subspan(0, m));
  s.trend = (nan_mean(y.subspan(m, m)) - s.level) / static_cast<double>(m);
  if (std::isnan(s.level) || std::isnan(s.trend)) {
    throw DataError("exp_smoothing: the first two seasons of the fit range are all missing; initial states need them");
  }
  auto dev = [&](std::size_t j) { return std::isnan(y[j]) ? 0.0 : y[j] - s.level; };
  if (seasons == 1) {
    s.seasonal.resize(m);
    for (std::size_t j = 0; j < m; ++j) s.seasonal[j] = dev(j);
    return s;
  }
  const std::size_t m1 = o.period_steps;
  s.seasonal.assign(m1, 0.0);
  std::vector<std::size_t> count(m1, 0);
  for (std::size_t j = 0; j < m; ++j) {
    if (std::isnan(y[j])) continue;
    s.seasonal[j % m1] += dev(j);
    ++count[j % m1];
  }
  for (std::size_t j = 0; j < m1; ++j) s.seasonal[j] = count[j] ? s.seasonal[j] / static_cast<double>(count[j]) : 0.0;
  s.second_seasonal.resize(m);
  for (std::size_t j = 0; j < m; ++j) s.second_seasonal[j] = std::isnan(y[j]) ? 0.0 : dev(j) - s.seasonal[j % m1];
  return s;
}

double logistic(double u) { return 1.0 / (1.0 + std::exp(-u)); }
double logit(double p) { return std::log(p / (1.0 - p)); }

}  // namespace

void ExpSmoothing::fit(const SeriesSet& series, IndexRange fit_range, IndexRange /*validation_range*/) {
  series.check(name());
  detail::require_range(name(), "fit range", fit_range, series.length());
  const auto y = series.target.subspan(fit_range.begin, fit_range.size());
  initial_ = options_.initial_state ? *options_.initial_state : default_state(options_, y);
  const bool trended = has_trend(options_.model);
  const std::size_t seasons = season_count(options_.model);

  auto run = [&](const SmoothingParameters& p, std::vector<double>* fitted) {
    State s = start_state(initial_);
    double sse = 0.0;
    for (std::size_t r = 0; r < y.size(); ++r) {
      const double yhat = s.step(y[r], p, trended);
      if (fitted) (*fitted)[r] = yhat;
      if (!std::isnan(y[r])) sse += (y[r] - yhat) * (y[r] - yhat);
    }
    return sse;
  };

  evaluations_ = 0;
  if (options_.fixed_parameters) {
    parameters_ = *options_.fixed_parameters;
  } else {
    // Free parameters in order: α, then β (trend), γ, ω as the model has them; each θ = logistic(u) keeps the
    // search inside (0, 1) without bound handling in the simplex.
    const std::size_t dim = 1 + (trended ? 1 : 0) + seasons;
    auto unpack = [&](const std::vector<double>& u) {
      SmoothingParameters p;
      std::size_t k = 0;
      p.level = logistic(u[k++]);
      p.trend = trended ? logistic(u[k++]) : 0.0;
      p.seasonal = seasons >= 1 ? logistic(u[k++]) : 0.0;
      p.second_seasonal = seasons == 2 ? logistic(u[k++]) : 0.0;
      return p;
    };
    auto objective = [&](const std::vector<double>& u) { return run(unpack(u), nullptr); };
    std::mt19937_64 rng(options_.seed);
    std::uniform_real_distribution<double> uniform(0.02, 0.98);
    double best = HUGE_VAL;
    std::vector<double> best_u;
    for (std::size_t start = 0; start < options_.starts; ++start) {
      std::vector<double> u(dim);
      if (start == 0) {
        // Common practice, no source: moderate level smoothing, slow trend and seasonal smoothing.
        std::size_t k = 0;
        u[k++] = logit(0.3);
        if (trended) u[k++] = logit(0.05);
        for (std::size_t j = 0; j < seasons; ++j) u[k++] = logit(0.1);
      } else {
        for (double& v : u) v = logit(uniform(rng));
      }
      auto result = detail::nelder_mead(objective, u, 1.0, options_.max_evaluations);
      // Restart once from the result: a collapsed simplex can stall off the optimum (common practice, no source).
      auto polished = detail::nelder_mead(objective, result.x, 0.2, options_.max_evaluations);
      evaluations_ += result.evaluations + polished.evaluations;
      if (polished.value < best) {
        best = polished.value;
        best_u = polished.x;
      }
    }
    parameters_ = unpack(best_u);
  }
  fitted_.assign(y.size(), 0.0);
  sse_ = run(parameters_, &fitted_);
  fit_range_ = fit_range;
  fitted_flag_ = true;
}

PointForecasts ExpSmoothing::forecast(const SeriesSet& series, std::span<const std::size_t> issues,
                                      std::size_t horizon) const {
  if (!fitted_flag_) throw DataError("exp_smoothing: forecast called before fit");
  detail::require_issues(name(), issues, fit_range_.begin, series.length());
  auto out = detail::make_points(issues, horizon);
  // One pass of the filter through the latest issue; issues may come in any order.
  std::vector<std::size_t> order(issues.size());
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return issues[a] < issues[b]; });
  State s = start_state(initial_);
  const bool trended = has_trend(options_.model);
  std::size_t next = fit_range_.begin;
  for (std::size_t i : order) {
    for (; next <= issues[i]; ++next) s.step(series.target[next], parameters_, trended);
    for (std::size_t h = 1; h <= horizon; ++h) out.value(i, h - 1) = s.forecast(h);
  }
  return out;
}

}  // namespace libseq::baselines
