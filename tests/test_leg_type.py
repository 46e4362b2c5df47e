"""One leg type: the transfer graph's edges, the route search's routes, the stitcher's inputs and
the catalogue's legs are :class:`cr3bp.transfers.leg.Leg` objects; the plain leg record
(:meth:`Leg.record`) is only the stored / task-return form, and it survives
record -> Leg -> record unchanged (through JSON too). A damaged record is refused with a
RecordError naming the key."""

import json

import numpy as np
import pytest

from cr3bp.catalog import Catalog
from cr3bp.errors import InputError, RecordError
from cr3bp.transfers import stitch
from cr3bp.transfers.graph import build_graph, compute_leg, plan
from cr3bp.transfers.leg import RECORD_KEYS, Leg, Maneuver
from cr3bp.transfers.nodes import parse_nodes
from cr3bp.transfers.search import best_routes, pareto_routes

from graph_fixtures import arc_states, node_list_text, perturbed_states


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    s, st = perturbed_states(3)
    nl = parse_nodes(node_list_text(st, patches=2), s)
    with Catalog(tmp_path_factory.mktemp("cat") / "c.sqlite") as cat:
        first = build_graph(s, nl, workers=1, catalog=cat)
        again = build_graph(s, nl, workers=1, catalog=cat)
    return s, nl, first, again


def test_graph_edges_routes_and_stitcher_inputs_are_legs(built, monkeypatch):
    s, nl, first, again = built
    assert first.legs and all(isinstance(leg, Leg) for leg in first.legs + again.legs)
    assert again.cached == len(again.legs)                 # read back from the catalogue as Legs
    edges = list(first.graph.edges(data=True))
    assert edges and all(isinstance(d["leg"], Leg) for _, _, d in edges)
    ids = [n.id for n in nl.nodes]
    routes = best_routes(first.graph, ids[0], ids[-1], k=2) + pareto_routes(first.graph, ids[0], ids[-1])
    assert routes and all(isinstance(leg, Leg) and leg.in_shooting_form for r in routes for leg in r.legs)
    seen = []
    real = stitch._Problem.__init__

    def spy(self, system, legs):
        seen.extend(legs)
        real(self, system, legs)
    monkeypatch.setattr(stitch._Problem, "__init__", spy)
    stitch.stitch_route(s, routes[0], optimise=False)
    assert len(seen) == routes[0].n_legs and all(isinstance(leg, Leg) for leg in seen)


def test_record_leg_record_round_trip(built):
    s, nl, first, again = built
    for leg in first.legs:
        rec = leg.record()
        assert set(rec) <= set(RECORD_KEYS)
        back = Leg.from_record(json.loads(json.dumps(rec)), s)
        assert back.record() == rec
        assert json.dumps(back.record(), sort_keys=True) == json.dumps(rec, sort_keys=True)
    # the catalogue's copy is the computed one
    assert [a.record() for a in first.legs] == [b.record() for b in again.legs]


def test_task_returns_the_record_of_the_leg_the_graph_holds(built):
    s, nl, first, again = built
    tasks, _ = plan(s, nl)
    rec = compute_leg(tasks[0])
    assert isinstance(rec, dict) and rec["status"] == "ok" and rec["method"] == "targeted"
    assert rec == next(leg for leg in first.legs if leg.key == rec["key"]).record()


def test_failed_attempt_round_trips_with_its_few_keys():
    rec = {"from": "a", "to": "b", "from_name": "A", "to_name": "B", "key": "leg/a->b/0", "method": "targeted",
           "status": "failed", "reason": "targeting did not converge", "dv_mps": None, "tof_days": None}
    leg = Leg.from_record(rec)
    assert not leg.ok and leg.reason == rec["reason"] and leg.record() == rec


def test_legacy_targeted_record_keeps_its_solver_values_in_details(built):
    s, nl, first, again = built
    rec = first.legs[0].record()
    old = {k: v for k, v in rec.items() if k not in ("how", "kind", "details")}
    old.update(rec["details"])              # written before they moved under "details"
    leg = Leg.from_record(old, s)
    assert leg.details == rec["details"] and leg.kind == "transfer"


@pytest.mark.parametrize("change, key", [
    (lambda d: d.pop("tof_tu"), "tof_tu"),
    (lambda d: d.pop("patch_states"), "patch_states"),
    (lambda d: d.update(dv_mps="fast"), "dv_mps"),
    (lambda d: d.update(status="maybe"), "status"),
    (lambda d: d.update(final_state=[1.0, 2.0]), "final_state"),
    (lambda d: d.update(patch_states=[[0.0] * 6] * 5), "patch_states"),
    (lambda d: d["maneuvers"][0].pop("dv_vector"), "dv_vector"),
    (lambda d: d["maneuvers"][0].update(where="midway"), "where"),
])
def test_damaged_record_names_the_key(built, change, key):
    s, nl, first, again = built
    rec = json.loads(json.dumps(first.legs[0].record()))
    change(rec)
    with pytest.raises(RecordError, match=f"'{key}'") as e:
        Leg.from_record(rec, s)
    assert isinstance(e.value, InputError) and "\n" not in str(e.value)


def test_connection_leg_record_is_its_shooting_form():
    """A leg made with ballistic segments (as the connections return them) gives the same record
    as its shooting form, and that record reads back to the same record."""
    s = arc_states(2)[0]
    state = np.array([0.8, 0.0, 0.0, 0.0, 0.3, 0.0])
    man = Maneuver(0.0, state[:3], np.array([0.0, 1e-4, 0.0]), float(s.mps(1e-4)))
    leg = Leg(s, "a", "b", (man,), man.dv_mps, 0.5, state, ((0.0, state, 0.5),), "test arc")
    rec = leg.record(patches=3)
    assert rec == leg.with_patches(3).record() and len(rec["patch_times"]) == 3
    assert rec["maneuvers"][0]["where"] == "departure"
    assert Leg.from_record(rec, s).record() == rec
