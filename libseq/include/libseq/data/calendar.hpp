#pragma once
/// @file calendar.hpp
/// CF time coordinates: parsing `"<unit> since <reference time>"`, the CF calendars, decoding numeric offsets to
/// calendar dates, and mapping those dates onto the regular UTC axis of a Panel (see docs/input-netcdf.md).
/// Everything here is pure computation on values; it is thread-safe and allocates only for messages.

#include <cstdint>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "libseq/data/time_axis.hpp"

namespace libseq::data {

/// The calendars of the CF conventions (section 4.4.1), aliases folded together.
enum class Calendar {
  standard,             ///< "standard" or "gregorian": Julian before 1582-10-15, Gregorian from then on.
  proleptic_gregorian,  ///< "proleptic_gregorian": Gregorian rules extended to all years.
  noleap,               ///< "noleap" or "365_day": every year has 365 days, never a 29 February.
  all_leap,             ///< "all_leap" or "366_day": every year has 366 days, always a 29 February.
  day_360,              ///< "360_day": twelve months of 30 days.
};

/// Canonical CF name of a calendar ("standard", "proleptic_gregorian", "noleap", "all_leap", "360_day").
std::string to_string(Calendar calendar);

/// Parses a CF calendar attribute, case-insensitively: standard, gregorian, proleptic_gregorian, noleap, 365_day,
/// all_leap, 366_day, 360_day. An empty text means "standard", as CF specifies for an absent attribute.
/// @throws libseq::FormatError naming `what` (file and variable), the text and the accepted names.
Calendar parse_calendar(std::string_view text, std::string_view what);

/// The time units CF allows here (fixed lengths only; months and years are refused as CF advises).
enum class TimeUnit { second, minute, hour, day };

/// Canonical name: "seconds", "minutes", "hours", "days".
std::string to_string(TimeUnit unit);

/// Parses a unit word: second(s)/sec(s)/s, minute(s)/min(s), hour(s)/hr(s)/h, day(s)/d; case-insensitive.
/// @throws libseq::FormatError naming `what` and the text.
TimeUnit parse_time_unit(std::string_view text, std::string_view what);

/// Length of one unit in seconds.
std::int64_t seconds_per(TimeUnit unit);

/// A parsed `"<unit> since <reference>"` attribute. The reference date is a date in the file's calendar (it may be
/// 2000-02-30 in a 360_day calendar), so it is kept as fields rather than UTC seconds.
struct TimeUnits {
  TimeUnit unit = TimeUnit::day;
  CivilTime reference;                  ///< Reference date and time of day as written, in the file's calendar.
  double reference_fraction = 0.0;      ///< Fractional seconds of the reference time, in [0, 1).
  std::int64_t utc_offset_seconds = 0;  ///< Offset of the reference from UTC (+05:00 gives +18000).
};

/// Parses `"<unit> since <date>[( |T)<hh:mm[:ss[.fff]]>][Z|(+|-)h[h][:mm]|(+|-)hhmm]"`. Month, day, hour and offset
/// hour may have one or two digits (the UDUNITS form "1992-10-8 15:15:42.5 -6:00" is accepted). The date is
/// checked against `calendar` (29 February must exist in it; in the standard calendar 1582-10-05..14 do not).
/// @throws libseq::FormatError naming `what` (file and variable) and the text when the form is not this one.
TimeUnits parse_time_units(std::string_view text, Calendar calendar, std::string_view what);

/// Whether (year, month, day) is a date of `calendar`. Years use astronomical numbering (year 0 = 1 BC).
bool is_valid_date(int year, int month, int day, Calendar calendar);

/// Day number of a date in `calendar`: consecutive integers for consecutive days. For standard and
/// proleptic_gregorian the numbers are days since 1970-01-01 (Gregorian), so they count real days; for the other
/// calendars the origin is arbitrary but fixed. Fields are not range-checked (see is_valid_date).
std::int64_t calendar_day_number(int year, int month, int day, Calendar calendar);

/// Inverse of calendar_day_number (time of day is left at 00:00:00).
CivilTime calendar_date_from_day_number(std::int64_t day_number, Calendar calendar);

/// Decodes one numeric time `value` (in `units`) to a date and time in `calendar`, rounded to the nearest whole
/// second (the resolution of the UTC axis), as cftime.num2date does up to that rounding.
/// @throws libseq::DataError naming `what` when the value is not finite or lies beyond ±10^7 years.
CivilTime decode_time(double value, const TimeUnits& units, Calendar calendar, std::string_view what);

/// Whether dates of `calendar` can be placed on the regular UTC axis (all but 360_day).
bool maps_to_utc(Calendar calendar);

/// Maps a decoded date of `calendar` onto UTC seconds (proleptic Gregorian):
/// standard and proleptic_gregorian give the same instant (a Julian date before 1582-10-15 becomes the Gregorian
/// date of the same day); noleap and all_leap give the Gregorian date with the same year, month, day and time.
/// @throws libseq::FormatError naming `what` for 360_day ("cannot map to a regular UTC axis").
/// @throws libseq::DataError naming `what` for an all_leap 29 February in a Gregorian common year.
UtcSeconds to_utc(const CivilTime& date, Calendar calendar, std::string_view what);

/// Decodes a whole time coordinate and maps it to UTC: decode_time then to_utc for each value.
/// @throws as decode_time and to_utc; `what` names the file and variable, the message adds the index.
std::vector<UtcSeconds> decode_to_utc(std::span<const double> values, const TimeUnits& units, Calendar calendar,
                                      std::string_view what);

/// Checks that `times` (UTC seconds from decode_to_utc) are strictly increasing with one regular step and returns
/// the TimeAxis they span. For noleap the only gaps allowed are the Gregorian 29 Februaries the calendar lacks:
/// those instants become steps of the axis with no value (`times[i]` then sits at `axis.index_of(times[i])`).
/// A single time gets a step of one day.
/// @throws libseq::DataError naming `what`, the first offending index and its value for a non-increasing,
///         duplicate or irregular time.
TimeAxis regular_axis(std::span<const UtcSeconds> times, Calendar calendar, std::string_view what);

/// The regular axis spanning the union of several series' times (incomplete multidimensional and ragged CF
/// forms): the step is the smallest positive difference between distinct times and every time must lie on the
/// grid start + k·step. Gaps are allowed.
/// @throws libseq::DataError naming `what` and the first time off the grid; DataError when `times` is empty.
TimeAxis union_axis(std::span<const UtcSeconds> times, std::string_view what);

}  // namespace libseq::data
