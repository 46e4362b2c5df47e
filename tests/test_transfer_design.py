"""One transfer design pipeline: the same request through ``librate route`` and through a
scenario's ``[[transfers]]`` gives the same routes, Δv, times of flight and maneuver columns,
because both call :func:`cr3bp.transfers.design.design_transfer` (checked with a spy)."""

import csv
import json

import pytest

from librate_cli.main import main

SCENARIO = """
[mission]
name = "Design seam"
issued = "2026-12-01T00:00:00"

[system]
name = "earth-moon"
epoch = "2031-03-01T00:00:00Z"

[orbits.gate]
family = "lyapunov"
point = "L1"
jacobi = 3.17

[orbits.staging]
family = "lyapunov"
point = "L1"
jacobi = 3.16

[orbits.relay]
family = "lyapunov"
point = "L2"
jacobi = 3.17

[[transfers]]
name = "gate-to-relay"
from = "gate"
to = "relay"
via = ["staging"]
max_dv = "3000m/s"
best = 2

[plots]
orbits = false
families = false
hill_regions = false
corridors = false
"""

# the same nodes as a node list for `librate route` (the scenario's node-list defaults: every
# pair, targeted legs of 6 d, 4 patch points)
NODES = """
system = "earth-moon"
[[node]]
name = "gate"
kind = "orbit"
orbit = "lyapunov L1 jacobi=3.17"
[[node]]
name = "staging"
kind = "orbit"
orbit = "lyapunov L1 jacobi=3.16"
[[node]]
name = "relay"
kind = "orbit"
orbit = "lyapunov L2 jacobi=3.17"
"""


def _rows(path):
    with open(path, newline="") as f:
        return [r for r in csv.reader(f) if r and not r[0].startswith("#")]


@pytest.fixture(scope="module")
def both(tmp_path_factory):
    from cr3bp.transfers import design
    d = tmp_path_factory.mktemp("design")
    calls = []
    real = design.design_transfer

    def spy(*a, **k):
        calls.append(k.get("objective"))
        return real(*a, **k)
    mp = pytest.MonkeyPatch()
    mp.setattr(design, "design_transfer", spy)
    try:
        (d / "s.toml").write_text(SCENARIO)
        rc = main(["run", str(d / "s.toml"), "--out", str(d / "scenario"), "--catalog", str(d / "run.sqlite"),
                   "--quiet"])
        assert rc == 0
        (d / "nodes.toml").write_text(NODES)
        rc = main(["route", "--system", "earth-moon", "--nodes", str(d / "nodes.toml"), "--no-catalog",
                   "--workers", "1", "--from", "gate", "--to", "relay", "--through", "staging",
                   "--max-dv", "3000m/s", "--best", "2", "--pareto", "--out", str(d / "cli"), "-q",
                   "--format", "json"])
        assert rc == 0
    finally:
        mp.undo()
    return d, calls


def test_route_and_scenario_call_the_one_design_function(both):
    _, calls = both
    assert calls == ["dv", "dv"]


def test_same_request_gives_the_same_routes_dv_tof_and_maneuver_columns(both):
    d, _ = both
    scen = json.loads((d / "scenario" / "route-gate-to-relay.json").read_text())
    cli = json.loads((d / "cli" / "route.json").read_text())
    # the ranked routes: same nodes in order, same totals (float for float)
    assert [r["nodes"] for r in scen["ranked"]] == [r["node_names"] for r in cli["routes"]]
    assert len(cli["routes"]) >= 1
    for a, b in zip(scen["ranked"], cli["routes"]):
        assert a["dv_total_mps"] == b["dv_total_mps"] and a["tof_days"] == b["tof_days"]
        assert a["tof_arrival_days"] == b["tof_arrival_days"]
        assert [leg["dv_mps"] for leg in a["legs"]] == [leg["dv_mps"] for leg in b["legs"]]
    # the stitched best route
    for k in ("dv_total_mps", "tof_days", "legs_dv_total_mps", "continuity_lu", "nodes"):
        assert scen["stitched"][k] == cli["stitched"][k], k
    assert scen["maneuvers"] == cli["maneuvers"]
    # the maneuver tables: same header and same rows, text for text
    a = _rows(d / "scenario" / "route-gate-to-relay-maneuvers.csv")
    b = _rows(d / "cli" / "maneuvers.csv")
    assert a[0] == b[0] and a[0][:2] == ["t_days", "node"]
    assert a[1:] == b[1:] and len(a) > 1
    # and the trajectory tables
    assert _rows(d / "scenario" / "route-gate-to-relay-trajectory.csv") == _rows(d / "cli" / "trajectory.csv")


def test_no_route_reason_names_the_nodes_by_their_names():
    """The route search's reason carries the names the node list gave (the graph's ``name``
    attribute), not the node ids: nothing is relabelled afterwards by string replacement."""
    import networkx as nx

    from cr3bp.errors import NoSolutionError
    from cr3bp.transfers.search import add_leg, best_routes
    g = nx.MultiDiGraph()
    g.add_node("orbit/earth-moon/halo l2 south period=6.5626d", name="relay")
    g.add_node("parking/earth-moon/earth/200km/0deg", name="leo")
    g.add_node("state/earth-moon/abc", name="gate")
    add_leg(g, "state/earth-moon/abc", "parking/earth-moon/earth/200km/0deg", 10.0, 1.0)
    with pytest.raises(NoSolutionError) as e:
        best_routes(g, "parking/earth-moon/earth/200km/0deg", "orbit/earth-moon/halo l2 south period=6.5626d")
    assert str(e.value) == "no chain of legs joins 'leo' to 'relay' in the graph"


def test_scenario_nodes_are_built_directly_with_the_node_list_ids(tmp_path):
    """A scenario transfer's node list is built from the scenario's entries without a TOML text
    round trip; its nodes are the ones a node-list file with the same entries gives (same ids,
    same names, same kinds), and a parking text keeps its scenario name."""
    from cr3bp.scenario import run as mission
    from cr3bp.scenario.transfers import transfer_nodes
    from cr3bp.transfers.nodes import parse_nodes
    text = SCENARIO.replace('from = "gate"', 'from = "parking moon 100km"')
    (tmp_path / "s.toml").write_text(text)
    plan = mission.prepare(tmp_path / "s.toml")
    built = transfer_nodes(plan, 0, plan.data["transfers"][0])
    parsed = parse_nodes(NODES.replace('name = "gate"\nkind = "orbit"\norbit = "lyapunov L1 jacobi=3.17"',
                                       'name = "parking moon 100km"\nkind = "parking"\nbody = "moon"\n'
                                       'altitude = "100km"'), plan.system)
    order = ["parking moon 100km", "staging", "relay"]
    assert [n.name for n in built.nodes] == order
    by_name = {n.name: n for n in parsed.nodes}
    assert [n.id for n in built.nodes] == [by_name[k].id for k in order]
    assert [n.kind for n in built.nodes] == ["parking", "orbit", "orbit"]
    assert (built.tof_days, built.patches, built.all_pairs, built.hints) == (6.0, 4, True, ())


def test_scenario_report_draws_each_orbit_and_the_route_in_3d(both, tmp_path):
    # the scenario -> report seam: three orbits and the stitched route as interactive figures,
    # drawn in headless Chromium from the one inline plotly.js, with nothing fetched
    from _chromium import probe3d
    d, _ = both
    text = (d / "scenario" / "report.html").read_text()
    assert "<script src=" not in text and text.count("plotly.js v") == 1
    p = probe3d(d / "scenario" / "report.html", tmp_path)
    assert p["errors"] == [] and p["blocked"] == [] and p["network"] == []
    assert p["plots"] == 4 and p["drawn"] == 4
    assert sum("transfer 'gate-to-relay'" in t for t in p["titles"]) == 1
