#pragma once
// Private helpers of the runnel HDF5 reader that format detection also needs.

#include <filesystem>

namespace libseq::io::detail {

/// Whether an HDF5 file carries the root attribute `runnel_layout`.
/// @throws IoError naming the path when the file has the HDF5 signature but cannot be opened (truncated, damaged).
bool hdf5_has_runnel_layout(const std::filesystem::path& path);

}  // namespace libseq::io::detail
