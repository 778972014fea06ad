#pragma once
/// @file hdf5_reader.hpp
/// Reader for the runnel panel layout, version 1, in HDF5 files (specified in docs/input-formats.md).

#include <filesystem>

#include "libseq/io/read_options.hpp"

namespace libseq::io {

/// Reads a runnel panel layout (version 1) HDF5 file into a Panel.
///
/// Only the requested variables (by name or standard_name) and sites (by id) are read; each site's row is read
/// by hyperslab straight into the Panel's storage. Sites keep their file order. Values equal to a variable's
/// `_FillValue` attribute become NaN (missing). The shared checks of docs/input-formats.md follow: ±Inf is refused,
/// units listed in `options.target_units` are converted, sites with every value missing are dropped with a
/// warning in ReadResult::warnings.
///
/// Thread-safety: safe to call from several threads only when the HDF5 library was built thread-safe;
/// the Debian serial build is not, so call it from one thread at a time.
/// @throws IoError when the file is missing, unreadable or truncated (message names the path).
/// @throws FormatError when the root attributes, a dataset, its type or its dimensions differ from the layout
///         (message names the path and the dataset, e.g. "/variables/discharge").
/// @throws DataError when a requested variable or site is absent (listing those present), when the time axis is
///         not strictly increasing with one regular step, or when values are ±Inf.
ReadResult read_hdf5(const std::filesystem::path& path, const ReadOptions& options = {});

}  // namespace libseq::io
