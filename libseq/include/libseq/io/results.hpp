#pragma once
/// @file results.hpp
/// The results of a batch job as plain data, independent of how they were computed: per-site hindcasts of every
/// method, metric rows, training records and provenance. The writers (HDF5, CF NetCDF, GeoJSON) and readers of the
/// results files take this, so no writer ever reaches back into training or scoring. Layout on disk:
/// docs/output-format.md.

#include <cstdint>
#include <filesystem>
#include <functional>
#include <string>
#include <vector>

#include "libseq/data/panel.hpp"

namespace libseq::io {

/// Version of the results layout written by this library (docs/output-format.md).
inline constexpr int results_format_version = 1;

/// One method's hindcasts at one site: n issue times × L leads (row-major, issue first).
struct ForecastBlock {
  std::string method;                   ///< "network", "persistence", "ridge_arx", ...
  std::vector<float> mean;              ///< n × L
  std::vector<float> median;            ///< n × L
  std::vector<double> quantile_levels;  ///< Q levels in (0, 1), increasing
  std::vector<float> quantiles;         ///< n × L × Q
  std::size_t member_count = 0;         ///< M; 0 when members are not stored
  std::vector<float> members;           ///< n × L × M
};

/// Hindcasts of every method at one site.
struct SiteResults {
  data::SiteInfo site;
  std::vector<data::UtcSeconds> issue_times;  ///< n issue times (forecast mode) or simulated times (lead 0)
  std::vector<float> observed;                ///< n × L observed target at each (issue, lead); NaN = missing
  std::vector<ForecastBlock> methods;
  /// In-sample one-step naive MAE on the fit period, the MASE scale of this site; NaN when unknown.
  double mase_scale = std::numeric_limits<double>::quiet_NaN();
};

/// One metric value of one (site, method, lead).
struct MetricRow {
  std::string site;          ///< site id, or "*" pooled over sites
  std::string method;
  std::int64_t lead = 0;     ///< lead in steps; -1 pooled over leads
  std::string metric;        ///< "nse", "crps", ...
  double value = 0.0;        ///< NaN when undefined
  std::uint64_t used = 0;    ///< cases used
  std::uint64_t skipped = 0; ///< cases skipped (missing observation or undefined)
  double ci_low = std::numeric_limits<double>::quiet_NaN();   ///< bootstrap interval, NaN when not requested
  double ci_high = std::numeric_limits<double>::quiet_NaN();
};

/// Training of one ensemble member (of one site's model or of the model across sites).
struct TrainingRecord {
  std::string model;                     ///< site id for per-site models, "*" for one model across sites
  std::uint32_t member = 0;
  std::uint64_t seed = 0;
  std::string termination;               ///< "max_epochs", "early_stopped", "diverged", ...
  std::uint32_t epochs = 0;
  std::uint32_t best_epoch = 0;
  double best_validation_loss = std::numeric_limits<double>::quiet_NaN();
  std::vector<double> train_loss;        ///< per epoch
  std::vector<double> validation_loss;   ///< per epoch (NaN without validation)
  std::vector<double> gradient_norm;     ///< per epoch, mean global gradient norm before clipping
  std::uint64_t clipped_steps = 0;
  std::uint64_t total_steps = 0;
  std::vector<std::int64_t> diagnostic_lags;        ///< lags k (steps back from the issue step)
  std::vector<double> diagnostic_gradient_norms;    ///< ‖∂loss/∂input_{T−k}‖ per lag
  double seconds = 0.0;
};

/// An input file and its SHA-256.
struct InputFile {
  std::string path;
  std::string sha256;
};

/// Where the results came from.
struct Provenance {
  std::string job_text;          ///< the job file, verbatim
  std::string job_path;
  std::string library_version;
  std::string git_commit;
  std::string created;           ///< ISO 8601 UTC time the results were written
  std::vector<std::uint64_t> seeds;
  std::vector<InputFile> inputs;
  double wall_seconds = 0.0;
  int threads = 1;
};

/// Everything a run produced.
struct RunResults {
  std::string title;                 ///< ACDD title
  std::string summary;               ///< ACDD summary
  std::string mode;                  ///< "forecast" or "simulation"
  std::string target_variable;
  std::string target_units;
  std::string target_standard_name;
  std::int64_t step_seconds = 86400; ///< time step of the data
  std::vector<std::int64_t> leads;   ///< L lead times in steps (1..H in forecast mode, 0 in simulation)
  std::string test_period;           ///< the period the hindcasts cover, as text
  std::vector<SiteResults> sites;
  std::vector<MetricRow> metrics;
  std::vector<TrainingRecord> training;
  std::vector<std::string> warnings; ///< expected outcomes worth telling (skipped sites, diverged members)
  std::vector<std::string> notes;    ///< choices the run made (e.g. the final forecast's combination weights)
  Provenance provenance;

  /// @throws libseq::DataError naming the site and method when an array has the wrong length.
  void validate() const;
};

/// Writes `results` as HDF5 (docs/output-format.md), to a temporary name then renamed over `path`.
/// @throws libseq::IoError naming the path when it cannot be written.
void write_results_hdf5(const std::filesystem::path& path, const RunResults& results);

/// Reads an HDF5 results file written by write_results_hdf5.
/// @throws libseq::IoError / FormatError naming the path and the object when it is not such a file.
RunResults read_results_hdf5(const std::filesystem::path& path);

/// Writes the hindcasts as a CF-1.8 `timeSeries` NetCDF-4 file with ACDD discovery attributes.
void write_results_netcdf(const std::filesystem::path& path, const RunResults& results);

/// Writes a GeoJSON (RFC 7946) FeatureCollection of site points with each method's metrics pooled over leads.
void write_station_geojson(const std::filesystem::path& path, const RunResults& results);

/// Writes `text` to `path` through a temporary file in the same folder and a rename.
/// @throws libseq::IoError naming the path.
void write_text_atomically(const std::filesystem::path& path, const std::string& text);

/// A temporary path beside `path` for atomic writes (same folder, so that rename is atomic).
std::filesystem::path temporary_path_for(const std::filesystem::path& path);

/// Calls `write(temporary)` for a temporary path beside `path`, then renames it over `path`; on any failure the
/// temporary file is removed and `path` is left as it was. What `write` throws passes through.
/// @throws libseq::IoError naming `path` when the rename fails.
void write_atomically(const std::filesystem::path& path,
                      const std::function<void(const std::filesystem::path& temporary)>& write);

/// SHA-256 of a file's bytes as lowercase hex. @throws libseq::IoError naming the path.
std::string sha256_of_file(const std::filesystem::path& path);

}  // namespace libseq::io
