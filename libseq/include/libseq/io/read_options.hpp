#pragma once
/// @file read_options.hpp
/// What every reader (CF NetCDF, runnel HDF5, CSV) takes and returns.

#include <map>
#include <string>
#include <vector>

#include "libseq/data/panel.hpp"

namespace libseq::io {

/// File formats the readers understand.
enum class FileFormat { netcdf, hdf5, csv };

/// Which parts of a file to read, and unit conversions to apply.
struct ReadOptions {
  /// Variables to read, each by name or by CF standard_name; empty reads every data variable on the time axis.
  std::vector<std::string> variables;
  /// Site ids to read; empty reads all sites. Reading a subset reads only those sites' values from disk.
  std::vector<std::string> sites;
  /// Units to convert to, keyed by variable name or standard_name (see docs/input-formats.md for the accepted
  /// pairs). A pair outside that set is refused with a message naming the units found.
  std::map<std::string, std::string> target_units;
};

/// A panel read from one file, with the warnings raised while reading (e.g. a site skipped because all its
/// values are missing). Warnings are expected outcomes, not errors.
struct ReadResult {
  data::Panel panel;
  std::vector<std::string> warnings;
};

}  // namespace libseq::io
