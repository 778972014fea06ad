#pragma once
// Paths the tests need, injected by CTest through the environment (see tests/CMakeLists.txt), so that tests are
// hermetic and run from any working directory.

#include <cstdlib>
#include <filesystem>
#include <stdexcept>
#include <string>

namespace libseq::test {

inline std::filesystem::path env_path(const char* name) {
  const char* value = std::getenv(name);
  if (value == nullptr || *value == '\0') {
    throw std::runtime_error(std::string("environment variable ") + name + " is not set; run the tests with ctest");
  }
  return value;
}

/// Root of the source tree (validation/, data-samples/ live below it).
inline std::filesystem::path source_dir() { return env_path("RUNNEL_SOURCE_DIR"); }

/// Root of the build tree; tests write scratch files below it.
inline std::filesystem::path binary_dir() { return env_path("RUNNEL_BINARY_DIR"); }

/// A fresh scratch directory for one test, removed and re-created on each call.
inline std::filesystem::path scratch_dir(const std::string& name) {
  auto dir = binary_dir() / "test-scratch" / name;
  std::filesystem::remove_all(dir);
  std::filesystem::create_directories(dir);
  return dir;
}

}  // namespace libseq::test
