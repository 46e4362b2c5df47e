"""What 'librate graph' and 'librate route' share: the node-list and build options, building
the graph with progress on stderr, and the legs table."""

from .. import common


def add_build_options(p):
    p.add_argument("--nodes", metavar="FILE.toml", required=True, help="node list (TOML; its format: docs/manual/node-lists.md, or the docs site)")
    g = p.add_argument_group("computing the legs")
    common.add_workers_option(g)
    g.add_argument("--scheduler", metavar="ADDRESS",
                   help="run the orbits (one task per family) and the legs on a dask.distributed "
                   "scheduler instead (an address, or 'local:N' for a local cluster of N worker processes "
                   "started and stopped here; needs librate[cluster])")
    common.add_catalog_options(g, used_by_default=True, note=" (as the leg cache)")
    g.add_argument("--tof", metavar="TIME", help="time of flight of targeted legs without their own (e.g. 6d)")


def prepare(args, system, check=None):
    """The node list and the build settings from the options, checked before any work:
    ``(nodelist, settings, checked)`` with ``checked`` what ``check(nodelist)`` returns (the
    caller's own checks of the list, run first) and ``settings`` the keyword arguments of
    :func:`cr3bp.api.graph` and :func:`cr3bp.api.design_route` (``workers``, ``scheduler``,
    ``catalog`` (open, or None: close it after use), ``tof``, ``progress``: leg progress on
    stderr)."""
    from cr3bp.transfers.nodes import load_nodes
    from cr3bp.errors import InputError
    nodelist = load_nodes(args.nodes, system)
    checked = check(nodelist) if check is not None else None
    workers = common.workers(args)
    if args.scheduler and workers:
        raise InputError("give --workers or --scheduler, not both")
    if args.scheduler is not None:
        from cr3bp.transfers.tasks import check_scheduler
        check_scheduler(args.scheduler)
    if args.tof is not None:
        from cr3bp.validate import quantity
        quantity("--tof", args.tof, "time", system, sign="positive")        # refused here, before any work
    catalog = common.open_catalog(args)

    def tick(done, total, leg):
        if done == 1 or done == total or done % max(1, total // 20) == 0:
            what = "ok" if leg.ok else "failed"
            common.progress(args, f"librate: leg {done}/{total} ({leg.origin} -> {leg.target}: {what})")

    common.progress(args, f"librate: building the graph of {len(nodelist.nodes)} node(s) from {args.nodes}...")
    return nodelist, {"workers": workers, "scheduler": args.scheduler, "catalog": catalog,
                      "tof": args.tof, "progress": tick}, checked


def built(args, result):
    """Say on stderr what a build computed, read and pruned."""
    common.progress(args, f"librate: {result.computed} leg(s) computed, {result.cached} read from the "
                          f"catalogue, {len(result.pruned)} pair(s) pruned")


def build(args, system):
    """(node list, BuildResult) from the options; progress to stderr."""
    from cr3bp import api
    nodelist, settings, _ = prepare(args, system)
    try:
        result = api.graph(system, nodelist, **settings)
    finally:
        if settings["catalog"] is not None:
            settings["catalog"].close()
    built(args, result)
    return nodelist, result


#: tof_arrival_days: to within arrival_within_km of the target orbit's path (the leg's whole time
#: when it ends elsewhere); tof_stepoff_days: to the manifold's step-off point (CR3BP times).
LEG_HEADERS = ["from", "to", "status", "dv_mps", "tof_arrival_days", "tof_stepoff_days", "arrival_within_km",
               "min_altitude_km", "reason"]


def leg_rows(result):
    rows = [[s["from_name"], s["to_name"], s["status"], s.get("dv_mps"),
             s.get("tof_arrival_days", s.get("tof_days")), s.get("tof_days"), s.get("arrival_distance_km"),
             s.get("min_altitude_km"), s.get("reason", "")] for s in (leg.summary() for leg in result.legs)]
    rows += [[p["from"], p["to"], "pruned", None, None, None, None, None, p["reason"]] for p in result.pruned]
    return rows
