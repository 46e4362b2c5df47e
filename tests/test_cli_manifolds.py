"""librate manifold, section and connect end to end (in-process), bad input (exit 2) and
requests without a solution (exit 3). Orbits are given as converged states (from the
test-only fixtures) so these tests do not depend on the orbit library."""

import json
import subprocess
import sys

import numpy as np
import pytest

from cr3bp import system
from cr3bp.cautions import CAUTION
from cr3bp.dynamics import jacobi
from librate_cli.main import main

from _orbit_fixtures import halo_az, lyapunov

EM = system("earth-moon")
SE = system("sun-earth")


def _state_request(orbit):
    return "state=" + ",".join(repr(float(v)) for v in orbit.state) + f" period={orbit.period!r}TU"


@pytest.fixture(scope="module")
def l1():
    return lyapunov(EM, "L1", 3.15)


@pytest.fixture(scope="module")
def l2():
    return lyapunov(EM, "L2", 3.15)


def _run(argv):
    try:
        return main(argv)
    except SystemExit as e:
        return e.code


def test_manifold_json(tmp_path, l1, capsys):
    out = tmp_path / "tube.json"
    plot = tmp_path / "tube.png"
    s = ",".join(repr(float(v)) for v in l1.state)
    rc = _run(["manifold", "--system", "earth-moon", f"--state={s}", "--period", f"{l1.period!r}TU",
               "--unstable", "--branch", "interior", "--points", "16", "--until", "section:x=1-mu",
               "--plot", str(plot), "--format", "json", "--out", str(out), "-q"])
    assert rc == 0
    d = json.loads(out.read_text())
    assert d["caution"] == CAUTION
    t = d["tube"]
    assert t["n_trajectories"] == 16 and t["step_km"] == 40.0 and t["stability"] == "unstable"
    ends = np.array([r["end_state"] for r in t["trajectories"] if r["status"] == "section"])
    assert len(ends) > 5
    np.testing.assert_allclose(ends[:, 0], 1 - EM.mu, atol=1e-12)
    assert np.max(np.abs(jacobi(EM.mu, ends) - 3.15)) < 1e-10
    assert plot.stat().st_size > 10000


def test_manifold_table_shows_step_off(l1, capsys):
    s = ",".join(repr(float(v)) for v in l1.state)
    rc = _run(["manifold", "--system", "earth-moon", f"--state={s}", "--period", f"{l1.period!r}TU",
               "--stable", "--points", "8", "--until", "time:2d", "-q"])
    out = capsys.readouterr().out
    assert rc == 0 and "step-off 40.000 km" in out and "time 8" in out
    assert " ".join(out.split()).endswith(" ".join(CAUTION.split()))


@pytest.mark.parametrize("extra", [["--until", "time:-3d"], ["--until", "section:w=1"], ["--points", "1"],
                                   ["--step-off", "-5km"], ["--until", "altitude:venus:100km"]])
def test_manifold_bad_input_exit_2(tmp_path, l1, capsys, extra):
    out = tmp_path / "x.json"
    s = ",".join(repr(float(v)) for v in l1.state)
    rc = _run(["manifold", "--system", "earth-moon", f"--state={s}", "--period", f"{l1.period!r}TU",
               "--unstable", "--out", str(out), "-q"] + extra)
    assert rc == 2
    assert not out.exists()
    err = capsys.readouterr().err
    assert err.count("librate: error:") == 1 and "Traceback" not in err


def test_manifold_not_periodic_exit_2(capsys):
    rc = _run(["manifold", "--system", "earth-moon", "--state=0.8,0,0,0,0.3,0", "--period", "2TU",
               "--unstable", "-q"])
    assert rc == 2 and "does not return to itself" in capsys.readouterr().err


def test_section_map_csv(tmp_path, l1, l2):
    out = tmp_path / "map.csv"
    plot = tmp_path / "map.png"
    rc = _run(["section", "--system", "earth-moon", "--tube", _state_request(l1) + " unstable",
               "--tube", _state_request(l2) + " stable interior", "--section", "x=1-mu",
               "--points", "20", "--plot", str(plot), "--format", "csv", "--out", str(out), "-q"])
    assert rc == 0
    text = out.read_text()
    assert "CAUTION" in text and "map_y,map_vy" in text
    rows = [ln for ln in text.splitlines() if ln and not ln.startswith("#")][1:]
    assert {r.split(",")[0] for r in rows} == {"1", "2"}
    assert plot.exists()


def test_connect_l1_l2_json(tmp_path, l1, l2):
    out = tmp_path / "legs.json"
    plot = tmp_path / "legs.png"
    rc = _run(["connect", "--system", "earth-moon", "--from", _state_request(l1), "--to", _state_request(l2),
               "--section", "x=1-mu", "--points", "40", "--plot", str(plot), "--format", "json",
               "--out", str(out), "-q"])
    assert rc == 0
    d = json.loads(out.read_text())
    legs = d["legs"]
    assert legs and legs[0]["kind"] == "heteroclinic"
    for leg in legs:
        assert set(leg) >= {"dv_mps", "tof_days", "patch_state", "maneuvers", "from", "to"}
        assert leg["dv_mps"] < 1e-3 and 10 < leg["tof_days"] < 60
        assert leg["maneuvers"][0]["dv_mps"] == leg["dv_mps"]
    # ranked by dv (to 1 micrometre per second), then time of flight
    keys = [(round(g["dv_mps"], 6), g["tof_days"]) for g in legs]
    assert keys == sorted(keys)
    assert plot.exists()


def test_connect_below_the_necks_exit_3(capsys):
    rc = _run(["connect", "--system", "earth-moon", "--from", "lyapunov L1 jacobi=3.18",
               "--to", "lyapunov L2 jacobi=3.18", "-q"])
    err = capsys.readouterr().err
    assert rc == 3 and "L2 neck is closed" in err and "nearest feasible" in err and "3.172160" in err


def test_connect_parking_unreachable_exit_3(capsys, tmp_path):
    small = halo_az(SE, "L1", 8e-4)
    rc = _run(["connect", "--system", "sun-earth", "--from", "parking earth 200km", "--to", _state_request(small),
               "--points", "24", "--time", "6TU", "-q", "--map", str(tmp_path / "pmap.png")])
    err = capsys.readouterr().err
    assert rc == 3 and "nearest feasible altitude" in err
    assert (tmp_path / "pmap.png").exists()  # the map shows why


def test_connect_parking_to_halo(tmp_path):
    big = halo_az(SE, "L1", 2.4e-3)
    out = tmp_path / "leo.json"
    rc = _run(["connect", "--system", "sun-earth", "--from", "parking earth 200km", "--to", _state_request(big),
               "--points", "48", "--time", "6TU", "--candidates", "1", "--format", "json", "--out", str(out), "-q"])
    assert rc == 0
    leg = json.loads(out.read_text())["legs"][0]
    assert leg["kind"] == "arrival" and 3100 < leg["dv_mps"] < 3300 and 60 < leg["tof_days"] < 365
    assert abs(leg["details"]["periapsis"]["altitude_km"] - 200.0) < 1e-3
    assert leg["maneuvers"][0]["t"] == 0.0


def test_connect_bad_parking_subprocess():
    r = subprocess.run([sys.executable, "-m", "librate_cli.main", "connect", "--system", "earth-moon",
                        "--from", "parking earth -200km", "--to", "lyapunov L1 jacobi=3.15"],
                       capture_output=True, text=True, timeout=120)
    assert r.returncode == 2 and "Traceback" not in r.stderr
    assert "must not be negative" in r.stderr


def test_section_periapsis_map_json(tmp_path, l1):
    out = tmp_path / "p.json"
    rc = _run(["section", "--system", "earth-moon", "--tube", _state_request(l1) + " unstable interior",
               "--section", "periapsis:moon", "--points", "8", "--time", "3TU", "--format", "json",
               "--out", str(out), "-q"])
    assert rc == 0
    d = json.loads(out.read_text())
    assert d["coords"] == ["tof_days", "altitude_km"]
    cut = d["cuts"][0]
    assert cut["crossings"] > 0
    alt = np.array(cut["map"])[:, 1]
    assert np.all(alt > -1737.5)


def test_manifold_of_a_lagrange_point(capsys):
    rc = _run(["manifold", "--system", "earth-moon", "--lagrange", "L2", "--stable", "--branch", "exterior",
               "--until", "time:2TU", "--format", "json", "-q"])
    d = json.loads(capsys.readouterr().out)
    assert rc == 0 and d["tube"]["n_trajectories"] == 1 and d["tube"]["stability"] == "stable"
    assert d["tube"]["trajectories"][0]["start_state"][0] > 1 - EM.mu
    assert _run(["manifold", "--system", "earth-moon", "--lagrange", "L4", "--stable", "-q"]) == 2


def test_orbit_requests_through_the_orbit_library(capsys, l1):
    # the library's orbit against the one the former test-only single-shooting corrector gave
    # (an independent implementation): x0 = 0.8159585315319942, T = 2.8448313741665308 TU
    from cr3bp.orbits.request import solve_request
    lib = solve_request(EM, "lyapunov L1 jacobi=3.15")
    assert lib.state[0] == pytest.approx(0.8159585315319942, abs=1e-10)
    assert lib.period == pytest.approx(2.8448313741665308, rel=1e-9)
    rc = _run(["manifold", "--system", "earth-moon", "--family", "lyapunov", "--point", "L1", "--jacobi", "3.15",
               "--unstable", "--points", "8", "--until", "time:1d", "--format", "json", "-q"])
    d = json.loads(capsys.readouterr().out)
    assert rc == 0 and d["tube"]["origin"].startswith("lyapunov L1")
    assert d["tube"]["jacobi"] == pytest.approx(3.15, abs=1e-10)
