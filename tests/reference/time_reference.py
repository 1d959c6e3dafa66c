#!/usr/bin/env python3
"""Reference days-since-epoch values for Cloister's time parser.

Reference implementation: Python's standard-library ``datetime`` module
(``datetime.fromisoformat`` and ``datetime.strptime``), which implements the
proleptic Gregorian calendar and validates month/day/hour ranges itself.

For each date string the script states how Python reads it (an explicit
``strptime`` format, or ``fromisoformat``) and records either the number of
days since 1970-01-01T00:00Z (naive times are taken as UTC, as Cloister does)
or ``null`` when Python refuses the text with ``ValueError``.

Run:  python3 tests/reference/time_reference.py
Writes tests/reference/time_reference.json next to this file.
"""

import json
import os
from datetime import datetime, timezone

EPOCH = datetime(1970, 1, 1, tzinfo=timezone.utc)

# (text, Cloister date order, how Python reads it)
# "iso" = datetime.fromisoformat; anything else is a strptime format.
CASES = [
    # ISO dates
    ("1970-01-01", "dmy", "iso"),
    ("2025-03-04", "dmy", "iso"),
    ("2024-02-29", "dmy", "iso"),
    ("2000-02-29", "dmy", "iso"),
    ("1900-03-01", "dmy", "iso"),
    ("1969-12-31", "dmy", "iso"),
    ("1601-01-01", "dmy", "iso"),
    ("0001-01-01", "dmy", "iso"),
    ("9999-12-31", "dmy", "iso"),
    # ISO date-times, with and without seconds, fractions and zones
    ("2025-03-04T10:15", "dmy", "iso"),
    ("2025-03-04 10:15:30", "dmy", "iso"),
    ("2025-03-04T10:15:30.25", "dmy", "iso"),
    ("2025-03-04T10:15:30.123456Z", "dmy", "iso"),
    ("2025-03-04T23:59:59+05:30", "dmy", "iso"),
    ("2025-03-04T00:00:00-08:00", "dmy", "iso"),
    ("2025-12-31T22:00:00-0330", "dmy", "%Y-%m-%dT%H:%M:%S%z"),
    ("2025-01-01T01:00+01:00", "dmy", "iso"),
    ("2023-06-30 18:00:00Z", "dmy", "%Y-%m-%d %H:%M:%S%z"),
    ("1999-12-31T23:59:59.999Z", "ymd", "iso"),
    ("2025-07-01 00:00:00+14:00", "dmy", "iso"),
    ("2025-07-01 00:00:00-12:00", "mdy", "iso"),
    ("1970-01-01T00:00:00+00:00", "dmy", "iso"),
    ("2025-03-04T10:15:30,5", "dmy", "iso"),
    # Slash / dot / dash dates with an explicit order
    ("04/03/2025", "dmy", "%d/%m/%Y"),
    ("4/3/2025", "dmy", "%d/%m/%Y"),
    ("03/04/2025", "mdy", "%m/%d/%Y"),
    ("12/31/2024", "mdy", "%m/%d/%Y"),
    ("2025/03/04", "ymd", "%Y/%m/%d"),
    ("04.03.2025", "dmy", "%d.%m.%Y"),
    ("04-03-2025", "dmy", "%d-%m-%Y"),
    ("29/02/2024 13:45", "dmy", "%d/%m/%Y %H:%M"),
    ("29.02.2024 07:05:09", "dmy", "%d.%m.%Y %H:%M:%S"),
    ("02/29/2024 11:59 PM", "mdy", "%m/%d/%Y %I:%M %p"),
    ("02/29/2024 12:00 AM", "mdy", "%m/%d/%Y %I:%M %p"),
    ("15/08/2023 12:30 PM", "dmy", "%d/%m/%Y %I:%M %p"),
    ("01/01/2000 00:00:00", "dmy", "%d/%m/%Y %H:%M:%S"),
    # Texts Python refuses (ValueError): impossible dates and times
    ("2025-02-29", "dmy", "iso"),
    ("31/04/2025", "dmy", "%d/%m/%Y"),
    ("2023-02-29", "dmy", "iso"),
    ("1900-02-29", "dmy", "iso"),
    ("2025-13-01", "dmy", "iso"),
    ("2025-04-31T10:00", "dmy", "iso"),
    ("2025-03-04 24:00", "dmy", "%Y-%m-%d %H:%M"),
    ("2025-03-04 12:60", "dmy", "%Y-%m-%d %H:%M"),
    ("13/13/2025", "mdy", "%m/%d/%Y"),
    ("02/30/2024", "mdy", "%m/%d/%Y"),
    ("2025-03-04T10:00+24:00", "dmy", "iso"),
]


def read(text, how):
    if how == "iso":
        return datetime.fromisoformat(text)
    return datetime.strptime(text, how)


def main():
    out = []
    for text, order, how in CASES:
        try:
            dt = read(text, how)
        except ValueError:
            out.append({"text": text, "order": order, "python": how, "days": None})
            continue
        if dt.tzinfo is None:
            dt = dt.replace(tzinfo=timezone.utc)
        delta = dt - EPOCH
        days = delta.days + (delta.seconds + delta.microseconds / 1e6) / 86400.0
        # A clock time was written: the strptime format has an hour, or the
        # ISO text goes on after its 10-character date.
        has_clock = ("%H" in how or "%I" in how) if how != "iso" else len(text) > 10
        out.append({"text": text, "order": order, "python": how, "days": days,
                    "has_clock": has_clock})
    doc = {
        "source": "Python standard library datetime (fromisoformat / strptime), "
                  "written by tests/reference/time_reference.py",
        "cases": out,
    }
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "time_reference.json")
    with open(path, "w", encoding="utf-8") as f:
        json.dump(doc, f, indent=1)
        f.write("\n")
    valid = sum(1 for c in out if c["days"] is not None)
    print(f"wrote {len(out)} cases ({valid} valid) to {path}")


if __name__ == "__main__":
    main()
