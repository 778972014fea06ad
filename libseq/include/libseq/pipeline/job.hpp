#pragma once
/// @file job.hpp
/// A batch job as read from its TOML file: every section of docs/config.md mapped onto the library's own options
/// structs. Parsing validates everything before any work starts and reports every problem at once, each naming its
/// key; the configuration reference (docs/config.md) is generated from the same code (config_reference()).

#include <cstdint>
#include <filesystem>
#include <string>
#include <string_view>
#include <vector>

#include "libseq/baselines/climatology.hpp"
#include "libseq/baselines/exp_smoothing.hpp"
#include "libseq/baselines/ridge_arx.hpp"
#include "libseq/data/features.hpp"
#include "libseq/data/periods.hpp"
#include "libseq/data/windows.hpp"
#include "libseq/nn/network.hpp"
#include "libseq/train/trainer.hpp"
#include "libseq/uncertainty/resample.hpp"

namespace libseq::pipeline {

/// Whether each site gets its own models or one model is trained across all sites.
enum class ModelScope { per_site, across_sites };
std::string to_string(ModelScope scope);

/// How the network's intervals are calibrated on the calibration period.
enum class CalibrationMethod {
  none,             ///< the ensemble's own quantiles
  split_conformal,  ///< conformalized quantile regression on the interval bounds (Romano et al. 2019)
  adaptive          ///< as split_conformal, then adaptive conformal inference through the test period
};
std::string to_string(CalibrationMethod method);

/// The scale on which conformity scores are computed and interval bounds widened or narrowed.
enum class CalibrationScale {
  transformed,  ///< the target transform's scale (log, sqrt, Box-Cox): a relative adjustment of the bounds
  target        ///< the target's own units: the same additive adjustment at every flow
};
std::string to_string(CalibrationScale scale);

/// Whether each lead time gets its own calibration or all leads share one.
enum class CalibrationLeads {
  automatic,  ///< per lead when every lead has calibration.min_cases_per_lead cases, else pooled
  each,       ///< always per lead
  pooled      ///< always one calibration over all leads
};
std::string to_string(CalibrationLeads leads);

/// Everything a job asks for.
struct JobConfig {
  std::string name = "runnel job";
  std::string title;    ///< ACDD title of the outputs
  std::string summary;  ///< ACDD summary of the outputs
  std::uint64_t seed = 1;
  int threads = 0;  ///< 0 = all available

  std::vector<std::filesystem::path> files;                ///< resolved against the job file's folder
  std::vector<std::string> sites;                          ///< empty = all
  std::vector<std::pair<std::string, std::string>> units;  ///< variable → units to convert to

  data::FeatureOptions features;
  data::WindowOptions windows;
  data::JobPeriods periods;

  ModelScope scope = ModelScope::across_sites;
  nn::NetworkOptions network;  ///< input/static sizes and horizon are filled in by the run from the features
  train::TrainOptions training;
  std::size_t members = 4;
  uncertainty::ResampleOptions resampling;
  std::size_t mc_passes = 0;  ///< MC-dropout passes per member at prediction; 0 = deterministic members

  CalibrationMethod calibration = CalibrationMethod::split_conformal;
  double adaptive_step = 0.005;
  CalibrationScale calibration_scale = CalibrationScale::transformed;
  CalibrationLeads calibration_leads = CalibrationLeads::automatic;
  std::size_t calibration_min_cases = 100;  ///< per lead, for CalibrationLeads::automatic

  std::vector<baselines::BaselineKind> baselines;
  std::size_t seasonal_period = 0;         ///< steps; 0 = one day of steps (sub-daily) or 365 (daily)
  std::size_t second_seasonal_period = 0;  ///< steps; 0 = one week of steps (sub-daily) or none
  std::size_t naive_period = 0;            ///< steps of seasonal_naive; 0 = seasonal_period
  baselines::RidgeArxOptions ridge;
  baselines::ClimatologyOptions climatology;
  baselines::SmoothingModel smoothing = baselines::SmoothingModel::holt;

  std::vector<double> quantiles = {0.05, 0.1, 0.25, 0.5, 0.75, 0.9, 0.95};
  std::vector<double> intervals = {0.8, 0.9};  ///< central interval coverages scored and calibrated
  std::vector<std::string> metrics;            ///< empty = all applicable
  std::size_t bootstrap_resamples = 0;

  std::filesystem::path output_directory = "runnel-output";
  bool write_hdf5 = true;
  bool write_netcdf = true;
  bool write_geojson = true;
  bool write_report = true;
  bool keep_members = false;

  std::string job_text;  ///< the file, verbatim
  std::filesystem::path job_path;
};

/// Parses and validates a job. `path` names it in messages and anchors relative paths.
/// @throws libseq::ConfigError listing every problem, each naming its key.
JobConfig parse_job(std::string_view text, const std::filesystem::path& path);

/// Reads and parses a job file. @throws libseq::IoError when it cannot be read; ConfigError as parse_job.
JobConfig load_job(const std::filesystem::path& path);

/// The configuration reference in Markdown, generated from the parser (docs/config.md is this text).
std::string config_reference();

/// A commented starter job for `kind` ("hydrology" or "load"). @throws libseq::ConfigError for another kind.
std::string example_job(std::string_view kind);

/// The example kinds example_job accepts.
std::vector<std::string> example_kinds();

}  // namespace libseq::pipeline
