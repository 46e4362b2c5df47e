"""Frame constants and the frames' epoch handling checked against pyerfa (ERFA, the open
implementation of the IAU SOFA algorithms). The time scales and the ephemeris themselves are
checked in tests/test_against_pyerfa.py."""

import math

import numpy as np
import pytest

erfa = pytest.importorskip("erfa")

from cr3bp import frames, system  # noqa: E402

ONE_MAS_RAD = math.pi / (180 * 3600 * 1000)
AU_KM = 149597870.7
J2000_JD = 2451545.0


def test_obliquity_is_iau_2006_at_j2000():
    # erfa.obl06: IAU 2006 mean obliquity (Hilton et al. 2006)
    assert abs(frames.OBLIQUITY_J2000_RAD - erfa.obl06(J2000_JD, 0.0)) < ONE_MAS_RAD


def test_one_j2000_ecliptic_in_the_project():
    from cr3bp import ephemeris
    assert np.allclose(frames.ECL_FROM_EQ, ephemeris.ecliptic_to_equator_matrix().T, rtol=0, atol=1e-16)


def test_ecliptic_rotation_matches_erfa_ecliptic_matrix_sense():
    # the equator's +y axis lies below the ecliptic plane by the obliquity: v_ecl = (0, cos e, -sin e)
    e = erfa.obl06(J2000_JD, 0.0)
    v = frames.ECL_FROM_EQ @ np.array([0.0, 1.0, 0.0])
    assert np.allclose(v, [0.0, math.cos(e), -math.sin(e)], atol=1e-15)
    # and the north ecliptic pole is at RA 270 deg, Dec 90 - e in equatorial axes
    pole_eq = frames.ECL_FROM_EQ.T @ np.array([0.0, 0.0, 1.0])
    ra, dec = erfa.c2s(pole_eq)
    assert abs((ra % (2 * math.pi)) - 1.5 * math.pi) < 1e-12 and abs(dec - (math.pi / 2 - e)) < 1e-12


@pytest.mark.filterwarnings("ignore::cr3bp.timescales.LeapSecondsExpiredWarning")
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
    assert abs(got - want) < 2e-6          # the time-scale module agrees with erfa to ~0.6 us
