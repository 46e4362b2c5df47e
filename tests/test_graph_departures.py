"""A graph leg from an Earth parking orbit to an Earth-Moon orbit: where no manifold reaches the
parking orbit, the graph's parking leg is a direct departure optimised in the CR3BP
(:func:`cr3bp.transfers.departure.as_leg`). The leg's patch points, re-propagated
with scipy's DOP853 on independently written equations, join one another and the orbit (the
design -> graph seam)."""

import numpy as np
import pytest

import _independent_cr3bp as ind
from cr3bp import system
from cr3bp.transfers.graph import compute_leg, plan
from cr3bp.transfers.nodes import parse_nodes

NODES = '''system = "earth-moon"
[settings]
tof = "3d"
[[node]]
name = "leo"
kind = "parking"
body = "earth"
altitude = "200km"
[[node]]
name = "relay"
kind = "orbit"
orbit = "halo L2 south resonance=9:2"
'''
ONE_KM = 1.0


@pytest.fixture(scope="module")
def leg():
    em = system("earth-moon")
    tasks, _ = plan(em, parse_nodes(NODES, em))
    (task,) = [t for t in tasks if t["from"]["name"] == "leo"]
    task["settings"]["tube_points"] = 8     # the manifold search fails quickly, as it does with more
    return em, compute_leg(task)


def test_parking_leg_to_the_nrho_is_a_direct_departure(leg):
    em, lg = leg
    assert lg["kind"] == "departure" and lg["method"] == "parking"
    assert [m["where"] for m in lg["maneuvers"]] == ["departure", "arrival"]
    assert 3100.0 <= lg["maneuvers"][0]["dv_mps"] <= 3200.0      # published range (from memory)
    assert lg["dv_mps"] == pytest.approx(sum(m["dv_mps"] for m in lg["maneuvers"]))
    r = np.linalg.norm(np.array(lg["departure_state"][:3]) - [-em.mu, 0, 0]) * em.length_km
    assert r - em.primary.radius_km == pytest.approx(200.0, abs=1e-3)


def test_patch_points_join_under_scipy_and_end_on_the_orbit(leg):
    em, lg = leg
    times = lg["patch_times"] + [lg["tof_tu"]]
    states = lg["patch_states"] + [lg["final_state"]]
    for k in range(len(times) - 1):
        end = ind.propagate(em.mu, states[k], times[k + 1] - times[k])
        assert np.linalg.norm(end[:3] - states[k + 1][:3]) * em.length_km < ONE_KM
    # the arrival state (after insertion) is a state of the orbit: it stays periodic
    from cr3bp.orbits.request import solve_request
    orbit = solve_request(em, "halo L2 south resonance=9:2")
    back = ind.propagate(em.mu, lg["arrival_state"], orbit.period)
    assert np.linalg.norm(back[:3] - lg["arrival_state"][:3]) * em.length_km < 10 * ONE_KM


# ---- the doomed manifold search is skipped (issue 15) -------------------------------------

def _tasks(text):
    em = system("earth-moon")
    tasks, _ = plan(em, parse_nodes(text, em))
    return em, {(t["from"]["name"], t["to"]["name"]): t for t in tasks}


def test_no_manifold_search_from_low_earth_orbit_and_the_same_departure(monkeypatch):
    """From a 200 km Earth parking orbit to the 9:2 NRHO the graph goes straight to the direct
    departure: the periapsis search over the manifold is not called (counted), neither for the
    departure nor for the return leg (the direct return, the departure's time-reverse), and the
    departure is the one the search's fallback gives."""
    import cr3bp.transfers.graph as graph
    _, tasks = _tasks(NODES)
    calls = []
    real = graph._periapsis_legs

    def counting(*a, **k):
        calls.append(a)
        return real(*a, **k)

    monkeypatch.setattr(graph, "_periapsis_legs", counting)
    skipped = compute_leg(tasks[("leo", "relay")])
    back = compute_leg(tasks[("relay", "leo")])
    assert calls == []
    assert skipped["status"] == "ok" and skipped["kind"] == "departure"
    # the way back is the departure's time-reverse (cr3bp.transfers.returns): the same cost
    assert back["status"] == "ok" and back["kind"] == "arrival"
    assert back["dv_mps"] == pytest.approx(skipped["dv_mps"], abs=1.0)
    # the old way (the search first, the departure as its fallback) gives the same leg
    monkeypatch.setattr(graph, "manifold_may_reach", lambda *a: True)
    searched = compute_leg(tasks[("leo", "relay")])
    assert len(calls) == 1
    assert searched["dv_mps"] == skipped["dv_mps"] and searched["tof_tu"] == skipped["tof_tu"]
    assert searched["patch_states"] == skipped["patch_states"]


def test_the_manifold_floor_holds_for_the_orbits_it_is_used_for():
    """MANIFOLD_EARTH_FLOOR_KM is a measured property: the stable manifolds (both branches) of
    an L1 halo and of the 9:2 L2 NRHO pass no first perigee below it; an orbit of another
    family, or a parking orbit about the Moon, keeps the search."""
    from cr3bp.orbits.request import solve_request
    from cr3bp.transfers.graph import MANIFOLD_EARTH_FLOOR_KM, manifold_may_reach
    from cr3bp.tubes.parking import periapsis_map
    em = system("earth-moon")
    for req in ("halo L1 north az=12000km", "halo L2 south resonance=9:2"):
        o = solve_request(em, req)
        assert not manifold_may_reach(o, "earth", 200.0)
        assert manifold_may_reach(o, "moon", 100.0)
        for branch in ("interior", "exterior"):
            alt = periapsis_map(o, 0, "stable", branch, 24).altitude_km
            assert np.all(np.isnan(alt) | (alt > MANIFOLD_EARTH_FLOOR_KM)), (req, branch)
    lyap = solve_request(em, "lyapunov L1 jacobi=3.1")
    assert manifold_may_reach(lyap, "earth", 200.0)


# ---- the parking node's inclination reaches the departure (issue 15) ----------------------

def _inclination_deg(em, state):
    """Inclination to the x-y plane of the Earth-relative inertial orbit through ``state``
    (h = r x (v + z x r), written here)."""
    r = np.asarray(state[:3], float) - [-em.mu, 0.0, 0.0]
    v = np.asarray(state[3:6], float) + np.array([-r[1], r[0], 0.0])
    h = np.cross(r, v)
    return float(np.degrees(np.arccos(h[2] / np.linalg.norm(h))))


def test_route_departure_has_the_parking_nodes_inclination(tmp_path, capsys):
    """End to end: a node list's parking node at 28.5 degrees, ``librate route`` to the 9:2 NRHO;
    the stitched route's departure (its parking-orbit state before the burn, and the coast after
    it) lies in the 28.5-degree plane."""
    import csv
    import json
    from librate_cli.main import main
    em = system("earth-moon")
    p = tmp_path / "nodes.toml"
    p.write_text(NODES.replace('altitude = "200km"', 'altitude = "200km"\ninclination = 28.5'))
    rc = main(["route", "--system", "earth-moon", "--nodes", str(p), "--no-catalog", "--workers", "1",
               "--from", "leo", "--to", "relay", "--out", str(tmp_path / "out"), "--format", "json", "-q"])
    out, err = capsys.readouterr()
    assert rc == 0, err
    body = json.loads(out)
    dep = body["stitched"]["maneuvers"][0]
    assert dep["name"] == "departure"
    text = (tmp_path / "out" / "trajectory.csv").read_text()
    row = next(csv.DictReader(line for line in text.splitlines() if not line.startswith("#")))
    after = np.array([float(row[k]) for k in ("x_lu", "y_lu", "z_lu", "vx_vu", "vy_vu", "vz_vu")])
    before = after.copy()
    before[3:] -= np.array(dep["dv_vector_mps"]) / (em.length_km / em.time_s * 1e3)
    assert _inclination_deg(em, before) == pytest.approx(28.5, abs=1e-6)
    # the stitching re-aims the burn a little out of the plane (measured: 0.16 degrees)
    assert _inclination_deg(em, after) == pytest.approx(28.5, abs=0.5)
    # the graph's leg itself: the coast after the (tangential) burn lies in the plane too
    _, tasks = _tasks(p.read_text())
    leg = compute_leg(tasks[("leo", "relay")])
    assert _inclination_deg(em, leg["departure_state"]) == pytest.approx(28.5, abs=1e-6)
    assert _inclination_deg(em, leg["patch_states"][0]) == pytest.approx(28.5, abs=1e-6)
    assert leg["details"]["departure"]["inclination_deg"] == pytest.approx(28.5, abs=1e-6)
