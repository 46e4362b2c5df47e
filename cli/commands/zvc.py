"""librate zvc: energy level, open necks, and the Hill region / zero-velocity curves as a plot."""

from .. import common

NAME = "zvc"
KERNELS = common.DYNAMICS_KERNELS
ORDER = 30
HELP = "zero-velocity curves and Hill region at a Jacobi constant: which necks are open, plot"
EXAMPLE = "librate zvc --system earth-moon --above L1 --dv 20m/s --plot hill.png"

HEADERS = ["point", "jacobi_at_point", "jacobi_minus_point", "neck_open", "speed_at_point_vu",
           "speed_at_point_mps"]


def add_arguments(p):
    common.add_system_options(p)
    g = p.add_argument_group("energy level (give --jacobi, or --above with --dv)")
    g.add_argument("--jacobi", metavar="C", help="Jacobi constant C = 2 Omega - v^2 (nondimensional)")
    g.add_argument("--above", metavar="POINT",
                   help="Lagrange point L1..L5: C of a spacecraft at that point moving at speed --dv")
    g.add_argument("--dv", metavar="SPEED", help="speed at the point, with a unit: 20m/s, 0.05km/s, 0.01VU")
    q = p.add_argument_group("plot")
    common.add_plot_option(q, "draw the Hill region")
    q.add_argument("--plane", metavar="xy|xz", default="xy", help="plane of the plot: z = 0 or y = 0 (default xy)")
    q.add_argument("--view", metavar="system|secondary", default=None,
                   help="default extent: whole system, or around the smaller primary with L1 and L2 "
                        "(default: secondary when the mass ratio is below 1e-4, e.g. sun-earth, "
                        "where the whole system hides the necks; else system)")
    q.add_argument("--extent", metavar="UMIN,UMAX,VMIN,VMAX",
                   help="plot extent; numbers in LU or lengths with units (e.g. 300000km,460000km,-8e4km,8e4km)")
    q.add_argument("--resolution", metavar="N", default="601", help="grid points per side (21..4001, default 601)")
    q.add_argument("--km", action="store_true", help="add axes in km (dimensional systems)")
    q.add_argument("--curves", metavar="FILE.csv",
                   help="also write the zero-velocity curve points (LU, and km when dimensional) as CSV")
    common.add_output_options(p)


def _level(args, system):
    """(C, description) from --jacobi or --above/--dv; InputError for anything else."""
    from cr3bp.energy import check_jacobi, jacobi_above
    from cr3bp.equilibria import point_name
    from cr3bp.errors import InputError
    if args.jacobi is not None and args.above is not None:
        raise InputError("give --jacobi or --above (with --dv), not both")
    if args.jacobi is not None:
        if args.dv is not None:
            raise InputError("--dv goes with --above POINT, not with --jacobi")
        return check_jacobi(args.jacobi, "--jacobi"), {"given": "jacobi"}
    if args.above is None:
        raise InputError("give --jacobi C, or --above POINT with --dv SPEED")
    name = point_name(args.above)
    dv = args.dv if args.dv is not None else "0VU"
    from cr3bp import units
    q = units.parse(dv, "velocity")
    c = jacobi_above(system, name, dv)
    src = {"given": "above", "point": name, "dv": dv, "dv_vu": q.nondim(system)}
    if system.dimensional:
        src["dv_mps"] = system.mps(src["dv_vu"])
    return c, src


def _extent(args, system):
    from cr3bp import units
    from cr3bp.errors import InputError
    if args.extent is None:
        return None
    parts = [t for t in args.extent.split(",")]
    if len(parts) != 4:
        raise InputError(f"--extent {args.extent!r} must be four values UMIN,UMAX,VMIN,VMAX")
    from cr3bp.energy import check_extent
    return check_extent(tuple(units.length(t, system, default_unit="LU") for t in parts))


def _resolution(text):
    return common.whole_number("--resolution", text, 21, 4001)


def run(args):
    from pathlib import Path

    from cr3bp.energy import PLANES, VIEWS
    from cr3bp.errors import InputError

    system = common.resolve_system(args)
    if args.plane not in PLANES:
        raise InputError(f"--plane {args.plane!r} is not allowed; allowed: {', '.join(PLANES)}")
    if args.view is None:
        from cr3bp.plotting.energy import default_view
        args.view = default_view(system)
    if args.view not in VIEWS:
        raise InputError(f"--view {args.view!r} is not allowed; allowed: {', '.join(VIEWS)}")
    if args.plot is None and args.curves is None and (args.extent or args.km):
        raise InputError("--extent and --km shape the plot; give --plot FILE or --curves FILE too")
    if args.curves is not None and Path(args.curves).suffix.lower() != ".csv":
        raise InputError(f"--curves {args.curves!r} must end in .csv")
    _level(args, system)                      # the options' refusals, named as options
    extent = _extent(args, system)
    resolution = _resolution(args.resolution)
    if args.plot or args.curves:
        common.progress(args, f"librate: tracing the zero-velocity curves on a {resolution} x {resolution} grid...")
    from cr3bp import api
    level = api.zvc(system, args.jacobi, above=args.above,
                    dv=args.dv, plane=args.plane,
                    region=bool(args.plot or args.curves),
                    view=args.view if (args.plot or args.curves) else None, extent=extent,
                    resolution=resolution)
    c, source, text, region = level.jacobi, level.level, level.realms, level.region
    rows = [[p["name"], p["jacobi"], p["jacobi_minus_point"], p["neck_open"], p["speed_at_point_vu"],
             p["speed_at_point_mps"]] for p in level.points]
    if args.curves:
        from cr3bp.io.atomic import write_text
        write_text(args.curves, curves_csv(region))
        common.progress(args, f"wrote {args.curves}")
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.energy import plot_hill_region
        ax = plot_hill_region(region, km=args.km)
        caption = (f"{system.name}, mu = {system.mu:.10g}: shaded where 2Ω < C (forbidden); red: 2Ω = C "
                   f"on a {resolution}² grid, refined (max |2Ω − C| = {region.curve_residual:.1e}). {text[:1].upper() + text[1:]}.")
        save(ax.figure, args.plot, caption)
        common.progress(args, f"wrote {args.plot}")
    d = level.to_dict()
    payload = {k: v for k, v in d.items() if k != "region"}
    payload.update({"plot": args.plot, "curves_file": args.curves, "region": d["region"]})
    how = ("given" if source["given"] == "jacobi" else
           f"spacecraft at {source['point']} moving at {source['dv']}: C = C_{source['point']} - dv^2")
    title = f"{system.name} (mu = {system.mu:.10g}): Jacobi constant C = {c:.10f} ({how})"
    table = common.format_table(
        ["point", "C at point", "C - C_point", "neck open", "speed there [LU/TU]", "speed there [m/s]"],
        [[r[0], f"{r[1]:.10f}", f"{r[2]:+.10f}", {True: "yes", False: "no", None: "-"}[r[3]], r[4], r[5]]
         for r in rows], title=title)
    table += ("\nneck open: C < C at the point (L1..L3). speed there: the speed a spacecraft with this C "
              "has when it passes the point ('-': the point is in its forbidden region).\n"
              f"realms ({'z = 0' if args.plane == 'xy' else 'y = 0'}): {text}\n")
    if region is not None:
        table += (f"{'plot: ' + args.plot if args.plot else 'curves: ' + args.curves} ({len(region.curves)} curve(s), max |2Omega - C| on them "
                  f"{region.curve_residual:.1e})\n")
    common.emit(args, payload=payload, headers=HEADERS, rows=rows, table=table, comments=[title])
    return 0


def curves_csv(region) -> str:
    """The zero-velocity curve points as CSV: curve index, coordinates in LU (and km)."""
    system = region.system
    v = "y" if region.plane == "xy" else "z"
    headers = ["curve", "x_lu", f"{v}_lu"] + (["x_km", f"{v}_km"] if system.dimensional else [])
    rows = []
    for k, pts in enumerate(region.curves):
        for a, b in pts:
            row = [k, float(a), float(b)]
            if system.dimensional:
                row += [float(a) * system.length_km, float(b) * system.length_km]
            rows.append(row)
    comments = [f"zero-velocity curves (2 Omega = C) of {system.name}, mu = {system.mu!r}, "
                f"C = {region.jacobi!r}, plane {'z = 0' if region.plane == 'xy' else 'y = 0'}",
                f"max |2 Omega - C| on these points: {region.curve_residual:.1e}"]
    return common.csv_text(headers, rows, comments)
