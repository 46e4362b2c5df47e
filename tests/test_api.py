"""The public face ``import cr3bp`` (cr3bp/api.py): each stage's call gives the numbers the
``librate`` command gives for the same input (a seam test per stage: the command and the
call must not drift apart), bad input raises the typed exception, the docstring examples
run, and the main results show themselves in a notebook (repr, HTML table, plot, dict).

The reference here is the project's own command line; the numbers behind both are checked
against outside sources in the tests/test_against_*.py files.
"""

import doctest
import json
import math
import os
from pathlib import Path

import numpy as np
import pytest

import cr3bp
from cr3bp.errors import InputError, LibrateError, NoSolutionError
from librate_cli.main import main

ROOT = Path(__file__).resolve().parent.parent
EPOCH = "2031-03-01T00:00:00Z"
L1 = "lyapunov L1 jacobi=3.15"
L2 = "lyapunov L2 jacobi=3.15"


def cli_json(capsys, *argv):
    rc = main([str(a) for a in argv] + ["--format", "json"])
    out, err = capsys.readouterr()
    assert rc == 0, err
    return json.loads(out)


@pytest.fixture(scope="module")
def em():
    return cr3bp.system("earth-moon")


@pytest.fixture(scope="module")
def l1(em):
    return cr3bp.orbit(em, L1)


# ---- the seam: the call and the command agree -----------------------------------------------

def test_public_names_are_the_stages():
    assert set(cr3bp.STAGES) <= set(cr3bp.__all__)
    for name in cr3bp.STAGES:
        f = getattr(cr3bp, name)
        assert callable(f) and f.__module__ == "cr3bp.api", name
        doc = f.__doc__
        for part in ("Parameters", "Returns", "Raises", "Examples", "References"):
            assert f"\n    {part}\n    ---" in doc, f"{name}: no {part} section"


def test_system_and_points_match_the_cli(capsys, em):
    d = cli_json(capsys, "points", "--system", "earth-moon")
    assert d["mu"] == em.mu
    pts = cr3bp.points(em)
    for p, q in zip(pts, d["points"]):
        assert p.name == q["name"]
        assert [float(v) for v in p.position] == [q["x"], q["y"], q["z"]]
        assert p.jacobi == q["jacobi"]
    custom = cr3bp.system(mu=0.01, length_km=1000.0, time_s=100.0)
    assert custom.mu == 0.01 and custom.length_km == 1000.0


def test_orbit_matches_the_cli(capsys, em, l1):
    d = cli_json(capsys, "orbit", "--system", "earth-moon", "--family", "lyapunov", "--point", "L1",
                 "--jacobi", "3.15", "-q")
    assert d["state"] == [float(v) for v in l1.state]
    assert d["period"] == l1.period and d["jacobi"] == l1.jacobi
    kw = cr3bp.orbit(em, family="lyapunov", point="L1", jacobi=3.15)
    assert np.array_equal(kw.state, l1.state) and kw.period == l1.period
    given = cr3bp.orbit(em, state=l1.state, period=f"{l1.period!r}TU")
    assert given.family == "given" and np.array_equal(given.state, np.asarray(l1.state, float))


def test_family_matches_the_cli(capsys, em):
    d = cli_json(capsys, "family", "--system", "earth-moon", "--family", "lyapunov", "--point", "L1",
                 "--members", "6", "-q")
    fam = cr3bp.family(em, "lyapunov", point="L1", members=6)
    assert [m.jacobi for m in fam.members] == [m["jacobi"] for m in d["members"]]
    assert fam.stop_reason == d["stop_reason"]


def test_manifold_matches_the_cli(capsys, l1):
    d = cli_json(capsys, "manifold", "--system", "earth-moon", "--orbit", L1, "--unstable", "--points", "12",
                 "--until", "section:x=1-mu", "-q")["tube"]
    tube = cr3bp.manifold(l1, "unstable", points=12, until="section:x=1-mu")
    assert tube.n == d["n_trajectories"] == 12
    assert np.array_equal(tube.end_states, np.array([t["end_state"] for t in d["trajectories"]]))
    assert list(tube.status) == [t["status"] for t in d["trajectories"]]


def test_section_matches_the_cli(capsys, l1):
    d = cli_json(capsys, "section", "--system", "earth-moon", "--tube", f"{L1} unstable", "--section", "y=0",
                 "--points", "12", "-q")
    cut_cli = d["cuts"][0]
    # a tube grown to a time limit is grown again to the section, with the same departures
    tube = cr3bp.manifold(l1, "unstable", points=12, until="time:1TU")
    cut = cr3bp.section(tube, "y=0")
    assert cut.n_trajectories == cut_cli["n_trajectories"] == 12
    assert np.array_equal(cut.states, np.array(cut_cli["states"]))
    # a tube grown to the section gives its own cut, the same one
    again = cr3bp.section(cr3bp.manifold(l1, "unstable", points=12, until="section:y=0"), "y=0")
    assert np.array_equal(again.states, cut.states)


def test_connect_matches_the_cli(capsys, em, l1):
    d = cli_json(capsys, "connect", "--system", "earth-moon", "--from", L1, "--to", L2, "--points", "60",
                 "--candidates", "2", "-q")
    legs = cr3bp.connect(l1, L2, points=60, candidates=2)
    assert [g.dv_mps for g in legs] == [g["dv_mps"] for g in d["legs"]]
    assert [g.tof_days for g in legs] == [g["tof_days"] for g in d["legs"]]


def test_route_matches_the_cli(capsys, tmp_path, em):
    from graph_fixtures import node_list_text, perturbed_states
    _, st = perturbed_states(3)
    nodes = tmp_path / "nodes.toml"
    nodes.write_text(node_list_text(st, chain=False, all_pairs=True, tof="2d", patches=2))
    d = cli_json(capsys, "route", "--system", "earth-moon", "--nodes", nodes, "--no-catalog", "--workers", "1",
                 "--from", "p0", "--to", "p2", "--best", "2", "--no-stitch", "-q")
    routes = cr3bp.route(em, nodes, "p0", "p2", best=2)
    assert [r.dv_total_mps for r in routes] == [r["dv_total_mps"] for r in d["routes"]]
    assert [[str(n) for n in r.nodes] for r in routes] == [r["nodes"] for r in d["routes"]]
    with pytest.raises(NoSolutionError):
        cr3bp.route(em, nodes, "p0", "p2", max_dv="0.001m/s")


def _rows(path):
    return [ln for ln in Path(path).read_text().splitlines() if ln and not ln.startswith("#")]


def test_connect_arrival_within_matches_the_cli(capsys, em, l1):
    """arrival_within= gives the command's times to arrival (--arrival-within)."""
    d = cli_json(capsys, "connect", "--system", "earth-moon", "--from", L1, "--to", L2, "--points", "60",
                 "--candidates", "2", "--arrival-within", "5000km", "-q")
    legs = cr3bp.connect(l1, L2, points=60, candidates=2, arrival_within="5000km")
    assert [g.tof_arrival_days for g in legs] == [g["tof_arrival_days"] for g in d["legs"]]
    assert [g.arrival_distance_km for g in legs] == [g["arrival_distance_km"] for g in d["legs"]] == [5000.0] * 2
    legs, tubes, pmap = cr3bp.connect(l1, L2, points=60, candidates=2, full=True)
    assert [g.dv_mps for g in legs] == [g["dv_mps"] for g in d["legs"]] and len(tubes) == 2 and pmap is None


def test_departure_matches_the_cli(capsys, em):
    """api.departure is librate connect --path direct, number for number."""
    d = cli_json(capsys, "connect", "--system", "earth-moon", "--from", "parking earth 200km", "--to",
                 "halo L1 north az=10000km", "--path", "direct", "--inclination", "28.5deg", "-q")
    dep = cr3bp.api.departure("halo L1 north az=10000km", "parking earth 200km", inclination="28.5deg")
    leg = d["legs"][0]
    assert dep.dv_mps == leg["dv_mps"] and dep.tof_days == leg["tof_days"]
    assert [m["dv_mps"] for m in dep.to_dict()["maneuvers"]] == [m["dv_mps"] for m in leg["maneuvers"]]
    assert dep.inclination_deg == pytest.approx(28.5, abs=1e-9)


def test_graph_and_design_route_match_the_cli(capsys, tmp_path, em):
    """api.graph is librate graph build; api.design_route is librate route (ranked, Pareto,
    stitched), number for number."""
    from graph_fixtures import node_list_text, perturbed_states
    _, st = perturbed_states(3)
    nodes = tmp_path / "nodes.toml"
    nodes.write_text(node_list_text(st, chain=False, all_pairs=True, tof="2d", patches=2))
    g = cli_json(capsys, "graph", "build", "--system", "earth-moon", "--nodes", nodes, "--no-catalog", "--workers",
                 "1", "-q")
    built = cr3bp.api.graph(em, nodes, workers=1)
    assert [leg.summary().get("dv_mps") for leg in built.legs] == [leg.get("dv_mps") for leg in g["legs"]]
    assert built.computed == g["computed"] == 6
    d = cli_json(capsys, "route", "--system", "earth-moon", "--nodes", nodes, "--no-catalog", "--workers", "1",
                 "--from", "p0", "--to", "p2", "--best", "2", "--pareto", "-q")
    design = cr3bp.api.design_route(em, nodes, "p0", "p2", best=2, pareto=True, workers=1)
    assert [r.dv_total_mps for r in design.routes] == [r["dv_total_mps"] for r in d["routes"]]
    assert [r.dv_total_mps for r in design.pareto] == [r["dv_total_mps"] for r in d["pareto"]]
    assert design.stitched.dv_total_mps == d["stitched"]["dv_total_mps"]
    assert design.stitched.to_dict()["maneuvers"] == d["stitched"]["maneuvers"]


def test_refine_matches_the_cli(capsys, em):
    """api.refine is librate refine --orbit, number for number."""
    import warnings
    d = cli_json(capsys, "refine", "--system", "earth-moon", "--orbit", "halo L2 south period=6.5626d", "--epoch",
                 EPOCH, "--revs", "1", "--bodies", "sun,earth,moon", "-q")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        tr = cr3bp.api.refine("halo L2 south period=6.5626d", EPOCH, system=em, revs=1)
    assert tr.continuity_km == d["continuity_km"] and tr.iterations == d["iterations"]
    assert [r["max_path_offset_km"] for r in tr.per_rev] == [r["max_path_offset_km"] for r in d["per_revolution"]]


def test_export_matches_the_cli(capsys, tmp_path, l1):
    a, b = tmp_path / "api.csv", tmp_path / "cli.csv"
    rc = main(["export", "--system", "earth-moon", "--orbit", L1, "--epoch", EPOCH, "--span", "1d",
               "--step", "2h", "--center", "moon", "--out", str(b), "-q"])
    assert rc == 0, capsys.readouterr().err
    written = cr3bp.export(l1, a, epoch=EPOCH, span="1d", step="2h", center="moon")
    assert written == a
    assert _rows(a) == _rows(b) and len(_rows(a)) > 10
    assert "CAUTION" in a.read_text()


SCENARIO = """
[mission]
name = "api seam"
issued = "2026-12-01T00:00:00"

[system]
name = "earth-moon"
epoch = "2031-03-01T00:00:00Z"

[orbits.gate]
family = "lyapunov"
point = "L1"
jacobi = 3.17

[[exports]]
object = "gate"
format = "csv"
frame = "rotating"
span = "1periods"
step = "6h"
"""


def test_run_matches_the_cli(capsys, tmp_path):
    s = tmp_path / "s.toml"
    s.write_text(SCENARIO)
    cat = str(tmp_path / "cat.sqlite")
    assert main(["run", str(s), "--out", str(tmp_path / "cli"), "--catalog", cat, "--quiet"]) == 0
    capsys.readouterr()
    res = cr3bp.run(s, tmp_path / "api", catalog=cat)
    assert res.report.exists()
    for name in ("orbits.csv", "gate.csv"):
        assert (tmp_path / "api" / name).read_text() == (tmp_path / "cli" / name).read_text(), name
    with pytest.raises(InputError):            # every problem of a scenario, before anything is written
        bad = tmp_path / "bad.toml"
        bad.write_text(SCENARIO.replace("jacobi = 3.17", "jacobi = \"warm\""))
        cr3bp.run(bad, tmp_path / "never")
    assert not (tmp_path / "never").exists()


def test_torus_matches_the_cli(capsys, em):
    nrho = "halo L2 south resonance=9:2"
    d = cli_json(capsys, "torus", "--system", "earth-moon", "--around", nrho, "--amplitude", "1000km", "-q")
    t = cr3bp.torus(cr3bp.orbit(em, nrho), "1000km")
    from cr3bp.io.plain import json_default
    mine = json.loads(json.dumps(t.to_dict(), default=json_default))
    assert mine["circle"] == d["circle"] and mine["rotation_deg"] == d["rotation_deg"]
    assert mine["jacobi"] == d["jacobi"]


def test_shadow_matches_the_cli(capsys, l1):
    d = cli_json(capsys, "shadow", "--system", "earth-moon", "--orbit", L1, "--epoch", EPOCH, "--span", "30d",
                 "--step", "10min", "-q")
    h = cr3bp.shadow(l1, EPOCH, span="30d", step="10min")
    assert [p.to_dict() for p in h.passes] == d["passes"]


def test_shadow_phase_scan_matches_the_cli(capsys, l1):
    """``avoid_eclipses`` gives the CLI's ``--avoid-eclipses`` scan: the same phases in the same
    order (best first) with the same shadow totals, and the best phase's passes."""
    d = cli_json(capsys, "shadow", "--system", "earth-moon", "--orbit", L1, "--epoch", EPOCH, "--span", "180d",
                 "--step", "30min", "--avoid-eclipses", "--phases", "4", "--max-eclipse", "100min", "-q")
    scan = cr3bp.shadow(l1, EPOCH, span="180d", step="30min", avoid_eclipses=True, phases=4, max_eclipse="100min")
    assert [h.phase_deg for h in scan] == [r["phase_deg"] for r in d["phase_scan"]]
    assert [h.total_min() for h in scan] == [r["shadow_total_min"] for r in d["phase_scan"]]
    assert [h.longest_min() for h in scan] == [r["longest_shadow_min"] for r in d["phase_scan"]]
    assert scan[0].phase_deg == d["model"]["phase_deg"]
    assert [p.to_dict() for p in scan[0].passes] == d["passes"]
    assert len(scan) == 4 and all(h.passes for h in scan)       # a scan with shadows to rank


def test_shadow_report_matches_the_cli(capsys, l1):
    """``report=True`` is what ``librate shadow`` prints: the epoch scan, the passes of the best
    start, the Earth angles."""
    d = cli_json(capsys, "shadow", "--system", "earth-moon", "--orbit", L1, "--epoch", EPOCH, "--span", "10d",
                 "--until-epoch", "2031-04-01T00:00:00Z", "--epochs", "3", "-q")
    rep = cr3bp.shadow(l1, EPOCH, span="10d", until_epoch="2031-04-01T00:00:00Z", epochs=3, report=True)
    assert rep.epochs_scanned == 3 and len(rep.epoch_scan) == 3
    assert _plain([c.to_dict() for c in rep.epoch_scan]) == d["epoch_scan"]
    assert _plain([p.to_dict() for p in rep.best.passes]) == d["passes"]
    assert rep.best.phase_deg == d["model"]["phase_deg"]
    assert "eclipse passes" in repr(rep) and "\n" not in repr(rep)


def test_keep_matches_the_cli(capsys, em):
    nrho = "halo L2 south resonance=9:2"
    d = cli_json(capsys, "keep", "--system", "earth-moon", "--orbit", nrho, "--epoch", EPOCH, "--span", "20d",
                 "--trials", "2", "--bodies", "sun,earth", "--workers", "1", "--seed", "3", "-q")
    b = cr3bp.keep(cr3bp.orbit(em, nrho), EPOCH, span="20d", trials=2, bodies=("sun", "earth"), seed=3, workers=1)
    assert b.to_dict()["dv_per_year_mps"] == d["dv_per_year_mps"]


def _plain(d):
    from cr3bp.io.plain import json_default
    return json.loads(json.dumps(d, default=json_default))


def test_torus_request_text_matches_the_cli(capsys):
    """``cr3bp.torus(system, TEXT)`` is ``librate torus --request TEXT`` (and the Lissajous
    options of the command give the same torus)."""
    text = "lissajous L2 ay=300000km az=150000km"
    d = cli_json(capsys, "torus", "--system", "sun-earth", "--request", text, "-q")
    t = cr3bp.torus("sun-earth", text)
    mine = _plain(t.to_dict())
    assert mine["circle"] == d["circle"] and mine["rotation_deg"] == d["rotation_deg"]
    assert mine["jacobi"] == d["jacobi"] and mine["stroboscopic_time"] == d["stroboscopic_time"]
    t2 = cr3bp.torus(lissajous=("sun-earth", "L2", "300000km", "150000km"))
    assert _plain(t2.to_dict())["circle"] == d["circle"]


def test_disperse_matches_the_cli(capsys, l1):
    d = cli_json(capsys, "disperse", "--system", "earth-moon", "--orbit", L1, "--coast", "3d", "--burn", "10m/s",
                 "--corrections", "1d", "--trials", "40", "--seed", "5", "-q")
    r = cr3bp.disperse(l1, coast="3d", burn="10m/s", corrections=["1d"], trials=40, seed=5)
    assert _plain(r.summary()) == d["summary"]
    assert _plain(r.nominal.to_dict()) == d["nominal"]


def test_propagate_state_matches_the_cli(capsys, em):
    state = [0.8234, 0, 0.0224, 0, 0.1343, 0]
    d = cli_json(capsys, "propagate", "--system", "earth-moon", "--state", ",".join(map(str, state)), "--time",
                 "12d", "--stm", "-q")
    p = cr3bp.propagate_state(em, state, "12d", stm=True)
    mine = _plain(p.to_dict())
    for key in ("final_state", "t_final", "jacobi_initial", "jacobi_final", "stm", "status", "steps"):
        assert mine[key] == d[key], key
    d = cli_json(capsys, "propagate", "--system", "earth-moon", "--state", ",".join(map(str, state)), "--time",
                 "3d", "--model", "bicircular", "--sun-phase", "45deg", "--step", "1d", "-q")
    p = cr3bp.propagate_state(em, state, "3d", model="bicircular", sun_phase="45deg", step="1d")
    mine = _plain(p.to_dict())
    assert mine["final_state"] == d["final_state"] and mine["hamiltonian_final"] == d["hamiltonian_final"]
    assert len(p.rows()) == 4                              # 0, 1, 2, 3 d


def test_zvc_matches_the_cli(capsys, em):
    d = cli_json(capsys, "zvc", "--system", "earth-moon", "--above", "L1", "--dv", "20m/s", "-q")
    lv = cr3bp.zvc(em, above="L1", dv="20m/s")
    mine = _plain(lv.to_dict())
    for key in ("jacobi", "level", "necks_open", "realms", "points", "forbidden_region_vanishes"):
        assert mine[key] == d[key], key
    lv = cr3bp.zvc(em, 3.17, region=True, resolution=61)
    assert lv.region.to_dict()["resolution"] == [61, 61] and lv.region.curves


def test_catalog_calls_match_the_cli(capsys, tmp_path):
    path = tmp_path / "cat.sqlite"
    main(["family", "--system", "earth-moon", "--family", "lyapunov", "--point", "L1", "--members", "3",
          "--catalog", str(path), "-q"])
    capsys.readouterr()
    d = cli_json(capsys, "catalog", "list", "--catalog", path, "-q")
    assert cr3bp.catalog_list(path) == d["families"]
    d = cli_json(capsys, "catalog", "show", "1", "--catalog", path, "-q")
    d.pop("caution")                                       # the command's footer
    assert _plain(cr3bp.catalog_show(1, path)) == d
    assert cr3bp.catalog_remove(1, path) == 1 and cr3bp.catalog_list(path) == []
    with pytest.raises(InputError, match="no family with id 1"):
        cr3bp.catalog_show(1, path)


def test_read_trajectory_reads_what_the_commands_write(capsys, tmp_path):
    """The file ``librate export`` writes, read by the call, has the states ``librate convert``
    writes from it (same frame: the numbers pass through unchanged to the file's precision)."""
    oem, csv = tmp_path / "a.oem", tmp_path / "b.csv"
    assert main(["export", "--system", "earth-moon", "--state", "1.1805031,0,-0.02,0,-0.1581343,0", "--epoch",
                 EPOCH, "--span", "1d", "--step", "6h", "--out", str(oem), "-q"]) == 0
    assert main(["convert", str(oem), str(csv), "-q"]) == 0
    capsys.readouterr()
    a, b = cr3bp.read_trajectory(oem), cr3bp.read_trajectory(csv)
    assert a.format == "oem" and b.format == "csv" and len(a.segments[0].epochs) == 5
    import numpy as np
    np.testing.assert_allclose(a.segments[0].states, b.segments[0].states, rtol=1e-12, atol=1e-9)
    assert a.frame.system.name == "earth-moon"


# ---- bad input: the typed exception, one line naming the value --------------------------------

BAD = [
    (lambda em, o: cr3bp.system("earth-mars"), "earth-mars"),
    (lambda em, o: cr3bp.system(mu=0.7), "0.7"),
    (lambda em, o: cr3bp.system("earth-moon", mu=0.01), "not both"),
    (lambda em, o: cr3bp.points(42), "42"),
    (lambda em, o: cr3bp.orbit(em, "halo L2 sideways period=6d"), "sideways"),
    (lambda em, o: cr3bp.orbit(em, family="halo", point="L2", branch="south", period="6 parsecs"), "parsecs"),
    (lambda em, o: cr3bp.orbit(em, "halo L2 south"), "no target"),
    (lambda em, o: cr3bp.orbit(em, state=[1, 2, 3], period=1.0), "six"),
    (lambda em, o: cr3bp.family(em, "lyapunov", point="L1", members=1), "members 1"),
    (lambda em, o: cr3bp.family(em, "lyapunov", point="L1", until="mass=3"), "mass"),
    (lambda em, o: cr3bp.manifold(o, "sideways"), "sideways"),
    (lambda em, o: cr3bp.manifold(o, "unstable", points=1), "1"),
    (lambda em, o: cr3bp.manifold(o, "unstable", until="section:q=3"), "q=3"),
    (lambda em, o: cr3bp.section(42, "x=1-mu"), "int"),
    (lambda em, o: cr3bp.section(o, "x=1-mu"), "stability="),
    (lambda em, o: cr3bp.connect("parking earth 200km", "parking moon 100km", system=em), "both ends"),
    (lambda em, o: cr3bp.connect(o, "parking moon -5km"), "-5km"),
    (lambda em, o: cr3bp.route(em, ROOT / "examples" / "cislunar_nodes.toml", "leo", "leo"), "same node"),
    (lambda em, o: cr3bp.export(o, "x.oem", epoch=EPOCH, span="1d", step="1h", frame="rotating"), "inertial"),
    (lambda em, o: cr3bp.export(o, "x.csv", epoch="2031-02-30", span="1d", step="1h"), "2031-02-30"),
    (lambda em, o: cr3bp.run(ROOT / "no-such.toml", "out"), "no-such.toml"),
    (lambda em, o: cr3bp.torus(o, "-3km"), "-3km"),
    (lambda em, o: cr3bp.torus(), "give an orbit"),
    (lambda em, o: cr3bp.shadow(o, EPOCH, step="1s"), "1s"),
    (lambda em, o: cr3bp.shadow(o, "1850-01-01T00:00:00Z", span="1d"), "1850"),
    (lambda em, o: cr3bp.shadow(o, EPOCH, span="1d", max_eclipse="30min"), "max_eclipse"),
    (lambda em, o: cr3bp.shadow(o, EPOCH, span="1d", until_epoch="2030-01-01T00:00:00Z"), "2030-01-01"),
    (lambda em, o: cr3bp.shadow(o, EPOCH, span="1d", until_epoch="2031-04-01T00:00:00Z", epochs=1), "epochs 1"),
    (lambda em, o: cr3bp.shadow(o, EPOCH, span="1d", avoid_eclipses=True, phases=0), "phases 0"),
    (lambda em, o: cr3bp.shadow(o, EPOCH, span="1d", avoid_eclipses=True, max_eclipse="-3min"), "-3min"),
    (lambda em, o: cr3bp.keep(o, EPOCH, trials=0), "trials 0"),
    (lambda em, o: cr3bp.keep(o, EPOCH, policy="sideways"), "sideways"),
    (lambda em, o: cr3bp.keep(o, EPOCH, nav_error=(1.0, -2.0)), "nav_error"),
    (lambda em, o: cr3bp.keep(o, EPOCH, srp=(0.01, 7.0)), "srp"),
    (lambda em, o: cr3bp.torus(em, "lissajous L3 ay=3000km az=2000km"), "L3"),
    (lambda em, o: cr3bp.torus(em, "3000km", around="halo L2"), "branch"),
    (lambda em, o: cr3bp.torus(em, "200000km", around="lyapunov L1 jacobi=3.15"), "200000km"),
    (lambda em, o: cr3bp.disperse(o), "coast"),
    (lambda em, o: cr3bp.disperse(o, coast="2d", corrections=["3d"]), "corrections"),
    (lambda em, o: cr3bp.disperse(o, coast="2d", trials=0), "trials 0"),
    (lambda em, o: cr3bp.propagate_state(em, [1, 2], "1d"), "2 values"),
    (lambda em, o: cr3bp.propagate_state(em, [0.8, 0, 0, 0, 0.1, 0], "1d", rtol=1), "rtol"),
    (lambda em, o: cr3bp.propagate_state(em, [0.8, 0, 0, 0, 0.1, 0], "1d", model="nbody"), "nbody"),
    (lambda em, o: cr3bp.propagate_state(em, [0.8, 0, 0, 0, 0.1, 0], "1d", model="bicircular",
                                         sun_phase="45"), "45"),
    (lambda em, o: cr3bp.zvc(em), "give jacobi"),
    (lambda em, o: cr3bp.zvc(em, "abc"), "abc"),
    (lambda em, o: cr3bp.zvc(em, above="L9"), "L9"),
    (lambda em, o: cr3bp.zvc(em, 3.1, region=True, resolution=3), "resolution 3"),
    (lambda em, o: cr3bp.zvc(em, 3.1, extent="1,2"), "extent"),
    (lambda em, o: cr3bp.catalog_show("x", "cat.sqlite"), "'x'"),
    (lambda em, o: cr3bp.read_trajectory("no-such.oem"), "no-such.oem"),
]


@pytest.mark.parametrize("call,named", BAD, ids=[f"bad{i}" for i in range(len(BAD))])
def test_bad_input_raises_the_typed_error(call, named, em, l1, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    with pytest.raises(InputError) as e:
        call(em, l1)
    msg = str(e.value)
    assert named in msg and "\n" not in msg
    assert isinstance(e.value, LibrateError) and e.value.exit_status == 2
    assert list(tmp_path.iterdir()) == []                 # nothing written


# ---- notebook display ---------------------------------------------------------------------------

def test_results_show_themselves(em, l1):
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    fam = cr3bp.family(em, "lyapunov", point="L1", members=5)
    tube = cr3bp.manifold(l1, "unstable", points=6, until="time:1TU")
    from cr3bp.transfers.search import Route
    route = Route(("a", "b", "c"), (("a", "b", 0), ("b", "c", 0)), 150.0, 12.0,
                  edge_data=({"dv_mps": 100.0, "tof_days": 5.0}, {"dv_mps": 50.0, "tof_days": 7.0}))
    for obj, words in ((l1, ["lyapunov L1", "C = 3.150000", "CR3BP"]), (fam, ["5 members", "CR3BP"]),
                       (tube, ["6 trajectories", "CR3BP"]), (route, ["a -> b -> c", "150", "CR3BP"])):
        r = repr(obj)
        assert "\n" not in r and all(w in r for w in words), r
        h = obj._repr_html_()
        assert h.startswith("<table>") and "Preliminary CR3BP design" in h
        assert isinstance(obj.to_dict(), dict)
        fig, ax = plt.subplots()
        assert obj.plot(ax=ax) is ax                      # Axes in, Axes out
        assert ax.lines or ax.collections
        assert any("Preliminary" in t.get_text() for t in fig.texts)
        plt.close(fig)
        ax = obj.plot()                                   # a new figure when none is given
        assert ax.figure is not None
        plt.close(ax.figure)
    if _has_pandas():
        assert len(fam.to_dataframe()) == 5 and len(tube.to_dataframe()) == 6


def test_new_results_show_themselves(em):
    """The propagation and the energy level: one-line repr naming the model, a table with the
    caution, plot(ax) returning that Axes with the caution under the figure."""
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    p = cr3bp.propagate_state(em, [0.8234, 0, 0.0224, 0, 0.1343, 0], "2d")
    lv = cr3bp.zvc(em, 3.17)
    for obj, words in ((p, ["earth-moon", "Jacobi drift", "CR3BP"]), (lv, ["C = 3.17", "L1, L2", "CR3BP"])):
        r = repr(obj)
        assert "\n" not in r and all(w in r for w in words), r
        assert obj._repr_html_().startswith("<table>") and "Preliminary CR3BP design" in obj._repr_html_()
        fig, ax = plt.subplots()
        assert obj.plot(ax=ax) is ax
        assert ax.lines or ax.collections
        assert any("Preliminary" in t.get_text() for t in fig.texts)
        plt.close("all")


def _has_pandas():
    try:
        import pandas  # noqa: F401
    except ImportError:
        return False
    return True


def test_docstring_examples_run(monkeypatch):
    """Every example in the public calls' docstrings runs and prints what it shows."""
    import cr3bp.api as api
    monkeypatch.chdir(ROOT)
    res = doctest.testmod(api, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    assert res.attempted > 30 and res.failed == 0


def test_nan_free_repr_of_a_custom_system():
    """A custom system without units: repr and table say TU only, no 'nan d'."""
    s = cr3bp.system(mu=0.0121505856)
    o = cr3bp.orbit(s, "lyapunov L1 jacobi=3.15")
    assert " d," not in repr(o) and "nan" not in repr(o)
    assert math.isfinite(o.period)
    assert os.sep not in repr(o)


def test_to_dataframe_hands_the_table_to_pandas(em, l1, monkeypatch):
    """pandas is optional (not installed by the extras): the rows handed to pandas.DataFrame are
    checked with a stand-in module recording them; without pandas the call raises ImportError."""
    import sys
    import types
    seen = []
    fake = types.ModuleType("pandas")
    fake.DataFrame = lambda rows: seen.append(rows) or rows
    monkeypatch.setitem(sys.modules, "pandas", fake)
    fam = cr3bp.family(em, "lyapunov", point="L1", members=3)
    tube = cr3bp.manifold(l1, "unstable", points=4, until="time:0.5TU")
    assert [r["jacobi"] for r in fam.to_dataframe()] == [m.jacobi for m in fam.members]
    assert [r["end_state"] for r in tube.to_dataframe()] == tube.end_states.tolist()
    assert l1.to_dataframe()[0]["period"] == l1.period
    monkeypatch.setitem(sys.modules, "pandas", None)
    with pytest.raises(ImportError):
        fam.to_dataframe()
