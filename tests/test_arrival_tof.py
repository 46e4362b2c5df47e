"""Time of flight to arrival (issue 13, item 5): the time a leg takes to come within a stated
distance of its target orbit, beside the step-off time of flight (which includes the months of
asymptotic approach in Sun-Earth).

Reference: scipy's ``solve_ivp`` with its DOP853 method (Hairer, Norsett & Wanner, *Solving
Ordinary Differential Equations I*, 2nd ed., 1993) on the equations of motion written out in
tests/_independent_cr3bp.py re-propagates each leg to its arrival time and samples the target
orbit; the distance to the orbit is computed here by brute force over every segment of that
sampled path (nothing shared with cr3bp.tubes.arrival.distance_to_path).
"""

import json
import re

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from _independent_cr3bp import rhs

from cr3bp import system
from cr3bp.tubes.connections import connect
from cr3bp.tubes.parking import parking_legs
from cr3bp.orbits.request import solve_request
from librate_cli.main import main

pytestmark = pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")

SE = system("sun-earth")
EM = system("earth-moon")
#: Agreement of the arrival distance with the reference, km (both propagations at 1e-12; the
#: orbit sampled at 20 000 points, chord error below 0.05 km in either system).
DISTANCE_TOL_KM = 0.5


def _reference_path(orbit, n=20000):
    sol = solve_ivp(rhs, (0.0, orbit.period), np.asarray(orbit.state, float), method="DOP853",
                    rtol=1e-12, atol=1e-12, args=(orbit.system.mu,),
                    t_eval=np.linspace(0.0, orbit.period, n + 1))
    return sol.y[:3].T


def _reference_distance_km(sysm, path, points):
    """Least distance from each point to every segment of the closed polyline ``path``, km."""
    a = path
    b = np.roll(path, -1, axis=0)
    ab = b - a
    out = []
    for p in np.atleast_2d(points):
        u = np.clip(np.einsum("ij,ij->i", p - a, ab) / np.einsum("ij,ij->i", ab, ab), 0.0, 1.0)
        out.append(np.min(np.linalg.norm(p - (a + u[:, None] * ab), axis=1)))
    return np.array(out) * sysm.length_km


def _reference_arc(sysm, leg, t_end, n=1500):
    """The leg re-propagated by the reference from its segments, sampled on [0, t_end]."""
    ts, xs = [], []
    for t0, s0, dur in leg.segments:
        if dur <= 0 or t0 >= t_end:
            continue
        hi = min(dur, t_end - t0)
        te = np.linspace(0.0, hi, n)
        sol = solve_ivp(rhs, (0.0, hi), np.asarray(s0, float), method="DOP853", rtol=1e-12, atol=1e-12,
                        args=(sysm.mu,), t_eval=te)
        ts.append(t0 + sol.t)
        xs.append(sol.y[:3].T)
    return np.concatenate(ts), np.vstack(xs)


def _check_arrival(sysm, leg, orbit, distance_km):
    """At the leg's arrival time the reference puts it ``distance_km`` from the orbit's path,
    and never that close before."""
    assert leg.arrival_distance_km == distance_km
    assert leg.tof_arrival < leg.tof and leg.tof_arrival_days < leg.tof_days
    path = _reference_path(orbit)
    t, x = _reference_arc(sysm, leg, leg.tof_arrival)
    d = _reference_distance_km(sysm, path, x[-1])[0]
    assert d == pytest.approx(distance_km, abs=DISTANCE_TOL_KM)
    before = _reference_distance_km(sysm, path, x[t < leg.tof_arrival - 1e-3][::5])
    assert before.min() > distance_km


@pytest.fixture(scope="module")
def se_halo():
    return solve_request(SE, "halo L1 north az=200000km", catalog=None)


@pytest.fixture(scope="module")
def em_staging():
    return solve_request(EM, "halo L1 north az=12000km", catalog=None)


def test_sun_earth_parking_to_halo_arrives_months_before_the_step_off(se_halo):
    """The issue's case: from a 5 000 km Earth parking orbit to an L1 halo of Az = 200 000 km the
    step-off time of flight is about 205 d, the time to within 10 000 km of the halo about 108 d."""
    legs = parking_legs(se_halo, 1, 5000.0, stability="stable", branch="interior", n_points=60)
    leg = legs[0]
    assert 190.0 < leg.tof_days < 220.0 and 90.0 < leg.tof_arrival_days < 120.0
    _check_arrival(SE, leg, se_halo, 10000.0)


def test_earth_moon_parking_to_halo(em_staging):
    legs = parking_legs(em_staging, 1, 100.0, stability="stable", branch="interior", n_points=40)
    _check_arrival(EM, legs[0], em_staging, 1000.0)
    # a departure leg ends on the parking orbit: it arrives when it ends
    dep = parking_legs(em_staging, 1, 100.0, stability="unstable", branch="interior", n_points=40)[0]
    assert dep.tof_arrival == dep.tof and dep.to_dict()["arrival_distance_km"] is None


def test_earth_moon_heteroclinic_connection():
    a = solve_request(EM, "lyapunov L1 jacobi=3.15", catalog=None)
    b = solve_request(EM, "lyapunov L2 jacobi=3.15", catalog=None)
    legs, _, _ = connect(a, b, "x=1-mu", 100, max_candidates=2)
    _check_arrival(EM, legs[0], b, 1000.0)
    d = legs[0].to_dict()
    assert set(d["tof_definitions"]) == {"tof_days", "tof_arrival_days"}


def run(capsys, *argv):
    rc = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return rc, out, err


def test_connect_cli_sun_earth(capsys):
    rc, out, _ = run(capsys, "connect", "--system", "sun-earth", "--from", "parking earth 5000km",
                     "--to", "halo L1 north az=200000km", "--points", "60", "--format", "json")
    assert rc == 0
    leg = json.loads(out)["legs"][0]
    assert leg["arrival_distance_km"] == 10000.0
    assert 90.0 < leg["tof_arrival_days"] < 120.0 < 190.0 < leg["tof_days"]
    rc, out, _ = run(capsys, "connect", "--system", "sun-earth", "--from", "parking earth 5000km",
                     "--to", "halo L1 north az=200000km", "--points", "60")
    assert rc == 0
    head = out.split("\n\n")[1].splitlines()[0].split()
    assert head[:6] == ["rank", "kind", "dv_mps", "tof_arrival_days", "tof_stepoff_days", "arrival_within_km"]
    assert re.search(r"time of flight 1\d\d\.\d+ d to within 10000 km of the orbit \(2\d\d\.\d+ d to the step-off", out)


def test_connect_cli_earth_moon_with_a_stated_distance(capsys, em_staging):
    rc, out, _ = run(capsys, "connect", "--system", "earth-moon", "--from", "parking moon 100km",
                     "--to", "halo L1 north az=12000km", "--points", "40", "--arrival-within", "5000km",
                     "--format", "json")
    assert rc == 0
    legs = json.loads(out)["legs"]
    assert legs[0]["arrival_distance_km"] == 5000.0
    assert legs[0]["tof_arrival_days"] < legs[0]["tof_days"]
    rc, _, err = run(capsys, "connect", "--system", "earth-moon", "--from", "parking moon 100km",
                     "--to", "halo L1 north az=12000km", "--arrival-within", "-5km")
    assert rc == 2 and "--arrival-within '-5km' must be a positive length" in err


NODES = """
[settings]
all_pairs = true

[[node]]
name = "low"
kind = "parking"
body = "{body}"
altitude = "{altitude}"

[[node]]
name = "halo"
kind = "orbit"
orbit = "{orbit}"
"""


@pytest.mark.parametrize("sysname,body,altitude,orbit,within", [
    ("earth-moon", "moon", "100km", "halo L1 north az=12000km", 1000.0),
    ("sun-earth", "earth-moon", "5000km", "halo L1 north az=200000km", 10000.0),
])
def test_route_cli(capsys, tmp_path, sysname, body, altitude, orbit, within):
    p = tmp_path / "nodes.toml"
    p.write_text(NODES.format(body=body, altitude=altitude, orbit=orbit))
    rc, out, _ = run(capsys, "route", "--system", sysname, "--nodes", p, "--no-catalog", "--workers", "1",
                     "--from", "low", "--to", "halo", "--no-stitch", "--format", "json")
    assert rc == 0
    r = json.loads(out)["routes"][0]
    assert r["arrival_distance_km"] == within and r["legs"][0]["arrival_distance_km"] == within
    assert r["tof_arrival_days"] == pytest.approx(r["legs"][0]["tof_arrival_days"])
    assert r["tof_arrival_days"] < r["tof_days"]
    rc, out, _ = run(capsys, "route", "--system", sysname, "--nodes", p, "--no-catalog", "--workers", "1",
                     "--from", "low", "--to", "halo", "--no-stitch")
    assert rc == 0
    assert "tof_arrival_days" in out and "tof_stepoff_days" in out
    assert f"first comes within {within:g} km of the final orbit's path" in out


SCENARIO = """
[mission]
name = "Watch"
issued = "2026-12-01T00:00:00"

[system]
name = "sun-earth"
epoch = "2031-03-01T00:00:00Z"

[orbits.watch]
family = "halo"
point = "L1"
branch = "north"
az = "200000km"

[[transfers]]
name = "climb"
from = "parking earth-moon 5000km"
to = "watch"
best = 1

[plots]
orbits = false
families = false
hill_regions = false
corridors = false
"""


def test_sun_earth_scenario_run_reports_the_arrival_time(tmp_path):
    from cr3bp.scenario import run as mission
    from cr3bp.catalog import Catalog
    p = tmp_path / "s.toml"
    p.write_text(SCENARIO)
    plan = mission.prepare(p)
    mission.run(plan, tmp_path / "out", catalog=Catalog(tmp_path / "c.sqlite"), reduced=True, workers=1)
    route = json.loads((tmp_path / "out" / "route-climb.json").read_text())
    best = route["best"]
    assert best["arrival_distance_km"] == 10000.0
    assert 90.0 < best["tof_arrival_days"] < 120.0 < 190.0 < best["tof_days"]
    html = (tmp_path / "out" / "report.html").read_text()
    assert "time of flight to arrival [d]" in html and "within 10000 km of the target orbit" in html
    assert f">{best['tof_arrival_days']:.6g}</td>" in html     # the total, as the report writes numbers
