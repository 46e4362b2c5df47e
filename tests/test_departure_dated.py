"""Dated departures: the parking orbit's inclination to the Earth's equator, and a launch site's
latitude as a bound on it (``librate connect --path direct --epoch ... --launch-latitude ...``,
``cr3bp.api.departure(epoch=..., launch_latitude=...)``).

References:

* jplephem (Brandon Rhodes' reader of JPL's SPK files; test-only dependency) reading the same
  DE421 kernel: the Moon's geocentric position and velocity, hence the Moon's orbit plane and
  the rotating axes, on the ICRF/J2000 equatorial axes, computed here independently of
  :mod:`cr3bp.time.frames`.
* The Moon's orbit plane is inclined 18.3 to 28.6 degrees to the Earth's equator over the
  18.6-year nodal cycle (common practice; the osculating plane wanders a few tenths of a
  degree beyond, hence the looser bounds below).
* A launch site reaches no inclination below its latitude without a plane change (common
  practice).
* Inclination from the angular momentum: Vallado, *Fundamentals of Astrodynamics and
  Applications*, 4th ed., 2013, §2.5.
"""

import json
import math

import numpy as np
import pytest

spk = pytest.importorskip("jplephem.spk")

from cr3bp import api  # noqa: E402
from cr3bp.errors import InputError  # noqa: E402
from cr3bp.systems import system  # noqa: E402
from cr3bp.time import ephemeris_tables as tables  # noqa: E402
from cr3bp.time.frames import epoch_from_text  # noqa: E402
from cr3bp.time.scales import Epoch  # noqa: E402
from cr3bp.transfers.departure_common import equator_pole  # noqa: E402
from cli.main import main  # noqa: E402

NRHO = "halo L2 south resonance=9:2"
DATE = "2031-03-01T00:00:00Z"
SECONDS_PER_DAY = 86400.0

pytestmark = pytest.mark.filterwarnings("ignore::Warning")   # dates past the leap-second table's end


def _moon_axes(tdb_s):
    """The rotating axes (columns x, y, z on the J2000 equatorial axes) from jplephem's Moon
    about the Earth at ``tdb_s``: x to the Moon, z along its orbital angular momentum."""
    k = spk.SPK.open(tables.kernel_path())
    try:
        e = Epoch.from_jd(np.array([2451545.0]), np.array([tdb_s / SECONDS_PER_DAY]), "tdb")
        jd1, jd2 = e.two_part_jd("tdb")
        pm, vm = k[3, 301].compute_and_differentiate(jd1, jd2)
        pe, ve = k[3, 399].compute_and_differentiate(jd1, jd2)
    finally:
        k.close()
    r = (pm - pe)[:, 0]
    v = (vm - ve)[:, 0] / SECONDS_PER_DAY
    x = r / np.linalg.norm(r)
    z = np.cross(r, v)
    z /= np.linalg.norm(z)
    return np.stack([x, np.cross(z, x), z], axis=-1)


@pytest.mark.parametrize("date", ["2024-06-01T00:00:00Z", "2031-03-01T00:00:00Z", "2031-03-15T12:00:00Z",
                                  "2034-11-20T06:00:00Z"])
def test_equator_pole_against_jplephem(date):
    em = system("earth-moon")
    t = epoch_from_text(date)
    c = _moon_axes(t)
    want = c.T @ np.array([0.0, 0.0, 1.0])          # the equator pole on the rotating axes
    got = equator_pole(em, t)
    assert np.max(np.abs(got - want)) < 1e-9
    assert 18.0 < math.degrees(math.acos(got[2])) < 29.0


@pytest.fixture(scope="module")
def designs(tmp_path_factory):
    out = tmp_path_factory.mktemp("dated")
    free = api.departure(NRHO, epoch=DATE)
    bound = api.departure(NRHO, epoch=DATE, launch_latitude="28.5deg")
    low = api.departure(NRHO, epoch=DATE, launch_latitude=5.0)
    held = api.departure(NRHO, epoch=DATE, equator_inclination="51.6deg")
    assert main(["connect", "--system=earth-moon", "--from=parking earth 200km", f"--to={NRHO}", "--path=direct",
                 f"--epoch={DATE}", "--launch-latitude=28.5deg", "--format=json", f"--out={out}/d.json", "-q"]) == 0
    return free, bound, low, held, json.loads((out / "d.json").read_text())["legs"][0]


def _inclination_to_equator(dep):
    """The parking orbit's inclination to the J2000 equator, from the departure state and
    jplephem's axes at the departure date (independent of the library's frames)."""
    em = dep.system
    s = dep.departure_state
    rel = s[:3] - np.array([-em.mu, 0.0, 0.0])
    vin = s[3:] + np.cross([0.0, 0.0, 1.0], rel)          # inertial velocity on the rotating axes
    h = _moon_axes(epoch_from_text(DATE)) @ np.cross(rel, vin)
    return math.degrees(math.acos(h[2] / np.linalg.norm(h)))


def test_free_design_reports_its_inclination_to_the_equator(designs):
    free = designs[0]
    d = free.to_dict()
    assert d["inclination_equator_deg"] == pytest.approx(_inclination_to_equator(free), abs=1e-6)
    assert d["departure_epoch"] == "2031-03-01T00:00:00Z"
    # the date only places the equator: the CR3BP design is the undated one
    undated = api.departure(NRHO)
    assert free.dv_mps == pytest.approx(undated.dv_mps, rel=1e-12)


def test_launch_latitude_bound(designs):
    free, bound, low, _, _ = designs
    i_free = _inclination_to_equator(free)
    assert i_free < 28.5                       # the bound is active on this date (else the test proves nothing)
    assert _inclination_to_equator(bound) == pytest.approx(28.5, abs=1e-5)
    assert "launch-latitude" in bound.to_dict()["bounds_hit"]
    assert bound.dv_mps >= free.dv_mps - 0.01          # a bound never makes it cheaper
    assert bound.dv_mps - free.dv_mps < 50.0           # a few degrees of plane at perigee (measured 3.9 m/s)
    # below the free design's inclination the bound is inactive: the free design, unchanged
    assert i_free > 5.0
    assert low.dv_mps == pytest.approx(free.dv_mps, rel=1e-12)
    assert "launch-latitude" not in low.to_dict()["bounds_hit"]


def test_equator_inclination_held(designs):
    held = designs[3]
    assert _inclination_to_equator(held) == pytest.approx(51.6, abs=1e-5)
    assert held.to_dict()["inclination_equator_deg"] == pytest.approx(51.6, abs=1e-6)


def test_cli_equals_api(designs):
    bound, leg = designs[1], designs[4]
    assert leg["dv_mps"] == pytest.approx(bound.dv_mps, rel=1e-9)
    assert leg["inclination_equator_deg"] == pytest.approx(28.5, abs=1e-5)
    assert "launch-latitude" in leg["bounds_hit"]


@pytest.mark.parametrize("kw, words", [
    (dict(launch_latitude=28.5), "needs the departure epoch"),
    (dict(epoch=DATE, launch_latitude=95.0), "-90deg to 90deg"),
    (dict(epoch=DATE, launch_latitude=28.5, inclination=5.0), "give at most one"),
    (dict(epoch="2231-01-01T00:00:00Z"), "outside the validity"),
])
def test_api_refusals(kw, words):
    with pytest.raises(InputError, match=words):
        api.departure(NRHO, **kw)


@pytest.mark.parametrize("argv, words", [
    (["--path=direct", "--launch-latitude=28deg"], "needs --epoch"),
    (["--path=direct", f"--epoch={DATE}", "--equator-inclination=200deg"], "0deg to 180deg"),
    (["--path=low-energy", "--launch-latitude=28deg"], "does not apply with --path low-energy"),
    (["--launch-latitude=28deg"], "does not apply without --path"),
])
def test_cli_refusals(argv, words, capsys, tmp_path):
    rc = main(["connect", "--system=earth-moon", "--from=parking earth 200km", f"--to={NRHO}", *argv,
               f"--out={tmp_path}/x.json", "--format=json"])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2 and len(err) == 1 and words in err[0]
    assert not (tmp_path / "x.json").exists()


SCENARIO = f"""
[mission]
name = "Site-bound relay"
issued = "2031-01-01T00:00:00"

[system]
name = "earth-moon"
epoch = "{DATE}"

[orbits.relay]
family = "halo"
point = "L2"
branch = "south"
resonance = "9:2"

[[transfers]]
name = "up"
from = "parking earth 200km"
to = "relay"
path = "direct"
launch_latitude = 28.5
best = 1

[plots]
interactive = false
"""


def test_scenario_launch_latitude_equals_the_api(designs, tmp_path):
    """Seam: a scenario transfer's launch_latitude (departure dated at the system epoch) gives the
    API's bounded departure number for number, and keys the leg apart from the undated one."""
    from cr3bp.catalog import Catalog
    from cr3bp.scenario import run as mission
    bound = designs[1]
    p = tmp_path / "s.toml"
    p.write_text(SCENARIO)
    mission.run(mission.prepare(p), tmp_path / "out", catalog=Catalog(":memory:"), reduced=True)
    dep = json.loads((tmp_path / "out" / "route-up.json").read_text())["departure"]
    assert dep["dv_mps"] == pytest.approx(bound.dv_mps, rel=1e-9)
    assert dep["inclination_equator_deg"] == pytest.approx(28.5, abs=1e-5)
    assert "launch-latitude" in dep["bounds_hit"]
    report = (tmp_path / "out" / "report.html").read_text()
    assert "mean equator of J2000" in report and "launch-site latitude" in report
