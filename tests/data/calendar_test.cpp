#include "libseq/data/calendar.hpp"

#include <gtest/gtest.h>

#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "libseq/error.hpp"
#include "support/paths.hpp"

namespace libseq::data {
namespace {

std::string iso(const CivilTime& c) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%04d-%02d-%02dT%02d:%02d:%02d", c.year, c.month, c.day, c.hour, c.minute,
                c.second);
  return buffer;
}

// Every row of validation/cftime_decoding/cases.csv, made by cftime.num2date (Debian python3-cftime 1.6.2):
// our decoding must give the same date-time exactly, and must refuse the units where cftime does.
TEST(Calendar, DecodesEveryCftimeReferenceRowExactly) {
  std::ifstream in(libseq::test::source_dir() / "validation" / "cftime_decoding" / "cases.csv");
  ASSERT_TRUE(in) << "cases.csv missing";
  std::string line;
  std::getline(in, line);
  ASSERT_EQ(line, "units,calendar,value,decoded");
  std::size_t rows = 0;
  std::size_t refusals = 0;
  while (std::getline(in, line)) {
    std::vector<std::string> field;
    std::stringstream ss(line);
    for (std::string part; std::getline(ss, part, ',');) field.push_back(part);
    ASSERT_EQ(field.size(), 4u) << line;
    const Calendar calendar = parse_calendar(field[1], "cases.csv");
    const double value = std::stod(field[2]);
    ++rows;
    if (field[3] == "error") {
      EXPECT_THROW(parse_time_units(field[0], calendar, "cases.csv"), FormatError) << line;
      ++refusals;
      continue;
    }
    const TimeUnits units = parse_time_units(field[0], calendar, "cases.csv");
    EXPECT_EQ(iso(decode_time(value, units, calendar, "cases.csv")), field[3]) << line;
  }
  EXPECT_EQ(rows, 1068u);  // the count make_table.py printed; guards against a truncated table
  EXPECT_EQ(refusals, 23u);
}

TEST(Calendar, ParsesCalendarAliasesAndRefusesUnknownNamingTheVariable) {
  EXPECT_EQ(parse_calendar("gregorian", "x"), Calendar::standard);
  EXPECT_EQ(parse_calendar("", "x"), Calendar::standard);  // CF 4.4.1: absent calendar means standard
  EXPECT_EQ(parse_calendar("365_day", "x"), Calendar::noleap);
  EXPECT_EQ(parse_calendar("366_DAY", "x"), Calendar::all_leap);
  try {
    parse_calendar("julian_ish", "file a.nc, variable 'time'");
    FAIL() << "no exception";
  } catch (const FormatError& e) {
    const std::string message = e.what();
    EXPECT_NE(message.find("a.nc"), std::string::npos);
    EXPECT_NE(message.find("'time'"), std::string::npos);
    EXPECT_NE(message.find("julian_ish"), std::string::npos);
  }
}

TEST(Calendar, RefusesMonthsAndMalformedUnitsNamingTheText) {
  for (const char* text : {"months since 2000-01-01", "days after 2000-01-01", "days since 2000-13-01",
                           "days since 2000-01-01 25:00", "days since yesterday", "days"}) {
    try {
      parse_time_units(text, Calendar::standard, "file b.nc, variable 't'");
      FAIL() << text;
    } catch (const FormatError& e) {
      EXPECT_NE(std::string(e.what()).find("b.nc"), std::string::npos) << text;
    }
  }
  // 1582-10-10 does not exist in the mixed calendar (cftime refuses it too; seen with cftime 1.6.2 by hand).
  EXPECT_THROW(parse_time_units("days since 1582-10-10", Calendar::standard, "x"), FormatError);
  EXPECT_NO_THROW(parse_time_units("days since 1582-10-10", Calendar::proleptic_gregorian, "x"));
}

// The UDUNITS form with one-digit fields, from the CF conventions text (section 4.4): "1992-10-8 15:15:42.5 -6:00".
// cftime 1.6.2 ignores a one-digit offset hour, so this case is checked by hand: 15:15:42.5 at UTC-6 is 21:15:42.5 UTC.
TEST(Calendar, AcceptsTheCfExampleWithOneDigitFields) {
  const TimeUnits units = parse_time_units("seconds since 1992-10-8 15:15:42.5 -6:00", Calendar::standard, "x");
  EXPECT_EQ(units.utc_offset_seconds, -6 * 3600);
  EXPECT_EQ(iso(decode_time(0.5, units, Calendar::standard, "x")), "1992-10-08T21:15:43");
}

TEST(Calendar, MapsCalendarsToUtcAsDocumented) {
  // Julian 1582-10-04 is the day before Gregorian 1582-10-15 (CF 4.4.1), i.e. proleptic Gregorian 1582-10-14.
  EXPECT_EQ(to_utc({1582, 10, 4, 0, 0, 0}, Calendar::standard, "x"), days_from_civil(1582, 10, 14) * 86400);
  EXPECT_EQ(to_utc({2001, 3, 1, 6, 0, 0}, Calendar::noleap, "x"), parse_iso8601("2001-03-01T06:00:00Z"));
  EXPECT_EQ(to_utc({2004, 2, 29, 0, 0, 0}, Calendar::all_leap, "x"), parse_iso8601("2004-02-29"));
  EXPECT_THROW(to_utc({2001, 2, 29, 0, 0, 0}, Calendar::all_leap, "x"), DataError);
  try {
    to_utc({2001, 1, 1, 0, 0, 0}, Calendar::day_360, "file c.nc, variable 'time'");
    FAIL();
  } catch (const FormatError& e) {
    const std::string message = e.what();
    EXPECT_NE(message.find("cannot map to a regular UTC axis"), std::string::npos);
    EXPECT_NE(message.find("proleptic_gregorian"), std::string::npos);
    EXPECT_NE(message.find("c.nc"), std::string::npos);
  }
}

TEST(Calendar, NoleapDailySeriesLeavesGregorianLeapDaysAsGaps) {
  const TimeUnits units = parse_time_units("days since 2003-12-31", Calendar::noleap, "x");
  std::vector<double> values;
  for (int d = 0; d < 800; ++d) values.push_back(d);
  const auto utc = decode_to_utc(values, units, Calendar::noleap, "x");
  const TimeAxis axis = regular_axis(utc, Calendar::noleap, "x");
  EXPECT_EQ(axis.step_seconds(), 86400);
  EXPECT_EQ(axis.length(), 801u);  // 2004-02-29 is one extra step with no value
  EXPECT_EQ(axis.index_of(parse_iso8601("2004-03-01")), 61);
}

TEST(Calendar, RegularAxisReportsTheFirstOffendingIndex) {
  const std::vector<UtcSeconds> duplicate = {0, 3600, 3600, 7200};
  const std::vector<UtcSeconds> backwards = {0, 3600, 1800, 7200};
  const std::vector<UtcSeconds> irregular = {0, 3600, 7200, 9000, 12600};
  try {
    regular_axis(duplicate, Calendar::standard, "v");
    FAIL();
  } catch (const DataError& e) {
    EXPECT_NE(std::string(e.what()).find("duplicate time at index 2"), std::string::npos) << e.what();
  }
  try {
    regular_axis(backwards, Calendar::standard, "v");
    FAIL();
  } catch (const DataError& e) {
    EXPECT_NE(std::string(e.what()).find("index 2"), std::string::npos) << e.what();
  }
  try {
    regular_axis(irregular, Calendar::standard, "v");
    FAIL();
  } catch (const DataError& e) {
    EXPECT_NE(std::string(e.what()).find("index 3"), std::string::npos) << e.what();
  }
  // A two-day gap is a leap day only in noleap and only when the skipped day is a Gregorian 29 February.
  const std::vector<UtcSeconds> gap = {parse_iso8601("2003-02-28"), parse_iso8601("2003-03-02")};
  const std::vector<UtcSeconds> three = {parse_iso8601("2003-02-27"), parse_iso8601("2003-02-28"), gap[1]};
  EXPECT_THROW(regular_axis(three, Calendar::noleap, "v"), DataError);
}

TEST(Calendar, UnionAxisAcceptsGapsButNotOffGridTimes) {
  const std::vector<UtcSeconds> times = {7200, 0, 3600, 18000};
  const TimeAxis axis = union_axis(times, "v");
  EXPECT_EQ(axis.start(), 0);
  EXPECT_EQ(axis.step_seconds(), 3600);
  EXPECT_EQ(axis.length(), 6u);
  const std::vector<UtcSeconds> off = {0, 3600, 5400 + 3600 * 3};
  EXPECT_THROW(union_axis(off, "v"), DataError);
}

TEST(Calendar, DayNumbersRoundTripInEveryCalendar) {
  for (const Calendar calendar : {Calendar::standard, Calendar::proleptic_gregorian, Calendar::noleap,
                                  Calendar::all_leap, Calendar::day_360}) {
    for (std::int64_t day = -900000; day <= 900000; day += 97) {
      const CivilTime c = calendar_date_from_day_number(day, calendar);
      ASSERT_TRUE(is_valid_date(c.year, c.month, c.day, calendar)) << to_string(calendar) << " " << day;
      ASSERT_EQ(calendar_day_number(c.year, c.month, c.day, calendar), day) << to_string(calendar);
    }
  }
}

}  // namespace
}  // namespace libseq::data
