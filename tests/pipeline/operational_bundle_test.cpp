// fit_job + forecast_from_bundle against run_job: the operational path must reproduce the hindcast's network
// forecast for the same issue time without retraining, from the NetCDF sample and from a CSV copy of the data cut at
// the issue time; and every refusal names the file or key at fault.
//
// The reference is the library's own batch job (pipeline::run_job) on the same tiny job; what is compared is the
// network ensemble's calibrated forecast (mean, median, every quantile) at one issue time for 2 sites × 3 leads.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <fstream>
#include <optional>
#include <sstream>

#include "libseq/error.hpp"
#include "libseq/io/bundle.hpp"
#include "libseq/io/reader.hpp"
#include "libseq/pipeline/operational.hpp"
#include "libseq/pipeline/run.hpp"
#include "libseq/train/model_io.hpp"
#include "support/paths.hpp"

namespace libseq::pipeline {
namespace {

namespace fs = std::filesystem;

// Two catchments, one year of fitting, short calibration and test periods, hidden 4, 2 members, 2 epochs. A log
// target (so the mean goes through the 200-level back-transform grid), a calendar input (so the lead steps' features
// matter) and split-conformal calibration (so the stored calibrators are exercised).
std::string job_text(const fs::path& data, const fs::path& output) {
  return "[job]\nname = \"operational round trip\"\nseed = 7\nthreads = 2\n"
         "[data]\nfiles = [\"" +
         data.string() +
         "\"]\nsites = [\"SRN-TAR01\", \"SRN-OSK02\"]\n"
         "[target]\nvariable = \"discharge\"\ntransform = \"log\"\noffset = 0.01\n"
         "[inputs]\ndynamic = [\"precipitation\", \"air_temperature\"]\ncalendar = [\"day_of_year\"]\n"
         "[windows]\nlookback = 10\nhorizon = 3\n"
         "[periods]\nfit = \"2010-01-01..2010-12-31\"\nvalidation = \"2011-01-01..2011-03-31\"\n"
         "calibration = \"2011-01-01..2011-03-31\"\ntest = \"2011-04-01..2011-04-20\"\n"
         "[network]\ncell = \"lstm\"\nhidden = 4\n"
         "[training]\nepochs = 2\nbatch_size = 64\n"
         "[ensemble]\nmembers = 2\n"
         "[calibration]\nmethod = \"split_conformal\"\n"
         "[baselines]\nmethods = []\n"
         "[outputs]\ndirectory = \"" +
         output.string() +
         "\"\nhdf5 = false\nnetcdf = false\ngeojson = false\n"
         "report = false\n";
}

const data::UtcSeconds issue_time = data::parse_iso8601("2011-04-10");

fs::path catchments() { return test::source_dir() / "data-samples" / "catchments.nc"; }

// Writes the two sites of the sample as a long-form runnel CSV (docs/input-formats.md) from `first` to `last`
// inclusive, with `variables` only. Values are printed with 9 significant digits, which round-trips a float exactly.
void write_csv(const fs::path& path, const std::string& first, const std::string& last,
               const std::vector<std::string>& variables) {
  io::ReadOptions read;
  read.variables = variables;
  read.sites = {"SRN-TAR01", "SRN-OSK02"};
  const data::Panel panel = io::read_panel(catchments(), read).panel;
  std::ofstream out(path);
  for (const auto& v : panel.variables()) out << "# units " << v.name << ": " << v.units << "\n";
  out << "site,time";
  for (const auto& v : panel.variables()) out << "," << v.name;
  out << "\n";
  const auto& axis = panel.axis();
  const data::UtcSeconds from = data::parse_iso8601(first), to = data::parse_iso8601(last);
  for (std::size_t s = 0; s < panel.site_count(); ++s) {
    for (std::size_t t = 0; t < axis.length(); ++t) {
      if (axis.time_at(t) < from || axis.time_at(t) > to) continue;
      out << panel.sites()[s].id << "," << data::format_iso8601(axis.time_at(t));
      for (std::size_t v = 0; v < panel.variable_count(); ++v) {
        char cell[32];
        std::snprintf(cell, sizeof cell, "%.9g", static_cast<double>(panel.at(s, t, v)));
        out << "," << (std::isnan(panel.at(s, t, v)) ? std::string("NaN") : std::string(cell));
      }
      out << "\n";
    }
  }
}

std::string message_of(const std::function<void()>& call) {
  try {
    call();
  } catch (const Error& e) {
    return e.what();
  }
  return "(no error thrown)";
}

// One fit and one batch run for the whole suite (each trains the same 2 members).
class OperationalBundle : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    scratch_ = test::scratch_dir("operational_bundle");
    job_ = parse_job(job_text(catchments(), scratch_ / "run"), scratch_ / "job.toml");
    bundle_ = scratch_ / "model.h5";
    fit_ = fit_job(*job_, {}, bundle_);
    hindcast_ = run_job(*job_).results;
  }
  static void TearDownTestSuite() {
    job_.reset();
    fit_.reset();
    hindcast_.reset();
  }
  static inline fs::path scratch_, bundle_;
  static inline std::optional<JobConfig> job_;
  static inline std::optional<FitSummary> fit_;
  static inline std::optional<io::RunResults> hindcast_;
};

// The hindcast's network block at a site and its row of the issue time.
struct HindcastRow {
  const io::ForecastBlock* block = nullptr;
  std::size_t row = 0;
};
HindcastRow hindcast_row(const io::RunResults& results, const std::string& site) {
  for (const auto& s : results.sites) {
    if (s.site.id != site) continue;
    for (std::size_t i = 0; i < s.issue_times.size(); ++i) {
      if (s.issue_times[i] != issue_time) continue;
      for (const auto& m : s.methods) {
        if (m.method == network_method_name) return {&m, i};
      }
    }
  }
  return {};
}

// The hindcast stores float32; the forecast computes in double and is compared after rounding to float. Tolerance:
// 1e-6 relative (about 8 float ulps), allowing for the networks' products running on a batch of 2 sequences instead of
// the hindcast's batch of all test windows; the observed worst difference is printed.
void expect_matches_hindcast(const ForecastResult& forecast, const io::RunResults& hindcast) {
  ASSERT_EQ(forecast.sites.size(), 2u);
  double worst = 0.0;
  const std::size_t leads = hindcast.leads.size();
  for (const auto& site : forecast.sites) {
    const HindcastRow h = hindcast_row(hindcast, site.site.id);
    ASSERT_NE(h.block, nullptr) << "no hindcast of " << site.site.id << " issued at the issue time";
    ASSERT_EQ(site.leads.size(), leads);
    const std::size_t levels = h.block->quantile_levels.size();
    ASSERT_EQ(forecast.quantile_levels, h.block->quantile_levels);
    auto check = [&](double operational, float batch, const std::string& what) {
      ASSERT_TRUE(std::isfinite(operational)) << what;
      const double difference =
          std::abs(static_cast<float>(operational) - batch) / std::max(1e-6, std::abs(batch * 1.0));
      worst = std::max(worst, difference);
      EXPECT_LE(difference, 1e-6) << site.site.id << " " << what << ": operational " << operational << ", hindcast "
                                  << batch;
    };
    for (std::size_t k = 0; k < leads; ++k) {
      EXPECT_EQ(site.valid_times[k], issue_time + static_cast<std::int64_t>(k + 1) * 86400);
      check(site.mean[k], h.block->mean[h.row * leads + k], "mean, lead " + std::to_string(k + 1));
      check(site.median[k], h.block->median[h.row * leads + k], "median, lead " + std::to_string(k + 1));
      for (std::size_t q = 0; q < levels; ++q) {
        check(site.quantiles[k * levels + q], h.block->quantiles[(h.row * leads + k) * levels + q],
              "quantile " + std::to_string(h.block->quantile_levels[q]) + ", lead " + std::to_string(k + 1));
      }
    }
  }
  std::printf("worst relative difference operational vs hindcast: %.3g\n", worst);
}

TEST_F(OperationalBundle, ForecastFromTheBundleReproducesTheHindcastOfTheSameIssue) {
  ASSERT_EQ(fit_->models_trained, 1u);
  ASSERT_EQ(fit_->training.size(), 2u);
  ForecastOptions options;
  options.csv = scratch_ / "forecast.csv";
  options.netcdf = scratch_ / "forecast.nc";
  const auto forecast = forecast_from_bundle(bundle_, {catchments()}, issue_time, 3, options);
  EXPECT_TRUE(forecast.calibrated);
  expect_matches_hindcast(forecast, *hindcast_);

  // The CSV carries the caution, the header with every level, and one row per site and lead.
  std::ifstream in(*options.csv);
  std::vector<std::string> lines;
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  ASSERT_EQ(lines.size(), 3u + 2 * 3);
  EXPECT_EQ(lines[0].rfind("# ", 0), 0u);
  EXPECT_EQ(lines[2], "site_id,issue_time,valid_time,lead,mean,median,q_0.05,q_0.1,q_0.25,q_0.5,q_0.75,q_0.9,q_0.95");
  EXPECT_EQ(lines[3].rfind("SRN-TAR01,2011-04-10T00:00:00Z,2011-04-11T00:00:00Z,1,", 0), 0u) << lines[3];
  EXPECT_TRUE(fs::exists(*options.netcdf));
}

// Data that end at the issue time (so the lead steps lie beyond the file and their calendar features come from the
// extended axis), in another format: the forecast must be the same, bit for bit, as from the full NetCDF sample.
TEST_F(OperationalBundle, DataCutAtTheIssueTimeGiveTheSameForecast) {
  const fs::path csv = scratch_ / "latest.csv";
  write_csv(csv, "2011-03-01", "2011-04-10", {"discharge", "precipitation", "air_temperature"});
  const auto full = forecast_from_bundle(bundle_, {catchments()}, issue_time, 3);
  const auto cut = forecast_from_bundle(bundle_, {csv}, issue_time, 3);
  ASSERT_EQ(cut.sites.size(), full.sites.size());
  for (std::size_t s = 0; s < cut.sites.size(); ++s) {
    EXPECT_EQ(cut.sites[s].site.id, full.sites[s].site.id);
    EXPECT_EQ(cut.sites[s].mean, full.sites[s].mean);
    EXPECT_EQ(cut.sites[s].median, full.sites[s].median);
    EXPECT_EQ(cut.sites[s].quantiles, full.sites[s].quantiles);
  }
  // A shorter horizon is the first leads of the full one.
  const auto one = forecast_from_bundle(bundle_, {csv}, issue_time, 1);
  ASSERT_EQ(one.sites[0].leads.size(), 1u);
  EXPECT_EQ(one.sites[0].mean[0], full.sites[0].mean[0]);
}

TEST_F(OperationalBundle, HorizonAboveTheBundlesIsRefusedNamingBoth) {
  const std::string message = message_of([&] { forecast_from_bundle(bundle_, {catchments()}, issue_time, 4); });
  EXPECT_NE(message.find("horizon: 4 is outside 1..3"), std::string::npos) << message;
  EXPECT_NE(message.find(bundle_.string()), std::string::npos) << message;
}

TEST_F(OperationalBundle, IssueTimeWithoutEnoughHistoryIsRefused) {
  const fs::path csv = scratch_ / "short.csv";
  write_csv(csv, "2011-04-05", "2011-04-10", {"discharge", "precipitation", "air_temperature"});
  const std::string message = message_of([&] { forecast_from_bundle(bundle_, {csv}, issue_time, 3); });
  EXPECT_NE(message.find("needs 10 steps of history (windows.lookback), from 2011-04-01"), std::string::npos)
      << message;
  EXPECT_NE(message.find("start at 2011-04-05"), std::string::npos) << message;
  const std::string late = message_of([&] { forecast_from_bundle(bundle_, {csv}, issue_time + 86400, 3); });
  EXPECT_NE(late.find("after the end of the data"), std::string::npos) << late;
}

TEST_F(OperationalBundle, DataFileMissingAVariableIsRefusedNamingFileAndVariable) {
  const fs::path csv = scratch_ / "no_temperature.csv";
  write_csv(csv, "2011-03-01", "2011-04-10", {"discharge", "precipitation"});
  const std::string message = message_of([&] { forecast_from_bundle(bundle_, {csv}, issue_time, 3); });
  EXPECT_NE(message.find(csv.string()), std::string::npos) << message;
  EXPECT_NE(message.find("'air_temperature' not found"), std::string::npos) << message;
}

TEST_F(OperationalBundle, FilesThatAreNotJobBundlesAreRefusedNamingTheFile) {
  // A NetCDF-4 file is HDF5 underneath but not a runnel bundle.
  const std::string netcdf = message_of([&] { forecast_from_bundle(catchments(), {catchments()}, issue_time, 1); });
  EXPECT_NE(netcdf.find(catchments().string()), std::string::npos) << netcdf;
  EXPECT_NE(netcdf.find("not a runnel model bundle"), std::string::npos) << netcdf;
  // A runnel bundle of one network (train::save_model) lacks the job entries.
  nn::NetworkOptions o;
  o.input_size = 2;
  o.hidden_size = 3;
  const fs::path single = scratch_ / "single_network.h5";
  train::save_model(single, nn::Network<float>(o));
  const std::string one = message_of([&] { forecast_from_bundle(single, {catchments()}, issue_time, 1); });
  EXPECT_NE(one.find(single.string() + ": not a bundle of a whole job (text entry 'bundle.kind'"), std::string::npos)
      << one;
  // A job bundle with an entry removed names the entry.
  io::ModelBundle broken = io::load_bundle(bundle_);
  broken.arrays.erase("features.target_scaling");
  const fs::path damaged = scratch_ / "damaged.h5";
  io::save_bundle(damaged, broken);
  const std::string missing = message_of([&] { forecast_from_bundle(damaged, {catchments()}, issue_time, 1); });
  EXPECT_NE(missing.find(damaged.string() + ": array 'features.target_scaling' is missing"), std::string::npos)
      << missing;
}

// The bundle is self-describing: job text, provenance, plan statistics, per-member networks and calibrators.
TEST_F(OperationalBundle, BundleHoldsTheJobThePlanTheMembersAndTheCalibrators) {
  const io::ModelBundle b = io::load_bundle(bundle_);
  EXPECT_EQ(b.text.at("bundle.kind"), job_bundle_kind);
  EXPECT_EQ(b.text.at("job.text"), job_->job_text);
  EXPECT_EQ(b.text.at("model0.sites"), "SRN-TAR01\nSRN-OSK02");
  EXPECT_EQ(b.arrays.at("features.dynamic_scaling").shape, (std::vector<std::size_t>{2, 2}));
  EXPECT_TRUE(b.arrays.count("model0.member1.network.parameters"));
  EXPECT_TRUE(b.text.count("model0.member1.train.termination"));
  EXPECT_EQ(b.arrays.at("model0.interval1.leads").shape, (std::vector<std::size_t>{3, 6}));
  // Columns: lead, n, k, Q, coverage before, coverage after. 90 calibration days × 2 sites per lead give a finite Q
  // (k <= n), so the stored calibration does move the interval bounds that the round trip compares.
  const auto& leads = b.arrays.at("model0.interval1.leads").doubles();
  for (std::size_t k = 0; k < 3; ++k) {
    EXPECT_EQ(leads[k * 6], static_cast<double>(k));
    EXPECT_GE(leads[k * 6 + 1], 150.0);
    EXPECT_TRUE(std::isfinite(leads[k * 6 + 3]));
    EXPECT_NE(leads[k * 6 + 3], 0.0);
  }
  EXPECT_FALSE(b.text.at("caution").empty());
}

}  // namespace
}  // namespace libseq::pipeline

namespace libseq::pipeline {
namespace {

// Per-site models with one member each: more models than members, so fit_job and run_job train the two models side
// by side on 2 threads. The bundle must still reproduce the hindcast, and fitting with 1 thread must store the same
// networks (the forecast from either bundle is the same, bit for bit).
TEST(OperationalBundleParallel, PerSiteModelsFittedInParallelReproduceTheHindcastWithAnyThreadCount) {
  const fs::path scratch = test::scratch_dir("operational_bundle_parallel");
  std::string text = job_text(catchments(), scratch / "run");
  for (const auto& [from, to] : std::vector<std::pair<std::string, std::string>>{
           {"members = 2", "members = 1"}, {"[training]\n", "[training]\nscope = \"per_site\"\n"}}) {
    const auto at = text.find(from);
    ASSERT_NE(at, std::string::npos) << from;
    text.replace(at, from.size(), to);
  }
  const JobConfig job = parse_job(text, scratch / "job.toml");
  RunOptions two, one;
  two.threads = 2;
  one.threads = 1;
  const auto fit_two = fit_job(job, two, scratch / "model2.h5");
  const auto fit_one = fit_job(job, one, scratch / "model1.h5");
  ASSERT_EQ(fit_two.models_trained, 2u);
  ASSERT_EQ(fit_two.training.size(), 2u);
  EXPECT_EQ(fit_two.training[0].model, "SRN-TAR01");  // merged in model order whatever finished first
  EXPECT_EQ(fit_two.training[1].model, "SRN-OSK02");
  const auto hindcast = run_job(job, two).results;
  const auto from_two = forecast_from_bundle(scratch / "model2.h5", {catchments()}, issue_time, 3, {});
  const auto from_one = forecast_from_bundle(scratch / "model1.h5", {catchments()}, issue_time, 3, {});
  expect_matches_hindcast(from_two, hindcast);
  ASSERT_EQ(from_two.sites.size(), from_one.sites.size());
  for (std::size_t i = 0; i < from_two.sites.size(); ++i) {
    EXPECT_EQ(from_two.sites[i].quantiles, from_one.sites[i].quantiles) << from_two.sites[i].site.id;
    EXPECT_EQ(from_two.sites[i].mean, from_one.sites[i].mean) << from_two.sites[i].site.id;
  }
}

}  // namespace
}  // namespace libseq::pipeline
