"""A route of one heteroclinic leg (the manifold connections of cr3bp.tubes.connections) built
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
from cr3bp.transfers.graph import build_graph
from cr3bp.transfers.search import best_routes
from cr3bp.transfers.nodes import parse_nodes
from cr3bp.transfers.stitch import stitch_route

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
    assert leg.status == "ok" and leg.solver == "manifold" and leg.kind == "heteroclinic"
    assert leg.dv_mps < ONE_MM_PER_S and 10.0 < leg.tof_days < 60.0
    west, east = (n.id for n in nl.nodes)
    route = best_routes(r.graph, west, east)[0]
    res = stitch_route(em, route)
    assert res.dv_total_mps < ONE_MM_PER_S
    assert res.continuity_lu < 1e-9
    assert res.tof_days == pytest.approx(leg.tof_days, rel=1e-6)
    C = jacobi(em.mu, res.states)
    assert np.ptp(C) < 1e-9 and C[0] == pytest.approx(3.15, abs=1e-6)
    # the declared burn, and the end's trim impulse (the end state is not held whole: see
    # cr3bp.transfers.stitch; the whole total is under 1 mm/s, so the trim is too)
    assert [m["node"] for m in res.maneuvers if not m["trim"]] == ["patch point"]
    assert [m["node"] for m in res.maneuvers if m["trim"]] == ["east"]


PARKED = '''system = "earth-moon"
[settings]
patches = 3
all_pairs = false
[[node]]
name = "llo"
kind = "parking"
body = "moon"
altitude = "100km"
[[node]]
name = "east"
kind = "orbit"
orbit = "lyapunov L2 jacobi=3.15"
[[node]]
name = "west"
kind = "orbit"
orbit = "lyapunov L1 jacobi=3.15"
[[edge]]
from = "llo"
to = "east"
[[edge]]
from = "east"
to = "west"
maneuvers = "none"
sections = ["x=1-mu"]
both_ways = false
'''


def test_parking_legs_through_periapsis_and_their_stitching():
    """Low lunar orbit (100 km) to and from the L2 Lyapunov orbit through the orbit's manifolds
    and their first periapsis at that altitude (cr3bp.tubes.parking.parking_legs): one tangential
    burn at periapsis. Stitched, the one-leg routes keep their Δv (nothing to merge) and their
    periapsis is 100 km above the Moon."""
    em = system("earth-moon")
    nl = parse_nodes(PARKED, em)
    r = build_graph(em, nl, workers=1)
    ok = {(leg.origin, leg.target): leg for leg in r.legs if leg.ok}
    assert ("llo", "east") in ok and ("east", "llo") in ok and ("east", "west") in ok
    for key in (("llo", "east"), ("east", "llo")):
        leg = ok[key]
        assert leg.solver == "parking" and len(leg.maneuvers) == 1
        assert 300.0 < leg.dv_mps < 1500.0
        assert leg.min_altitude_km == pytest.approx(100.0, abs=0.01)   # periapsis altitude to 10 m
    ids = {n.name: n.id for n in nl.nodes}
    route = best_routes(r.graph, ids["llo"], ids["east"])[0]
    res = stitch_route(em, route)
    assert res.dv_total_mps == pytest.approx(route.dv_total_mps, abs=ONE_MM_PER_S)
    assert res.continuity_lu < 1e-9 and res.min_altitude_km == pytest.approx(100.0, abs=0.05)
    C = jacobi(em.mu, res.states)
    m = res.maneuvers[0]
    assert m["node"] == "llo" and abs(m["jacobi_after"] - m["jacobi_before"]) > 1e-3
    assert np.ptp(C[res.times_tu > 0]) < 1e-9


def test_route_through_an_orbit_at_two_phases_is_stitched_with_a_coast_along_it(capsys, tmp_path):
    """llo -> east arrives on the L2 orbit at one phase, east -> west (heteroclinic) leaves it
    at another: the route command lays a coast along the orbit between them (the stay edge)
    and stitches the whole chain, Δv not above the legs' and the coast's."""
    from librate_cli.main import main
    f = tmp_path / "n.toml"
    f.write_text(PARKED)
    rc = main(["route", "--system", "earth-moon", "--nodes", str(f), "--no-catalog", "--from", "llo",
               "--to", "west", "--format", "json", "-q"])
    out, err = capsys.readouterr()
    assert rc == 0, err
    import json
    body = json.loads(out)
    assert body["routes"][0]["node_names"] == ["llo", "east", "west"]
    st = body["stitched"]
    assert body["not_stitched"] is None and st["nodes"] == ["llo", "east", "east", "west"]
    assert st["dv_total_mps"] <= st["legs_dv_total_mps"] + ONE_MM_PER_S
    assert st["continuity_lu"] < 1e-9
    assert st["tof_days"] > body["routes"][0]["tof_days"]          # the coast adds time
