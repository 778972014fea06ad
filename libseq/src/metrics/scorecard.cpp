#include "libseq/metrics/scorecard.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <utility>

#include "libseq/error.hpp"
#include "libseq/metrics/deterministic.hpp"
#include "libseq/metrics/distributions.hpp"
#include "metrics/checks_impl.hpp"

namespace libseq::metrics {

namespace {

using detail::nan;

struct MetricEntry {
  Metric metric;
  std::string_view name;
  MetricInfo info;
};

// The one table of metric names; parse_metric, to_string and metric_info all read it.
const std::array<MetricEntry, 18>& metric_table() {
  static const std::array<MetricEntry, 18> table{{
      {Metric::nse, "nse", {"1", Orientation::higher_is_better, "Nash-Sutcliffe efficiency of the point forecast"}},
      {Metric::kge, "kge", {"1", Orientation::higher_is_better, "Kling-Gupta efficiency (Gupta et al. 2009)"}},
      {Metric::kge_r, "kge_r", {"1", Orientation::higher_is_better, "KGE correlation component r"}},
      {Metric::kge_alpha, "kge_alpha", {"1", Orientation::one_is_best, "KGE variability ratio sd_sim/sd_obs"}},
      {Metric::kge_beta, "kge_beta", {"1", Orientation::one_is_best, "KGE bias ratio mean_sim/mean_obs"}},
      {Metric::kge_prime, "kge_prime", {"1", Orientation::higher_is_better, "modified KGE (Kling et al. 2012)"}},
      {Metric::kge_prime_gamma,
       "kge_prime_gamma",
       {"1", Orientation::one_is_best, "KGE' ratio of coefficients of variation"}},
      {Metric::pbias, "pbias", {"%", Orientation::zero_is_best, "percent bias, positive = overestimation"}},
      {Metric::rmse, "rmse", {"observation units", Orientation::lower_is_better, "root mean squared error"}},
      {Metric::mae, "mae", {"observation units", Orientation::lower_is_better, "mean absolute error"}},
      {Metric::mape,
       "mape",
       {"%", Orientation::lower_is_better, "mean absolute percentage error, zero observations excluded"}},
      {Metric::mase,
       "mase",
       {"1", Orientation::lower_is_better, "mean absolute scaled error (Hyndman & Koehler 2006)"}},
      {Metric::crps,
       "crps",
       {"observation units", Orientation::lower_is_better, "continuous ranked probability score"}},
      {Metric::crps_fair,
       "crps_fair",
       {"observation units", Orientation::lower_is_better, "fair ensemble CRPS (Ferro 2014)"}},
      {Metric::pinball,
       "pinball",
       {"observation units", Orientation::lower_is_better, "pinball loss averaged over the quantile levels"}},
      {Metric::interval_score,
       "interval_score",
       {"observation units", Orientation::lower_is_better,
        "interval score of the central interval (Gneiting & Raftery 2007)"}},
      {Metric::coverage,
       "coverage",
       {"1", Orientation::nominal_is_best, "fraction of observations inside the central interval"}},
      {Metric::mean_width,
       "mean_width",
       {"observation units", Orientation::none, "mean width of the central interval"}},
  }};
  return table;
}

const MetricEntry& entry_of(Metric metric) {
  for (const auto& entry : metric_table()) {
    if (entry.metric == metric) return entry;
  }
  throw ConfigError("metric: unknown enumerator " + std::to_string(static_cast<int>(metric)));
}

std::string describe(std::string_view what) { return what.empty() ? std::string("forecast cases") : std::string(what); }

void require_length(std::string_view what, const char* field, std::size_t actual, std::size_t expected) {
  if (actual != expected) {
    throw DataError(describe(what) + ": '" + field + "' has " + std::to_string(actual) + " values; expected " +
                    std::to_string(expected));
  }
}

// Bounds of the central interval of nominal coverage c, per case, or empty when the form cannot give them.
std::optional<std::pair<std::vector<double>, std::vector<double>>> central_interval(const ForecastCases& cases,
                                                                                    double c) {
  const std::size_t n = cases.size();
  std::vector<double> lower(n, nan), upper(n, nan);
  const double p_lower = (1.0 - c) / 2.0, p_upper = (1.0 + c) / 2.0;
  switch (cases.form) {
    case PredictiveForm::none:
      return std::nullopt;
    case PredictiveForm::gaussian: {
      const double z = normal_quantile(p_upper);
      for (std::size_t i = 0; i < n; ++i) {
        if (std::isfinite(cases.means[i]) && std::isfinite(cases.sds[i]) && cases.sds[i] >= 0.0) {
          lower[i] = cases.means[i] - z * cases.sds[i];
          upper[i] = cases.means[i] + z * cases.sds[i];
        }
      }
      break;
    }
    case PredictiveForm::ensemble: {
      std::vector<double> finite;
      for (std::size_t i = 0; i < n; ++i) {
        finite.clear();
        for (std::size_t k = 0; k < cases.member_count; ++k) {
          const double x = cases.members[i * cases.member_count + k];
          if (std::isfinite(x)) finite.push_back(x);
        }
        if (finite.empty()) continue;
        lower[i] = sample_quantile(finite, p_lower);
        upper[i] = sample_quantile(finite, p_upper);
      }
      break;
    }
    case PredictiveForm::quantiles: {
      const auto find = [&](double p) -> std::optional<std::size_t> {
        for (std::size_t k = 0; k < cases.levels.size(); ++k) {
          if (std::abs(cases.levels[k] - p) < 1e-9) return k;
        }
        return std::nullopt;
      };
      const auto k_lower = find(p_lower), k_upper = find(p_upper);
      if (!k_lower || !k_upper) return std::nullopt;
      const std::size_t q = cases.levels.size();
      for (std::size_t i = 0; i < n; ++i) {
        lower[i] = cases.quantiles[i * q + *k_lower];
        upper[i] = cases.quantiles[i * q + *k_upper];
      }
      break;
    }
  }
  return std::make_pair(std::move(lower), std::move(upper));
}

std::vector<double> pit_of(const ForecastCases& cases, std::uint64_t seed) {
  switch (cases.form) {
    case PredictiveForm::gaussian:
      return pit_gaussian(cases.observed, cases.means, cases.sds);
    case PredictiveForm::ensemble:
      return pit_ensemble(cases.observed, cases.members, cases.member_count, seed);
    case PredictiveForm::quantiles:
      return pit_quantiles(cases.observed, cases.levels, cases.quantiles);
    case PredictiveForm::none:
      break;
  }
  return {};
}

}  // namespace

std::string to_string(Metric metric) { return std::string(entry_of(metric).name); }

Metric parse_metric(std::string_view text, std::string_view key) {
  std::string names;
  for (const auto& entry : metric_table()) {
    if (entry.name == text) return entry.metric;
    names += (names.empty() ? "" : ", ") + std::string(entry.name);
  }
  throw ConfigError("'" + std::string(key) + "' is '" + std::string(text) + "'; expected one of: " + names);
}

const std::vector<Metric>& all_metrics() {
  static const std::vector<Metric> metrics = [] {
    std::vector<Metric> list;
    for (const auto& entry : metric_table()) list.push_back(entry.metric);
    return list;
  }();
  return metrics;
}

const MetricInfo& metric_info(Metric metric) { return entry_of(metric).info; }

std::string to_string(PredictiveForm form) {
  switch (form) {
    case PredictiveForm::none:
      return "none";
    case PredictiveForm::gaussian:
      return "gaussian";
    case PredictiveForm::ensemble:
      return "ensemble";
    case PredictiveForm::quantiles:
      return "quantiles";
  }
  return "none";
}

PredictiveForm parse_predictive_form(std::string_view text, std::string_view key) {
  for (PredictiveForm form :
       {PredictiveForm::none, PredictiveForm::gaussian, PredictiveForm::ensemble, PredictiveForm::quantiles}) {
    if (to_string(form) == text) return form;
  }
  throw ConfigError("'" + std::string(key) + "' is '" + std::string(text) +
                    "'; expected one of: none, gaussian, ensemble, quantiles");
}

// --- ForecastCases -----------------------------------------------------------------------------------------------

void ForecastCases::validate(std::string_view what) const {
  const std::size_t n = observed.size();
  if (!point.empty()) require_length(what, "point", point.size(), n);
  if (!mase_scales.empty()) require_length(what, "mase_scales", mase_scales.size(), n);
  switch (form) {
    case PredictiveForm::none:
      break;
    case PredictiveForm::gaussian:
      require_length(what, "means", means.size(), n);
      require_length(what, "sds", sds.size(), n);
      break;
    case PredictiveForm::ensemble:
      if (member_count == 0) throw DataError(describe(what) + ": 'member_count' is 0; expected at least 1 member");
      require_length(what, "members", members.size(), n * member_count);
      break;
    case PredictiveForm::quantiles:
      detail::require_valid_levels(describe(what), levels);
      require_length(what, "quantiles", quantiles.size(), n * levels.size());
      break;
  }
}

std::vector<double> ForecastCases::effective_point() const {
  if (!point.empty()) return point;
  const std::size_t n = observed.size();
  switch (form) {
    case PredictiveForm::none:
      return {};
    case PredictiveForm::gaussian:
      return means;
    case PredictiveForm::ensemble: {
      std::vector<double> mean(n, nan);
      for (std::size_t i = 0; i < n; ++i) {
        double sum = 0.0;
        std::size_t finite = 0;
        for (std::size_t k = 0; k < member_count; ++k) {
          const double x = members[i * member_count + k];
          if (std::isfinite(x)) {
            sum += x;
            ++finite;
          }
        }
        if (finite > 0) mean[i] = sum / static_cast<double>(finite);
      }
      return mean;
    }
    case PredictiveForm::quantiles:
      for (std::size_t k = 0; k < levels.size(); ++k) {
        if (std::abs(levels[k] - 0.5) < 1e-9) {
          std::vector<double> median(n);
          for (std::size_t i = 0; i < n; ++i) median[i] = quantiles[i * levels.size() + k];
          return median;
        }
      }
      return {};
  }
  return {};
}

ForecastCases ForecastCases::subset(std::span<const std::size_t> indices) const {
  ForecastCases out;
  out.form = form;
  out.member_count = member_count;
  out.levels = levels;
  const std::size_t q = levels.size();
  for (std::size_t i : indices) {
    out.observed.push_back(observed[i]);
    if (!point.empty()) out.point.push_back(point[i]);
    if (!mase_scales.empty()) out.mase_scales.push_back(mase_scales[i]);
    if (form == PredictiveForm::gaussian) {
      out.means.push_back(means[i]);
      out.sds.push_back(sds[i]);
    } else if (form == PredictiveForm::ensemble) {
      out.members.insert(out.members.end(), members.begin() + static_cast<std::ptrdiff_t>(i * member_count),
                         members.begin() + static_cast<std::ptrdiff_t>((i + 1) * member_count));
    } else if (form == PredictiveForm::quantiles) {
      out.quantiles.insert(out.quantiles.end(), quantiles.begin() + static_cast<std::ptrdiff_t>(i * q),
                           quantiles.begin() + static_cast<std::ptrdiff_t>((i + 1) * q));
    }
  }
  return out;
}

void ForecastCases::append(const ForecastCases& other, std::string_view what) {
  if (observed.empty() && point.empty() && mase_scales.empty() && means.empty() && members.empty() &&
      quantiles.empty()) {
    *this = other;
    return;
  }
  const auto refuse = [&](const std::string& why) {
    throw DataError(describe(what) + ": cannot pool these cases: " + why);
  };
  if (form != other.form) refuse("predictive forms differ (" + to_string(form) + " vs " + to_string(other.form) + ")");
  if (member_count != other.member_count) refuse("member counts differ");
  if (levels != other.levels) refuse("quantile levels differ");
  if (point.empty() != other.point.empty()) refuse("only some have point forecasts");
  if (mase_scales.empty() != other.mase_scales.empty()) refuse("only some have MASE scales");
  observed.insert(observed.end(), other.observed.begin(), other.observed.end());
  point.insert(point.end(), other.point.begin(), other.point.end());
  mase_scales.insert(mase_scales.end(), other.mase_scales.begin(), other.mase_scales.end());
  means.insert(means.end(), other.means.begin(), other.means.end());
  sds.insert(sds.end(), other.sds.begin(), other.sds.end());
  members.insert(members.end(), other.members.begin(), other.members.end());
  quantiles.insert(quantiles.end(), other.quantiles.begin(), other.quantiles.end());
}

// --- Options -----------------------------------------------------------------------------------------------------

void ScoreOptions::validate() const {
  std::string problems;
  auto add = [&](const std::string& text) { problems += (problems.empty() ? "" : "; ") + text; };
  if (!(interval_coverage > 0.0 && interval_coverage < 1.0)) {
    char buffer[64];
    std::snprintf(buffer, sizeof buffer, "%.17g", interval_coverage);
    add(std::string("'interval_coverage' is ") + buffer + "; expected a value strictly between 0 and 1");
  }
  if (pit_bins == 0) add("'pit_bins' is 0; expected at least 1 bin");
  if (bootstrap) {
    try {
      bootstrap->validate();
    } catch (const ConfigError& e) {
      add(e.what());
    }
  }
  if (!problems.empty()) throw ConfigError("score options: " + problems);
}

// --- Scoring -----------------------------------------------------------------------------------------------------

double ScoreRecord::value(Metric metric) const {
  const auto it = values.find(metric);
  return it == values.end() ? nan : it->second.value;
}

std::optional<MetricValue> compute_metric(Metric metric, const ForecastCases& cases, const ScoreOptions& options) {
  cases.validate("");
  const auto& obs = cases.observed;
  const auto point_metric = [&](auto&& function) -> std::optional<MetricValue> {
    const auto point = cases.effective_point();
    if (point.empty()) return std::nullopt;
    return function(obs, point);
  };
  const auto kge_part = [&](double KgeResult::*member) -> std::optional<MetricValue> {
    const auto point = cases.effective_point();
    if (point.empty()) return std::nullopt;
    const KgeResult result = kge(obs, point);
    return MetricValue{result.*member, result.counts};
  };
  const auto interval_part = [&](int which) -> std::optional<MetricValue> {
    const auto bounds = central_interval(cases, options.interval_coverage);
    if (!bounds) return std::nullopt;
    if (which == 0) return interval_score(obs, bounds->first, bounds->second, 1.0 - options.interval_coverage);
    const CoverageResult result = coverage(obs, bounds->first, bounds->second);
    return MetricValue{which == 1 ? result.coverage : result.mean_width, result.counts};
  };
  switch (metric) {
    case Metric::nse:
      return point_metric([](auto o, auto s) { return nse(o, s); });
    case Metric::kge:
      return kge_part(&KgeResult::value);
    case Metric::kge_r:
      return kge_part(&KgeResult::r);
    case Metric::kge_alpha:
      return kge_part(&KgeResult::alpha);
    case Metric::kge_beta:
      return kge_part(&KgeResult::beta);
    case Metric::kge_prime:
    case Metric::kge_prime_gamma: {
      const auto point = cases.effective_point();
      if (point.empty()) return std::nullopt;
      const KgePrimeResult result = kge_prime(obs, point);
      return MetricValue{metric == Metric::kge_prime ? result.value : result.gamma, result.counts};
    }
    case Metric::pbias:
      return point_metric([](auto o, auto s) { return pbias(o, s); });
    case Metric::rmse:
      return point_metric([](auto o, auto s) { return rmse(o, s); });
    case Metric::mae:
      return point_metric([](auto o, auto s) { return mae(o, s); });
    case Metric::mape:
      return point_metric([](auto o, auto s) { return mape(o, s); });
    case Metric::mase: {
      if (cases.mase_scales.empty()) return std::nullopt;
      const auto point = cases.effective_point();
      if (point.empty()) return std::nullopt;
      return mase(obs, point, cases.mase_scales);
    }
    case Metric::crps:
      switch (cases.form) {
        case PredictiveForm::none:
          return std::nullopt;
        case PredictiveForm::gaussian:
          return crps_gaussian(obs, cases.means, cases.sds);
        case PredictiveForm::ensemble:
          return crps_ensemble(obs, cases.members, cases.member_count, EnsembleCrps::plain);
        case PredictiveForm::quantiles:
          return crps_quantiles(obs, cases.levels, cases.quantiles);
      }
      return std::nullopt;
    case Metric::crps_fair:
      if (cases.form != PredictiveForm::ensemble || cases.member_count < 2) return std::nullopt;
      return crps_ensemble(obs, cases.members, cases.member_count, EnsembleCrps::fair);
    case Metric::pinball: {
      if (cases.form != PredictiveForm::quantiles) return std::nullopt;
      // (1/Q)·Σ_k pinball_k per case, averaged over cases: exactly half the quantile-set CRPS of crps_quantiles.
      MetricValue result = crps_quantiles(obs, cases.levels, cases.quantiles);
      result.value /= 2.0;
      return result;
    }
    case Metric::interval_score:
      return interval_part(0);
    case Metric::coverage:
      return interval_part(1);
    case Metric::mean_width:
      return interval_part(2);
  }
  return std::nullopt;
}

ConfidenceInterval bootstrap_metric(Metric metric, const ForecastCases& cases, const ScoreOptions& options,
                                    const BootstrapOptions& bootstrap) {
  bootstrap.validate();
  if (!compute_metric(metric, cases, options) || cases.size() < bootstrap.block_length) {
    ConfidenceInterval none;
    none.confidence = bootstrap.confidence;
    none.block_length = bootstrap.block_length;
    return none;
  }
  const auto statistic = [&](std::span<const std::size_t> indices) {
    const auto value = compute_metric(metric, cases.subset(indices), options);
    return value ? value->value : nan;
  };
  return bootstrap_ci(cases.size(), statistic, bootstrap);
}

ScoreRecord score_cases(const ForecastCases& cases, const ScoreOptions& options) {
  options.validate();
  cases.validate("");
  ScoreRecord record;
  record.cases = cases.size();
  record.missing_observation = static_cast<std::size_t>(
      std::count_if(cases.observed.begin(), cases.observed.end(), [](double v) { return !std::isfinite(v); }));
  const std::vector<Metric>& wanted = options.metrics.empty() ? all_metrics() : options.metrics;
  for (Metric metric : wanted) {
    if (auto value = compute_metric(metric, cases, options)) {
      record.values[metric] = *value;
      if (options.bootstrap) record.intervals[metric] = bootstrap_metric(metric, cases, options, *options.bootstrap);
    }
  }
  if (cases.form != PredictiveForm::none) record.pit = pit_histogram(pit_of(cases, options.pit_seed), options.pit_bins);
  if (cases.form == PredictiveForm::quantiles) {
    record.reliability = reliability_table(cases.observed, cases.levels, cases.quantiles);
  }
  return record;
}

// --- Scorecard ---------------------------------------------------------------------------------------------------

const ScoreRecord* Scorecard::find(std::string_view site, std::string_view method, std::int64_t lead) const {
  for (const auto& record : records_) {
    if (record.site == site && record.method == method && record.lead == lead) return &record;
  }
  return nullptr;
}

namespace {

std::string label_of(const ScoreInput& input) {
  return "site " + input.site + ", method " + input.method + ", lead " + std::to_string(input.lead);
}

// Pools the inputs by a key (site, method, lead with pooled parts replaced), keeping first-appearance order.
Scorecard score_grouped(std::span<const ScoreInput> inputs, const ScoreOptions& options, bool pool_sites,
                        bool pool_leads) {
  options.validate();
  std::vector<ScoreInput> groups;
  for (const auto& input : inputs) {
    input.cases.validate(label_of(input));
    const std::string site = pool_sites ? std::string(pooled_site) : input.site;
    const std::int64_t lead = pool_leads ? pooled_lead : input.lead;
    auto it = std::find_if(groups.begin(), groups.end(), [&](const ScoreInput& group) {
      return group.site == site && group.method == input.method && group.lead == lead;
    });
    if (it == groups.end()) {
      groups.push_back(ScoreInput{site, input.method, lead, {}});
      it = groups.end() - 1;
    }
    it->cases.append(input.cases, label_of(input));
  }
  Scorecard card;
  for (const auto& group : groups) {
    ScoreRecord record = score_cases(group.cases, options);
    record.site = group.site;
    record.method = group.method;
    record.lead = group.lead;
    card.add(std::move(record));
  }
  return card;
}

}  // namespace

Scorecard score_per_site_and_lead(std::span<const ScoreInput> inputs, const ScoreOptions& options) {
  return score_grouped(inputs, options, false, false);
}
Scorecard score_per_lead(std::span<const ScoreInput> inputs, const ScoreOptions& options) {
  return score_grouped(inputs, options, true, false);
}
Scorecard score_per_site(std::span<const ScoreInput> inputs, const ScoreOptions& options) {
  return score_grouped(inputs, options, false, true);
}
Scorecard score_pooled(std::span<const ScoreInput> inputs, const ScoreOptions& options) {
  return score_grouped(inputs, options, true, true);
}

}  // namespace libseq::metrics
