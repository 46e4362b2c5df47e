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
