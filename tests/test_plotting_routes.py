"""Route figures: what each colour is, units on the axes, the chosen route highlighted."""

import numpy as np
import pytest

from cr3bp.transfers.graph import build_graph
from cr3bp.transfers.search import best_routes, pareto_routes
from cr3bp.transfers.nodes import parse_nodes
from cr3bp.plotting import save
from cr3bp.plotting.routes import plot_corridor, plot_graph, plot_pareto
from cr3bp.transfers.stitch import stitch_route

from graph_fixtures import node_list_text, perturbed_states


@pytest.fixture(scope="module")
def routed():
    s, st = perturbed_states(3)
    nl = parse_nodes(node_list_text(st, chain=False, all_pairs=True, tof="2d", patches=2), s)
    g = build_graph(s, nl, workers=1).graph
    ids = [n.id for n in nl.nodes]
    routes = best_routes(g, ids[0], ids[-1], k=3)
    return s, g, routes, pareto_routes(g, ids[0], ids[-1]), stitch_route(s, routes[0])


def _labels(ax):
    return [t.get_text() for t in ax.get_legend().get_texts()]


def test_corridor_legend_axes_and_tubes(routed, tmp_path):
    s, g, routes, front, st = routed
    legs = list(routes[0].legs)
    tube = [np.asarray(legs[0].patch_states) + 0.001 * k for k in range(3)]
    ax = plot_corridor(st, legs, tubes=[tube])
    labels = _labels(ax)
    assert "leg 1 (stitched)" in labels and "maneuver" in labels and "manifold tube" in labels
    assert any(lbl.startswith("zero-velocity curve") or "no zero-velocity curve" in lbl for lbl in labels)
    assert "[10³ km]" in ax.get_xlabel() and "[10³ km]" in ax.get_ylabel()
    assert len(ax.texts) >= len(st.maneuvers)                     # each maneuver labelled in m/s
    path = save(ax.figure, tmp_path / "c.png", "test")
    assert path.stat().st_size > 10_000


def test_pareto_and_graph_highlight_the_chosen_route(routed):
    s, g, routes, front, st = routed
    ax = plot_pareto(routes, front, routes[0])
    assert any(lbl.startswith("chosen:") for lbl in _labels(ax))
    assert "[days]" in ax.get_xlabel() and "[m/s]" in ax.get_ylabel()
    ax = plot_graph(g, route=routes[0])
    assert "chosen route" in _labels(ax) and "Jacobi constant" in ax.get_ylabel()
    edge_labels = [t.get_text() for t in ax.texts if "m/s" in t.get_text()]
    assert len(edge_labels) == g.number_of_edges()
