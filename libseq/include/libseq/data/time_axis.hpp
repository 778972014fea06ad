#pragma once
/// @file time_axis.hpp
/// A regular UTC time axis (start, step, count) and the civil-date arithmetic that everything else builds on.
/// Times are whole seconds since 1970-01-01T00:00:00Z in the proleptic Gregorian calendar (UTC, no leap seconds).

#include <cstdint>
#include <string>
#include <string_view>

namespace libseq::data {

/// Seconds since 1970-01-01T00:00:00Z, proleptic Gregorian, UTC.
using UtcSeconds = std::int64_t;

/// A calendar date and time of day, proleptic Gregorian unless stated otherwise.
struct CivilTime {
  int year = 1970;
  int month = 1;   ///< 1..12
  int day = 1;     ///< 1..31
  int hour = 0;    ///< 0..23
  int minute = 0;  ///< 0..59
  int second = 0;  ///< 0..59
  friend bool operator==(const CivilTime&, const CivilTime&) = default;
};

/// Days since 1970-01-01 of a proleptic Gregorian date (any year, negative before 1970).
std::int64_t days_from_civil(int year, int month, int day);

/// Proleptic Gregorian date of a day count since 1970-01-01.
CivilTime civil_from_days(std::int64_t days);

/// Whether `year` is a leap year in the proleptic Gregorian calendar.
bool is_gregorian_leap_year(int year);

/// Seconds since the epoch of a civil UTC time. Fields are not range-checked here; see parse_iso8601.
UtcSeconds to_utc_seconds(const CivilTime& civil);

/// Civil UTC time of seconds since the epoch.
CivilTime to_civil(UtcSeconds seconds);

/// ISO 8601 text "YYYY-MM-DDThh:mm:ssZ" of a UTC time.
std::string format_iso8601(UtcSeconds seconds);

/// Parses "YYYY-MM-DD", "YYYY-MM-DDThh:mm[:ss]" (also with a space for 'T'), optionally followed by "Z" or a UTC
/// offset "+hh:mm", "-hh:mm", "+hhmm" or "+hh". A time with no offset is taken as UTC.
/// @throws libseq::DataError naming `what` (e.g. "file x.csv, line 12") and the text when it is not such a time.
UtcSeconds parse_iso8601(std::string_view text, std::string_view what = "time");

/// A regular time axis: `length` instants `start + i * step_seconds`, i = 0..length-1.
class TimeAxis {
 public:
  TimeAxis() = default;
  /// @throws libseq::DataError when step_seconds <= 0.
  TimeAxis(UtcSeconds start, std::int64_t step_seconds, std::size_t length);

  UtcSeconds start() const { return start_; }
  std::int64_t step_seconds() const { return step_seconds_; }
  std::size_t length() const { return length_; }
  /// Last instant; equals start() for a one-step axis. Undefined for an empty axis.
  UtcSeconds end() const { return start_ + static_cast<std::int64_t>(length_ ? length_ - 1 : 0) * step_seconds_; }

  /// Instant of step i (not range-checked).
  UtcSeconds time_at(std::size_t i) const { return start_ + static_cast<std::int64_t>(i) * step_seconds_; }

  /// Index of instant t when it lies on the axis, or -1 when it does not (off the grid or out of range).
  std::int64_t index_of(UtcSeconds t) const;

  /// First index with time_at(i) >= t, clamped to [0, length].
  std::size_t lower_bound(UtcSeconds t) const;

  /// Human-readable step: "1 day", "1 hour", "30 minutes", "3600 s".
  std::string describe_step() const;

  friend bool operator==(const TimeAxis&, const TimeAxis&) = default;

 private:
  UtcSeconds start_ = 0;
  std::int64_t step_seconds_ = 86400;
  std::size_t length_ = 0;
};

}  // namespace libseq::data
