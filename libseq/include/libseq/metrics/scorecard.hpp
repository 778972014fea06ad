#pragma once
/// @file scorecard.hpp
/// The scorecard the batch job fills: for each (site, method, lead) one record of every applicable metric with the
/// counts of cases used and skipped, plus helpers that score per site and lead, per lead (sites pooled), per site
/// (leads pooled) and pooled over everything. Metric names are parsed here, so no caller hard-codes a list.

#include <cstddef>
#include <cstdint>
#include <map>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "libseq/metrics/bootstrap_ci.hpp"
#include "libseq/metrics/metric_value.hpp"
#include "libseq/metrics/probabilistic.hpp"

namespace libseq::metrics {

/// Every scalar metric a scorecard can hold.
enum class Metric {
  nse,              ///< Nash–Sutcliffe efficiency of the point forecast.
  kge,              ///< Kling–Gupta efficiency (Gupta et al. 2009).
  kge_r,            ///< KGE correlation component r.
  kge_alpha,        ///< KGE variability component α = σs/σo.
  kge_beta,         ///< KGE bias component β = μs/μo.
  kge_prime,        ///< Modified KGE′ (Kling et al. 2012).
  kge_prime_gamma,  ///< KGE′ variability component γ (ratio of coefficients of variation).
  pbias,            ///< Percent bias, positive = overestimation.
  rmse,             ///< Root mean squared error.
  mae,              ///< Mean absolute error.
  mape,             ///< Mean absolute percentage error (zero observations excluded).
  mase,             ///< Mean absolute scaled error (needs per-case scales).
  crps,             ///< CRPS of the predictive form (Gaussian closed form, plain ensemble, quantile set).
  crps_fair,        ///< Fair ensemble CRPS (ensembles only).
  pinball,          ///< Pinball loss averaged over the quantile levels (quantile sets only).
  interval_score,   ///< Interval score of the central interval of ScoreOptions::interval_coverage.
  coverage,         ///< Observed coverage (PICP) of that interval.
  mean_width,       ///< Mean width of that interval.
};

/// The name of a metric as used in configs, files and reports ("nse", "kge_alpha", "crps_fair", ...).
std::string to_string(Metric metric);
/// Parses a metric name (exactly as to_string writes it).
/// @throws libseq::ConfigError naming `key`, the value and every accepted name.
Metric parse_metric(std::string_view text, std::string_view key = "metric");
/// Every metric, in declaration order.
const std::vector<Metric>& all_metrics();

/// Which direction is better for a metric.
enum class Orientation {
  lower_is_better,   ///< Scores with perfect value 0 (RMSE, MAE, MAPE, MASE, CRPS, pinball, interval score).
  higher_is_better,  ///< NSE, KGE, KGE′, r (perfect value 1).
  one_is_best,       ///< Ratios α, β, γ.
  zero_is_best,      ///< PBIAS.
  nominal_is_best,   ///< Coverage: the nominal coverage of the interval.
  none,              ///< Mean width: a property, judged together with coverage.
};

/// Facts about a metric for reports and writers.
struct MetricInfo {
  std::string_view units;        ///< "1" (dimensionless), "%" or "observation units".
  Orientation orientation;       ///< Which direction is better.
  std::string_view description;  ///< One line, plain text.
};
/// Facts about `metric`.
const MetricInfo& metric_info(Metric metric);

/// The form of the probabilistic part of a set of forecasts.
enum class PredictiveForm { none, gaussian, ensemble, quantiles };
/// "none", "gaussian", "ensemble" or "quantiles".
std::string to_string(PredictiveForm form);
/// Parses a predictive form name. @throws libseq::ConfigError naming `key`, the value and the accepted names.
PredictiveForm parse_predictive_form(std::string_view text, std::string_view key = "predictive_form");

/// The forecasts and observations of one (site, method, lead), case by case (issue times), in time order.
/// Layouts as in probabilistic.hpp (members and quantiles case-major). NaN observation = missing.
struct ForecastCases {
  std::vector<double> observed;  ///< n observations.
  /// n point forecasts; when empty, the point forecast is the predictive mean (Gaussian mean, member mean) or the
  /// 0.5 quantile of a quantile set (none when 0.5 is not a level, and then no point metric is computed).
  std::vector<double> point;
  PredictiveForm form = PredictiveForm::none;  ///< Which of the fields below hold the predictive distribution.
  std::vector<double> means;                   ///< gaussian: n means.
  std::vector<double> sds;                     ///< gaussian: n standard deviations.
  std::size_t member_count = 0;                ///< ensemble: members per case.
  std::vector<double> members;                 ///< ensemble: n × member_count values.
  std::vector<double> levels;                  ///< quantiles: Q strictly increasing levels in (0, 1).
  std::vector<double> quantiles;               ///< quantiles: n × Q values.
  /// n MASE scales (naive_mae_scale of each case's training series; cases of one site share one); empty = no MASE.
  std::vector<double> mase_scales;

  /// Number of cases.
  std::size_t size() const { return observed.size(); }
  /// @throws libseq::DataError naming `what` (e.g. "site G1, method lstm, lead 3") when a field has the wrong
  /// length for the form, or the levels are invalid.
  void validate(std::string_view what) const;
  /// The point forecasts used by the deterministic metrics (see `point`); empty when there are none.
  std::vector<double> effective_point() const;
  /// A copy holding the cases `indices` (repeats allowed), in that order.
  ForecastCases subset(std::span<const std::size_t> indices) const;
  /// Appends the cases of `other` (pooling). @throws libseq::DataError naming `what` when the forms, member counts,
  /// levels or the presence of point forecasts or MASE scales differ.
  void append(const ForecastCases& other, std::string_view what);
};

/// How to score.
struct ScoreOptions {
  /// Metrics to compute; empty = every metric applicable to the forecasts given.
  std::vector<Metric> metrics;
  /// Nominal coverage of the central interval for interval_score, coverage and mean_width. For a quantile set the
  /// levels (1 ∓ coverage)/2 must be present (within 1e-9), else those metrics are not computed; for an ensemble
  /// the bounds are sample quantiles of the members (Hyndman & Fan definition 7).
  double interval_coverage = 0.9;
  /// Bins of the PIT histogram.
  std::size_t pit_bins = 10;
  /// Seed of the randomised ensemble PIT.
  std::uint64_t pit_seed = 0;
  /// When set, every computed metric also gets a moving-block bootstrap interval (costs resamples × one scoring).
  std::optional<BootstrapOptions> bootstrap;

  /// @throws libseq::ConfigError listing every broken rule (key, value, expectation).
  void validate() const;
};

/// The lead value of a record pooled over leads.
inline constexpr std::int64_t pooled_lead = -1;
/// The site value of a record pooled over sites.
inline constexpr std::string_view pooled_site = "*";

/// All metrics of one (site, method, lead).
struct ScoreRecord {
  std::string site;                                ///< Site id, or pooled_site.
  std::string method;                              ///< Model or baseline name.
  std::int64_t lead = 0;                           ///< Lead time in time steps, or pooled_lead.
  std::size_t cases = 0;                           ///< Cases offered.
  std::size_t missing_observation = 0;             ///< Of those, cases with a missing observation.
  std::map<Metric, MetricValue> values;            ///< The applicable metrics computed, each with its counts.
  std::map<Metric, ConfidenceInterval> intervals;  ///< Bootstrap intervals, when requested.
  PitHistogram pit;                                ///< PIT histogram (empty counts without a predictive form).
  std::vector<ReliabilityRow> reliability;         ///< Per quantile level (quantile sets only).

  /// The value of `metric`, or NaN when it was not computed.
  double value(Metric metric) const;
};

/// Value of one metric on a set of cases, or empty when it does not apply to them (e.g. crps_fair of a Gaussian,
/// MASE without scales).
/// @throws libseq::DataError from cases.validate().
std::optional<MetricValue> compute_metric(Metric metric, const ForecastCases& cases, const ScoreOptions& options);

/// Scores one set of cases into a record (site, method and lead left empty/0).
/// @throws libseq::ConfigError from options.validate(); libseq::DataError from cases.validate().
ScoreRecord score_cases(const ForecastCases& cases, const ScoreOptions& options);

/// Moving-block bootstrap interval of one metric on one set of cases. NaN bounds when the metric does not apply.
ConfidenceInterval bootstrap_metric(Metric metric, const ForecastCases& cases, const ScoreOptions& options,
                                    const BootstrapOptions& bootstrap);

/// The forecasts of one (site, method, lead), as the batch job hands them over.
struct ScoreInput {
  std::string site;       ///< Site id.
  std::string method;     ///< Model or baseline name.
  std::int64_t lead = 0;  ///< Lead time in time steps (≥ 0).
  ForecastCases cases;    ///< The cases, in time order.
};

/// The records of a scoring run, in the order added. Not thread-safe for concurrent add().
class Scorecard {
 public:
  /// Appends a record.
  void add(ScoreRecord record) { records_.push_back(std::move(record)); }
  /// Every record.
  const std::vector<ScoreRecord>& records() const { return records_; }
  /// The record of (site, method, lead), or nullptr.
  const ScoreRecord* find(std::string_view site, std::string_view method, std::int64_t lead) const;

 private:
  std::vector<ScoreRecord> records_;
};

/// One record per input (site, method, lead); inputs sharing all three are pooled into one record.
Scorecard score_per_site_and_lead(std::span<const ScoreInput> inputs, const ScoreOptions& options);
/// One record per (method, lead), the cases of all sites concatenated (site = pooled_site).
Scorecard score_per_lead(std::span<const ScoreInput> inputs, const ScoreOptions& options);
/// One record per (site, method), the cases of all leads concatenated (lead = pooled_lead).
Scorecard score_per_site(std::span<const ScoreInput> inputs, const ScoreOptions& options);
/// One record per method, all sites and leads concatenated (site = pooled_site, lead = pooled_lead). Pooled NSE and
/// KGE compare against the mean of the pooled observations, so sites with large flows dominate; read per-site
/// records for a like-for-like view.
Scorecard score_pooled(std::span<const ScoreInput> inputs, const ScoreOptions& options);

}  // namespace libseq::metrics
