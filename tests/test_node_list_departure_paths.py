"""Direct and lunar-flyby departures as node-list edges (issue 15): ``path = "direct"`` or
``path = "lunar-flyby"`` on an edge from an Earth parking orbit makes the graph's leg that
departure (cr3bp.transfers.departure), as a scenario's ``path`` already did; refusals come while
the node list is read, before any orbit is solved.

The seam: the graph leg's burns equal those of ``librate connect --path direct`` for the same
ends (node list -> graph -> leg against the command). The departure itself is checked against
the outside world in tests/test_cli_departures.py (scipy's DOP853 re-propagation) and
tests/test_departure_flyby.py.
"""

import json

import pytest

from cr3bp import system
from cr3bp.errors import InputError
from cr3bp.io.toml_schema import ScenarioError
from cr3bp.transfers.graph import build_graph, plan
from cr3bp.transfers.nodes import parse_nodes
from librate_cli.main import main

EM = system("earth-moon")
NODES = '''system = "earth-moon"
[settings]
all_pairs = false
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
both_ways = false
path = "direct"
'''


def _tasks(text):
    tasks, pruned = plan(EM, parse_nodes(text, EM))
    return {(t["from"]["name"], t["to"]["name"]): t for t in tasks}, pruned


@pytest.mark.parametrize("path", ["direct", "lunar-flyby"])
def test_the_edge_path_reaches_the_task(path):
    tasks, _ = _tasks(NODES.replace('path = "direct"', f'path = "{path}"'))
    assert tasks[("leo", "relay")]["method"] == "parking"
    assert tasks[("leo", "relay")]["settings"]["path"] == path
    plain, _ = _tasks(NODES.replace('path = "direct"\n', ""))
    assert "path" not in plain[("leo", "relay")]["settings"]
    assert plain[("leo", "relay")]["key"] != tasks[("leo", "relay")]["key"]


@pytest.mark.parametrize("text, words", [
    (NODES.replace('from = "leo"\nto = "relay"', 'from = "relay"\nto = "leo"'),
     "path 'direct' leaves an Earth parking orbit"),
    (NODES.replace('altitude = "200km"', 'altitude = "60000km"'),
     "Earth parking orbit at 60000 km for the 'direct' path; allowed: 100 km to 50000 km"),
    (NODES.replace('altitude = "200km"', 'altitude = "60km"'), "below 100 km no orbit lasts"),
    (NODES.replace('body = "earth"', 'body = "moon"'), "path 'direct' leaves an Earth parking orbit"),
    (NODES.replace('path = "direct"', 'path = "lunar-flyby"\nlaunch = "2027-03-01T00:00:00Z"'),
     "'launch' goes with path"),
])
def test_bad_departure_edges_are_refused_while_reading(text, words):
    with pytest.raises((ScenarioError, InputError)) as e:
        parse_nodes(text, EM)
    assert words in str(e.value)


def test_graph_leg_equals_the_connect_command(tmp_path):
    build = build_graph(EM, parse_nodes(NODES, EM), workers=1)
    (leg,) = [lg for lg in build.legs if lg.ok and lg.origin == "leo"]
    assert [m.name for m in leg.maneuvers] == ["departure", "insertion"]
    out = tmp_path / "d.json"
    assert main(["connect", "--system=earth-moon", "--from=parking earth 200km",
                 "--to=halo L2 south resonance=9:2", "--path=direct", "--format=json", f"--out={out}",
                 "--quiet"]) == 0
    (cli,) = json.loads(out.read_text())["legs"]
    assert [m.dv_mps for m in leg.maneuvers] == pytest.approx([m["dv_mps"] for m in cli["maneuvers"]], abs=0.01)
    assert leg.tof_days == pytest.approx(cli["tof_days"], abs=1e-5)
