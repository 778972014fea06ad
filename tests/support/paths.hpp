#pragma once
// Paths the tests need. CMake bakes the source tree, build tree and runnel executable into each test as
// RUNNEL_DEFAULT_* definitions (tests/CMakeLists.txt); environment variables RUNNEL_SOURCE_DIR, RUNNEL_BINARY_DIR
// and RUNNEL_EXE override them, so tests run from any working directory and can be pointed elsewhere.

#include <cstdlib>
#include <filesystem>
#include <stdexcept>
#include <string>

#include <unistd.h>

#ifndef RUNNEL_DEFAULT_SOURCE_DIR
#define RUNNEL_DEFAULT_SOURCE_DIR ""
#endif
#ifndef RUNNEL_DEFAULT_BINARY_DIR
#define RUNNEL_DEFAULT_BINARY_DIR ""
#endif
#ifndef RUNNEL_DEFAULT_EXE
#define RUNNEL_DEFAULT_EXE ""
#endif

namespace libseq::test {

inline std::filesystem::path env_path(const char* name, const char* fallback) {
  const char* value = std::getenv(name);
  if (value != nullptr && *value != '\0') return value;
  if (*fallback != '\0') return fallback;
  throw std::runtime_error(std::string(name) + " is neither set in the environment nor known to the build");
}

/// Root of the source tree (validation/, data-samples/ live below it).
inline std::filesystem::path source_dir() { return env_path("RUNNEL_SOURCE_DIR", RUNNEL_DEFAULT_SOURCE_DIR); }

/// Root of the build tree; tests write scratch files below it.
inline std::filesystem::path binary_dir() { return env_path("RUNNEL_BINARY_DIR", RUNNEL_DEFAULT_BINARY_DIR); }

/// The runnel executable (CLI tests).
inline std::filesystem::path runnel_exe() { return env_path("RUNNEL_EXE", RUNNEL_DEFAULT_EXE); }

/// A fresh scratch directory for one test, removed and re-created on each call. The process id is part of the
/// name: CTest runs the cases of one executable as parallel processes, which must not share a directory.
inline std::filesystem::path scratch_dir(const std::string& name) {
  auto dir = binary_dir() / "test-scratch" / (name + "-" + std::to_string(::getpid()));
  std::filesystem::remove_all(dir);
  std::filesystem::create_directories(dir);
  return dir;
}

}  // namespace libseq::test
