"""Scale-out: a family atlas (many families, one task each) and a tube propagated in pieces,
here, over the process pool and on a dask.distributed cluster, give the same bytes.

Outside check: none beyond the serial result itself (the serial paths are checked against
published tables and scipy elsewhere: tests/test_against_*). What is checked here is that the
parallel result equals the serial one bit for bit, and that the catalogue is written by the
client alone, in request order.
"""

import json

import numpy as np
import pytest

import cr3bp
from cr3bp.transfers import tasks
from librate_cli.main import main

EM = "--system=earth-moon"
ATLAS = "lyapunov L1, lyapunov L2, halo L1 north"


def run(capsys, *argv):
    rc = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return rc, out, err


@pytest.fixture(scope="module")
def cluster():
    """A local dask cluster of 2 worker processes for the module (one thread each)."""
    distributed = pytest.importorskip("distributed")
    import logging
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None,
                                  silence_logs=logging.CRITICAL) as c:
        yield c.scheduler_address


def _family_bytes(fam):
    return json.dumps([m.to_dict() for m in fam.members] + [b.to_dict() for b in fam.bifurcations],
                      sort_keys=True)


def test_atlas_pool_and_dask_equal_serial_family_by_family(cluster):
    serial = cr3bp.atlas("earth-moon", ATLAS, members=4)
    one = [cr3bp.family("earth-moon", "lyapunov", point="L2", members=4)]
    assert [(f.family, f.point) for f in serial] == [("lyapunov", "L1"), ("lyapunov", "L2"), ("halo", "L1")]
    assert _family_bytes(serial[1]) == _family_bytes(one[0])          # an atlas entry is cr3bp.family's
    seen = []
    pool = cr3bp.atlas("earth-moon", ATLAS, members=4, workers=2, progress=lambda d, n, f: seen.append((d, n)))
    dask = cr3bp.atlas("earth-moon", ATLAS.split(", "), members=4, scheduler=cluster)
    for a, b, c in zip(serial, pool, dask):
        assert _family_bytes(a) == _family_bytes(b) == _family_bytes(c)
    assert sorted(seen) == [(1, 3), (2, 3), (3, 3)]


def test_atlas_refuses_before_any_work(monkeypatch):
    calls = []
    monkeypatch.setattr(tasks, "run_tasks", lambda *a, **k: calls.append(a))
    for families, kw, words in (("lyapunov L1, lyapunov L1", {}, "repeats"),
                                ("lyapunov L1, halo L2 south period=6.5d", {}, "names a member"),
                                ("lyapunov L1", {"members": 1}, "members 1"),
                                ("lyapunov L1", {"max_step": 2.0}, "max_step"),
                                ("lyapunov L1", {"scheduler": "somewhere"}, "--scheduler 'somewhere'"),
                                ("lyapunov L1", {"workers": 0}, "workers"),
                                ("", {}, "one or more")):
        with pytest.raises(cr3bp.InputError, match=words):
            cr3bp.atlas("earth-moon", families, **kw)
    assert calls == []


def test_atlas_cli_same_json_here_in_a_pool_and_on_dask_and_catalogue_in_order(capsys, tmp_path, cluster):
    base = ["family", EM, "--atlas", ATLAS, "--members", "3", "--format", "json"]
    rc1, out1, err1 = run(capsys, *base)
    rc2, out2, err2 = run(capsys, *base, "--workers", "2")
    rc3, out3, err3 = run(capsys, *base, "--scheduler", cluster)
    assert rc1 == rc2 == rc3 == 0, (err1, err2, err3)
    assert out1 == out2 == out3
    assert "family 3/3 done" in err2
    d = json.loads(out1)
    assert [f["family"] + " " + f["point"] for f in d["families"]] == ["lyapunov L1", "lyapunov L2", "halo L1"]
    cat = tmp_path / "cat.sqlite"
    rc, out, err = run(capsys, *base, "--workers", "2", "--catalog", cat)
    assert rc == 0, err
    ids = [f["catalog_id"] for f in json.loads(out)["families"]]
    assert ids == sorted(ids) and len(set(ids)) == 3
    rc, out, err = run(capsys, *base[:-2], "--format", "csv")
    assert rc == 0 and out.count("lyapunov L2,") == 3


def test_run_tasks_on_dask_in_chunks(cluster):
    assert tasks.run_tasks(abs, list(range(-20, 0)), scheduler=cluster) == list(range(20, 0, -1))
    assert tasks.split(10, 2, 2) == [[0, 4, 8], [1, 5, 9], [2, 6], [3, 7]]
    assert sum(map(len, tasks.split(401, 16))) == 401 and len(tasks.split(401, 16)) <= 64


def _tube_bytes(tube):
    return b"".join(np.asarray(a).tobytes() for a in (tube.tof, tube.end_states, tube.start_states)) + repr(tube.status).encode()


def test_tube_in_pieces_equals_one_batch(cluster):
    em = cr3bp.system("earth-moon")
    o = cr3bp.orbit(em, "lyapunov L1 jacobi=3.15")
    kw = dict(points=40, until="section:x=1-mu")
    serial = cr3bp.manifold(o, "unstable", **kw)
    pool = cr3bp.manifold(o, "unstable", workers=2, **kw)
    dask = cr3bp.manifold(o, "unstable", scheduler=cluster, **kw)
    assert _tube_bytes(serial) == _tube_bytes(pool) == _tube_bytes(dask)
    assert "section" in serial.status
    cut = cr3bp.section(o, "x=1-mu", stability="stable", points=40)
    cut2 = cr3bp.section(o, "x=1-mu", stability="stable", points=40, workers=2)
    assert json.dumps(cut.to_dict()) == json.dumps(cut2.to_dict())
    with pytest.raises(cr3bp.InputError, match="periodic orbit"):
        cr3bp.manifold((em, "L1"), "unstable", workers=2)


def test_manifold_and_section_cli_byte_identical_json(capsys, cluster):
    m = ["manifold", EM, "--family=lyapunov", "--point=L1", "--jacobi=3.15", "--unstable", "--points=36",
         "--until=section:x=1-mu", "--format=json"]
    rc1, out1, err1 = run(capsys, *m)
    rc2, out2, err2 = run(capsys, *m, "--workers=2")
    rc3, out3, err3 = run(capsys, *m, "--scheduler", cluster)
    assert rc1 == rc2 == rc3 == 0, (err1, err2, err3)
    assert out1 == out2 == out3
    s = ["section", EM, "--tube=lyapunov L1 jacobi=3.15 unstable", "--section=x=1-mu", "--points=36",
         "--format=json"]
    rc1, out1, err1 = run(capsys, *s)
    rc2, out2, err2 = run(capsys, *s, "--workers=2")
    assert rc1 == rc2 == 0, (err1, err2)
    assert out1 == out2


def test_a_started_pool_is_used_and_left_running():
    """start_pool: the workers start before the tasks come (warmed by a module-level function)
    and run_tasks uses the pool without shutting it down."""
    ex = tasks.start_pool(2, warm=tasks._nothing)
    try:
        assert tasks.run_tasks(abs, list(range(-9, 0)), workers=2, executor=ex) == list(range(9, 0, -1))
        assert tasks.run_tasks(str, [1, 2, 3], workers=2, executor=ex) == ["1", "2", "3"]   # still running
    finally:
        ex.shutdown()


def test_a_build_grows_each_family_once_and_solves_the_same_orbits(monkeypatch):
    """resolve_orbits without a catalogue: three requests on the Lyapunov L1 family grow it once,
    and each orbit equals the one solved alone (its family grown for it)."""
    from cr3bp.orbits import families, request
    from cr3bp.transfers.graph import resolve_orbits
    from cr3bp.transfers.nodes import parse_nodes
    em = cr3bp.system("earth-moon")
    reqs = ["lyapunov L1 jacobi=3.10", "lyapunov L1 jacobi=3.12", "lyapunov L1 jacobi=3.15"]
    text = 'system = "earth-moon"\n' + "".join(
        f'[[node]]\nname = "o{i}"\nkind = "orbit"\norbit = "{r}"\n' for i, r in enumerate(reqs))
    alone = [request.solve_request(em, r) for r in reqs]
    grows = []
    real = families.grow_family
    monkeypatch.setattr(families, "grow_family", lambda *a, **k: grows.append(a[1]) or real(*a, **k))
    got = resolve_orbits(em, parse_nodes(text, em))
    assert grows == ["lyapunov"]
    assert [np.asarray(o["state"]).tobytes() for o in got.values()] == [o.state.tobytes() for o in alone]
    assert [o["period"] for o in got.values()] == [o.period for o in alone]


# ---- issue 19, the parts left: torus tubes, a graph's orbits, Monte Carlo trials, longest first ----

def test_torus_tube_in_pieces_equals_one_batch(cluster):
    """A torus's tube and section cut propagated in pieces: here, a pool of 2, a local dask
    cluster (module fixture) and ``local:2`` give the same bytes."""
    from cr3bp.tori.torus import example_torus
    t = example_torus()
    kw = dict(points=40, until="time:1d")
    serial = cr3bp.manifold(t, "unstable", **kw)
    pool = cr3bp.manifold(t, "unstable", workers=2, **kw)
    dask = cr3bp.manifold(t, "unstable", scheduler=cluster, **kw)
    local = cr3bp.manifold(t, "unstable", scheduler="local:2", **kw)
    assert _tube_bytes(serial) == _tube_bytes(pool) == _tube_bytes(dask) == _tube_bytes(local)
    assert serial.n == 36 and json.dumps(serial.to_dict()) == json.dumps(pool.to_dict())
    cut = cr3bp.section(t, "x=0.8", stability="stable", points=40, time="3TU")
    cut2 = cr3bp.section(t, "x=0.8", stability="stable", points=40, time="3TU", workers=2)
    assert len(cut) > 0 and json.dumps(cut.to_dict()) == json.dumps(cut2.to_dict())
    with pytest.raises(cr3bp.InputError, match="apsis map"):
        cr3bp.section(t, "periapsis:moon", stability="stable", points=4, workers=2)


TORUS = "quasi-halo around halo L1 north az=10000km amplitude=300km"


def test_torus_manifold_cli_byte_identical_json(capsys):
    m = ["manifold", EM, f"--torus={TORUS}", "--unstable", "--points=36", "--until=time:2d", "--format=json"]
    rc1, out1, err1 = run(capsys, *m)
    rc2, out2, err2 = run(capsys, *m, "--workers=2")
    rc3, out3, err3 = run(capsys, *m, "--scheduler=local:2")
    assert rc1 == rc2 == rc3 == 0, (err1, err2, err3)
    assert out1 == out2 == out3
    assert json.loads(out1)["tube"]["kind"] == "torus manifold"


def _graph_text(reqs):
    return 'system = "earth-moon"\n' + "".join(
        f'[[node]]\nname = "o{i}"\nkind = "orbit"\norbit = "{r}"\n' for i, r in enumerate(reqs))


def test_a_graphs_orbits_on_workers_are_the_ones_solved_here(monkeypatch):
    """resolve_orbits with a pool of 2 and on local:2: one task per family (the bad request a
    task of its own, its error as data), the same bytes as here."""
    from cr3bp.transfers.graph import orbit_groups, resolve_orbits
    from cr3bp.transfers.nodes import parse_nodes
    em = cr3bp.system("earth-moon")
    reqs = ["lyapunov L1 jacobi=3.10", "lyapunov L2 jacobi=3.10", "lyapunov L1 jacobi=3.15",
            "lyapunov L1 jacobi=9.0"]
    nl = parse_nodes(_graph_text(reqs), em)
    groups = orbit_groups([n for n in nl.nodes])
    assert [[n.name for n in g] for g in groups] == [["o0", "o2", "o3"], ["o1"]]
    here = resolve_orbits(em, nl)
    seen = []
    pool = resolve_orbits(em, nl, workers=2, progress=lambda n, r: seen.append(n.name))
    dask = resolve_orbits(em, nl, scheduler="local:2")

    def as_bytes(d):
        return [(k, sorted((a, np.asarray(b).tobytes() if not isinstance(b, str) else b) for a, b in v.items()))
                for k, v in d.items()]
    assert as_bytes(here) == as_bytes(pool) == as_bytes(dask)
    assert list(here) == list(pool) and seen == ["o0", "o1", "o2", "o3"]
    assert "error" in here[nl.nodes[3].id] and "state" in here[nl.nodes[1].id]


def test_graph_build_cli_same_json_here_on_a_pool_and_local_dask(capsys, tmp_path):
    """librate graph build: orbits and legs on a pool of 2 and on local:2 (one client for the
    whole build), the JSON byte for byte the one built in this process."""
    nodes = tmp_path / "nodes.toml"
    nodes.write_text(_graph_text(["lyapunov L1 jacobi=3.15", "lyapunov L2 jacobi=3.15", "lyapunov L1 jacobi=3.17"])
                     + '[[node]]\nname = "p"\nkind = "parking"\nbody = "moon"\naltitude = "100km"\n')
    g = ["graph", "build", EM, f"--nodes={nodes}", "--no-catalog", "--format=json"]
    rc1, out1, err1 = run(capsys, *g, "--workers=1")
    rc2, out2, err2 = run(capsys, *g, "--workers=2")
    rc3, out3, err3 = run(capsys, *g, "--scheduler=local:2")
    assert rc1 == rc2 == rc3 == 0, (err1, err2, err3)
    assert out1 == out2 == out3


def test_a_build_with_many_families_solves_them_on_its_pool(monkeypatch):
    """build_graph on a pool: from POOL_ORBIT_GROUPS families the orbits go to the build's pool
    (one task per family) before the legs; the legs are the ones built in one process."""
    from cr3bp.transfers import graph
    from cr3bp.transfers.nodes import parse_nodes
    em = cr3bp.system("earth-moon")
    nl = parse_nodes(_graph_text(["lyapunov L1 jacobi=3.15", "lyapunov L2 jacobi=3.15"]), em)
    here = graph.build_graph(em, nl, workers=1)
    calls = []
    real = tasks.run_tasks
    monkeypatch.setattr(tasks, "run_tasks", lambda f, *a, **k: calls.append(f.__name__) or real(f, *a, **k))
    monkeypatch.setattr(graph, "POOL_ORBIT_GROUPS", 2)
    pooled = graph.build_graph(em, nl, workers=2)
    assert calls == ["solve_orbit_group", "compute_leg"]
    assert [graph.leg_json(x) for x in here.legs] == [graph.leg_json(x) for x in pooled.legs]
    monkeypatch.setattr(graph, "POOL_ORBIT_GROUPS", 3)
    calls.clear()
    graph.build_graph(em, nl, workers=2)
    assert calls == ["compute_leg"]


def test_disperse_trials_in_pieces_equal_one_batch(monkeypatch):
    """The Monte Carlo of librate disperse in pieces (16 trials each, so 100 trials make 7
    pieces, the last one short): here, a pool of 2 and local:2 give the same bytes."""
    from cr3bp.operations import dispersion
    monkeypatch.setattr(dispersion, "PIECE_TRIALS", 16)
    o = cr3bp.orbit("earth-moon", "lyapunov L1 jacobi=3.15")
    kw = dict(coast="2d", corrections=["1d"], trials=100, seed=7)
    here = cr3bp.disperse(o, **kw)
    pool = cr3bp.disperse(o, workers=2, **kw)
    dask = cr3bp.disperse(o, scheduler="local:2", **kw)
    for key in ("dv", "final", "lost"):
        assert here.mc[key].tobytes() == pool.mc[key].tobytes() == dask.mc[key].tobytes()
    assert json.dumps(here.to_dict()) == json.dumps(pool.to_dict())
    with pytest.raises(cr3bp.InputError, match="--scheduler 'nowhere'"):
        cr3bp.disperse(o, scheduler="nowhere", **kw)
    with pytest.raises(cr3bp.InputError, match="workers"):
        cr3bp.disperse(o, workers=0, **kw)


def test_disperse_cli_same_json_here_and_on_workers(capsys):
    d = ["disperse", EM, "--orbit=lyapunov L1 jacobi=3.15", "--coast=2d", "--corrections=1d", "--trials=80",
         "--format=json"]
    rc1, out1, err1 = run(capsys, *d)
    rc2, out2, err2 = run(capsys, *d, "--workers=2")
    rc3, out3, err3 = run(capsys, *d, "--scheduler=local:2")
    assert rc1 == rc2 == rc3 == 0, (err1, err2, err3)
    assert out1 == out2 == out3


def test_legs_dealt_longest_first():
    """deal: the heaviest task alone in the first chunk, every index once, the chunks heaviest
    first; run_tasks with cost= gives the results in task order; leg_cost ranks a parking leg
    above a targeted arc (the 42-node benchmark's measured means)."""
    from cr3bp.transfers.graph import leg_cost
    cost = [0.001] * 30 + [5.0, 2.0, 2.0]
    chunks = tasks.deal(cost, 2, 4)
    assert chunks[0] == [30] and sorted(i for c in chunks for i in c) == list(range(33)) and len(chunks) == 8
    totals = [sum(cost[i] for i in c) for c in chunks]
    assert totals == sorted(totals, reverse=True)
    assert max(totals) == 5.0                          # LPT: no chunk heavier than the longest task
    rr = [sum(cost[i] for i in c) for c in tasks.split(33, 2, 4)]
    assert max(rr) > max(totals)                       # round robin puts short tasks beside it
    assert tasks.run_tasks(abs, list(range(-9, 0)), workers=2, cost=list(range(9))) == list(range(9, 0, -1))
    assert tasks.deal([], 2) == [] and tasks.deal([1.0], 8) == [[0]]
    assert leg_cost({"method": "parking"}) > leg_cost({"method": "manifold"}) > leg_cost({"method": "targeted"})
    with pytest.raises(cr3bp.InputError, match="cost has 2 values for 3 tasks"):
        tasks.run_tasks(abs, [1, 2, 3], workers=2, cost=[1, 2])
