"""librate connect --optimise: the JSON of an optimised orbit-to-orbit transfer, its figure, and
the JSON's numbers re-propagated independently (scipy's DOP853 on equations written out in
tests/_independent_cr3bp.py) from the departure orbit to the arrival orbit: the design -> output
seam. Case: L1 northern halo (Az 12 000 km) -> 9:2 L2 southern NRHO from the phase sweep, against
the graph's two-impulse leg of 599-609 m/s (the project's issue)."""

import json

import numpy as np
import pytest

import _independent_cr3bp as ind
from _orbit_cache import em
from librate_cli.main import main

KEYS = {"maneuvers", "dv_mps", "tof_days", "start_dv_mps", "optimised", "solution", "active_bounds", "start",
        "iterations", "primer", "phase_from", "phase_to", "model"}
#: Closure of the JSON's numbers re-propagated by scipy, km (the JSON rounds nothing; 10 m).
CLOSURE_KM = 0.01
FROM, TO = "halo L1 north az=12000km", "halo L2 south resonance=9:2"


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    out = tmp_path_factory.mktemp("opt")
    argv = ["connect", "--system=earth-moon", f"--from={FROM}", f"--to={TO}", "--optimise", "--start=sweep",
            "--format=json", f"--out={out}/t.json", f"--plot={out}/t.png", "--quiet"]
    assert main(argv) == 0
    return json.loads((out / "t.json").read_text()), out


def test_json_fields_caution_and_model(run):
    doc, _ = run
    assert "CAUTION" in json.dumps(doc)
    assert doc["model"] == "cr3bp"
    (leg,) = doc["legs"]
    assert KEYS <= set(leg)
    assert leg["model"] == "cr3bp"
    assert leg["solution"] in ("optimised", "patch", "first guess")
    assert leg["optimised"] == (leg["solution"] == "optimised")
    assert leg["dv_mps"] == pytest.approx(sum(m["dv_mps"] for m in leg["maneuvers"]))
    assert leg["dv_mps"] <= leg["start_dv_mps"]
    assert leg["dv_mps"] < 599.0                       # below the graph's two-impulse leg
    assert leg["maneuvers"][0]["name"] == "departure" and leg["maneuvers"][-1]["name"] == "insertion"
    assert leg["maneuvers"][-1]["t_days"] == pytest.approx(leg["tof_days"])
    for m in leg["maneuvers"]:
        assert {"name", "t_days", "dv_mps", "position_km", "dv_vector_mps"} <= set(m)


def test_json_numbers_fly_from_orbit_to_orbit_scipy(run):
    from cr3bp.orbits.request import solve_request
    doc, _ = run
    (leg,) = doc["legs"]
    s = em()
    oa, ob = solve_request(s, FROM), solve_request(s, TO)
    state = ind.propagate(s.mu, oa.state, leg["phase_from"] * oa.period)
    assert np.linalg.norm(state[:3] * s.length_km - leg["maneuvers"][0]["position_km"]) < CLOSURE_KM
    t = 0.0
    for m, nxt in zip(leg["maneuvers"][:-1], leg["maneuvers"][1:]):
        state = state.copy()
        state[3:] += np.array(m["dv_vector_mps"]) / (s.velocity_kms * 1e3)
        dt = (nxt["t_days"] - m["t_days"]) / s.days(1.0)
        if dt > 0:
            state = ind.propagate(s.mu, state, dt)
        t += dt
        assert np.linalg.norm(state[:3] * s.length_km - nxt["position_km"]) < CLOSURE_KM
    on_orbit = ind.propagate(s.mu, ob.state, leg["phase_to"] * ob.period)
    assert np.linalg.norm(on_orbit[:3] * s.length_km - leg["maneuvers"][-1]["position_km"]) < CLOSURE_KM
    ins = leg["maneuvers"][-1]
    assert s.mps(np.linalg.norm(on_orbit[3:] - state[3:])) == pytest.approx(ins["dv_mps"], abs=0.01)


def test_figure_written(run):
    _, out = run
    png = out / "t.png"
    assert png.exists() and png.stat().st_size > 20_000


def test_table_says_cr3bp_and_caution(capsys):
    argv = ["connect", "--system=earth-moon", f"--from={FROM}", f"--to={TO}", "--optimise", "--start=sweep",
            "--impulses=2", "--max-tof=10d", "--quiet"]
    assert main(argv) == 0
    text = capsys.readouterr().out
    assert "CR3BP total dv" in text and "CR3BP time of flight" in text
    assert "primer vector" in text and "active bounds" in text
    assert "CAUTION" in text.upper()


ROUTE_NODES = '''system = "earth-moon"
[settings]
tof = "6d"
patches = 4
[[node]]
name = "staging"
kind = "orbit"
orbit = "halo L1 north az=12000km"
[[node]]
name = "relay"
kind = "orbit"
orbit = "halo L2 south resonance=9:2"
'''


def test_route_optimise_reports_each_orbit_leg_beside_the_route(tmp_path, capsys):
    """librate route --optimise: the graph's two-impulse leg staging -> relay (the seam graph ->
    optimiser) is optimised from that leg and never costs more than it."""
    nodes = tmp_path / "nodes.toml"
    nodes.write_text(ROUTE_NODES)
    argv = ["route", "--system=earth-moon", f"--nodes={nodes}", "--from=staging", "--to=relay", "--optimise",
            "--no-stitch", "--no-catalog", "--workers=1", "--format=json", "--quiet"]
    assert main(argv) == 0
    doc = json.loads(capsys.readouterr().out)
    graph_dv = doc["routes"][0]["dv_total_mps"]
    (opt,) = doc["optimised_legs"]
    assert opt["leg"] == 1 and opt["start"]["solution"] == "first guess"
    assert opt["start_dv_mps"] == pytest.approx(graph_dv, rel=1e-9)
    assert opt["dv_mps"] <= graph_dv
    assert opt["phase_from"] is not None
