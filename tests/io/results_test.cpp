#include "libseq/io/results.hpp"

#include <gtest/gtest.h>
#include <netcdf.h>

#include <cmath>
#include <fstream>

#include "libseq/caution.hpp"
#include "libseq/error.hpp"
#include "support/paths.hpp"

namespace libseq::io {

namespace {

RunResults sample_results() {
  RunResults r;
  r.title = "Test hindcast";
  r.summary = "two sites, two methods";
  r.mode = "forecast";
  r.target_variable = "discharge";
  r.target_units = "m3 s-1";
  r.target_standard_name = "water_volume_transport_in_river_channel";
  r.step_seconds = 86400;
  r.leads = {1, 2};
  r.test_period = "2000-01-01..2000-01-03";
  for (int s = 0; s < 2; ++s) {
    SiteResults site;
    site.site.id = s == 0 ? "G1" : "gauge/2";  // the second id is not a safe HDF5 name
    site.site.name = s == 0 ? "Upper weir" : "Lower bridge";
    site.site.latitude = 60.5 + s;
    site.site.longitude = 10.25 + s;
    site.site.elevation = s == 0 ? 300.0 : std::nan("");
    site.issue_times = {946684800, 946771200, 946857600};
    site.observed = {1, 2, 2, 3, 3, NAN};
    for (const char* name : {"network", "persistence"}) {
      ForecastBlock b;
      b.method = name;
      b.mean = {1.1f, 2.1f, 2.1f, 3.1f, 3.1f, 4.1f};
      b.median = b.mean;
      b.quantile_levels = {0.05, 0.95};
      for (float m : b.mean) {
        b.quantiles.push_back(m - 0.5f);
        b.quantiles.push_back(m + 0.5f);
      }
      if (std::string(name) == "network") {
        b.member_count = 1;
        b.members = b.mean;
      }
      site.methods.push_back(b);
    }
    r.sites.push_back(site);
    r.metrics.push_back({site.site.id, "network", -1, "nse", 0.8 + s * 0.01, 5, 1});
    r.metrics.push_back({site.site.id, "persistence", -1, "nse", 0.7, 5, 1});
  }
  TrainingRecord t;
  t.model = "*";
  t.termination = "early_stopped";
  t.epochs = 3;
  t.train_loss = {3, 2, 1};
  t.validation_loss = {3.5, 2.5, 2.6};
  t.diagnostic_lags = {1, 10};
  t.diagnostic_gradient_norms = {0.1, 1e-5};
  r.training.push_back(t);
  r.provenance.job_text = "[job]\nname = \"x\"\n";
  r.provenance.created = "2026-12-01T00:00:00Z";
  r.provenance.seeds = {42};
  r.provenance.inputs = {{"a.nc", "00"}};
  return r;
}

}  // namespace

TEST(Results, Hdf5RoundTripKeepsEverything) {
  const auto dir = test::scratch_dir("results_hdf5");
  const RunResults written = sample_results();
  write_results_hdf5(dir / "r.h5", written);
  const RunResults read = read_results_hdf5(dir / "r.h5");
  ASSERT_EQ(read.sites.size(), 2u);
  EXPECT_EQ(read.sites[1].site.id, "gauge/2");
  EXPECT_TRUE(std::isnan(read.sites[1].site.elevation));
  EXPECT_EQ(read.sites[0].methods[0].members, written.sites[0].methods[0].members);
  EXPECT_EQ(read.sites[1].methods[1].quantiles, written.sites[1].methods[1].quantiles);
  EXPECT_TRUE(std::isnan(read.sites[0].observed[5]));
  ASSERT_EQ(read.metrics.size(), 4u);
  EXPECT_DOUBLE_EQ(read.metrics[2].value, 0.81);
  EXPECT_EQ(read.training[0].validation_loss, written.training[0].validation_loss);
  EXPECT_EQ(read.provenance.job_text, written.provenance.job_text);
  // No temporary file is left beside the result.
  std::size_t files = 0;
  for (const auto& entry : std::filesystem::directory_iterator(dir)) files += entry.is_regular_file() ? 1 : 0;
  EXPECT_EQ(files, 1u);
}

TEST(Results, RejectsFilesThatAreNotResults) {
  const auto dir = test::scratch_dir("results_bad");
  { std::ofstream(dir / "x.h5") << "not hdf5"; }
  EXPECT_THROW(read_results_hdf5(dir / "x.h5"), IoError);
  EXPECT_THROW(read_results_hdf5(dir / "missing.h5"), IoError);
  RunResults broken = sample_results();
  broken.sites[0].methods[0].mean.pop_back();
  EXPECT_THROW(write_results_hdf5(dir / "y.h5", broken), DataError);
  EXPECT_FALSE(std::filesystem::exists(dir / "y.h5"));
}

TEST(Results, NetcdfIsCfTimeSeriesWithCaution) {
  const auto dir = test::scratch_dir("results_netcdf");
  write_results_netcdf(dir / "r.nc", sample_results());
  int nc = -1;
  ASSERT_EQ(nc_open((dir / "r.nc").c_str(), NC_NOWRITE, &nc), NC_NOERR);
  char text[1024] = {0};
  ASSERT_EQ(nc_get_att_text(nc, NC_GLOBAL, "featureType", text), NC_NOERR);
  EXPECT_STREQ(text, "timeSeries");
  std::size_t length = 0;
  ASSERT_EQ(nc_inq_attlen(nc, NC_GLOBAL, "caution", &length), NC_NOERR);
  std::string caution(length, '\0');
  nc_get_att_text(nc, NC_GLOBAL, "caution", caution.data());
  EXPECT_EQ(caution, caution_text());
  int var = -1;
  ASSERT_EQ(nc_inq_varid(nc, "network_quantiles", &var), NC_NOERR);
  float values[2] = {0, 0};
  const std::size_t start[4] = {1, 2, 1, 0}, count[4] = {1, 1, 1, 2};
  ASSERT_EQ(nc_get_vara_float(nc, var, start, count, values), NC_NOERR);
  EXPECT_FLOAT_EQ(values[0], 4.1f - 0.5f);
  EXPECT_FLOAT_EQ(values[1], 4.1f + 0.5f);
  nc_close(nc);
}

TEST(Results, GeojsonHasOnePointPerSiteWithPooledMetrics) {
  const auto dir = test::scratch_dir("results_geojson");
  write_station_geojson(dir / "s.geojson", sample_results());
  std::ifstream in(dir / "s.geojson");
  const std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  EXPECT_NE(text.find("\"coordinates\": [10.25, 60.5, 300]"), std::string::npos);
  EXPECT_NE(text.find("\"network_nse\": 0.81"), std::string::npos);
  EXPECT_NE(text.find("\"elevation_m\": null"), std::string::npos);
  EXPECT_NE(text.find("\"caution\""), std::string::npos);
}

// FIPS 180-2, appendix B.1: SHA-256("abc") (a published test vector).
TEST(Results, Sha256MatchesThePublishedTestVector) {
  const auto dir = test::scratch_dir("results_sha");
  { std::ofstream(dir / "abc.txt", std::ios::binary) << "abc"; }
  EXPECT_EQ(sha256_of_file(dir / "abc.txt"), "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  { std::ofstream(dir / "empty.txt", std::ios::binary); }
  EXPECT_EQ(sha256_of_file(dir / "empty.txt"), "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
}

}  // namespace libseq::io
