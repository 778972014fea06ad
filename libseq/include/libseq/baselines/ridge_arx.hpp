#pragma once
/// @file ridge_arx.hpp
/// Ridge-regression ARX baseline, direct strategy: one linear model per lead h that maps the lagged target and
/// lagged inputs at the issue step (and, optionally, the inputs of the target step) to y[t + h].

#include <cstddef>
#include <vector>

#include "libseq/baselines/forecaster.hpp"

namespace libseq::baselines {

/// Options of the ridge ARX forecaster.
struct RidgeArxOptions {
  std::size_t target_lags = 3;  ///< p: features y[t], y[t−1], ..., y[t−p+1]. >= 1.
  std::size_t input_lags = 2;   ///< q: features x_j[t], ..., x_j[t−q+1] for each input j. 0 = no lagged inputs.
  /// Add x_j[t + h] (the target step's inputs) as features: only for inputs known in advance (calendar,
  /// scheduled releases) or for a hindcast with observed forcing. Off by default.
  bool use_target_step_inputs = false;
  std::size_t max_lead = 24;  ///< H: one model is fitted for each lead 1..H. >= 1.
  /// Penalty grid λ (on standardised features). With more than one value the one with the least mean squared
  /// error on the validation range is kept. All >= 0.
  std::vector<double> penalties = {0.01, 0.1, 1.0, 10.0, 100.0, 1000.0};
  /// @throws libseq::ConfigError listing every broken rule (key `ridge_arx.<name>`, value, expectation).
  void validate() const;
};

/// One fitted lead model in the original units: y[t + h] ≈ intercept + Σ slopes[k] · feature[k], with features in
/// the order: target lags (y[t], y[t−1], ...), then for each input j its lags (x_j[t], x_j[t−1], ...), then, when
/// enabled, x_0[t + h], x_1[t + h], ...
struct RidgeLeadModel {
  double intercept = 0.0;
  std::vector<double> slopes;
  double penalty = 0.0;               ///< λ chosen for this lead.
  std::size_t training_rows = 0;      ///< Complete rows used in the fit.
  double validation_mse = 0.0;        ///< MSE on the validation range for the chosen λ; NaN without one.
};

/// Ridge ARX forecaster (direct strategy). Rows with any missing feature or target are skipped, in fitting and in
/// forecasting (the forecast is NaN then).
class RidgeArx final : public Forecaster {
 public:
  /// @throws libseq::ConfigError from options.validate().
  explicit RidgeArx(RidgeArxOptions options);
  std::string name() const override { return "ridge_arx"; }
  /// Training rows: issue t with t and t + h both in fit_range (and all lags inside the series). Validation rows
  /// likewise within validation_range.
  /// @throws libseq::ConfigError when the grid has several penalties and validation_range is empty.
  /// @throws libseq::DataError when a lead has fewer complete rows than features + 1, or a validation range has
  /// no complete row.
  void fit(const SeriesSet& series, IndexRange fit_range, IndexRange validation_range) override;
  /// @throws libseq::ConfigError when horizon > max_lead; libseq::DataError when not fitted or an issue is out of
  /// range. Leads whose target step (or input step) lies beyond the inputs' end forecast NaN.
  PointForecasts forecast(const SeriesSet& series, std::span<const std::size_t> issues,
                          std::size_t horizon) const override;
  /// Fitted model of lead h (1-based). @throws libseq::DataError when not fitted or h is out of range.
  const RidgeLeadModel& lead_model(std::size_t lead) const;
  /// The longest lag minus one: the first issue with every lag inside the series.
  std::size_t first_issue() const override;

 private:
  RidgeArxOptions options_;
  std::size_t input_count_ = 0;
  std::vector<RidgeLeadModel> models_;
};

}  // namespace libseq::baselines
