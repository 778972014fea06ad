#pragma once
/// @file local_level.hpp
/// The local level model (random walk plus noise) of Durbin & Koopman (2012, ch. 2):
///   y_t = μ_t + ε_t, ε_t ~ N(0, σ²_ε);  μ_{t+1} = μ_t + η_t, η_t ~ N(0, σ²_η),
/// with a diffuse initial level, variances by maximum likelihood, forecasts with their variance.

#include <cstddef>
#include <optional>
#include <utility>
#include <vector>

#include "libseq/baselines/forecaster.hpp"

namespace libseq::baselines {

/// Options of the local level model.
struct LocalLevelOptions {
  /// Search interval of ψ = log(σ²_η / σ²_ε) for the concentrated likelihood, and its tolerance.
  double log_ratio_min = -20.0;
  double log_ratio_max = 10.0;
  double log_ratio_tolerance = 1e-10;
  /// Variances (σ²_ε, σ²_η) held fixed instead of estimated, e.g. for checks.
  std::optional<std::pair<double, double>> fixed_variances;
  /// @throws libseq::ConfigError listing every broken rule (key `local_level.<name>`, value, expectation).
  void validate() const;
};

/// Output of the Kalman filter over a range: one-step predictions and their variances (D&K 2012 eq. 2.15).
struct LocalLevelFilterResult {
  std::vector<double> predicted_level;     ///< a_t, the one-step prediction of μ_t (NaN while diffuse).
  std::vector<double> predicted_variance;  ///< P_t (infinite while diffuse).
  std::vector<double> innovation;          ///< v_t = y_t − a_t (NaN when y_t is missing or diffuse).
  std::vector<double> innovation_variance; ///< F_t = P_t + σ²_ε.
  double log_likelihood = 0.0;             ///< Diffuse log-likelihood (the diffuse step's term omitted).
  std::size_t observed = 0;                ///< Non-missing observations.
};

/// Local level forecaster.
class LocalLevel final : public Forecaster {
 public:
  /// @throws libseq::ConfigError from options.validate().
  explicit LocalLevel(LocalLevelOptions options = {});
  std::string name() const override { return "local_level"; }
  /// Estimates σ²_ε and σ²_η by maximising the concentrated diffuse log-likelihood over fit_range.
  /// @throws libseq::DataError when the range holds fewer than 3 observed values.
  void fit(const SeriesSet& series, IndexRange fit_range, IndexRange validation_range) override;
  /// Filters from fit_range.begin through each issue; the forecast of every lead is the filtered level.
  /// @throws libseq::DataError when not fitted or an issue is before fit_range.begin or outside the series.
  PointForecasts forecast(const SeriesSet& series, std::span<const std::size_t> issues,
                          std::size_t horizon) const override;
  /// The fit range start: the filter runs from there.
  std::size_t first_issue() const override { return fit_range_.begin; }
  /// Forecast variances of y for each (issue, lead): P_{t+1|t} + (h − 1)σ²_η + σ²_ε (D&K 2012 §2.8).
  PointForecasts forecast_variance(const SeriesSet& series, std::span<const std::size_t> issues,
                                   std::size_t horizon) const;

  double observation_variance() const { return var_eps_; }  ///< σ²_ε
  double level_variance() const { return var_eta_; }        ///< σ²_η
  double log_likelihood() const { return log_likelihood_; } ///< At the estimates, over the fit range.

  /// Runs the filter with given variances over `range` of `target` (NaN = missing).
  static LocalLevelFilterResult filter(std::span<const double> target, IndexRange range, double var_eps,
                                       double var_eta);

 private:
  LocalLevelOptions options_;
  IndexRange fit_range_;
  double var_eps_ = 0.0;
  double var_eta_ = 0.0;
  double log_likelihood_ = 0.0;
  bool fitted_ = false;
};

}  // namespace libseq::baselines
