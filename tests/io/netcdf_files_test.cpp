// Reads the CF files of validation/cf_netcdf_files/ and compares every value and time with what xarray (or, for
// valid_range variables, netCDF4-python) decoded from them; see validation/cf_netcdf_files/README.md.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <map>
#include <sstream>
#include <string>
#include <vector>

#include "libseq/error.hpp"
#include "libseq/io/netcdf_reader.hpp"
#include "support/paths.hpp"

namespace libseq::io {
namespace {

struct Row {
  std::string site;
  double latitude;
  double longitude;
  std::string time;
  std::string variable;
  double value;
};

std::filesystem::path file(const std::string& name) {
  return libseq::test::source_dir() / "validation" / "cf_netcdf_files" / "files" / name;
}

std::vector<Row> reference(const std::string& name) {
  std::ifstream in(file(name + ".csv"));
  EXPECT_TRUE(in) << name;
  std::vector<Row> rows;
  std::string line;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#' || line.rfind("site,", 0) == 0) continue;
    std::vector<std::string> f;
    std::stringstream ss(line);
    for (std::string part; std::getline(ss, part, ',');) f.push_back(part);
    EXPECT_EQ(f.size(), 6u) << line;
    rows.push_back({f[0], std::stod(f[1]), std::stod(f[2]), f[3], f[4], f[5] == "nan" ? NAN : std::stod(f[5])});
  }
  return rows;
}

// Tolerance: 1e-6 relative (at least 1e-6 absolute). xarray unpacks int16 in float32 arithmetic while runnel
// unpacks in double and rounds once to float, so the two may differ by an ulp or two of float32 (6e-8 relative).
bool close(double ours, double theirs) {
  if (std::isnan(theirs)) return std::isnan(ours);
  return !std::isnan(ours) && std::fabs(ours - theirs) <= 1e-6 * std::max(1.0, std::fabs(theirs));
}

// Every reference row must be found at its site, time and variable with the same value; and the panel must hold
// no other non-missing value (so a misplaced value cannot hide). Returns the panel for further checks.
data::Panel check_against_reference(const std::string& name, double offset_for_kelvin = 0.0,
                                    const ReadOptions& options = {}) {
  const ReadResult result = read_netcdf(file(name + ".nc"), options);
  const data::Panel& panel = result.panel;
  std::vector<Row> rows;
  for (const Row& row : reference(name)) {  // only the sites and variables asked for
    auto asked = [](const std::vector<std::string>& list, const std::string& key) {
      return list.empty() || std::find(list.begin(), list.end(), key) != list.end();
    };
    if (asked(options.variables, row.variable) && asked(options.sites, row.site)) rows.push_back(row);
  }
  EXPECT_FALSE(rows.empty());
  std::map<std::pair<std::size_t, std::size_t>, std::size_t> present;
  std::size_t compared = 0;
  for (const Row& row : rows) {
    const auto site = panel.find_site(row.site);
    const auto variable = panel.find_variable(row.variable);
    if (!site || !variable) {
      ADD_FAILURE() << name << ": site " << row.site << " or variable " << row.variable << " not read";
      continue;
    }
    EXPECT_TRUE(close(panel.sites()[*site].latitude, row.latitude)) << name << " " << row.site;
    EXPECT_TRUE(close(panel.sites()[*site].longitude, row.longitude)) << name << " " << row.site;
    const std::int64_t t = panel.axis().index_of(data::parse_iso8601(row.time + "Z"));
    if (t < 0) {
      ADD_FAILURE() << name << ": time " << row.time << " not on the axis";
      continue;
    }
    const double expected = row.value + (std::isnan(row.value) ? 0.0 : offset_for_kelvin);
    const double ours = panel.at(*site, static_cast<std::size_t>(t), *variable);
    EXPECT_TRUE(close(ours, expected)) << name << " " << row.site << " " << row.time << " " << row.variable
                                       << ": runnel " << ours << ", reference " << expected;
    if (!std::isnan(row.value)) ++present[{*site, *variable}];
    ++compared;
  }
  for (std::size_t s = 0; s < panel.site_count(); ++s) {
    for (std::size_t v = 0; v < panel.variable_count(); ++v) {
      std::size_t values = 0;
      for (std::size_t t = 0; t < panel.time_count(); ++t) values += std::isnan(panel.at(s, t, v)) ? 0 : 1;
      EXPECT_EQ(values, (present[{s, v}])) << name << " site " << panel.sites()[s].id << " variable " << v;
    }
  }
  EXPECT_EQ(compared, rows.size());
  return panel;
}

TEST(NetcdfFiles, PackedInt16WithDeflateMatchesXarray) {
  const data::Panel panel = check_against_reference("packed_station_time");
  ASSERT_EQ(panel.site_count(), 3u);
  EXPECT_EQ(panel.time_count(), 40u);
  EXPECT_EQ(panel.axis().step_seconds(), 86400);
  // Station metadata as written by make_files.py.
  EXPECT_EQ(panel.sites()[1].name, "Mill weir");
  EXPECT_FLOAT_EQ(static_cast<float>(panel.sites()[1].elevation), 64.5f);
  EXPECT_FLOAT_EQ(static_cast<float>(panel.sites()[2].attributes.at("catchment_area")), 1210.25f);
  EXPECT_EQ(panel.variables()[0].standard_name, "water_volume_transport_in_river_channel");
}

TEST(NetcdfFiles, TargetUnitsConvertDegreesCelsiusToKelvin) {
  ReadOptions options;
  options.variables = {"water_temperature"};
  options.target_units = {{"water_temperature", "K"}};
  const data::Panel panel = check_against_reference("packed_station_time", 273.15, options);
  EXPECT_EQ(panel.variables()[0].units, "K");
}

TEST(NetcdfFiles, NoleapTimeStationOrderMatchesXarrayAndLeavesTheLeapDayMissing) {
  const data::Panel panel = check_against_reference("noleap_time_station");
  EXPECT_EQ(panel.time_count(), 11u);  // 10 noleap days plus the Gregorian 2004-02-29
  const std::int64_t leap_day = panel.axis().index_of(data::parse_iso8601("2004-02-29"));
  ASSERT_GE(leap_day, 0);
  EXPECT_TRUE(std::isnan(panel.at(0, static_cast<std::size_t>(leap_day), 0)));
  EXPECT_EQ(panel.sites()[1].id, "GAUGE_11");  // NC_STRING ids
}

TEST(NetcdfFiles, MissingValueVectorAndValidRangeMatchReference) {
  check_against_reference("missing_and_valid_range");
}

TEST(NetcdfFiles, ContiguousRaggedArrayMatchesXarrayOnTheUnionAxis) {
  const data::Panel panel = check_against_reference("ragged_contiguous");
  EXPECT_EQ(panel.axis().step_seconds(), 3600);
  EXPECT_EQ(panel.axis().start(), data::parse_iso8601("2015-02-28T22:00:00Z"));
}

TEST(NetcdfFiles, SingleStationWithUtcOffsetMatchesXarray) {
  const data::Panel panel = check_against_reference("single_station");
  ASSERT_EQ(panel.site_count(), 1u);
  EXPECT_EQ(panel.sites()[0].id, "FEEDER-9");
  EXPECT_EQ(panel.axis().step_seconds(), 1800);
}

TEST(NetcdfFiles, IncompleteMultidimensionalFileFromNcgenMatchesXarray) {
  const data::Panel panel = check_against_reference("incomplete_ncgen");
  EXPECT_EQ(panel.time_count(), 8u);  // union of 1989-12-30 .. 1990-01-06
}

TEST(NetcdfFiles, SiteSubsetReadsOnlyThoseSitesInTheOrderAsked) {
  ReadOptions options;
  options.sites = {"RIV-C", "RIV-A"};
  const data::Panel panel = check_against_reference("packed_station_time", 0.0, options);
  ASSERT_EQ(panel.site_count(), 2u);
  EXPECT_EQ(panel.sites()[0].id, "RIV-C");
}

}  // namespace
}  // namespace libseq::io
