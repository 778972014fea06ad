// CLI cases of `runnel inspect`: the binary libseq::test::runnel_exe() names is run on files written here, and
// its exit code, stdout and stderr are checked. Exit codes: docs/commands/README.md.
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <algorithm>
#include <cstdlib>
#include <fstream>
#include <sstream>

#include "support/cli.hpp"
#include "support/paths.hpp"

namespace {

using libseq::test::CliRun;
using libseq::test::contains;
using libseq::test::quoted;
using libseq::test::slurp;

CliRun run(const std::string& test, const std::string& arguments) {
  const auto dir = libseq::test::binary_dir() / "test-scratch" / "cli_inspect" / test;
  std::filesystem::create_directories(dir);
  const std::string command = quoted(libseq::test::runnel_exe().string()) + " " + arguments + " >" +
                              quoted((dir / "stdout").string()) + " 2>" + quoted((dir / "stderr").string());
  const int status = std::system(command.c_str());
  CliRun result;
  result.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  result.out = slurp(dir / "stdout");
  result.err = slurp(dir / "stderr");
  return result;
}

std::size_t line_count(const std::string& text) {
  return static_cast<std::size_t>(std::count(text.begin(), text.end(), '\n'));
}

std::filesystem::path good_csv(const std::string& test) {
  const auto path = libseq::test::scratch_dir("cli_inspect_input/" + test) / "mill.csv";
  std::ofstream(path) << "# site_id: MILL\n# latitude: 51.25\n# units q: m3 s-1\ntime,q,pr\n"
                         "2004-02-28,1,0\n2004-02-29,,0.5\n2004-03-01,3,\n2004-03-02,4,1\n";
  return path;
}

}  // namespace

TEST(CliInspect, TextReportOfAGoodFileExitsZero) {
  const auto file = good_csv("text");
  const CliRun r = run("text", "inspect " + quoted(file.string()));
  EXPECT_EQ(r.exit_code, 0) << r.err;
  EXPECT_TRUE(r.err.empty()) << r.err;
  EXPECT_TRUE(contains(r.out, "file: " + file.string())) << r.out;
  EXPECT_TRUE(contains(r.out, "2004-02-28T00:00:00Z .. 2004-03-02T00:00:00Z, step 1 day, 4 steps")) << r.out;
  EXPECT_TRUE(contains(r.out, "MILL  -      51.2500          -  25.0%  25.0%")) << r.out;
  EXPECT_TRUE(contains(r.out, "1 file inspected, 0 could not be read")) << r.out;
}

TEST(CliInspect, JsonReportHasTheExpectedKeysAndVariableFilterApplies) {
  const auto file = good_csv("json");
  const CliRun r = run("json", "inspect --json --variable q " + quoted(file.string()));
  EXPECT_EQ(r.exit_code, 0) << r.err;
  // The full JSON grammar is checked in tests/pipeline/inspect_test.cpp; here the shape of the CLI output.
  ASSERT_FALSE(r.out.empty());
  EXPECT_EQ(r.out.front(), '{');
  EXPECT_EQ(r.out[r.out.find_last_not_of('\n')], '}');
  for (const char* key :
       {"\"files\": [", "\"path\": ", "\"ok\": true", "\"format\": \"csv\"", "\"time\": {", "\"step_seconds\": 86400",
        "\"variables\": [{\"name\": \"q\", \"units\": \"m3 s-1\"", "\"missing_fraction\": {\"q\": 0.25}",
        "\"file_count\": 1", "\"failed_count\": 0", "\"caution\": "}) {
    EXPECT_TRUE(contains(r.out, key)) << key << "\n" << r.out;
  }
  EXPECT_FALSE(contains(r.out, "\"pr\"")) << r.out;
}

TEST(CliInspect, MissingFileExitsTwoWithOneLineNamingIt) {
  const auto dir = libseq::test::scratch_dir("cli_inspect_input/missing");
  const auto missing = (dir / "absent.nc").string();
  const CliRun r = run("missing", "inspect " + quoted(missing));
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_EQ(line_count(r.err), 1u) << r.err;
  EXPECT_TRUE(contains(r.err, missing)) << r.err;
  EXPECT_TRUE(contains(r.out, "error (io): " + missing + ": file not found")) << r.out;
}

TEST(CliInspect, OneBadFileAmongGoodOnesStillReportsTheGoodOnesAndExitsTwo) {
  const auto file = good_csv("mixed");
  const auto junk = file.parent_path() / "junk.bin";
  std::ofstream(junk, std::ios::binary) << std::string("\x89PNG\r\n\x1a\n", 8);
  const CliRun r = run("mixed", "inspect --json " + quoted(junk.string()) + " " + quoted(file.string()));
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_TRUE(contains(r.out, "\"error_kind\": \"format\"")) << r.out;
  EXPECT_TRUE(contains(r.out, "not a CF NetCDF, runnel HDF5 or CSV file")) << r.out;
  EXPECT_TRUE(contains(r.out, "\"ok\": true")) << r.out;
  EXPECT_EQ(line_count(r.err), 1u) << r.err;
  EXPECT_TRUE(contains(r.err, junk.string())) << r.err;
}

TEST(CliInspect, NoArgumentsIsAUsageErrorExitingOne) {
  const CliRun r = run("no_arguments", "inspect");
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_TRUE(contains(r.err + r.out, "files is required")) << r.err << r.out;
}

TEST(CliInspect, HelpExitsZeroAndListsTheOptions) {
  const CliRun r = run("help", "inspect --help");
  EXPECT_EQ(r.exit_code, 0);
  EXPECT_TRUE(contains(r.out, "--json") && contains(r.out, "--variable")) << r.out;
}
