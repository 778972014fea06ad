#pragma once
/// @file operational.hpp
/// Operational use of a job: `fit_job` trains the job's models once and stores everything a forecast needs (the
/// job, the fitted feature plan, every ensemble member, the interval calibrators) in ONE model bundle file;
/// `forecast_from_bundle` reads that bundle and the latest data and issues calibrated quantile forecasts at a given
/// time without retraining. The bundle layout is docs/bundle-format.md; the commands are docs/commands/fit.md and
/// docs/commands/forecast.md.

#include <cstdint>
#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include "libseq/data/panel.hpp"
#include "libseq/io/results.hpp"
#include "libseq/pipeline/job.hpp"
#include "libseq/pipeline/run.hpp"

namespace libseq::pipeline {

/// Value of the bundle's text entry "bundle.kind" that marks a bundle of a whole job (a single-network bundle of
/// train::save_model has "model.kind" instead).
inline constexpr const char* job_bundle_kind = "runnel-job-bundle";
/// Version of the job-bundle layout (docs/bundle-format.md); forecast_from_bundle refuses other versions.
inline constexpr int job_bundle_layout_version = 1;

/// What fit_job produced.
struct FitSummary {
  std::filesystem::path bundle;              ///< the bundle written
  std::size_t models_trained = 0;            ///< models stored in the bundle
  std::vector<io::TrainingRecord> training;  ///< one record per member of every model, as run_job records them
  std::vector<std::string> calibration;      ///< one line per model and interval: n, Q per lead
  std::vector<std::string> warnings;         ///< skipped models, diverged members, missing calibration
  double wall_seconds = 0.0;

  /// A few lines: models, members, warnings, where the bundle is.
  std::string brief_report() const;
};

/// Trains the models of `job` exactly as run_job does (same panel, feature plan, windows, ensemble options and
/// seeds: detail::ensemble_options_for and detail::model_seed), fits the interval calibrators on the calibration
/// period (when the job calibrates), and writes one model bundle to `bundle_path` (empty: `model.h5` in the job's
/// output directory), atomically (io::save_bundle). Nothing of the test period is used; baselines are not fitted.
/// `options.threads` and `options.seed` override the job as in run_job; `options.resume` is ignored; progress is
/// reported with the stages "reading", "training", "writing".
/// Thread-safety: sets the OpenMP thread count of the process (as run_job).
/// @throws libseq::ConfigError when the periods do not fit the data; libseq::IoError / FormatError / DataError
///         from reading the data or writing the bundle.
FitSummary fit_job(const JobConfig& job, const RunOptions& options = {}, const std::filesystem::path& bundle_path = {});

/// The forecast of one site: one row per lead.
struct SiteForecast {
  data::SiteInfo site;
  std::vector<std::int64_t> leads;            ///< leads in steps (1..horizon; 0 in simulation mode)
  std::vector<data::UtcSeconds> valid_times;  ///< issue time + lead × step
  std::vector<double> mean;                   ///< per lead, target units
  std::vector<double> median;                 ///< per lead, target units
  std::vector<double> quantiles;              ///< leads × levels, target units, calibrated where the bundle says
};

/// An operational forecast issued from a bundle.
struct ForecastResult {
  data::UtcSeconds issue_time = 0;
  std::int64_t step_seconds = 0;
  std::vector<double> quantile_levels;
  std::string target_variable;
  std::string target_units;
  std::string target_standard_name;
  std::string mode;                            ///< "forecast" or "simulation"
  bool calibrated = false;                     ///< whether stored interval calibration was applied
  std::vector<SiteForecast> sites;             ///< bundle sites present in the data, in the data's order
  std::vector<std::string> warnings;           ///< sites left out, sites without recent observations, ...
  std::vector<std::filesystem::path> outputs;  ///< files written
  std::string job_name;
  std::filesystem::path bundle;

  /// A few lines: issue time, sites, leads, warnings, outputs.
  std::string brief_report() const;
};

/// Options of an operational forecast.
struct ForecastOptions {
  std::optional<int> threads;                   ///< OpenMP threads; empty: the job's setting (0 = all cores)
  std::optional<std::filesystem::path> csv;     ///< write the forecast as CSV here (write_forecast_csv)
  std::optional<std::filesystem::path> netcdf;  ///< write the forecast as CF NetCDF-4 here (write_forecast_netcdf)
};

/// Issues a forecast at `issue_time` (UTC seconds; the last step whose data the forecast may use) for leads
/// 1..`horizon` from the bundle written by fit_job and the data files `data` (any format io::read_panel reads; the
/// same variables as the job; files of one call must share the time axis and hold distinct sites). The stored
/// feature plan is restored on the new data (data::FeaturePlan::restore), one issue window per site of the bundle
/// present in the data is built (data::make_issue_windows on the data's axis, extended past its end when the lead
/// steps are not covered, so calendar features of the target steps are as in the hindcast), the stored members
/// predict (MC passes as the job said, seed job.seed + 17 as the hindcast's test predictions), members are mixed
/// and mapped to target units (detail::to_target_units), and the stored split-conformal calibrators are applied
/// to each interval, followed by the crossing repair of run_job. A job calibrated with `adaptive` is served with
/// its split-conformal starting point (the adaptive state depends on outcomes after the bundle was written).
/// Missing recent inputs are presented as the batcher does (0, the scaled mean); a site whose target is missing
/// over the whole lookback gets a warning, a bundle site absent from the data gets a warning.
/// Writes the outputs named in `options`, each atomically, with the caution text.
/// Thread-safety: sets the OpenMP thread count of the process.
/// @throws libseq::ConfigError when `horizon` is 0 or above the bundle's horizon (naming both), or when the issue
///         time is not on the data's time grid, after its end, or without `lookback` steps of data before it;
///         libseq::FormatError when `bundle` is not a runnel job bundle or an entry is missing or malformed
///         (naming the file and the entry); libseq::IoError / FormatError / DataError from reading the data (a
///         missing variable is named with its file) or writing the outputs; libseq::DataError when no site of the
///         bundle is in the data or the data's time step differs from the bundle's.
ForecastResult forecast_from_bundle(const std::filesystem::path& bundle, const std::vector<std::filesystem::path>& data,
                                    data::UtcSeconds issue_time, std::size_t horizon,
                                    const ForecastOptions& options = {});

/// Writes `forecast` as CSV: a `# ` comment line with the caution text, one with the bundle and issue time, then a
/// header `site_id,issue_time,valid_time,lead,mean,median,q_<level>...` (levels as %g, e.g. q_0.05) and one row per
/// site and lead (times ISO 8601 UTC, values %.9g, NaN as empty). Atomic (temporary file and rename).
/// @throws libseq::IoError naming the path.
void write_forecast_csv(const std::filesystem::path& path, const ForecastResult& forecast);

/// Writes `forecast` as a CF-1.8 timeSeries NetCDF-4 file through io::write_results_netcdf with one issue time per
/// site and the method "network" (the caution text is its `caution` global attribute). Atomic.
/// @throws libseq::IoError naming the path; libseq::DataError when the forecast is inconsistent.
void write_forecast_netcdf(const std::filesystem::path& path, const ForecastResult& forecast);

}  // namespace libseq::pipeline
