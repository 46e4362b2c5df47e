"""A scenario transfer's ``path`` (how it leaves an Earth parking orbit: "direct" or
"lunar-flyby") reaches the departure design of its first leg, skips the manifold search, keys
the catalogue apart, and leaves legs of transfers without it as they were. The design itself is
checked against outside sources in tests/test_against_common_practice_departures.py and
tests/test_departure_flyby.py; the scenario's numbers against ``librate connect`` in
tests/test_scenario_departure.py (direct) and tests/test_demo_departure.py (the demo)."""

from __future__ import annotations

from pathlib import Path

import pytest

from cr3bp.errors import NoSolutionError
from cr3bp.scenario import run as mission
from cr3bp.scenario.transfers import transfer_nodes
from cr3bp.transfers import graph
from cr3bp.transfers.nodes import ParkingNode

ROOT = Path(__file__).resolve().parents[1]
DEMO = (ROOT / "examples" / "farlight.toml").read_text(encoding="utf-8")


def _plan(tmp_path, text):
    p = tmp_path / "s.toml"
    p.write_text(text, encoding="utf-8")
    return mission.prepare(p)


def _tasks(plan):
    nodelist = transfer_nodes(plan, 0, plan.data["transfers"][0])
    tasks, _ = graph.plan(plan.system, nodelist)
    return nodelist, [t for t in tasks if t["method"] == "parking"]


@pytest.mark.parametrize("path", ["direct", "lunar-flyby"])
def test_the_path_reaches_the_departure_design_without_a_manifold_search(tmp_path, monkeypatch, path):
    plan = _plan(tmp_path, DEMO.replace('path = "direct"', f'path = "{path}"'))
    nodelist, tasks = _tasks(plan)
    start = nodelist.nodes[0]
    assert isinstance(start, ParkingNode) and start.path == path
    departing = [t for t in tasks if t["settings"]["arrive"]]
    assert len(departing) == 1 and departing[0]["settings"]["path"] == path
    seen = []

    def design(orbit, altitude_km, **kw):
        seen.append((altitude_km, kw["path"]))
        raise NoSolutionError("stop here")

    def no_search(*a, **k):
        raise AssertionError("the manifold search ran")

    monkeypatch.setattr(graph, "design_departure", design)
    monkeypatch.setattr(graph, "_periapsis_legs", no_search)
    monkeypatch.setattr(graph, "manifold_may_reach", lambda *a: True)   # would search without a path
    with pytest.raises(NoSolutionError, match="stop here"):
        graph._parking_leg(plan.system, departing[0])
    assert seen == [(200.0, path)]


def test_no_path_keeps_the_legs_and_their_catalogue_keys(tmp_path):
    """Without 'path' the task has no 'path' setting (catalogued legs keep their keys); with
    one, the key differs from the same leg by another path."""
    text = DEMO.replace('path = "direct"\n', "")
    _, without = _tasks(_plan(tmp_path, text))
    assert all("path" not in t["settings"] for t in without)
    _, direct = _tasks(_plan(tmp_path, DEMO))
    _, flyby = _tasks(_plan(tmp_path, DEMO.replace('path = "direct"', 'path = "lunar-flyby"')))
    keys = {graph.leg_key(t) for tasks in (without, direct, flyby) for t in tasks if t["settings"]["arrive"]}
    assert len(keys) == 3


def test_a_path_on_a_leg_that_is_not_an_earth_departure_is_refused(tmp_path):
    """The graph's own guard (the scenario check refuses such a file before any work)."""
    plan = _plan(tmp_path, DEMO)
    _, tasks = _tasks(plan)
    returning = dict(next(t for t in tasks if not t["settings"]["arrive"]))
    returning["settings"] = dict(returning["settings"], path="direct")
    with pytest.raises(NoSolutionError, match="not such a departure"):
        graph._parking_leg(plan.system, returning)
