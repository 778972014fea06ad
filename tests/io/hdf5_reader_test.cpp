#include "libseq/io/hdf5_reader.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <sstream>

#include "hdf5_reader_test_writer.hpp"
#include "libseq/error.hpp"
#include "support/paths.hpp"

namespace libseq::io {

namespace {

using test::PanelFileFaults;
using test::write_test_panel;

bool contains(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

// Runs `read` and returns the message of the exception of type E it throws; fails the test otherwise.
template <typename E, typename F>
std::string message_of(F read) {
  try {
    read();
  } catch (const E& e) {
    return e.what();
  } catch (const std::exception& e) {
    ADD_FAILURE() << "wrong exception type: " << e.what();
    return {};
  }
  ADD_FAILURE() << "no exception";
  return {};
}

std::filesystem::path panel_file(const std::string& test, const PanelFileFaults& faults = {}) {
  const auto path = test::scratch_dir("hdf5_reader/" + test) / "panel.h5";
  write_test_panel(path, faults);
  return path;
}

}  // namespace

// Outside reference: validation/io_readers/panel_h5py.h5 was written by h5py (Debian python3-h5py, File and
// create_dataset) and panel_h5py_expected.txt holds the float32 values numpy gives for it (make_reference.py).
// Pass rule: every value equal to the float32 reference (exact; NaN where the reference says nan).
TEST(Hdf5Reader, ReadsAPanelWrittenByH5pyExactly) {
  const auto dir = test::source_dir() / "validation" / "io_readers";
  const ReadResult result = read_hdf5(dir / "panel_h5py.h5");
  const data::Panel& panel = result.panel;
  ASSERT_EQ(panel.site_count(), 3u);
  ASSERT_EQ(panel.time_count(), 8u);
  ASSERT_EQ(panel.variable_count(), 2u);
  EXPECT_TRUE(result.warnings.empty());
  EXPECT_EQ(panel.axis().step_seconds(), 86400);
  EXPECT_EQ(data::format_iso8601(panel.axis().start()), "2001-01-01T00:00:00Z");
  EXPECT_EQ(panel.sites()[0].name, "Rh\u00f4ne at Pont");
  EXPECT_DOUBLE_EQ(panel.sites()[2].latitude, -33.9);
  EXPECT_TRUE(std::isnan(panel.sites()[1].elevation));
  EXPECT_DOUBLE_EQ(panel.sites()[0].attributes.at("area_km2"), 95500.0);
  const auto q = panel.require_variable("water_volume_transport_in_river_channel", "test");
  const auto pr = panel.require_variable("lwe_thickness_of_precipitation_amount", "test");  // fixed-length string
  EXPECT_EQ(panel.variables()[q].units, "m3 s-1");
  EXPECT_EQ(panel.variables()[q].long_name, "river discharge");

  std::ifstream expected(dir / "panel_h5py_expected.txt");
  std::string line;
  std::size_t compared = 0;
  while (std::getline(expected, line)) {
    if (line.empty() || line[0] == '#') continue;
    std::istringstream fields(line);
    std::string site, time, variable, value;
    fields >> site >> time >> variable >> value;
    const auto s = panel.find_site(site);
    ASSERT_TRUE(s.has_value()) << site;
    const auto t = panel.axis().index_of(data::parse_iso8601(time));
    ASSERT_GE(t, 0) << time;
    const float got = panel.at(*s, static_cast<std::size_t>(t), variable == "discharge" ? q : pr);
    if (value == "nan") {
      EXPECT_TRUE(std::isnan(got)) << line;
    } else {
      EXPECT_EQ(got, std::stof(value)) << line;
    }
    ++compared;
  }
  EXPECT_EQ(compared, 3u * 8u * 2u);
}

TEST(Hdf5Reader, RoundTripsTheTestPanelWithFillValueAsMissing) {
  const ReadResult result = read_hdf5(panel_file("round_trip"));
  const data::Panel& panel = result.panel;
  ASSERT_EQ(panel.site_count(), 3u);
  ASSERT_EQ(panel.time_count(), 5u);
  EXPECT_EQ(panel.variables()[0].name, "pr");  // members of /variables are listed by name
  EXPECT_EQ(panel.variables()[1].name, "q");
  EXPECT_EQ(panel.sites()[0].name, "Alpha \"quoted\"");
  EXPECT_DOUBLE_EQ(panel.sites()[1].latitude, -20.25);
  EXPECT_TRUE(std::isnan(panel.sites()[1].elevation));  // /sites/elevation absent
  EXPECT_DOUBLE_EQ(panel.sites()[2].attributes.at("area_km2"), 3.5);
  for (std::size_t s = 0; s < 3; ++s) {
    for (std::size_t t = 0; t < 5; ++t) {
      EXPECT_EQ(panel.at(s, t, 0), static_cast<float>(test::test_pr(s, t)));
      if (s == 0 && t == 3) {
        EXPECT_TRUE(std::isnan(panel.at(s, t, 1)));  // _FillValue -1
      } else {
        EXPECT_EQ(panel.at(s, t, 1), static_cast<float>(test::test_q(s, t)));
      }
    }
  }
}

TEST(Hdf5Reader, ReadsOnlyTheRequestedSitesAndVariablesInFileOrder) {
  ReadOptions options;
  options.sites = {"C", "A"};
  options.variables = {"q", "precipitation_flux"};
  const data::Panel panel = read_hdf5(panel_file("subset"), options).panel;
  ASSERT_EQ(panel.site_count(), 2u);
  EXPECT_EQ(panel.sites()[0].id, "A");
  EXPECT_EQ(panel.sites()[1].id, "C");
  ASSERT_EQ(panel.variable_count(), 2u);
  EXPECT_EQ(panel.variables()[0].name, "q");  // request order
  EXPECT_EQ(panel.variables()[1].name, "pr");
  EXPECT_EQ(panel.at(1, 4, 0), static_cast<float>(test::test_q(2, 4)));
  EXPECT_EQ(panel.at(1, 4, 1), static_cast<float>(test::test_pr(2, 4)));
  EXPECT_EQ(panel.at(0, 1, 1), static_cast<float>(test::test_pr(0, 1)));
}

// Outside reference for the factor: 1 L = 1 dm3 = 1e-3 m3 (BIPM, The International System of Units, 9th edition,
// 2019, Table 8). Tolerance: float rounding (4 ulp).
TEST(Hdf5Reader, ConvertsUnitsOnRequest) {
  ReadOptions options;
  options.target_units = {{"q", "L s-1"}};
  const data::Panel panel = read_hdf5(panel_file("units"), options).panel;
  const auto q = panel.require_variable("q", "test");
  EXPECT_EQ(panel.variables()[q].units, "L s-1");
  EXPECT_FLOAT_EQ(panel.at(2, 4, q), static_cast<float>(test::test_q(2, 4) * 1000.0));
}

TEST(Hdf5Reader, MissingVariableIsRefusedListingThePresentOnes) {
  const auto path = panel_file("missing_variable");
  ReadOptions options;
  options.variables = {"tas"};
  const std::string message = message_of<DataError>([&] { read_hdf5(path, options); });
  EXPECT_TRUE(contains(message, path.string())) << message;
  EXPECT_TRUE(contains(message, "'tas'")) << message;
  EXPECT_TRUE(contains(message, "pr (precipitation_flux), q")) << message;
}

TEST(Hdf5Reader, UnknownSiteIsRefusedListingThePresentOnes) {
  const auto path = panel_file("missing_site");
  ReadOptions options;
  options.sites = {"Z"};
  const std::string message = message_of<DataError>([&] { read_hdf5(path, options); });
  EXPECT_TRUE(contains(message, path.string()) && contains(message, "'Z'") && contains(message, "A, B, C")) << message;
}

TEST(Hdf5Reader, TimeOnlyDatasetWhereSiteByTimeExpectedIsAFormatError) {
  PanelFileFaults faults;
  faults.q_one_dimensional = true;
  const auto path = panel_file("wrong_dimensions", faults);
  const std::string message = message_of<FormatError>([&] { read_hdf5(path); });
  EXPECT_TRUE(contains(message, path.string())) << message;
  EXPECT_TRUE(contains(message, "/variables/q")) << message;
  EXPECT_TRUE(contains(message, "expected 2 [site=3, time=5]")) << message;
}

TEST(Hdf5Reader, NonMonotonicDuplicateAndIrregularTimesAreDataErrors) {
  const std::int64_t day = 86400;
  const std::int64_t t0 = 978307200;
  struct Case {
    std::vector<std::int64_t> times;
    std::string expected;
  };
  const std::vector<Case> cases{
      {{t0, t0 + day, t0 + 2 * day, t0 + day, t0 + 4 * day}, "index 3: time 2001-01-02T00:00:00Z is earlier"},
      {{t0, t0 + day, t0 + day, t0 + 2 * day, t0 + 3 * day}, "index 2: time 2001-01-02T00:00:00Z repeats"},
      {{t0, t0 + day, t0 + 2 * day, t0 + 4 * day, t0 + 5 * day}, "index 3: time 2001-01-05T00:00:00Z is 172800 s"},
  };
  for (std::size_t i = 0; i < cases.size(); ++i) {
    PanelFileFaults faults;
    faults.times = cases[i].times;
    const auto path = panel_file("bad_times_" + std::to_string(i), faults);
    const std::string message = message_of<DataError>([&] { read_hdf5(path); });
    EXPECT_TRUE(contains(message, path.string() + ": /time")) << message;
    EXPECT_TRUE(contains(message, cases[i].expected)) << message;
  }
}

TEST(Hdf5Reader, SiteWithEveryValueMissingIsSkippedWithAWarning) {
  PanelFileFaults faults;
  faults.all_missing_site = 1;
  const ReadResult result = read_hdf5(panel_file("all_missing", faults));
  ASSERT_EQ(result.panel.site_count(), 2u);
  EXPECT_EQ(result.panel.sites()[1].id, "C");
  EXPECT_EQ(result.panel.at(1, 0, 1), static_cast<float>(test::test_q(2, 0)));
  ASSERT_EQ(result.warnings.size(), 1u);
  EXPECT_TRUE(contains(result.warnings[0], "site 'B' skipped")) << result.warnings[0];
}

TEST(Hdf5Reader, InfinityIsADataErrorNamingVariableSiteAndTime) {
  PanelFileFaults faults;
  faults.inf_in_pr = true;
  const auto path = panel_file("inf", faults);
  const std::string message = message_of<DataError>([&] { read_hdf5(path); });
  EXPECT_TRUE(contains(message, path.string())) << message;
  EXPECT_TRUE(contains(message, "variable 'pr', site 'B', time 2001-01-03T00:00:00Z")) << message;
  EXPECT_TRUE(contains(message, "+Inf")) << message;
}

// A float64 value beyond the float32 range becomes infinite in the panel's storage and is refused like ±Inf,
// rather than being clipped silently.
TEST(Hdf5Reader, Float64BeyondTheFloatRangeIsRefusedLikeInfinity) {
  PanelFileFaults faults;
  faults.huge_in_q = true;
  const auto path = panel_file("huge", faults);
  const std::string message = message_of<DataError>([&] { read_hdf5(path); });
  EXPECT_TRUE(contains(message, "variable 'q', site 'C', time 2001-01-02T00:00:00Z")) << message;
}

TEST(Hdf5Reader, FileWithoutLayoutAttributeIsAFormatError) {
  PanelFileFaults faults;
  faults.no_layout_attribute = true;
  const auto path = panel_file("no_layout", faults);
  const std::string message = message_of<FormatError>([&] { read_hdf5(path); });
  EXPECT_TRUE(contains(message, path.string()) && contains(message, "runnel_layout")) << message;
}

TEST(Hdf5Reader, TimeUnitsOtherThanEpochSecondsAreAFormatError) {
  PanelFileFaults faults;
  faults.time_units = "days since 2000-01-01";
  const auto path = panel_file("time_units", faults);
  const std::string message = message_of<FormatError>([&] { read_hdf5(path); });
  EXPECT_TRUE(contains(message, "/time") && contains(message, "days since 2000-01-01")) << message;
}

TEST(Hdf5Reader, TruncatedFileIsAnIoErrorNamingThePath) {
  const auto path = panel_file("truncated");
  std::filesystem::resize_file(path, std::filesystem::file_size(path) / 2);
  try {
    read_hdf5(path);
    FAIL() << "no exception";
  } catch (const IoError& e) {
    EXPECT_TRUE(contains(e.what(), path.string())) << e.what();
  } catch (const FormatError& e) {
    EXPECT_TRUE(contains(e.what(), path.string())) << e.what();
  }
}

TEST(Hdf5Reader, NonexistentFileIsAnIoErrorNamingThePath) {
  const auto path = test::scratch_dir("hdf5_reader/nonexistent") / "nothing.h5";
  const std::string message = message_of<IoError>([&] { read_hdf5(path); });
  EXPECT_TRUE(contains(message, path.string()) && contains(message, "not found")) << message;
}

}  // namespace libseq::io
