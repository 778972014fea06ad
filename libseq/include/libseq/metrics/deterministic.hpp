#pragma once
/// @file deterministic.hpp
/// Scores of a point forecast (or a simulation) against observations: NSE, KGE and KGE′ with their components,
/// PBIAS, RMSE, MAE, MAPE and MASE. Formulas, sign conventions and references: docs/methods-metrics.md.
///
/// Every function takes `observed` and `simulated` of equal length, case by case. A case whose observation is not
/// finite (NaN = missing) is skipped and counted in `missing_observation`; a case with an observation but a
/// non-finite forecast is skipped and counted in `missing_forecast`. Every function throws libseq::DataError when
/// the two spans differ in length, naming the function and both lengths. All functions are pure and thread-safe.

#include <cstddef>
#include <limits>
#include <span>

#include "libseq/metrics/metric_value.hpp"

namespace libseq::metrics {

/// Nash–Sutcliffe efficiency 1 − Σ(s−o)² / Σ(o−ō)² (Nash & Sutcliffe 1970, their efficiency R²).
/// Dimensionless, ≤ 1, 1 = perfect, 0 = as good as the mean of the observations used. NaN when no case is used or the
/// observations used have zero variance.
MetricValue nse(std::span<const double> observed, std::span<const double> simulated);

/// Kling–Gupta efficiency and its components (Gupta et al. 2009, eq. 9; equation number from memory).
struct KgeResult {
  double value = std::numeric_limits<double>::quiet_NaN();  ///< 1 − √((r−1)² + (α−1)² + (β−1)²); 1 = perfect.
  double r = std::numeric_limits<double>::quiet_NaN();      ///< Pearson correlation of simulated and observed.
  double alpha = std::numeric_limits<double>::quiet_NaN();  ///< σs/σo, ratio of standard deviations.
  double beta = std::numeric_limits<double>::quiet_NaN();   ///< μs/μo, ratio of means.
  SampleCounts counts;                                      ///< Cases used and skipped.
};

/// KGE of Gupta et al. (2009). Components are NaN when undefined (fewer than 2 cases, zero standard deviation, zero
/// observed mean); the value is NaN when any component is.
KgeResult kge(std::span<const double> observed, std::span<const double> simulated);

/// Modified Kling–Gupta efficiency and its components (Kling et al. 2012; equation numbers not checked).
struct KgePrimeResult {
  double value = std::numeric_limits<double>::quiet_NaN();  ///< 1 − √((r−1)² + (γ−1)² + (β−1)²); 1 = perfect.
  double r = std::numeric_limits<double>::quiet_NaN();      ///< Pearson correlation of simulated and observed.
  double gamma = std::numeric_limits<double>::quiet_NaN();  ///< (σs/μs)/(σo/μo), ratio of coefficients of variation.
  double beta = std::numeric_limits<double>::quiet_NaN();   ///< μs/μo, ratio of means.
  SampleCounts counts;                                      ///< Cases used and skipped.
};

/// KGE′ of Kling et al. (2012); undefined components as for kge() (plus zero simulated mean for γ).
KgePrimeResult kge_prime(std::span<const double> observed, std::span<const double> simulated);

/// Percent bias 100·Σ(s−o)/Σo, in percent. Sign convention: POSITIVE = the forecast OVERESTIMATES on the whole,
/// negative = underestimates. NaN when Σo = 0 or no case is used.
MetricValue pbias(std::span<const double> observed, std::span<const double> simulated);

/// Root mean squared error √(Σ(s−o)²/n), in the units of the observations.
MetricValue rmse(std::span<const double> observed, std::span<const double> simulated);

/// Mean absolute error Σ|s−o|/n, in the units of the observations.
MetricValue mae(std::span<const double> observed, std::span<const double> simulated);

/// Mean absolute percentage error 100/n·Σ|s−o|/|o|, in percent. Cases with an observation equal to zero are
/// excluded (the ratio is undefined) and counted in `counts.excluded`.
MetricValue mape(std::span<const double> observed, std::span<const double> simulated);

/// The MASE denominator (Hyndman & Koehler 2006): the in-sample mean absolute error of the naive
/// forecast y[t−period] for y[t] on a training series, (1/(N−period))·Σ_{t≥period} |y[t] − y[t−period]| over the
/// pairs where both values are finite. `period` = 1 is the naive (persistence) forecast, `period` = m the seasonal
/// naive one. Returns NaN when no pair is finite.
/// @throws libseq::ConfigError when period is 0.
double naive_mae_scale(std::span<const double> training, std::size_t period);

/// Mean absolute scaled error (1/n)·Σ|s−o|/scale (Hyndman & Koehler 2006: the mean of the scaled errors q_t);
/// `scale` comes from naive_mae_scale(). Dimensionless; < 1 means better than the in-sample naive forecast. NaN when
/// the scale is zero or not finite.
MetricValue mase(std::span<const double> observed, std::span<const double> simulated, double scale);

/// MASE with one scale per case (cases pooled from several sites, each scaled by its own training series): the mean
/// of |s−o|/scale over the cases used. A case whose scale is zero or not finite is counted in `excluded`.
/// @throws libseq::DataError when `scales` differs in length from `observed`.
MetricValue mase(std::span<const double> observed, std::span<const double> simulated, std::span<const double> scales);

}  // namespace libseq::metrics
