"""The transfer design pipeline: one function from a node list and a request (from, to,
constraints) to the ranked routes, the Pareto set and the best route stitched into one
trajectory with its maneuver table. ``librate route`` and a scenario's ``[[transfers]]`` both
call :func:`design_transfer`, so the same request gives the same numbers through either.

Stages: the transfer graph (:func:`cr3bp.transfers.graph.build_graph`), the best routes by
total Δv or time of flight and the Pareto set of the two
(:mod:`cr3bp.transfers.search`), the best route stitched by multiple shooting with phasing
coasts along the orbits it meets at different phases (:mod:`cr3bp.transfers.stitch`), and the
maneuver columns (:func:`maneuver_columns`) both the CLI's and the scenario's tables use.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..errors import LibrateError, NoSolutionError
from ..io.export import dv_differs
from .graph import _orbit_from_plain, build_graph, resolve_orbits
from .nodes import OrbitNode
from .search import Constraints, best_routes, node_label, pareto_routes
from .stitch import PhasingError, stitch_route

#: What the design Δv columns are (the CR3BP, before any export).
DV_DESIGN_NOTE = "the CR3BP design, rotating frame, fixed units (the route's dv_mps and dv_vector_mps too)"
#: The columns of a maneuver table before the exported Δv columns.
MANEUVER_HEADERS = ["t_days", "node", "maneuver", "x_km", "y_km", "z_km", "dv_x_mps", "dv_y_mps", "dv_z_mps", "dv_design_mps"]


@dataclass(frozen=True)
class TransferDesign:
    """The result of :func:`design_transfer`.

    Parameters
    ----------
    built : cr3bp.transfers.graph.BuildResult
        The graph and how it was made.
    source, target : nodes
        The request's ends.
    routes : tuple of cr3bp.transfers.search.Route
        Ranked by the objective, best first.
    pareto : tuple of cr3bp.transfers.search.Route
        The Pareto set (empty when not asked).
    stitched : cr3bp.transfers.stitch.StitchedRoute or None
        The best route stitched (None: not asked, or not possible, see ``not_stitched``).
    not_stitched : str or None
        Why the best route was not stitched (None if it was).
    optimised : tuple of (int, OrbitTransfer or str)
        With ``optimise=True``: each leg of the best route between two orbit nodes (by its
        index), optimised (:func:`optimise_route`), or why not.

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import EXAMPLE_NODE_LIST, parse_nodes
    >>> em = system("earth-moon")
    >>> nodes = parse_nodes(EXAMPLE_NODE_LIST, em)      # two fixed states, a and b
    >>> a, b = nodes.nodes
    >>> from cr3bp.transfers.design import design_transfer
    >>> d = design_transfer(em, nodes, a, b, workers=1, stitch=False)
    >>> d.names[a.id], d.routes[0].n_legs, d.stitched is None
    ('a', 1, True)

    References
    ----------
    Dijkstra, "A note on two problems in connexion with graphs", *Numerische Mathematik* 1,
    269-271, 1959, and Martins, "On a multicriteria shortest path problem", *European Journal of
    Operational Research* 16, 1984 (route search); Betts, *Practical Methods for Optimal Control
    and Estimation Using Nonlinear Programming*, 2nd ed., 2010, ch. 4 (stitching by multiple
    shooting, from memory).
    """

    built: object
    source: object
    target: object
    routes: tuple
    pareto: tuple
    stitched: object
    not_stitched: str | None = None
    optimised: tuple = ()

    @property
    def graph(self):
        return self.built.graph

    @property
    def names(self) -> dict:
        """Node id -> the name the node list or scenario gave it."""
        return {n.id: n.name for n in self.built.nodes}


def orbit_periods(graph) -> dict:
    """Orbit node id -> period (TU), from the graph's "stay" self-loops (the phasing coasts of
    :func:`cr3bp.transfers.stitch.stitch_route` need them).

    Parameters
    ----------
    graph : networkx.MultiDiGraph
        A transfer graph (:func:`cr3bp.transfers.graph.build_graph`).

    Returns
    -------
    dict

    Raises
    ------
    None

    Examples
    --------
    >>> import networkx as nx
    >>> from cr3bp.transfers.design import orbit_periods
    >>> orbit_periods(nx.MultiDiGraph())
    {}

    References
    ----------
    Phasing along periodic orbits: Koon, Lo, Marsden & Ross, *Dynamical Systems, the Three-Body
    Problem and Space Mission Design*, 2011, ch. 7 (from memory).
    """
    return {u: d["leg"].details["period_tu"] for u, v, k, d in graph.edges(keys=True, data=True)
            if u == v and k == "stay" and "period_tu" in d["leg"].details}


def no_route_reason(built, error, source, target, constraints: Constraints) -> str:
    """The search's reason why no route exists, plus why the legs at the route's ends (and at the
    nodes it must pass through) were not attempted.

    Parameters
    ----------
    built : cr3bp.transfers.graph.BuildResult
    error : NoSolutionError
        The route search's refusal.
    source, target : nodes
    constraints : cr3bp.transfers.search.Constraints

    Returns
    -------
    str

    Raises
    ------
    None

    Examples
    --------
    >>> import networkx as nx
    >>> from types import SimpleNamespace
    >>> from cr3bp.transfers.design import no_route_reason
    >>> from cr3bp.transfers.search import Constraints
    >>> built = SimpleNamespace(graph=nx.MultiDiGraph(), pruned=[{"reason": "parking node 'leo' joins periodic orbits only"}])
    >>> no_route_reason(built, "no route", SimpleNamespace(name="leo"), SimpleNamespace(name="gate"), Constraints())
    "no route (not attempted: parking node 'leo' joins periodic orbits only)"

    References
    ----------
    Dijkstra, "A note on two problems in connexion with graphs", *Numerische Mathematik* 1,
    269-271, 1959, and Martins, "On a multicriteria shortest path problem", *European Journal of
    Operational Research* 16, 1984 (route search); Betts, *Practical Methods for Optimal Control
    and Estimation Using Nonlinear Programming*, 2nd ed., 2010, ch. 4 (stitching by multiple
    shooting, from memory).
    """
    ends = {source.name, target.name} | {node_label(built.graph, n) for n in constraints.through}
    why = sorted({p["reason"] for p in built.pruned if any(f"'{e}'" in p["reason"] for e in ends)})
    return str(error) + (f" (not attempted: {'; '.join(why)})" if why else "")


def design_transfer(system, nodelist, source, target, constraints: Constraints = Constraints(), *,
                    objective: str = "dv", best: int = 3, pareto: bool = True, stitch: bool = True,
                    workers=None, scheduler=None, catalog=None, tof_days=None, progress=None,
                    on_stage=None, optimise: bool = False, impulses: int = 3) -> TransferDesign:
    """Build the transfer graph of ``nodelist``, rank the routes from ``source`` to ``target``,
    find the Pareto set, and stitch the best route (the one pipeline ``librate route`` and a
    scenario's ``[[transfers]]`` both call).

    Parameters
    ----------
    system : System (dimensional)
    nodelist : cr3bp.transfers.nodes.NodeList
    source, target : nodes
        Nodes of ``nodelist`` (see :func:`cr3bp.transfers.nodes.find_node`).
    constraints : cr3bp.transfers.search.Constraints
        Caps; ``through`` and ``avoid`` hold node ids.
    objective : {"dv", "tof"}
        Ranking of the routes.
    best : int
        How many ranked routes.
    pareto, stitch : bool
        Also find the Pareto set / stitch the best route.
    workers, scheduler, catalog, tof_days, progress
        As :func:`cr3bp.transfers.graph.build_graph`.
    on_stage : callable(stage, value), optional
        Told ``("built", BuildResult)`` once the graph is built, ``("stitching", Route)``
        before the stitching (and ``("optimising", Route)`` before :func:`optimise_route`).
    optimise : bool
        Also optimise the best route's orbit-to-orbit legs (reported beside the route; the
        stitched route keeps the graph's legs).
    impulses : {2, 3}
        Impulses per optimised leg.

    Returns
    -------
    TransferDesign

    Raises
    ------
    NoSolutionError
        No route meets the constraints (the message names the binding constraint and the
        nodes by their names, and why the legs at the ends were not attempted).
    InputError
        A bad objective, ``best``, node or cap.
    ConvergenceError
        The stitching cannot reach continuity.

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import EXAMPLE_NODE_LIST, parse_nodes
    >>> em = system("earth-moon")
    >>> nodes = parse_nodes(EXAMPLE_NODE_LIST, em)      # two fixed states, a and b
    >>> a, b = nodes.nodes
    >>> from cr3bp.transfers.design import design_transfer
    >>> d = design_transfer(em, nodes, a, b, workers=1)
    >>> d.stitched.nodes, d.not_stitched
    (('a', 'b'), None)

    References
    ----------
    Dijkstra, "A note on two problems in connexion with graphs", *Numerische Mathematik* 1,
    269-271, 1959, and Martins, "On a multicriteria shortest path problem", *European Journal of
    Operational Research* 16, 1984 (route search); Betts, *Practical Methods for Optimal Control
    and Estimation Using Nonlinear Programming*, 2nd ed., 2010, ch. 4 (stitching by multiple
    shooting, from memory).
    """
    built = build_graph(system, nodelist, workers=workers, scheduler=scheduler, catalog=catalog,
                        progress=progress, tof_days=tof_days)
    g = built.graph
    if on_stage is not None:
        on_stage("built", built)
    try:
        routes = best_routes(g, source.id, target.id, constraints, objective, int(best))
    except NoSolutionError as e:
        raise NoSolutionError(no_route_reason(built, e, source, target, constraints)) from None
    front = pareto_routes(g, source.id, target.id, constraints) if pareto else []
    stitched, not_stitched = None, None
    if stitch:
        if on_stage is not None:
            on_stage("stitching", routes[0])
        try:
            # where two legs meet an orbit at different phases, a coast along it joins them
            stitched = stitch_route(system, routes[0], constraints, periods=orbit_periods(g))
        except PhasingError as e:
            not_stitched = str(e)
    optimised = ()
    if optimise:
        if on_stage is not None:
            on_stage("optimising", routes[0])
        optimised = optimise_route(system, nodelist, routes[0], impulses=impulses, catalog=catalog)
    return TransferDesign(built, source, target, tuple(routes), tuple(front), stitched, not_stitched, optimised)


def optimise_route(system, nodelist, route, *, impulses: int = 3, catalog=None) -> tuple:
    """Optimise every leg of ``route`` that joins two orbit nodes (a two-impulse targeted leg of
    the graph, or a manifold leg with its phases) by :func:`cr3bp.transfers.optimise.optimise_transfer`,
    started from that leg.

    Parameters
    ----------
    system : System
        The system of the route.
    nodelist : NodeList
        The nodes of the design (orbit nodes are resolved once, on the first leg that needs
        them, by :func:`resolve_orbits`).
    route : Route
        The route found by the search (its ``nodes`` and ``legs``).
    impulses : int, optional
        Impulses of each optimised transfer (default 3), as
        :func:`cr3bp.transfers.optimise.optimise_transfer`.
    catalog : optional
        The orbit catalogue used to resolve the orbit nodes.

    Returns
    -------
    tuple of (leg index, OrbitTransfer or str): the optimised transfer, or why the leg was not
    optimised (not between two orbits, no start, the optimiser's error). Legs that do not join
    two different orbit nodes have no entry.

    Raises
    ------
    None
        A leg's :class:`~cr3bp.errors.LibrateError` or ``KeyError`` is caught and reported as
        that leg's text entry; other errors propagate.

    Examples
    --------
    >>> for k, res in optimise_route(system, nodelist, route):      # doctest: +SKIP
    ...     print(k + 1, res if isinstance(res, str) else res.dv_mps)

    References
    ----------
    Betts, J. T., "Practical Methods for Optimal Control and Estimation Using Nonlinear
    Programming", 2nd ed., SIAM (2010) (direct optimisation of the impulses and times);
    Lawden, D. F., "Optimal Trajectories for Space Navigation", Butterworths (1963) (the
    primer-vector conditions of an optimal impulsive transfer).
    """
    from .optimise import optimise_transfer, start_from_record    # lazy: scipy's optimiser, only when asked
    byid = {n.id: n for n in nodelist.nodes}
    orbits = None
    out = []
    for k, leg in enumerate(route.legs):
        u, v = route.nodes[k], route.nodes[k + 1]
        if not (isinstance(byid.get(u), OrbitNode) and isinstance(byid.get(v), OrbitNode)) or u == v:
            continue
        rec = leg.record() if hasattr(leg, "record") else leg.get("leg", leg)
        try:
            if orbits is None:
                orbits = resolve_orbits(system, nodelist, catalog=catalog)
            oa, ob = (_orbit_from_plain(system, orbits[n]) for n in (u, v))
            # a targeted leg record starts the optimiser; anything else: the phase sweep
            start = (start_from_record(system, rec)
                     if isinstance(rec, dict) and rec.get("method") == "targeted" else None)
            out.append((k, optimise_transfer(oa, ob, start, impulses=impulses)))
        except (LibrateError, KeyError) as e:
            out.append((k, f"leg {k + 1} not optimised: {e}"))
    return tuple(out)


def maneuver_columns(stitched, exported=()):
    """The maneuver table of a stitched route: its design (CR3BP) Δv and, per export, the Δv
    measured on the exported trajectory, side by side and labelled, with a warning where they
    differ by more than 1 %.

    Parameters
    ----------
    stitched : cr3bp.transfers.stitch.StitchedRoute
    exported : sequence of dict
        Per export: ``file``, ``description`` and ``maneuvers`` (the rows of
        :func:`cr3bp.io.export.maneuver_table`); an export whose row count differs is left out.

    Returns
    -------
    headers : list of str
        The CSV header (:data:`MANEUVER_HEADERS` and one ``dv_exported_mps[FILE]`` per export).
    rows : list of list
    maneuvers : list of dict
        With ``dv_design_mps`` and one ``dv_exported_mps[FILE]`` per export.
    models : dict
        The meaning of each Δv column.
    warnings : list of str

    Raises
    ------
    KeyError
        A maneuver or export row lacks a column (those of the stitcher and the exporter have them).

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import EXAMPLE_NODE_LIST, parse_nodes
    >>> em = system("earth-moon")
    >>> nodes = parse_nodes(EXAMPLE_NODE_LIST, em)      # two fixed states, a and b
    >>> a, b = nodes.nodes
    >>> from cr3bp.transfers.design import design_transfer, maneuver_columns
    >>> st = design_transfer(em, nodes, a, b, workers=1).stitched
    >>> headers, rows, mans, models, warnings = maneuver_columns(st)
    >>> headers[:3], len(rows) == len(st.maneuvers), warnings
    (['t_days', 'node', 'maneuver'], True, [])

    References
    ----------
    Comparing the design and flown Δv of each burn: common practice.
    """
    mans = [dict(m, dv_design_mps=m["dv_mps"]) for m in stitched.maneuvers]
    mname = getattr(stitched, "model", "CR3BP")
    models = {"dv_design_mps": DV_DESIGN_NOTE if mname == "CR3BP" else DV_DESIGN_NOTE.replace(
        "the CR3BP design", f"the {mname} (Sun-Earth-Moon) design of the low-energy leg")}
    warnings = []
    for e in exported:
        rows = e["maneuvers"]
        if len(rows) != len(mans):
            continue
        key = f"dv_exported_mps[{e['file']}]"
        models[key] = f"the velocity jump of the exported trajectory in {e['file']} ({e['description']})"
        for m, r in zip(mans, rows):
            m[key] = r["dv_exported_mps"]
            if dv_differs(r):
                warnings.append(f"maneuver at {m['t_days']:.4f} d ({m['node']}): design ({mname}) "
                                f"{m['dv_design_mps']:.1f} m/s, exported in {e['file']} {r['dv_exported_mps']:.1f} m/s "
                                f"({r['dv_change_percent']:+.1f}%): budget with the model you will fly")
    keys = [k for k in models if k != "dv_design_mps"]
    rows = [[m["t_days"], m["node"], m["name"], *m["position_km"], *m["dv_vector_mps"], m["dv_design_mps"], *(m[k] for k in keys)]
            for m in mans]
    return MANEUVER_HEADERS + keys, rows, mans, models, warnings
