#include "libseq/metrics/deterministic.hpp"

#include <cmath>
#include <string>
#include <vector>

#include "libseq/error.hpp"
#include "metrics/checks_impl.hpp"

namespace libseq::metrics {

namespace {

using detail::nan;

// The finite (observed, simulated) pairs and the counts of the skipped ones, in the order of precedence documented
// in metric_value.hpp.
struct Pairs {
  std::vector<double> obs;
  std::vector<double> sim;
  SampleCounts counts;
};

Pairs finite_pairs(std::string_view function, std::span<const double> observed, std::span<const double> simulated) {
  detail::require_same_length(function, "observed", observed.size(), "simulated", simulated.size());
  Pairs pairs;
  pairs.obs.reserve(observed.size());
  pairs.sim.reserve(observed.size());
  for (std::size_t i = 0; i < observed.size(); ++i) {
    if (!std::isfinite(observed[i])) {
      ++pairs.counts.missing_observation;
    } else if (!std::isfinite(simulated[i])) {
      ++pairs.counts.missing_forecast;
    } else {
      pairs.obs.push_back(observed[i]);
      pairs.sim.push_back(simulated[i]);
    }
  }
  pairs.counts.used = pairs.obs.size();
  return pairs;
}

double mean_of(const std::vector<double>& x) {
  double sum = 0.0;
  for (double v : x) sum += v;
  return sum / static_cast<double>(x.size());
}

// Means, population standard deviations and Pearson correlation by the two-pass algorithm (deviations from the
// mean, not raw sums of squares, which lose precision for large flows with small variability).
struct Moments {
  double mean_obs = nan, mean_sim = nan, sd_obs = nan, sd_sim = nan, r = nan;
};

Moments moments_of(const Pairs& pairs) {
  Moments m;
  const std::size_t n = pairs.obs.size();
  if (n == 0) return m;
  m.mean_obs = mean_of(pairs.obs);
  m.mean_sim = mean_of(pairs.sim);
  double soo = 0.0, sss = 0.0, sos = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    const double dobs = pairs.obs[i] - m.mean_obs;
    const double dsim = pairs.sim[i] - m.mean_sim;
    soo += dobs * dobs;
    sss += dsim * dsim;
    sos += dobs * dsim;
  }
  if (n < 2) return m;
  // The 1/n normalisation cancels in every ratio the KGE uses (α, γ, r); it is chosen for definiteness.
  m.sd_obs = std::sqrt(soo / static_cast<double>(n));
  m.sd_sim = std::sqrt(sss / static_cast<double>(n));
  if (soo > 0.0 && sss > 0.0) m.r = sos / std::sqrt(soo * sss);
  return m;
}

double ratio(double numerator, double denominator) {
  return (denominator != 0.0 && std::isfinite(numerator) && std::isfinite(denominator)) ? numerator / denominator : nan;
}

double euclidean_efficiency(double a, double b, double c) {
  // Gupta et al. (2009): 1 minus the Euclidean distance of (r, α, β) from the ideal point (1, 1, 1).
  if (std::isnan(a) || std::isnan(b) || std::isnan(c)) return nan;
  return 1.0 - std::sqrt((a - 1.0) * (a - 1.0) + (b - 1.0) * (b - 1.0) + (c - 1.0) * (c - 1.0));
}

}  // namespace

MetricValue nse(std::span<const double> observed, std::span<const double> simulated) {
  const Pairs pairs = finite_pairs("nse", observed, simulated);
  MetricValue result;
  result.counts = pairs.counts;
  if (pairs.obs.empty()) return result;
  const double mean_obs = mean_of(pairs.obs);
  double sse = 0.0, sst = 0.0;
  for (std::size_t i = 0; i < pairs.obs.size(); ++i) {
    sse += (pairs.sim[i] - pairs.obs[i]) * (pairs.sim[i] - pairs.obs[i]);
    sst += (pairs.obs[i] - mean_obs) * (pairs.obs[i] - mean_obs);
  }
  if (sst > 0.0) result.value = 1.0 - sse / sst;
  return result;
}

KgeResult kge(std::span<const double> observed, std::span<const double> simulated) {
  const Pairs pairs = finite_pairs("kge", observed, simulated);
  const Moments m = moments_of(pairs);
  KgeResult result;
  result.counts = pairs.counts;
  result.r = m.r;
  result.alpha = ratio(m.sd_sim, m.sd_obs);
  result.beta = ratio(m.mean_sim, m.mean_obs);
  result.value = euclidean_efficiency(result.r, result.alpha, result.beta);
  return result;
}

KgePrimeResult kge_prime(std::span<const double> observed, std::span<const double> simulated) {
  const Pairs pairs = finite_pairs("kge_prime", observed, simulated);
  const Moments m = moments_of(pairs);
  KgePrimeResult result;
  result.counts = pairs.counts;
  result.r = m.r;
  // Kling et al. (2012) replace α by the ratio of coefficients of variation so that the bias and variability
  // components are not cross-correlated when the mean is biased.
  result.gamma = ratio(ratio(m.sd_sim, m.mean_sim), ratio(m.sd_obs, m.mean_obs));
  result.beta = ratio(m.mean_sim, m.mean_obs);
  result.value = euclidean_efficiency(result.r, result.gamma, result.beta);
  return result;
}

MetricValue pbias(std::span<const double> observed, std::span<const double> simulated) {
  const Pairs pairs = finite_pairs("pbias", observed, simulated);
  MetricValue result;
  result.counts = pairs.counts;
  if (pairs.obs.empty()) return result;
  double sum_diff = 0.0, sum_obs = 0.0;
  for (std::size_t i = 0; i < pairs.obs.size(); ++i) {
    sum_diff += pairs.sim[i] - pairs.obs[i];
    sum_obs += pairs.obs[i];
  }
  // Sign: positive when the forecast volume exceeds the observed one (overestimation).
  result.value = ratio(100.0 * sum_diff, sum_obs);
  return result;
}

MetricValue rmse(std::span<const double> observed, std::span<const double> simulated) {
  const Pairs pairs = finite_pairs("rmse", observed, simulated);
  MetricValue result;
  result.counts = pairs.counts;
  if (pairs.obs.empty()) return result;
  double sse = 0.0;
  for (std::size_t i = 0; i < pairs.obs.size(); ++i)
    sse += (pairs.sim[i] - pairs.obs[i]) * (pairs.sim[i] - pairs.obs[i]);
  result.value = std::sqrt(sse / static_cast<double>(pairs.obs.size()));
  return result;
}

MetricValue mae(std::span<const double> observed, std::span<const double> simulated) {
  const Pairs pairs = finite_pairs("mae", observed, simulated);
  MetricValue result;
  result.counts = pairs.counts;
  if (pairs.obs.empty()) return result;
  double sum = 0.0;
  for (std::size_t i = 0; i < pairs.obs.size(); ++i) sum += std::abs(pairs.sim[i] - pairs.obs[i]);
  result.value = sum / static_cast<double>(pairs.obs.size());
  return result;
}

MetricValue mape(std::span<const double> observed, std::span<const double> simulated) {
  const Pairs pairs = finite_pairs("mape", observed, simulated);
  MetricValue result;
  result.counts = pairs.counts;
  result.counts.used = 0;
  double sum = 0.0;
  for (std::size_t i = 0; i < pairs.obs.size(); ++i) {
    if (pairs.obs[i] == 0.0) {
      ++result.counts.excluded;
      continue;
    }
    sum += std::abs(pairs.sim[i] - pairs.obs[i]) / std::abs(pairs.obs[i]);
    ++result.counts.used;
  }
  if (result.counts.used > 0) result.value = 100.0 * sum / static_cast<double>(result.counts.used);
  return result;
}

double naive_mae_scale(std::span<const double> training, std::size_t period) {
  if (period == 0) throw ConfigError("naive_mae_scale: 'period' is 0; expected a whole number of steps >= 1");
  double sum = 0.0;
  std::size_t pairs = 0;
  for (std::size_t t = period; t < training.size(); ++t) {
    if (std::isfinite(training[t]) && std::isfinite(training[t - period])) {
      sum += std::abs(training[t] - training[t - period]);
      ++pairs;
    }
  }
  return pairs > 0 ? sum / static_cast<double>(pairs) : nan;
}

MetricValue mase(std::span<const double> observed, std::span<const double> simulated, double scale) {
  MetricValue result = mae(observed, simulated);
  result.value = (std::isfinite(scale) && scale > 0.0) ? result.value / scale : nan;
  return result;
}

MetricValue mase(std::span<const double> observed, std::span<const double> simulated, std::span<const double> scales) {
  detail::require_same_length("mase", "observed", observed.size(), "simulated", simulated.size());
  detail::require_same_length("mase", "observed", observed.size(), "scales", scales.size());
  MetricValue result;
  double sum = 0.0;
  for (std::size_t i = 0; i < observed.size(); ++i) {
    if (!std::isfinite(observed[i])) {
      ++result.counts.missing_observation;
    } else if (!std::isfinite(simulated[i])) {
      ++result.counts.missing_forecast;
    } else if (!(std::isfinite(scales[i]) && scales[i] > 0.0)) {
      ++result.counts.excluded;
    } else {
      // Hyndman & Koehler (2006): each error is scaled by its own series' in-sample naive MAE, then averaged.
      sum += std::abs(simulated[i] - observed[i]) / scales[i];
      ++result.counts.used;
    }
  }
  if (result.counts.used > 0) result.value = sum / static_cast<double>(result.counts.used);
  return result;
}

}  // namespace libseq::metrics
