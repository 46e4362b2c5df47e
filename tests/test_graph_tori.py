"""Tori as transfer-graph nodes: a node whose ``orbit`` is a torus request.

The node's reference state is the torus at phase (0, 0) (the first point of its invariance
circle, :mod:`cr3bp.tori.trajectory`), so a targeted leg from it to the state the torus
trajectory reaches two days later is the natural flow: its Δv is zero up to the targeting
tolerance (checked below 1 mm/s). The state two days on is computed independently with scipy's
DOP853 (Hairer, Nørsett & Wanner, "Solving ODEs I", 1993, §II.10) from the circle's first point.
A leg from a parking orbit about the Moon to a torus runs along the torus's stable manifold
through a periapsis (checked in tests/test_tori_parking_legs.py); here it is only built.
"""

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from cr3bp import system
from cr3bp.tori import request as treq
from cr3bp.transfers.graph import build_graph, resolve_orbits
from cr3bp.transfers.nodes import parse_nodes

REQUEST = "quasi-halo around halo L1 north az=10000km amplitude=300km"
EM = system("earth-moon")


def _f(_, y, mu=EM.mu):
    x, yy, z, vx, vy, vz = y
    r1 = ((x + mu) ** 2 + yy ** 2 + z ** 2) ** 1.5
    r2 = ((x - 1 + mu) ** 2 + yy ** 2 + z ** 2) ** 1.5
    return [vx, vy, vz, 2 * vy + x - (1 - mu) * (x + mu) / r1 - mu * (x - 1 + mu) / r2,
            -2 * vx + yy - (1 - mu) * yy / r1 - mu * yy / r2, -(1 - mu) * z / r1 - mu * z / r2]


@pytest.fixture(scope="module")
def nodes_text():
    t = treq.solve(EM, REQUEST)
    later = solve_ivp(_f, (0, 2.0 / EM.time_days), t.circle[0], method="DOP853", rtol=1e-12,
                      atol=1e-13).y[:, -1]
    return t, f'''system = "earth-moon"
[settings]
all_pairs = false
tof = "2d"
patches = 3
[[node]]
name = "ring"
kind = "orbit"
orbit = "{REQUEST}"
[[node]]
name = "later"
kind = "state"
state = {[float(v) for v in later]}
[[node]]
name = "llo"
kind = "parking"
body = "moon"
altitude = "100km"
[[edge]]
from = "ring"
to = "later"
both_ways = false
[[edge]]
from = "llo"
to = "ring"
both_ways = false
'''


def test_torus_node_reference_state_and_ballistic_leg(nodes_text):
    torus, text = nodes_text
    nl = parse_nodes(text, EM)
    ring = nl.by_name()["ring"]
    assert ring.is_torus
    orbits = resolve_orbits(EM, nl)
    d = orbits[ring.id]
    assert d["torus"] and np.allclose(d["state"], torus.circle[0], atol=0)
    assert d["period"] == pytest.approx(torus.stroboscopic_time, rel=1e-12)
    res = build_graph(EM, nl, workers=1)
    legs = [r for r in (l.record() for l in res.legs) if r["from_name"] == "ring"]
    assert len(legs) == 1 and legs[0]["dv_mps"] < 1e-3, legs
    assert not res.pruned
    down = [g for g in res.legs if g.origin == "llo"]
    assert len(down) == 1 and down[0].ok and down[0].kind == "arrival", down


def test_bad_torus_node_names_file_line_and_key():
    from cr3bp.scenario.schema import ScenarioError
    text = '''system = "earth-moon"
[[node]]
name = "ring"
kind = "orbit"
orbit = "quasi-halo around lyapunov L1 ax=5000km amplitude=300km"
'''
    with pytest.raises(ScenarioError) as e:
        parse_nodes(text, EM)
    assert "node[0].orbit" in str(e.value) and "about a halo orbit" in str(e.value)


def _reprop(leg):
    """The leg re-propagated by scipy's DOP853: departure -> patch (km), patch + Δv -> end (km)."""
    man = leg["maneuvers"][0]
    dep = np.array(leg["departure_state"])
    a = solve_ivp(_f, (0, man["t"]), dep, method="DOP853", rtol=1e-12, atol=1e-13).y[:, -1]
    after = np.concatenate([man["position"], a[3:] + np.array(man["dv_vector"])])
    b = solve_ivp(_f, (man["t"], leg["tof_tu"]), after, method="DOP853", rtol=1e-12, atol=1e-13).y[:, -1]
    return (np.linalg.norm(a[:3] - np.array(man["position"])) * EM.length_km,
            np.linalg.norm(b[:3] - np.array(leg["final_state"][:3])) * EM.length_km)


def test_manifold_legs_between_a_torus_and_an_orbit_reprop_with_scipy():
    """Section-hinted legs between a torus node and a periodic orbit node, both ways: the
    torus's unstable manifold meets the orbit's stable manifold on x = 1 - mu (one patch Δv,
    cr3bp.tori.connections), and the orbit's unstable manifold meets the torus's stable one.
    Checked with scipy's DOP853: each departure state reaches its patch point (1 m) and the
    patch state after the Δv its final state (1 km); the torus end lies 40 km (the step-off)
    off the torus point of the leg's torus phases (10 m). The two directions are mirror images under
    the CR3BP's symmetry (x, -y, z, -vx, vy, -vz, -t) (Szebehely, "Theory of Orbits", 1967,
    §2.4): their Δv agree within 1 % (the grids of departure points are not mirror images, so
    the refined patches differ slightly)."""
    from cr3bp.tori.trajectory import state_at
    torus = treq.solve(EM, REQUEST)
    text = f'''system = "earth-moon"
[settings]
all_pairs = false
[[node]]
name = "ring"
kind = "orbit"
orbit = "{REQUEST}"
[[node]]
name = "lyap"
kind = "orbit"
orbit = "lyapunov L2 jacobi={torus.jacobi!r}"
[[edge]]
from = "ring"
to = "lyap"
sections = ["x=1-mu"]
'''
    res = build_graph(EM, parse_nodes(text, EM), workers=1)
    legs = {r["from_name"]: r for r in (l.record() for l in res.legs)}     # the legs' plain records
    T = torus.stroboscopic_time
    for start, end_key in (("ring", "departure_state"), ("lyap", "final_state")):
        leg = legs[start]
        assert leg["status"] == "ok" and leg["how"] == "torus-manifold", leg.get("reason")
        assert leg["details"]["position_mismatch"] < 1e-9 and len(leg["maneuvers"]) == 1
        to_patch_km, to_end_km = _reprop(leg)
        assert to_patch_km < 1e-3 and to_end_km < 1.0, (start, to_patch_km, to_end_km)
        tau, phi = leg["details"]["torus_tau"], leg["details"]["torus_circle_angle"]
        base = state_at(torus, 2 * np.pi * tau / T, phi + torus.rotation * tau / T)
        at_torus = np.array(leg[end_key])
        # the arriving end is the patch propagated on to the stable manifold: 10 m
        assert np.linalg.norm(at_torus[:3] - base[:3]) * EM.length_km == pytest.approx(40.0, abs=0.01)
        man = leg["maneuvers"][0]
        assert leg["dv_mps"] == pytest.approx(np.linalg.norm(man["dv_vector"]) * EM.velocity_kms * 1000,
                                              rel=1e-9)
    assert legs["ring"]["kind"] == "torus-to-orbit" and legs["lyap"]["kind"] == "orbit-to-torus"
    assert legs["lyap"]["dv_mps"] == pytest.approx(legs["ring"]["dv_mps"], rel=0.01)
