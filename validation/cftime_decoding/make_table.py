#!/usr/bin/python3
"""Reference table of CF time decodings made with cftime.num2date (Debian package python3-cftime).

Each row: CF units text, calendar, numeric value, and the date-time cftime decodes (ISO, whole seconds), or
"error" when cftime refuses the units for that calendar (a reference date the calendar does not have).
Run:  /usr/bin/python3 validation/cftime_decoding/make_table.py   (writes cases.csv beside this script)
"""
import csv
import os

import cftime

HERE = os.path.dirname(os.path.abspath(__file__))

CALENDARS = ["standard", "gregorian", "proleptic_gregorian", "noleap", "365_day", "all_leap", "366_day", "360_day"]

# (units, values): every unit spelling, reference times with and without time of day, fractional seconds,
# "Z" and numeric UTC offsets; values cross leap days, month ends, year ends, and go negative.
CASES = [
    ("days since 2000-01-01", [0, 1, 31, 58, 59, 60, 365, 366, 1461, -1, -365, -366, 0.5, 0.25, 10957.75]),
    ("days since 1900-01-01 00:00:00", [0, 58, 59, 60, 36524, 36525, 44000, -1]),
    ("day since 1999-12-31 12:00", [0, 0.5, 1, 59.5, 60.5]),
    ("d since 2001-02-28", [0, 1, 2, 365, -1]),
    ("hours since 2000-02-28 00:00:00", [0, 23, 24, 47, 48, 72, -24, 8784, 1.5]),
    ("hour since 1970-01-01T00:00:00Z", [0, 1, 24, 438300, -1]),
    ("hr since 2004-02-29 06:00", [0, 18, 24, -6, -30]),
    ("h since 2020-12-31 23:00", [0, 1, 2, -23, -24]),
    ("hrs since 2000-01-01 00:00:00 +05:00", [0, 1, 5, -19, 24]),
    ("hours since 2000-01-01T00:00:00-03:30", [0, 1, -4, 20.5]),
    ("hours since 2000-03-01 00:00 -0600", [0, -6, -30, 24]),
    ("minutes since 2000-01-01 00:00:00", [0, 1, 59, 60, 1440, 86400, -1, -1440, 0.5]),
    ("min since 1980-06-30 23:59", [0, 1, 2, -1439]),
    ("mins since 2012-02-28 12:00:00", [720, 2160, 525600]),
    ("seconds since 1970-01-01 00:00:00", [0, 1, 59, 86399, 86400, 951782400, -1, -86400, 1e9]),
    ("sec since 2000-01-01 00:00:00.5", [0.5, 1.5, -0.5, 86399.5]),
    ("s since 2016-12-31 23:59:59", [1, 2, -59]),
    ("secs since 1990-05-17T08:30:00Z", [0, 3600, -30600]),
    ("days since 2000-1-1", [0, 59, 60]),
    ("days since 1850-01-01 00:00:00.0", [0, 18262, 54787, 60000]),
    ("days since 1600-02-28", [0, 1, 365, 366]),
    ("days since 2100-02-28", [0, 1, 2]),
    ("Days Since 2000-01-01 00:00:00 UTC", [0, 1, 60]),
]

# Mixed Julian/Gregorian behaviour only matters for the standard calendar: dates on both sides of 1582-10-15.
STANDARD_ONLY = [
    ("days since 1582-10-04", [0, 1, 2, -1, -365, 366]),
    ("days since 1582-10-15 00:00:00", [0, -1, -10, -11, -365]),
    ("days since 1500-02-28", [0, 1, 2, 365, 30000]),
    ("days since 1000-01-01", [0, 59, 60, 100000, 212000]),
    ("hours since 1582-10-04 12:00", [0, 12, 24, -12]),
]

# Reference dates that exist only in some calendars.
CALENDAR_ONLY = [
    ("days since 2001-02-29", ["all_leap", "366_day"], [0, 1, 366, -1]),
    ("days since 2000-02-30", ["360_day"], [0, 1, -30, 360, 359.5]),
    ("hours since 1999-12-30 12:00", ["360_day"], [0, 12, 36, 8640]),
]


def rows():
    for units, values in CASES:
        for calendar in CALENDARS:
            for value in values:
                yield units, calendar, value
    for units, values in STANDARD_ONLY:
        for calendar in ("standard", "gregorian", "proleptic_gregorian"):
            for value in values:
                yield units, calendar, value
    for units, calendars, values in CALENDAR_ONLY:
        for calendar in calendars:
            for value in values:
                yield units, calendar, value


def main():
    out_path = os.path.join(HERE, "cases.csv")
    count = 0
    with open(out_path, "w", newline="") as out:
        writer = csv.writer(out, lineterminator="\n")
        writer.writerow(["units", "calendar", "value", "decoded"])
        for units, calendar, value in rows():
            try:
                date = cftime.num2date(value, units, calendar, only_use_cftime_datetimes=True)
            except ValueError as error:
                # A reference date that does not exist in the calendar (31 December in 360_day): the C++ side
                # must refuse the units too.
                print(f"refused by cftime: {units!r} {calendar}: {error}")
                writer.writerow([units, calendar, repr(float(value)), "error"])
                count += 1
                continue
            if date.microsecond != 0:
                raise SystemExit(f"case {units!r} {calendar} {value} has fractional seconds; pick whole seconds")
            decoded = "%04d-%02d-%02dT%02d:%02d:%02d" % (date.year, date.month, date.day, date.hour, date.minute,
                                                         date.second)
            writer.writerow([units, calendar, repr(float(value)), decoded])
            count += 1
    print(f"wrote {count} rows to {out_path} (cftime {cftime.__version__})")


if __name__ == "__main__":
    main()
