#pragma once
/// @file version.hpp
/// Version and build facts of the library, recorded in every output file's provenance.

#include <string>

namespace libseq {

/// Semantic version of the library, e.g. "0.1.0".
std::string version();

/// Short git commit the library was built from, or "unknown" outside a git checkout.
std::string git_commit();

}  // namespace libseq
