"""Transfers of a mission run: each scenario transfer becomes a node list whose design
(:func:`cr3bp.transfers.design.design_transfer`: graph, ranked routes, Pareto set, the best route
stitched) is written as tables and drawn, and whose stitched trajectory the exports sample."""

from __future__ import annotations

import dataclasses
from types import SimpleNamespace


from ..errors import InputError, NoSolutionError
from .outputs import csv_text, json_text, save_figures, say
from ..vocabulary import CR3BP_DEPARTURE_PATHS, ORBIT_TARGETS
from .. import units
from ..cautions import CAUTION, caution as model_caution
from ..io import export
from ..io.atomic import write_text
from ..io.route import trajectory_rows, to_export
from ..transfers.nodes import EdgeHint, NodeList, orbit_node, parking_node, find_node
from ..tubes.manifolds import corridor_tubes

TARGET_KEYS = ORBIT_TARGETS


def orbit_text(entry: dict) -> str:
    """The orbit request text of a scenario orbit (the grammar of :mod:`cr3bp.orbits.request`).

    Parameters
    ----------
    entry : dict
        The scenario's ``[orbits.NAME]`` table.

    Returns
    -------
    str
        The request text.

    Raises
    ------
    KeyError
        An entry without ``family``.

    Examples
    --------
    >>> orbit_text({"family": "halo", "point": "L2", "branch": "south", "resonant": "9:2"})
    'halo 9:2 L2 south'

    References
    ----------
    Szebehely, V., "Theory of Orbits", Academic Press (1967) (the CR3BP and its units).
    """
    words = [entry["family"]]
    if entry.get("resonant"):
        words.append(entry["resonant"])
    words += [w for w in (entry.get("point"), entry.get("branch")) if w]
    for k in TARGET_KEYS:
        if k in entry:
            words.append(f"{k}={entry[k]}")
    return " ".join(words)


def transfer_nodes(plan, index: int, transfer: dict):
    """The node list of one scenario transfer (every node to every other, the node-list
    defaults), built directly: the orbits by their request text, ``"parking BODY ALTITUDE"``
    as a parking orbit. The nodes carry the scenario's names.

    Parameters
    ----------
    plan : Plan
        The checked scenario.
    index : int
        The transfer's position in ``[[transfers]]``.
    transfer : dict
        Its table.

    Returns
    -------
    list
        The nodes (:mod:`cr3bp.transfers.nodes`).

    Raises
    ------
    ScenarioError
        A node the transfer layer refuses, with the scenario's file and line.

    Examples
    --------
    >>> nodes = transfer_nodes(plan, 0, plan.data["transfers"][0])     # doctest: +SKIP

    References
    ----------
    Koon, W. S., Lo, M. W., Marsden, J. E. & Ross, S. D., "Dynamical Systems, the Three-Body
    Problem and Space Mission Design", Marsden Books (2011), ch. 7 (transfers between orbits).
    """
    system = plan.system
    nodes = []
    for n in dict.fromkeys([transfer["from"], *transfer.get("via", []), transfer["to"]]):
        try:
            if n.startswith("parking "):
                parts = n.split()
                if len(parts) != 3:
                    raise InputError(f"'{n}' must read 'parking BODY ALTITUDE', e.g. 'parking earth 200km'")
                # the transfer's 'path' is how legs leave its starting parking orbit ('auto' and
                # 'low-energy' are not a node's path: the graph's default and a hint, below)
                path = transfer.get("path") if n == transfer["from"] else None
                path = path if path in CR3BP_DEPARTURE_PATHS else None
                site = {}
                if path is not None and transfer.get("launch_latitude") is not None:
                    # a launch site's latitude: the departure dated at the scenario's epoch (route time 0)
                    from ..time.frames import epoch_from_text   # lazy: the ephemeris, dated departures only
                    site = {"launch_latitude": transfer["launch_latitude"],
                            "launch_tdb_s": epoch_from_text(plan.epoch) if isinstance(plan.epoch, str)
                            else float(plan.epoch)}
                nodes.append(parking_node(n, system, parts[1], parts[2], path=path, **site))
            elif "torus" in plan.data["orbits"][n]:
                # a torus: its node's reference state is the torus at phase (0, 0); a leg from an
                # Earth parking orbit is a direct departure over both torus angles
                # (cr3bp.tori.departure), one from another parking orbit runs through the torus's
                # manifold's periapsis (cr3bp.tori.parking)
                nodes.append(orbit_node(n, system, plan.data["orbits"][n]["torus"]))
            else:
                nodes.append(orbit_node(n, system, orbit_text(plan.data["orbits"][n])))
        except InputError as e:
            raise InputError(f"transfer '{transfer['name']}': node '{n}': {e}") from None
    hints = ()
    if transfer.get("path") == "low-energy":
        # the legs from the parking orbit to each orbit of the transfer are low-energy ones,
        # launched at the scenario's epoch (route time 0)
        from ..time.frames import epoch_from_text   # lazy: the ephemeris, only for a low-energy transfer
        launch = epoch_from_text(plan.epoch) if isinstance(plan.epoch, str) else float(plan.epoch)
        hints = tuple(EdgeHint(transfer["from"], n.name, path="low-energy", launch_tdb_s=launch, both_ways=False)
                      for n in nodes if n.kind == "orbit" and transfer["from"].startswith("parking "))
    return NodeList(None, tuple(nodes), hints, file=f"{plan.path} [transfers {index}]")


def design_transfers(plan, orbits, out, *, catalog=None, workers=None, scheduler=None, progress=None,
                     reduced=False):
    """Design every scenario transfer (:func:`cr3bp.transfers.design.design_transfer`, the
    pipeline ``librate route`` runs too); write its tables and figures.

    Returns ``(routes, stitched, figures)``: per transfer name, a summary dict for the report and
    the :class:`cr3bp.transfers.stitch.StitchedRoute`; the figures written (name -> path and caption).

    Parameters
    ----------
    plan : Plan
        The checked scenario.
    orbits : dict
        Name -> PeriodicOrbit.
    out : Outputs
        Where the tables and figures go.
    catalog : Catalog, optional
        The catalogue.
    workers, scheduler
        Leg computation in a process pool or on a dask cluster.
    progress : callable(str), optional
        One line per step.
    reduced : bool, optional
        Smaller samples (tests).

    Returns
    -------
    routes : dict
        Transfer name -> summary for the report.
    stitched : dict
        Transfer name -> StitchedRoute.
    figures : dict
        Figure name -> (path, caption).

    Raises
    ------
    ScenarioError
        A transfer that cannot be designed, with the scenario's file and line.

    Examples
    --------
    >>> routes, stitched, figs = design_transfers(plan, orbits, out)      # doctest: +SKIP

    References
    ----------
    Koon, W. S., Lo, M. W., Marsden, J. E. & Ross, S. D., "Dynamical Systems, the Three-Body
    Problem and Space Mission Design", Marsden Books (2011), ch. 7.
    """
    from ..transfers.design import design_transfer  # lazy: heavy library (networkx, via cr3bp.transfers.design)
    from ..transfers.search import Constraints  # lazy: heavy library (networkx, via cr3bp.transfers.search)
    system = plan.system
    routes, stitched = {}, {}
    figures = {}
    for i, t in enumerate(plan.data.get("transfers", [])):
        name = t["name"]
        say(progress, f"transfer '{name}': building the transfer graph")
        nodelist = transfer_nodes(plan, i, t)
        nodes = nodelist.nodes

        def tick(done, total, leg, _n=name):
            if done == total or done % 5 == 0:
                say(progress, f"transfer '{_n}': leg {done} of {total}")
        src, dst = find_node(nodes, t["from"]), find_node(nodes, t["to"])
        through = tuple(find_node(nodes, v).id for v in t.get("via", []))
        dv = system.mps(units.velocity(t["max_dv"], system)) if "max_dv" in t else None
        tof = system.days(units.time(t["max_tof"], system)) if "max_tof" in t else None
        c = Constraints(max_dv_mps=dv, max_tof_days=tof, through=through)
        label = {n.id: n.name for n in nodes}
        try:
            design = design_transfer(system, nodelist, src, dst, c, objective="dv", best=int(t.get("best", 3)),
                                     workers=workers, scheduler=scheduler, catalog=catalog, progress=tick,
                                     on_stage=lambda stage, _, _n=name: stage == "stitching" and say(
                                         progress, f"transfer '{_n}': stitching the best route by multiple shooting"))
        except NoSolutionError as e:
            raise NoSolutionError(f"transfer '{name}': {e}") from None
        if design.stitched is None:
            raise NoSolutionError(f"transfer '{name}': the best route is not stitched: {design.not_stitched}")
        ranked, front, st = design.routes, design.pareto, design.stitched
        stitched[name] = st

        def rd(r):
            d = r.to_dict()
            for leg in d["legs"]:
                leg["from"], leg["to"] = label.get(leg["from"], leg["from"]), label.get(leg["to"], leg["to"])
            d["nodes"] = [label.get(n, n) for n in d["nodes"]]
            return d
        routes[name] = {"best": rd(ranked[0]), "ranked": [rd(r) for r in ranked],
                        "pareto": [rd(r) for r in front], "stitched": st.to_dict(),
                        "maneuvers": list(st.maneuvers),
                        "note": (f"stitched ({st.model}): Δv {st.dv_total_mps:.2f} m/s (legs alone {st.legs_dv_total_mps:.2f} m/s), "
                                 f"time of flight {st.tof_days:.3f} d to the step-off point on the final orbit "
                                 "(coasts included), largest position jump "
                                 f"{st.continuity_lu * system.length_km * 1e3:.2e} m; {st.note}")}
        departure = departure_leg(ranked[0])
        if departure is not None:   # the departure's numbers as designed (CR3BP), for the JSON and the report
            routes[name]["departure"] = departure.details["departure"]
        back = return_leg(ranked[0])
        if back is not None:        # the return's numbers as designed (CR3BP), for the JSON and the report
            routes[name]["return"] = back.details["return"]
        routes[name]["labels"] = {str(k): v for k, v in label.items()}
        write_route_tables(plan, name, routes[name], out, st)
        headers, rows = trajectory_rows(st)
        write_text(out.path(f"route-{name}-trajectory.csv"), csv_text(headers, rows, [f"stitched transfer {name}"]))
        figures.update(_figures(plan, t, orbits, ranked, front, st, out))
    return routes, stitched, figures


def write_route_tables(plan, name, summary, out, stitched, exported=()):
    """``route-NAME.json`` and ``route-NAME-maneuvers.csv``: the stitched route's maneuvers with
    their design (CR3BP) Δv and, per export of this transfer (``exported``: dicts with ``file``,
    ``anchor``, ``frame``, ``center`` and ``maneuvers``, the rows of
    :func:`cr3bp.io.export.maneuver_table`), the Δv measured on the exported trajectory
    (:func:`cr3bp.transfers.design.maneuver_columns`, the columns ``librate route`` writes too).
    Written after the design and again once the exports exist.

    Parameters
    ----------
    plan : Plan
        The checked scenario.
    name : str
        The transfer's name.
    summary : dict
        Its summary.
    out : Outputs
        Where the tables go.
    stitched : StitchedRoute
        The stitched route.
    exported : list of dict, optional
        The exports of this transfer.

    Returns
    -------
    None

    Raises
    ------
    OutputError
        A table cannot be written.

    Examples
    --------
    >>> write_route_tables(plan, "corridor", summary, out, stitched)     # doctest: +SKIP

    References
    ----------
    RFC 4180, "Common Format and MIME Type for Comma-Separated Values (CSV) Files" (2005).; RFC 8259, "The JavaScript Object Notation (JSON) Data Interchange Format" (2017).
    """
    from ..transfers.design import maneuver_columns  # lazy: heavy library (networkx, via cr3bp.transfers.design)
    headers, rows, mans, models, warnings = maneuver_columns(stitched, [
        dict(e, description=f"{e['anchor']} anchoring, {e['frame']}, centre {e['center']}") for e in exported])
    warnings = [f"WARNING: transfer '{name}', {w}" for w in warnings]
    summary["maneuvers_labelled"] = mans
    summary["dv_models"] = models
    summary["dv_warnings"] = warnings
    body = {k: v for k, v in summary.items() if k not in ("labels", "maneuvers_labelled")}
    body["maneuvers"] = mans
    caution = plan_caution()
    if getattr(stitched, "model", "CR3BP") != "CR3BP":     # a low-energy leg: its own model's caution
        caution = model_caution("bicircular")
    write_text(out.path(f"route-{name}.json"), json_text({"caution": caution, "transfer": name, **body}))
    write_text(out.path(f"route-{name}-maneuvers.csv"), csv_text(
        headers, rows, [f"maneuvers of transfer {name}; Δv vectors in the rotating frame"]
        + [f"{k}: {v}" for k, v in models.items()] + warnings))


def plan_caution():
    """The caution every scenario output carries (:data:`cr3bp.cautions.CAUTION`).

    Returns
    -------
    str
        The caution.

    Raises
    ------
    None
        Nothing is checked.

    Examples
    --------
    >>> "preliminary" in plan_caution()
    True

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    return CAUTION


def _figures(plan, transfer, orbits, ranked, front, st, out):
    from ..plotting.routes import plot_corridor, plot_pareto  # lazy: heavy library (matplotlib, via cr3bp.plotting.routes)
    name = transfer["name"]
    formats = plan.data.get("plots", {}).get("formats", ["png"])
    if not plan.data.get("plots", {}).get("corridors", True):
        return {}
    figures = {}
    legs = list(ranked[0].legs)
    from .tori import is_torus  # lazy: only for tori
    periodic = [o for o in route_orbits(transfer, orbits) if not is_torus(o)]   # tori have no orbit tubes
    ax = plot_corridor(st, legs, tubes=corridor_tubes(periodic))
    figures[f"corridor-{name}"] = save_figures(
        ax.figure, out, f"corridor-{name}", formats,
        f"{plan.name}: transfer '{name}', the best route stitched by multiple shooting over the "
        "zero-velocity curves of its legs; triangles: maneuvers.")
    if len(ranked) > 1:          # one route is one point: no trade to draw
        ax = plot_pareto(ranked, front, ranked[0])
        figures[f"pareto-{name}"] = save_figures(
            ax.figure, out, f"pareto-{name}", formats,
            f"{plan.name}: transfer '{name}', total Δv against time of flight of the ranked routes and the Pareto set.")
    departure = departure_leg(ranked[0])
    if departure is not None:
        from ..plotting.departures import plot_departure_leg  # lazy: heavy library (matplotlib)
        d = departure.details["departure"]
        fig = plot_departure_leg(departure, orbits[departure_target(transfer)])
        figures[f"departure-{name}"] = save_figures(
            fig, out, f"departure-{name}", formats,
            f"{plan.name}: transfer '{name}', its {d['path']} departure from {d['from']} as designed in the "
            "CR3BP (before the route is stitched), rotating Earth-Moon frame; below, zoomed on the orbit it "
            "inserts into; the box lists the departure's numbers, each with its model.")
    back = return_leg(ranked[0])
    if back is not None:
        from ..plotting.departures import plot_departure_leg  # lazy: heavy library (matplotlib)
        d = back.details["return"]
        fig = plot_departure_leg(back, orbits[return_origin(transfer)])
        figures[f"return-{name}"] = save_figures(
            fig, out, f"return-{name}", formats,
            f"{plan.name}: transfer '{name}', its {d['path']} return to {d['to']} as designed in the "
            "CR3BP (before the route is stitched), rotating Earth-Moon frame; below, zoomed on the orbit it "
            "leaves; the box lists the return's numbers, each with its model.")
    return figures


def departure_leg(route):
    """The first leg of ``route`` when it is a departure from a parking orbit
    (:func:`cr3bp.transfers.departure.as_leg`), else None.

    Parameters
    ----------
    route : cr3bp.transfers.search.Route
        A ranked route.

    Returns
    -------
    Leg or None

    Raises
    ------
    None

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> departure_leg(SimpleNamespace(legs=[SimpleNamespace(kind="targeted", details={})])) is None
    True

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    legs = list(route.legs)
    if legs and legs[0].kind == "departure" and "departure" in (legs[0].details or {}):
        return legs[0]
    return None


def return_leg(route):
    """The last leg of ``route`` when it is a return to an Earth parking orbit
    (:func:`cr3bp.transfers.returns.as_leg`), else None.

    Parameters
    ----------
    route : cr3bp.transfers.search.Route
        A ranked route.

    Returns
    -------
    Leg or None

    Raises
    ------
    None

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> return_leg(SimpleNamespace(legs=[SimpleNamespace(kind="arrival", details={"return": {}})])).kind
    'arrival'

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    legs = list(route.legs)
    if legs and legs[-1].kind == "arrival" and "return" in (legs[-1].details or {}):
        return legs[-1]
    return None


def return_origin(transfer: dict) -> str:
    """The scenario name of the orbit a transfer's return leg leaves: the last ``via`` orbit,
    else ``from``.

    Parameters
    ----------
    transfer : dict
        The ``[[transfers]]`` table.

    Returns
    -------
    str

    Raises
    ------
    KeyError
        A transfer without ``from``.

    Examples
    --------
    >>> return_origin({"from": "relay", "to": "parking earth 200km"})
    'relay'

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    return (transfer.get("via") or [transfer["from"]])[-1]


def departure_target(transfer: dict) -> str:
    """The scenario name of the orbit a transfer's departure leg inserts into: the first
    ``via`` orbit, else ``to`` (a route passes its ``via`` orbits in order).

    Parameters
    ----------
    transfer : dict
        The ``[[transfers]]`` table.

    Returns
    -------
    str

    Raises
    ------
    KeyError
        A transfer without ``to``.

    Examples
    --------
    >>> departure_target({"from": "parking earth 200km", "to": "relay"})
    'relay'

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    return (transfer.get("via") or [transfer["to"]])[0]


def route_orbits(transfer: dict, orbits: dict) -> list:
    """The solved orbits a scenario transfer starts from, passes through or ends on.

    Parameters
    ----------
    transfer : dict
        The ``[[transfers]]`` table (``from``, ``via``, ``to``).
    orbits : dict
        Name -> PeriodicOrbit.

    Returns
    -------
    list
        The orbits in route order (parking orbits left out).

    Raises
    ------
    KeyError
        A transfer without ``from`` or ``to``.

    Examples
    --------
    >>> route_orbits({"from": "a", "to": "b"}, {"b": "orbit b"})
    ['orbit b']

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    return [orbits[n] for n in (transfer["from"], *transfer.get("via", []), transfer["to"]) if n in orbits]


def transfer_trajectory(plan, st, spec, ts, step_s, ex, model):
    """The stitched transfer sampled on the export's clock, with its maneuvers.

    Parameters
    ----------
    plan : Plan
        The checked scenario.
    st : StitchedRoute
        The stitched route.
    spec : FrameSpec
        The export's frame.
    ts : str
        The export's time system.
    step_s : float
        The sample step on that clock, s.
    ex : dict
        The ``[[exports]]`` entry.
    model : dict
        Model lines for the file's header.

    Returns
    -------
    Trajectory
        Ready for :func:`cr3bp.io.export.write`.

    Raises
    ------
    InputError
        Too many samples.

    Examples
    --------
    >>> traj = transfer_trajectory(plan, st, spec, "UTC", 600.0, ex, {})   # doctest: +SKIP

    References
    ----------
    Hairer, E., Nørsett, S. P. & Wanner, G., "Solving Ordinary Differential Equations I",
    2nd ed., Springer (1993), sec. II.6.
    """
    base = to_export(st, spec, ex["object"].upper())
    span = float(st.times_tu[-1] - st.times_tu[0])
    grid = export.epoch_grid(spec, ts, span, step_s)
    pieces = [SimpleNamespace(t=seg.t_tu, states=seg.states) for seg in base.segments]
    segs, _ = export.sample_legs(plan.system, pieces, grid, join_tol=1e-8)
    m = dict(model)
    m.update(base.model)
    return dataclasses.replace(base, segments=segs, time_system=ts, model=m)
