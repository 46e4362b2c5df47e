"""librate route: ranked routes between two nodes of a transfer graph, the Pareto set, and the
best route stitched into one continuous trajectory with its maneuver table."""

from cr3bp.vocabulary import FRAMES

from .. import common
from . import _graphing

NAME = "route"
ORDER = 75
HELP = "rank the routes between two nodes, stitch the best into one trajectory, export and plot it"
EXAMPLE = ('librate route --system earth-moon --nodes nodes.toml --from gate --to relay '
           '--max-dv 800m/s --best 5 --pareto --plot corridor.png --out run1')

#: compiled kernels this command uses (checked for the first-run compile notice)
KERNELS = (("cr3bp.integrate.dop853", "integrate"), ("cr3bp.integrate.lanes", "integrate_lanes"))


def add_arguments(p):
    common.add_system_options(p)
    _graphing.add_build_options(p)
    g = p.add_argument_group("the route")
    g.add_argument("--from", dest="source", metavar="NODE", required=True,
                   help="start: a node's name, its orbit text, or 'parking BODY ALTITUDE'")
    g.add_argument("--to", dest="target", metavar="NODE", required=True, help="end (as --from)")
    g.add_argument("--max-dv", metavar="SPEED", help="cap on the total Δv, e.g. 800m/s")
    g.add_argument("--max-tof", metavar="TIME", help="cap on the time of flight, e.g. 120d")
    g.add_argument("--max-legs", metavar="N", help="cap on the number of legs")
    g.add_argument("--min-altitude", metavar="LENGTH", help="least altitude over either primary, e.g. 100km")
    g.add_argument("--through", metavar="NODE", action="append", default=[], help="pass through NODE (repeatable)")
    g.add_argument("--avoid", metavar="NODE", action="append", default=[], help="never visit NODE (repeatable)")
    g.add_argument("--best", metavar="K", default="5", help="how many ranked routes (default 5)")
    g.add_argument("--objective", choices=("dv", "tof"), default="dv", help="rank by total Δv or time of flight")
    g.add_argument("--pareto", action="store_true", help="also give the Pareto set of Δv against time of flight")
    g.add_argument("--no-stitch", action="store_true", help="rank only; do not stitch the best route")
    g.add_argument("--optimise", action="store_true",
                   help="also optimise each leg of the best route that joins two periodic orbits (up to three "
                        "impulses, free phases and times of flight, multiple shooting in the CR3BP), started "
                        "from the graph's leg; reported beside the route, whose stitched trajectory keeps the "
                        "graph's legs")
    q = p.add_argument_group("output")
    common.add_plot_option(q, "draw the transfer corridor (the Pareto front and the graph go beside "
                              "it as FILE-pareto and FILE-graph)")
    q.add_argument("--out", metavar="DIR", help="folder for the stitched route: route.json, trajectory.csv, "
                   "maneuvers.csv")
    q.add_argument("--epoch", metavar="ISO", help="with --out: also write route.oem (CCSDS OEM), the rotating "
                   "frame's time 0 at this epoch, e.g. 2031-03-01T00:00:00Z")
    q.add_argument("--frame", choices=FRAMES, default="j2000-equator",
                   help="axes of route.oem (default j2000-equator, centred on the larger primary)")
    q.add_argument("--format", choices=("table", "json"), default="table", help="screen output (default table)")
    common.add_verbosity(q)


def _constraints(args, system, nodes):
    from cr3bp.transfers.search import Constraints
    from cr3bp.transfers.nodes import find_node
    dv = tof = alt = legs = None
    if args.max_dv is not None:
        from cr3bp.validate import quantity
        dv = system.mps(quantity("--max-dv", args.max_dv, "velocity", system, sign="nonnegative"))
    if args.max_tof is not None:
        from cr3bp.validate import quantity
        tof = system.days(quantity("--max-tof", args.max_tof, "time", system, sign="nonnegative"))
    if args.min_altitude is not None:
        from cr3bp.validate import quantity
        alt = system.km(quantity("--min-altitude", args.min_altitude, "length", system, sign="nonnegative"))
    if args.max_legs is not None:
        legs = common.whole_number("--max-legs", args.max_legs, 1, 1000)
    through = tuple(find_node(nodes, t).id for t in args.through)
    avoid = tuple(find_node(nodes, t).id for t in args.avoid)
    return Constraints(dv, tof, legs, alt, through, avoid)


def _side(path, tag):
    from pathlib import Path
    p = Path(path)
    return str(p.with_name(f"{p.stem}-{tag}{p.suffix}"))


def run(args):
    from cr3bp import api
    from cr3bp.errors import InputError
    from cr3bp.transfers.nodes import find_node

    system = common.resolve_system(args)
    if args.no_stitch and (args.out or args.plot):
        raise InputError("--out and --plot show the stitched route; leave out --no-stitch")
    if args.epoch is not None and not args.out:
        raise InputError("--epoch sets the time of route.oem; give --out DIR too")
    frame_spec = None
    if args.epoch is not None:
        from cr3bp.time.frames import frame
        frame_spec = frame(system, args.epoch, axes=args.frame)       # checked before any work
    k = common.whole_number("--best", args.best, 1, 1000)

    def ends(nodelist):                                 # checked before any leg is computed
        nodes = nodelist.nodes
        src, dst = find_node(nodes, args.source), find_node(nodes, args.target)
        if src.id == dst.id:
            raise InputError("--from and --to name the same node")
        return src, dst, _constraints(args, system, nodes)
    nodelist, settings, (src, dst, constraints) = _graphing.prepare(args, system, ends)
    nodes = nodelist.nodes

    def stage(what, value):
        if what == "built":
            _graphing.built(args, value)
        elif what == "optimising":
            common.progress(args, "librate: optimising the best route's orbit-to-orbit legs...")
        else:
            common.progress(args, f"librate: stitching the best route ({value.n_legs} leg(s)) by multiple shooting "
                                  "(a route of one low-energy leg: as designed, in the bicircular model)...")
    try:
        design = api.design_route(system, nodelist, args.source, args.target, objective=args.objective, best=k,
                                  max_dv=args.max_dv, max_tof=args.max_tof, min_altitude=args.min_altitude,
                                  max_legs=constraints.max_legs, through=args.through, avoid=args.avoid,
                                  pareto=args.pareto, stitch=not args.no_stitch, optimise=args.optimise,
                                  on_stage=stage, **settings)
    finally:
        if settings["catalog"] is not None:
            settings["catalog"].close()
    result, g = design.built, design.graph
    routes, front, stitched, not_stitched = list(design.routes), list(design.pareto), design.stitched, design.not_stitched
    if not_stitched:
        common.progress(args, f"librate: the best route is not stitched: {not_stitched}")
    name = {n.id: n.name for n in nodes}
    files = []
    table, warn = [], ""
    if args.out and stitched is not None:
        traj = None
        if frame_spec is not None:
            from cr3bp.io.export import dv_warning, maneuver_table
            from cr3bp.io.route import to_export
            traj = to_export(stitched, frame_spec)
            table = maneuver_table(traj)          # Δv measured on the exported trajectory
            warn = dv_warning(table)
        files += _export(args, system, routes, front, stitched, name, table)
        if traj is not None:
            from pathlib import Path as _P

            from cr3bp.io.export import write_oem
            oem = str(_P(args.out) / "route.oem")
            write_oem(oem, traj)
            files.append(oem)
    if args.plot and stitched is not None:
        files += _plots(args, system, g, routes, front, stitched)
    payload = {"system": system.name, "from": src.name, "to": dst.name, "objective": args.objective,
               "constraints": {k2: v for k2, v in constraints.__dict__.items()},
               "routes": [_route_dict(r, name) for r in routes],
               "pareto": [_route_dict(r, name) for r in front] if args.pareto else None,
               "stitched": stitched.to_dict() if stitched is not None else None,
               "not_stitched": not_stitched,
               "graph": {"nodes": g.number_of_nodes(), "edges": g.number_of_edges(), "computed": result.computed,
                         "cached": result.cached, "pruned": len(result.pruned)},
               "files": files}
    if args.optimise:
        payload["optimised_legs"] = [dict(tr.to_dict(), leg=k + 1) if not isinstance(tr, str) else
                                     {"leg": k + 1, "not_optimised": tr} for k, tr in design.optimised]
    # a route through a low-energy leg: its numbers are the bicircular model's (that caution)
    model = "bicircular" if any(getattr(leg, "model_of", lambda: None)() is not None for leg in routes[0].legs) \
        else "cr3bp"
    if args.format == "json":
        import sys
        sys.stdout.write(common.json_text(payload, model=model))
        return 0
    rows = [[i + 1, " -> ".join(name[n] for n in r.nodes), r.n_legs, r.dv_total_mps, r.tof_arrival_days,
             r.tof_days] for i, r in enumerate(routes)]
    text = common.format_table(["rank", "route", "legs", "dv_total_mps", "tof_arrival_days", "tof_stepoff_days"],
                               rows, title=f"{system.name}: best routes from {src.name} to {dst.name} by "
                                           f"{'total Δv' if args.objective == 'dv' else 'time of flight'}")
    text += tof_note(routes[0]) + "\n"
    if front:
        text += "\n" + common.format_table(
            ["route", "dv_total_mps", "tof_arrival_days", "tof_stepoff_days"],
            [[" -> ".join(name[n] for n in r.nodes), r.dv_total_mps, r.tof_arrival_days, r.tof_days]
             for r in front],
            title="Pareto set (no other route is better on both Δv and time of flight)")
    if stitched is not None:
        ex_head = ["dv_exported_mps[route.oem]"] if table else []
        text += "\n" + common.format_table(
            ["t_days", "node", "maneuver", "dv_x_mps", "dv_y_mps", "dv_z_mps", "dv_design_mps"] + ex_head,
            [[m["t_days"], m["node"], m.get("name", ""), *m["dv_vector_mps"], m["dv_mps"]] + ([r["dv_exported_mps"]] if table else [])
             for m, r in zip(stitched.maneuvers, table or [None] * len(stitched.maneuvers))],
            title=(f"stitched best route ({stitched.model}): Δv {stitched.dv_total_mps:.3f} m/s (legs alone "
                   f"{stitched.legs_dv_total_mps:.3f} m/s), time of flight {stitched.tof_days:.4f} d, "
                   f"largest position jump {stitched.continuity_lu * system.length_km * 1e3:.2e} m; "
                   f"{stitched.note}"))
        for c, v in stitched.constraints.items():
            text += f"{c}: {v['value']:.6g} against {v['limit']:.6g}: {'holds' if v['holds'] else 'VIOLATED'}\n"
        text += (f"Δv vectors and dv_design_mps: the {stitched.model} design, rotating frame." + (
            " dv_exported_mps[route.oem]: the velocity jump of the trajectory in route.oem (its anchoring "
            "rescales speeds)." if table else "") + "\n")
        if warn:
            text += warn + "\n"
    if args.optimise:
        text += "\noptimised orbit-to-orbit legs of the best route (CR3BP; beside the route, not stitched):\n"
        for k, tr in design.optimised:
            text += (f"  leg {k + 1}: {tr}\n" if isinstance(tr, str) else
                     f"  leg {k + 1}: {tr.solution} {tr.dv_mps:.3f} m/s in {tr.tof_days:.4f} d, from the graph's "
                     f"{tr.start.dv_mps:.3f} m/s ({len(tr.maneuvers)} impulses, {tr.iterations} iterations, "
                     f"active bounds: {', '.join(tr.active_bounds) or 'none'})\n")
        if not design.optimised:
            text += "  none: no leg of the best route joins two periodic orbits\n"
    if not_stitched:
        text += f"\nnot stitched: {not_stitched}\n"
    for f in files:
        text += f"wrote {f}\n"
    import sys
    sys.stdout.write(text + common.caution_footer(model))
    return 0


def tof_note(route) -> str:
    """What the two time-of-flight columns mean (CR3BP times)."""
    d = route.arrival_distance_km
    where = (f"first comes within {d:g} km of the final orbit's path (nearest point of the orbit)"
             if d is not None else "reaches its end (the route does not end on a periodic orbit)")
    return (f"tof_arrival_days: CR3BP time from departure until the route {where}; tof_stepoff_days: to "
            "the manifold's step-off point on the final orbit. Caps (--max-tof) and ranking by time use "
            "tof_stepoff_days.")


def _route_dict(r, name):
    d = r.to_dict()
    d["node_names"] = [name[n] for n in r.nodes]
    for leg in d["legs"]:
        leg["from_name"], leg["to_name"] = name[leg["from"]], name[leg["to"]]
    return d


def _export(args, system, routes, front, stitched, name, table=()):
    from pathlib import Path

    from cr3bp.io.atomic import write_text
    from cr3bp.io.route import trajectory_rows
    out = Path(args.out)
    title = f"stitched route {' -> '.join(stitched.nodes)} in {system.name} (mu = {system.mu!r}), rotating frame"
    headers, rows = trajectory_rows(stitched)
    from cr3bp.transfers.design import maneuver_columns
    exported = [{"file": "route.oem", "description": "its frame and anchoring", "maneuvers": list(table)}] if table else []
    mheaders, mrows, mans, models, warnings = maneuver_columns(stitched, exported)
    warnings = [f"WARNING: {w}" for w in warnings]
    files = [str(out / "trajectory.csv"), str(out / "maneuvers.csv"), str(out / "route.json")]
    model = "cr3bp" if stitched.model == "CR3BP" else "bicircular"     # (a low-energy leg's own model)
    if model != "cr3bp":
        title += f"; states, Δv and times of the {stitched.model} model (Sun-Earth-Moon), not the CR3BP"
    write_text(files[0], common.csv_text(headers, rows, [title], model=model))
    write_text(files[1], common.csv_text(mheaders, mrows, [title, "Δv vectors in the rotating frame"]
                                         + [f"{k}: {v}" for k, v in models.items()] + warnings, model=model))
    payload = {"system": system.to_dict(), "stitched": stitched.to_dict(),
               "routes": [_route_dict(r, name) for r in routes], "dv_models": models,
               "maneuvers": mans, "dv_warnings": warnings}
    write_text(files[2], common.json_text(payload, model=model))
    return files


def _plots(args, system, g, routes, front, stitched):
    from cr3bp.plotting import save
    from cr3bp.plotting.routes import plot_corridor, plot_graph, plot_pareto
    from cr3bp.tubes.manifolds import corridor_tubes
    from cr3bp.orbits.request import solve_request
    legs = list(routes[0].legs)
    # the tubes of the periodic orbits on the route: the corridors it rides
    catalog = common.open_catalog(args)
    orbits = [solve_request(system, g.nodes[n]["node"]["orbit"], catalog=catalog)
              for n in dict.fromkeys(routes[0].nodes) if g.nodes[n].get("kind") == "orbit"]
    common.progress(args, f"librate: growing the tubes of {len(orbits)} orbit(s) for the corridor figure...")
    ax = plot_corridor(stitched, legs, tubes=corridor_tubes(orbits))
    model = "cr3bp" if stitched.model == "CR3BP" else "bicircular"     # (a low-energy leg's own model)
    how = ("stitched by multiple shooting" if model == "cr3bp" else
           "one low-energy leg as designed in the bicircular model (Sun-Earth-Moon)")
    save(ax.figure, args.plot, f"{system.name}: best route {how}; dashed: zero-velocity "
         f"curves at each leg's Jacobi constant; triangles: maneuvers (Δv in m/s).", model=model)
    pareto_file, graph_file = _side(args.plot, "pareto"), _side(args.plot, "graph")
    ax = plot_pareto(routes, front, routes[0])
    save(ax.figure, pareto_file, f"{stitched.model} totals over the legs as computed separately (stitched, the chosen "
         f"route's is {stitched.dv_total_mps:.1f} m/s; {'optimised' if stitched.optimised else 'not optimised'}).",
         model=model)
    ax = plot_graph(g, route=routes[0])
    save(ax.figure, graph_file, f"{system.name}: transfer graph; the chosen route in red.")
    return [args.plot, pareto_file, graph_file]
