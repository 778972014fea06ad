// Bad inputs for the CF NetCDF reader: each case checks the exception type and that the message names the file and
// the variable (or site) at fault. Bad files are written here with the NetCDF-C API into the test's scratch dir.
#include "libseq/io/netcdf_reader.hpp"

#include <gtest/gtest.h>
#include <netcdf.h>

#include <cmath>
#include <fstream>
#include <limits>
#include <string>
#include <vector>

#include "libseq/error.hpp"
#include "support/paths.hpp"

namespace libseq::io {
namespace {

// A small orthogonal (station, time) file: flow(station, time) float with _FillValue -9999, catchment(station).
struct Spec {
  std::vector<double> times = {0, 1, 2, 3};
  std::string time_units = "days since 2000-01-01";
  std::string calendar = "standard";
  std::vector<std::string> ids = {"S1", "S2"};
  std::vector<float> values;  // station-major; empty: 10*station + time
  std::string flow_units = "m3 s-1";
};

void ok(int status) {
  if (status != NC_NOERR) throw std::runtime_error(std::string("test writer: ") + nc_strerror(status));
}

std::filesystem::path write(const std::string& name, const Spec& spec) {
  const auto path = libseq::test::scratch_dir("netcdf_reader_" + name) / (name + ".nc");
  int nc, station, time, strlen_dim, id_var, time_var, flow_var, area_var;
  ok(nc_create(path.c_str(), NC_NETCDF4 | NC_CLOBBER, &nc));
  ok(nc_put_att_text(nc, NC_GLOBAL, "featureType", 10, "timeSeries"));
  ok(nc_def_dim(nc, "station", spec.ids.size(), &station));
  ok(nc_def_dim(nc, "time", spec.times.size(), &time));
  ok(nc_def_dim(nc, "id_strlen", 8, &strlen_dim));
  int id_dims[2] = {station, strlen_dim};
  ok(nc_def_var(nc, "station_id", NC_CHAR, 2, id_dims, &id_var));
  ok(nc_put_att_text(nc, id_var, "cf_role", 13, "timeseries_id"));
  ok(nc_def_var(nc, "time", NC_DOUBLE, 1, &time, &time_var));
  ok(nc_put_att_text(nc, time_var, "standard_name", 4, "time"));
  ok(nc_put_att_text(nc, time_var, "units", spec.time_units.size(), spec.time_units.c_str()));
  ok(nc_put_att_text(nc, time_var, "calendar", spec.calendar.size(), spec.calendar.c_str()));
  int flow_dims[2] = {station, time};
  ok(nc_def_var(nc, "flow", NC_FLOAT, 2, flow_dims, &flow_var));
  const float fill = -9999.0f;
  ok(nc_def_var_fill(nc, flow_var, 0, &fill));
  ok(nc_put_att_text(nc, flow_var, "units", spec.flow_units.size(), spec.flow_units.c_str()));
  ok(nc_def_var(nc, "catchment", NC_FLOAT, 1, &station, &area_var));
  ok(nc_enddef(nc));
  for (std::size_t s = 0; s < spec.ids.size(); ++s) {
    std::string id = spec.ids[s];
    id.resize(8, '\0');
    std::size_t start[2] = {s, 0};
    std::size_t count[2] = {1, 8};
    ok(nc_put_vara_text(nc, id_var, start, count, id.data()));
  }
  ok(nc_put_var_double(nc, time_var, spec.times.data()));
  std::vector<float> values = spec.values;
  if (values.empty()) {
    for (std::size_t s = 0; s < spec.ids.size(); ++s) {
      for (std::size_t t = 0; t < spec.times.size(); ++t) values.push_back(static_cast<float>(10 * s + t));
    }
  }
  ok(nc_put_var_float(nc, flow_var, values.data()));
  std::vector<float> area(spec.ids.size(), 12.5f);
  ok(nc_put_var_float(nc, area_var, area.data()));
  ok(nc_close(nc));
  return path;
}

// Runs the read, expects exception E, and checks that the message contains every one of `parts`.
template <typename E>
void expect_error(const std::filesystem::path& path, const ReadOptions& options,
                  const std::vector<std::string>& parts) {
  try {
    read_netcdf(path, options);
    ADD_FAILURE() << "no exception for " << path;
  } catch (const E& e) {
    const std::string message = e.what();
    for (const auto& part : parts) EXPECT_NE(message.find(part), std::string::npos) << message << "\n  lacks: " << part;
  } catch (const std::exception& e) {
    ADD_FAILURE() << "wrong exception type: " << e.what();
  }
}

TEST(NetcdfReader, ReadsTheWrittenFileBackExactly) {
  const auto path = write("good", Spec{});
  const ReadResult result = read_netcdf(path);
  ASSERT_EQ(result.panel.site_count(), 2u);
  EXPECT_EQ(result.panel.time_count(), 4u);
  EXPECT_EQ(result.panel.at(1, 3, 0), 13.0f);
  EXPECT_EQ(result.panel.sites()[0].attributes.at("catchment"), 12.5);
  EXPECT_TRUE(result.warnings.empty());
}

TEST(NetcdfReader, NonexistentFileIsAnIoErrorNamingThePath) {
  expect_error<IoError>(libseq::test::scratch_dir("netcdf_reader_none") / "absent.nc", {}, {"absent.nc"});
}

TEST(NetcdfReader, TextFileNamedNcIsAFormatErrorWithTheNetcdfText) {
  const auto path = libseq::test::scratch_dir("netcdf_reader_text") / "notes.nc";
  std::ofstream(path) << "station,time,flow\nS1,2000-01-01,3.5\n";
  expect_error<FormatError>(path, {}, {"notes.nc", "not a NetCDF file", nc_strerror(NC_ENOTNC)});
}

TEST(NetcdfReader, TruncatedCopiesFailWithThePath) {
  // A NetCDF-4 (HDF5) file and a classic file, each cut to half its size.
  for (const char* name : {"packed_station_time.nc", "missing_and_valid_range.nc"}) {
    const auto source = libseq::test::source_dir() / "validation" / "cf_netcdf_files" / "files" / name;
    const auto path = libseq::test::scratch_dir("netcdf_reader_truncated") / name;
    std::filesystem::copy_file(source, path);
    std::filesystem::resize_file(path, std::filesystem::file_size(source) / 2);
    try {
      read_netcdf(path);
      ADD_FAILURE() << "no exception for truncated " << name;
    } catch (const Error& e) {
      const std::string message = e.what();
      EXPECT_TRUE(dynamic_cast<const IoError*>(&e) || dynamic_cast<const FormatError*>(&e)) << message;
      EXPECT_NE(message.find(name), std::string::npos) << message;
      EXPECT_NE(message.find("NetCDF"), std::string::npos) << message;
    }
  }
}

TEST(NetcdfReader, MissingVariableListsTheVariablesPresent) {
  ReadOptions options;
  options.variables = {"stage"};
  expect_error<DataError>(write("missing_var", Spec{}), options, {"missing_var.nc", "'stage'", "flow"});
}

TEST(NetcdfReader, VariableNotOnTheTimeDimensionIsAFormatError) {
  ReadOptions options;
  options.variables = {"catchment"};
  expect_error<FormatError>(write("wrong_dims", Spec{}), options,
                            {"wrong_dims.nc", "'catchment'", "(station)", "(station, time)"});
}

TEST(NetcdfReader, NonMonotonicAndDuplicateTimesNameTheIndex) {
  Spec backwards;
  backwards.times = {0, 1, 3, 2};
  expect_error<DataError>(write("backwards", backwards), {}, {"backwards.nc", "'time'", "index 3", "2000-01-03"});
  Spec duplicate;
  duplicate.times = {0, 1, 1, 2};
  expect_error<DataError>(write("duplicate", duplicate), {}, {"duplicate.nc", "'time'", "duplicate", "index 2"});
}

TEST(NetcdfReader, IrregularStepNamesTheIndex) {
  Spec spec;
  spec.times = {0, 1, 2, 4};
  expect_error<DataError>(write("irregular", spec), {}, {"irregular.nc", "'time'", "irregular", "index 3"});
}

TEST(NetcdfReader, UnknownTimeUnitsAndCalendarAreFormatErrors) {
  Spec units;
  units.time_units = "fortnights since 2000-01-01";
  expect_error<FormatError>(write("bad_units", units), {}, {"bad_units.nc", "'time'", "fortnights"});
  Spec calendar;
  calendar.calendar = "lunar";
  expect_error<FormatError>(write("bad_calendar", calendar), {}, {"bad_calendar.nc", "'time'", "'lunar'"});
}

TEST(NetcdfReader, Calendar360DayIsRefusedSayingWhichAreAccepted) {
  Spec spec;
  spec.calendar = "360_day";
  expect_error<FormatError>(write("day360", spec), {},
                            {"day360.nc", "'time'", "cannot map to a regular UTC axis", "noleap"});
}

TEST(NetcdfReader, UnconvertibleTargetUnitsNameVariableAndBothUnits) {
  ReadOptions options;
  options.target_units = {{"flow", "degC"}};
  expect_error<DataError>(write("units", Spec{}), options, {"units.nc", "'flow'", "'m3 s-1'", "'degC'", "ft3 s-1"});
  ReadOptions unknown;
  unknown.target_units = {{"flow", "m3 s-1"}};
  Spec odd;
  odd.flow_units = "acre-feet per fortnight";
  expect_error<DataError>(write("units_unknown", odd), unknown,
                          {"units_unknown.nc", "'flow'", "acre-feet per fortnight"});
  ReadOptions stray;
  stray.target_units = {{"stage", "m"}};
  expect_error<DataError>(write("units_stray", Spec{}), stray, {"units_stray.nc", "'stage'"});
}

TEST(NetcdfReader, SiteWithEveryValueMissingIsSkippedWithAWarning) {
  Spec spec;
  spec.ids = {"S1", "EMPTY", "S3"};
  const float nan = std::numeric_limits<float>::quiet_NaN();
  spec.values = {1, 2, 3, 4, -9999, nan, -9999, -9999, 5, nan, 7, 8};
  const ReadResult result = read_netcdf(write("all_missing", spec));
  ASSERT_EQ(result.panel.site_count(), 2u);
  EXPECT_EQ(result.panel.sites()[1].id, "S3");
  EXPECT_EQ(result.panel.at(1, 3, 0), 8.0f);
  ASSERT_EQ(result.warnings.size(), 1u);
  EXPECT_NE(result.warnings[0].find("'EMPTY'"), std::string::npos) << result.warnings[0];
  EXPECT_NE(result.warnings[0].find("all_missing.nc"), std::string::npos) << result.warnings[0];
  // NaN in the file stays missing.
  EXPECT_TRUE(std::isnan(result.panel.at(1, 1, 0)));
}

TEST(NetcdfReader, InfiniteValueNamesFileVariableSiteAndTime) {
  Spec spec;
  spec.values = {1, 2, 3, 4, 5, 6, -std::numeric_limits<float>::infinity(), 8};
  expect_error<DataError>(write("inf", spec), {}, {"inf.nc", "'flow'", "'S2'", "2000-01-03T00:00:00Z"});
}

TEST(NetcdfReader, UnknownSiteListsTheSitesPresent) {
  ReadOptions options;
  options.sites = {"S9"};
  expect_error<DataError>(write("site", Spec{}), options, {"site.nc", "'S9'", "S1, S2"});
}

}  // namespace
}  // namespace libseq::io
