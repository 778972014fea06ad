#pragma once
/// @file inspect.hpp
/// `runnel inspect` as a library call: what each input file holds (format, sites, variables, time axis, missing
/// data), rendered as aligned text tables or JSON. A file that cannot be read is reported, not thrown.

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <optional>
#include <string>
#include <vector>

#include "libseq/io/read_options.hpp"

namespace libseq::pipeline {

/// One variable as the file describes it.
struct InspectedVariable {
  std::string name;           ///< name in the file
  std::string units;          ///< units as written (after any conversion asked for in ReadOptions); may be empty
  std::string standard_name;  ///< CF standard_name; may be empty
};

/// One site kept by the reader, with the missing fraction of each variable.
struct InspectedSite {
  std::string id;
  std::string name;      ///< may be empty
  double latitude = 0;   ///< degrees_north; NaN when unknown
  double longitude = 0;  ///< degrees_east; NaN when unknown
  /// Fraction of missing (NaN) values in [0, 1], one per entry of FileInspection::variables, same order.
  std::vector<double> missing_fraction;
};

/// What one file holds, or why it could not be read.
struct FileInspection {
  std::string path;                      ///< as given
  std::optional<io::FileFormat> format;  ///< empty when even the format could not be told
  std::string error;                     ///< empty when the file was read; otherwise the message (names the file)
  std::string error_kind;                ///< "io", "format", "data", "config" or "other"; empty when read
  std::vector<InspectedVariable> variables;
  std::vector<InspectedSite> sites;
  std::string time_start;             ///< ISO 8601 UTC of the first step ("YYYY-MM-DDThh:mm:ssZ")
  std::string time_end;               ///< ISO 8601 UTC of the last step
  std::int64_t step_seconds = 0;      ///< regular step of the axis, seconds
  std::string step;                   ///< step in words ("1 day", "6 hours")
  std::size_t time_count = 0;         ///< number of steps
  std::vector<std::string> warnings;  ///< reader warnings (e.g. a site skipped because it is all missing)

  /// Whether the file was read.
  bool ok() const { return error.empty(); }
};

/// The inspection of several files, in the order given.
struct InspectReport {
  std::vector<FileInspection> files;

  /// Number of files that could not be read.
  std::size_t failed_count() const;

  /// Human-readable report: per file a header, the time axis, a variables table and a sites table with
  /// missing percentages, aligned in columns (UTF-8 names counted by code point); failed files show their error.
  /// Ends with a count of files read and failed, and the advisory caution (libseq/caution.hpp).
  std::string to_text() const;

  /// The same content as one JSON object (RFC 8259): {"files": [...], "file_count": n, "failed_count": k,
  /// "caution": "..."}.
  /// Unknown numbers (NaN coordinates) are null; strings are escaped, invalid UTF-8 replaced by U+FFFD.
  std::string to_json() const;
};

/// Reads every file with io::read_panel and `options` (variables, sites, units) and summarises it. Errors of one
/// file (libseq::Error or any std::exception) are recorded in its FileInspection and the next file is read.
/// Thread-safety: as io::read_panel (one call at a time).
InspectReport inspect_files(const std::vector<std::filesystem::path>& paths, const io::ReadOptions& options = {});

}  // namespace libseq::pipeline
