"""Frame constants and the temporary time/ephemeris shim checked against pyerfa (ERFA, the
open implementation of the IAU SOFA algorithms).

The shim checks (time scales, Moon) go when ``cr3bp/_shim_time_ephemeris.py`` is deleted in
favour of ``cr3bp.timescales`` / ``cr3bp.ephemeris``, which carry their own checks.
"""

import math

import numpy as np
import pytest

erfa = pytest.importorskip("erfa")

from cr3bp import _shim_time_ephemeris as shim  # noqa: E402
from cr3bp import frames, system  # noqa: E402

ONE_MAS_RAD = math.pi / (180 * 3600 * 1000)
AU_KM = 149597870.7
J2000_JD = 2451545.0


def test_obliquity_is_iau_2006_at_j2000():
    # erfa.obl06: IAU 2006 mean obliquity (Hilton et al. 2006)
    assert abs(frames.OBLIQUITY_J2000_RAD - erfa.obl06(J2000_JD, 0.0)) < ONE_MAS_RAD


def test_ecliptic_rotation_matches_erfa_ecliptic_matrix_sense():
    # the equator's +y axis lies below the ecliptic plane by the obliquity: v_ecl = (0, cos e, -sin e)
    e = erfa.obl06(J2000_JD, 0.0)
    v = frames.ECL_FROM_EQ @ np.array([0.0, 1.0, 0.0])
    assert np.allclose(v, [0.0, math.cos(e), -math.sin(e)], atol=1e-15)
    # and the north ecliptic pole is at RA 270 deg, Dec 90 - e in equatorial axes
    pole_eq = frames.ECL_FROM_EQ.T @ np.array([0.0, 0.0, 1.0])
    ra, dec = erfa.c2s(pole_eq)
    assert abs((ra % (2 * math.pi)) - 1.5 * math.pi) < 1e-12 and abs(dec - (math.pi / 2 - e)) < 1e-12


@pytest.mark.parametrize("date", ["1972-07-01", "1999-06-01", "2006-01-01", "2017-01-01", "2031-03-01"])
def test_shim_tai_minus_utc_matches_erfa_dat(date):
    y, m, d = (int(x) for x in date.split("-"))
    import warnings
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")      # "dubious year" past the table's last entry
        want = erfa.dat(y, m, d, 0.0)
    label, _ = shim.parse_iso(date + "T00:00:00Z")
    assert shim._tai_minus_utc(label + 1.0) == want


@pytest.mark.parametrize("jd", [2451545.0, 2455000.5, 2462000.25, 2470000.75])
def test_shim_tdb_minus_tt_within_50_microseconds_of_erfa_dtdb(jd):
    # erfa.dtdb: Fairhead & Bretagnon 1990 series, geocentre (u = v = 0)
    want = erfa.dtdb(jd, 0.0, 0.0, 0.0, 0.0, 0.0)
    got = float(shim.tdb_minus_tt((jd - J2000_JD) * 86400.0))
    assert abs(got - want) < 50e-6


@pytest.mark.parametrize("jd", [2451545.0, 2459000.3, 2462000.5, 2466000.9])
def test_shim_moon_within_300_km_of_erfa_moon98(jd):
    # erfa.moon98: Meeus's truncated lunar theory (Astronomical Algorithms, 1998), GCRS
    p, v = erfa.moon98(jd, 0.0)
    p = np.array(p) * AU_KM
    v = np.array(v) * AU_KM / 86400.0
    s = shim.relative_state("earth", "moon", (jd - J2000_JD) * 86400.0)[0]
    assert np.linalg.norm(s[:3] - p) < 300.0          # km; the shim series is low precision
    assert np.linalg.norm(s[3:] - v) < 2e-3            # km/s


def test_utc_epoch_to_tdb_matches_erfa():
    """2031-03-01T00:00:00 UTC -> TDB with erfa's chain (utctai, taitt, dtdb)."""
    import warnings
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        u1, u2 = erfa.dtf2d("UTC", 2031, 3, 1, 0, 0, 0.0)
        a1, a2 = erfa.utctai(u1, u2)
    t1, t2 = erfa.taitt(a1, a2)
    dt = erfa.dtdb(t1, t2, 0.0, 0.0, 0.0, 0.0)
    want = ((t1 - J2000_JD) + t2) * 86400.0 + dt
    got = frames.epoch_from_text("2031-03-01T00:00:00Z")
    assert abs(got - want) < 50e-6
