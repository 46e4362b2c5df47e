"""Frame constants and the frames' epoch handling checked against pyerfa (ERFA, the open
implementation of the IAU SOFA algorithms). The time scales and the ephemeris themselves are
checked in tests/test_against_pyerfa.py."""

import math

import numpy as np
import pytest

erfa = pytest.importorskip("erfa")

from cr3bp.time import frames  # noqa: E402
from cr3bp import system  # noqa: E402

ONE_MAS_RAD = math.pi / (180 * 3600 * 1000)
AU_KM = 149597870.7
J2000_JD = 2451545.0


def test_obliquity_is_iau_2006_at_j2000():
    # erfa.obl06: IAU 2006 mean obliquity (Hilton et al. 2006)
    assert abs(frames.OBLIQUITY_J2000_RAD - erfa.obl06(J2000_JD, 0.0)) < ONE_MAS_RAD


def test_one_j2000_ecliptic_in_the_project():
    from cr3bp.time import ephemeris
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


@pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")
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


# ---------------------------------------------------------------------------------------
# Geocentric and selenocentric Sun-Earth exports (issue: ground systems expect geocentric
# states). The CR3BP places the Earth-Moon barycentre; the Earth or the Moon inside it comes
# from the ephemeris. Checked against pyerfa: erfa.epv00 (Earth about the Sun, BCRS axes)
# and erfa.moon98 (Moon about the Earth, GCRS; Meeus 1998 ch. 47 as truncated in ERFA).
# Tolerances: our ephemeris' documented bounds against these same routines (cr3bp.time.ephemeris
# ACCURACY: Sun/Earth 22 000 km, 3 m/s over 1900-2050; Moon/Earth 2.5 km) widened to cover a
# full-ephemeris Moon (moon98's own documented worst against ELP/MPP02: 31.7 km, 0.17 m/s).

def _earth_moon_fraction():
    from cr3bp.systems import body
    gm_e, gm_m = body("earth").gm_km3_s2, body("moon").gm_km3_s2
    return gm_m / (gm_e + gm_m)


def _tt_two_part(tdb_s):
    # TT taken for TDB (under 1.7 ms: under 2 m for the Moon, 0.05 m for the Earth)
    return J2000_JD, np.asarray(tdb_s) / 86400.0


SE_EPOCH = "2031-03-01T00:00:00Z"


@pytest.mark.parametrize("anchor", ["ephemeris", "circular"])
def test_sun_earth_export_centred_on_the_earth_matches_epv00(anchor):
    """The Sun (rotating x = -mu, at rest) exported about the Earth is the Sun's geocentric
    state, -1 x erfa.epv00's heliocentric Earth (ephemeris anchoring: exactly our EMB about the
    Sun minus the Earth about the EMB; circular anchoring: the idealised circle, so only the
    Earth-Moon offset is checked there, through the Earth-minus-barycentre difference)."""
    se = system("sun-earth")
    spec = frames.frame(se, SE_EPOCH, anchor=anchor, center="earth")
    assert spec.center == "earth" and spec.center_name == "earth"
    t = np.linspace(0.0, 0.5, 7)                         # TU: about a month
    sun = np.tile([-se.mu, 0, 0, 0, 0, 0], (t.size, 1))
    tdb, geo = frames.to_frame(spec, t, sun)
    t1, t2 = _tt_two_part(tdb)
    pvh, _ = erfa.epv00(t1, t2)
    want = -np.hstack([pvh["p"] * AU_KM, pvh["v"] * AU_KM / 86400.0])
    if anchor == "ephemeris":
        assert np.linalg.norm(geo[:, :3] - want[:, :3], axis=1).max() < 22000.0          # km
        assert np.linalg.norm(geo[:, 3:] - want[:, 3:], axis=1).max() < 3.0e-3          # km/s
    # the Earth about the Earth-Moon barycentre: geocentric minus barycentric export of any state
    emb = frames.with_(spec, center="earth-moon")
    rng = np.random.default_rng(7)
    st = np.column_stack([1 - se.mu + rng.uniform(-0.012, 0.012, t.size), rng.uniform(-0.01, 0.01, (t.size, 2)),
                          rng.uniform(-0.01, 0.01, (t.size, 3))])
    d = frames.to_frame(spec, t, st)[1] - frames.to_frame(emb, t, st)[1]    # = -(Earth about EMB)
    moon = erfa.moon98(t1, t2)
    f = _earth_moon_fraction()
    want_d = np.hstack([moon["p"] * AU_KM, moon["v"] * AU_KM / 86400.0]) * f
    assert np.linalg.norm(d[:, :3] - want_d[:, :3], axis=1).max() < 0.5                   # km
    assert np.linalg.norm(d[:, 3:] - want_d[:, 3:], axis=1).max() < 0.01e-3               # km/s
    assert 4000.0 < np.linalg.norm(d[:, :3], axis=1).min()      # the offset is really there


def test_sun_earth_export_centred_on_the_moon_matches_moon98():
    se = system("sun-earth")
    spec = frames.frame(se, SE_EPOCH, center="moon")
    emb = frames.with_(spec, center="earth-moon")
    t = np.linspace(0.0, 0.3, 5)
    st = np.tile([1 - se.mu + 0.01, 0.0, 0.002, 0.0, 0.01, 0.0], (t.size, 1))
    tdb, sel = frames.to_frame(spec, t, st)
    d = sel - frames.to_frame(emb, t, st)[1]                     # = -(Moon about EMB)
    moon = erfa.moon98(*_tt_two_part(tdb))
    f = _earth_moon_fraction()
    want = -np.hstack([moon["p"] * AU_KM, moon["v"] * AU_KM / 86400.0]) * (1.0 - f)
    assert np.linalg.norm(d[:, :3] - want[:, :3], axis=1).max() < 40.0                    # km
    assert np.linalg.norm(d[:, 3:] - want[:, 3:], axis=1).max() < 0.2e-3                   # km/s
    # and back: from_frame undoes the offset
    t_back, rot = frames.from_frame(spec, tdb, sel)
    assert np.allclose(rot, st, rtol=0, atol=1e-12) and np.allclose(t_back, t, atol=1e-12)
