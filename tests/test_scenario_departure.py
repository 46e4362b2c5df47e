"""A scenario transfer from a low Earth parking orbit to the 9:2 L2 southern NRHO
(examples/leo-to-nrho.toml) run end to end, against ``librate connect --path direct`` for the
same ends (the scenario -> design seam) and against scipy's DOP853 on independently written
equations (tests/_independent_cr3bp.py) re-propagating the exported trajectory (the design ->
export seam).

Sources: scipy.integrate.solve_ivp, DOP853 (Hairer, Nørsett & Wanner, "Solving Ordinary
Differential Equations I", 2nd ed., 1993, §II.10); the equations of motion of the CR3BP in the
rotating frame (Szebehely, "Theory of Orbits", 1967, ch. 1, from memory), written out in
tests/_independent_cr3bp.py.
"""

import csv
import io
import json
from datetime import datetime
from pathlib import Path

import numpy as np
import pytest

import _independent_cr3bp as ind
from _orbit_cache import em
from librate_cli.main import main

pytestmark = pytest.mark.slow

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "leo-to-nrho.toml"
NAME = "leo-to-science"
#: The scenario's numbers and librate connect's come from the same optimised departure; the
#: scenario's route is then re-solved by multiple shooting, so they agree to the stitching's
#: convergence, well inside these bounds (m/s, days: 1e-5 d is about 1 s).
DV_TOL_MPS = 0.01
TOF_TOL_DAYS = 1e-5
#: The exported trajectory re-propagated must reach the orbit within this (km).
REACH_TOL_KM = 1.0


def _rows(path):
    text = "".join(line for line in path.read_text(encoding="utf-8").splitlines(True) if not line.startswith("#"))
    return list(csv.DictReader(io.StringIO(text)))


@pytest.fixture(scope="module")
def runs(tmp_path_factory):
    out = tmp_path_factory.mktemp("leo-nrho")
    assert main(["run", str(EXAMPLE), f"--out={out}/run", "--workers=1", "--quiet"]) == 0
    argv = ["connect", "--system=earth-moon", "--from=parking earth 200km", "--to=halo L2 south resonance=9:2",
            "--path=direct", "--format=json", f"--out={out}/connect.json", "--quiet"]
    assert main(argv) == 0
    return out / "run", json.loads((out / "connect.json").read_text())["legs"][0]


def test_maneuver_table_names_departure_and_insertion_and_the_model(runs):
    run, _ = runs
    route = json.loads((run / f"route-{NAME}.json").read_text())
    assert "CAUTION" in route["caution"]
    assert [m["name"] for m in route["maneuvers"]] == ["departure", "insertion"]
    assert [m["node"] for m in route["maneuvers"]] == ["parking earth 200km", "science"]
    path = run / f"route-{NAME}-maneuvers.csv"
    text = path.read_text(encoding="utf-8")
    rows = _rows(path)
    assert [r["maneuver"] for r in rows] == ["departure", "insertion"]
    # every Δv column names its model in the file's header
    for col in rows[0]:
        if col.startswith("dv_") and col.endswith(("_mps", "]")) and not col.startswith(("dv_x", "dv_y", "dv_z")):
            assert f"# {col}: " in text, col
    assert "CR3BP" in text.split("# dv_design_mps: ", 1)[1].splitlines()[0]
    exported = _rows(run / f"{NAME}.maneuvers.csv")
    assert [r["label"] for r in exported] == ["departure at parking earth 200km", "insertion at science"]


def test_scenario_equals_connect_direct(runs):
    run, leg = runs
    route = json.loads((run / f"route-{NAME}.json").read_text())
    dep, ins = route["maneuvers"]
    cdep, cins = leg["maneuvers"]
    assert (cdep["name"], cins["name"]) == ("departure", "insertion")
    assert dep["dv_mps"] == pytest.approx(cdep["dv_mps"], abs=DV_TOL_MPS)
    assert ins["dv_mps"] == pytest.approx(cins["dv_mps"], abs=DV_TOL_MPS)
    assert route["stitched"]["tof_days"] == pytest.approx(leg["tof_days"], abs=TOF_TOL_DAYS)
    assert ins["t_days"] == pytest.approx(leg["tof_days"], abs=TOF_TOL_DAYS)
    assert route["stitched"]["dv_total_mps"] == pytest.approx(leg["dv_mps"], abs=2 * DV_TOL_MPS)


def test_exported_trajectory_reaches_the_orbit_scipy(runs):
    """From the exported first sample (Earth-centred rotating axes, fixed units, as its header
    says) scipy's DOP853 carries the state to the last sample's epoch; there the exported
    insertion Δv puts it on the target orbit: it stays on it for a whole period."""
    from cr3bp.orbits.request import solve_request
    run, _ = runs
    s = em()
    path = run / f"{NAME}.csv"
    head = path.read_text(encoding="utf-8")
    assert "CR3BP rotating axes" in head and "centre earth" in head and "fixed length unit" in head
    rows = _rows(path)
    vu = s.length_km / s.time_s

    def state(r):
        x = np.array([float(r[k]) for k in ("x_km", "y_km", "z_km")]) / s.length_km + [-s.mu, 0.0, 0.0]
        v = np.array([float(r[k]) for k in ("vx_kms", "vy_kms", "vz_kms")]) / vu
        return np.concatenate([x, v])

    def epoch(r):
        return datetime.fromisoformat(r[[k for k in r if k.startswith("epoch")][0]])

    t = (epoch(rows[-1]) - epoch(rows[0])).total_seconds() / s.time_s
    end = ind.propagate(s.mu, state(rows[0]), t)
    assert np.linalg.norm(end[:3] - state(rows[-1])[:3]) * s.length_km < REACH_TOL_KM
    ins = _rows(run / f"{NAME}.maneuvers.csv")[-1]
    after = end.copy()
    after[3:] += np.array([float(ins[k]) for k in ("dvx_kms", "dvy_kms", "dvz_kms")]) / vu
    orbit = solve_request(s, "halo L2 south resonance=9:2")
    # on the orbit: a whole period later it is back where it was inserted
    back = ind.propagate(s.mu, after, float(orbit.period))
    assert np.linalg.norm(back[:3] - after[:3]) * s.length_km < REACH_TOL_KM
    # and it is the orbit asked for (same Jacobi constant)
    assert _jacobi(s.mu, after) == pytest.approx(float(orbit.jacobi), abs=1e-8)


def _jacobi(mu, y):
    """Jacobi constant C = x^2 + y^2 + 2(1-mu)/r1 + 2 mu/r2 - v^2 (Szebehely 1967, ch. 1, from
    memory), written here, not taken from cr3bp."""
    r1 = np.linalg.norm(y[:3] - [-mu, 0.0, 0.0])
    r2 = np.linalg.norm(y[:3] - [1.0 - mu, 0.0, 0.0])
    return y[0] ** 2 + y[1] ** 2 + 2 * (1 - mu) / r1 + 2 * mu / r2 - float(np.dot(y[3:], y[3:]))


def test_route_eclipse_section_equals_shadow_of_the_exported_file(runs, capsys):
    """Seam (scenario route -> report eclipse section; scenario export -> librate shadow
    --trajectory): the route's eclipse section (route-NAME.json and the report) holds the
    passes and Earth angles that ``librate shadow`` finds along the exported file of the
    same route at the scenario's epoch."""
    run, _ = runs
    route = json.loads((run / f"route-{NAME}.json").read_text())
    sec = route["eclipses"]
    assert sec["epoch_utc"].startswith("2032-06-01T00:00:00")
    assert "Eclipses and Earth angles along the route" in (run / "report.html").read_text(encoding="utf-8")
    assert main(["shadow", f"--trajectory={run / f'{NAME}.csv'}", "--format=json", "--quiet"]) == 0
    got = json.loads(capsys.readouterr().out)
    assert [(p["body"], p["kind"]) for p in got["passes"]] == [(p["body"], p["kind"]) for p in sec["passes"]]
    # the angles' extremes: the exported file is sampled every hour, and near the parking
    # orbit an hour's Hermite interpolation moves the extreme by up to ~0.1 deg (measured 0.06)
    for key in ("sun_earth_spacecraft_deg", "moon_earth_spacecraft_deg"):
        for end in ("min", "max"):
            assert got["angles"][key][end] == pytest.approx(sec["angles"][key][end], abs=0.2)
    assert got["angles"]["range_to_earth_km"]["max"] == pytest.approx(sec["angles"]["range_to_earth_km"]["max"],
                                                                       rel=1e-5)


# ---- the demo mission (examples/farlight.toml) leaves the same parking orbit for the same orbit

DEMO = Path(__file__).resolve().parents[1] / "examples" / "farlight.toml"
#: The departure's other numbers: the same optimisation through both doors, from the orbit
#: solved (or read from the catalogue) by each, so they agree to well inside the optimiser's
#: tolerance (measured: inclination 1.2e-6 deg apart; km²/s², km/s, degrees).
C3_TOL = 1e-4
SPEED_TOL_KMS = 1e-6
INCLINATION_TOL_DEG = 1e-4


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    out = tmp_path_factory.mktemp("farlight") / "run"
    assert main(["run", str(DEMO), f"--out={out}", "--workers=1", "--quiet",
                 f"--catalog={out.parent / 'c.sqlite'}"]) == 0
    return out


def test_demo_departure_equals_connect_direct(runs, demo):
    """Seam (scenario -> design -> report): the demo's transfer 'leo-to-relay' (path = "direct",
    parking earth 200km to the 9:2 L2 southern NRHO) gives librate connect --path direct's
    departure and insertion Δv, time of flight, C3, Earth-relative speed and inclination, in its
    route JSON and in its report, each labelled with its model there."""
    from cr3bp.scenario.page import fmt
    _, leg = runs
    route = json.loads((demo / "route-leo-to-relay.json").read_text())
    dep, ins = route["maneuvers"]
    cdep, cins = leg["maneuvers"]
    assert (dep["name"], ins["name"]) == ("departure", "insertion")
    assert dep["dv_mps"] == pytest.approx(cdep["dv_mps"], abs=DV_TOL_MPS)
    assert ins["dv_mps"] == pytest.approx(cins["dv_mps"], abs=DV_TOL_MPS)
    assert route["stitched"]["tof_days"] == pytest.approx(leg["tof_days"], abs=TOF_TOL_DAYS)
    d = route["departure"]
    assert d["path"] == leg["path"] == "direct"
    assert d["departure_dv_mps"] == pytest.approx(leg["departure_dv_mps"], abs=DV_TOL_MPS)
    assert d["c3_km2_s2"] == pytest.approx(leg["c3_km2_s2"], abs=C3_TOL)
    assert d["departure_speed_kms"] == pytest.approx(leg["departure_speed_kms"], abs=SPEED_TOL_KMS)
    assert d["inclination_deg"] == pytest.approx(leg["inclination_deg"], abs=INCLINATION_TOL_DEG)
    html = (demo / "report.html").read_text(encoding="utf-8")
    for label, value in (("departure burn Δv [m/s] (CR3BP)", d["departure_dv_mps"]),
                         ("C3 [km²/s²] (v² − 2μ/r about the Earth after the burn, from the CR3BP state)", d["c3_km2_s2"]),
                         ("Earth-relative speed after the burn [km/s] (CR3BP, inertial axes)", d["departure_speed_kms"]),
                         ("inclination of the parking orbit [deg]", d["inclination_deg"]),
                         ("insertion burn Δv [m/s] (CR3BP)", d["maneuvers"][-1]["dv_mps"])):
        at = html.index(label)
        assert fmt(value) in html[at:at + 400], (label, fmt(value))
