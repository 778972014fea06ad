#pragma once
/// @file run.hpp
/// The batch hindcast job: read the files, fit features on the fit period, train an ensemble per model (per site
/// or across sites), calibrate its intervals on the calibration period, run the baselines on the same windows,
/// score everything on the test period, and write the results (HDF5, CF NetCDF, GeoJSON, HTML report).

#include <cstdint>
#include <filesystem>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "libseq/io/results.hpp"
#include "libseq/pipeline/job.hpp"

namespace libseq::pipeline {

/// A progress event of a long run: `done` of `total` units of `stage` finished.
struct Progress {
  std::string stage;   ///< "reading", "training", "baselines", "scoring", "writing"
  std::string detail;  ///< e.g. the model being trained
  std::size_t done = 0;
  std::size_t total = 0;
  double elapsed_seconds = 0.0;
};

/// Overrides and hooks of one run.
struct RunOptions {
  std::optional<int> threads;          ///< overrides job.threads
  std::optional<std::uint64_t> seed;   ///< overrides job.seed
  /// Resume a killed run: models whose checkpoint exists in the output folder are not trained again.
  bool resume = false;
  /// Called from the calling thread between units of work; may be empty.
  std::function<void(const Progress&)> progress;
};

/// What a run produced.
struct RunSummary {
  io::RunResults results;
  std::vector<std::filesystem::path> outputs;  ///< files written
  std::size_t models_trained = 0;
  std::size_t models_resumed = 0;
  double wall_seconds = 0.0;

  /// A few lines: sites, methods, where the outputs are.
  std::string brief_report() const;
  /// The per-site table: for each site and method the pooled NSE, KGE, MAPE, CRPS and coverage.
  std::string full_report() const;
};

/// Runs the job. Expected outcomes (a skipped site, a diverged member, a baseline that cannot fit a site) are
/// recorded as warnings in the results.
/// @throws libseq::ConfigError when periods or inputs do not fit the data (all problems at once);
///         libseq::IoError / FormatError / DataError from reading or writing.
RunSummary run_job(const JobConfig& job, const RunOptions& options = {});

/// The method name the network ensemble's forecasts carry in results ("network").
inline constexpr const char* network_method_name = "network";

/// The method name of the final forecast: the network combined with the best baseline ("final").
inline constexpr const char* final_method_name = "final";

}  // namespace libseq::pipeline
