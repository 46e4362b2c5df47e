"""Building the transfer graph: node lists, ids, energy pruning, the catalogue as cache, and
the process pool and dask paths giving the same legs byte for byte."""

import json

import numpy as np
import pytest

from cr3bp.transfers import graph as graph_build
from cr3bp.catalog import Catalog
from cr3bp.dynamics import jacobi
from cr3bp.errors import InputError
from cr3bp.transfers.graph import build_graph, leg_json, plan
from cr3bp.transfers.nodes import OrbitNode, ParkingNode, find_node, node_state, parse_nodes
from cr3bp.scenario.schema import ScenarioError

from graph_fixtures import arc_states, node_list_text, perturbed_states

GOOD = '''system = "earth-moon"
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
orbit = "halo L2 south period=6.5626d"
[[node]]
name = "gate"
kind = "state"
state = [0.8, 0.0, 0.0, 0.0, 0.3, 0.0]
[[edge]]
from = "gate"
to = "relay"
maneuvers = "none"
'''


@pytest.fixture(scope="module")
def em():
    return arc_states(2)[0]


def test_node_list_reads_kinds_and_ids_are_stable(em):
    nl = parse_nodes(GOOD, em, "nodes.toml")
    leo, relay, gate = nl.nodes
    assert isinstance(leo, ParkingNode) and leo.altitude_km == 200.0 and leo.body == "earth"
    assert isinstance(relay, OrbitNode) and (relay.family, relay.point, relay.branch) == ("halo", "L2", "south")
    assert relay.selector == "period=6.5626d"
    assert nl.tof_days == pytest.approx(3.0)
    again = parse_nodes(GOOD.replace('"relay"', '"other"').replace("south period", "south  period"), em)
    assert again.nodes[1].id == relay.id                 # the id does not depend on the name or spacing
    assert json.loads(json.dumps(relay.to_dict()))["id"] == relay.id


def test_find_node_by_name_orbit_text_and_parking_text(em):
    nodes = parse_nodes(GOOD, em).nodes
    assert find_node(nodes, "gate").name == "gate"
    assert find_node(nodes, "Halo L2 South period = 6.5626d").name == "relay"
    assert find_node(nodes, "parking earth 200km").name == "leo"
    assert find_node(nodes, "parking earth 0.2Mm").name == "leo"
    with pytest.raises(InputError, match="no node matches"):
        find_node(nodes, "parking moon 100km")


def test_parking_state_is_a_circular_orbit_in_the_rotating_frame(em):
    leo = parse_nodes(GOOD, em).nodes[0]
    s = node_state(em, leo)
    r = np.linalg.norm(s[:3] - [-em.mu, 0, 0]) * em.length_km
    assert r == pytest.approx(6371.0084 + 200.0, abs=1.0)      # mean radius + altitude (data/systems.toml)
    v_in = s[3:] + np.cross([0, 0, 1.0], s[:3])
    assert np.linalg.norm(v_in) * em.velocity_kms == pytest.approx(7.784, abs=0.01)  # sqrt(GM/r), common practice


@pytest.mark.parametrize("text, where", [
    (GOOD.replace('altitude = "200km"', 'altitude = "200 parsecs"'), ":8: node[0].altitude:"),
    (GOOD.replace('kind = "state"', 'kind = "statue"'), ":15: node[2].kind:"),
    (GOOD.replace('name = "gate"', 'name = "gate"\ncolour = "red"'), ":15: node[2].colour: unknown key"),
    (GOOD.replace('to = "relay"', 'to = "nowhere"'), ":19: edge[0].to: no node is named"),
    (GOOD.replace('orbit = "halo L2 south period=6.5626d"\n', ''), ":9: node[1].orbit: missing"),
    (GOOD.replace("[0.8, 0.0, 0.0, 0.0, 0.3, 0.0]", "[0.8, 0.0]"), ":16: node[2].state:"),
    (GOOD + "[[edge]]\nfrom = 3\nto = \"gate\"\n", ":22: edge[1].from:"),
])
def test_bad_node_lists_name_file_line_and_key(em, text, where):
    with pytest.raises(ScenarioError) as e:
        parse_nodes(text, em, "nodes.toml")
    assert str(e.value).startswith("nodes.toml" + where), str(e.value)
    assert "\n" not in str(e.value)


def test_list_for_another_system_is_refused(em):
    with pytest.raises(ScenarioError, match="system"):
        parse_nodes(GOOD.replace("earth-moon", "sun-earth"), em)


def test_pruning_names_the_reason(em):
    nl = parse_nodes(GOOD, em)
    tasks, pruned = plan(em, nl)
    reasons = {(p["from"], p["to"]): p["reason"] for p in pruned}
    assert "Jacobi constants differ" in reasons[("gate", "relay")]        # ballistic, other energy
    assert "joins periodic orbits only" in reasons[("leo", "gate")] and len(pruned) == 4
    # the reason names both kinds of parking leg: manifold through periapsis and direct departure
    assert "direct departure" in reasons[("leo", "gate")] and "manifold" in reasons[("leo", "gate")]
    assert sorted((t["from"]["name"], t["to"]["name"], t["method"]) for t in tasks) == [
        ("leo", "relay", "parking"), ("relay", "leo", "parking")]


def test_ballistic_pairs_pruned_by_energy_and_by_closed_necks(em):
    """Two states of one Jacobi constant above C_L1, one in the Moon's realm and one in the
    Earth's: no ballistic leg can join them (the L1 neck is closed), so none is attempted; two
    of different energies are pruned too; two in one realm at one energy are attempted."""
    from cr3bp.equilibria import jacobi_constants
    c_l1 = jacobi_constants(em)["L1"]
    moon_side = np.array([1 - em.mu + 0.05, 0, 0, 0, 0.0, 0])
    C = float(jacobi(em.mu, moon_side))
    assert C > c_l1
    x = 0.5
    two_omega = x * x + 2 * (1 - em.mu) / abs(x + em.mu) + 2 * em.mu / abs(x - 1 + em.mu)
    earth_side = np.array([x, 0, 0, 0, np.sqrt(two_omega - C), 0])
    assert float(jacobi(em.mu, earth_side)) == pytest.approx(C, abs=1e-12)
    other = moon_side.copy()
    other[4] = 0.05
    nodes = "".join(f'[[node]]\nname = "{n}"\nkind = "state"\nstate = {list(map(float, s))}\n'
                    for n, s in (("m", moon_side), ("e", earth_side), ("o", other)))
    edges = "".join(f'[[edge]]\nfrom = "{a}"\nto = "{b}"\nmaneuvers = "none"\n' for a, b in (("m", "e"), ("m", "o")))
    nl = parse_nodes('[settings]\nall_pairs = false\n' + nodes + edges, em)
    tasks, pruned = plan(em, nl)
    reasons = {(p["from"], p["to"]): p["reason"] for p in pruned}
    assert "L1 neck is closed" in reasons[("m", "e")] and "L1 neck is closed" in reasons[("e", "m")]
    assert "Jacobi constants differ" in reasons[("m", "o")]
    assert tasks == []
    same = parse_nodes(node_list_text(arc_states(3)[1]).replace('both_ways = false',
                                                                'both_ways = false\nmaneuvers = "none"'), em)
    tasks, pruned = plan(em, same)
    assert len(tasks) == 2 and not pruned


def _small(n=3):
    s, st = perturbed_states(n)
    return s, parse_nodes(node_list_text(st, chain=False, all_pairs=True, tof="2d", patches=2), s)


def test_rebuild_from_the_catalogue_computes_nothing(tmp_path, monkeypatch):
    s, nl = _small(3)
    calls = []
    real = graph_build.compute_leg
    monkeypatch.setattr(graph_build, "compute_leg", lambda t: calls.append(t["key"]) or real(t))
    path = tmp_path / "cat.sqlite"
    with Catalog(path) as cat:
        first = build_graph(s, nl, workers=1, catalog=cat)
    assert len(calls) == first.computed == 6 and first.cached == 0
    calls.clear()
    with Catalog(path) as cat:
        again = build_graph(s, nl, workers=1, catalog=cat)
        assert cat.count_legs() == 6
    assert calls == [] and again.computed == 0 and again.cached == 6
    assert [leg_json(a) for a in first.legs] == [leg_json(b) for b in again.legs]
    assert again.graph.number_of_edges() == first.graph.number_of_edges()
    # other settings are other legs
    with Catalog(path) as cat:
        third = build_graph(s, nl, workers=1, catalog=cat, tof_days=2.5)
    assert third.computed == 6


def test_process_pool_and_dask_give_identical_legs():
    distributed = pytest.importorskip("distributed")
    s, nl = _small(3)
    serial = build_graph(s, nl, workers=1)
    pool = build_graph(s, nl, workers=2)
    with distributed.LocalCluster(processes=False, n_workers=1, threads_per_worker=2,
                                  dashboard_address=None) as cluster:
        seen = []
        dask = build_graph(s, nl, scheduler=cluster.scheduler_address, progress=lambda d, n, leg: seen.append(d))
    assert seen == list(range(1, 7))
    a = [leg_json(x) for x in serial.legs]
    assert a == [leg_json(x) for x in pool.legs] == [leg_json(x) for x in dask.legs]
    assert all(x.status == "ok" for x in serial.legs)


def test_missing_cluster_extra_is_an_input_error(monkeypatch):
    import builtins
    real = builtins.__import__

    def no_dask(name, *a, **k):
        if name.startswith("distributed"):
            raise ImportError(name)
        return real(name, *a, **k)
    monkeypatch.setattr(builtins, "__import__", no_dask)
    with pytest.raises(InputError, match="librate\\[cluster\\]"):
        graph_build.run_tasks([{"x": 1}], scheduler="tcp://127.0.0.1:1")


def test_leg_over_its_cap_is_kept_out_of_the_graph(em):
    s, st = perturbed_states(3)
    text = node_list_text(st, chain=True, tof="2d", patches=2).replace(
        'both_ways = false', 'both_ways = false\nmax_patch_dv = "1m/s"')
    r = build_graph(s, parse_nodes(text, s), workers=1)
    assert r.graph.number_of_edges() == 0
    assert all(leg.status == "failed" and "over the cap" in leg.reason for leg in r.legs)


def test_interrupted_build_keeps_the_legs_it_computed(tmp_path, monkeypatch):
    s, nl = _small(3)
    real = graph_build.compute_leg
    calls = []

    def flaky(task):
        calls.append(1)
        if len(calls) == 4:
            raise KeyboardInterrupt
        return real(task)
    monkeypatch.setattr(graph_build, "compute_leg", flaky)
    with Catalog(tmp_path / "c.sqlite") as cat:
        with pytest.raises(KeyboardInterrupt):
            build_graph(s, nl, workers=1, catalog=cat)
        assert cat.count_legs() == 3
    monkeypatch.setattr(graph_build, "compute_leg", real)
    with Catalog(tmp_path / "c.sqlite") as cat:
        again = build_graph(s, nl, workers=1, catalog=cat)
    assert again.cached == 3 and again.computed == 3


ORBITS = '''system = "earth-moon"
[settings]
tof = "5d"
patches = 2
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
'''


def test_orbit_nodes_are_solved_with_stay_edges_and_targeted_legs(em):
    """Planar Lyapunov orbits about L1 and L2 at C = 3.15 (cr3bp.orbits): their Jacobi constant
    is the node's energy; each gets a one-period "stay" self-loop; the L1 -> L2 pair at one
    energy is not pruned (both orbits touch the Moon's realm) and its leg departs from the
    orbit's reference state."""
    nl = parse_nodes(ORBITS.split("[[edge]]")[0], em)
    r = build_graph(em, nl, workers=1)
    g = r.graph
    west, east = (n.id for n in nl.nodes)
    assert g.nodes[west]["jacobi"] == pytest.approx(3.15, abs=1e-9)
    assert g.nodes[east]["jacobi"] == pytest.approx(3.15, abs=1e-9)
    stays = [(u, d) for u, v, k, d in g.edges(keys=True, data=True) if k == "stay"]
    assert sorted(u for u, _ in stays) == sorted([west, east])
    assert all(d["dv_mps"] == 0.0 and d["tof_days"] == pytest.approx(g.nodes[u]["period_days"]) for u, d in stays)
    assert not r.pruned and len(r.legs) == 2
    leg = r.legs[0]
    assert leg.from_id == west
    if leg.ok:
        assert leg.departure_state[0] == pytest.approx(g.nodes[west]["x"])
    tasks, pruned = plan(em, parse_nodes(ORBITS, em))
    assert not pruned and [t["settings"]["maneuvers"] for t in tasks] == ["none", "none"]


def test_bad_orbit_text_names_file_line_key(em):
    bad = ORBITS.replace("lyapunov L2 jacobi=3.15", "lyapunov L7 jacobi=3.15")
    with pytest.raises(ScenarioError) as e:
        parse_nodes(bad, em, "n.toml")
    assert str(e.value).startswith("n.toml:12: node[1].orbit:"), str(e.value)
