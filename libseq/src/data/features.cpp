#include "libseq/data/features.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <set>

#include "libseq/error.hpp"

namespace libseq::data {

namespace {

template <typename Enum, std::size_t N>
Enum parse_choice(std::string_view text, std::string_view key, const std::pair<Enum, const char*> (&choices)[N]) {
  std::string list;
  for (const auto& [value, name] : choices) {
    if (text == name) return value;
    list += list.empty() ? "" : ", ";
    list += name;
  }
  throw ConfigError(std::string(key) + ": '" + std::string(text) + "' is not one of " + list);
}

template <typename Enum, std::size_t N>
std::string choice_name(Enum value, const std::pair<Enum, const char*> (&choices)[N]) {
  for (const auto& [v, name] : choices) {
    if (v == value) return name;
  }
  return "unknown";
}

constexpr std::pair<TargetTransform, const char*> transform_names[] = {{TargetTransform::none, "none"},
                                                                       {TargetTransform::log, "log"},
                                                                       {TargetTransform::sqrt, "sqrt"},
                                                                       {TargetTransform::box_cox, "box_cox"}};
constexpr std::pair<CalendarEncoding, const char*> calendar_names[] = {{CalendarEncoding::day_of_year, "day_of_year"},
                                                                       {CalendarEncoding::hour_of_day, "hour_of_day"},
                                                                       {CalendarEncoding::day_of_week, "day_of_week"},
                                                                       {CalendarEncoding::weekend, "weekend"},
                                                                       {CalendarEncoding::holiday, "holiday"}};
constexpr std::pair<ScalingScope, const char*> scope_names[] = {{ScalingScope::pooled, "pooled"},
                                                                {ScalingScope::per_site, "per_site"}};

std::size_t calendar_columns(CalendarEncoding encoding) {
  return encoding == CalendarEncoding::weekend || encoding == CalendarEncoding::holiday ? 1 : 2;
}

// Welford-free two-pass statistics over finite values; deviation floored so that constant features scale to 0.
Scaling fit_scaling(const std::vector<double>& values) {
  Scaling s;
  if (values.empty()) return s;
  double sum = 0.0;
  for (double v : values) sum += v;
  s.mean = sum / static_cast<double>(values.size());
  double squares = 0.0;
  for (double v : values) squares += (v - s.mean) * (v - s.mean);
  const double variance = values.size() > 1 ? squares / static_cast<double>(values.size() - 1) : 0.0;
  s.deviation = variance > 1e-24 ? std::sqrt(variance) : 1.0;
  return s;
}

}  // namespace

std::string to_string(TargetTransform transform) { return choice_name(transform, transform_names); }
TargetTransform parse_target_transform(std::string_view text, std::string_view key) {
  return parse_choice(text, key, transform_names);
}
std::string to_string(CalendarEncoding encoding) { return choice_name(encoding, calendar_names); }
CalendarEncoding parse_calendar_encoding(std::string_view text, std::string_view key) {
  return parse_choice(text, key, calendar_names);
}
std::string to_string(ScalingScope scope) { return choice_name(scope, scope_names); }
ScalingScope parse_scaling_scope(std::string_view text, std::string_view key) {
  return parse_choice(text, key, scope_names);
}

void FeatureOptions::validate() const {
  std::vector<std::string> problems;
  if (target.empty()) problems.push_back("target.variable: must name the variable to forecast");
  std::set<std::string> seen;
  for (const auto& name : dynamic_inputs) {
    if (!seen.insert(name).second) problems.push_back("inputs.dynamic: '" + name + "' is listed twice");
  }
  if (transform == TargetTransform::box_cox && !(box_cox_lambda >= -2.0 && box_cox_lambda <= 2.0)) {
    problems.push_back("target.box_cox_lambda: " + std::to_string(box_cox_lambda) + " is outside [-2, 2]");
  }
  if (!(transform_offset >= 0.0) || !std::isfinite(transform_offset)) {
    problems.push_back("target.offset: must be a finite value >= 0, got " + std::to_string(transform_offset));
  }
  for (const auto& date : holidays) {
    try {
      parse_iso8601(date, "inputs.holidays");
    } catch (const DataError& e) {
      problems.push_back(e.what());
    }
  }
  if (!problems.empty()) {
    std::string message = "feature options: " + std::to_string(problems.size()) + " problem(s):";
    for (const auto& p : problems) message += "\n  " + p;
    throw ConfigError(message);
  }
}

std::size_t FeaturePlan::dynamic_feature_count() const {
  std::size_t count = options_.dynamic_inputs.size();
  for (auto encoding : options_.calendar) count += calendar_columns(encoding);
  return count + (options_.lagged_target ? 2 : 0);
}

std::vector<std::string> FeaturePlan::dynamic_feature_names() const {
  std::vector<std::string> names(options_.dynamic_inputs);
  for (auto encoding : options_.calendar) {
    if (calendar_columns(encoding) == 1) {
      names.push_back(to_string(encoding));
    } else {
      names.push_back(to_string(encoding) + "_sin");
      names.push_back(to_string(encoding) + "_cos");
    }
  }
  if (options_.lagged_target) {
    names.push_back("observed_" + options_.target);
    names.push_back("observed_" + options_.target + "_known");
  }
  return names;
}

double FeaturePlan::transform_target(double y) const {
  const double shifted = y + options_.transform_offset;
  switch (options_.transform) {
    case TargetTransform::none:
      return y;
    case TargetTransform::log:
      return shifted > 0 ? std::log(shifted) : std::numeric_limits<double>::quiet_NaN();
    case TargetTransform::sqrt:
      return shifted >= 0 ? std::sqrt(shifted) : std::numeric_limits<double>::quiet_NaN();
    case TargetTransform::box_cox: {
      // Box & Cox (1964): ((y + c)^λ − 1)/λ, log(y + c) at λ = 0.
      if (shifted <= 0) return std::numeric_limits<double>::quiet_NaN();
      const double lambda = options_.box_cox_lambda;
      return std::abs(lambda) < 1e-12 ? std::log(shifted) : (std::pow(shifted, lambda) - 1.0) / lambda;
    }
  }
  return y;
}

double FeaturePlan::inverse_transform_target(double z) const {
  const double c = options_.transform_offset;
  switch (options_.transform) {
    case TargetTransform::none:
      return z;
    case TargetTransform::log:
      return std::exp(z) - c;
    case TargetTransform::sqrt:
      return std::max(z, 0.0) * std::max(z, 0.0) - c;
    case TargetTransform::box_cox: {
      const double lambda = options_.box_cox_lambda;
      if (std::abs(lambda) < 1e-12) return std::exp(z) - c;
      const double base = lambda * z + 1.0;
      // Outside the transform's range the inverse does not exist; clamp to the lower bound (y = −c).
      return base > 0 ? std::pow(base, 1.0 / lambda) - c : -c;
    }
  }
  return z;
}

const Scaling& FeaturePlan::target_scaling(std::size_t site) const {
  return target_scaling_.size() == 1 ? target_scaling_[0] : target_scaling_.at(site);
}

namespace {

std::string present_attributes(const Panel& panel) {
  std::set<std::string> names;
  for (const auto& site : panel.sites()) {
    for (const auto& [name, value] : site.attributes) names.insert(name);
  }
  std::string out;
  for (const auto& n : names) out += (out.empty() ? "" : ", ") + n;
  return out.empty() ? "none" : out;
}

std::string sources_of(const Panel& panel) {
  std::string out;
  for (const auto& s : panel.sources()) out += (out.empty() ? "" : ", ") + s;
  return out.empty() ? "input data" : out;
}

void resolve(const Panel& panel, const FeatureOptions& options,
             std::vector<std::size_t>& dynamic_variables, std::size_t& target_variable) {
  const std::string source = sources_of(panel);
  target_variable = panel.require_variable(options.target, source);
  dynamic_variables.clear();
  for (const auto& name : options.dynamic_inputs) dynamic_variables.push_back(panel.require_variable(name, source));
  for (const auto& name : options.static_inputs) {
    for (const auto& site : panel.sites()) {
      if (!site.attributes.count(name)) {
        throw DataError(source + ": static input '" + name + "' is missing for site '" + site.id +
                        "'; static attributes present: " + present_attributes(panel));
      }
    }
  }
}

}  // namespace

FeaturePlan FeaturePlan::fit(const Panel& panel, const FeatureOptions& options, const Period& fit_period) {
  options.validate();
  FeaturePlan plan;
  plan.options_ = options;
  resolve(panel, options, plan.dynamic_variables_, plan.target_variable_);
  const IndexRange fit = index_range(panel.axis(), fit_period);
  const std::string source = sources_of(panel);
  if (fit.empty()) throw DataError(source + ": the fit period " + fit_period.to_string() + " has no time step");

  for (std::size_t k = 0; k < plan.dynamic_variables_.size(); ++k) {
    std::vector<double> values;
    for (std::size_t s = 0; s < panel.site_count(); ++s) {
      for (std::size_t t = fit.begin; t < fit.end; ++t) {
        const float v = panel.at(s, t, plan.dynamic_variables_[k]);
        if (std::isfinite(v)) values.push_back(v);
      }
    }
    if (values.empty()) {
      throw DataError(source + ": input '" + options.dynamic_inputs[k] + "' has no value in the fit period " +
                      fit_period.to_string());
    }
    plan.dynamic_scaling_.push_back(fit_scaling(values));
  }
  for (const auto& name : options.static_inputs) {
    std::vector<double> values;
    for (const auto& site : panel.sites()) values.push_back(site.attributes.at(name));
    plan.static_scaling_.push_back(fit_scaling(values));
  }
  auto target_values = [&](std::size_t s) {
    std::vector<double> values;
    for (std::size_t t = fit.begin; t < fit.end; ++t) {
      const float v = panel.at(s, t, plan.target_variable_);
      if (!std::isfinite(v)) continue;
      const double z = plan.transform_target(v);
      if (std::isfinite(z)) values.push_back(z);
    }
    return values;
  };
  if (options.scaling == ScalingScope::pooled) {
    std::vector<double> all;
    for (std::size_t s = 0; s < panel.site_count(); ++s) {
      auto v = target_values(s);
      all.insert(all.end(), v.begin(), v.end());
    }
    if (all.empty()) {
      throw DataError(source + ": target '" + options.target + "' has no usable value in the fit period " +
                      fit_period.to_string());
    }
    plan.target_scaling_.push_back(fit_scaling(all));
  } else {
    for (std::size_t s = 0; s < panel.site_count(); ++s) {
      auto v = target_values(s);
      if (v.empty()) {
        throw DataError(source + ": target '" + options.target + "' has no usable value for site '" +
                        panel.sites()[s].id + "' in the fit period " + fit_period.to_string());
      }
      plan.target_scaling_.push_back(fit_scaling(v));
      plan.site_ids_.push_back(panel.sites()[s].id);
    }
  }
  return plan;
}

FeaturePlan FeaturePlan::restore(const Panel& panel, const FeatureOptions& options,
                                 std::vector<Scaling> dynamic_scaling, std::vector<Scaling> static_scaling,
                                 std::vector<Scaling> target_scaling, std::vector<std::string> site_ids) {
  options.validate();
  FeaturePlan plan;
  plan.options_ = options;
  resolve(panel, options, plan.dynamic_variables_, plan.target_variable_);
  if (dynamic_scaling.size() != options.dynamic_inputs.size() || static_scaling.size() != options.static_inputs.size()) {
    throw DataError("feature plan: stored scaling statistics do not match the inputs of the plan");
  }
  plan.dynamic_scaling_ = std::move(dynamic_scaling);
  plan.static_scaling_ = std::move(static_scaling);
  plan.target_scaling_ = std::move(target_scaling);
  plan.site_ids_ = std::move(site_ids);
  if (options.scaling == ScalingScope::per_site) {
    // Per-site statistics follow the sites of the new panel by id.
    std::vector<Scaling> reordered;
    for (const auto& site : panel.sites()) {
      auto it = std::find(plan.site_ids_.begin(), plan.site_ids_.end(), site.id);
      if (it == plan.site_ids_.end()) {
        throw DataError("feature plan: site '" + site.id + "' has no stored target scaling (the model was fitted "
                        "per site on other sites)");
      }
      reordered.push_back(plan.target_scaling_.at(static_cast<std::size_t>(it - plan.site_ids_.begin())));
    }
    plan.target_scaling_ = std::move(reordered);
    plan.site_ids_.clear();
    for (const auto& site : panel.sites()) plan.site_ids_.push_back(site.id);
  }
  return plan;
}

FeatureTable::FeatureTable(const Panel& panel, const FeaturePlan& plan)
    : plan_(plan),
      start_(panel.axis().start()),
      step_(panel.axis().step_seconds()),
      sites_(panel.site_count()),
      steps_(panel.time_count()) {
  const auto& options = plan.options_;
  dynamic_ = options.dynamic_inputs.size();
  for (auto encoding : options.calendar) dynamic_ += calendar_columns(encoding);
  static_ = options.static_inputs.size();
  dynamic_values_.assign(sites_ * steps_ * dynamic_, missing_value);
  static_values_.assign(sites_ * static_, 0.0f);
  target_values_.assign(sites_ * steps_, missing_value);
  observed_.assign(sites_ * steps_, missing_value);

  std::set<std::int64_t> holiday_days;
  for (const auto& date : options.holidays) holiday_days.insert(parse_iso8601(date, "inputs.holidays") / 86400);

  // Calendar columns are the same for every site: compute once per step.
  std::vector<float> calendar(steps_ * (dynamic_ - options.dynamic_inputs.size()));
  const std::size_t calendar_width = dynamic_ - options.dynamic_inputs.size();
  for (std::size_t t = 0; t < steps_; ++t) {
    const UtcSeconds time = panel.axis().time_at(t);
    const CivilTime civil = to_civil(time);
    std::int64_t day = time / 86400;
    if (time % 86400 < 0) --day;
    const int weekday = static_cast<int>(((day % 7) + 7 + 3) % 7);  // 0 = Monday; 1970-01-01 was a Thursday
    const double day_of_year = static_cast<double>(day - days_from_civil(civil.year, 1, 1));
    std::size_t c = 0;
    float* out = calendar.data() + t * calendar_width;
    for (auto encoding : options.calendar) {
      double angle = 0.0;
      switch (encoding) {
        case CalendarEncoding::day_of_year:
          angle = 2.0 * std::numbers::pi * day_of_year / 365.25;
          break;
        case CalendarEncoding::hour_of_day:
          angle = 2.0 * std::numbers::pi * (civil.hour + civil.minute / 60.0) / 24.0;
          break;
        case CalendarEncoding::day_of_week:
          angle = 2.0 * std::numbers::pi * weekday / 7.0;
          break;
        case CalendarEncoding::weekend:
          out[c++] = weekday >= 5 ? 1.0f : 0.0f;
          continue;
        case CalendarEncoding::holiday:
          out[c++] = holiday_days.count(day) ? 1.0f : 0.0f;
          continue;
      }
      out[c++] = static_cast<float>(std::sin(angle));
      out[c++] = static_cast<float>(std::cos(angle));
    }
  }

  for (std::size_t s = 0; s < sites_; ++s) {
    for (std::size_t k = 0; k < static_; ++k) {
      const Scaling& sc = plan.static_scaling_[k];
      static_values_[s * static_ + k] =
          static_cast<float>((panel.sites()[s].attributes.at(options.static_inputs[k]) - sc.mean) / sc.deviation);
    }
    const Scaling& target_scale = plan.target_scaling(s);
    for (std::size_t t = 0; t < steps_; ++t) {
      float* row = dynamic_values_.data() + (s * steps_ + t) * dynamic_;
      for (std::size_t k = 0; k < plan.dynamic_variables_.size(); ++k) {
        const float v = panel.at(s, t, plan.dynamic_variables_[k]);
        const Scaling& sc = plan.dynamic_scaling_[k];
        row[k] = std::isfinite(v) ? static_cast<float>((v - sc.mean) / sc.deviation) : missing_value;
      }
      std::copy_n(calendar.data() + t * calendar_width, calendar_width, row + plan.dynamic_variables_.size());
      const float y = panel.at(s, t, plan.target_variable_);
      observed_[s * steps_ + t] = y;
      if (std::isfinite(y)) {
        const double z = plan.transform_target(y);
        if (std::isfinite(z)) {
          target_values_[s * steps_ + t] = static_cast<float>((z - target_scale.mean) / target_scale.deviation);
        }
      }
    }
  }
}

double FeatureTable::unscale_target(std::size_t site, double scaled) const {
  const Scaling& sc = plan_.target_scaling(site);
  return plan_.inverse_transform_target(scaled * sc.deviation + sc.mean);
}

}  // namespace libseq::data
