#include "libseq/data/calendar.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <map>

#include "libseq/error.hpp"

namespace libseq::data {

namespace {

std::string lower(std::string_view text) {
  std::string out(text);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

std::string_view trim(std::string_view text) {
  while (!text.empty() && std::isspace(static_cast<unsigned char>(text.front()))) text.remove_prefix(1);
  while (!text.empty() && std::isspace(static_cast<unsigned char>(text.back()))) text.remove_suffix(1);
  return text;
}

std::int64_t floor_div(std::int64_t a, std::int64_t b) {
  std::int64_t q = a / b;
  if ((a % b != 0) && ((a < 0) != (b < 0))) --q;
  return q;
}

// Cumulative days before each month, common and leap years.
constexpr int cumulative_common[13] = {0, 31, 59, 90, 120, 151, 181, 212, 243, 273, 304, 334, 365};
constexpr int cumulative_leap[13] = {0, 31, 60, 91, 121, 152, 182, 213, 244, 274, 305, 335, 366};

// Julian calendar day count with 4-year cycles of 1461 days, years starting in March so the leap day falls last
// (the same construction as days_from_civil in time_axis.cpp, without the century rules). The raw count is shifted
// so that Julian 1582-10-04 is the day before Gregorian 1582-10-15, the switch CF defines for "standard".
std::int64_t julian_raw(int year, int month, int day) {
  const std::int64_t y = static_cast<std::int64_t>(year) - (month <= 2 ? 1 : 0);
  const std::int64_t era = floor_div(y, 4);
  const std::int64_t year_of_era = y - era * 4;
  const std::int64_t shifted_month = month > 2 ? month - 3 : month + 9;
  const std::int64_t day_of_year = (153 * shifted_month + 2) / 5 + day - 1;
  return era * 1461 + year_of_era * 365 + day_of_year;
}

const std::int64_t gregorian_start_day = days_from_civil(1582, 10, 15);
const std::int64_t julian_shift = julian_raw(1582, 10, 4) - (gregorian_start_day - 1);

std::int64_t julian_days(int year, int month, int day) { return julian_raw(year, month, day) - julian_shift; }

CivilTime julian_from_days(std::int64_t days) {
  const std::int64_t raw = days + julian_shift;
  const std::int64_t era = floor_div(raw, 1461);
  const std::int64_t day_of_era = raw - era * 1461;
  const std::int64_t year_of_era = (day_of_era - day_of_era / 1460) / 365;
  const std::int64_t day_of_year = day_of_era - 365 * year_of_era;
  const std::int64_t shifted_month = (5 * day_of_year + 2) / 153;
  CivilTime c;
  c.day = static_cast<int>(day_of_year - (153 * shifted_month + 2) / 5 + 1);
  c.month = static_cast<int>(shifted_month < 10 ? shifted_month + 3 : shifted_month - 9);
  c.year = static_cast<int>(year_of_era + era * 4 + (c.month <= 2 ? 1 : 0));
  return c;
}

bool before_gregorian_switch(int year, int month, int day) {
  if (year != 1582) return year < 1582;
  if (month != 10) return month < 10;
  return day < 15;
}

CivilTime from_fixed_year(std::int64_t day_number, int year_length, const int* cumulative) {
  const std::int64_t year = floor_div(day_number, year_length);
  const int day_of_year = static_cast<int>(day_number - year * year_length);
  int month = 1;
  while (month < 12 && day_of_year >= cumulative[month]) ++month;
  CivilTime c;
  c.year = static_cast<int>(year);
  c.month = month;
  c.day = day_of_year - cumulative[month - 1] + 1;
  return c;
}

bool julian_leap(int year) { return floor_div(year, 4) * 4 == year; }

int month_length(int year, int month, Calendar calendar) {
  static constexpr int common[12] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
  switch (calendar) {
    case Calendar::day_360:
      return 30;
    case Calendar::noleap:
      return common[month - 1];
    case Calendar::all_leap:
      return month == 2 ? 29 : common[month - 1];
    case Calendar::proleptic_gregorian:
      return month == 2 && is_gregorian_leap_year(year) ? 29 : common[month - 1];
    case Calendar::standard:
      if (month != 2) return common[month - 1];
      return (year < 1582 ? julian_leap(year) : is_gregorian_leap_year(year)) ? 29 : 28;
  }
  return 0;
}

std::string two(int v) {
  std::string s = std::to_string(v);
  return s.size() < 2 ? "0" + s : s;
}

std::string format_civil(const CivilTime& c) {
  return std::to_string(c.year) + "-" + two(c.month) + "-" + two(c.day) + "T" + two(c.hour) + ":" + two(c.minute) +
         ":" + two(c.second);
}

}  // namespace

std::string to_string(Calendar calendar) {
  switch (calendar) {
    case Calendar::standard:
      return "standard";
    case Calendar::proleptic_gregorian:
      return "proleptic_gregorian";
    case Calendar::noleap:
      return "noleap";
    case Calendar::all_leap:
      return "all_leap";
    case Calendar::day_360:
      return "360_day";
  }
  return "unknown";
}

Calendar parse_calendar(std::string_view text, std::string_view what) {
  static const std::map<std::string, Calendar> names = {
      {"", Calendar::standard},         {"standard", Calendar::standard},
      {"gregorian", Calendar::standard}, {"proleptic_gregorian", Calendar::proleptic_gregorian},
      {"noleap", Calendar::noleap},     {"365_day", Calendar::noleap},
      {"all_leap", Calendar::all_leap}, {"366_day", Calendar::all_leap},
      {"360_day", Calendar::day_360}};
  const auto found = names.find(lower(trim(text)));
  if (found == names.end()) {
    throw FormatError(std::string(what) + ": unknown calendar '" + std::string(text) +
                      "'; expected one of standard, gregorian, proleptic_gregorian, noleap, 365_day, all_leap, "
                      "366_day, 360_day (CF conventions 4.4.1)");
  }
  return found->second;
}

std::string to_string(TimeUnit unit) {
  switch (unit) {
    case TimeUnit::second:
      return "seconds";
    case TimeUnit::minute:
      return "minutes";
    case TimeUnit::hour:
      return "hours";
    case TimeUnit::day:
      return "days";
  }
  return "unknown";
}

TimeUnit parse_time_unit(std::string_view text, std::string_view what) {
  static const std::map<std::string, TimeUnit> names = {
      {"second", TimeUnit::second}, {"seconds", TimeUnit::second}, {"sec", TimeUnit::second},
      {"secs", TimeUnit::second},   {"s", TimeUnit::second},       {"minute", TimeUnit::minute},
      {"minutes", TimeUnit::minute}, {"min", TimeUnit::minute},    {"mins", TimeUnit::minute},
      {"hour", TimeUnit::hour},     {"hours", TimeUnit::hour},     {"hr", TimeUnit::hour},
      {"hrs", TimeUnit::hour},      {"h", TimeUnit::hour},         {"day", TimeUnit::day},
      {"days", TimeUnit::day},      {"d", TimeUnit::day}};
  const auto found = names.find(lower(trim(text)));
  if (found == names.end()) {
    throw FormatError(std::string(what) + ": unknown time unit '" + std::string(text) +
                      "'; expected seconds (sec, s), minutes (min), hours (hr, h) or days (d); months and years "
                      "are not fixed lengths and are refused");
  }
  return found->second;
}

std::int64_t seconds_per(TimeUnit unit) {
  switch (unit) {
    case TimeUnit::second:
      return 1;
    case TimeUnit::minute:
      return 60;
    case TimeUnit::hour:
      return 3600;
    case TimeUnit::day:
      return 86400;
  }
  return 0;
}

bool is_valid_date(int year, int month, int day, Calendar calendar) {
  if (month < 1 || month > 12 || day < 1) return false;
  if (day > month_length(year, month, calendar)) return false;
  if (calendar == Calendar::standard && year == 1582 && month == 10 && day > 4 && day < 15) return false;
  return true;
}

std::int64_t calendar_day_number(int year, int month, int day, Calendar calendar) {
  switch (calendar) {
    case Calendar::proleptic_gregorian:
      return days_from_civil(year, month, day);
    case Calendar::standard:
      return before_gregorian_switch(year, month, day) ? julian_days(year, month, day)
                                                       : days_from_civil(year, month, day);
    case Calendar::noleap:
      return static_cast<std::int64_t>(year) * 365 + cumulative_common[month - 1] + day - 1;
    case Calendar::all_leap:
      return static_cast<std::int64_t>(year) * 366 + cumulative_leap[month - 1] + day - 1;
    case Calendar::day_360:
      return static_cast<std::int64_t>(year) * 360 + (month - 1) * 30 + day - 1;
  }
  return 0;
}

CivilTime calendar_date_from_day_number(std::int64_t day_number, Calendar calendar) {
  switch (calendar) {
    case Calendar::proleptic_gregorian:
      return civil_from_days(day_number);
    case Calendar::standard:
      return day_number >= gregorian_start_day ? civil_from_days(day_number) : julian_from_days(day_number);
    case Calendar::noleap:
      return from_fixed_year(day_number, 365, cumulative_common);
    case Calendar::all_leap:
      return from_fixed_year(day_number, 366, cumulative_leap);
    case Calendar::day_360: {
      const std::int64_t year = floor_div(day_number, 360);
      const int day_of_year = static_cast<int>(day_number - year * 360);
      CivilTime c;
      c.year = static_cast<int>(year);
      c.month = day_of_year / 30 + 1;
      c.day = day_of_year % 30 + 1;
      return c;
    }
  }
  return {};
}

TimeUnits parse_time_units(std::string_view text, Calendar calendar, std::string_view what) {
  auto fail = [&](const std::string& why) -> TimeUnits {
    throw FormatError(std::string(what) + ": time units '" + std::string(text) + "' not understood (" + why +
                      "); expected '<seconds|minutes|hours|days> since <YYYY-MM-DD[ hh:mm[:ss]][Z|+hh:mm]>'");
  };
  const std::string_view body = trim(text);
  const std::size_t first_space = body.find_first_of(" \t");
  if (first_space == std::string_view::npos) return fail("no 'since'");
  TimeUnits out;
  out.unit = parse_time_unit(body.substr(0, first_space), what);
  std::string_view rest = trim(body.substr(first_space));
  if (rest.size() < 5 || lower(rest.substr(0, 5)) != "since") return fail("'since' expected after the unit");
  rest = trim(rest.substr(5));
  std::size_t pos = 0;
  auto digits = [&](std::size_t min_width, std::size_t max_width, int& value) {
    const std::size_t start = pos;
    value = 0;
    while (pos < rest.size() && pos - start < max_width && std::isdigit(static_cast<unsigned char>(rest[pos]))) {
      value = value * 10 + (rest[pos] - '0');
      ++pos;
    }
    return pos - start >= min_width;
  };
  auto expect = [&](char c) {
    if (pos < rest.size() && rest[pos] == c) {
      ++pos;
      return true;
    }
    return false;
  };
  bool negative_year = expect('-');
  CivilTime& ref = out.reference;
  if (!digits(1, 6, ref.year)) return fail("year expected");
  if (negative_year) ref.year = -ref.year;
  if (!expect('-') || !digits(1, 2, ref.month)) return fail("month expected after the year");
  if (!expect('-') || !digits(1, 2, ref.day)) return fail("day expected after the month");
  if (!is_valid_date(ref.year, ref.month, ref.day, calendar)) {
    return fail("the reference date does not exist in the " + to_string(calendar) + " calendar");
  }
  while (pos < rest.size() && rest[pos] == ' ') ++pos;
  if (pos < rest.size() && (rest[pos] == 'T' || rest[pos] == 't')) ++pos;
  if (pos < rest.size() && std::isdigit(static_cast<unsigned char>(rest[pos]))) {
    if (!digits(1, 2, ref.hour) || !expect(':') || !digits(2, 2, ref.minute)) {
      return fail("time of day must be hh:mm[:ss]");
    }
    if (expect(':')) {
      if (!digits(1, 2, ref.second)) return fail("seconds expected after ':'");
      if (expect('.')) {
        const std::size_t start = pos;
        double scale = 0.1;
        while (pos < rest.size() && std::isdigit(static_cast<unsigned char>(rest[pos]))) {
          out.reference_fraction += (rest[pos] - '0') * scale;
          scale /= 10.0;
          ++pos;
        }
        if (pos == start) return fail("digits expected after the decimal point");
      }
    }
    if (ref.hour > 23 || ref.minute > 59 || ref.second > 59) return fail("time of day out of range");
  }
  while (pos < rest.size() && rest[pos] == ' ') ++pos;
  if (pos < rest.size()) {
    const std::string zone = lower(rest.substr(pos));
    if (zone == "z" || zone == "utc" || zone == "gmt") {
      pos = rest.size();
    } else if (rest[pos] == '+' || rest[pos] == '-') {
      const int sign = rest[pos] == '+' ? 1 : -1;
      ++pos;
      int hours = 0;
      int minutes = 0;
      const std::size_t start = pos;
      if (!digits(1, 2, hours)) return fail("UTC offset hours expected");
      if (expect(':')) {
        if (!digits(2, 2, minutes)) return fail("UTC offset minutes must have two digits");
      } else if (pos - start == 2 && pos < rest.size()) {
        if (!digits(2, 2, minutes)) return fail("UTC offset must be +hh:mm or +hhmm");
      }
      if (hours > 14 || minutes > 59) return fail("UTC offset out of range");
      out.utc_offset_seconds = sign * (hours * 3600 + minutes * 60);
    }
    if (pos != rest.size()) return fail("unexpected text '" + std::string(rest.substr(pos)) + "'");
  }
  return out;
}

CivilTime decode_time(double value, const TimeUnits& units, Calendar calendar, std::string_view what) {
  // 3.2e14 s is about 10^7 years: far beyond any record, and well inside int64 and double's exact integers.
  const double offset = value * static_cast<double>(seconds_per(units.unit)) + units.reference_fraction;
  if (!std::isfinite(offset) || std::fabs(offset) > 3.2e14) {
    throw DataError(std::string(what) + ": time value " + std::to_string(value) + " " + to_string(units.unit) +
                    " is not finite or is beyond 10^7 years from the reference");
  }
  const CivilTime& ref = units.reference;
  const std::int64_t seconds_from_reference_midnight = ref.hour * 3600 + ref.minute * 60 + ref.second -
                                                       units.utc_offset_seconds + std::llround(offset);
  const std::int64_t day_shift = floor_div(seconds_from_reference_midnight, 86400);
  const std::int64_t second_of_day = seconds_from_reference_midnight - day_shift * 86400;
  CivilTime out = calendar_date_from_day_number(
      calendar_day_number(ref.year, ref.month, ref.day, calendar) + day_shift, calendar);
  out.hour = static_cast<int>(second_of_day / 3600);
  out.minute = static_cast<int>((second_of_day % 3600) / 60);
  out.second = static_cast<int>(second_of_day % 60);
  return out;
}

bool maps_to_utc(Calendar calendar) { return calendar != Calendar::day_360; }

UtcSeconds to_utc(const CivilTime& date, Calendar calendar, std::string_view what) {
  const std::int64_t second_of_day = date.hour * 3600 + date.minute * 60 + date.second;
  switch (calendar) {
    case Calendar::standard:
    case Calendar::proleptic_gregorian:
      return calendar_day_number(date.year, date.month, date.day, calendar) * 86400 + second_of_day;
    case Calendar::noleap:
      return to_utc_seconds(date);
    case Calendar::all_leap:
      if (date.month == 2 && date.day == 29 && !is_gregorian_leap_year(date.year)) {
        throw DataError(std::string(what) + ": all_leap date " + format_civil(date) +
                        " is a 29 February of a Gregorian common year and has no place on the UTC axis");
      }
      return to_utc_seconds(date);
    case Calendar::day_360:
      break;
  }
  throw FormatError(std::string(what) + ": calendar '" + to_string(calendar) +
                    "' cannot map to a regular UTC axis (its months all have 30 days); accepted calendars are "
                    "standard, gregorian, proleptic_gregorian, noleap, 365_day, all_leap and 366_day");
}

std::vector<UtcSeconds> decode_to_utc(std::span<const double> values, const TimeUnits& units, Calendar calendar,
                                      std::string_view what) {
  if (!maps_to_utc(calendar)) to_utc(CivilTime{}, calendar, what);  // throws the 360_day message
  std::vector<UtcSeconds> out(values.size());
  for (std::size_t i = 0; i < values.size(); ++i) {
    const std::string where = std::string(what) + ", index " + std::to_string(i);
    out[i] = to_utc(decode_time(values[i], units, calendar, where), calendar, where);
  }
  return out;
}

TimeAxis regular_axis(std::span<const UtcSeconds> times, Calendar calendar, std::string_view what) {
  if (times.empty()) throw DataError(std::string(what) + ": the time coordinate has no values");
  if (times.size() == 1) return TimeAxis(times[0], 86400, 1);
  for (std::size_t i = 1; i < times.size(); ++i) {
    if (times[i] == times[i - 1]) {
      throw DataError(std::string(what) + ": duplicate time at index " + std::to_string(i) + " (" +
                      format_iso8601(times[i]) + " repeats index " + std::to_string(i - 1) +
                      "); times must be strictly increasing");
    }
    if (times[i] < times[i - 1]) {
      throw DataError(std::string(what) + ": time at index " + std::to_string(i) + " (" +
                      format_iso8601(times[i]) + ") is earlier than index " + std::to_string(i - 1) + " (" +
                      format_iso8601(times[i - 1]) + "); times must be strictly increasing");
    }
  }
  // The step is the most frequent difference, so that the first index that breaks it is the one reported.
  std::vector<std::int64_t> steps(times.size() - 1);
  for (std::size_t i = 1; i < times.size(); ++i) steps[i - 1] = times[i] - times[i - 1];
  std::vector<std::int64_t> sorted = steps;
  std::sort(sorted.begin(), sorted.end());
  std::int64_t step = sorted[0];
  std::size_t best = 0;
  for (std::size_t i = 0; i < sorted.size();) {
    std::size_t j = i;
    while (j < sorted.size() && sorted[j] == sorted[i]) ++j;
    if (j - i > best) {
      best = j - i;
      step = sorted[i];
    }
    i = j;
  }
  for (std::size_t i = 1; i < times.size(); ++i) {
    const std::int64_t difference = steps[i - 1];
    if (difference == step) continue;
    bool leap_day_gap = calendar == Calendar::noleap && difference % step == 0 && difference > step;
    for (std::int64_t t = times[i - 1] + step; leap_day_gap && t < times[i]; t += step) {
      const CivilTime c = to_civil(t);
      leap_day_gap = c.month == 2 && c.day == 29;
    }
    if (!leap_day_gap) {
      throw DataError(std::string(what) + ": irregular time step at index " + std::to_string(i) + " (" +
                      format_iso8601(times[i]) + " is " + std::to_string(difference) + " s after index " +
                      std::to_string(i - 1) + "; the step elsewhere is " + std::to_string(step) +
                      " s); a regular step is required");
    }
  }
  const std::int64_t length = (times.back() - times.front()) / step + 1;
  return TimeAxis(times.front(), step, static_cast<std::size_t>(length));
}

TimeAxis union_axis(std::span<const UtcSeconds> times, std::string_view what) {
  if (times.empty()) throw DataError(std::string(what) + ": no valid times in any series");
  std::vector<UtcSeconds> sorted(times.begin(), times.end());
  std::sort(sorted.begin(), sorted.end());
  sorted.erase(std::unique(sorted.begin(), sorted.end()), sorted.end());
  if (sorted.size() == 1) return TimeAxis(sorted[0], 86400, 1);
  std::int64_t step = sorted[1] - sorted[0];
  for (std::size_t i = 2; i < sorted.size(); ++i) step = std::min<std::int64_t>(step, sorted[i] - sorted[i - 1]);
  for (const UtcSeconds t : sorted) {
    if ((t - sorted[0]) % step != 0) {
      throw DataError(std::string(what) + ": time " + format_iso8601(t) + " is off the regular grid starting " +
                      format_iso8601(sorted[0]) + " with step " + std::to_string(step) +
                      " s (the smallest difference between times); a regular step is required");
    }
  }
  return TimeAxis(sorted[0], step, static_cast<std::size_t>((sorted.back() - sorted[0]) / step + 1));
}

}  // namespace libseq::data
