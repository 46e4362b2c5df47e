"""Speed of the transfer graph: building a 20-node graph on 2 worker processes, rebuilding it
from the catalogue, and route queries on it.

The brief's graph is Lyapunov and halo orbits about L1 and L2 at five energies plus two parking
orbits; the periodic-orbit solver and the manifold connections are not on this branch yet, so
the 20 nodes here are fixed states (10 each along two ballistic loops about the Moon at two
energies) joined pairwise by two-impulse targeted legs (380 ordered pairs, 2-day flights).
"""

import tempfile
import time
from pathlib import Path

import numpy as np

N_PER_LOOP = 10
SERIAL_SAMPLE = 40


def _nodes_text(em):
    from cr3bp import propagate
    lines = ['system = "earth-moon"', "[settings]", 'tof = "2d"', "patches = 3"]
    k = 0
    for vy in (-0.40, -0.45):
        dt = 0.6 / em.time_days
        a = propagate(em, [1 - em.mu + 0.1, 0, 0, 0, vy, 0], (N_PER_LOOP - 1) * dt,
                      t_eval=np.arange(N_PER_LOOP) * dt)
        for s in a.states:
            lines += ["[[node]]", f'name = "n{k:02d}"', 'kind = "state"', f"state = {[float(v) for v in s]}"]
            k += 1
    return "\n".join(lines) + "\n"


def run():
    import networkx as nx

    from cr3bp import system
    from cr3bp.catalog import Catalog
    from cr3bp.graph_build import build_graph, plan, run_tasks
    from cr3bp.network import best_routes, pareto_routes
    from cr3bp.nodes import parse_nodes

    em = system("earth-moon")
    nl = parse_nodes(_nodes_text(em), em)
    tasks, _ = plan(em, nl)
    run_tasks(tasks[:2], workers=1)                       # warm caches
    sample = tasks[::max(1, len(tasks) // SERIAL_SAMPLE)]      # spread over all the pairs
    t = time.perf_counter()
    run_tasks(sample, workers=1)
    t_serial = (time.perf_counter() - t) * len(tasks) / len(sample)
    with tempfile.TemporaryDirectory() as d:
        path = Path(d) / "bench.sqlite"
        with Catalog(path) as cat:
            t = time.perf_counter()
            built = build_graph(em, nl, workers=2, catalog=cat)
            t_build = time.perf_counter() - t
        with Catalog(path) as cat:
            t = time.perf_counter()
            again = build_graph(em, nl, workers=2, catalog=cat)
            t_rebuild = time.perf_counter() - t
    assert again.computed == 0
    g = built.graph
    ids = [n.id for n in nl.nodes]
    src, dst = ids[0], ids[-1]

    def queries():
        best_routes(g, src, dst, k=5)
        pareto_routes(g, src, dst)

    t = time.perf_counter()
    queries()
    t_query = time.perf_counter() - t
    simple = nx.DiGraph()
    for u, v, d in g.edges(data=True):
        if not simple.has_edge(u, v) or simple[u][v]["dv_mps"] > d["dv_mps"]:
            simple.add_edge(u, v, dv_mps=d["dv_mps"])
    t = time.perf_counter()
    gen = nx.shortest_simple_paths(simple, src, dst, weight="dv_mps")
    for _ in range(5):
        next(gen)
    t_nx = time.perf_counter() - t
    ok = sum(1 for leg in built.legs if leg["status"] == "ok")
    return [
        (f"build 20 nodes, {len(tasks)} legs ({ok} usable), 2 workers", t_build,
         f"1 process (from {SERIAL_SAMPLE} legs)", t_serial, "< 300 s (on 2 cores)"),
        ("rebuild from the catalogue (0 legs computed)", t_rebuild, "fresh build", t_build, "< 5 s"),
        ("route query: 5 best + Pareto set", t_query, "networkx 5 shortest simple paths", t_nx, "< 1 s"),
    ]
