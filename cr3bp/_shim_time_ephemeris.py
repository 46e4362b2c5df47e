"""TEMPORARY SHIM -- delete once ``cr3bp.timescales`` and ``cr3bp.ephemeris`` are on main.

The frames and export modules need epochs in named time systems and the Moon's (and Sun's)
geocentric state before the engineer writing those modules has landed them. This file is the
smallest stand-in that lets ``cr3bp.frames`` and ``cr3bp.export`` run end to end:

* time systems UTC, TAI, TT, TDB as *label seconds* since 2000-01-01T12:00:00 of each scale
  (seconds of 86400-s days on that scale's calendar; a UTC label ignores the leap second
  itself, so an epoch inside 23:59:60 cannot be written -- the real module handles that);
* a low-precision Moon and Sun (a few hundred km / ~0.01 deg), enough for the *shape* of the
  instantaneous-ephemeris frame, not for flight products.

Only ``cr3bp/frames.py`` and ``cr3bp/export.py`` import it, through a handful of adapter
functions at the top of ``cr3bp/frames.py``; switching to the real modules is a change there.
"""

from __future__ import annotations

import math
import re
from datetime import datetime

import numpy as np

from .errors import InputError

SCALES = ("UTC", "TAI", "TT", "TDB")
TT_MINUS_TAI_S = 32.184  # IAU 1991 Resolution A4 (common practice)
_J2000_LABEL = np.datetime64("2000-01-01T12:00:00", "us")

# TAI - UTC after each leap second, from 1972-01-01 (IERS Bulletin C, from memory).
# (first UTC day with the new value, TAI - UTC in s)
_LEAPS = [
    ("1972-01-01", 10), ("1972-07-01", 11), ("1973-01-01", 12), ("1974-01-01", 13),
    ("1975-01-01", 14), ("1976-01-01", 15), ("1977-01-01", 16), ("1978-01-01", 17),
    ("1979-01-01", 18), ("1980-01-01", 19), ("1981-07-01", 20), ("1982-07-01", 21),
    ("1983-07-01", 22), ("1985-07-01", 23), ("1988-01-01", 24), ("1990-01-01", 25),
    ("1991-01-01", 26), ("1992-07-01", 27), ("1993-07-01", 28), ("1994-07-01", 29),
    ("1996-01-01", 30), ("1997-07-01", 31), ("1999-01-01", 32), ("2006-01-01", 33),
    ("2009-01-01", 34), ("2012-07-01", 35), ("2015-07-01", 36), ("2017-01-01", 37),
]
_LEAP_AT = np.array([(np.datetime64(d + "T00:00:00", "us") - _J2000_LABEL) / np.timedelta64(1, "s")
                     for d, _ in _LEAPS])
_LEAP_VAL = np.array([float(v) for _, v in _LEAPS])

#: Validity of the shim's Moon and Sun series (TDB label seconds): 1950-01-01 to 2050-12-31.
EPHEMERIS_VALID_S = (
    (np.datetime64("1950-01-01T00:00:00", "us") - _J2000_LABEL) / np.timedelta64(1, "s"),
    (np.datetime64("2050-12-31T00:00:00", "us") - _J2000_LABEL) / np.timedelta64(1, "s"),
)
EPHEMERIS_VALID_TEXT = "1950-01-01 to 2050-12-31 (temporary low-precision series)"


# ---- time scales ---------------------------------------------------------------------

def tdb_minus_tt(t_s):
    """TDB - TT in seconds, leading periodic term (about 30 us accuracy).

    Explanatory Supplement to the Astronomical Almanac (1992), eq. 2.222-1 (from memory):
    TDB - TT = 0.001657 sin g + 0.000014 sin 2g, g = 357.53 + 0.9856003 d degrees.
    """
    d = np.asarray(t_s, dtype=float) / 86400.0
    g = np.radians(357.53 + 0.9856003 * d)
    return 0.001657 * np.sin(g) + 0.000014 * np.sin(2.0 * g)


def _tai_minus_utc(utc_label_s):
    u = np.asarray(utc_label_s, dtype=float)
    if np.any(u < _LEAP_AT[0]):
        raise InputError("UTC before 1972-01-01 is not supported (no leap-second table before it)")
    return _LEAP_VAL[np.searchsorted(_LEAP_AT, u, side="right") - 1]


def to_label(tdb_s, scale: str):
    """TDB seconds since J2000 -> label seconds since 2000-01-01T12:00:00 of ``scale``."""
    tdb_s = np.asarray(tdb_s, dtype=float)
    if scale == "TDB":
        return tdb_s
    tt = tdb_s - tdb_minus_tt(tdb_s)
    if scale == "TT":
        return tt
    tai = tt - TT_MINUS_TAI_S
    if scale == "TAI":
        return tai
    if scale == "UTC":
        utc = tai - _tai_minus_utc(tai - 37.0)
        return tai - _tai_minus_utc(utc)
    raise InputError(f"unknown time system '{scale}'; allowed: {', '.join(SCALES)}")


def from_label(label_s, scale: str):
    """Label seconds of ``scale`` -> TDB seconds since J2000 (inverse of :func:`to_label`)."""
    x = np.asarray(label_s, dtype=float)
    if scale == "TDB":
        return x
    if scale == "UTC":
        x = x + _tai_minus_utc(x)
        scale = "TAI"
    if scale == "TAI":
        x = x + TT_MINUS_TAI_S
        scale = "TT"
    if scale == "TT":
        tdb = x + tdb_minus_tt(x)
        return x + tdb_minus_tt(tdb)
    raise InputError(f"unknown time system '{scale}'; allowed: {', '.join(SCALES)}")


_ISO = re.compile(
    r"^\s*(\d{4})-(\d{2})-(\d{2})(?:[T ](\d{2}):(\d{2})(?::(\d{2})(\.\d+)?)?)?\s*"
    r"(Z|UTC|TAI|TT|TDB)?\s*$", re.IGNORECASE)


def parse_iso(text: str):
    """``"2031-03-01T00:00:00Z"`` -> (label seconds, scale or None). 'Z' means UTC."""
    m = _ISO.match(text or "")
    if not m:
        raise InputError(f"epoch '{text}' is not an ISO 8601 date-time; expected e.g. "
                         "2031-03-01T00:00:00Z or '2031-03-01T00:00:00 TDB'")
    y, mo, d, hh, mm, ss, frac, scale = m.groups()
    try:
        dt = datetime(int(y), int(mo), int(d), int(hh or 0), int(mm or 0), int(ss or 0))
    except ValueError as e:
        raise InputError(f"epoch '{text}' is not a valid date-time ({e})") from None
    label = (np.datetime64(dt, "us") - _J2000_LABEL) / np.timedelta64(1, "s") + float(frac or 0.0)
    scale = scale.upper() if scale else None
    if scale == "Z":
        scale = "UTC"
    return float(label), scale


def parse_iso_many(texts):
    """Many ISO date-times (no zone suffix) -> label seconds, vectorised."""
    try:
        arr = np.array([t.strip().rstrip("Zz") for t in texts], dtype="datetime64[us]")
    except ValueError as e:
        raise InputError(f"an epoch in the file is not an ISO 8601 date-time ({e})") from None
    return (arr - _J2000_LABEL) / np.timedelta64(1, "us") * 1e-6


def format_iso(label_s, digits: int = 6):
    """Label seconds -> ISO strings ``YYYY-MM-DDThh:mm:ss.ffffff`` (vectorised)."""
    us = np.round(np.asarray(label_s, dtype=float) * 1e6).astype(np.int64)
    s = np.datetime_as_string(_J2000_LABEL + us.astype("timedelta64[us]"), unit="us")
    if digits < 6:
        cut = 20 + digits if digits > 0 else 19
        s = np.array([x[:cut] for x in s]) if s.ndim else s[:cut]
    return s


# ---- low-precision Moon and Sun ----------------------------------------------------------

_EPS = math.radians(23.43929111)  # obliquity at J2000 used by the series below
_ARCSEC = math.pi / (180.0 * 3600.0)


def _ecl_to_eq(x, y, z):
    c, s = math.cos(_EPS), math.sin(_EPS)
    return np.stack([x, c * y - s * z, s * y + c * z], axis=-1)


_CENTURY_S = 86400.0 * 36525.0
_MOON_ARGS = {  # degrees and degrees per Julian century of TT
    "L0": (218.31617, 481267.88088 - 1.3972), "l": (134.96292, 477198.86753),
    "lp": (357.52543, 35999.04944), "F": (93.27283, 483202.01873), "D": (297.85027, 445267.11135),
}
_SUN_ARGS = {"M": (357.5256, 35999.049)}


def _arguments(table, t_s, h=0.0):
    """Fundamental arguments (rad) at ``t_s``, each reduced modulo 360 deg in extended
    precision before it becomes a double; with ``h`` they carry the imaginary part ``h * rate``
    of the complex step.

    The angles reach thousands of radians: in double precision the rounding of ``rate * t``
    would make positions at nearby epochs jitter by ~0.1 mm, which the finite-difference
    acceleration in ``cr3bp.frames`` would amplify.
    """
    T = np.asarray(t_s, dtype=np.longdouble) / np.longdouble(_CENTURY_S)
    out = {}
    for k, (c0, c1) in table.items():
        deg = np.fmod(np.longdouble(c0) + np.longdouble(c1) * T, np.longdouble(360.0)).astype(float)
        rad = deg * (math.pi / 180.0)
        out[k] = rad + 1j * (h * c1 * math.pi / 180.0 / _CENTURY_S) if h else rad
    return out


def _moon_position(a):
    """Geocentric Moon, EME2000 axes, km. Montenbruck & Gill, *Satellite Orbits* (2000),
    sec. 3.3.2, eqs. 3.47-3.49 (from memory)."""
    L0, l, lp, F, D = a["L0"], a["l"], a["lp"], a["F"], a["D"]
    sin = np.sin
    lam = L0 + _ARCSEC * (
        22640 * sin(l) + 769 * sin(2 * l) - 4586 * sin(l - 2 * D) + 2370 * sin(2 * D)
        - 668 * sin(lp) - 412 * sin(2 * F) - 212 * sin(2 * l - 2 * D) - 206 * sin(l + lp - 2 * D)
        + 192 * sin(l + 2 * D) - 165 * sin(lp - 2 * D) + 148 * sin(l - lp) - 125 * sin(D)
        - 110 * sin(l + lp) - 55 * sin(2 * F - 2 * D))
    beta = _ARCSEC * (
        18520 * sin(F + lam - L0 + _ARCSEC * (412 * sin(2 * F) + 541 * sin(lp)))
        - 526 * sin(F - 2 * D) + 44 * sin(l + F - 2 * D) - 31 * sin(-l + F - 2 * D)
        - 25 * sin(-2 * l + F) - 23 * sin(lp + F - 2 * D) + 21 * sin(-l + F)
        + 11 * sin(-lp + F - 2 * D))
    cos = np.cos
    dist = (385000.0 - 20905 * cos(l) - 3699 * cos(2 * D - l) - 2956 * cos(2 * D)
            - 570 * cos(2 * l) + 246 * cos(2 * l - 2 * D) - 205 * cos(lp - 2 * D)
            - 171 * cos(l + 2 * D) - 152 * cos(l + lp - 2 * D))
    cb = cos(beta)
    return _ecl_to_eq(dist * cb * cos(lam), dist * cb * sin(lam), dist * sin(beta))


def _sun_position(a):
    """Geocentric Sun, EME2000 axes, km. Montenbruck & Gill (2000), sec. 3.3.2, eqs. 3.43-3.46
    (from memory)."""
    M = a["M"]
    lam = math.radians(282.9400) + M + _ARCSEC * (6892 * np.sin(M) + 72 * np.sin(2 * M))
    dist = (149.619 - 2.499 * np.cos(M) - 0.021 * np.cos(2 * M)) * 1e6
    return _ecl_to_eq(dist * np.cos(lam), dist * np.sin(lam), np.zeros_like(dist))


def _with_velocity(fpos, table, t_s, h=1e-3):
    """Position and its exact derivative by the complex step, f(t + i h) = f + i h f' + O(h^2):
    the real part is the position (to 1e-20 relative), Im / h the velocity (Squire & Trapp,
    SIAM Review 40, 1998; no subtraction, so no rounding noise)."""
    t = np.atleast_1d(np.asarray(t_s, dtype=float))
    f = fpos(_arguments(table, t, h))
    return np.concatenate([f.real, f.imag / h], axis=-1)


def relative_state(primary: str, secondary: str, tdb_s):
    """State of ``secondary`` relative to ``primary`` (km, km/s, EME2000 axes), shape (N, 6).

    Only the Earth-Moon and Sun-(Earth+Moon) pairs are covered by this shim.
    """
    t = np.atleast_1d(np.asarray(tdb_s, dtype=float))
    lo, hi = EPHEMERIS_VALID_S
    if np.any(t < lo) or np.any(t > hi):
        raise InputError(f"epoch outside the ephemeris validity {EPHEMERIS_VALID_TEXT}")
    pair = (primary, secondary)
    if pair == ("earth", "moon"):
        return _with_velocity(_moon_position, _MOON_ARGS, t)
    if pair in (("sun", "earth-moon"), ("sun", "earth")):
        return -_with_velocity(_sun_position, _SUN_ARGS, t)
    return None
