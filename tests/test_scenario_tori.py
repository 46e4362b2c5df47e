"""A torus as a scenario orbit: ``[orbits.NAME] torus = "..."``, its table row, checks, export
from a torus phase, report section, and the refusals found before anything is written.

Seam (scenario -> torus command): the torus numbers a run writes (orbits.json, orbits.csv,
checks.json) are those ``librate torus --request`` gives for the same request (the command
itself is checked against Richardson 1980, the monodromy's centre eigenpair and scipy's DOP853
in tests/test_against_richardson_1980_lissajous.py and tests/test_against_scipy_tori.py).
Independent checks here: the exported states re-propagated with scipy's DOP853 (Hairer, Nørsett
& Wanner, "Solving ODEs I", 1993, §II.10) from the first state stay on the trajectory the file
holds over one stroboscopic period; the Jacobi constant along the export equals the torus's.
"""

import csv
import json
import math
import re

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from cr3bp import system
from cr3bp.cautions import CAUTION
from cr3bp.scenario import run as mission
from librate_cli.main import main

pytestmark = pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")

#: A small quasi-halo about an Earth-Moon L1 halo: hyperbolic, solved in a few seconds.
REQUEST = "quasi-halo around halo L1 north az=10000km amplitude=300km"

SCENARIO = """
[mission]
name = "Ring"
issued = "2031-01-01T00:00:00"

[system]
name = "earth-moon"
epoch = "2031-03-01T00:00:00Z"

[orbits.ring]
torus = "{request}"
torus_phase_deg = [{p0}, {p1}]

[orbits.ring.checks]
min_altitude_smaller = "1000km"
max_stability_index = 10.0
line_of_sight_to_larger = true
max_eclipse_duration = "300min"
max_eclipse_per_year = "40h"

[[exports]]
object = "ring"
format = "csv"
frame = "rotating"
span = "1periods"
step = "1h"

[plots]
interactive = false
"""


def _cli_torus(capsys, request):
    rc = main(["torus", "--system", "earth-moon", "--request", request, "--format", "json", "-q"])
    out = capsys.readouterr()
    assert rc == 0, out.err
    return json.loads(out.out)


@pytest.fixture(scope="module")
def ran(tmp_path_factory):
    d = tmp_path_factory.mktemp("ring")
    p = d / "s.toml"
    p.write_text(SCENARIO.format(request=REQUEST, p0=30.0, p1=60.0))
    out = d / "out"
    plan = mission.prepare(p)
    res = mission.run(plan, out, catalog=_memory_catalog(), reduced=True)
    return out, res


def _memory_catalog():
    from cr3bp.catalog import Catalog
    return Catalog(":memory:")


def test_scenario_torus_numbers_equal_the_torus_command(ran, capsys):
    out, res = ran
    cli = _cli_torus(capsys, REQUEST)
    d = json.loads((out / "orbits.json").read_text())["orbits"]["ring"]
    assert d["kind"] == "torus" and d["family"] == "quasi-halo"
    for key in ("stroboscopic_time", "rotation_rad", "jacobi", "invariance_error", "amplitude_km",
                "n_circle_points"):
        assert d[key] == pytest.approx(cli[key], rel=1e-12, abs=1e-15), key
    assert d["closest_approach_km"] == pytest.approx(cli["closest_approach_km"], rel=1e-12)
    for axis in "xyz":
        assert d["extent_km"][axis] == pytest.approx(cli["extent_km"][axis], rel=1e-12)
    assert d["stability"]["largest_modulus"] == pytest.approx(cli["stability"]["largest_modulus"], rel=1e-9)
    assert np.allclose(d["circle"], cli["circle"], atol=1e-13)
    # the table row: stroboscopic period, stability index, invariance error, closest approaches
    rows = [r for r in csv.reader(l for l in (out / "orbits.csv").read_text().splitlines()
                                  if not l.startswith("#"))]
    row = dict(zip(rows[0], rows[1]))
    assert row["name"] == "ring" and row["family"] == "quasi-halo"
    assert float(row["period_days"]) == pytest.approx(cli["stroboscopic_period_days"], rel=1e-12)
    assert float(row["jacobi"]) == pytest.approx(cli["jacobi"], rel=1e-13)
    assert float(row["stability_index_1"]) == pytest.approx(cli["stability"]["stability_index"], rel=1e-9)
    assert float(row["periodicity_error"]) == pytest.approx(cli["invariance_error"], rel=1e-12)
    assert float(row["closest_smaller_km"]) == pytest.approx(cli["closest_approach_km"]["moon"], rel=1e-12)
    assert float(row["az_km"]) == pytest.approx(max(abs(v) for v in cli["extent_km"]["z"]), rel=1e-12)
    assert "stroboscopic period" in (out / "orbits.csv").read_text()


def test_scenario_torus_checks(ran, capsys):
    out, _ = ran
    cli = _cli_torus(capsys, REQUEST)
    checks = {c["name"]: c for c in json.loads((out / "checks.json").read_text())["checks"]["ring"]}
    moon_r = system("earth-moon").secondary.radius_km
    assert checks["min_altitude_smaller"]["actual"] == pytest.approx(
        cli["closest_approach_km"]["moon"] - moon_r, rel=1e-12)
    si = cli["stability"]["stability_index"]
    assert checks["max_stability_index"]["actual"] == pytest.approx(si, rel=1e-9)
    assert checks["max_stability_index"]["passed"] == (si <= 10.0)
    assert checks["line_of_sight_to_larger"]["actual"] > 0        # an L1 torus sees the Earth
    assert "whole torus" in checks["min_altitude_smaller"]["description"]


def test_scenario_torus_eclipse_checks_equal_librate_shadow_torus(ran, capsys):
    """Seam (scenario check -> command): the torus's eclipse checks are the numbers ``librate
    shadow --torus REQUEST --torus-phase 30,60`` gives over the same year at the same step; the
    shadow geometry itself is checked against pyerfa in tests/test_against_pyerfa_shadow.py and
    the eclipse canon in tests/test_against_espenak_meeus_canon.py."""
    out, _ = ran
    checks = {c["name"]: c for c in json.loads((out / "checks.json").read_text())["checks"]["ring"]}
    rc = main(["shadow", "--system", "earth-moon", "--torus", REQUEST, "--torus-phase", "30,60",
               "--epoch", "2031-03-01T00:00:00Z", "--span", "365.25d", "--step", "5min", "--format", "json", "-q"])
    o = capsys.readouterr()
    assert rc == 0, o.err
    d = json.loads(o.out)
    assert d["model"]["torus_phase_deg"] == [30.0, 60.0] and "torus" in d["model"]["model"]
    longest = max((p["duration_min"] for p in d["passes"] if p["kind"] == "penumbra"), default=0.0)
    total = sum(p["duration_min"] for p in d["passes"] if p["kind"] == "penumbra")
    assert longest > 0, d["passes"]                               # a year with shadows to compare
    assert checks["max_eclipse_duration"]["actual"] == pytest.approx(longest, abs=1e-6)
    assert checks["max_eclipse_per_year"]["actual"] == pytest.approx(total, abs=1e-6)
    assert checks["max_eclipse_duration"]["passed"] == (longest <= 300.0)
    assert "on the torus from phase (30, 60) deg" in checks["max_eclipse_duration"]["description"]
    assert (out / "eclipses-ring.png").exists()


def test_scenario_torus_export_starts_at_the_phase_and_stays_on_the_torus(ran, capsys):
    from cr3bp.dynamics import jacobi
    from cr3bp.tori import Torus
    from cr3bp.tori.trajectory import state_at
    out, _ = ran
    em = system("earth-moon")
    text = (out / "ring.csv").read_text()
    assert CAUTION.splitlines()[0][:40] in text.replace("# ", "")
    assert "torus phase (deg)" in text and "30, 60" in text
    lines = [l for l in text.splitlines() if l and not l.startswith("#")]
    header = lines[0].split(",")
    assert header[2:] == ["x_km", "y_km", "z_km", "vx_kms", "vy_kms", "vz_kms"]
    assert "centre earth" in text and "ref_frame = CR3BP_ROTATING" in text
    data = np.array([[float(v) for v in l.split(",")[2:]] for l in lines[1:]])
    s = data / np.array([em.length_km] * 3 + [em.velocity_kms] * 3)
    s[:, 0] -= em.mu                      # earth-centred -> barycentric
    # the first state is the torus at (30, 60) deg, computed again from the command's torus
    cli = _cli_torus(capsys, REQUEST)
    t = Torus(system=em, circle=np.array(cli["circle"]), stroboscopic_time=cli["stroboscopic_time"],
              rotation=cli["rotation_rad"], jacobi=cli["jacobi"], jacobi_spread=0.0, invariance_error=0.0)
    w = state_at(t, math.radians(30.0), math.radians(60.0))
    assert np.allclose(s[0], w, atol=1e-9)
    # Jacobi constant along the export is the torus's
    c = np.array([jacobi(em.mu, x) for x in s])
    assert np.abs(c - cli["jacobi"]).max() < 1e-8
    # scipy's DOP853 from the first state follows the exported states for one stroboscopic period
    mu = em.mu

    def f(_, y):
        x, yy, z, vx, vy, vz = y
        r1 = ((x + mu) ** 2 + yy ** 2 + z ** 2) ** 1.5
        r2 = ((x - 1 + mu) ** 2 + yy ** 2 + z ** 2) ** 1.5
        return [vx, vy, vz, 2 * vy + x - (1 - mu) * (x + mu) / r1 - mu * (x - 1 + mu) / r2,
                -2 * vx + yy - (1 - mu) * yy / r1 - mu * yy / r2, -(1 - mu) * z / r1 - mu * z / r2]
    tt = np.arange(s.shape[0]) * 3600.0 / em.time_s
    ref = solve_ivp(f, (0, tt[-1]), s[0], method="DOP853", rtol=1e-12, atol=1e-12, t_eval=tt).y.T
    # the hyperbolic torus amplifies the first state's rounding in the file (1e-9 km) by its
    # multiplier (~2e3 over the period): one kilometre is far above that and far below its size
    assert np.abs(ref[:, :3] - s[:, :3]).max() * em.length_km < 1.0


def test_scenario_torus_report_and_figure(ran):
    out, _ = ran
    html = (out / "report.html").read_text()
    assert "Torus &#x27;ring&#x27;" in html or "Torus 'ring'" in html
    assert "stroboscopic period [d]" in html and "CR3BP" in html
    assert (out / "orbit-ring.png").exists()


def _refusal(tmp_path, capsys, text):
    p = tmp_path / "s.toml"
    p.write_text(text)
    rc = main(["run", str(p), "--check-only", "--out", str(tmp_path / "out")])
    err = capsys.readouterr().err
    assert rc == 2, err
    assert not (tmp_path / "out").exists()
    return err


@pytest.mark.parametrize("change, pattern", [
    (("torus = ", 'family = "halo"\ntorus = '), r"orbits\.ring\.family: 'family' does not go with 'torus'"),
    (("torus_phase_deg = [30.0, 60.0]", 'torus_phase_deg = [30.0, 60.0]\naz = "3000km"'),
     r"orbits\.ring\.az: 'az' does not go with 'torus'"),
    (("torus_phase_deg = [30.0, 60.0]", "torus_phase_deg = [30.0]"), r"orbits\.ring\.torus_phase_deg: .*two finite"),
    (("torus_phase_deg = [30.0, 60.0]", "phase_deg = 30.0"), r"orbits\.ring\.phase_deg: .*torus_phase_deg"),
    (("amplitude=300km", "amplitude=-300km"), r"orbits\.ring\.torus: .*amplitude"),
    (("quasi-halo around", "quasi-bagel around"), r"orbits\.ring\.torus: unknown torus family 'quasi-bagel'"),
    (("halo L1 north", "lyapunov L1"), r"orbits\.ring\.torus: a quasi-halo torus is about a halo"),
    (('max_eclipse_duration = "300min"', 'max_eclipse_duration = "-60min"'),
     r"orbits\.ring\.checks\.max_eclipse_duration: .*zero or more"),
    (("max_stability_index = 10.0", 'max_period = "20d"'), r"orbits\.ring\.checks\.max_period: a torus has two"),
])
def test_scenario_torus_refusals_before_writing(tmp_path, capsys, change, pattern):
    text = SCENARIO.format(request=REQUEST, p0=30.0, p1=60.0)
    assert change[0] in text
    err = _refusal(tmp_path, capsys, text.replace(change[0], change[1], 1))
    assert re.search(r"s\.toml:\d+: " + pattern, err), err


# (transfers between a torus and a lunar parking orbit run through the torus's manifolds:
# tests/test_tori_parking_legs.py)


def test_orbit_table_without_family_or_torus_is_refused(tmp_path, capsys):
    text = SCENARIO.format(request=REQUEST, p0=0.0, p1=0.0).replace(f'torus = "{REQUEST}"\n', 'az = "3000km"\n')
    text = text.replace("torus_phase_deg = [0.0, 0.0]\n", "")
    err = _refusal(tmp_path, capsys, text)
    assert "give 'family' (a periodic orbit) or 'torus'" in err, err


def test_torus_angle_check_reads_the_trajectory_from_the_phase():
    """The Sun-Earth-spacecraft angle of a torus: the least angle on the trajectory on the torus
    from torus_phase_deg over 365.25 d from the epoch, equal to the angle measured on the same
    trajectory sampled by cr3bp.tori.trajectory (the seam scenario check -> torus trajectory),
    and different for another phase."""
    from cr3bp.scenario import tori
    from cr3bp.scenario.checks import angle_at_earth_deg
    from cr3bp.tori import request as treq
    from cr3bp.tori.trajectory import sample
    em = system("earth-moon")
    t = treq.solve(em, REQUEST)
    epoch = "2031-03-01T00:00:00Z"
    phase = (math.radians(30.0), math.radians(60.0))
    r = tori.run_checks(t, {"min_angle_at_earth_from_sun_deg": 5.0}, None, epoch, phase, reduced=True)[0]
    assert "365.25 d" in r.description and "(30, 60)" in r.description and r.unit == "deg"
    times = np.linspace(0.0, 365.25 / em.time_days, 1000)
    want = angle_at_earth_deg(em, times, sample(t, times, phase).states, epoch, "sun").min()
    assert r.actual == pytest.approx(want, abs=1e-9)
    assert 0.0 <= r.actual < 180.0
    other = tori.run_checks(t, {"min_angle_at_earth_from_sun_deg": 5.0}, None, epoch, (0.0, 0.0), reduced=True)[0]
    assert other.actual != r.actual
