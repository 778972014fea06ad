#include "libseq/data/time_axis.hpp"

#include <cctype>
#include <charconv>
#include <cstdio>

#include "libseq/error.hpp"

namespace libseq::data {

// Day counts from civil dates and back: the standard era-based algorithm for the proleptic Gregorian calendar
// (400-year eras of 146097 days, years starting in March so that the leap day falls last). Common practice.
std::int64_t days_from_civil(int year, int month, int day) {
  const std::int64_t y = static_cast<std::int64_t>(year) - (month <= 2 ? 1 : 0);
  const std::int64_t era = (y >= 0 ? y : y - 399) / 400;
  const std::int64_t year_of_era = y - era * 400;
  const std::int64_t shifted_month = month > 2 ? month - 3 : month + 9;
  const std::int64_t day_of_year = (153 * shifted_month + 2) / 5 + day - 1;
  const std::int64_t day_of_era = year_of_era * 365 + year_of_era / 4 - year_of_era / 100 + day_of_year;
  return era * 146097 + day_of_era - 719468;
}

CivilTime civil_from_days(std::int64_t days) {
  days += 719468;
  const std::int64_t era = (days >= 0 ? days : days - 146096) / 146097;
  const std::int64_t day_of_era = days - era * 146097;
  const std::int64_t year_of_era = (day_of_era - day_of_era / 1460 + day_of_era / 36524 - day_of_era / 146096) / 365;
  const std::int64_t day_of_year = day_of_era - (365 * year_of_era + year_of_era / 4 - year_of_era / 100);
  const std::int64_t shifted_month = (5 * day_of_year + 2) / 153;
  CivilTime civil;
  civil.day = static_cast<int>(day_of_year - (153 * shifted_month + 2) / 5 + 1);
  civil.month = static_cast<int>(shifted_month < 10 ? shifted_month + 3 : shifted_month - 9);
  civil.year = static_cast<int>(year_of_era + era * 400 + (civil.month <= 2 ? 1 : 0));
  return civil;
}

bool is_gregorian_leap_year(int year) { return (year % 4 == 0 && year % 100 != 0) || year % 400 == 0; }

UtcSeconds to_utc_seconds(const CivilTime& c) {
  return days_from_civil(c.year, c.month, c.day) * 86400 + c.hour * 3600 + c.minute * 60 + c.second;
}

CivilTime to_civil(UtcSeconds seconds) {
  std::int64_t days = seconds / 86400;
  std::int64_t rest = seconds % 86400;
  if (rest < 0) {
    rest += 86400;
    days -= 1;
  }
  CivilTime civil = civil_from_days(days);
  civil.hour = static_cast<int>(rest / 3600);
  civil.minute = static_cast<int>((rest % 3600) / 60);
  civil.second = static_cast<int>(rest % 60);
  return civil;
}

std::string format_iso8601(UtcSeconds seconds) {
  const CivilTime c = to_civil(seconds);
  char buffer[40];
  std::snprintf(buffer, sizeof buffer, "%04d-%02d-%02dT%02d:%02d:%02dZ", c.year, c.month, c.day, c.hour, c.minute,
                c.second);
  return buffer;
}

namespace {

// Reads exactly `width` digits at `pos`; advances pos. Returns false when they are not all digits.
bool read_digits(std::string_view text, std::size_t& pos, std::size_t width, int& value) {
  if (pos + width > text.size()) return false;
  for (std::size_t i = 0; i < width; ++i) {
    if (!std::isdigit(static_cast<unsigned char>(text[pos + i]))) return false;
  }
  std::from_chars(text.data() + pos, text.data() + pos + width, value);
  pos += width;
  return true;
}

int days_in_month(int year, int month) {
  static constexpr int days[12] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
  return month == 2 && is_gregorian_leap_year(year) ? 29 : days[month - 1];
}

}  // namespace

UtcSeconds parse_iso8601(std::string_view text, std::string_view what) {
  auto fail = [&](const char* why) -> UtcSeconds {
    throw DataError(std::string(what) + ": '" + std::string(text) + "' is not an ISO 8601 time (" + why +
                    "; expected e.g. 2001-03-04, 2001-03-04T05:00, 2001-03-04T05:00:00Z or 2001-03-04T05:00+01:00)");
  };
  while (!text.empty() && std::isspace(static_cast<unsigned char>(text.front()))) text.remove_prefix(1);
  while (!text.empty() && std::isspace(static_cast<unsigned char>(text.back()))) text.remove_suffix(1);
  CivilTime c;
  std::size_t pos = 0;
  bool negative_year = false;
  if (pos < text.size() && text[pos] == '-') {
    negative_year = true;
    ++pos;
  }
  if (!read_digits(text, pos, 4, c.year)) return fail("year must have four digits");
  if (negative_year) c.year = -c.year;
  if (pos >= text.size() || text[pos] != '-') return fail("'-' expected after the year");
  ++pos;
  if (!read_digits(text, pos, 2, c.month)) return fail("month must have two digits");
  if (pos >= text.size() || text[pos] != '-') return fail("'-' expected after the month");
  ++pos;
  if (!read_digits(text, pos, 2, c.day)) return fail("day must have two digits");
  if (c.month < 1 || c.month > 12) return fail("month out of range 01..12");
  if (c.day < 1 || c.day > days_in_month(c.year, c.month)) return fail("day out of range for the month");
  std::int64_t offset_seconds = 0;
  if (pos < text.size()) {
    if (text[pos] != 'T' && text[pos] != 't' && text[pos] != ' ') return fail("'T' expected after the date");
    ++pos;
    if (!read_digits(text, pos, 2, c.hour)) return fail("hour must have two digits");
    if (pos >= text.size() || text[pos] != ':') return fail("':' expected after the hour");
    ++pos;
    if (!read_digits(text, pos, 2, c.minute)) return fail("minute must have two digits");
    if (pos < text.size() && text[pos] == ':') {
      ++pos;
      if (!read_digits(text, pos, 2, c.second)) return fail("second must have two digits");
      if (pos < text.size() && (text[pos] == '.' || text[pos] == ',')) {
        // Fractions of a second are accepted only when zero: the axis has whole seconds.
        ++pos;
        std::size_t start = pos;
        while (pos < text.size() && std::isdigit(static_cast<unsigned char>(text[pos]))) {
          if (text[pos] != '0') return fail("fractional seconds are not supported");
          ++pos;
        }
        if (pos == start) return fail("digits expected after the decimal mark");
      }
    }
    if (c.hour > 23 || c.minute > 59 || c.second > 59) return fail("time of day out of range");
    if (pos < text.size()) {
      const char sign = text[pos];
      if (sign == 'Z' || sign == 'z') {
        ++pos;
      } else if (sign == '+' || sign == '-') {
        ++pos;
        int offset_hours = 0;
        int offset_minutes = 0;
        if (!read_digits(text, pos, 2, offset_hours)) return fail("UTC offset hours must have two digits");
        if (pos < text.size() && text[pos] == ':') ++pos;
        if (pos < text.size() && !read_digits(text, pos, 2, offset_minutes)) {
          return fail("UTC offset minutes must have two digits");
        }
        if (offset_hours > 18 || offset_minutes > 59) return fail("UTC offset out of range");
        offset_seconds = (offset_hours * 3600 + offset_minutes * 60) * (sign == '+' ? 1 : -1);
      } else {
        return fail("unexpected text after the time");
      }
    }
    if (pos != text.size()) return fail("unexpected text after the time");
  }
  // Local time = UTC + offset, so UTC = local - offset.
  return to_utc_seconds(c) - offset_seconds;
}

TimeAxis::TimeAxis(UtcSeconds start, std::int64_t step_seconds, std::size_t length)
    : start_(start), step_seconds_(step_seconds), length_(length) {
  if (step_seconds <= 0) {
    throw DataError("time axis: step must be positive, got " + std::to_string(step_seconds) + " s");
  }
}

std::int64_t TimeAxis::index_of(UtcSeconds t) const {
  const std::int64_t offset = t - start_;
  if (offset < 0 || offset % step_seconds_ != 0) return -1;
  const std::int64_t index = offset / step_seconds_;
  return index < static_cast<std::int64_t>(length_) ? index : -1;
}

std::size_t TimeAxis::lower_bound(UtcSeconds t) const {
  if (t <= start_) return 0;
  const std::int64_t offset = t - start_;
  const std::int64_t index = (offset + step_seconds_ - 1) / step_seconds_;
  return index >= static_cast<std::int64_t>(length_) ? length_ : static_cast<std::size_t>(index);
}

std::string TimeAxis::describe_step() const {
  auto plural = [](std::int64_t n, const char* unit) {
    return std::to_string(n) + " " + unit + (n == 1 ? "" : "s");
  };
  if (step_seconds_ % 86400 == 0) return plural(step_seconds_ / 86400, "day");
  if (step_seconds_ % 3600 == 0) return plural(step_seconds_ / 3600, "hour");
  if (step_seconds_ % 60 == 0) return plural(step_seconds_ / 60, "minute");
  return std::to_string(step_seconds_) + " s";
}

}  // namespace libseq::data
