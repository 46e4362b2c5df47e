"""Torus atlas (cr3bp.torus_atlas, librate torus --atlas): many families of tori, one task per
family, here, over a process pool of 2 and on a local dask cluster, give the same tori.

Outside check: none beyond the single-family result itself (the torus numerics are checked
against published tori and scipy elsewhere: tests/test_against_*). What is checked here is
that every family of the atlas equals, array for array, the family cr3bp.torus continues
for the same request; that the command's JSON is the call's; that the catalogue holds the
records a single-family call keeps (and reads back); and that bad input is refused before
any torus is solved, with nothing written.
"""

import json

import numpy as np
import pytest

import cr3bp
from cr3bp.catalog import Catalog
from cr3bp.tori import solver
from cr3bp.transfers import tasks
from librate_cli.main import main

EM = "earth-moon"
A = "quasi-halo around halo L1 north az=10000km amplitude=300km"
B = "quasi-halo around halo L2 north az=10000km amplitude=300km"
ATLAS = f"{A}; {B}"


def run(capsys, *argv):
    rc = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return rc, out, err


def _same_family(f, g):
    """Member for member: the circle's array and the torus's numbers, bit for bit."""
    assert f.hold == g.hold and f.stop == g.stop and len(f.members) == len(g.members)
    for s, t in zip(f.members, g.members):
        assert np.array_equal(s.circle, t.circle)
        assert (s.stroboscopic_time, s.rotation, s.jacobi, s.invariance_error) == \
               (t.stroboscopic_time, t.rotation, t.jacobi, t.invariance_error)
    return True


@pytest.fixture(scope="module")
def serial():
    return cr3bp.torus_atlas(EM, ATLAS, members=2)


def test_pool_of_two_equals_serial_and_each_family_is_the_single_one(serial):
    assert [f.members[0].point for f in serial] == ["L1", "L2"]       # request order
    assert [len(f.members) for f in serial] == [3, 3]                 # the first torus and 2 more
    seen = []
    pool = cr3bp.torus_atlas(EM, [A, B], members=2, workers=2, progress=lambda d, n, r, f: seen.append((d, n, r)))
    assert sorted(d for d, n, r in seen) == [1, 2] and {r for d, n, r in seen} == {A, B}
    one = cr3bp.torus(EM, B, members=2)
    assert _same_family(serial[0], pool[0]) and _same_family(serial[1], pool[1])
    assert _same_family(serial[1], one)
    assert not np.array_equal(serial[0].members[1].circle[:, :3], serial[1].members[1].circle[:, :3])


def test_cli_json_is_the_call_and_the_same_in_a_pool(capsys, serial):
    base = ["torus", "--system", EM, "--atlas", ATLAS, "--members", "2", "--format", "json"]
    rc1, out1, err1 = run(capsys, *base)
    rc2, out2, err2 = run(capsys, *base, "--workers", "2")
    assert rc1 == rc2 == 0, (err1, err2)
    assert out1 == out2
    assert "torus family 2/2 done" in err2 and "in 2 worker processes" in err2
    d = json.loads(out1)
    assert d["atlas"] == [A, B] and [f["request"] for f in d["families"]] == [A, B]
    assert [f["members"][0]["point"] for f in d["families"]] == ["L1", "L2"]     # each block is its request's
    for got, fam in zip(d["families"], serial):
        want = fam.to_dict()
        assert got["stop"] == want["stop"] and len(got["members"]) == len(want["members"])
        for g, w in zip(got["members"], want["members"]):
            for key, value in w.items():
                assert g[key] == json.loads(json.dumps(value)), key


def test_cli_table_one_block_per_family_with_the_caution(capsys):
    rc, out, err = run(capsys, "torus", "--system", EM, "--atlas", ATLAS, "--members", "1", "-q")
    assert rc == 0, err
    assert out.count("torus family from the quasi-halo torus") == 2
    assert out.count("stroboscopic_period_days") == 2 and "CAUTION" in out
    assert out.index(f"'{A}'") < out.index(f"'{B}'")


def test_catalogue_holds_what_a_single_call_keeps_and_reads_back(tmp_path, monkeypatch):
    path = tmp_path / "atlas.sqlite"
    with Catalog(path) as cat:
        cr3bp.torus_atlas(EM, ATLAS, members=2, workers=2, catalog=cat)
        atlas_recs = [cat.family(f["id"]) for f in cat.list_families()]
    one = Catalog(":memory:")
    for text in (A, B):
        cr3bp.torus(EM, text, members=2, catalog=one)
    single_recs = [one.family(f["id"]) for f in one.list_families()]

    def key(r):
        return (r["family"], r["point"], r["branch"], r["settings"], r["complete"], r["bifurcations"], r["members"])
    assert [r["family"] for r in atlas_recs].count("torus family") == 2
    assert [key(r) for r in atlas_recs] == [key(r) for r in single_recs]
    calls = {"n": 0}
    orig = solver.solve

    def counted(*a, **kw):
        calls["n"] += 1
        return orig(*a, **kw)
    monkeypatch.setattr(solver, "solve", counted)
    with Catalog(path) as cat:
        back = cr3bp.torus(EM, B, members=2, catalog=cat)
    assert calls["n"] == 0 and len(back.members) == 3


MANY = "; ".join(f"lissajous L1 ay={k}000km az=9000km" for k in range(1, 66))


@pytest.mark.parametrize("tori, kw, words", [
    ("", {}, ["one or more"]),
    (f"{A};", {}, ["one or more"]),
    ([], {}, ["one or more"]),
    (f"{A}; {A.replace('north', 'North')}", {}, ["repeats", A]),
    (f"{A}; {A.replace('amplitude=300km', 'amplitude=0.3e3km')}", {}, ["repeats", A]),   # by value
    (f"{A}; {A.replace('az=10000km', 'az=1e4km')}", {}, ["repeats", A]),                 # the orbit's, too
    (MANY, {}, ["65 requests", "at most 64"]),
    (f"{A}, {B}", {}, ["'quasi-halo' in the torus request is not KEY=VALUE"]),   # a comma is a space
    ("lissajous L4 ay=9000km az=9000km", {}, ["'L4'"]),
    ("quasi-halo around lyapunov L1 ax=5000km amplitude=300km", {}, ["'lyapunov L1 ax=5000km'", "halo"]),
    (A, {"members": 0}, ["members 0"]),
    (A, {"members": 501}, ["members 501"]),
    (A, {"hold": "colour"}, ["colour"]),
    (A, {"workers": 0}, ["workers 0"]),
    (A, {"scheduler": "somewhere"}, ["'somewhere'"]),
    (A, {"scheduler": "local:2", "workers": 2}, ["'local:2'", "--workers"]),
])
def test_api_refuses_before_any_work(monkeypatch, tori, kw, words):
    calls = []
    monkeypatch.setattr(tasks, "run_tasks", lambda *a, **k: calls.append(a))
    with pytest.raises(cr3bp.InputError) as e:
        cr3bp.torus_atlas(EM, tori, **kw)
    assert len(str(e.value).splitlines()) == 1
    for w in words:
        assert w in str(e.value)
    assert calls == []


@pytest.mark.parametrize("argv, words", [
    (["--atlas", ATLAS], ["--atlas needs --members"]),
    (["--atlas", ATLAS, "--members", "0"], ["--members 0"]),
    (["--atlas", f"{A}; {A}", "--members", "2"], ["repeats"]),
    (["--atlas", ";", "--members", "2"], ["one or more"]),
    (["--atlas", "lissajous L2 ay=-5km az=9000km", "--members", "2"], ["ay", "-5km"]),
    (["--atlas", ATLAS, "--members", "2", "--request", A], ["--request does not go with --atlas"]),
    (["--atlas", ATLAS, "--members", "2", "--export", "x.csv"], ["--export does not go with --atlas"]),
    (["--atlas", ATLAS, "--members", "2", "--workers", "0"], ["--workers 0"]),
    (["--atlas", ATLAS, "--members", "2", "--scheduler", "somewhere"], ["'somewhere'"]),
    (["--request", A, "--workers", "2"], ["--workers and --scheduler go with --atlas"]),
])
def test_cli_refuses_with_one_line_exit_2_and_writes_nothing(capsys, tmp_path, monkeypatch, argv, words):
    calls = []
    monkeypatch.setattr(tasks, "run_tasks", lambda *a, **k: calls.append(a))
    out_file = tmp_path / "atlas.json"
    rc, out, err = run(capsys, "torus", "--system", EM, *argv, "--out", out_file)
    assert rc == 2 and out == "" and len(err.strip().splitlines()) == 1, err
    for w in words:
        assert w in err
    assert not out_file.exists() and calls == []


@pytest.mark.slow
def test_local_dask_cluster_equals_serial(serial, capsys):
    pytest.importorskip("distributed")
    dask = cr3bp.torus_atlas(EM, [A, B], members=2, scheduler="local:2")
    assert _same_family(serial[0], dask[0]) and _same_family(serial[1], dask[1])
    rc, out, err = run(capsys, "torus", "--system", EM, "--atlas", ATLAS, "--members", "2", "--format", "json",
                       "--scheduler", "local:2")
    assert rc == 0, err
    rc1, out1, err1 = run(capsys, "torus", "--system", EM, "--atlas", ATLAS, "--members", "2", "--format", "json")
    assert out == out1 and "dask scheduler 'local:2'" in err


def test_a_family_that_cannot_be_computed_is_reported_and_nothing_is_stored(monkeypatch):
    """Here (one process) so the stand-in reaches the task: request B fails after A is done."""
    import cr3bp.api as api
    from cr3bp.errors import NoSolutionError
    real = api.torus

    def fake(system, request, **kw):
        if request == B:
            raise NoSolutionError(f"stand-in: '{request}' not reached")
        return real(system, request, **kw)
    monkeypatch.setattr(api, "torus", fake)
    cat = Catalog(":memory:")
    seen = []
    with pytest.raises(NoSolutionError, match="stand-in"):
        cr3bp.torus_atlas(EM, ATLAS, members=1, catalog=cat, progress=lambda d, n, r, f: seen.append((r, f is None)))
    assert seen == [(A, False), (B, True)]
    assert cat.list_families() == []
