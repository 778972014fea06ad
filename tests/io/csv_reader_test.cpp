#include "libseq/io/csv_reader.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <fstream>

#include "libseq/error.hpp"
#include "support/paths.hpp"

namespace libseq::io {

namespace {

bool contains(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

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

std::filesystem::path write_file(const std::string& test, const std::string& name, const std::string& text) {
  const auto path = test::scratch_dir("csv_reader/" + test) / name;
  std::ofstream(path, std::ios::binary) << text;
  return path;
}

const char* one_site_text =
    "# Demo gauge, written by hand for this test\n"
    "# site_id: GAUGE-7\n"
    "# name: Mill Race, \"lower\"\n"
    "# latitude: 52.25\n"
    "# longitude: -1.5\n"
    "# elevation: 88\n"
    "# units discharge: m3 s-1\n"
    "# standard_name discharge: water_volume_transport_in_river_channel\n"
    "# units rain: mm day-1\n"
    "time,discharge,rain\r\n"
    "2010-03-01,1.5,0\r\n"
    "2010-03-02,,2.25\r\n"
    "\r\n"
    "2010-03-03,NA,-1e-3\r\n"
    "2010-03-04,NaN,\r\n"
    "2010-03-05,+2.5e1,4\r\n";

}  // namespace

TEST(CsvReader, ReadsOneSiteFileWithCommentMetadataAndMissingCells) {
  const ReadResult result = read_csv(write_file("one_site", "ignored_stem.csv", one_site_text));
  const data::Panel& panel = result.panel;
  ASSERT_EQ(panel.site_count(), 1u);
  ASSERT_EQ(panel.time_count(), 5u);
  ASSERT_EQ(panel.variable_count(), 2u);
  const data::SiteInfo& site = panel.sites()[0];
  EXPECT_EQ(site.id, "GAUGE-7");
  EXPECT_EQ(site.name, "Mill Race, \"lower\"");
  EXPECT_DOUBLE_EQ(site.latitude, 52.25);
  EXPECT_DOUBLE_EQ(site.longitude, -1.5);
  EXPECT_DOUBLE_EQ(site.elevation, 88.0);
  EXPECT_EQ(panel.variables()[0].units, "m3 s-1");
  EXPECT_EQ(panel.variables()[0].standard_name, "water_volume_transport_in_river_channel");
  EXPECT_EQ(panel.variables()[1].units, "mm day-1");
  EXPECT_EQ(data::format_iso8601(panel.axis().start()), "2010-03-01T00:00:00Z");
  EXPECT_EQ(panel.axis().step_seconds(), 86400);
  EXPECT_EQ(panel.at(0, 0, 0), 1.5f);
  EXPECT_TRUE(std::isnan(panel.at(0, 1, 0)));  // empty
  EXPECT_TRUE(std::isnan(panel.at(0, 2, 0)));  // NA
  EXPECT_TRUE(std::isnan(panel.at(0, 3, 0)));  // NaN
  EXPECT_EQ(panel.at(0, 4, 0), 25.0f);
  EXPECT_EQ(panel.at(0, 2, 1), -1e-3f);
  EXPECT_TRUE(std::isnan(panel.at(0, 3, 1)));
  EXPECT_DOUBLE_EQ(panel.missing_fraction(0, 0), 0.6);
}

TEST(CsvReader, SiteIdComesFromTheFileStemWithoutASiteIdComment) {
  const auto path = write_file("stem", "brook_12.csv", "time,q\n2001-01-01T00:00,1\n2001-01-01T01:00,2\n");
  const data::Panel panel = read_csv(path).panel;
  EXPECT_EQ(panel.sites()[0].id, "brook_12");
  EXPECT_EQ(panel.axis().step_seconds(), 3600);
}

TEST(CsvReader, SelectsVariablesByNameOrStandardName) {
  ReadOptions options;
  options.variables = {"rain", "water_volume_transport_in_river_channel"};
  const data::Panel panel = read_csv(write_file("select", "g.csv", one_site_text), options).panel;
  ASSERT_EQ(panel.variable_count(), 2u);
  EXPECT_EQ(panel.variables()[0].name, "rain");
  EXPECT_EQ(panel.variables()[1].name, "discharge");
  EXPECT_EQ(panel.at(0, 1, 0), 2.25f);
}

// Outside reference: validation/io_readers/offsets_expected.txt, the UTC instants Python's
// datetime.fromisoformat gives for the times of offsets.csv (Z, +01:00, +00:00, -05:00, +05:30 mixed).
// Pass rule: the axis instants equal the reference exactly.
TEST(CsvReader, MixedUtcOffsetsGiveTheSameInstantsAsPythonDatetime) {
  const auto dir = test::source_dir() / "validation" / "io_readers";
  const data::Panel panel = read_csv(dir / "offsets.csv").panel;
  std::ifstream expected(dir / "offsets_expected.txt");
  std::string line;
  std::size_t i = 0;
  while (std::getline(expected, line)) {
    if (line.empty() || line[0] == '#') continue;
    ASSERT_LT(i, panel.time_count());
    EXPECT_EQ(panel.axis().time_at(i), std::stoll(line)) << "row " << i;
    EXPECT_EQ(panel.at(0, i, 0), static_cast<float>(1.25 * static_cast<double>(i)));
    ++i;
  }
  EXPECT_EQ(i, panel.time_count());
  EXPECT_EQ(panel.sites()[0].id, "OFFSET-1");
}

TEST(CsvReader, ReadsLongFormWithSitesOnDifferentSpansOfOneGrid) {
  const auto path = write_file("long", "long.csv",
                               "# units q: m3 s-1\n"
                               "# name B: Second site\n"
                               "# latitude B: -3.5\n"
                               "site,time,q,t\n"
                               "A,2020-01-01T00:00Z,1,10\n"
                               "A,2020-01-01T06:00Z,2,11\n"
                               "B,2020-01-01T06:00Z,5,\n"
                               "A,2020-01-01T12:00Z,3,12\n"
                               "B,2020-01-01T12:00Z,6,21\n"
                               "B,2020-01-01T18:00Z,7,22\n");
  const data::Panel panel = read_csv(path).panel;
  ASSERT_EQ(panel.site_count(), 2u);
  ASSERT_EQ(panel.time_count(), 4u);
  EXPECT_EQ(panel.axis().step_seconds(), 6 * 3600);
  EXPECT_EQ(panel.sites()[1].id, "B");
  EXPECT_EQ(panel.sites()[1].name, "Second site");
  EXPECT_DOUBLE_EQ(panel.sites()[1].latitude, -3.5);
  EXPECT_TRUE(std::isnan(panel.sites()[0].latitude));
  EXPECT_EQ(panel.variables()[0].units, "m3 s-1");
  const std::vector<float> a_q = panel.series(0, 0);
  EXPECT_EQ(a_q[0], 1.0f);
  EXPECT_EQ(a_q[2], 3.0f);
  EXPECT_TRUE(std::isnan(a_q[3]));             // A has no 18:00 row
  EXPECT_TRUE(std::isnan(panel.at(1, 0, 0)));  // B starts at 06:00
  EXPECT_TRUE(std::isnan(panel.at(1, 1, 1)));  // empty cell
  EXPECT_EQ(panel.at(1, 3, 1), 22.0f);

  ReadOptions options;
  options.sites = {"B"};
  const data::Panel only_b = read_csv(path, options).panel;
  ASSERT_EQ(only_b.site_count(), 1u);
  EXPECT_EQ(only_b.time_count(), 3u);
  EXPECT_EQ(only_b.at(0, 0, 0), 5.0f);
}

TEST(CsvReader, LongFormSiteWithEveryValueMissingIsSkippedWithAWarning) {
  const auto path = write_file("all_missing", "long.csv",
                               "site,time,q\nA,2020-01-01,1\nA,2020-01-02,2\nB,2020-01-01,NA\nB,2020-01-02,\n");
  const ReadResult result = read_csv(path);
  ASSERT_EQ(result.panel.site_count(), 1u);
  EXPECT_EQ(result.panel.sites()[0].id, "A");
  ASSERT_EQ(result.warnings.size(), 1u);
  EXPECT_TRUE(contains(result.warnings[0], path.string()) && contains(result.warnings[0], "site 'B' skipped"))
      << result.warnings[0];
}

TEST(CsvReader, InfinityIsADataErrorNamingFileLineAndColumn) {
  const auto path = write_file("inf", "g.csv", "time,q,pr\n2001-01-01,1,2\n2001-01-02,-inf,3\n");
  const std::string message = message_of<DataError>([&] { read_csv(path); });
  EXPECT_TRUE(contains(message, path.string() + ", line 3, column 'q'")) << message;
  EXPECT_TRUE(contains(message, "-inf")) << message;
}

TEST(CsvReader, MalformedNumberIsADataErrorNamingFileLineColumnAndText) {
  for (const std::string bad : {"1.2.3", "abc", "12kg", "0x1A"}) {
    const auto path = write_file("malformed", "g.csv", "time,q,pr\n2001-01-01,1,2\n2001-01-02,3," + bad + "\n");
    const std::string message = message_of<DataError>([&] { read_csv(path); });
    EXPECT_TRUE(contains(message, path.string() + ", line 3, column 'pr'")) << message;
    EXPECT_TRUE(contains(message, "'" + bad + "' is not a number")) << message;
  }
}

TEST(CsvReader, NumberOutsideTheFloatRangeIsADataError) {
  const auto path = write_file("range", "g.csv", "time,q\n2001-01-01,1e39\n");
  const std::string message = message_of<DataError>([&] { read_csv(path); });
  EXPECT_TRUE(contains(message, "line 2, column 'q'") && contains(message, "out of the float range")) << message;
}

TEST(CsvReader, MalformedTimeIsADataErrorNamingFileAndLine) {
  const auto path = write_file("bad_time", "g.csv", "time,q\n2001-01-01,1\n2001-13-01,2\n");
  const std::string message = message_of<DataError>([&] { read_csv(path); });
  EXPECT_TRUE(contains(message, path.string() + ", line 3, column 'time'")) << message;
  EXPECT_TRUE(contains(message, "2001-13-01")) << message;
}

TEST(CsvReader, DuplicateBackwardAndIrregularTimesAreDataErrorsNamingLineAndTime) {
  struct Case {
    std::string rows;
    std::string expected;
  };
  const std::vector<Case> cases{
      {"2001-01-01,1\n2001-01-02,2\n2001-01-02,3\n", "line 4: time 2001-01-02T00:00:00Z repeats"},
      {"2001-01-01,1\n2001-01-02,2\n2001-01-03,3\n2001-01-02,4\n", "line 5: time 2001-01-02T00:00:00Z is earlier"},
      {"2001-01-01,1\n2001-01-02,2\n2001-01-04,3\n", "line 4: time 2001-01-04T00:00:00Z is 172800 s after"},
  };
  for (std::size_t i = 0; i < cases.size(); ++i) {
    const auto path = write_file("times_" + std::to_string(i), "g.csv", "time,q\n" + cases[i].rows);
    const std::string message = message_of<DataError>([&] { read_csv(path); });
    EXPECT_TRUE(contains(message, path.string())) << message;
    EXPECT_TRUE(contains(message, cases[i].expected)) << message;
  }
}

TEST(CsvReader, LongFormSitesOnDifferentStepsOrGridsAreDataErrors) {
  const auto steps =
      write_file("steps", "long.csv", "site,time,q\nA,2020-01-01,1\nA,2020-01-02,2\nB,2020-01-01,1\nB,2020-01-03,2\n");
  std::string message = message_of<DataError>([&] { read_csv(steps); });
  EXPECT_TRUE(contains(message, "line 5: site 'B' has a step of 172800 s")) << message;
  const auto grid =
      write_file("grid", "long.csv", "site,time,q\nA,2020-01-01T00:00,1\nA,2020-01-02T00:00,2\nB,2020-01-01T12:00,1\n");
  message = message_of<DataError>([&] { read_csv(grid); });
  EXPECT_TRUE(contains(message, "line 4: site 'B' starts at 2020-01-01T12:00:00Z")) << message;
}

TEST(CsvReader, RowWithTheWrongNumberOfFieldsIsAFormatErrorNamingTheLine) {
  const auto path = write_file("fields", "g.csv", "# c\ntime,q,pr\n2001-01-01,1,2\n2001-01-02,3\n");
  const std::string message = message_of<FormatError>([&] { read_csv(path); });
  EXPECT_TRUE(contains(message, path.string() + ", line 4: 2 fields")) << message;
}

TEST(CsvReader, HeaderWithoutATimeColumnFirstIsAFormatError) {
  const auto path = write_file("header", "g.csv", "date,q\n2001-01-01,1\n");
  const std::string message = message_of<FormatError>([&] { read_csv(path); });
  EXPECT_TRUE(contains(message, path.string() + ", line 1") && contains(message, "'time'")) << message;
  const auto twice = write_file("twice", "g.csv", "time,q,q\n2001-01-01,1,2\n");
  EXPECT_TRUE(contains(message_of<FormatError>([&] { read_csv(twice); }), "column 'q' appears twice"));
}

TEST(CsvReader, MissingVariableIsRefusedListingThePresentOnes) {
  ReadOptions options;
  options.variables = {"tas"};
  const auto path = write_file("missing_variable", "g.csv", one_site_text);
  const std::string message = message_of<DataError>([&] { read_csv(path, options); });
  EXPECT_TRUE(contains(message, path.string()) && contains(message, "'tas'")) << message;
  EXPECT_TRUE(contains(message, "discharge (water_volume_transport_in_river_channel), rain")) << message;
}

TEST(CsvReader, NonexistentFileIsAnIoErrorNamingThePath) {
  const auto path = test::scratch_dir("csv_reader/nonexistent") / "none.csv";
  const std::string message = message_of<IoError>([&] { read_csv(path); });
  EXPECT_TRUE(contains(message, path.string())) << message;
}

}  // namespace libseq::io
