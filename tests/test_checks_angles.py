"""The angles seen from the Earth (min_angle_at_earth_from_sun_deg, ..._moon_deg) against
computations written here: plane geometry in an inertial frame for Sun-Earth, pyerfa's Sun,
Earth and Moon (epv00, moon98) for the directions the library takes from its own ephemeris.

Regression (issue 13, item 1): the withdrawn check measured the angle at the larger primary, so
a Sun-Earth L1 halo of Az = 200 000 km reported 0.06 degrees and failed; seen from the Earth the
Sun-Earth-spacecraft angle of that orbit runs from about 6.8 to 26 degrees.
"""

import math

import numpy as np
import pytest
from _independent_cr3bp import propagate as reference_propagate

from cr3bp import system
from cr3bp.scenario.checks import angle_at_earth_deg, run_checks
from cr3bp.time.frames import epoch_from_text
from cr3bp.orbits.request import solve_request

erfa = pytest.importorskip("erfa")
pytestmark = [pytest.mark.filterwarnings("ignore::erfa.ErfaWarning"),
              pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")]

EPOCH = "2031-03-01T00:00:00Z"
SE = system("sun-earth")
EM = system("earth-moon")
#: The library's ephemeris differs from pyerfa by up to 30 arcsec in the Sun-Earth direction
#: and 1.3 arcsec in the Moon's (cr3bp.time.ephemeris.ACCURACY); the EME2000 axes differ from pyerfa's
#: GCRS/BCRS axes by 23 mas (frame bias). 0.02 degree = 72 arcsec covers both.
DIRECTION_TOL_DEG = 0.02
N = 400


def _states(orbit, n=N):
    """(t, states) over one period by the independent scipy DOP853 propagator."""
    t = np.linspace(0.0, orbit.period, n)
    s = np.array([reference_propagate(orbit.system.mu, orbit.state, ti) if ti > 0 else orbit.state
                  for ti in t])
    return t, s


@pytest.fixture(scope="module")
def se_halo():
    return solve_request(SE, "halo L1 north az=200000km", catalog=None)


def _angle(a, b):
    return np.degrees(np.arccos(np.clip(np.einsum("ij,ij->i", a, b)
                                        / (np.linalg.norm(a, axis=1) * np.linalg.norm(b, axis=1)), -1, 1)))


def test_sun_angle_in_sun_earth_against_inertial_plane_geometry(se_halo):
    """Independent geometry: the rotating states turned into an inertial frame (rotation by the
    angle t about z, the textbook relation of the rotating and inertial CR3BP frames; Szebehely,
    *Theory of Orbits*, 1967, sec. 1.3, from memory), the Sun and the Earth moved with it; the
    angle at the Earth from the law of cosines on the three inertial positions."""
    t, s = _states(se_halo)
    mu = SE.mu
    c, sn = np.cos(t), np.sin(t)

    def inertial(x, y, z):
        return np.column_stack([c * x - sn * y, sn * x + c * y, z])
    sc = inertial(s[:, 0], s[:, 1], s[:, 2])
    sun = inertial(np.full_like(t, -mu), 0 * t, 0 * t)
    earth = inertial(np.full_like(t, 1 - mu), 0 * t, 0 * t)
    a = np.linalg.norm(sc - earth, axis=1)
    b = np.linalg.norm(sun - earth, axis=1)
    d = np.linalg.norm(sc - sun, axis=1)
    expected = np.degrees(np.arccos((a**2 + b**2 - d**2) / (2 * a * b)))
    got = angle_at_earth_deg(SE, t, s, EPOCH, "sun")
    assert np.max(np.abs(got - expected)) < 1e-9
    # the figures of the issue (measured then with the withdrawn check's help): about 6.8 to 26 deg
    assert 6.5 < got.min() < 7.2 and 25.0 < got.max() < 27.0


def test_sun_angle_check_passes_where_the_old_one_failed(se_halo):
    res = run_checks(se_halo, {"min_angle_at_earth_from_sun_deg": 5.0}, epoch=EPOCH)
    (r,) = res
    assert r.passed and 6.5 < r.actual < 7.2 and r.unit == "deg"
    assert "Earth" in r.description


def _erfa_jd(epoch_text, t_tu, sysm):
    tdb = epoch_from_text(epoch_text) + np.asarray(t_tu) * sysm.time_s
    return 2451545.0, tdb / 86400.0


def _rotating_axes(r, v):
    x = r / np.linalg.norm(r)
    z = np.cross(r, v)
    z /= np.linalg.norm(z)
    return np.column_stack([x, np.cross(z, x), z])


def test_sun_angle_in_earth_moon_against_pyerfa():
    """Earth-Moon: the rotating axes from pyerfa's Moon (moon98: x toward the Moon, z along its
    orbital angular momentum), the Sun from pyerfa's Earth (epv00, heliocentric: Sun = -Earth)."""
    orbit = solve_request(EM, "halo L2 south resonance=9:2", catalog=None)
    t, s = _states(orbit, 60)
    d1, d2 = _erfa_jd(EPOCH, t, EM)
    expected = []
    for k in range(len(t)):
        moon = erfa.moon98(d1, d2[k])                     # GCRS, au and au/d
        pvh, _ = erfa.epv00(d1, d2[k])
        C = _rotating_axes(moon["p"], moon["v"])
        sc = C @ (s[k, :3] - np.array([-EM.mu, 0, 0]))
        expected.append(_angle(sc[None], -np.asarray(pvh["p"])[None])[0])
    got = angle_at_earth_deg(EM, t, s, EPOCH, "sun")
    assert np.max(np.abs(got - np.array(expected))) < DIRECTION_TOL_DEG


def test_moon_angle_in_sun_earth_against_pyerfa(se_halo):
    """Sun-Earth: the rotating axes from pyerfa's Earth-Moon barycentre (epv00 Earth plus moon98's
    Moon times the Moon's share of the pair's mass), the Moon's direction from moon98."""
    t, s = _states(se_halo, 80)
    d1, d2 = _erfa_jd(EPOCH, t, SE)
    ratio = 27068703.24 / 398600.435507          # GM_earth / GM_moon (DE440, from memory)
    expected = []
    for k in range(len(t)):
        moon = erfa.moon98(d1, d2[k])
        pvh, _ = erfa.epv00(d1, d2[k])
        emb_p = pvh["p"] + moon["p"] / (1.0 + ratio)
        emb_v = pvh["v"] + moon["v"] / (1.0 + ratio)
        C = _rotating_axes(emb_p, emb_v)
        sc = C @ (s[k, :3] - np.array([1 - SE.mu, 0, 0]))
        expected.append(_angle(sc[None], moon["p"][None])[0])
    got = angle_at_earth_deg(SE, t, s, EPOCH, "moon")
    assert np.max(np.abs(got - np.array(expected))) < DIRECTION_TOL_DEG
    assert got.max() - got.min() > 90.0               # the Moon goes round: the angle sweeps


def test_angles_refused_without_the_geometry():
    from cr3bp.errors import InputError
    je = system("jupiter-europa")
    with pytest.raises(InputError, match="earth-moon, sun-earth, sun-mars and sun-jupiter"):
        angle_at_earth_deg(je, np.zeros(1), np.array([[0.5, 0, 0, 0, 0, 0]]), EPOCH, "sun")
    assert math.isfinite(angle_at_earth_deg(system("sun-mars"), np.zeros(1),
                                            np.array([[1.0, 0.01, 0, 0, 0, 0]]), EPOCH, "sun")[0])


SCENARIO = """
[mission]
name = "Angles"

[system]
name = "{system}"
epoch = "2031-03-01T00:00:00Z"

[orbits.watch]
family = "halo"
point = "L1"
branch = "north"
az = "{az}"

[orbits.watch.checks]
{key} = 3.0
"""


@pytest.mark.parametrize("sysname,az,key,pattern", [
    ("sun-earth", "200000km", "min_angle_from_primaries_line_deg",
     r"s.toml:16: orbits.watch.checks.min_angle_from_primaries_line_deg: .*at the larger primary.*"
     r"min_angle_at_earth_from_sun_deg.*min_angle_at_earth_from_moon_deg"),
    ("jupiter-europa", "5000km", "min_angle_at_earth_from_sun_deg",
     r"s.toml:16: orbits.watch.checks.min_angle_at_earth_from_sun_deg: .*earth-moon, sun-earth"),
])
def test_scenario_check_refuses_before_writing(tmp_path, capsys, sysname, az, key, pattern):
    """`librate run --check-only` refuses the withdrawn key (naming the new ones) and an angle
    check in a system without the geometry; exit 2, nothing written."""
    import re

    from librate_cli.main import main
    p = tmp_path / "s.toml"
    p.write_text(SCENARIO.format(system=sysname, az=az, key=key))
    assert main(["run", str(p), "--check-only", "--out", str(tmp_path / "out")]) == 2
    assert re.search(pattern, capsys.readouterr().err)
    assert not (tmp_path / "out").exists()


def test_scenario_runs_the_new_angle_checks(tmp_path):
    """A Sun-Earth scenario through prepare and run_checks as `librate run` calls them."""
    from cr3bp.scenario import run as mission
    from cr3bp.scenario.checks import run_checks
    p = tmp_path / "s.toml"
    p.write_text(SCENARIO.format(system="sun-earth", az="200000km", key="min_angle_at_earth_from_sun_deg")
                 + "min_angle_at_earth_from_moon_deg = 0.1\n")
    plan = mission.prepare(p)
    orbit = solve_request(SE, "halo L1 north az=200000km", catalog=None)
    res = {r.name: r for r in run_checks(orbit, plan.data["orbits"]["watch"]["checks"], epoch=plan.epoch)}
    assert res["min_angle_at_earth_from_sun_deg"].passed
    assert res["min_angle_at_earth_from_sun_deg"].actual == pytest.approx(6.84, abs=0.2)
    assert 0.0 <= res["min_angle_at_earth_from_moon_deg"].actual < 5.0
