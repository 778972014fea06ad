#pragma once
/// @file reader.hpp
/// One entry point for every input format: detection by content and dispatch to the CF NetCDF, runnel HDF5 and
/// CSV readers.

#include <filesystem>
#include <string>
#include <string_view>

#include "libseq/io/read_options.hpp"

namespace libseq::io {

/// "netcdf", "hdf5" or "csv".
std::string to_string(FileFormat format);

/// Inverse of to_string. @throws ConfigError naming the text and the accepted names.
FileFormat parse_file_format(std::string_view text);

/// Format of a file, judged by its content, never by its extension:
/// - the HDF5 signature `\x89HDF\r\n\x1a\n` (at offset 0 or a user-block offset 512, 1024, 2048, ...) with a root
///   attribute `runnel_layout` → hdf5; without it (NetCDF-4 is HDF5 underneath) → netcdf;
/// - `CDF\x01`, `CDF\x02` or `CDF\x05` (NetCDF classic, 64-bit offset, 64-bit data) → netcdf;
/// - text whose first line that is neither blank nor a `#` comment is a CSV header with a `time` column → csv.
///
/// Thread-safety: as read_hdf5 (opens HDF5 files to look for the root attribute).
/// @throws IoError when the file is missing, a directory, unreadable, or an HDF5 file that cannot be opened
///         (truncated or damaged); the message names the path.
/// @throws FormatError "not a CF NetCDF, runnel HDF5 or CSV file" (with the path) for anything else.
FileFormat detect_format(const std::filesystem::path& path);

/// Reads a file of any supported format into a Panel: detect_format, then read_netcdf, read_hdf5 or read_csv.
/// @throws what detect_format and the chosen reader throw.
ReadResult read_panel(const std::filesystem::path& path, const ReadOptions& options = {});

}  // namespace libseq::io
