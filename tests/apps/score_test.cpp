// runnel score: re-scoring a results file with other metrics, intervals and a sub-period.
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <cmath>
#include <fstream>

#include "libseq/io/results.hpp"
#include "support/cli.hpp"
#include "support/paths.hpp"

namespace {

namespace fs = std::filesystem;
using libseq::test::CliRun;
using libseq::test::slurp;

CliRun runnel(const fs::path& dir, const std::string& arguments) { return libseq::test::run_in(dir, arguments); }

// A small results file: one site, two methods, 4 daily issues, one lead, quantiles 0.05/0.5/0.95.
fs::path sample_results(const fs::path& dir) {
  libseq::io::RunResults r;
  r.mode = "forecast";
  r.target_variable = "discharge";
  r.target_units = "m3 s-1";
  r.leads = {1};
  r.test_period = "2000-01-01..2000-01-04";
  libseq::io::SiteResults site;
  site.site.id = "S1";
  site.site.latitude = 60;
  site.site.longitude = 10;
  for (int i = 0; i < 4; ++i) site.issue_times.push_back(946684800 + 86400 * i);
  site.observed = {1, 2, 3, 4};
  for (const char* name : {"network", "persistence"}) {
    libseq::io::ForecastBlock b;
    b.method = name;
    const float shift = std::string(name) == "network" ? 0.0f : 1.0f;
    for (int i = 0; i < 4; ++i) {
      b.mean.push_back(static_cast<float>(i + 1) + shift);
      b.median.push_back(static_cast<float>(i + 1) + shift);
      b.quantiles.insert(b.quantiles.end(), {static_cast<float>(i) + shift, static_cast<float>(i + 1) + shift,
                                             static_cast<float>(i + 2) + shift});
    }
    b.quantile_levels = {0.05, 0.5, 0.95};
    site.methods.push_back(b);
  }
  r.sites.push_back(site);
  const fs::path path = dir / "results.h5";
  libseq::io::write_results_hdf5(path, r);
  return path;
}

double metric(const libseq::io::RunResults& r, const std::string& method, const std::string& name) {
  for (const auto& row : r.metrics) {
    if (row.site == "S1" && row.method == method && row.lead == -1 && row.metric == name) return row.value;
  }
  return NAN;
}

}  // namespace

TEST(CliScore, RescoresASubPeriodWithTheRequestedMetrics) {
  const fs::path dir = libseq::test::scratch_dir("cli_score");
  sample_results(dir);
  const CliRun r = runnel(dir,
                          "score results.h5 --period 2000-01-03..2000-01-04 --metric mae --metric coverage "
                          "--interval 0.9 -o rescored.h5");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.out.find("CAUTION"), std::string::npos);
  const auto rescored = libseq::io::read_results_hdf5(dir / "rescored.h5");
  ASSERT_EQ(rescored.sites[0].issue_times.size(), 2u);
  // Hand-worked: in the period the network is exact (MAE 0) and persistence is 1 too high everywhere (MAE 1);
  // the network's 90 % interval [i, i+2] covers y = i+1 (coverage 1), persistence's [i+1, i+3] too (y = i+1).
  EXPECT_DOUBLE_EQ(metric(rescored, "network", "mae"), 0.0);
  EXPECT_DOUBLE_EQ(metric(rescored, "persistence", "mae"), 1.0);
  EXPECT_DOUBLE_EQ(metric(rescored, "network", "coverage_90"), 1.0);
  EXPECT_TRUE(std::isnan(metric(rescored, "network", "nse"))) << "only the requested metrics are computed";
}

TEST(CliScore, RefusesIntervalsWithoutStoredBoundsAndEmptyPeriods) {
  const fs::path dir = libseq::test::scratch_dir("cli_score_bad");
  sample_results(dir);
  CliRun r = runnel(dir, "score results.h5 --interval 0.8");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("no stored quantile at level 0.1"), std::string::npos) << r.err;
  r = runnel(dir, "score results.h5 --period 2010-01-01..2010-12-31");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("--period"), std::string::npos) << r.err;
  r = runnel(dir, "score absent.h5");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("absent.h5"), std::string::npos) << r.err;
  r = runnel(dir, "score");
  EXPECT_EQ(r.exit_code, 1);
}

// runnel report on the same kind of file: success writes one HTML page with the caution; failures exit 2.
TEST(CliReport, WritesThePageAndRefusesMissingOrForeignFiles) {
  const fs::path dir = libseq::test::scratch_dir("cli_report");
  sample_results(dir);
  CliRun r = runnel(dir, "report results.h5 -o page.html");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  const std::string page = slurp(dir / "page.html");
  EXPECT_NE(page.find("<html"), std::string::npos);
  EXPECT_NE(page.find("site-S1"), std::string::npos);
  EXPECT_NE(r.out.find("CAUTION"), std::string::npos);
  r = runnel(dir, "report absent.h5");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("absent.h5"), std::string::npos) << r.err;
  { std::ofstream(dir / "foreign.h5") << "not a results file"; }
  r = runnel(dir, "report foreign.h5");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("foreign.h5"), std::string::npos) << r.err;
}
