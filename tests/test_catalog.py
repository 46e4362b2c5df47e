"""The SQLite catalogue: round trips, idempotence, resume, and two writers at once."""

import multiprocessing as mp

import pytest

from cr3bp import system
from cr3bp.catalog import Catalog
from cr3bp.errors import InputError


def _member(i):
    return {"index": i, "state": [0.8 + i * 1e-3, 0, 0, 0, 0.1, 0], "period": 2.7 + i, "jacobi": 3.1}


def test_round_trip_and_idempotent_members(tmp_path):
    em = system("earth-moon")
    cat = Catalog(tmp_path / "c.sqlite")
    fid = cat.begin_family(em, "halo", "L2", "south", {"step": 1e-3})
    assert cat.begin_family(em, "halo", "L2", "south", {"step": 1e-3}) == fid
    assert cat.begin_family(em, "halo", "L2", "south", {"step": 2e-3}) != fid
    cat.add_members(fid, [_member(0), _member(1)])
    cat.add_members(fid, [_member(1), _member(2)])       # re-adding a member does not duplicate it
    fam = cat.load_family(em, "halo", "L2", "south", {"step": 1e-3})
    assert [m["index"] for m in fam["members"]] == [0, 1, 2]
    assert fam["complete"] is False
    cat.finish_family(fid, [{"type": "fold", "index": 1}], complete=True)
    fam = cat.load_family(em, "halo", "L2", "south")
    assert fam["complete"] and fam["bifurcations"][0]["type"] == "fold"
    assert cat.load_family(em, "halo", "L1", "south") is None
    assert cat.load_family(system(mu=em.mu), "halo", "L2", "south") is None  # other system name


def test_resume_keeps_members_across_connections(tmp_path):
    em = system("earth-moon")
    path = tmp_path / "c.sqlite"
    c1 = Catalog(path)
    fid = c1.begin_family(em, "lyapunov", "L1", "", {})
    c1.add_members(fid, [_member(i) for i in range(5)])
    c1.close()                                             # "interrupted"
    c2 = Catalog(path)
    assert len(c2.load_family(em, "lyapunov", "L1", "")["members"]) == 5
    assert c2.begin_family(em, "lyapunov", "L1", "", {}) == fid


def _writer(path, start):
    em = system("earth-moon")
    cat = Catalog(path)
    fid = cat.begin_family(em, "dro", "", "", {})
    for i in range(start, start + 40):
        cat.add_members(fid, [_member(i)])


def test_two_processes_write_at_once(tmp_path):
    path = str(tmp_path / "c.sqlite")
    Catalog(path).close()
    ctx = mp.get_context("spawn")
    procs = [ctx.Process(target=_writer, args=(path, s)) for s in (0, 40)]
    for p in procs:
        p.start()
    for p in procs:
        p.join(60)
        assert p.exitcode == 0
    fam = Catalog(path).load_family(system("earth-moon"), "dro", "", "")
    assert [m["index"] for m in fam["members"]] == list(range(80))


def test_bad_paths(tmp_path):
    with pytest.raises(InputError, match="folder"):
        Catalog(tmp_path)
    bad = tmp_path / "junk.sqlite"
    bad.write_bytes(b"this is not a database at all" * 100)
    with pytest.raises(InputError, match="not a librate catalogue"):
        Catalog(bad)


def test_a_family_of_an_older_recipe_is_grown_again_not_reused(tmp_path):
    """A request reuses only families grown by the current recipes (request.RECIPE): an
    older family (here a made-up complete one of recipe 1, whose single member would answer
    nothing) is left in place and the family is grown and stored anew."""
    from cr3bp.orbits.request import RECIPE, solve_request
    em = system("earth-moon")
    with Catalog(tmp_path / "c.sqlite") as cat:
        old = cat.begin_family(em, "halo", "L2", "south", {"recipe": RECIPE - 1})
        cat.add_members(old, [_member(0)])
        cat.finish_family(old, [], complete=True)
        o = solve_request(em, "halo L2 south period=6.5626d", catalog=cat)
        assert o.period_days == pytest.approx(6.5626, abs=1e-9)
        fams = cat.list_families()
        assert len(fams) == 2 and fams[1]["members"] > 50
        assert cat.load_family(em, "halo", "L2", "south")["settings"]["recipe"] == RECIPE
