"""Write ``data/leap_seconds.txt`` from the IERS leap-second file of a kept data package.

Source: ``Leap_Second.dat``, the TAI-UTC history published by the IERS Earth Orientation
Centre (Paris Observatory) with each Bulletin C, as shipped in the PyPI package
``astropy-iers-data`` (a test extra of librate; the runtime reads only the copy written
here). The copy records the package version, the file's SHA-256, the Bulletin it was updated
through and its expiry date, which becomes the table's ``valid-until:`` line (UTC instants
from that day on warn, see :mod:`cr3bp.time.scales`).

Run after upgrading the package (``make leap-seconds``)::

    .venv/bin/python -m cr3bp.data.refresh_leap_seconds

The output depends only on the package's file (no clock), so a rerun on the same version
writes the same bytes; ``tests/test_timescales.py`` checks that.
"""

from __future__ import annotations

import hashlib
import re
import sys
from dataclasses import dataclass
from importlib import metadata
from pathlib import Path

PACKAGE = "astropy-iers-data"
TARGET = Path(__file__).resolve().with_name("leap_seconds.txt")
MONTHS = {m: i + 1 for i, m in enumerate(("january", "february", "march", "april", "may", "june", "july",
                                           "august", "september", "october", "november", "december"))}


@dataclass(frozen=True)
class LeapFile:
    """The parsed IERS file: steps as (ISO date, TAI-UTC s), its expiry, provenance lines."""

    steps: tuple
    expires: str             # ISO date
    updated_through: str     # the file's "Updated through ..." line
    sha256: str
    version: str             # of the package it came from


def source_path() -> Path:
    """Path of ``Leap_Second.dat`` in the installed package (ImportError if it is missing)."""
    import astropy_iers_data
    return Path(astropy_iers_data.IERS_LEAP_SECOND_FILE)


def parse(text: str, *, sha256: str = "", version: str = "") -> LeapFile:
    """Read the IERS file: rows ``MJD day month year TAI-UTC``, a "File expires on D Month
    YYYY" line and an "Updated through ..." line. Raises ValueError on anything else."""
    steps, expires, updated = [], None, ""
    for line in text.splitlines():
        s = line.strip()
        if not s:
            continue
        if s.startswith("#"):
            body = s.lstrip("#").strip()
            m = re.match(r"File expires on\s+(\d{1,2})\s+([A-Za-z]+)\s+(\d{4})", body)
            if m:
                expires = f"{int(m[3]):04d}-{MONTHS[m[2].lower()]:02d}-{int(m[1]):02d}"
            elif body.lower().startswith("updated through"):
                updated = body
            continue
        parts = s.split()
        if len(parts) != 5:
            raise ValueError(f"unexpected row in the leap-second file: {s!r}")
        _mjd, day, month, year, value = parts
        steps.append((f"{int(year):04d}-{int(month):02d}-{int(day):02d}", int(float(value))))
    if expires is None or not steps:
        raise ValueError("the leap-second file has no 'File expires on' line or no rows")
    return LeapFile(tuple(steps), expires, updated, sha256, version)


def load() -> LeapFile:
    """The installed package's file, parsed, with its version and SHA-256."""
    raw = source_path().read_bytes()
    return parse(raw.decode("ascii"), sha256=hashlib.sha256(raw).hexdigest(), version=metadata.version(PACKAGE))


def render(f: LeapFile) -> str:
    """The text of ``data/leap_seconds.txt`` (the layout :mod:`cr3bp.time.scales` reads)."""
    lines = [
        "# TAI-UTC (whole seconds) in force from 00:00:00 UTC of the date given, since 1972-01-01.",
        "#",
        ("# Source: IERS Bulletin C leap-second file Leap_Second.dat (IERS Earth Orientation Centre, "
         f"Paris Observatory), from the PyPI package {PACKAGE} {f.version}; "
         f"\"{f.updated_through}\"; expires on {f.expires}"),
        f"# File SHA-256: {f.sha256}",
        "#",
        "# Written by data/refresh_leap_seconds.py; do not edit by hand: upgrade the package and",
        "# rerun the script (make leap-seconds). UTC instants on or after the valid-until date are",
        "# converted with the last value and trigger cr3bp.time.scales.LeapSecondsExpiredWarning.",
        "#",
        f"# valid-until: {f.expires}",
        "#",
        "# date        TAI-UTC (s)",
    ]
    lines += [f"{d} {v}" for d, v in f.steps]
    return "\n".join(lines) + "\n"


def main(argv=None) -> int:
    try:
        f = load()
    except ImportError:
        print(f"refresh_leap_seconds: the package '{PACKAGE}' is not installed "
              f"(pip install {PACKAGE}, or make venv: it is a test extra)", file=sys.stderr)
        return 2
    from cr3bp.io.atomic import write_text
    write_text(TARGET, render(f))
    print(f"wrote {TARGET}: {len(f.steps)} steps, last {f.steps[-1][0]} ({f.steps[-1][1]} s), "
          f"valid until {f.expires} ({PACKAGE} {f.version})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
