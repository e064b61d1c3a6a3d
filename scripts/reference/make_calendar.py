#!/usr/bin/env python3
"""Write testdata/calendar_reference.csv: days since 1970-01-01 → proleptic
Gregorian date, and Unix times → RFC 3339 (UTC, milliseconds), computed with
Python's standard `datetime` module (no third-party package), as an
independent reference for src/calendar.rs (H. Hinnant's `civil_from_days`).

Days: the edges of the Gregorian rules (century years 1700, 1800, 1900, 2100
are not leap years; 1600, 2000, 2400 are), the days around each 28/29 February
and 1 March, the epoch and the day before it, year 1 and year 9999 (the range
`datetime.date` covers), and pseudo-random days from a fixed seed.

Instants: the epoch, 1234567890, leap days, the last millisecond of a year,
and pseudo-random instants from 1970 to 9999 with milliseconds.

Usage: python3 make_calendar.py [OUTPUT.csv]
The output is deterministic: rerunning the script gives a byte-identical file.
"""

import csv
import datetime as dt
import random
import sys

EPOCH = dt.date(1970, 1, 1)


def days_of(d):
    return (d - EPOCH).days


def main(path):
    days = set()
    for year in (1, 4, 100, 400, 1600, 1700, 1800, 1900, 1969, 1970, 2000, 2024, 2100, 2400, 9999):
        for month, day in ((1, 1), (2, 28), (3, 1), (12, 31)):
            days.add(days_of(dt.date(year, month, day)))
        if year % 4 == 0 and (year % 100 != 0 or year % 400 == 0):
            days.add(days_of(dt.date(year, 2, 29)))
    days.update((-1, 0, 1))
    rng = random.Random(20260101)
    lo, hi = days_of(dt.date(1, 1, 1)), days_of(dt.date(9999, 12, 31))
    days.update(rng.randint(lo, hi) for _ in range(200))

    instants = {(0, 0), (1234567890, 250), (951825600, 0), (4107542401, 0), (1735689599, 999)}
    top = int(dt.datetime(9999, 12, 31, 23, 59, 59, tzinfo=dt.timezone.utc).timestamp())
    instants.update((rng.randint(0, top), rng.randint(0, 999)) for _ in range(200))

    with open(path, "w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["kind", "value", "millis", "expected"])
        for d in sorted(days):
            date = EPOCH + dt.timedelta(days=d)
            w.writerow(["days", d, "", f"{date.year:04d}-{date.month:02d}-{date.day:02d}"])
        for secs, millis in sorted(instants):
            t = dt.datetime.fromtimestamp(secs, tz=dt.timezone.utc) + dt.timedelta(milliseconds=millis)
            w.writerow(["unix", secs, millis, t.strftime("%Y-%m-%dT%H:%M:%S.") + f"{millis:03d}Z"])


if __name__ == "__main__":
    main(sys.argv[1] if len(sys.argv) > 1 else "testdata/calendar_reference.csv")
