// CLI cases of `runnel fit` and `runnel forecast` (docs/commands/fit.md, docs/commands/forecast.md) on the tiny job
// (tests/apps/data/tiny_catchments.toml: two invented catchments, lookback 10, horizon 2, a 4-unit LSTM, 2 members
// of 2 epochs, calibration on 2010-01..06). The binary libseq::test::runnel_exe() names is run with stdout and
// stderr captured; exit codes are those of docs/commands/README.md (0 ok, 1 usage, 2 bad input, 3 run failed).
// The forecast CSV is checked against its documented layout (docs/commands/forecast.md, "CSV"); the expected
// valid times are computed here with the C library (timegm/gmtime_r), not with runnel's own time code.
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>
#include <stdexcept>
#include <string>
#include <utility>
#include <vector>

#include "support/cli.hpp"
#include "support/paths.hpp"

namespace {

namespace fs = std::filesystem;
using libseq::test::CliRun;
using libseq::test::contains;
using libseq::test::quoted;
using libseq::test::run_in;
using libseq::test::slurp;

fs::path scratch(const std::string& test) { return libseq::test::scratch_dir("cli_fit_forecast/" + test); }

fs::path demo_data() { return libseq::test::source_dir() / "data-samples" / "catchments.nc"; }

// Writes the tiny job into `dir`/job.toml with its data path made absolute.
fs::path write_tiny_job(const fs::path& dir) {
  std::string text = slurp(libseq::test::source_dir() / "tests/apps/data/tiny_catchments.toml");
  if (text.empty()) throw std::runtime_error("tests/apps/data/tiny_catchments.toml is missing or empty");
  const std::string from = "\"../../../data-samples/";
  const auto at = text.find(from);
  if (at == std::string::npos) throw std::runtime_error("tiny job: the data path is not in the job text");
  text.replace(at, from.size(), "\"" + (libseq::test::source_dir() / "data-samples").string() + "/");
  const auto path = dir / "job.toml";
  std::ofstream(path, std::ios::binary) << text;
  return path;
}

// Fits the tiny job into `dir`/model.h5 (quietly) and returns the bundle path; fails the test if fit fails.
fs::path fit_tiny(const fs::path& dir) {
  const auto job = write_tiny_job(dir);
  const auto bundle = dir / "model.h5";
  const CliRun r = run_in(dir, "fit -q " + quoted(job.string()) + " -o " + quoted(bundle.string()));
  if (r.exit_code != 0 || !fs::exists(bundle)) {
    ADD_FAILURE() << "runnel fit failed with exit " << r.exit_code << "\n" << r.err << r.out;
  }
  return bundle;
}

std::vector<std::string> split(const std::string& line, char sep) {
  std::vector<std::string> cells;
  std::string cell;
  std::istringstream in(line);
  while (std::getline(in, cell, sep)) cells.push_back(cell);
  if (!line.empty() && line.back() == sep) cells.emplace_back();
  return cells;
}

// "YYYY-MM-DD" at 00:00 UTC plus `days` days, as "YYYY-MM-DDT00:00:00Z" (C library: timegm, gmtime_r).
std::string iso_day_plus(const std::string& day, int days) {
  std::tm tm{};
  if (std::sscanf(day.c_str(), "%d-%d-%d", &tm.tm_year, &tm.tm_mon, &tm.tm_mday) != 3) {
    throw std::runtime_error("bad day " + day);
  }
  tm.tm_year -= 1900;
  tm.tm_mon -= 1;
  const std::time_t t = timegm(&tm) + static_cast<std::time_t>(days) * 86400;
  std::tm out{};
  gmtime_r(&t, &out);
  char text[32];
  std::strftime(text, sizeof text, "%Y-%m-%dT%H:%M:%SZ", &out);
  return text;
}

const char* const caution_start = "CAUTION: runnel forecasts are advisory.";  // libseq/src/core/caution.cpp
const std::set<std::string> tiny_sites{"SRN-TAR01", "SRN-OSK02"};             // [data] sites of the tiny job

}  // namespace

// ---- fit ------------------------------------------------------------------------------------------------------------

TEST(CliFit, TinyJobExitsZeroWritesTheBundleAndPrintsTheCaution) {
  const auto dir = scratch("fit_ok");
  const auto job = write_tiny_job(dir);
  const auto bundle = dir / "out" / "model.h5";
  fs::create_directories(bundle.parent_path());
  const CliRun r = run_in(dir, "fit " + quoted(job.string()) + " -o " + quoted(bundle.string()) + " --threads 1");
  ASSERT_EQ(r.exit_code, 0) << r.err << r.out;
  ASSERT_TRUE(fs::exists(bundle));
  EXPECT_GT(fs::file_size(bundle), 0u);
  EXPECT_TRUE(contains(r.out, "wrote " + bundle.string())) << r.out;
  EXPECT_TRUE(contains(r.out, caution_start)) << r.out;
  // One model across sites with the job's 2 members (FitSummary::brief_report), calibrated on 2010-01..06.
  EXPECT_TRUE(contains(r.out, "1 model(s), 2 member(s) trained")) << r.out;
  EXPECT_TRUE(contains(r.out, "calibrated ")) << r.out;
  // Not quiet and not a terminal: plain progress lines on stderr (docs/commands/fit.md).
  for (const char* stage : {"runnel: reading", "runnel: training", "runnel: writing"}) {
    EXPECT_TRUE(contains(r.err, stage)) << stage << "\n" << r.err;
  }
  // No temporary file left beside the bundle (written to a temporary name and renamed).
  std::size_t entries = 0;
  for (const auto& entry : fs::directory_iterator(bundle.parent_path())) {
    ++entries;
    EXPECT_EQ(entry.path().filename(), "model.h5") << "left behind: " << entry.path();
  }
  EXPECT_EQ(entries, 1u);
}

TEST(CliFit, DefaultOutputIsModelH5InTheJobsOutputDirectory) {
  const auto dir = scratch("fit_default");
  const auto job = write_tiny_job(dir);
  const CliRun r = run_in(dir, "fit -q " + quoted(job.string()));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_TRUE(r.err.empty()) << r.err;  // --quiet
  const auto bundle = dir / "tiny-output" / "model.h5";
  ASSERT_TRUE(fs::exists(bundle)) << r.out;
  EXPECT_GT(fs::file_size(bundle), 0u);
}

TEST(CliFit, MissingJobArgumentIsAUsageErrorAndAMissingJobFileIsBadInput) {
  const auto dir = scratch("fit_usage");
  const CliRun none = run_in(dir, "fit");
  EXPECT_EQ(none.exit_code, 1);
  EXPECT_TRUE(contains(none.err + none.out, "job is required")) << none.err << none.out;

  const CliRun missing = run_in(dir, "fit -q " + quoted((dir / "nojob.toml").string()));
  EXPECT_EQ(missing.exit_code, 2);
  EXPECT_TRUE(contains(missing.err, (dir / "nojob.toml").string())) << missing.err;
}

// ---- forecast: success ----------------------------------------------------------------------------------------

TEST(CliForecast, FromTheFittedBundleWritesOneRowPerSiteAndLeadWithOrderedQuantiles) {
  const auto dir = scratch("forecast_ok");
  const auto bundle = fit_tiny(dir);
  ASSERT_TRUE(fs::exists(bundle));
  const auto csv = dir / "forecast.csv";
  const std::string issue_day = "2011-04-10";  // inside the demo data (2008-01-01..2022-12-31), after the fit period
  const CliRun r =
      run_in(dir, "forecast --bundle " + quoted(bundle.string()) + " --data " + quoted(demo_data().string()) +
                      " --issue-time " + issue_day + " --horizon 2 -o " + quoted(csv.string()));
  ASSERT_EQ(r.exit_code, 0) << r.err << r.out;
  EXPECT_TRUE(contains(r.out, caution_start)) << r.out;
  EXPECT_TRUE(contains(r.out, "issued 2011-04-10T00:00:00Z from " + bundle.string() + ": 2 site(s), 2 lead(s)"))
      << r.out;
  EXPECT_TRUE(contains(r.out, "wrote " + csv.string())) << r.out;
  ASSERT_TRUE(fs::exists(csv));

  std::istringstream lines(slurp(csv));
  std::string line;
  ASSERT_TRUE(std::getline(lines, line));
  EXPECT_TRUE(contains(line, "# ") && contains(line, caution_start)) << line;
  ASSERT_TRUE(std::getline(lines, line));
  EXPECT_EQ(line.rfind("# ", 0), 0u) << line;
  EXPECT_TRUE(contains(line, "2011-04-10T00:00:00Z")) << line;
  ASSERT_TRUE(std::getline(lines, line));
  const auto header = split(line, ',');
  ASSERT_GE(header.size(), 7u) << line;
  const std::vector<std::string> fixed{"site_id", "issue_time", "valid_time", "lead", "mean", "median"};
  for (std::size_t i = 0; i < fixed.size(); ++i) EXPECT_EQ(header[i], fixed[i]) << line;
  std::vector<double> levels;
  for (std::size_t i = fixed.size(); i < header.size(); ++i) {
    ASSERT_EQ(header[i].rfind("q_", 0), 0u) << header[i];
    levels.push_back(std::stod(header[i].substr(2)));
    if (levels.size() > 1) {
      EXPECT_LT(levels[levels.size() - 2], levels.back()) << "levels not ascending: " << line;
    }
  }

  std::set<std::pair<std::string, int>> seen;
  std::size_t rows = 0;
  while (std::getline(lines, line)) {
    if (line.empty()) continue;
    ++rows;
    const auto cells = split(line, ',');
    ASSERT_EQ(cells.size(), header.size()) << line;
    EXPECT_TRUE(tiny_sites.count(cells[0])) << "unexpected site: " << line;
    EXPECT_EQ(cells[1], "2011-04-10T00:00:00Z") << line;
    const int lead = std::stoi(cells[3]);
    EXPECT_TRUE(lead == 1 || lead == 2) << line;
    // Daily data: valid_time = issue_time + lead days.
    EXPECT_EQ(cells[2], iso_day_plus(issue_day, lead)) << line;
    EXPECT_TRUE(seen.insert({cells[0], lead}).second) << "duplicate row: " << line;
    std::vector<double> values;
    for (std::size_t i = 4; i < cells.size(); ++i) {
      ASSERT_FALSE(cells[i].empty()) << "missing value in column " << header[i] << ": " << line;
      values.push_back(std::stod(cells[i]));
      EXPECT_TRUE(std::isfinite(values.back())) << header[i] << ": " << line;
    }
    for (std::size_t q = 3; q < values.size(); ++q) {  // values[2..] are the quantile columns
      EXPECT_LE(values[q - 1], values[q]) << header[q + 4] << " is below " << header[q + 3] << ": " << line;
    }
    // The median column is the 0.5 quantile when the job's levels include it (docs/commands/forecast.md example).
    for (std::size_t k = 0; k < levels.size(); ++k) {
      if (levels[k] == 0.5) {
        EXPECT_EQ(cells[5], cells[6 + k]) << line;
      }
    }
  }
  EXPECT_EQ(rows, tiny_sites.size() * 2) << "one row per site and lead";
  EXPECT_EQ(seen.size(), tiny_sites.size() * 2);
}

TEST(CliForecast, ShorterHorizonGivesOneLeadPerSite) {
  const auto dir = scratch("forecast_h1");
  const auto bundle = fit_tiny(dir);
  const auto csv = dir / "h1.csv";
  const CliRun r =
      run_in(dir, "forecast --bundle " + quoted(bundle.string()) + " --data " + quoted(demo_data().string()) +
                      " --issue-time 2011-04-10 --horizon 1 -o " + quoted(csv.string()));
  ASSERT_EQ(r.exit_code, 0) << r.err << r.out;
  std::istringstream lines(slurp(csv));
  std::string line;
  std::size_t rows = 0;
  for (int skip = 0; skip < 3 && std::getline(lines, line); ++skip) {
  }
  while (std::getline(lines, line)) {
    if (line.empty()) continue;
    ++rows;
    const auto cells = split(line, ',');
    ASSERT_GE(cells.size(), 4u) << line;
    EXPECT_EQ(cells[3], "1") << line;
    EXPECT_EQ(cells[2], "2011-04-11T00:00:00Z") << line;
  }
  EXPECT_EQ(rows, tiny_sites.size());
}

// ---- forecast: bad input, exit 2 ----------------------------------------------------------------------------------

TEST(CliForecast, HorizonAboveTheBundlesExitsTwoNamingBothHorizons) {
  const auto dir = scratch("forecast_horizon");
  const auto bundle = fit_tiny(dir);
  const auto csv = dir / "forecast.csv";
  const CliRun r =
      run_in(dir, "forecast --bundle " + quoted(bundle.string()) + " --data " + quoted(demo_data().string()) +
                      " --issue-time 2011-04-10 --horizon 3 -o " + quoted(csv.string()));
  EXPECT_EQ(r.exit_code, 2) << r.err << r.out;
  // Requested 3, bundle's windows.horizon 2 (wording of docs/commands/forecast.md).
  EXPECT_TRUE(contains(r.err, "3 is outside 1..2")) << r.err;
  EXPECT_TRUE(contains(r.err, "forecasts 2 lead(s)")) << r.err;
  EXPECT_TRUE(contains(r.err, bundle.string())) << r.err;
  EXPECT_FALSE(fs::exists(csv)) << "a CSV was written for a rejected forecast";

  // Horizon 0 is outside 1..H as well (operational.hpp: ConfigError when horizon is 0).
  const CliRun zero =
      run_in(dir, "forecast --bundle " + quoted(bundle.string()) + " --data " + quoted(demo_data().string()) +
                      " --issue-time 2011-04-10 --horizon 0 -o " + quoted(csv.string()));
  EXPECT_EQ(zero.exit_code, 2) << zero.err << zero.out;
  EXPECT_TRUE(contains(zero.err, "0 is outside 1..2")) << zero.err;
  EXPECT_FALSE(fs::exists(csv));
}

TEST(CliForecast, MissingBundleExitsTwoNamingIt) {
  const auto dir = scratch("forecast_no_bundle");
  const auto bundle = dir / "absent-model.h5";
  const CliRun r = run_in(dir, "forecast --bundle " + quoted(bundle.string()) + " --data " +
                                   quoted(demo_data().string()) + " --issue-time 2011-04-10 --horizon 1");
  EXPECT_EQ(r.exit_code, 2) << r.err << r.out;
  EXPECT_TRUE(contains(r.err, bundle.string())) << r.err;
  EXPECT_FALSE(fs::exists(dir / "forecast.csv"));
}

TEST(CliForecast, DataFileThatIsNotAnHdf5BundleExitsTwoSayingSo) {
  const auto dir = scratch("forecast_not_bundle");
  const CliRun r = run_in(dir, "forecast --bundle " + quoted(demo_data().string()) + " --data " +
                                   quoted(demo_data().string()) + " --issue-time 2011-04-10 --horizon 1");
  EXPECT_EQ(r.exit_code, 2) << r.err << r.out;
  EXPECT_TRUE(contains(r.err, demo_data().string())) << r.err;
  EXPECT_TRUE(contains(r.err, "bundle")) << r.err;
}

TEST(CliForecast, DataThatIsNotDataOrIsMissingExitsTwoNamingTheFile) {
  const auto dir = scratch("forecast_bad_data");
  const auto bundle = fit_tiny(dir);
  const auto junk = dir / "latest.nc";
  std::ofstream(junk, std::ios::binary) << "this is not a NetCDF file\n";
  const CliRun r = run_in(dir, "forecast --bundle " + quoted(bundle.string()) + " --data " + quoted(junk.string()) +
                                   " --issue-time 2011-04-10 --horizon 1");
  EXPECT_EQ(r.exit_code, 2) << r.err << r.out;
  EXPECT_TRUE(contains(r.err, junk.string())) << r.err;
  EXPECT_TRUE(contains(r.err, "not a CF NetCDF, runnel HDF5 or CSV file")) << r.err;
  EXPECT_FALSE(fs::exists(dir / "forecast.csv"));

  const auto absent = dir / "absent.nc";
  const CliRun m = run_in(dir, "forecast --bundle " + quoted(bundle.string()) + " --data " + quoted(absent.string()) +
                                   " --issue-time 2011-04-10 --horizon 1");
  EXPECT_EQ(m.exit_code, 2) << m.err << m.out;
  EXPECT_TRUE(contains(m.err, absent.string())) << m.err;
}

// Issue times the header rejects (operational.hpp, forecast_from_bundle @throws): off the daily grid, after the
// data's end (2022-12-31), or with fewer than lookback = 10 steps before it (data start 2008-01-01).
TEST(CliForecast, IssueTimeOffTheGridAfterTheDataOrWithoutHistoryExitsTwo) {
  const auto dir = scratch("forecast_issue");
  const auto bundle = fit_tiny(dir);
  const std::vector<std::pair<std::string, std::string>> cases{
      {"2011-04-10T06:00Z", "issue time 2011-04-10T06:00:00Z is not on the data's time grid"},
      {"2023-02-01", "issue time 2023-02-01T00:00:00Z is after the end of the data"},
      {"2008-01-05", "issue time 2008-01-05T00:00:00Z needs 10 steps of history (windows.lookback)"}};
  for (const auto& [issue, message] : cases) {
    const CliRun r = run_in(dir, "forecast --bundle " + quoted(bundle.string()) + " --data " +
                                     quoted(demo_data().string()) + " --issue-time " + issue + " --horizon 1");
    EXPECT_EQ(r.exit_code, 2) << issue << "\n" << r.err << r.out;
    EXPECT_TRUE(contains(r.err, message)) << issue << "\n" << r.err;
  }
}

// ---- usage and help -------------------------------------------------------------------------------------------

TEST(CliForecast, MissingRequiredOptionsAreUsageErrorsExitingOne) {
  const auto dir = scratch("forecast_usage");
  const std::string bundle = " --bundle " + quoted((dir / "model.h5").string());
  const std::string data = " --data " + quoted(demo_data().string());
  const std::vector<std::pair<std::string, std::string>> cases{
      {data + " --issue-time 2011-04-10 --horizon 1", "--bundle"},
      {bundle + " --issue-time 2011-04-10 --horizon 1", "--data"},
      {bundle + data + " --horizon 1", "--issue-time"},
      {bundle + data + " --issue-time 2011-04-10", "--horizon"},
      {bundle + data + " --issue-time 2011-04-10 --horizon 1 --threads 0", "--threads"}};
  for (const auto& [arguments, option] : cases) {
    const CliRun r = run_in(dir, "forecast" + arguments);
    EXPECT_EQ(r.exit_code, 1) << arguments << "\n" << r.err << r.out;
    EXPECT_TRUE(contains(r.err + r.out, option)) << arguments << ": " << option << "\n" << r.err << r.out;
  }
}

TEST(CliHelpFitForecast, BothCommandsHelpExitsZeroAndListsTheirOptions) {
  const auto dir = scratch("help");
  const std::vector<std::pair<std::string, std::vector<std::string>>> cases{
      {"fit --help", {"job", "--output", "--threads", "--seed", "--quiet"}},
      {"forecast --help", {"--bundle", "--data", "--issue-time", "--horizon", "--output", "--netcdf", "--threads"}},
      {"--help", {"fit", "forecast"}}};
  for (const auto& [arguments, parts] : cases) {
    const CliRun r = run_in(dir, arguments);
    EXPECT_EQ(r.exit_code, 0) << arguments << "\n" << r.err;
    for (const auto& part : parts) EXPECT_TRUE(contains(r.out, part)) << arguments << ": " << part << "\n" << r.out;
  }
}
