"""Shadow fractions and station elevations against pyerfa (ERFA, the open implementation of
the IAU SOFA routines; a test-only dependency).

- Positions: ``erfa.epv00`` (Earth about the Sun, Bretagnon & Francou VSOP87 fit) and
  ``erfa.moon98`` (Moon about the Earth, Meeus 1998 ch. 47 series) give the Sun and the Moon
  about the Earth, independently of cr3bp.time.ephemeris.
- Visible fraction: an independent 3-D ray cast (rays from the spacecraft to a grid of points
  on the Sun's disc, each tested against the occulting sphere), not the closed-form
  circle-overlap area of Montenbruck & Gill (2000) sec. 3.4.2 that cr3bp.operations implements.
- Earth rotation: ``erfa.era00`` (IERS Conventions 2010 eq. 5.15) and the full IAU 2006/2000A
  celestial-to-terrestrial matrix ``erfa.c2t06a`` (polar motion zero, UT1 = UTC), with the
  station from ``erfa.gd2gc`` (WGS 84).
"""

import math

import numpy as np
import pytest

erfa = pytest.importorskip("erfa")

from cr3bp.time import frames  # noqa: E402
from cr3bp.operations import eclipses, phasing, visibility  # noqa: E402

AU_KM = 149597870.7          # IAU 2012 Resolution B2
RADII = eclipses.radii_km()


def _erfa_sun_moon(tdb_s):
    ep = frames._epoch(np.atleast_1d(tdb_s))
    d1, d2 = ep.two_part_jd("tdb")
    t1, t2 = ep.two_part_jd("tt")
    pvh, _pvb = erfa.epv00(d1, d2)
    sun = -np.asarray(pvh["p"]) * AU_KM
    moon = np.asarray(erfa.moon98(t1, t2)["p"]) * AU_KM
    return sun, moon


def _ray_cast_fraction(r, r_sun, r_body, radius_body, radius_sun, n=500):
    """Share of a uniform grid on the Sun's disc (seen from r) whose ray misses the body."""
    d = r_sun - r
    dist = np.linalg.norm(d)
    u = d / dist
    e1 = np.cross(u, [0.0, 0.0, 1.0])
    e1 /= np.linalg.norm(e1)
    e2 = np.cross(u, e1)
    g = (np.arange(n) + 0.5) / n * 2.0 - 1.0
    x, y = np.meshgrid(g, g)
    keep = x * x + y * y <= 1.0
    pts = r_sun + radius_sun * (x[keep][:, None] * e1 + y[keep][:, None] * e2)
    ray = pts - r
    length = np.linalg.norm(ray, axis=1)
    ray /= length[:, None]
    oc = r_body - r
    tca = ray @ oc                                  # along-ray distance of closest approach
    miss2 = oc @ oc - tca * tca
    blocked = (tca > 0) & (tca < length) & (miss2 < radius_body ** 2)
    return 1.0 - blocked.mean()


def _spacecraft_in_shadow(sun, body, radius_body, across_km, behind_km):
    """A point behind ``body`` (anti-Sun side), offset across the shadow axis."""
    u = (body - sun) / np.linalg.norm(body - sun)
    side = np.cross(u, [0.0, 0.0, 1.0])
    side /= np.linalg.norm(side)
    return body + behind_km * u + across_km * side


# (occulting body, km behind it, km across the axis): umbra, penumbra edges, antumbra, clear
CASES = [("earth", 60000.0, 0.0), ("earth", 60000.0, 6500.0), ("earth", 60000.0, 7100.0),
         ("earth", 380000.0, 3000.0), ("earth", 380000.0, 6500.0), ("earth", 2.0e6, 0.0),
         ("moon", 2000.0, 1700.0), ("moon", 3000.0, 1900.0), ("moon", 450000.0, 0.0),
         ("moon", 100000.0, 2300.0), ("earth", 60000.0, 20000.0)]


@pytest.mark.parametrize("body, behind, across", CASES)
def test_visible_fraction_against_ray_cast_on_pyerfa_positions(body, behind, across):
    t = frames.epoch_from_text("2031-06-15T12:00:00Z")
    sun, moon = _erfa_sun_moon(t)
    sun, moon = sun[0], moon[0]
    centre = np.zeros(3) if body == "earth" else moon
    r = _spacecraft_in_shadow(sun, centre, RADII[body], across, behind)
    ours = eclipses.visible_fraction(r, sun, centre, RADII[body], RADII["sun"])[0]
    ref = _ray_cast_fraction(r, sun, centre, RADII[body], RADII["sun"])
    assert abs(ours - ref) < 2e-3, (ours, ref)


def test_cases_cover_umbra_penumbra_antumbra_and_clear():
    # the cases above must exercise every branch, or the comparison proves little
    t = frames.epoch_from_text("2031-06-15T12:00:00Z")
    sun, moon = (x[0] for x in _erfa_sun_moon(t))
    kinds = set()
    for body, behind, across in CASES:
        centre = np.zeros(3) if body == "earth" else moon
        r = _spacecraft_in_shadow(sun, centre, RADII[body], across, behind)
        a, b, c = eclipses.disc_angles(r, sun, centre, RADII[body], RADII["sun"])
        kinds.add("umbra" if c <= b - a else "antumbra" if c <= a - b else "penumbra" if c < a + b else "clear")
    assert kinds == {"umbra", "antumbra", "penumbra", "clear"}


def test_project_ephemeris_shadow_against_pyerfa_positions():
    """The Sun and the Moon the eclipse search uses (cr3bp.time.ephemeris) against pyerfa's: the
    fractions agree to 0.03 at penumbral points (the analytic Sun is ~1e-4 rad off, about 1% of
    a penumbra's angular width)."""
    t0 = frames.epoch_from_text("2031-03-01T00:00:00Z")
    ts = t0 + np.array([0.0, 37.3, 101.9, 190.4, 270.0]) * 86400.0
    sun_e, moon_e = _erfa_sun_moon(ts)
    sun_p, moon_p = phasing._bodies(ts)
    worst = 0.0
    for k in range(ts.size):
        for body, behind, across in (("earth", 380000.0, 6000.0), ("moon", 60000.0, 1800.0)):
            centre_e = np.zeros(3) if body == "earth" else moon_e[k]
            r = _spacecraft_in_shadow(sun_e[k], centre_e, RADII[body], across, behind)
            ref = _ray_cast_fraction(r, sun_e[k], centre_e, RADII[body], RADII["sun"], n=300)
            assert 0.02 < ref < 0.98               # a penumbral point: the test is sensitive
            centre_p = np.zeros(3) if body == "earth" else moon_p[k]
            ours = eclipses.visible_fraction(r, sun_p[k], centre_p, RADII[body], RADII["sun"])[0]
            worst = max(worst, abs(ours - ref))
    assert worst < 0.03, worst


def test_earth_rotation_angle_against_era00():
    ep = frames._epoch(frames.epoch_from_text("2031-03-01T00:00:00Z") + np.linspace(0, 3e8, 57))
    u1, u2 = ep.two_part_jd("utc")
    ours = visibility.earth_rotation_angle(u1, u2)
    ref = erfa.era00(u1, u2)
    diff = np.angle(np.exp(1j * (ours - ref)))
    assert np.max(np.abs(diff)) < 1e-11            # radians: the same formula, to rounding


STATIONS = [visibility.Station("a", 52.0, 10.0, 10.0), visibility.Station("b", -33.0, 150.0, 10.0, 0.7),
            visibility.Station("c", 36.0, -118.0, 5.0), visibility.Station("d", 0.0, 0.0, 0.0)]


@pytest.mark.parametrize("station", STATIONS, ids=lambda s: s.name)
def test_station_elevation_against_pyerfa_c2t06a(station):
    """Our elevation (GMST + IAU 1976 precession, no nutation) against the full IAU 2006/2000A
    chain of pyerfa: within 0.01 deg (nutation is up to ~17 arcsec)."""
    t = frames.epoch_from_text("2031-03-01T00:00:00Z") + np.arange(0, 40) * 9131.0
    rng = np.random.default_rng(7)
    r = rng.normal(size=(t.size, 3))
    r *= (rng.uniform(3.0e4, 4.5e5, t.size) / np.linalg.norm(r, axis=1))[:, None]
    ours, ours_range = visibility.look_angles(t, r, station)
    ep = frames._epoch(t)
    u1, u2 = ep.two_part_jd("utc")
    t1, t2 = ep.two_part_jd("tt")
    m = erfa.c2t06a(t1, t2, u1, u2, 0.0, 0.0)
    rt = np.einsum("nij,nj->ni", m, r)
    st = erfa.gd2gc(1, math.radians(station.longitude_deg), math.radians(station.latitude_deg),
                    station.altitude_km * 1000.0) / 1000.0
    lat, lon = math.radians(station.latitude_deg), math.radians(station.longitude_deg)
    up = np.array([math.cos(lat) * math.cos(lon), math.cos(lat) * math.sin(lon), math.sin(lat)])
    d = rt - st
    ref = np.degrees(np.arcsin(d @ up / np.linalg.norm(d, axis=1)))
    assert np.max(np.abs(ours - ref)) < 0.01
    assert np.max(np.abs(ours_range - np.linalg.norm(d, axis=1))) < 1.0   # km
