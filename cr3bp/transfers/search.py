"""The transfer graph and route search.

Nodes are places a spacecraft can be (a periodic orbit, a parking orbit about a primary, a
capture or escape condition); edges are computed legs, each carrying its total Δv (m/s), time
of flight (days), the lowest altitude it passes over any primary (km) and the leg itself. The
graph is a ``networkx.MultiDiGraph``: two nodes may be joined by several legs (e.g. a cheap
slow one and a fast costly one).

Route search enumerates simple paths best-first (a priority queue of partial paths ordered
by the objective; with non-negative edge weights the first complete path popped is optimal
and later ones come in non-decreasing order — the label-setting argument of Dijkstra,
*A note on two problems in connexion with graphs*, Numer. Math. 1, 1959, applied to paths
rather than nodes, as in Martins, "On a multicriteria shortest path problem", EJOR 16, 1984).
Caps on Δv, time of flight and number of legs prune partial paths, which is exact because
every weight is non-negative.
"""

from __future__ import annotations

import heapq
import itertools
import math
from dataclasses import dataclass, field

import networkx as nx

from ..display import Shown
from ..errors import InputError, NoSolutionError
from .leg import Leg

OBJECTIVES = ("dv", "tof")


@dataclass(frozen=True, repr=False)
class Route(Shown):
    """A chain of legs from a source node to a target node.

    Attributes
    ----------
    nodes : tuple of node ids, source first
    edges : tuple of (u, v, key) multigraph edges
    dv_total_mps, tof_days : totals over the legs (``tof_days``: step-off times of flight, to
                             the manifold's step-off point on each leg's target orbit)
    min_altitude_km : lowest altitude over any primary along the route (inf when unknown)
    edge_data : tuple of the edge attribute dicts, in order (weights and the ``leg``)
    legs : tuple of :class:`cr3bp.transfers.leg.Leg`, in order (the edges' legs)

    ``tof_arrival_days`` is the time from departure until the route first comes within
    ``arrival_distance_km`` of its final orbit: the step-off times of every leg but the last,
    plus the last leg's time of flight to arrival (edge ``tof_arrival_days``; see
    :data:`cr3bp.transfers.leg.TOF_DEFINITIONS`). Caps and ranking by time use ``tof_days``, the
    longer of the two.
    """

    nodes: tuple
    edges: tuple
    dv_total_mps: float
    tof_days: float
    min_altitude_km: float = math.inf
    edge_data: tuple = field(default=(), compare=False, repr=False)

    @property
    def legs(self) -> tuple:
        """The route's legs (:class:`cr3bp.transfers.leg.Leg`), in order."""
        return tuple(d["leg"] for d in self.edge_data)

    @property
    def n_legs(self) -> int:
        return len(self.edges)

    @property
    def tof_arrival_days(self) -> float:
        if not self.edge_data:
            return self.tof_days
        last = self.edge_data[-1]
        return float(self.tof_days - last["tof_days"] + last.get("tof_arrival_days", last["tof_days"]))

    @property
    def arrival_distance_km(self):
        """The distance that counts as arrived on the final orbit, km (None: the route ends on a
        parking orbit or another end that is reached when its last leg ends)."""
        return self.edge_data[-1].get("arrival_distance_km") if self.edge_data else None

    def to_dict(self) -> dict:
        return {
            "nodes": [str(n) for n in self.nodes],
            "legs": [_leg_summary(u, v, k, d) for (u, v, k), d in zip(self.edges, self.edge_data)],
            "dv_total_mps": self.dv_total_mps,
            "tof_days": self.tof_days,
            "tof_arrival_days": self.tof_arrival_days,
            "arrival_distance_km": self.arrival_distance_km,
            "min_altitude_km": None if math.isinf(self.min_altitude_km) else self.min_altitude_km,
            "n_legs": self.n_legs,
        }


def _leg_summary(u, v, k, d) -> dict:
    out = {"from": str(u), "to": str(v), "key": str(k), "dv_mps": float(d.get("dv_mps", 0.0)),
           "tof_days": float(d.get("tof_days", 0.0)),
           "tof_arrival_days": float(d.get("tof_arrival_days", d.get("tof_days", 0.0))),
           "arrival_distance_km": d.get("arrival_distance_km"), "kind": d.get("kind", "")}
    if "min_altitude_km" in d:
        out["min_altitude_km"] = float(d["min_altitude_km"])
    return out


@dataclass(frozen=True)
class Constraints:
    """What a route must satisfy. ``None`` means unconstrained."""

    max_dv_mps: float | None = None
    max_tof_days: float | None = None
    max_legs: int | None = None
    min_altitude_km: float | None = None
    through: tuple = ()
    avoid: tuple = ()

    def without(self, name: str) -> "Constraints":
        d = dict(self.__dict__)
        d[name] = () if name in ("through", "avoid") else None
        return Constraints(**d)

    def active(self) -> list[str]:
        return [k for k, v in self.__dict__.items() if v not in (None, ())]


def add_leg(graph: nx.MultiDiGraph, u, v, dv_mps: float, tof_days: float, key=None, leg: Leg | None = None,
            **data):
    """Add one leg as an edge, validating its weights (non-negative and finite). The edge carries
    the weights the search reads (``dv_mps``, ``tof_days``, and ``data`` such as
    ``min_altitude_km``) and the :class:`cr3bp.transfers.leg.Leg` itself (``leg``; given weights
    alone, a weights-only leg, :meth:`cr3bp.transfers.leg.Leg.weights_only`)."""
    for name, val in (("dv_mps", dv_mps), ("tof_days", tof_days)):
        if not (math.isfinite(val) and val >= 0):
            raise InputError(f"leg {u} -> {v}: {name} = {val!r} must be finite and non-negative")
    if leg is None:
        leg = Leg.weights_only(u, v, dv_mps, tof_days, kind=data.get("kind", ""),
                               min_altitude_km=data.get("min_altitude_km", math.inf),
                               tof_arrival_days=data.get("tof_arrival_days"),
                               arrival_distance_km=data.get("arrival_distance_km"))
    return graph.add_edge(u, v, key=key, dv_mps=float(dv_mps), tof_days=float(tof_days), leg=leg, **data)


def _check(graph, source, target, c: Constraints, objective: str):
    if objective not in OBJECTIVES:
        raise InputError(f"objective '{objective}' is not one of {', '.join(OBJECTIVES)}")
    for n, what in ((source, "source"), (target, "target")):
        if n not in graph:
            raise InputError(f"{what} node '{n}' is not in the graph")
    for n in tuple(c.through) + tuple(c.avoid):
        if n not in graph:
            raise InputError(f"node '{n}' named in through/avoid is not in the graph")
    if source in c.avoid or target in c.avoid:
        raise InputError("the source or target node is also in the avoid list")
    for name in ("max_dv_mps", "max_tof_days", "min_altitude_km"):
        v = getattr(c, name)
        if v is not None and not math.isfinite(v):
            raise InputError(f"{name} = {v!r} must be finite")
    if c.max_legs is not None and c.max_legs < 1:
        raise InputError(f"max_legs = {c.max_legs} must be at least 1")


def iter_routes(graph: nx.MultiDiGraph, source, target, constraints: Constraints = Constraints(),
                objective: str = "dv", _tof_below=None):
    """Yield the simple routes from ``source`` to ``target`` satisfying ``constraints``, in
    non-decreasing order of ``objective`` ("dv" total Δv, "tof" time of flight); ties broken by
    the other objective, then by number of legs.

    Parameters
    ----------
    graph : networkx.MultiDiGraph
        Edges carry ``dv_mps``, ``tof_days`` and optionally ``min_altitude_km``.
    source, target : node ids
    constraints : Constraints
    objective : {"dv", "tof"}
    _tof_below : one-element list, optional
        A time-of-flight bound the caller may lower while iterating (used by
        :func:`pareto_routes`): partial routes whose time of flight is not below it are dropped.

    Yields
    ------
    Route

    References
    ----------
    Martins, "On a multicriteria shortest path problem", Eur. J. Oper. Res. 16, 1984.
    """
    c = constraints
    _check(graph, source, target, c, objective)
    avoid = set(c.avoid)
    through = set(c.through)
    counter = itertools.count()

    def usable(d):
        if c.min_altitude_km is not None and d.get("min_altitude_km", math.inf) < c.min_altitude_km:
            return False
        return True

    def key(dv, tof, n):
        return (dv, tof, n) if objective == "dv" else (tof, dv, n)

    # heap entries: (sort key, tie counter, dv, tof, min_alt, nodes, edges, legs)
    heap = [(key(0.0, 0.0, 0), next(counter), 0.0, 0.0, math.inf, (source,), (), ())]
    while heap:
        _, _, dv, tof, alt, nodes, edges, legs = heapq.heappop(heap)
        if _tof_below is not None and edges and tof >= _tof_below[0]:
            continue
        here = nodes[-1]
        if here == target and edges:
            if through <= set(nodes):
                yield Route(nodes, edges, dv, tof, alt, legs)
            continue
        if c.max_legs is not None and len(edges) >= c.max_legs:
            continue
        for _, nxt, k, d in graph.out_edges(here, keys=True, data=True):
            if nxt in nodes or nxt in avoid or not usable(d):
                continue
            ndv, ntof = dv + d["dv_mps"], tof + d["tof_days"]
            if c.max_dv_mps is not None and ndv > c.max_dv_mps:
                continue
            if c.max_tof_days is not None and ntof > c.max_tof_days:
                continue
            if _tof_below is not None and ntof >= _tof_below[0]:
                continue
            nalt = min(alt, d.get("min_altitude_km", math.inf))
            heapq.heappush(heap, (key(ndv, ntof, len(edges) + 1), next(counter), ndv, ntof, nalt,
                                  nodes + (nxt,), edges + ((here, nxt, k),), legs + (d,)))


def best_routes(graph, source, target, constraints: Constraints = Constraints(), objective="dv",
                k: int = 1) -> list[Route]:
    """The ``k`` best routes by ``objective`` (fewer if fewer exist). Raises NoSolutionError with
    the binding constraint when none satisfies ``constraints``."""
    if k < 1:
        raise InputError(f"k = {k} must be at least 1")
    routes = list(itertools.islice(iter_routes(graph, source, target, constraints, objective), k))
    if not routes:
        raise NoSolutionError(explain_no_route(graph, source, target, constraints, objective))
    return routes


def pareto_routes(graph, source, target, constraints: Constraints = Constraints()) -> list[Route]:
    """The Pareto set of Δv against time of flight: every route that no other beats on both.

    Routes are enumerated in Δv order; a route is kept when its time of flight is strictly below
    that of every cheaper route. Partial routes whose time of flight already reaches that of the
    last route kept are dropped (they cannot complete into a non-dominated route, every weight
    being non-negative), and enumeration stops once the least time of flight of any feasible
    route is reached. Ordered by increasing Δv (so decreasing time of flight).
    """
    try:
        fastest = next(iter_routes(graph, source, target, constraints, "tof"))
    except StopIteration:
        raise NoSolutionError(explain_no_route(graph, source, target, constraints, "dv")) from None
    front: list[Route] = []
    bound = [math.inf]
    for r in iter_routes(graph, source, target, constraints, "dv", _tof_below=bound):
        if r.tof_days < bound[0]:
            front.append(r)
            bound[0] = r.tof_days
            if bound[0] <= fastest.tof_days:
                break
    return front


def node_label(graph, node) -> str:
    """What a person calls ``node``: its ``name`` attribute in the graph (the name a node list or
    scenario gave it), else the node id itself."""
    return str(graph.nodes[node].get("name", node)) if node in graph else str(node)


def explain_no_route(graph, source, target, constraints: Constraints, objective="dv") -> str:
    """A one-line reason: which constraint binds and what the best route without it costs.
    Nodes are named by :func:`node_label`."""
    if not nx.has_path(graph, source, target):
        return (f"no chain of legs joins '{node_label(graph, source)}' to '{node_label(graph, target)}' "
                "in the graph")
    parts = []
    for name in constraints.active():
        relaxed = constraints.without(name)
        r = next(iter_routes(graph, source, target, relaxed, objective), None)
        if r is not None:
            parts.append(f"{name} binds: without it the best route costs {r.dv_total_mps:.1f} m/s "
                         f"and {r.tof_days:.1f} d over {r.n_legs} leg(s)")
    if parts:
        return "no route meets the constraints; " + "; ".join(parts)
    return "no route meets the constraints together (relaxing any single one is not enough)"
