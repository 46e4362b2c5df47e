"""Capture and escape nodes of the transfer graph: reached ballistically along an orbit's
unstable manifold, checked against the conditions themselves (periapsis altitude, escape
distance) and against the Jacobi integral (no impulse may change it)."""

import numpy as np
import pytest

from cr3bp import system
from cr3bp.dynamics import jacobi
from cr3bp.transfers.graph import build_graph
from cr3bp.transfers.nodes import parse_nodes

EM = system("earth-moon")
NODES = """
[settings]
all_pairs = true

[[node]]
name = "staging"
kind = "orbit"
orbit = "halo L1 north az=12000km"

[[node]]
name = "entry"
kind = "capture"
body = "moon"
altitude = "100km"

[[node]]
name = "away"
kind = "escape"
body = "earth"
radius = "600000km"
"""
ONE_METRE_LU = 1e-3 / EM.length_km


@pytest.fixture(scope="module")
def built():
    return build_graph(EM, parse_nodes(NODES, EM), workers=1)


def _leg(built, to_name):
    return next(leg for leg in built.legs if leg.target == to_name and leg.ok)


def test_capture_leg_reaches_the_periapsis_altitude_ballistically(built):
    leg = _leg(built, "entry")
    s = np.array(leg.arrival_state)
    r = s[:3] - [1 - EM.mu, 0, 0]
    assert np.linalg.norm(r) * EM.length_km - 1737.4 == pytest.approx(100.0, abs=1e-3)   # one metre
    assert abs(np.dot(r, s[3:])) / (np.linalg.norm(r) * np.linalg.norm(s[3:])) < 1e-6     # a periapsis
    assert leg.dv_mps == 0.0 and leg.maneuvers == ()
    c0 = jacobi(EM.mu, np.array(leg.departure_state))
    assert jacobi(EM.mu, s) == pytest.approx(c0, abs=1e-9)


def test_escape_leg_reaches_the_escape_distance(built):
    leg = _leg(built, "away")
    s = np.array(leg.arrival_state)
    d = np.linalg.norm(s[:3] - [-EM.mu, 0, 0]) * EM.length_km
    assert d == pytest.approx(600000.0, abs=1e-3)
    inner = np.array(leg.patch_states)
    assert np.all(np.linalg.norm(inner[:, :3] - [-EM.mu, 0, 0], axis=1) * EM.length_km < 600000.0)
    assert leg.dv_mps == 0.0
    assert jacobi(EM.mu, s) == pytest.approx(jacobi(EM.mu, np.array(leg.departure_state)), abs=1e-9)


def test_boundaries_are_end_points(built):
    reasons = {(p["from"], p["to"]): p["reason"] for p in built.pruned}
    assert "end point" in reasons[("entry", "staging")]
    assert "end point" in reasons[("away", "entry")]
