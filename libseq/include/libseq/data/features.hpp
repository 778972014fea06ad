#pragma once
/// @file features.hpp
/// From a Panel to the numbers a network sees: which variables are inputs, the target and its transform, calendar
/// encodings, and the scaling statistics, fitted on the fit period only (so that nothing of the validation,
/// calibration or test periods leaks into training) and stored in the model bundle.

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "libseq/data/panel.hpp"
#include "libseq/data/periods.hpp"

namespace libseq::data {

/// Transform applied to the target before scaling, inverted on every prediction.
enum class TargetTransform { none, log, sqrt, box_cox };
std::string to_string(TargetTransform transform);
/// @throws libseq::ConfigError naming `key` and listing the choices.
TargetTransform parse_target_transform(std::string_view text, std::string_view key = "target.transform");

/// Calendar encodings fed as inputs at every step (each a sine/cosine pair unless stated).
enum class CalendarEncoding {
  day_of_year,   ///< sin, cos of 2π·(day of year)/365.25
  hour_of_day,   ///< sin, cos of 2π·(hour + minute/60)/24
  day_of_week,   ///< sin, cos of 2π·(ISO weekday − 1)/7
  weekend,       ///< 1 on Saturday and Sunday, else 0
  holiday        ///< 1 on the dates listed in FeatureOptions::holidays, else 0
};
std::string to_string(CalendarEncoding encoding);
CalendarEncoding parse_calendar_encoding(std::string_view text, std::string_view key = "inputs.calendar");

/// Whether scaling statistics are pooled across sites (one mean and deviation per variable, for models trained
/// across sites) or kept per site.
enum class ScalingScope { pooled, per_site };
std::string to_string(ScalingScope scope);
ScalingScope parse_scaling_scope(std::string_view text, std::string_view key = "inputs.scaling");

/// What to feed and what to predict.
struct FeatureOptions {
  std::string target;                        ///< Target variable (name or standard_name).
  std::vector<std::string> dynamic_inputs;   ///< Forcings / covariates (names or standard_names), per step.
  std::vector<std::string> static_inputs;    ///< Site attributes (SiteInfo::attributes keys), fed at every step.
  std::vector<CalendarEncoding> calendar;    ///< Calendar encodings, per step.
  std::vector<std::string> holidays;         ///< ISO dates (YYYY-MM-DD) for CalendarEncoding::holiday.
  bool lagged_target = true;                 ///< Feed the observed target (up to the issue time) as an input.
  TargetTransform transform = TargetTransform::none;
  double box_cox_lambda = 0.5;               ///< λ of the Box-Cox transform ((y+c)^λ − 1)/λ; λ = 0 is log.
  /// Offset c added before log, sqrt and Box-Cox so that zero flows stay finite; in target units.
  double transform_offset = 0.0;
  ScalingScope scaling = ScalingScope::pooled;

  /// @throws libseq::ConfigError listing every broken rule.
  void validate() const;
};

/// Mean and standard deviation of one feature (after the target transform, for the target).
struct Scaling {
  double mean = 0.0;
  double deviation = 1.0;
};

/// The fitted plan: resolved variable indices, scaling statistics from the fit period, and the feature layout.
/// Dynamic feature order per step: dynamic inputs, calendar columns, then (if lagged_target) the scaled lagged
/// target and its availability flag (1 where the observed target is known to the model, else 0).
class FeaturePlan {
 public:
  /// Resolves names against `panel` and fits scaling on the steps of `fit_period`.
  /// @throws libseq::DataError naming the missing variable or attribute and listing what is present, or when a
  ///         feature has no finite value in the fit period.
  static FeaturePlan fit(const Panel& panel, const FeatureOptions& options, const Period& fit_period);

  /// Rebuilds a plan from stored statistics (model bundle), resolving names against a new panel.
  static FeaturePlan restore(const Panel& panel, const FeatureOptions& options, std::vector<Scaling> dynamic_scaling,
                             std::vector<Scaling> static_scaling, std::vector<Scaling> target_scaling,
                             std::vector<std::string> site_ids);

  const FeatureOptions& options() const { return options_; }
  /// Features per step, including calendar columns and the lagged-target pair.
  std::size_t dynamic_feature_count() const;
  std::size_t static_feature_count() const { return options_.static_inputs.size(); }
  /// Names of the per-step features, in order (for reports and bundles).
  std::vector<std::string> dynamic_feature_names() const;

  /// Target transform and its inverse (unscaled, in target units / transformed units).
  double transform_target(double value) const;
  double inverse_transform_target(double transformed) const;
  /// Scaling of the transformed target for a site (pooled: the same for all).
  const Scaling& target_scaling(std::size_t site) const;
  const std::vector<Scaling>& dynamic_scaling() const { return dynamic_scaling_; }
  const std::vector<Scaling>& static_scaling() const { return static_scaling_; }
  const std::vector<Scaling>& all_target_scaling() const { return target_scaling_; }
  const std::vector<std::string>& site_ids() const { return site_ids_; }
  std::size_t target_variable() const { return target_variable_; }

 private:
  FeatureOptions options_;
  std::vector<std::size_t> dynamic_variables_;
  std::size_t target_variable_ = 0;
  std::vector<Scaling> dynamic_scaling_;  // one per dynamic input variable (not calendar, not lagged target)
  std::vector<Scaling> static_scaling_;   // one per static input
  std::vector<Scaling> target_scaling_;   // one (pooled) or one per site
  std::vector<std::string> site_ids_;     // the sites target_scaling_ refers to when per site
  friend class FeatureTable;
};

/// The scaled features of every site on the whole axis, computed once so that windows are views into it.
/// Missing inputs are NaN here; the window batcher decides how to present them.
class FeatureTable {
 public:
  FeatureTable(const Panel& panel, const FeaturePlan& plan);

  std::size_t site_count() const { return sites_; }
  std::size_t time_count() const { return steps_; }
  /// Columns per step in the table: dynamic inputs then calendar columns (no lagged-target pair).
  std::size_t column_count() const { return dynamic_; }
  std::size_t static_count() const { return static_; }

  /// Scaled dynamic features of (site, step), column_count() values; the lagged-target pair is NOT included
  /// here (it depends on the issue time) — see scaled_target.
  std::span<const float> dynamic(std::size_t site, std::size_t step) const {
    return {dynamic_values_.data() + (site * steps_ + step) * dynamic_, dynamic_};
  }
  std::span<const float> statics(std::size_t site) const { return {static_values_.data() + site * static_, static_}; }
  /// Transformed and scaled target, NaN where missing.
  float scaled_target(std::size_t site, std::size_t step) const { return target_values_[site * steps_ + step]; }
  /// Observed target in its own units, NaN where missing.
  float observed_target(std::size_t site, std::size_t step) const { return observed_[site * steps_ + step]; }

  /// Scaled value back to target units for a site.
  double unscale_target(std::size_t site, double scaled) const;

  const FeaturePlan& plan() const { return plan_; }
  /// Time of step 0 and the step of the panel the table was built from.
  UtcSeconds start_seconds() const { return start_; }
  std::int64_t step_seconds() const { return step_; }

 private:
  FeaturePlan plan_;
  UtcSeconds start_ = 0;
  std::int64_t step_ = 86400;
  std::size_t sites_ = 0, steps_ = 0, dynamic_ = 0, static_ = 0;
  std::vector<float> dynamic_values_;  // sites × steps × (dynamic inputs + calendar columns)
  std::vector<float> static_values_;   // sites × statics
  std::vector<float> target_values_;   // sites × steps
  std::vector<float> observed_;        // sites × steps
};

}  // namespace libseq::data
