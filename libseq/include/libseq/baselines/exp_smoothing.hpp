#pragma once
/// @file exp_smoothing.hpp
/// Additive exponential smoothing: simple, Holt (additive trend), Holt-Winters with one season, and double-seasonal
/// Holt-Winters (Taylor 2003) with two. Smoothing parameters are fitted by minimising the sum of squared one-step
/// errors with a bounded Nelder-Mead search; initial states come from a fixed rule (see docs/methods-baselines.md).

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "libseq/baselines/forecaster.hpp"

namespace libseq::baselines {

/// Which components the model has.
enum class SmoothingModel {
  simple,          ///< level only
  holt,            ///< level + additive trend
  holt_winters,    ///< level + trend + one additive season (period_steps)
  double_seasonal, ///< level + trend + two additive seasons (period_steps < second_period_steps), Taylor (2003)
};
/// "simple", "holt", "holt_winters", "double_seasonal".
std::string to_string(SmoothingModel model);
/// @throws libseq::ConfigError listing the accepted names.
SmoothingModel parse_smoothing_model(std::string_view text);

/// Smoothing parameters, each in [0, 1]; unused ones are ignored. Conventions as statsmodels ExponentialSmoothing:
/// level α, trend β (on the level change), seasonal γ (first season) and ω (second season).
struct SmoothingParameters {
  double level = 0.5;
  double trend = 0.1;
  double seasonal = 0.1;
  double second_seasonal = 0.1;
};

/// Initial states at the step before the first fitted one.
struct SmoothingState {
  double level = 0.0;
  double trend = 0.0;
  std::vector<double> seasonal;         ///< period_steps values; seasonal[j] is used for fit step j.
  std::vector<double> second_seasonal;  ///< second_period_steps values, likewise.
};

/// Options of the exponential-smoothing forecaster.
struct ExpSmoothingOptions {
  SmoothingModel model = SmoothingModel::simple;
  std::size_t period_steps = 0;         ///< m1, required (>= 2) for holt_winters and double_seasonal.
  std::size_t second_period_steps = 0;  ///< m2 > m1, required for double_seasonal.
  std::size_t starts = 8;               ///< Nelder-Mead starts (the first from fixed values, others seeded).
  std::size_t max_evaluations = 4000;   ///< Objective evaluations per start.
  unsigned seed = 20260512;             ///< Seed of the random starts.
  /// Parameters held fixed instead of fitted (for checks and for users who know them).
  std::optional<SmoothingParameters> fixed_parameters;
  /// Initial states to use instead of the default rule.
  std::optional<SmoothingState> initial_state;
  /// @throws libseq::ConfigError listing every broken rule (key `exp_smoothing.<name>`, value, expectation).
  void validate() const;
};

/// Exponential-smoothing forecaster (additive error-correction recursions; see the .cpp for equations).
/// Missing target values leave the states on their forecast path (zero error at that step).
class ExpSmoothing final : public Forecaster {
 public:
  /// @throws libseq::ConfigError from options.validate().
  explicit ExpSmoothing(ExpSmoothingOptions options);
  std::string name() const override { return "exp_smoothing"; }
  /// The filter starts at fit_range.begin from the initial states; parameters minimise the SSE of one-step
  /// forecasts over fit_range.
  /// @throws libseq::DataError when fit_range holds too few values for the initial-state rule (2 seasons of the
  /// longest period with a trend, 1 without; 2 values for holt) or a season's first block is all missing.
  void fit(const SeriesSet& series, IndexRange fit_range, IndexRange validation_range) override;
  /// Runs the filter from fit_range.begin through each issue, then projects the states.
  /// @throws libseq::DataError when not fitted or an issue lies before fit_range.begin or outside the series.
  PointForecasts forecast(const SeriesSet& series, std::span<const std::size_t> issues,
                          std::size_t horizon) const override;
  /// The fit range start: the filter runs from there.
  std::size_t first_issue() const override { return fit_range_.begin; }

  const SmoothingParameters& parameters() const { return parameters_; }
  const SmoothingState& initial_state() const { return initial_; }
  /// Sum of squared one-step errors over the fit range at the fitted parameters.
  double sse() const { return sse_; }
  /// One-step forecasts ŷ[t | t−1] over the fit range (fit_range.size() values).
  const std::vector<double>& fitted_values() const { return fitted_; }
  /// Objective evaluations spent by the optimiser over all starts.
  std::size_t evaluations() const { return evaluations_; }

 private:
  ExpSmoothingOptions options_;
  IndexRange fit_range_;
  SmoothingParameters parameters_;
  SmoothingState initial_;
  double sse_ = 0.0;
  std::vector<double> fitted_;
  std::size_t evaluations_ = 0;
  bool fitted_flag_ = false;
};

}  // namespace libseq::baselines
