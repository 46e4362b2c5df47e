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

from .. import validate
from ..display import Shown
from ..errors import InputError, NoSolutionError
from .leg import Leg

OBJECTIVES = ("dv", "tof")


@dataclass(frozen=True, repr=False)
class Route(Shown):
    """A chain of legs from a source node to a target node (what the route search yields).

    ``tof_arrival_days`` is the time from departure until the route first comes within
    ``arrival_distance_km`` of its final orbit: the step-off times of every leg but the last,
    plus the last leg's time of flight to arrival (edge ``tof_arrival_days``; see
    :data:`cr3bp.transfers.leg.TOF_DEFINITIONS`). Caps and ranking by time use ``tof_days``, the
    longer of the two.

    Parameters
    ----------
    nodes : tuple
        Node ids, source first.
    edges : tuple of (u, v, key)
        The multigraph edges taken.
    dv_total_mps : float
        Total Δv over the legs, m/s (CR3BP, legs as computed separately).
    tof_days : float
        Total step-off time of flight, days (to the manifold's step-off point on each leg's
        target orbit).
    min_altitude_km : float
        Lowest altitude over any primary along the route (inf when unknown).
    edge_data : tuple of dict
        The edges' attribute dicts, in order: the weights the search read and the ``leg``.

    Attributes
    ----------
    legs : tuple of cr3bp.transfers.leg.Leg
        The edges' legs, in order.

    Examples
    --------
    >>> import networkx as nx
    >>> from cr3bp.transfers.search import add_leg, best_routes
    >>> g = nx.MultiDiGraph()
    >>> for u, v, dv, tof in (("a", "b", 100.0, 3.0), ("b", "c", 50.0, 4.0), ("a", "c", 400.0, 2.0)):
    ...     _ = add_leg(g, u, v, dv, tof)
    >>> r = best_routes(g, "a", "c")[0]
    >>> r.nodes, r.dv_total_mps, r.tof_days, r.n_legs
    (('a', 'b', 'c'), 150.0, 7.0, 2)
    >>> [leg.dv_mps for leg in r.legs]
    [100.0, 50.0]

    References
    ----------
    Dijkstra, "A note on two problems in connexion with graphs", *Numerische Mathematik* 1,
    269-271, 1959; Martins, "On a multicriteria shortest path problem", *European Journal of
    Operational Research* 16, 236-245, 1984.
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
    """What a route must satisfy; ``None`` (or an empty tuple) means unconstrained.

    Parameters
    ----------
    max_dv_mps : float, optional
        Cap on the total Δv, m/s.
    max_tof_days : float, optional
        Cap on the total step-off time of flight, days.
    max_legs : int, optional
        Most legs.
    min_altitude_km : float, optional
        Legs passing lower over a primary are not used.
    through : tuple of node ids
        Nodes the route must visit.
    avoid : tuple of node ids
        Nodes the route must not visit.

    Examples
    --------
    >>> from cr3bp.transfers.search import Constraints
    >>> c = Constraints(max_dv_mps=500.0, through=("b",))
    >>> c.active(), c.without("through").active()
    (['max_dv_mps', 'through'], ['max_dv_mps'])

    References
    ----------
    Resource-constrained path search by label setting: Martins, "On a multicriteria shortest path
    problem", *European Journal of Operational Research* 16, 236-245, 1984.
    """

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
    """Add one leg to the transfer graph as an edge, its weights checked.

    Parameters
    ----------
    graph : networkx.MultiDiGraph
    u, v : hashable
        Start and end node ids.
    dv_mps : float
        Total Δv of the leg, m/s (finite, non-negative).
    tof_days : float
        Its time of flight, days (finite, non-negative).
    key : hashable, optional
        Edge key (two nodes may be joined by several legs).
    leg : cr3bp.transfers.leg.Leg, optional
        The leg itself; given weights alone, a weights-only leg
        (:meth:`cr3bp.transfers.leg.Leg.weights_only`) is put on the edge.
    **data
        Other edge attributes the search reads (``min_altitude_km``, ``kind``,
        ``tof_arrival_days``, ``arrival_distance_km``).

    Returns
    -------
    hashable
        The edge's key.

    Raises
    ------
    InputError
        A weight is negative, infinite or NaN (the message names the leg and the weight).

    Examples
    --------
    >>> import networkx as nx
    >>> from cr3bp.transfers.search import add_leg
    >>> g = nx.MultiDiGraph()
    >>> add_leg(g, "a", "b", 120.0, 3.5, key="targeted")
    'targeted'
    >>> g.edges["a", "b", "targeted"]["leg"].dv_mps
    120.0

    References
    ----------
    Graphs of transfer legs searched for routes: Dijkstra, "A note on two problems in connexion
    with graphs", *Numerische Mathematik* 1, 269-271, 1959 (non-negative weights).
    """
    dv_mps = validate.number_in(f"leg {u} -> {v}: dv_mps", dv_mps, 0.0)
    tof_days = validate.number_in(f"leg {u} -> {v}: tof_days", tof_days, 0.0)
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
        if getattr(c, name) is not None:
            validate.finite_number(name, getattr(c, name))
    if c.max_legs is not None:
        validate.whole_number("max_legs", c.max_legs, 1)


def iter_routes(graph: nx.MultiDiGraph, source, target, constraints: Constraints = Constraints(),
                objective: str = "dv", _tof_below=None):
    """Yield the simple routes from ``source`` to ``target`` satisfying ``constraints``, in
    non-decreasing order of ``objective`` ("dv" total Δv, "tof" time of flight); ties broken by
    the other objective, then by number of legs.

    Parameters
    ----------
    graph : networkx.MultiDiGraph
        Edges carry ``dv_mps``, ``tof_days``, optionally ``min_altitude_km``, and the ``leg``.
    source, target : hashable
        Node ids.
    constraints : Constraints
    objective : {"dv", "tof"}
    _tof_below : one-element list, optional
        A time-of-flight bound the caller may lower while iterating (used by
        :func:`pareto_routes`): partial routes whose time of flight is not below it are dropped.

    Yields
    ------
    Route

    Returns
    -------
    generator of Route

    Raises
    ------
    InputError
        Unknown objective or node, a source or target in ``avoid``, a non-finite cap, or
        ``max_legs`` below 1 (raised at the first ``next``).

    Examples
    --------
    >>> import networkx as nx
    >>> from cr3bp.transfers.search import add_leg, best_routes
    >>> g = nx.MultiDiGraph()
    >>> for u, v, dv, tof in (("a", "b", 100.0, 3.0), ("b", "c", 50.0, 4.0), ("a", "c", 400.0, 2.0)):
    ...     _ = add_leg(g, u, v, dv, tof)
    >>> from cr3bp.transfers.search import iter_routes
    >>> [(r.nodes, r.tof_days) for r in iter_routes(g, "a", "c", objective="tof")]
    [(('a', 'c'), 2.0), (('a', 'b', 'c'), 7.0)]

    References
    ----------
    Dijkstra, "A note on two problems in connexion with graphs", *Numerische Mathematik* 1,
    269-271, 1959; Martins, "On a multicriteria shortest path problem", *European Journal of
    Operational Research* 16, 236-245, 1984.
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
    """The ``k`` best routes by ``objective`` (fewer if fewer exist).

    Parameters
    ----------
    graph : networkx.MultiDiGraph
    source, target : hashable
        Node ids.
    constraints : Constraints
    objective : {"dv", "tof"}
    k : int
        How many routes (at least 1).

    Returns
    -------
    list of Route
        Best first.

    Raises
    ------
    InputError
        ``k`` below 1, or a bad objective, node or constraint (see :func:`iter_routes`).
    NoSolutionError
        No route satisfies ``constraints``; the message names the binding constraint
        (:func:`explain_no_route`).

    Examples
    --------
    >>> import networkx as nx
    >>> from cr3bp.transfers.search import add_leg, best_routes
    >>> g = nx.MultiDiGraph()
    >>> for u, v, dv, tof in (("a", "b", 100.0, 3.0), ("b", "c", 50.0, 4.0), ("a", "c", 400.0, 2.0)):
    ...     _ = add_leg(g, u, v, dv, tof)
    >>> [r.nodes for r in best_routes(g, "a", "c", k=2)]
    [('a', 'b', 'c'), ('a', 'c')]

    References
    ----------
    Dijkstra, "A note on two problems in connexion with graphs", *Numerische Mathematik* 1,
    269-271, 1959; Martins, "On a multicriteria shortest path problem", *European Journal of
    Operational Research* 16, 236-245, 1984.
    """
    k = validate.whole_number("k (routes asked for)", k, 1)
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
    route is reached.

    Parameters
    ----------
    graph : networkx.MultiDiGraph
    source, target : hashable
        Node ids.
    constraints : Constraints

    Returns
    -------
    list of Route
        Ordered by increasing Δv (so decreasing time of flight).

    Raises
    ------
    InputError
        A bad node or constraint (see :func:`iter_routes`).
    NoSolutionError
        No route satisfies ``constraints``.

    Examples
    --------
    >>> import networkx as nx
    >>> from cr3bp.transfers.search import add_leg, best_routes
    >>> g = nx.MultiDiGraph()
    >>> for u, v, dv, tof in (("a", "b", 100.0, 3.0), ("b", "c", 50.0, 4.0), ("a", "c", 400.0, 2.0)):
    ...     _ = add_leg(g, u, v, dv, tof)
    >>> from cr3bp.transfers.search import pareto_routes
    >>> [(r.dv_total_mps, r.tof_days) for r in pareto_routes(g, "a", "c")]
    [(150.0, 7.0), (400.0, 2.0)]

    References
    ----------
    Non-dominated (Pareto) sets: Deb, *Multi-Objective Optimization Using Evolutionary
    Algorithms*, 2001, ch. 2 (from memory); enumeration by label setting: Martins, "On a
    multicriteria shortest path problem", *European Journal of Operational Research* 16,
    236-245, 1984.
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
    scenario gave it), else the node id itself.

    Parameters
    ----------
    graph : networkx.MultiDiGraph
    node : hashable
        A node id.

    Returns
    -------
    str

    Raises
    ------
    None
        Unknown nodes are shown by their id.

    Examples
    --------
    >>> import networkx as nx
    >>> from cr3bp.transfers.search import node_label
    >>> g = nx.MultiDiGraph()
    >>> g.add_node("orbit/earth-moon/halo l2", name="relay")
    >>> node_label(g, "orbit/earth-moon/halo l2"), node_label(g, "elsewhere")
    ('relay', 'elsewhere')

    References
    ----------
    Common practice (graph nodes keyed by id, labelled by name).
    """
    return str(graph.nodes[node].get("name", node)) if node in graph else str(node)


def explain_no_route(graph, source, target, constraints: Constraints, objective="dv") -> str:
    """A one-line reason why no route meets ``constraints``: which constraint binds and what the best
    route without it costs. Nodes are named by :func:`node_label`.

    Parameters
    ----------
    graph : networkx.MultiDiGraph
    source, target : hashable
        Node ids.
    constraints : Constraints
    objective : {"dv", "tof"}

    Returns
    -------
    str

    Raises
    ------
    InputError
        A bad node or constraint (see :func:`iter_routes`).

    Examples
    --------
    >>> import networkx as nx
    >>> from cr3bp.transfers.search import add_leg, best_routes
    >>> g = nx.MultiDiGraph()
    >>> for u, v, dv, tof in (("a", "b", 100.0, 3.0), ("b", "c", 50.0, 4.0), ("a", "c", 400.0, 2.0)):
    ...     _ = add_leg(g, u, v, dv, tof)
    >>> from cr3bp.transfers.search import Constraints, explain_no_route
    >>> explain_no_route(g, "a", "c", Constraints(max_dv_mps=100.0))
    'no route meets the constraints; max_dv_mps binds: without it the best route costs 150.0 m/s and 7.0 d over 2 leg(s)'

    References
    ----------
    Relaxing one constraint at a time is common practice in constrained path search; the search
    itself: Dijkstra, "A note on two problems in connexion with graphs", *Numerische Mathematik* 1,
    269-271, 1959; Martins, "On a multicriteria shortest path problem", *European Journal of
    Operational Research* 16, 236-245, 1984.
    """
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
