#pragma once
// Running the runnel binary from CLI tests: its exit code, stdout and stderr. Shared by tests/apps/*_test.cpp.
#include <sys/wait.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "support/paths.hpp"

namespace libseq::test {

/// One run of the binary.
struct CliRun {
  int exit_code = -1;
  std::string out;
  std::string err;
};

/// The whole file as text ("" when it cannot be read).
inline std::string slurp(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::stringstream text;
  text << in.rdbuf();
  return text.str();
}

/// `text` in single quotes for the shell (test paths hold no single quote).
inline std::string quoted(const std::string& text) { return "'" + text + "'"; }

inline bool contains(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

/// Runs `runnel <arguments>` from `dir` (the working directory matters for default output names), capturing stdout
/// and stderr in dir/stdout.txt and dir/stderr.txt; stdin is /dev/null and stderr a file, so progress comes as plain
/// log lines.
inline CliRun run_in(const std::filesystem::path& dir, const std::string& arguments) {
  const std::string command = "cd " + quoted(dir.string()) + " && " + quoted(runnel_exe().string()) + " " + arguments +
                              " >stdout.txt 2>stderr.txt </dev/null";
  const int status = std::system(command.c_str());
  CliRun result;
  result.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  result.out = slurp(dir / "stdout.txt");
  result.err = slurp(dir / "stderr.txt");
  return result;
}

}  // namespace libseq::test
