"""librate family: grow a family of periodic orbits, with its stability and bifurcations."""

from cr3bp.vocabulary import FAMILY_STOPS

from .. import common
from . import _orbit_options as oo

NAME = "family"
KERNELS = (("cr3bp.integrate.dop853", "integrate"),)   # the prebuilt build counts
ORDER = 50
HELP = "grow a family of periodic orbits: table of members, stability indices, bifurcations, plots"
EXAMPLE = "librate family --system earth-moon --family lyapunov --point L1 --members 300 --format csv"

UNTIL = FAMILY_STOPS


def add_arguments(p):
    common.add_system_options(p)
    oo.add_family_options(p)
    g = p.add_argument_group("extent")
    g.add_argument("--members", type=int, default=200, metavar="N", help="largest member count (default 200)")
    g.add_argument("--until", metavar="KEY=VALUE", help="stop at the member where KEY reaches VALUE "
                   "(solved exactly); KEY: jacobi, period, az, ax, perilune; e.g. --until period=8d")
    g.add_argument("--altitude", metavar="LENGTH", help="stop when a member passes below this altitude "
                   "above a primary (default: its surface)")
    g.add_argument("--method", choices=("arclength", "natural"), default="arclength",
                   help="continuation method (default arclength)")
    g.add_argument("--parameter", choices=("x", "z", "vz", "jacobi", "period"),
                   help="natural-parameter continuation: the quantity stepped")
    g.add_argument("--step", metavar="VALUE", help="first step (nondimensional; default per family)")
    g.add_argument("--max-step", metavar="VALUE", help="largest step (nondimensional; default per family); "
                   "smaller steps resolve stability changes that come in close pairs")
    g.add_argument("--route", choices=("seed", "branch"),
                   help="how a three-dimensional family is reached: seed (halo, vertical: default; axial: "
                   "from the vertical family's branch point) or branch (axial: default, at the Lyapunov "
                   "family's second out-of-plane branch point; halo: at its first; vertical: where the "
                   "axial family meets it)")
    for a in p._actions:        # --family is required unless --atlas names the families
        if a.dest == "family":
            a.required = False
            a.help = (a.help or "") + " (required unless --atlas is given)"
    a = p.add_argument_group("atlas: many families in one run, one task per family")
    a.add_argument("--atlas", metavar="LIST", help="grow these families instead of one --family: requests "
                   "separated by commas, e.g. 'halo L1 north, halo L2 south, lyapunov L1, lyapunov L2' (each "
                   "with --members, --until, --altitude, --max-step; not with --family, --point, --branch, "
                   "--ratio, --route, --method, --parameter, --step, --plots)")
    common.add_workers_option(a, "atlas: worker processes, one family per task (default: this process)")
    common.add_scheduler_option(a, "atlas: grow the families")
    oo.add_catalog_option(p, "; the family is stored in it")
    common.add_plots_prefix_option(p, "write PREFIX-family.png (members coloured by Jacobi constant) and "
                                      "PREFIX-stability.png (stability indices vs Jacobi constant and period); "
                                      "--plot PREFIX is the older spelling")
    common.add_output_options(p)


def _parse_until(system, text):
    from cr3bp.errors import InputError
    from cr3bp.orbits import targets
    if "=" not in text:
        raise InputError(f"--until {text!r} must be KEY=VALUE with KEY one of {', '.join(UNTIL)}")
    k, v = (s.strip() for s in text.split("=", 1))
    if k.lower() not in UNTIL:
        raise InputError(f"--until key '{k}' is not allowed; use one of {', '.join(UNTIL)}")
    t = targets.make_target(system, k.lower(), v)
    return (t.quantity, t.value)


def run(args):
    """The family of cr3bp.api.family; the options are checked here first, so a refusal names
    the option (--members, --step, ...) before any work."""
    from cr3bp import api
    from cr3bp.errors import InputError
    from cr3bp.orbits import continuation, families
    if args.atlas is not None:
        return _atlas_run(args)
    if args.family is None:
        raise InputError("give --family NAME (one family) or --atlas LIST (many)")
    if args.workers is not None or args.scheduler is not None:
        raise InputError("--workers and --scheduler go with --atlas (one family is grown in this process)")
    system = common.resolve_system(args)
    spec = api.orbit_request(family=args.family, point=args.point, branch=args.branch, ratio=args.ratio)
    if not 2 <= args.members <= 5000:
        raise InputError(f"--members {args.members} is outside the allowed range 2..5000")
    if args.method == "natural" and not args.parameter:
        raise InputError("--method natural needs --parameter (x, z, vz, jacobi or period)")
    if args.route is not None and spec.family not in families.ROUTES:
        raise InputError(f"--route is offered for the halo, vertical and axial families, not {spec.family}")
    if args.route is not None and (args.method != "arclength" or args.step is not None):
        raise InputError("--route works with the default arclength continuation and steps; drop --method/--step")
    target = _parse_until(system, args.until) if args.until else None
    if args.altitude:
        system.require_dimensional("--altitude")
        from cr3bp.validate import quantity
        quantity("--altitude", args.altitude, "length", system, sign="nonnegative")
    step = None
    if args.step is not None:
        from cr3bp.validate import number_in
        step = number_in("--step", args.step, 0, 1, open_lo=True, open_hi=True)
    max_step = None
    if args.max_step is not None:
        from cr3bp.validate import number_in
        max_step = number_in("--max-step", args.max_step, 0, 1, open_lo=True, open_hi=True)
    if args.plot:
        import os
        d = os.path.dirname(args.plot) or "."
        if not os.path.isdir(d):
            raise InputError(f"--plots {args.plot}: folder {d} does not exist")
    cat = oo.open_catalog(args)
    name = " ".join(w for w in (spec.family, spec.point, spec.branch_label) if w)
    common.progress(args, f"librate family: growing the {system.name} {name} family (up to {args.members} members)")
    fam = api.family(system, args.family, point=args.point, branch=args.branch, ratio=args.ratio,
                     members=args.members, until=args.until or None, altitude=args.altitude or None, method=args.method,
                     parameter=args.parameter, step=step, max_step=max_step, route=args.route,
                     progress=oo.progress_printer(args, name), catalog=cat)
    common.progress(args, f"done: {len(fam.members)} members; stopped because {fam.stop_reason}")
    missed = None
    if target is not None and fam.target is None:
        from cr3bp.orbits.targets import describe_value
        lo, hi = continuation.value_range(fam.members, target[0])
        missed = (f"--until {args.until} was not reached: the members cover {target[0]} from "
                  f"{describe_value(system, target[0], lo)} to {describe_value(system, target[0], hi)}")
        common.progress(args, missed)
    if cat is not None:
        common.progress(args, f"stored as family {fam.settings['catalog_id']} in the catalogue {cat.path}")
    headers, rows, bifs, payload = _result(system, spec, fam, args.route, target)
    if args.plot:
        _plots(system, fam, args.plot, name, spec, target)
        common.progress(args, f"wrote {args.plot}-family.png and {args.plot}-stability.png")
    comments = [f"{system.name} {name} family: {len(fam.members)} members; stopped because {fam.stop_reason}"]
    comments += [missed] if missed else []
    comments += [f"bifurcation {b['type']} after member {b['member_index']}: Jacobi constant {b['jacobi']:.10f}, "
                 f"period {b['period']:.10f} TU; {b['note']}" for b in bifs]
    table = common.format_table(headers, rows, title=comments[0]) + _bif_text(bifs, system)
    if missed:
        table += missed + "\n"
    common.emit(args, payload=payload, headers=headers, rows=rows, table=table, comments=comments)
    return 0


def _result(system, spec, fam, route, target):
    """``(headers, rows, bifurcation dicts, JSON payload)`` of one grown family."""
    from cr3bp.orbits import families
    rows = [_row(i, m.to_dict()) for i, m in enumerate(fam.members)]
    headers = HEADERS
    if spec.family == "resonant":   # the measured p:q of every member (label kept within a band)
        headers = HEADERS + ["spacecraft_revolutions", "primaries_revolutions"]
        rows = [r + list(m.period_ratio) for r, m in zip(rows, fam.members)]
    bifs = [b.to_dict() for b in fam.bifurcations]
    payload = {"system": system.name, "family": spec.family, "point": spec.point, "branch": spec.branch_label,
               "route": route or families.ROUTES.get(spec.family, ("seed",))[0],
               "stop_reason": fam.stop_reason, "columns": headers,
               "members": [dict(m.to_dict(), index=i) for i, m in enumerate(fam.members)],
               "bifurcations": [{"type": b["type"], "member_index": b["member_index"],
                                 "stability_index": b["stability_index"], "jacobi": b["jacobi"],
                                 "period": b["period"], "period_days": b["period_days"], "note": b["note"],
                                 "state": b["state"]} for b in bifs],
               "target": fam.target.to_dict() if fam.target is not None else None,
               "until_reached": None if target is None else fam.target is not None}
    return headers, rows, bifs, payload


#: Options of one family that an atlas does not take (each family is named in --atlas).
ATLAS_EXCLUDES = (("family", "--family"), ("point", "--point"), ("branch", "--branch"), ("ratio", "--ratio"),
                  ("route", "--route"), ("parameter", "--parameter"), ("step", "--step"), ("plot", "--plots"))


def _atlas_run(args):
    """``librate family --atlas``: cr3bp.api.atlas, every option checked before any family is grown."""
    from cr3bp import api
    from cr3bp.errors import InputError
    for dest, flag in ATLAS_EXCLUDES:
        if getattr(args, dest, None) is not None:
            raise InputError(f"{flag} does not go with --atlas (name each family in the list, "
                             "e.g. --atlas 'halo L1 north, lyapunov L2')")
    if args.method != "arclength":
        raise InputError("--method does not go with --atlas (the families grow by arclength continuation)")
    system = common.resolve_system(args)
    items, specs = api._atlas_entries(args.atlas)
    if not 2 <= args.members <= 5000:
        raise InputError(f"--members {args.members} is outside the allowed range 2..5000")
    target = _parse_until(system, args.until) if args.until else None
    if args.altitude:
        system.require_dimensional("--altitude")
        from cr3bp.validate import quantity
        quantity("--altitude", args.altitude, "length", system, sign="nonnegative")
    max_step = None
    if args.max_step is not None:
        from cr3bp.validate import number_in
        max_step = number_in("--max-step", args.max_step, 0, 1, open_lo=True, open_hi=True)
    workers = common.workers(args)
    scheduler = None
    if args.scheduler is not None:
        from cr3bp.transfers.tasks import check_scheduler
        check_scheduler(args.scheduler, workers)
        scheduler = args.scheduler.strip()
    cat = oo.open_catalog(args)
    where = (f"on the dask scheduler '{scheduler}'" if scheduler else
             f"in {workers} worker processes" if workers and workers > 1 else "in this process")
    common.progress(args, f"librate family: growing {len(specs)} {system.name} families {where} "
                          f"(up to {args.members} members each)")

    def tick(done, total, fam):
        label = " ".join(w for w in (fam.family, fam.point, fam.branch) if w)
        common.progress(args, f"family {done}/{total} done: {label}, {len(fam.members)} members; "
                              f"stopped because {fam.stop_reason}")

    fams = api.atlas(system, items, members=args.members, until=args.until or None,
                     altitude=args.altitude or None, max_step=max_step, workers=workers, scheduler=scheduler,
                     progress=tick, catalog=cat)
    tables, csv_rows, payloads, comments = [], [], [], []
    for text, spec, fam in zip(items, specs, fams):
        name = " ".join(w for w in (spec.family, spec.point, spec.branch_label) if w)
        headers, rows, bifs, payload = _result(system, spec, fam, None, target)
        if cat is not None:
            payload["catalog_id"] = fam.settings["catalog_id"]
        payloads.append(payload)
        line = f"{system.name} {name} family: {len(fam.members)} members; stopped because {fam.stop_reason}"
        comments.append(line)
        tables.append(common.format_table(headers, rows, title=line) + _bif_text(bifs, system))
        csv_rows += [[name] + r[:len(HEADERS)] for r in rows]
    if cat is not None:
        common.progress(args, f"stored {len(fams)} families in the catalogue {cat.path}")
    payload = {"system": system.name, "atlas": items, "families": payloads}
    common.emit(args, payload=payload, headers=["family"] + HEADERS, rows=csv_rows, table="\n".join(tables),
                comments=comments)
    return 0


HEADERS = ["index", "x", "y", "z", "vx", "vy", "vz", "period", "period_days", "jacobi", "nu1", "nu2",
           "periodicity_error", "amplitude_x_km", "amplitude_y_km", "amplitude_z_km",
           "closest_approach_1_km", "closest_approach_2_km"]


def _row(i, d):
    a = d["amplitude_km"]
    ca = list(d["closest_approach_km"].values())
    return [i, *d["state"], d["period"], d["period_days"], d["jacobi"], *d["stability_indices"],
            d["periodicity_error"], a["x"], a["y"], a["z"], *ca]


def _bif_text(bifs, system):
    if not bifs:
        return "\nno bifurcations detected along the computed members\n"
    lines = ["", "bifurcations:"]
    for b in bifs:
        per = f"{b['period_days']:.6f} d" if b["period_days"] is not None else f"{b['period']:.8f} TU"
        lines.append(f"  {b['type']:>7} after member {b['member_index']}: Jacobi constant {b['jacobi']:.10f}, "
                     f"period {per} - {b['note']}")
    return "\n".join(lines) + "\n"


def resonance_marks(system, spec, target):
    """The requested values the stability figure marks: [(panel, value, label)] with the panel
    "period" (days, or TU when nondimensional) or "perilune" (km, or LU). A p:q resonant family
    closes after q revolutions of the primaries (2 pi TU each), so its nominal period is
    q * 2 pi TU; an ``--until`` target on the period or the perilune radius is marked too."""
    import math
    dim = system.dimensional
    per_unit = system.days(1.0) if dim else 1.0
    length = system.length_km if dim else 1.0
    marks = []
    if spec is not None and spec.resonance:
        p, q = spec.resonance
        marks.append(("period", q * 2.0 * math.pi * per_unit, f"{p}:{q} resonance"))
    if target is not None and target[0] in ("period", "approach2"):
        where, scale = ("period", per_unit) if target[0] == "period" else ("perilune", length)
        marks.append((where, target[1] * scale, "--until target"))
    return marks


def _plots(system, fam, prefix, name, spec=None, target=None):
    import numpy as np

    from cr3bp.plotting import save
    from cr3bp.plotting.orbits import plot_family, plot_stability, trajectory
    members = fam.members
    pick = np.unique(np.linspace(0, len(members) - 1, min(len(members), 60)).round().astype(int))
    trajs = {int(k): trajectory(members[k], 600) for k in pick}
    jac = [m.jacobi for m in members]
    full = [trajs.get(k) for k in range(len(members))]
    fig = plot_family(system, [full[k] for k in pick], [jac[k] for k in pick],
                      title=f"{system.name} {name} family ({len(members)} members, {len(pick)} drawn)")
    save(fig, f"{prefix}-family.png", f"{name} family, rotating frame, colour: Jacobi constant")
    dim = system.dimensional
    per_unit = system.days(1.0) if dim else 1.0
    per = [m.period * per_unit for m in members]
    length = system.length_km if dim else 1.0
    peri = [m.closest_approach_lu[1] * length for m in members]
    nu = [[complex(v).real for v in m.stability_indices] for m in members]
    bifs = [dict(b.to_dict(), _period_plot=b.orbit.period * per_unit,
                 _perilune_plot=b.orbit.closest_approach_lu[1] * length) for b in fam.bifurcations]
    marks = resonance_marks(system, spec, target)
    unit = "km" if dim else "LU"
    fig = plot_stability(jac, per, nu, "d" if dim else "TU", title=f"{system.name} {name}: stability indices "
                         "nu1, nu2 (signed)", bifurcations=bifs, perilune=peri,
                         perilune_label=f"perilune radius: closest approach to {system.names[1]} [{unit}]",
                         marks=marks)
    save(fig, f"{prefix}-stability.png", f"{name} family stability indices nu1, nu2 (real parts, numbered as "
         "in the table)")
