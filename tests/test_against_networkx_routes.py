"""Route search against networkx's own shortest-path functions and brute-force enumeration.

References: networkx ``shortest_path`` (Dijkstra) and ``all_simple_paths``; the Pareto set is
recomputed by exhaustive enumeration of every simple path on the multigraph.
"""

import itertools
import math
import random

import networkx as nx
import pytest
from hypothesis import given, settings, strategies as st

from cr3bp.errors import InputError, NoSolutionError
from cr3bp.transfers.search import Constraints, add_leg, best_routes, iter_routes, pareto_routes


def random_graph(seed, n=7, p=0.35, multi=2):
    rng = random.Random(seed)
    g = nx.MultiDiGraph()
    g.add_nodes_from(range(n))
    for u, v in itertools.permutations(range(n), 2):
        for _ in range(multi):
            if rng.random() < p:
                add_leg(g, u, v, dv_mps=round(rng.uniform(0, 500), 1), tof_days=round(rng.uniform(1, 60), 1),
                        min_altitude_km=rng.choice([100.0, 200.0, 5000.0]))
    return g


def all_routes(g, s, t):
    """Every simple route on the multigraph, each parallel-edge choice separately."""
    out = []
    for path in nx.all_simple_paths(nx.DiGraph(g), s, t):
        choices = [[(u, v, k, d) for k, d in g[u][v].items()] for u, v in zip(path, path[1:])]
        for combo in itertools.product(*choices):
            out.append((path, sum(e[3]["dv_mps"] for e in combo), sum(e[3]["tof_days"] for e in combo),
                        min(e[3]["min_altitude_km"] for e in combo)))
    return out


def collapsed(g, weight):
    h = nx.DiGraph()
    for u, v, d in g.edges(data=True):
        if not h.has_edge(u, v) or d[weight] < h[u][v][weight]:
            h.add_edge(u, v, **{weight: d[weight]})
    return h


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 10_000))
def test_min_dv_matches_networkx_dijkstra(seed):
    g = random_graph(seed)
    h = collapsed(g, "dv_mps")
    if not nx.has_path(h, 0, 6):
        with pytest.raises(NoSolutionError):
            best_routes(g, 0, 6)
        return
    expected = nx.shortest_path_length(h, 0, 6, weight="dv_mps")
    assert best_routes(g, 0, 6)[0].dv_total_mps == pytest.approx(expected, abs=1e-9)
    expected_t = nx.shortest_path_length(collapsed(g, "tof_days"), 0, 6, weight="tof_days")
    assert best_routes(g, 0, 6, objective="tof")[0].tof_days == pytest.approx(expected_t, abs=1e-9)


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 10_000), st.floats(20, 150), st.floats(100, 900))
def test_constrained_and_k_best_match_brute_force(seed, max_tof, max_dv):
    g = random_graph(seed)
    routes = all_routes(g, 0, 6)
    c = Constraints(max_tof_days=max_tof, min_altitude_km=150.0)
    feasible = sorted((dv, tof) for _, dv, tof, alt in routes if tof <= max_tof and alt >= 150.0)
    got = list(itertools.islice(iter_routes(g, 0, 6, c, "dv"), 5))
    assert [r.dv_total_mps for r in got] == pytest.approx([dv for dv, _ in feasible[:5]])
    c2 = Constraints(max_dv_mps=max_dv)
    feasible_t = sorted(tof for _, dv, tof, _ in routes if dv <= max_dv)
    got_t = [r.tof_days for r in itertools.islice(iter_routes(g, 0, 6, c2, "tof"), 3)]
    assert got_t == pytest.approx(feasible_t[:3])


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 10_000))
def test_pareto_set_matches_brute_force(seed):
    g = random_graph(seed)
    routes = [(dv, tof) for _, dv, tof, _ in all_routes(g, 0, 6)]
    if not routes:
        return
    front = sorted({(dv, tof) for dv, tof in routes
                    if not any((d2 <= dv and t2 <= tof) and (d2 < dv or t2 < tof) for d2, t2 in routes)})
    got = [(r.dv_total_mps, r.tof_days) for r in pareto_routes(g, 0, 6)]
    # one representative per distinct (dv, tof) point of the front
    got = sorted(set(got))
    assert len(got) == len(front)
    for (dv, tof), (edv, etof) in zip(got, front):
        assert dv == pytest.approx(edv) and tof == pytest.approx(etof)


def test_through_avoid_and_max_legs():
    g = nx.MultiDiGraph()
    add_leg(g, "a", "b", 10, 1)
    add_leg(g, "b", "d", 10, 1)
    add_leg(g, "a", "c", 50, 1)
    add_leg(g, "c", "d", 50, 1)
    add_leg(g, "a", "d", 500, 1)
    assert best_routes(g, "a", "d")[0].nodes == ("a", "b", "d")
    assert best_routes(g, "a", "d", Constraints(through=("c",)))[0].nodes == ("a", "c", "d")
    assert best_routes(g, "a", "d", Constraints(avoid=("b",)))[0].nodes == ("a", "c", "d")
    assert best_routes(g, "a", "d", Constraints(max_legs=1))[0].nodes == ("a", "d")


def test_binding_constraint_is_named():
    g = nx.MultiDiGraph()
    add_leg(g, "leo", "halo", 3200.0, 100.0)
    with pytest.raises(NoSolutionError, match=r"max_tof_days binds: without it the best route costs 3200.0 m/s"):
        best_routes(g, "leo", "halo", Constraints(max_tof_days=30))
    with pytest.raises(NoSolutionError, match="no chain of legs"):
        best_routes(g, "halo", "leo")


def test_bad_input():
    g = nx.MultiDiGraph()
    with pytest.raises(InputError, match="dv_mps"):
        add_leg(g, "a", "b", -1.0, 1.0)
    add_leg(g, "a", "b", 1.0, 1.0)
    with pytest.raises(InputError, match="not in the graph"):
        best_routes(g, "a", "zzz")
    with pytest.raises(InputError, match="objective"):
        best_routes(g, "a", "b", objective="cost")
    with pytest.raises(InputError, match="max_tof_days"):
        best_routes(g, "a", "b", Constraints(max_tof_days=math.nan))
