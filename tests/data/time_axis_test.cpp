#include "libseq/data/time_axis.hpp"

#include <gtest/gtest.h>

#include "libseq/error.hpp"

namespace libseq::data {

// Day numbers of known dates. 1970-01-01 is day 0 by definition; 2000-03-01 is day 11017 and 1582-10-15 is
// day -141427 (proleptic Gregorian). The last two are the values POSIX `date -u -d @...` gives (common practice).
TEST(TimeAxis, DayNumbersOfKnownDates) {
  EXPECT_EQ(days_from_civil(1970, 1, 1), 0);
  EXPECT_EQ(days_from_civil(2000, 3, 1), 11017);
  EXPECT_EQ(days_from_civil(1582, 10, 15), -141427);
  EXPECT_EQ(days_from_civil(1969, 12, 31), -1);
}

TEST(TimeAxis, CivilRoundTripOverFourCenturies) {
  for (std::int64_t day = -150000; day <= 150000; day += 7) {
    const CivilTime c = civil_from_days(day);
    ASSERT_EQ(days_from_civil(c.year, c.month, c.day), day);
  }
}

TEST(TimeAxis, ParsesIso8601WithAndWithoutOffsets) {
  EXPECT_EQ(parse_iso8601("1970-01-01"), 0);
  EXPECT_EQ(parse_iso8601("1970-01-01T01:00:00Z"), 3600);
  EXPECT_EQ(parse_iso8601("1970-01-01T01:00+01:00"), 0);
  EXPECT_EQ(parse_iso8601("1970-01-01 00:00:00-0130"), 5400);
  EXPECT_EQ(format_iso8601(parse_iso8601("2024-02-29T23:59:59Z")), "2024-02-29T23:59:59Z");
}

TEST(TimeAxis, RejectsMalformedTimesNamingTheSource) {
  try {
    parse_iso8601("2023-02-29", "file a.csv, line 3");
    FAIL() << "no exception";
  } catch (const DataError& e) {
    EXPECT_NE(std::string(e.what()).find("file a.csv, line 3"), std::string::npos);
    EXPECT_NE(std::string(e.what()).find("day out of range"), std::string::npos);
  }
  EXPECT_THROW(parse_iso8601("03/04/2001"), DataError);
  EXPECT_THROW(parse_iso8601("2001-03-04T25:00"), DataError);
  EXPECT_THROW(parse_iso8601("2001-03-04T05:00 junk"), DataError);
}

TEST(TimeAxis, IndexOfOnAndOffTheGrid) {
  const TimeAxis axis(parse_iso8601("2000-01-01"), 86400, 10);
  EXPECT_EQ(axis.index_of(parse_iso8601("2000-01-03")), 2);
  EXPECT_EQ(axis.index_of(parse_iso8601("2000-01-03T12:00")), -1);
  EXPECT_EQ(axis.index_of(parse_iso8601("2000-01-11")), -1);
  EXPECT_EQ(axis.lower_bound(parse_iso8601("2000-01-03T12:00")), 3u);
  EXPECT_EQ(axis.describe_step(), "1 day");
  EXPECT_THROW(TimeAxis(0, 0, 3), DataError);
}

}  // namespace libseq::data
