#include "libseq/io/reader.hpp"

#include <gtest/gtest.h>

#include <fstream>
#include <random>

#include "hdf5_reader_test_writer.hpp"
#include "libseq/error.hpp"
#include "support/paths.hpp"

namespace libseq::io {

namespace {

bool contains(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

std::filesystem::path reference(const std::string& name) {
  return test::source_dir() / "validation" / "io_readers" / name;
}

std::filesystem::path write_bytes(const std::string& test, const std::string& name, const std::string& bytes) {
  const auto path = test::scratch_dir("reader/" + test) / name;
  std::ofstream(path, std::ios::binary) << bytes;
  return path;
}

void expect_not_a_known_format(const std::filesystem::path& path) {
  try {
    detect_format(path);
    ADD_FAILURE() << "no exception for " << path;
  } catch (const FormatError& e) {
    EXPECT_TRUE(contains(e.what(), path.string())) << e.what();
    EXPECT_TRUE(contains(e.what(), "not a CF NetCDF, runnel HDF5 or CSV file")) << e.what();
  }
  EXPECT_THROW(read_panel(path), FormatError);
}

}  // namespace

// Outside reference: the .nc files were written by netCDF4-python (Debian python3-netcdf4, Dataset with
// format NETCDF4, NETCDF3_CLASSIC, NETCDF3_64BIT_OFFSET, NETCDF3_64BIT_DATA) and panel_h5py.h5 by h5py;
// see validation/io_readers/make_reference.py. Pass rule: each is classified as named.
TEST(Reader, DetectsFormatsByContentOfFilesWrittenByOtherLibraries) {
  EXPECT_EQ(detect_format(reference("netcdf4.nc")), FileFormat::netcdf);
  EXPECT_EQ(detect_format(reference("classic.nc")), FileFormat::netcdf);
  EXPECT_EQ(detect_format(reference("offset64.nc")), FileFormat::netcdf);
  EXPECT_EQ(detect_format(reference("cdf5.nc")), FileFormat::netcdf);
  EXPECT_EQ(detect_format(reference("panel_h5py.h5")), FileFormat::hdf5);
  EXPECT_EQ(detect_format(reference("offsets.csv")), FileFormat::csv);
}

TEST(Reader, DetectionIgnoresExtensionsAndSkipsCommentLines) {
  const auto dir = test::scratch_dir("reader/extensions");
  test::write_test_panel(dir / "panel.csv");
  EXPECT_EQ(detect_format(dir / "panel.csv"), FileFormat::hdf5);
  const auto text =
      write_bytes("extensions_text", "data.nc", "\xEF\xBB\xBF# comment\n\n  # another\n\"site\",\"time\",q\n");
  EXPECT_EQ(detect_format(text), FileFormat::csv);
  const auto plain_hdf5 = dir / "plain.h5";
  {
    test::Hdf5Builder b(plain_hdf5);
    b.double_dataset("/x", {1, 2});
  }
  // An HDF5 file without the runnel_layout root attribute is taken for NetCDF-4.
  EXPECT_EQ(detect_format(plain_hdf5), FileFormat::netcdf);
}

TEST(Reader, PngHeaderRandomBytesEmptyFilesAndTextWithoutTimeAreRefused) {
  expect_not_a_known_format(write_bytes("png", "image.nc", std::string("\x89PNG\r\n\x1a\n\0\0\0\rIHDR", 16)));
  std::mt19937 generator(12345);
  std::string noise(4096, '\0');
  for (char& c : noise) c = static_cast<char>(generator() & 0xFF);
  expect_not_a_known_format(write_bytes("random", "noise.h5", noise));
  expect_not_a_known_format(write_bytes("empty", "empty.csv", ""));
  expect_not_a_known_format(write_bytes("no_time", "table.csv", "# c\ndate,q\n2001-01-01,3\n"));
}

TEST(Reader, NonexistentFileAndDirectoryAreIoErrorsNamingThePath) {
  const auto dir = test::scratch_dir("reader/nonexistent");
  for (const auto& path : {dir / "missing.nc", dir}) {
    try {
      read_panel(path);
      ADD_FAILURE() << "no exception for " << path;
    } catch (const IoError& e) {
      EXPECT_TRUE(contains(e.what(), path.string())) << e.what();
    }
  }
}

TEST(Reader, TruncatedHdf5FileIsAnIoErrorNamingThePath) {
  const auto path = test::scratch_dir("reader/truncated") / "panel.h5";
  test::write_test_panel(path);
  std::filesystem::resize_file(path, 1500);  // keeps the signature and superblock, loses the rest
  try {
    read_panel(path);
    FAIL() << "no exception";
  } catch (const IoError& e) {
    EXPECT_TRUE(contains(e.what(), path.string())) << e.what();
  } catch (const FormatError& e) {
    EXPECT_TRUE(contains(e.what(), path.string())) << e.what();
  }
}

TEST(Reader, ReadPanelDispatchesToTheHdf5AndCsvReaders) {
  const auto path = test::scratch_dir("reader/dispatch") / "panel.bin";
  test::write_test_panel(path);
  ReadOptions options;
  options.variables = {"q"};
  const ReadResult hdf5 = read_panel(path, options);
  EXPECT_EQ(hdf5.panel.site_count(), 3u);
  EXPECT_EQ(hdf5.panel.at(2, 1, 0), static_cast<float>(test::test_q(2, 1)));
  const ReadResult csv = read_panel(reference("offsets.csv"));
  EXPECT_EQ(csv.panel.sites()[0].id, "OFFSET-1");
  EXPECT_EQ(csv.panel.time_count(), 6u);
}

// Outside reference: cf_timeseries.nc written by netCDF4-python (make_reference.py, write_cf_timeseries), values
// 1..6 as float32. Pass rule: the dispatched NetCDF reader returns them exactly.
TEST(Reader, ReadPanelDispatchesCfNetcdfToTheNetcdfReader) {
  const ReadResult result = read_panel(reference("cf_timeseries.nc"));
  const data::Panel& panel = result.panel;
  ASSERT_EQ(panel.site_count(), 2u);
  ASSERT_EQ(panel.time_count(), 3u);
  EXPECT_EQ(panel.sites()[1].id, "N-2");
  const auto q = panel.require_variable("discharge", "cf_timeseries.nc");
  EXPECT_EQ(panel.at(0, 0, q), 1.0f);
  EXPECT_EQ(panel.at(1, 2, q), 6.0f);
  EXPECT_EQ(data::format_iso8601(panel.axis().start()), "2000-01-01T00:00:00Z");
}

TEST(Reader, FileFormatNamesRoundTripAndUnknownNamesAreConfigErrors) {
  for (auto format : {FileFormat::netcdf, FileFormat::hdf5, FileFormat::csv}) {
    EXPECT_EQ(parse_file_format(to_string(format)), format);
  }
  EXPECT_THROW(parse_file_format("grib"), ConfigError);
}

}  // namespace libseq::io
