"""Tori in the catalogue (a second request is read back, an interrupted family resumes), the
far end of a torus family, and the solver's cheap damping.

Outside references: the Lissajous tori at a fixed Jacobi constant about a collinear point run
from the planar Lyapunov orbit (vertical amplitude zero) to the vertical Lyapunov orbit
(in-plane amplitude zero) (Gómez & Mondelo, "The dynamics around the collinear equilibrium
points of the RTBP", Physica D 157, 2001, §4, the Lissajous tori between the two families of
periodic orbits on an energy level); pseudo-arclength continuation through the vertical end
retraces the same tori (there the largest |y| over the torus reaches about zero: checked here
as below 1% of the start's). The resumed family equals the uninterrupted one bit for bit
(its numbers are a deterministic function of the stored state; common practice for a
restartable computation).
"""

import functools

import numpy as np
import pytest

from cr3bp import system
from cr3bp.catalog import Catalog
from cr3bp.orbits.request import solve_request
from cr3bp.tori import continue_family, solver, torus_around
from cr3bp.tori import store as tstore
from cr3bp.tori.family import FAR_END


@functools.lru_cache(maxsize=None)
def start():
    em = system("earth-moon")
    o = solve_request(em, "lyapunov L1 ax=2000km")
    return em, torus_around(o, 300.0 / em.length_km)


def _same(a, b):
    return (np.array_equal(a.circle, b.circle) and a.stroboscopic_time == b.stroboscopic_time
            and a.rotation == b.rotation and a.jacobi == b.jacobi
            and a.invariance_error == b.invariance_error and a.extent_lu == b.extent_lu
            and a.stability == b.stability)


def _count_solves(monkeypatch):
    calls = {"n": 0}
    orig = solver.solve

    def counted(*a, **kw):
        calls["n"] += 1
        return orig(*a, **kw)
    monkeypatch.setattr(solver, "solve", counted)
    return calls


def test_resumed_family_equals_the_uninterrupted_one(monkeypatch):
    em, t0 = start()
    full = continue_family(t0, "jacobi", members=5, max_step=0.05)
    cat = Catalog(":memory:")
    first = continue_family(t0, "jacobi", members=2, max_step=0.05, catalog=cat)  # "interrupted"
    assert len(first.members) == 3
    calls = _count_solves(monkeypatch)
    resumed = continue_family(t0, "jacobi", members=5, max_step=0.05, catalog=cat)
    assert len(resumed.members) == len(full.members) == 6
    assert all(_same(a, b) for a, b in zip(full.members, resumed.members))
    assert 3 <= calls["n"] <= 3 * 4          # three new members solved, not five
    calls["n"] = 0
    again = continue_family(t0, "jacobi", members=5, max_step=0.05, catalog=cat)
    assert calls["n"] == 0                    # all read back
    assert all(_same(a, b) for a, b in zip(full.members, again.members))
    # other settings are another family
    other = tstore.FamilyStore(cat, t0, {"hold": "jacobi", "step": 0.02, "min_step": 1e-4,
                                         "max_step": 0.1, "direction": 1})
    assert other.load() == ([], [], None)


def test_second_torus_request_is_read_from_the_catalogue(monkeypatch, tmp_path):
    from cr3bp.tori.request import solve
    em = system("earth-moon")
    path = tmp_path / "cat.sqlite"
    text = "quasi-halo around halo L2 south resonance=9:2 amplitude=300km"
    with Catalog(path) as cat:
        a = solve(em, text, catalog=cat)
    calls = _count_solves(monkeypatch)
    with Catalog(path) as cat:       # a new process would open the file the same way
        b = solve(em, text, catalog=cat)
    assert calls["n"] == 0
    assert _same(a, b) and b.family == "quasi-halo" and b.around == a.around


def test_family_at_fixed_energy_stops_at_its_vertical_end():
    em, t0 = start()
    fam = continue_family(t0, "jacobi", members=40)
    assert fam.stop == FAR_END
    ay = [m.extent_lu["y"][1] for m in fam.members]
    # the last member is near the vertical Lyapunov orbit: in-plane amplitude about zero
    assert ay[-1] < 0.5 * ay[0] and min(ay) == ay[-1]
    assert all(m.invariance_error < m.invariance_tolerance for m in fam.members)


def test_records_round_trip_bit_for_bit():
    em, t0 = start()
    import json
    back = tstore.from_record(em, json.loads(json.dumps(tstore.record(t0))))
    assert _same(t0, back) and back.holds == t0.holds and back.extra == t0.extra


@pytest.mark.parametrize("bad", [{"hold": "energy"}])
def test_family_with_catalog_still_refuses_bad_settings(bad):
    from cr3bp.errors import InputError
    em, t0 = start()
    with pytest.raises(InputError):
        continue_family(t0, bad["hold"], members=2, catalog=Catalog(":memory:"))


def test_cli_family_with_catalog_resumes_and_reads_back(capsys, tmp_path, monkeypatch):
    """``librate torus ... --members N --catalog FILE``: a run for 1 member, then one for 3
    members (resumed: the start torus and member 1 are read back, two members solved), then
    the 3 again with the solver refused (all read back), each equal to the uninterrupted run."""
    import json

    from librate_cli.main import main
    cat = str(tmp_path / "cat.sqlite")
    base = ["torus", "--system", "earth-moon", "--around", "lyapunov L1 ax=2000km",
            "--amplitude", "300km", "--format", "json", "-q"]

    def run(*extra):
        rc = main(base + list(extra))
        out = capsys.readouterr()
        assert rc == 0, out.err
        return json.loads(out.out)
    whole = run("--members", "3")
    run("--members", "1", "--catalog", cat)
    calls = _count_solves(monkeypatch)
    resumed = run("--members", "3", "--catalog", cat)
    assert 2 <= calls["n"] <= 2 * 4
    assert resumed["members"] == whole["members"]

    def refuse(*a, **kw):
        raise AssertionError("solved again instead of read from the catalogue")
    monkeypatch.setattr(solver, "solve", refuse)
    assert run("--members", "3", "--catalog", cat)["members"] == whole["members"]


def test_api_torus_with_catalog_reads_back(monkeypatch):
    import cr3bp
    em = system("earth-moon")
    o = solve_request(em, "lyapunov L1 ax=2000km")
    cat = Catalog(":memory:")
    a = cr3bp.torus(o, "300km", members=1, catalog=cat)
    calls = _count_solves(monkeypatch)
    b = cr3bp.torus(o, "300km", members=1, catalog=cat)
    assert calls["n"] == 0
    assert all(_same(x, y) for x, y in zip(a.members, b.members)) and len(b.members) == 2
