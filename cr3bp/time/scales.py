"""Time scales UTC, TAI, TT and TDB; Julian dates; ISO 8601 text; the leap-second table.

Scales (the relations are those of the IERS Conventions 2010, ch. 10):

* **UTC** — civil time; ``TAI - UTC`` is a whole number of seconds that steps by one at a
  leap second (``data/leap_seconds.txt``: the IERS leap-second file of Bulletin C, copied from
  the PyPI package astropy-iers-data by ``data/refresh_leap_seconds.py``, with its source,
  SHA-256 and expiry). Only UTC from 1972-01-01
  is supported: before that UTC had fractional, drifting offsets (rubber seconds).
* **TAI** — International Atomic Time.
* **TT** — Terrestrial Time, ``TT = TAI + 32.184 s`` exactly.
* **TDB** — Barycentric Dynamical Time, ``TDB = TT + periodic terms`` of amplitude 1.66 ms:
  the series of Fairhead & Bretagnon (1990, A&A 229, 240), truncated to 45 of its leading terms
  (:data:`FAIRHEAD_BRETAGNON_TERMS`); the leading seven terms are those printed in USNO
  Circular 179 (Kaplan 2005, eq. 2.6), the rest are further terms of the same series. Its
  agreement with the full series is checked against pyerfa to 0.6 microsecond
  (tests/test_against_pyerfa.py). The geocentric form is used (no topocentric terms).

An :class:`Epoch` holds one instant or an array of instants as a two-part TT Julian date
``jd1 + jd2`` with ``jd1 = 2400000.5 + MJD day`` (a whole MJD) and ``0 <= jd2 < 1``, so the
resolution is about 10 ps over centuries. It converts to every scale, to ISO 8601 text, and
supports ``epoch + seconds`` (SI seconds of TT) and ``epoch_b - epoch_a`` (seconds).

UTC instants in a leap second (``23:59:60``) are represented exactly. Two-part UTC Julian
dates use the quasi-Julian-date convention in which the day holding a leap second is
86401 s long (so the fraction of that day is ``seconds_of_day / 86401``).

UTC dates beyond the table's validity are converted with the last TAI-UTC value and emit a
:class:`LeapSecondsExpiredWarning` (a ``UserWarning``), never silently.
"""

from __future__ import annotations

import re
import warnings
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

import numpy as np

from ..constants import (DAYS_PER_JULIAN_MILLENNIUM, J2000_JD, MJD_ZERO_JD, SECONDS_PER_DAY,
                         TT_MINUS_TAI_S)
from ..errors import InputError
from ..validate import whole_number
from ..vocabulary import TIME_SYSTEMS

__all__ = [
    "SCALES", "Epoch", "LeapSecondsExpiredWarning", "leap_second_table", "tai_minus_utc",
    "tdb_minus_tt", "calendar_to_mjd", "mjd_to_calendar", "parse_iso", "J2000_JD",
    "TT_MINUS_TAI_S", "FIRST_UTC_MJD",
]

SCALES = TIME_SYSTEMS
FIRST_UTC_MJD = 41317            # 1972-01-01, start of UTC with whole-second TAI-UTC
MAX_DECIMALS = 9


class LeapSecondsExpiredWarning(UserWarning):
    """A UTC instant lies after the leap-second table's date of validity.

    The conversion used the last TAI-UTC value in the table; a leap second announced later
    (IERS Bulletin C) would shift the result by one second per missing step.

    Parameters
    ----------
    *args : str
        The message, as for any :class:`UserWarning`.

    Examples
    --------
    >>> import warnings
    >>> with warnings.catch_warnings(record=True) as caught:
    ...     warnings.simplefilter("always")
    ...     _ = tai_minus_utc(leap_second_table().valid_until_mjd + 10)
    >>> caught[0].category.__name__
    'LeapSecondsExpiredWarning'

    References
    ----------
    IERS Bulletin C (International Earth Rotation and Reference Systems Service), the
    announcements of leap seconds, published twice a year.
    """


# ---------------------------------------------------------------------------------------
# Leap-second table


@dataclass(frozen=True)
class LeapSecondTable:
    """TAI-UTC steps: ``mjd[i]`` (UTC day the value starts) and ``tai_minus_utc_s[i]``.

    Parameters
    ----------
    mjd : numpy.ndarray of int
        UTC day (Modified Julian Date) from which each TAI-UTC value is in force.
    tai_minus_utc_s : numpy.ndarray of float
        TAI-UTC (s) from that day on.
    valid_until_mjd : int
        The first UTC day the table does not vouch for.
    source : str
        The provenance line(s) from the file header.

    Examples
    --------
    >>> table = leap_second_table()
    >>> table.to_dict()["steps"][0]
    ['1972-01-01', 10.0]

    References
    ----------
    IERS Bulletin C; Petit, G. & Luzum, B. (eds.), "IERS Conventions (2010)", IERS Technical
    Note 36 (2010), ch. 10.
    """

    mjd: np.ndarray
    tai_minus_utc_s: np.ndarray
    valid_until_mjd: int
    source: str

    def to_dict(self) -> dict:
        return {
            "steps": [[mjd_to_iso_date(int(m)), float(s)] for m, s in zip(self.mjd, self.tai_minus_utc_s)],
            "valid_until": mjd_to_iso_date(self.valid_until_mjd),
            "source": self.source,
        }


@lru_cache(maxsize=1)
def leap_second_table() -> LeapSecondTable:
    """The TAI-UTC table read from ``data/leap_seconds.txt``.

    The file is the IERS Bulletin C leap-second file as shipped by astropy-iers-data, copied by
    ``data/refresh_leap_seconds.py``; it is read once and cached.

    Returns
    -------
    LeapSecondTable
        The steps of TAI-UTC, their validity date and the file's provenance.

    Raises
    ------
    RuntimeError
        The data file has no ``valid-until:`` line (a damaged installation).

    Examples
    --------
    >>> float(leap_second_table().tai_minus_utc_s[-1])
    37.0

    References
    ----------
    IERS Bulletin C (leap-second announcements); Petit, G. & Luzum, B. (eds.), "IERS
    Conventions (2010)", IERS Technical Note 36 (2010), ch. 10.
    """
    text = resources.files("cr3bp.data").joinpath("leap_seconds.txt").read_text()
    mjd, dat, source, valid = [], [], [], None
    for line in text.splitlines():
        s = line.strip()
        if not s:
            continue
        if s.startswith("#"):
            body = s.lstrip("#").strip()
            if body.lower().startswith("valid-until:"):
                valid = _date_mjd(body.split(":", 1)[1].strip())
            elif body.startswith("Source:") or "FROM MEMORY" in body:
                source.append(body)
            continue
        date, value = s.split()
        mjd.append(_date_mjd(date))
        dat.append(float(value))
    if valid is None:
        raise RuntimeError("data/leap_seconds.txt has no 'valid-until:' line")
    return LeapSecondTable(np.array(mjd, dtype=np.int64), np.array(dat), valid, " ".join(source))


def _date_mjd(text: str) -> int:
    y, m, d = (int(v) for v in text.split("-"))
    return int(calendar_to_mjd(y, m, d))


def tai_minus_utc(mjd_utc_day, *, stacklevel: int = 2) -> np.ndarray:
    """TAI-UTC (s) in force during the given UTC day(s), from the leap-second table.

    Parameters
    ----------
    mjd_utc_day : int or array_like of int
        UTC day(s) as whole Modified Julian Dates.
    stacklevel : int, optional
        Stack level of the :class:`LeapSecondsExpiredWarning` (for callers that wrap this).

    Returns
    -------
    numpy.ndarray
        TAI-UTC in seconds, the shape of ``mjd_utc_day``.

    Raises
    ------
    InputError
        A day before 1972-01-01 (pre-1972 UTC, with fractional drifting offsets, is not
        supported). Days on or after the table's validity date warn with
        :class:`LeapSecondsExpiredWarning` instead.

    Examples
    --------
    >>> float(tai_minus_utc(calendar_to_mjd(2017, 1, 1)))
    37.0
    >>> float(tai_minus_utc(calendar_to_mjd(2016, 12, 31)))
    36.0

    References
    ----------
    IERS Bulletin C; Petit, G. & Luzum, B. (eds.), "IERS Conventions (2010)", IERS Technical
    Note 36 (2010), ch. 10.
    """
    table = leap_second_table()
    d = np.asarray(mjd_utc_day, dtype=np.int64)
    if d.size and d.min() < FIRST_UTC_MJD:
        bad = int(d.min())
        raise InputError(
            f"UTC date {mjd_to_iso_date(bad)} is before 1972-01-01; pre-1972 UTC (fractional, "
            "drifting TAI-UTC) is not supported: give the epoch in TAI, TT or TDB")
    if d.size and d.max() >= table.valid_until_mjd:
        warnings.warn(LeapSecondsExpiredWarning(
            f"UTC date {mjd_to_iso_date(int(d.max()))} is on or after "
            f"{mjd_to_iso_date(table.valid_until_mjd)}, the end of validity of the leap-second "
            f"table (IERS Bulletin C); TAI-UTC = {table.tai_minus_utc_s[-1]:g} s assumed"),
            stacklevel=stacklevel + 1)
    i = np.searchsorted(table.mjd, d, side="right") - 1
    return table.tai_minus_utc_s[i]


def _utc_day_length(mjd_utc_day) -> np.ndarray:
    """Seconds in the UTC day(s): 86400, or 86401 when a leap second ends the day."""
    d = np.asarray(mjd_utc_day, dtype=np.int64)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", LeapSecondsExpiredWarning)
        return SECONDS_PER_DAY + tai_minus_utc(d + 1) - tai_minus_utc(d)


# ---------------------------------------------------------------------------------------
# Calendar (proleptic Gregorian)


def calendar_to_mjd(year, month, day):
    """Integer MJD of a Gregorian calendar date (vectorised).

    Parameters
    ----------
    year, month, day : int or array_like of int
        Proleptic Gregorian calendar fields (broadcast together; not range-checked).

    Returns
    -------
    numpy.ndarray of int
        The Modified Julian Date of each date's start, ``MJD = JDN - 2400001``.

    Raises
    ------
    ValueError
        Fields that cannot be converted to integers.

    Examples
    --------
    >>> int(calendar_to_mjd(2000, 1, 1))
    51544

    References
    ----------
    Fliegel, H. F. & Van Flandern, T. C., "A machine algorithm for processing calendar dates",
    Communications of the ACM 11, 657 (1968).
    """
    y = np.asarray(year, dtype=np.int64)
    m = np.asarray(month, dtype=np.int64)
    d = np.asarray(day, dtype=np.int64)
    a = -((14 - m) // 12)  # Fortran integer division (m - 14) / 12, truncated toward zero
    jdn = (d - 32075 + 1461 * (y + 4800 + a) // 4 + 367 * (m - 2 - a * 12) // 12
           - 3 * ((y + 4900 + a) // 100) // 4)
    return jdn - 2400001


def mjd_to_calendar(mjd_day):
    """(year, month, day) of integer MJD(s); the inverse of :func:`calendar_to_mjd`.

    Parameters
    ----------
    mjd_day : int or array_like of int
        Whole Modified Julian Dates.

    Returns
    -------
    year, month, day : numpy.ndarray of int
        Proleptic Gregorian calendar fields, the shape of ``mjd_day``.

    Raises
    ------
    ValueError
        Values that cannot be converted to integers.

    Examples
    --------
    >>> [int(v) for v in mjd_to_calendar(51544)]
    [2000, 1, 1]

    References
    ----------
    Fliegel, H. F. & Van Flandern, T. C., "A machine algorithm for processing calendar dates",
    Communications of the ACM 11, 657 (1968).
    """
    l_ = np.asarray(mjd_day, dtype=np.int64) + 2400001 + 68569
    n = 4 * l_ // 146097
    l_ = l_ - (146097 * n + 3) // 4
    i = 4000 * (l_ + 1) // 1461001
    l_ = l_ - 1461 * i // 4 + 31
    j = 80 * l_ // 2447
    d = l_ - 2447 * j // 80
    l_ = j // 11
    m = j + 2 - 12 * l_
    y = 100 * (n - 49) + i + l_
    return y, m, d


def mjd_to_iso_date(mjd_day: int) -> str:
    """ISO 8601 calendar date (``YYYY-MM-DD``) of one whole MJD.

    Parameters
    ----------
    mjd_day : int
        A Modified Julian Date (whole day).

    Returns
    -------
    str
        The date as ``YYYY-MM-DD``.

    Raises
    ------
    TypeError
        ``mjd_day`` is not one number.

    Examples
    --------
    >>> mjd_to_iso_date(51544)
    '2000-01-01'

    References
    ----------
    ISO 8601-1:2019, "Date and time -- Representations for information interchange"; the
    calendar arithmetic of Fliegel & Van Flandern, Comm. ACM 11, 657 (1968).
    """
    y, m, d = mjd_to_calendar(mjd_day)
    return f"{int(y):04d}-{int(m):02d}-{int(d):02d}"


def _days_in_month(y: int, m: int) -> int:
    if m == 2:
        return 29 if (y % 4 == 0 and (y % 100 != 0 or y % 400 == 0)) else 28
    return 30 if m in (4, 6, 9, 11) else 31


# ---------------------------------------------------------------------------------------
# TDB - TT

#: Fairhead & Bretagnon (1990) series for TDB-TT, truncated: rows (amplitude s, frequency
#: rad per Julian millennium, phase rad) for powers t^0, t^1, t^2 of t = Julian millennia of
#: TT from J2000. USNO Circular 179 (Kaplan 2005), eq. 2.6 (equation number from memory),
#: prints the six largest t^0 terms and the leading t^1 term of this series, rounded and
#: with T in centuries; the rest are further terms of the same series. All digits below are
#: from memory and are checked against pyerfa's full series
#: (tests/test_against_pyerfa.py::test_tdb_minus_tt: 0.6 us worst, 0.15 us rms, 1900-2100).
FAIRHEAD_BRETAGNON_TERMS = {
    0: (
        (1656.674564e-6, 6283.075849991, 6.240054195),
        (22.417471e-6, 5753.384884897, 4.296977442),
        (13.839792e-6, 12566.151699983, 6.196904410),
        (4.770086e-6, 529.690965095, 0.444401603),
        (4.676740e-6, 6069.776754553, 4.021195093),
        (2.256707e-6, 213.299095438, 5.543113262),
        (1.694205e-6, -3.523118349, 5.025132748),
        (1.554905e-6, 77713.771467920, 5.198467090),
        (1.276839e-6, 7860.419392439, 5.988822341),
        (1.193379e-6, 5223.693919802, 3.649823730),
        (1.115322e-6, 3930.209696220, 1.422745069),
        (0.794185e-6, 11506.769769794, 2.322313077),
        (0.447061e-6, 26.298319800, 3.615796498),
        (0.435206e-6, -398.149003408, 4.349338347),
        (0.600309e-6, 1577.343542448, 2.678271909),
        (0.496817e-6, 6208.294251424, 5.696701824),
        (0.486306e-6, 5884.926846583, 0.520007179),
        (0.432392e-6, 74.781598567, 2.435898309),
        (0.468597e-6, 6244.942814354, 5.866398759),
        (0.375510e-6, 5507.553238667, 4.103476804),
        (0.243085e-6, -775.522611324, 3.651837925),
        (0.173435e-6, 18849.227549974, 6.153743485),
        (0.230685e-6, 5856.477659115, 4.773852582),
        (0.203747e-6, 12036.460734888, 4.333987818),
        (0.143935e-6, -796.298006816, 5.957517795),
        (0.159080e-6, 10977.078804699, 1.890075226),
        (0.119979e-6, 38.133035638, 4.551585768),
        (0.118971e-6, 5486.777843175, 1.914547226),
        (0.116120e-6, 1059.381930189, 0.873504123),
        (0.137927e-6, 11790.629088659, 1.135934669),
        (0.098358e-6, 2544.314419883, 0.092793886),
        (0.101868e-6, -5573.142801634, 5.984503847),
        (0.080164e-6, 206.185548437, 2.095377709),
        (0.079645e-6, 4694.002954708, 2.949233637),
        (0.062617e-6, 20.775395492, 2.654394814),
        (0.075019e-6, 2942.463423292, 4.980931759),
        (0.048042e-6, 2146.165416475, 1.495846011),
        (0.048373e-6, 155.420399434, 2.251573730),
        # Two further recalled terms (frequencies 5746.271 and 5760.498 rad/millennium,
        # about 0.064 us each) are left out: as recalled they made the agreement with the
        # full series worse, so the recollection of their digits is suspect.
    ),
    1: (
        (102.156724e-6, 6283.075849991, 4.249032005),
        (1.706807e-6, 12566.151699983, 4.205904248),
        (0.269668e-6, 213.299095438, 3.400290479),
        (0.265919e-6, 529.690965095, 5.836047367),
        (0.210568e-6, -3.523118349, 6.262738348),
        (0.077996e-6, 5223.693919802, 4.670344204),
    ),
    2: (
        (4.322990e-6, 6283.075849991, 2.642893748),
    ),
}


def tdb_minus_tt(jd1, jd2=0.0) -> np.ndarray:
    """TDB - TT (s) at the given TT (or TDB) Julian date(s), geocentric; vectorised.

    The series is truncated to :data:`FAIRHEAD_BRETAGNON_TERMS`. Agreement with the full
    series: 0.15 us rms, 0.6 us worst over 1900-2100 (measured in the tests against pyerfa).
    TT or TDB may be given: the 1.7 ms difference changes the result by less than a picosecond.

    Parameters
    ----------
    jd1, jd2 : float or array_like
        The two parts of the Julian date (summed; broadcast together).

    Returns
    -------
    numpy.ndarray
        TDB - TT in seconds (amplitude about 1.66 ms).

    Raises
    ------
    ValueError
        Inputs that cannot be converted to floats.

    Examples
    --------
    >>> abs(float(tdb_minus_tt(2451545.0))) < 1.7e-3
    True

    References
    ----------
    Fairhead, L. & Bretagnon, P., "An analytical formula for the time transformation TB-TT",
    Astronomy & Astrophysics 229, 240 (1990); Kaplan, G. H., "The IAU Resolutions on
    Astronomical Reference Systems, Time Scales, and Earth Rotation Models", USNO Circular 179
    (2005), eq. 2.6; Petit & Luzum (eds.), "IERS Conventions (2010)", ch. 10.
    """
    t = ((np.asarray(jd1, dtype=float) - J2000_JD) + np.asarray(jd2, dtype=float)) / DAYS_PER_JULIAN_MILLENNIUM
    total = np.zeros_like(t)
    for power, terms in FAIRHEAD_BRETAGNON_TERMS.items():
        s = np.zeros_like(t)
        for amp, freq, phase in terms:
            s += amp * np.sin(freq * t + phase)
        total += s * t**power
    return total


# ---------------------------------------------------------------------------------------
# ISO 8601 text

_ISO = re.compile(
    r"^\s*(?P<y>\d{4})-(?P<mo>\d{2})-(?P<d>\d{2})"
    r"(?:[T ](?P<h>\d{2}):(?P<mi>\d{2})(?::(?P<s>\d{2})(?:\.(?P<f>\d{1,12}))?)?)?"
    r"\s*(?P<z>Z|UTC|TAI|TT|TDB)?\s*$", re.IGNORECASE)


def _parse_one(text: str, scale: str | None):
    """(mjd_day, seconds_of_day, scale) of one ISO 8601 string; InputError naming the value."""
    if not isinstance(text, str):
        raise InputError(f"epoch {text!r} is not text; expected ISO 8601 like 2031-03-01T00:00:00Z")
    m = _ISO.match(text)
    if not m:
        raise InputError(
            f"epoch {text!r} is not an ISO 8601 date; expected YYYY-MM-DD[Thh:mm[:ss[.fff]]]"
            "[Z| UTC| TAI| TT| TDB], e.g. 2031-03-01T00:00:00Z")
    suffix = m["z"]
    given = None if suffix is None else ("utc" if suffix.upper() == "Z" else suffix.lower())
    if given and scale and given != scale:
        raise InputError(f"epoch {text!r} says {given.upper()} but the scale asked for is {scale.upper()}")
    sc = given or scale or "utc"
    y, mo, d = int(m["y"]), int(m["mo"]), int(m["d"])
    h = int(m["h"] or 0)
    mi = int(m["mi"] or 0)
    s = int(m["s"] or 0)
    frac = float("0." + m["f"]) if m["f"] else 0.0
    if not 1 <= mo <= 12:
        raise InputError(f"epoch {text!r} has month {mo:02d}; allowed 01-12")
    if not 1 <= d <= _days_in_month(y, mo):
        raise InputError(f"epoch {text!r} has day {d:02d}; {y:04d}-{mo:02d} has {_days_in_month(y, mo)} days")
    if h > 23:
        raise InputError(f"epoch {text!r} has hour {h:02d}; allowed 00-23")
    if mi > 59:
        raise InputError(f"epoch {text!r} has minute {mi:02d}; allowed 00-59")
    mjd = int(calendar_to_mjd(y, mo, d))
    if s == 60:
        if sc != "utc" or h != 23 or mi != 59 or mjd < FIRST_UTC_MJD or _utc_day_length(mjd) < 86401:
            raise InputError(f"epoch {text!r} has second 60, allowed only at 23:59:60 UTC of a day "
                             "ending in a leap second")
    elif s > 59:
        raise InputError(f"epoch {text!r} has second {s:02d}; allowed 00-59 (60 in a leap second)")
    return mjd, h * 3600.0 + mi * 60.0 + s + frac, sc


def parse_iso(text, scale: str | None = None) -> "Epoch":
    """Parse ISO 8601 text (one string or a sequence of strings) into an :class:`Epoch`.

    Accepted forms: ``YYYY-MM-DD`` (midnight), ``YYYY-MM-DDThh:mm``, ``...:ss`` and
    ``...:ss.f`` (up to 12 fraction digits), ``T`` or a space between date and time, and an
    optional designator: ``Z`` (UTC) or a scale name ``UTC``, ``TAI``, ``TT``, ``TDB``
    (e.g. ``2031-03-01T00:00:00 TDB``). Without one the scale is ``scale`` (default UTC).
    ``23:59:60`` is accepted in UTC on days that end in a leap second.

    Parameters
    ----------
    text : str or sequence of str
        The epoch(s) as ISO 8601 text.
    scale : {"utc", "tai", "tt", "tdb"}, optional
        Scale of text without a designator (default UTC).

    Returns
    -------
    Epoch
        A scalar epoch for one string, an array epoch for a sequence.

    Raises
    ------
    InputError
        Malformed text, impossible dates or times (2031-02-30, 25:00), pre-1972 UTC, or a
        designator that contradicts ``scale``; the message names the value.

    Examples
    --------
    >>> parse_iso("2016-12-31T23:59:60Z").to_iso("utc")
    '2016-12-31T23:59:60.000Z'

    References
    ----------
    ISO 8601-1:2019, "Date and time -- Representations for information interchange";
    Petit, G. & Luzum, B. (eds.), "IERS Conventions (2010)", IERS Technical Note 36, ch. 10.
    """
    if scale is not None:
        scale = _check_scale(scale)
    scalar = isinstance(text, str)
    items = [text] if scalar else list(text)
    if not items:
        raise InputError("no epochs given")
    parsed = [_parse_one(t, scale) for t in items]
    scales = {p[2] for p in parsed}
    if len(scales) > 1:
        raise InputError(f"epochs mix time scales {sorted(s.upper() for s in scales)}; give one scale")
    day = np.array([p[0] for p in parsed], dtype=np.int64)
    sec = np.array([p[1] for p in parsed])
    if scalar:
        day, sec = day[0], sec[0]
    return Epoch._from_day_seconds(day, sec, scales.pop())


def _check_scale(scale: str) -> str:
    s = str(scale).lower()
    if s not in SCALES:
        raise InputError(f"time scale {scale!r} is not known; allowed: {', '.join(x.upper() for x in SCALES)}")
    return s


# ---------------------------------------------------------------------------------------
# Epoch


def _normalise(day, sec):
    """Carry whole days out of ``sec`` so that 0 <= sec < 86400 (for uniform scales)."""
    day = np.asarray(day, dtype=np.int64)
    sec = np.asarray(sec, dtype=float)
    carry = np.floor(sec / SECONDS_PER_DAY).astype(np.int64)
    return day + carry, sec - carry * SECONDS_PER_DAY


@dataclass(frozen=True, eq=False)
class Epoch:
    """One instant or an array of instants, stored as a two-part TT Julian date.

    ``jd1 = 2400000.5 + MJD`` (whole MJD) and ``0 <= jd2 < 1`` (fraction of the TT day).
    Build with :meth:`from_iso` / :func:`parse_iso`, :meth:`from_jd` or
    :meth:`from_calendar`; never construct directly unless ``jd1, jd2`` already follow the
    rule. Arrays of any shape are supported; ``epoch[i]`` indexes, ``len(epoch)`` counts.

    Parameters
    ----------
    jd1 : numpy.ndarray
        ``2400000.5 + MJD`` of the TT day (a whole MJD).
    jd2 : numpy.ndarray
        Fraction of the TT day, ``0 <= jd2 < 1``.

    References
    ----------
    Petit, G. & Luzum, B. (eds.), "IERS Conventions (2010)", IERS Technical Note 36 (2010),
    ch. 10 (the scales and the two-part Julian date).

    Examples
    --------
    >>> t0 = Epoch.from_iso("2031-03-01T00:00:00 TDB")
    >>> t = t0 + np.array([0.0, 3600.0])          # SI seconds on the TT scale
    >>> t.to_iso("tdb", decimals=3)
    ['2031-03-01T00:00:00.000 TDB', '2031-03-01T01:00:00.000 TDB']
    """

    jd1: np.ndarray
    jd2: np.ndarray

    # ---- construction ------------------------------------------------------------------
    @classmethod
    def from_iso(cls, text, scale: str | None = None) -> "Epoch":
        """Same as :func:`parse_iso`."""
        return parse_iso(text, scale)

    @classmethod
    def from_jd(cls, jd1, jd2=0.0, scale: str = "tt") -> "Epoch":
        """From a (two-part) Julian date in ``scale``. UTC uses the quasi-JD convention."""
        scale = _check_scale(scale)
        a = np.asarray(jd1, dtype=float)
        b = np.asarray(jd2, dtype=float)
        if not (np.all(np.isfinite(a)) and np.all(np.isfinite(b))):
            raise InputError("Julian date has a non-finite value")
        a, b = np.broadcast_arrays(a, b)
        # split each part into whole MJD and fraction, exactly where possible
        ma = a - MJD_ZERO_JD
        da = np.floor(ma)
        fa = ma - da
        db = np.floor(b)
        fb = b - db
        f = fa + fb
        df = np.floor(f)
        day = (da + db + df).astype(np.int64)
        frac = f - df
        if scale == "utc":
            sec = frac * _utc_day_length_checked(day)
        else:
            sec = frac * SECONDS_PER_DAY
        if a.ndim == 0:
            day, sec = day[()], sec[()]
        return cls._from_day_seconds(day, sec, scale)

    @classmethod
    def from_calendar(cls, year, month, day, hour=0, minute=0, second=0.0, scale: str = "utc") -> "Epoch":
        """From calendar fields (arrays broadcast). Fields are not range-checked beyond
        seconds (use :func:`parse_iso` for checked text input)."""
        scale = _check_scale(scale)
        d = calendar_to_mjd(year, month, day)
        s = (np.asarray(hour, dtype=float) * 3600.0 + np.asarray(minute, dtype=float) * 60.0
             + np.asarray(second, dtype=float))
        return cls._from_day_seconds(d, s, scale)

    @classmethod
    def _from_day_seconds(cls, day, sec, scale: str) -> "Epoch":
        """From (MJD day, seconds of day) in ``scale``."""
        day = np.asarray(day, dtype=np.int64)
        sec = np.asarray(sec, dtype=float)
        if scale == "utc":
            dat = tai_minus_utc(day, stacklevel=4)
            day, sec = _normalise(day, sec + dat + TT_MINUS_TAI_S)
        elif scale == "tai":
            day, sec = _normalise(day, sec + TT_MINUS_TAI_S)
        elif scale == "tt":
            day, sec = _normalise(day, sec)
        else:  # tdb -> tt: subtract the series evaluated at the TDB date (error < 1 ps)
            day, sec = _normalise(day, sec)
            dt = tdb_minus_tt(day + MJD_ZERO_JD, sec / SECONDS_PER_DAY)
            day, sec = _normalise(day, sec - dt)
        return cls(day.astype(float) + MJD_ZERO_JD, sec / SECONDS_PER_DAY)

    # ---- array behaviour ---------------------------------------------------------------
    @property
    def shape(self) -> tuple:
        return np.shape(self.jd1)

    @property
    def isscalar(self) -> bool:
        return np.ndim(self.jd1) == 0

    def __len__(self) -> int:
        if self.isscalar:
            raise TypeError("a single Epoch has no len()")
        return len(self.jd1)

    def __getitem__(self, index) -> "Epoch":
        return Epoch(np.asarray(self.jd1)[index], np.asarray(self.jd2)[index])

    def __iter__(self):
        for i in range(len(self)):
            yield self[i]

    def __repr__(self) -> str:
        if self.isscalar:
            return f"Epoch('{self.to_iso('tt', 6)}')"
        n = self.jd1.size
        if n == 0:
            return "Epoch([])"
        first = self.reshape(-1)[0].to_iso("tt", 3)
        last = self.reshape(-1)[-1].to_iso("tt", 3)
        return f"Epoch({n} instants, {first} .. {last})"

    def reshape(self, *shape) -> "Epoch":
        return Epoch(np.reshape(self.jd1, *shape), np.reshape(self.jd2, *shape))

    # ---- arithmetic ----------------------------------------------------------------------
    def __add__(self, seconds) -> "Epoch":
        """Add SI seconds of TT (a scalar or an array broadcast against the epochs)."""
        if isinstance(seconds, Epoch):
            return NotImplemented
        s = np.asarray(seconds, dtype=float)
        if not np.all(np.isfinite(s)):
            raise InputError("seconds added to an epoch must be finite")
        day = np.rint(self.jd1 - MJD_ZERO_JD).astype(np.int64)
        d, sec = _normalise(day, self.jd2 * SECONDS_PER_DAY + s)
        d, sec = np.broadcast_arrays(d, sec)
        return Epoch(d.astype(float) + MJD_ZERO_JD, sec / SECONDS_PER_DAY)

    __radd__ = __add__

    def __sub__(self, other):
        """``epoch - seconds`` is an Epoch; ``epoch - epoch`` is TT seconds between them."""
        if isinstance(other, Epoch):
            return ((self.jd1 - other.jd1) + (self.jd2 - other.jd2)) * SECONDS_PER_DAY
        return self + (-np.asarray(other, dtype=float))

    def __eq__(self, other):
        if not isinstance(other, Epoch):
            return NotImplemented
        return (self.jd1 == other.jd1) & (self.jd2 == other.jd2)

    __hash__ = None

    # ---- conversions ---------------------------------------------------------------------
    def two_part_jd(self, scale: str = "tt") -> tuple[np.ndarray, np.ndarray]:
        """Two-part Julian date ``(jd1, jd2)`` in ``scale``; jd1 is ``2400000.5 + MJD``.

        UTC uses the quasi-JD convention (a leap-second day is 86401 s long)."""
        scale = _check_scale(scale)
        day, sec = self._day_seconds(scale)
        length = _utc_day_length(day) if scale == "utc" else SECONDS_PER_DAY
        return day.astype(float) + MJD_ZERO_JD, sec / length

    def jd(self, scale: str = "tt") -> np.ndarray:
        """Julian date in ``scale`` as one float (resolution about 40 microseconds)."""
        a, b = self.two_part_jd(scale)
        return a + b

    def mjd(self, scale: str = "tt") -> np.ndarray:
        """Modified Julian date in ``scale`` as one float (resolution about 1 ns)."""
        a, b = self.two_part_jd(scale)
        return (a - MJD_ZERO_JD) + b

    def seconds_since_j2000(self, scale: str = "tdb") -> np.ndarray:
        """Seconds of ``scale`` (TT or TDB) since J2000.0 (JD 2451545.0 in that scale)."""
        scale = _check_scale(scale)
        if scale not in ("tt", "tdb"):
            raise InputError(f"seconds since J2000 are defined here for TT or TDB, not {scale.upper()}")
        a, b = self.two_part_jd(scale)
        return ((a - J2000_JD) + b) * SECONDS_PER_DAY

    def tdb_minus_tt(self) -> np.ndarray:
        """TDB - TT (s) at these epochs (:func:`tdb_minus_tt`)."""
        return tdb_minus_tt(self.jd1, self.jd2)

    def _day_seconds(self, scale: str):
        """(MJD day, seconds of day) in ``scale``; UTC seconds may reach 86401 in a leap second."""
        day = np.rint(np.asarray(self.jd1) - MJD_ZERO_JD).astype(np.int64)
        sec_tt = np.asarray(self.jd2) * SECONDS_PER_DAY
        if scale == "tt":
            return _normalise(day, sec_tt)
        if scale == "tdb":
            return _normalise(day, sec_tt + tdb_minus_tt(self.jd1, self.jd2))
        d_tai, s_tai = _normalise(day, sec_tt - TT_MINUS_TAI_S)
        if scale == "tai":
            return d_tai, s_tai
        # UTC: the UTC day is the TAI day or the one before (TAI-UTC < 1 day)
        dat_same = _tai_minus_utc_quiet(d_tai)
        before = s_tai < dat_same
        d_utc = np.where(before, d_tai - 1, d_tai)
        tai_minus_utc(d_utc, stacklevel=4)  # checks range and warns past the table
        dat_prev = _tai_minus_utc_quiet(d_tai - 1)
        s_utc = np.where(before, s_tai + SECONDS_PER_DAY - dat_prev, s_tai - dat_same)
        return d_utc, s_utc

    def to_iso(self, scale: str = "utc", decimals: int = 3, designator: bool = True):
        """ISO 8601 text ``YYYY-MM-DDThh:mm:ss[.fff]`` in ``scale`` (str, or list of str).

        ``decimals`` (0-9) digits of the second, rounded half to even; a leap second prints
        as ``23:59:60``. With ``designator`` the text ends in ``Z`` for UTC or `` TAI``,
        `` TT``, `` TDB``; without it (e.g. for CCSDS OEM, whose header names the scale)
        the bare date-time is returned.
        """
        scale = _check_scale(scale)
        if not isinstance(decimals, (int, np.integer)):  # text is not taken here, only integers
            raise InputError(f"decimals = {decimals!r}; allowed integers 0-{MAX_DECIMALS}")
        decimals = whole_number("decimals", decimals, 0, MAX_DECIMALS)
        day, sec = self._day_seconds(scale)
        day = np.atleast_1d(day).ravel()
        sec = np.atleast_1d(sec).ravel()
        q = 10 ** int(decimals)
        n = np.rint(sec * q).astype(np.int64)
        length = (_utc_day_length(day) if scale == "utc" else np.full(day.shape, SECONDS_PER_DAY))
        full = (length * q).astype(np.int64)
        over = n >= full
        day = np.where(over, day + 1, day)
        n = np.where(over, n - full, n)
        whole = n // q
        frac = n % q
        leap = whole >= 86400
        hh = np.where(leap, 23, whole // 3600)
        mm = np.where(leap, 59, (whole % 3600) // 60)
        ss = np.where(leap, 60 + whole - 86400, whole % 60)
        y, mo, d = mjd_to_calendar(day)
        if y.size and (y.min() < 0 or y.max() > 9999):
            raise InputError(f"year {int(y.min() if y.min() < 0 else y.max())} cannot be written as "
                             "ISO 8601 YYYY; allowed years 0000-9999")
        suffix = "" if not designator else ("Z" if scale == "utc" else " " + scale.upper())
        out = _format_fields(y, mo, d, hh, mm, ss, frac, int(decimals), suffix)
        return out[0] if self.isscalar else out

    def to_dict(self) -> dict:
        """Plain description: ISO text in UTC (if defined) and TDB, and the TT two-part JD."""
        a, b = self.two_part_jd("tt")
        out = {"iso_tdb": self.to_iso("tdb", 6), "jd_tt": [np.asarray(a).tolist(), np.asarray(b).tolist()]}
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", LeapSecondsExpiredWarning)
                out["iso_utc"] = self.to_iso("utc", 6)
        except InputError:
            out["iso_utc"] = None
        return out


def _format_fields(y, mo, d, hh, mm, ss, frac, decimals, suffix):
    """ISO 8601 text for integer field arrays, built as an array of ASCII digits (vectorised;
    ten times faster than formatting each string in Python)."""
    fields = [(y, 4, "-"), (mo, 2, "-"), (d, 2, "T"), (hh, 2, ":"), (mm, 2, ":"), (ss, 2, "")]
    if decimals:
        fields[-1] = (ss, 2, ".")
        fields.append((frac, decimals, ""))
    width = sum(w + len(sep) for _, w, sep in fields) + len(suffix)
    n = np.size(y)
    buf = np.empty((n, width), dtype=np.uint8)
    col = 0
    for value, w, sep in fields:
        v = np.asarray(value, dtype=np.int64)
        for k in range(w):
            buf[:, col + w - 1 - k] = 48 + (v // 10**k) % 10
        col += w
        if sep:
            buf[:, col] = ord(sep)
            col += 1
    for ch in suffix:
        buf[:, col] = ord(ch)
        col += 1
    return buf.view(f"S{width}").ravel().astype(str).tolist()


def _tai_minus_utc_quiet(day):
    table = leap_second_table()
    i = np.searchsorted(table.mjd, np.asarray(day, dtype=np.int64), side="right") - 1
    return table.tai_minus_utc_s[np.maximum(i, 0)]


def _utc_day_length_checked(day):
    tai_minus_utc(day, stacklevel=4)
    return _utc_day_length(day)
