"""Speed of the transfer graph: building the brief's Earth-Moon graph on 2 worker processes,
rebuilding it from the catalogue, and route queries on it.

The graph: planar Lyapunov orbits about L1 and L2, northern L1 and southern L2 halos, each at
five Jacobi constants (3.04 ... 3.12), solved with the orbit requests (20 orbit nodes), plus
two parking orbits (200 km about the Earth, 100 km about the Moon). Legs: manifold
connections on x = 1 - mu from each L1 orbit to the L2 orbit of its family at the same
energy (the heteroclinic corridors), parking legs through the manifolds' first periapsis
between each parking orbit and each orbit (both ways), and two-impulse targeted arcs (4-day
flights between the orbits' reference states) for every other ordered pair.

Scale-out rows (issue 19): the 42-node graph (the same four families at ten Jacobi constants
3.04 ... 3.13, 40 orbit nodes, and the two parking orbits: 1 720 legs), its legs computed on a
process pool of 2 against one process (goal at least 1.6x, identical legs), with the load
average at each measurement and the processor seconds (getrusage) beside the wall clock: on a
shared machine a wall-clock ratio says little, so the last row projects the idle 2-core time
from the processor seconds (labelled as a projection). Most of this graph's work is in its 80
parking-to-orbit legs (about 1.6 s each against 1.5 ms for a targeted arc): the legs are dealt
longest first by their method's estimated cost (cr3bp.transfers.tasks.deal, since 2026-12-04;
round robin before) so those land on every worker and start first. orbit_rows (issue 19): the
graph's 40 orbits, one task per family, on a pool of 2 against this process.
"""

import os
import resource
import tempfile
import time
from pathlib import Path

FAMILIES = ("lyapunov L1", "lyapunov L2", "halo L1 north", "halo L2 south")
ENERGIES = (3.04, 3.06, 3.08, 3.10, 3.12)


def _nodes_text(em=None):
    lines = ['system = "earth-moon"', "[settings]", 'tof = "4d"', "patches = 3",
             "[[node]]", 'name = "leo"', 'kind = "parking"', 'body = "earth"', 'altitude = "200km"',
             "[[node]]", 'name = "llo"', 'kind = "parking"', 'body = "moon"', 'altitude = "100km"']
    for fam in FAMILIES:
        for c in ENERGIES:
            lines += ["[[node]]", f'name = "{fam.replace(" ", "-")}-{c:.2f}"', 'kind = "orbit"',
                      f'orbit = "{fam} jacobi={c}"']
    for l1, l2 in (("lyapunov L1", "lyapunov L2"), ("halo L1 north", "halo L2 south")):
        for c in ENERGIES:
            lines += ["[[edge]]", f'from = "{l1.replace(" ", "-")}-{c:.2f}"', f'to = "{l2.replace(" ", "-")}-{c:.2f}"',
                      'sections = ["x=1-mu"]', "both_ways = false"]
            if l1.startswith("lyapunov"):
                lines.append('maneuvers = "none"')       # planar: heteroclinic, no Δv
    return "\n".join(lines) + "\n"


def run():
    import networkx as nx

    from cr3bp import system
    from cr3bp.catalog import Catalog
    from cr3bp.transfers.graph import build_graph, plan, run_tasks
    from cr3bp.transfers.search import best_routes, pareto_routes
    from cr3bp.transfers.nodes import parse_nodes

    em = system("earth-moon")
    nl = parse_nodes(_nodes_text(em), em)
    from cr3bp.transfers.graph import resolve_orbits
    tasks, _ = plan(em, nl, orbits=resolve_orbits(em, nl))
    run_tasks(tasks[:2], workers=1)                       # warm caches
    t = time.perf_counter()
    run_tasks(tasks, workers=1)                                # every leg, one process
    t_serial = time.perf_counter() - t
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
    src, dst = ids[2], ids[-1]                      # lyapunov L1 3.04 -> halo L2 south 3.12

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
    ok = sum(1 for leg in built.legs if leg.ok)
    return [
        *orbit_rows(em),
        *_forty(em),
        (f"build 22 nodes (20 orbits solved), {len(tasks)} legs ({ok} usable), 2 workers", t_build,
         "the same legs in 1 process", t_serial, "< 300 s (on 2 cores)"),
        ("rebuild from the catalogue (0 legs computed)", t_rebuild, "fresh build", t_build, "< 5 s"),
        ("route query: 5 best + Pareto set", t_query, "networkx 5 shortest simple paths", t_nx, "< 1 s"),
    ]


def _cpu(who) -> float:
    r = resource.getrusage(who)
    return r.ru_utime + r.ru_stime


def _forty_nodes(em):
    from cr3bp.transfers.nodes import parse_nodes
    global ENERGIES
    keep, ENERGIES = ENERGIES, tuple(round(3.04 + 0.01 * k, 2) for k in range(10))
    try:
        return parse_nodes(_nodes_text(em), em)
    finally:
        ENERGIES = keep


def orbit_rows(em):
    """Issue 19: the 42-node graph's 40 orbits (four families, each grown once) on a pool of 2
    (start-up included; one task per family) against this process, and each family's processor
    seconds (the inputs of benchmarks/scale_model.py)."""
    from cr3bp.transfers import tasks as tasks_mod
    from cr3bp.transfers.graph import orbit_groups, resolve_orbits, solve_orbit_group, system_spec
    from cr3bp.transfers.nodes import OrbitNode
    nl = _forty_nodes(em)
    resolve_orbits(em, nl)                                   # warm the kernels
    groups = orbit_groups([n for n in nl.nodes if isinstance(n, OrbitNode)])
    per_family = []
    for g in groups:
        c0 = time.process_time()
        solve_orbit_group({"system": system_spec(em), "requests": [(n.id, n.orbit, n.is_torus) for n in g]})
        per_family.append(time.process_time() - c0)
    load_one, c0, t = os.getloadavg()[0], _cpu(resource.RUSAGE_SELF), time.perf_counter()
    here = resolve_orbits(em, nl)
    t_one, cpu_one = time.perf_counter() - t, _cpu(resource.RUSAGE_SELF) - c0
    load_pool = os.getloadavg()[0]
    c0, k0, t = _cpu(resource.RUSAGE_SELF), _cpu(resource.RUSAGE_CHILDREN), time.perf_counter()
    pool = tasks_mod.start_pool(2)
    try:
        on_pool = resolve_orbits(em, nl, workers=2, executor=pool)
    finally:
        pool.shutdown()
    t_pool = time.perf_counter() - t
    cpu_parent, cpu_workers = _cpu(resource.RUSAGE_SELF) - c0, _cpu(resource.RUSAGE_CHILDREN) - k0
    same = [repr(sorted(here[k].items(), key=str)) for k in here] == \
        [repr(sorted(on_pool[k].items(), key=str)) for k in on_pool]
    fams = ", ".join(f"{t:.2f}" for t in per_family)
    return [(f"graph, 42 nodes: 40 orbits, {len(groups)} families on a pool of 2, start-up included (load "
             f"{load_pool:.1f}; workers {cpu_workers:.1f} CPU s, parent "
             f"{cpu_parent:.1f} s; {'identical' if same else 'RESULTS DIFFER'}; families {fams} CPU s)",
             t_pool, f"this process (load {load_one:.1f}; {cpu_one:.2f} CPU s)", t_one,
             "information (in a build the pool is started once, for the orbits and the legs)")]


def _forty(em):
    """The 42-node rows: the legs in one process, then on a pool of 2 (its start-up included)."""
    from cr3bp.transfers.graph import leg_json, plan, resolve_orbits, run_tasks
    from cr3bp.transfers.leg import Leg
    from cr3bp.transfers.nodes import parse_nodes
    global ENERGIES
    keep, ENERGIES = ENERGIES, tuple(round(3.04 + 0.01 * k, 2) for k in range(10))
    try:
        nl = parse_nodes(_nodes_text(em), em)
    finally:
        ENERGIES = keep
    tasks, _ = plan(em, nl, orbits=resolve_orbits(em, nl))
    load_one = f"load {os.getloadavg()[0]:.1f}"
    c0 = _cpu(resource.RUSAGE_SELF)
    t = time.perf_counter()
    one = run_tasks(tasks, workers=1)
    t_one, cpu_one = time.perf_counter() - t, _cpu(resource.RUSAGE_SELF) - c0
    load_pool = f"load {os.getloadavg()[0]:.1f}"
    c0, k0 = _cpu(resource.RUSAGE_SELF), _cpu(resource.RUSAGE_CHILDREN)
    t = time.perf_counter()
    pool = run_tasks(tasks, workers=2)
    t_pool = time.perf_counter() - t
    cpu_parent, cpu_workers = _cpu(resource.RUSAGE_SELF) - c0, _cpu(resource.RUSAGE_CHILDREN) - k0
    same = [leg_json(Leg.from_record(r, em)) for r in one] == [leg_json(Leg.from_record(r, em)) for r in pool]
    base = f"the same legs in one process ({load_one})"
    return [
        (f"graph, 42 nodes, {len(tasks)} legs on a pool of 2, start-up included ({load_pool}; "
         f"{'identical' if same else 'RESULTS DIFFER'})", t_pool, base, t_one, ">= 1.6x"),
        (f"graph, 42 nodes: pool of 2 PROJECTED for an idle 2-core machine from processor seconds (workers "
         f"{cpu_workers:.1f} s, parent {cpu_parent:.1f} s)", cpu_workers / 2.0 + cpu_parent,
         "processor seconds of one process", cpu_one, "information (projection, not measured)"),
    ]
