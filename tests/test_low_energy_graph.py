"""Low-energy legs everywhere a departure is (issue 15): a node-list edge ``path = "low-energy"``
from an Earth parking orbit to an Earth-Moon orbit makes the graph's parking leg a low-energy
transfer designed in the bicircular model (cr3bp.transfers.low_energy); it goes through the
catalogue and the route search unchanged, its record names its model, and the route of that one
leg is reported in the bicircular model, not re-solved in the CR3BP (the design -> graph ->
route seam).

Outside checks: every coast of the leg, read back from the catalogue, is re-propagated by
scipy's DOP853 (Hairer, Nørsett & Wanner, *Solving ODE I*, 2nd ed., 1993, section II.10) on the
bicircular equations written out in the form of Simó, Gómez, Jorba & Masdemont (1995) in
tests/test_against_parker_anderson_low_energy.py, and must land on the next patch point within
the design's closure tolerance; the published order of the numbers (Parker & Anderson,
*Low-Energy Lunar Trajectory Design*, 2013, ch. 3, from memory) holds.
"""

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from cr3bp import system
from cr3bp.errors import InputError
from cr3bp.io.toml_schema import ScenarioError
from cr3bp.transfers import low_energy as le
from cr3bp.transfers.graph import build_graph, plan
from cr3bp.transfers.leg import Leg
from cr3bp.transfers.nodes import parse_nodes

from test_against_parker_anderson_low_energy import _simo_args, simo_rhs

EM = system("earth-moon")
NODES = '''system = "earth-moon"
[[node]]
name = "leo"
kind = "parking"
body = "earth"
altitude = "200km"
[[node]]
name = "relay"
kind = "orbit"
orbit = "halo L2 south resonance=9:2"
[[edge]]
from = "leo"
to = "relay"
path = "low-energy"
'''


def _tasks(text):
    tasks, pruned = plan(EM, parse_nodes(text, EM))
    return {(t["from"]["name"], t["to"]["name"]): t for t in tasks}, pruned


def test_the_edge_makes_a_low_energy_task_and_the_return_is_pruned():
    tasks, pruned = _tasks(NODES)
    t = tasks[("leo", "relay")]
    assert t["method"] == "parking" and t["settings"]["path"] == "low-energy"
    assert t["settings"]["launch_tdb_s"] is None
    assert ("relay", "leo") not in tasks
    assert any("low-energy leg leaves an Earth parking orbit" in p["reason"] for p in pruned)
    # without the path the same pair keeps its old task (and its old catalogue key)
    plain, _ = _tasks(NODES.replace('path = "low-energy"\n', ""))
    assert "path" not in plain[("leo", "relay")]["settings"]
    assert plain[("leo", "relay")]["key"] != t["key"]


def test_a_launch_date_reaches_the_task():
    from cr3bp.time.frames import epoch_from_text
    tasks, _ = _tasks(NODES + 'launch = "2027-03-01T00:00:00Z"\n')
    assert tasks[("leo", "relay")]["settings"]["launch_tdb_s"] == pytest.approx(
        epoch_from_text("2027-03-01T00:00:00Z"), abs=1e-6)


@pytest.mark.parametrize("text, words", [
    (NODES.replace('from = "leo"\nto = "relay"', 'from = "relay"\nto = "leo"'), "leaves an Earth parking orbit"),
    (NODES.replace('path = "low-energy"', 'path = "fast"'), "path"),
    (NODES.replace('path = "low-energy"', 'launch = "2027-03-01T00:00:00Z"'), "'launch' goes with path"),
    (NODES + 'launch = "1500-01-01T00:00:00Z"\n', "launch"),
    (NODES + 'launch = "soon"\n', "launch"),
])
def test_bad_low_energy_edges_are_refused_before_any_work(text, words):
    with pytest.raises((ScenarioError, InputError)) as e:
        parse_nodes(text, EM)
    assert words in str(e.value)


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    """One low-energy leg built into a catalogue, then built again from it (four Sun phases in
    the sweep instead of 24: the same search, quicker)."""
    from cr3bp.catalog import Catalog
    mp = pytest.MonkeyPatch()
    mp.setattr(le, "SWEEP_SUN_PHASES", 4)
    path = tmp_path_factory.mktemp("le-graph") / "cat.sqlite"
    nodes = parse_nodes(NODES, EM)
    seen = []
    try:
        with Catalog(path) as cat:
            first = build_graph(EM, nodes, workers=1, catalog=cat, progress=lambda d, n, leg: seen.append(leg))
        with Catalog(path) as cat:
            again = build_graph(EM, nodes, workers=1, catalog=cat)
    finally:
        mp.undo()
    return nodes, first, again, seen, path


def _leg(build):
    (leg,) = [lg for lg in build.legs if lg.ok and lg.origin == "leo"]
    return leg


def test_the_graph_leg_is_a_low_energy_transfer_of_the_published_order(built):
    _, first, _, seen, _ = built
    leg = _leg(first)
    assert leg.details["model"] == "bicircular" and leg.kind == "departure" and leg.solver == "parking"
    assert [m.where for m in leg.maneuvers] == ["departure", "arrival"]
    assert [m.name for m in leg.maneuvers] == ["departure", "insertion"]
    assert 3100.0 <= leg.maneuvers[0].dv_mps <= 3200.0          # Parker & Anderson 2013 (from memory)
    assert leg.maneuvers[1].dv_mps <= 50.0                       # tens of m/s or less
    assert 70.0 <= leg.tof_days <= 130.0
    assert leg.details["low_energy"]["model"] == "bicircular (Sun–Earth–Moon)"
    assert [lg.origin for lg in seen] == [leg.origin]            # progress told of the leg
    assert first.graph.has_edge(leg.from_id, leg.to_id)


def test_the_catalogue_gives_the_same_leg_back_without_computing(built):
    _, first, again, _, _ = built
    assert again.computed == 0 and again.cached == first.computed == 1
    a, b = _leg(first), _leg(again)
    assert a.record() == b.record()
    assert b.model_of() == a.model_of() is not None


def test_each_coast_of_the_cached_leg_closes_under_scipy_dop853_in_the_bicircular_model(built):
    _, _, again, _, _ = built
    leg = _leg(again)
    model = leg.model_of()
    args = _simo_args(model)
    segs = list(leg.segments)
    ends = [s[1] for s in segs[1:]] + [leg.final_state]
    worst = 0.0
    for (t0, s0, dt), end in zip(segs, ends):
        sol = solve_ivp(simo_rhs, (t0, t0 + dt), s0, method="DOP853", rtol=1e-12, atol=1e-12, args=args)
        assert sol.success
        worst = max(worst, EM.km(np.linalg.norm(sol.y[:3, -1] - np.asarray(end)[:3])))
    assert worst <= le.CLOSURE_TOL_KM, worst
    # Leg.trajectory follows the leg's own model: in the CR3BP the same patch would not close
    t, states = leg.trajectory(50)
    assert EM.km(np.linalg.norm(states[-1, :3] - leg.final_state[:3])) <= le.CLOSURE_TOL_KM
    from cr3bp.integrate import propagate
    t0, s0, dt = segs[0]
    cr = propagate(EM, s0, dt).final_state
    assert EM.km(np.linalg.norm(cr[:3] - np.asarray(segs[1][1])[:3])) > 100.0


def test_the_route_of_the_leg_is_reported_in_the_bicircular_model(built):
    nodes, first, _, _, _ = built
    from cr3bp.transfers.search import best_routes
    from cr3bp.transfers.stitch import stitch_route
    leo, relay = nodes.nodes
    route = best_routes(first.graph, leo.id, relay.id)[0]
    st = stitch_route(EM, route)
    leg = _leg(first)
    assert st.model == "bicircular" and st.to_dict()["model"] == "bicircular"
    assert [m["name"] for m in st.maneuvers] == ["departure", "insertion"]
    assert st.dv_total_mps == pytest.approx(leg.dv_mps, rel=1e-12)
    assert st.tof_days == pytest.approx(leg.tof_days, rel=1e-12)
    assert EM.km(st.continuity_lu) <= le.CLOSURE_TOL_KM
    assert "bicircular" in st.note


def test_refine_takes_a_low_energy_route_only_at_its_launch_date(tmp_path):
    """A low-energy route belongs to its launch date (the Sun's phase at departure): refine
    refuses another date, naming the design's; a CR3BP route has no such check."""
    import json
    from cr3bp.bicircular import sun_phase_at
    from cr3bp.fidelity.route import route_launch
    from cr3bp.time.frames import epoch_from_text
    t = epoch_from_text("2027-03-01T00:00:00Z")
    (tmp_path / "route.json").write_text(json.dumps({"stitched": {
        "model": "bicircular", "model_record": {"sun_phase_rad": 1.0, "epoch_tdb_s": t}}}))
    assert route_launch(tmp_path, "2027-03-01T00:00:00Z", EM)["epoch_tdb_s"] == t
    with pytest.raises(InputError, match="designed for launch on 2027-03-01T00:00:00Z"):
        route_launch(tmp_path, "2027-03-02T00:00:00Z", EM)
    ph = sun_phase_at("2027-03-02T00:00:00Z", EM)
    (tmp_path / "route.json").write_text(json.dumps({"stitched": {
        "model": "bicircular", "model_record": {"sun_phase_rad": ph, "epoch_tdb_s": None}}}))
    assert route_launch(tmp_path, "2027-03-02T00:00:00Z", EM) is not None
    with pytest.raises(InputError, match="--window"):
        route_launch(tmp_path, "2027-03-05T00:00:00Z", EM)
    (tmp_path / "route.json").write_text(json.dumps({"stitched": {"maneuvers": []}}))
    assert route_launch(tmp_path, "2027-03-05T00:00:00Z", EM) is None


def test_librate_route_writes_the_low_energy_route_for_refine(built, tmp_path):
    """``librate route --out`` on the node list (the leg read from the catalogue) writes the route
    in the bicircular model: route.json names the model and its Sun phase, the trajectory starts
    at the departure and ends before insertion, and refine's reader takes it (the route -> refine
    seam); refine accepts a date whose Sun phase is the design's."""
    import json
    from librate_cli.main import main
    from cr3bp.fidelity.route import read_route, route_launch
    from cr3bp.time.frames import epoch_from_text
    _, first, _, _, path = built
    (tmp_path / "le.toml").write_text(NODES)
    out = tmp_path / "route"
    assert main(["route", "--system=earth-moon", f"--nodes={tmp_path / 'le.toml'}", "--from=leo", "--to=relay",
                 "--workers=1", f"--catalog={path}", f"--out={out}", "--quiet"]) == 0
    doc = json.loads((out / "route.json").read_text())
    assert "bicircular restricted four-body model" in doc["caution"]
    assert "bicircular" in (out / "trajectory.csv").read_text().split("\n", 1)[0]
    st = doc["stitched"]
    leg = _leg(first)
    assert st["model"] == "bicircular" and st["model_record"] == leg.details["bicircular"]
    assert st["dv_total_mps"] == pytest.approx(leg.dv_mps, rel=1e-12)
    t, x, man = read_route(out, EM)
    assert [m["name"] for m in man] == ["departure", "insertion"]
    assert t[-1] == pytest.approx(leg.tof, rel=1e-12)
    assert np.allclose(x[-1], leg.final_state, atol=1e-5)
    t0 = epoch_from_text("2027-03-01T00:00:00Z")
    dates, _, _ = le._phase_dates(t0, t0 + 30 * 86400.0, st["model_record"]["sun_phase_rad"], EM)
    assert route_launch(out, dates[0], EM) is not None
