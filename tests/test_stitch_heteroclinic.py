"""A route of one heteroclinic leg (the manifold connections of cr3bp.connections) built
through the graph and stitched: it costs zero Δv to tolerance and keeps one Jacobi constant.

Planar Lyapunov orbits about Earth-Moon L1 and L2 at C = 3.15 are joined by the unstable
manifold of the first and the stable manifold of the second cut at x = 1 - mu (the Moon's
x): the heteroclinic connection of Koon, Lo, Marsden & Ross, *Dynamical Systems, the
Three-Body Problem and Space Mission Design*, 2011, §3.5 (from memory).
"""

import numpy as np
import pytest

from cr3bp import system
from cr3bp.dynamics import jacobi
from cr3bp.graph_build import build_graph
from cr3bp.network import best_routes
from cr3bp.nodes import parse_nodes
from cr3bp.stitch import stitch_route

ONE_MM_PER_S = 1e-3

NODES = '''system = "earth-moon"
[settings]
all_pairs = false
patches = 3
[[node]]
name = "west"
kind = "orbit"
orbit = "lyapunov L1 jacobi=3.15"
[[node]]
name = "east"
kind = "orbit"
orbit = "lyapunov L2 jacobi=3.15"
[[edge]]
from = "west"
to = "east"
maneuvers = "none"
sections = ["x=1-mu"]
both_ways = false
'''


def test_one_heteroclinic_leg_stitches_to_zero_dv():
    em = system("earth-moon")
    nl = parse_nodes(NODES, em)
    r = build_graph(em, nl, workers=1)
    assert not r.pruned and len(r.legs) == 1
    leg = r.legs[0]
    assert leg["status"] == "ok" and leg["method"] == "manifold" and leg["kind"] == "heteroclinic"
    assert leg["dv_mps"] < ONE_MM_PER_S and 10.0 < leg["tof_days"] < 60.0
    west, east = (n.id for n in nl.nodes)
    route = best_routes(r.graph, west, east)[0]
    res = stitch_route(em, route)
    assert res.dv_total_mps < ONE_MM_PER_S
    assert res.continuity_lu < 1e-9
    assert res.tof_days == pytest.approx(leg["tof_days"], rel=1e-6)
    C = jacobi(em.mu, res.states)
    assert np.ptp(C) < 1e-9 and C[0] == pytest.approx(3.15, abs=1e-6)
    assert [m["node"] for m in res.maneuvers] == ["patch point"]
