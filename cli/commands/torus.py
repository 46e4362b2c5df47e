"""librate torus: a quasi-periodic invariant torus about a periodic orbit."""

from __future__ import annotations

from cr3bp.vocabulary import EXPORT_FORMATS

from .. import common
from . import _orbit_options as oo

NAME = "torus"
KERNELS = (("cr3bp.integrate.dop853", "integrate"), ("cr3bp.integrate.lanes", "integrate_lanes"))
ORDER = 45
HELP = "compute a quasi-periodic torus (quasi-halo, Lissajous) of a given amplitude about a periodic orbit"
EXAMPLE = ('librate torus --system earth-moon --around "halo L2 south resonance=9:2" '
           "--amplitude 2000km")
EXAMPLE_LISSAJOUS = ("librate torus --system sun-earth --family lissajous --point L2 "
                     "--ay 800000km --az 500000km")

HOLDS = ("jacobi", "period", "rotation")


def add_arguments(p):
    common.add_system_options(p)
    p.add_argument("--request", metavar="TEXT",
                   help="the torus in words, instead of --around/--family: e.g. \"quasi-halo "
                   "around halo L2 south resonance=9:2 amplitude=2000km\", \"lissajous L2 "
                   "ay=800000km az=500000km\"; targets by Jacobi constant and stroboscopic time "
                   "(jacobi=C period=TIME) or by frequency ratio (frequency-ratio=R, the "
                   "circle's turn per stroboscopic time in revolutions, with jacobi=C; a "
                   "quasi-halo's Jacobi constant defaults to its orbit's)")
    p.add_argument("--around", metavar="REQUEST",
                   help="the periodic orbit, as an orbit request, e.g. \"halo L2 south "
                   "resonance=9:2\" (quasi-halo) or \"lyapunov L1 ax=5000km\" (Lissajous)")
    p.add_argument("--amplitude", metavar="LENGTH",
                   help="with --around: size of the torus about the orbit: the RMS distance of "
                   "the invariance circle's points from its centre (km unless another unit is "
                   "given)")
    p.add_argument("--family", choices=("lissajous",),
                   help="instead of --around: a Lissajous torus at --point targeted by its "
                   "amplitudes --ay and --az")
    p.add_argument("--point", metavar="L1|L2", help="with --family lissajous: L1 or L2")
    p.add_argument("--ay", metavar="LENGTH", help="with --family lissajous: the largest |y| over "
                   "the torus (a unit is required, e.g. 800000km)")
    p.add_argument("--az", metavar="LENGTH", help="with --family lissajous: the largest |z| over "
                   "the torus (a unit is required)")
    p.add_argument("--members", metavar="N", help="continue a family of N more tori from the "
                   "first (pseudo-arclength, --hold kept) and print one row per torus")
    p.add_argument("--hold", choices=HOLDS, default="jacobi",
                   help="kept at the orbit's value while the torus grows from it: its Jacobi "
                   "constant (default), its period as the stroboscopic time, or the rotation of "
                   "its centre eigenpair")
    oo.add_catalog_option(p, note=". The torus and each family member are kept there as they "
                          "converge: the same request again is read back, and --members N "
                          "on an interrupted family goes on from its last stored member")
    g = p.add_argument_group("export a trajectory on the torus (CCSDS OEM, CSV or JSON; as "
                             "librate export)")
    g.add_argument("--export", metavar="FILE", help="write the trajectory on the torus from "
                   "--phase over --span at --step to FILE (format from --export-format or the "
                   "suffix: .oem, .xml, .csv, .json); re-started from the invariance circle "
                   "every stroboscopic time, so it stays on the torus")
    g.add_argument("--phase", metavar="THETA0,THETA1", default="0,0",
                   help="torus phase of the first state, degrees: theta0 along the stroboscopic "
                   "time, theta1 around the invariance circle (default 0,0)")
    g.add_argument("--epoch", metavar="ISO", help="date of the first state (ISO 8601, e.g. "
                   "2031-03-01T00:00:00Z)")
    g.add_argument("--span", metavar="SPAN", help="how long: a time (400d) or Nperiods "
                   "(stroboscopic times)")
    g.add_argument("--step", metavar="TIME", help="output step (e.g. 1d, 6h)")
    g.add_argument("--export-format", choices=EXPORT_FORMATS,
                   help="file format of --export (default from its suffix)")
    from .export import add_frame_options
    add_frame_options(p)
    common.add_plot_option(p, "draw the torus in three views and its invariance circle")
    p.add_argument("--html", metavar="FILE",
                   help="write a rotatable 3-D view of the torus (its surface swept by the trajectories "
                   "of points of its invariance circle over one stroboscopic time, and the circle) to "
                   "FILE, a standalone offline HTML page (.html or .htm; plotly.js written into it, "
                   "about 4.7 MB; nothing fetched from a network); the caution is in the page. One "
                   "torus: not with --members")
    a = p.add_argument_group("atlas: many torus families in one run, one task per family")
    a.add_argument("--atlas", metavar="LIST", help="continue these families of tori instead of one: torus "
                   "requests (as --request) separated by semicolons (a comma is a space inside a request), "
                   "e.g. 'quasi-halo around halo L1 north az=10000km amplitude=300km; quasi-halo around halo "
                   "L2 north az=10000km amplitude=300km'; needs --members (each family: its first torus and "
                   "N more), with --hold and --catalog; not with --request, --around, --family, --export, "
                   "--plot or --html")
    common.add_workers_option(a, "atlas: worker processes, one torus family per task (default: this process)")
    common.add_scheduler_option(a, "atlas: continue the families")
    common.add_output_options(p)


def run_from_orbit(args):
    """``librate orbit --family lissajous --point L1|L2 --ay LENGTH --az LENGTH``: the same
    torus, output and refusals as ``librate torus --family lissajous``."""
    from cr3bp.errors import InputError
    for name in ("period", "jacobi", "ax", "x", "perilune", "resonance", "branch", "ratio",
                 "occurrence"):
        if getattr(args, name, None) is not None:
            raise InputError(f"--{name} does not go with --family lissajous; a Lissajous torus "
                             "is sized by --ay and --az at --point L1|L2")
    args.family = "lissajous"
    for name, default in (("around", None), ("amplitude", None), ("members", None),
                          ("hold", "jacobi"), ("export", None), ("epoch", None),
                          ("span", None), ("step", None), ("export_format", None),
                          ("phase", "0,0"), ("html", None)):
        if not hasattr(args, name):
            setattr(args, name, default)
    return run(args)


def _check_output(option, path, suffixes=None):
    from pathlib import Path

    from cr3bp.errors import InputError, shown
    p = Path(path)
    if suffixes and p.suffix.lower() not in suffixes:
        raise InputError(f"{option} {shown(path)}: the file name must end in {', '.join(suffixes)}")
    if p.is_dir():
        raise InputError(f"{option} {shown(path)} is a folder; give a file name")
    if not p.resolve().parent.is_dir():
        raise InputError(f"{option} {shown(path)}: the folder {shown(str(p.parent))} does not exist")


def _check_lissajous(args, system):
    """The Lissajous target's options, all checked before any work: (point, ay_lu, az_lu)."""
    from cr3bp import validate
    from cr3bp.errors import InputError, shown
    if args.around:
        raise InputError("give --around or --family lissajous, not both")
    if args.amplitude is not None:
        raise InputError("--amplitude goes with --around; a Lissajous torus is sized by --ay "
                         "and --az")
    if args.point not in ("L1", "L2"):
        raise InputError(f"--point {shown(args.point or '(missing)')}: Lissajous tori by "
                         "amplitudes are built at L1 or L2")
    out = []
    for name, text in (("--ay", args.ay), ("--az", args.az)):
        if text is None:
            raise InputError(f"{name} is missing: --family lissajous needs --ay and --az "
                             "(lengths with a unit, e.g. 800000km)")
        v = validate.quantity(name, text, "length", system, sign="positive")
        if v > 0.2:
            raise InputError(f"{name} {text} is larger than 0.2 of the distance between the "
                             "primaries; tori that large are not attempted")
        out.append(v)
    return args.point, out[0], out[1]


def run(args):
    from cr3bp import validate
    from cr3bp.errors import InputError
    from cr3bp.orbits.request import parse_request
    from cr3bp.orbits.targets import make_target
    from cr3bp.units import length
    if getattr(args, "atlas", None) is not None:
        return _atlas_run(args)
    if getattr(args, "workers", None) is not None or getattr(args, "scheduler", None) is not None:
        raise InputError("--workers and --scheduler go with --atlas (one torus or family is computed in "
                         "this process)")
    system = common.resolve_system(args)
    members = (validate.whole_number("--members", args.members, 1, 500)
               if args.members is not None else None)
    tspec = None
    if getattr(args, "request", None) is not None:
        from cr3bp.tori import request as treq
        for name in ("around", "amplitude", "family", "point", "ay", "az"):
            if getattr(args, name) is not None:
                raise InputError(f"--request names the whole torus; --{name} does not go with it")
        tspec = treq.parse(args.request)
        treq.values(system, tspec)          # bad units and ranges fail here, before any work
        if tspec.around:
            ospec = parse_request(tspec.around)
            if ospec.family != "halo":
                raise InputError(f"a quasi-halo torus is about a halo orbit (or NRHO); "
                                 f"'{tspec.around}' is a {ospec.family} orbit")
            make_target(system, ospec.key, ospec.value)
    elif args.family == "lissajous":
        point, ay, az = _check_lissajous(args, system)
    else:
        for name in ("ay", "az", "point"):
            if getattr(args, name) is not None:
                raise InputError(f"--{name} goes with --family lissajous")
        if not args.around:
            raise InputError("give --around REQUEST --amplitude LENGTH, or --family lissajous "
                             "--point L1|L2 --ay LENGTH --az LENGTH")
        if args.amplitude is None:
            raise InputError("--around needs --amplitude LENGTH (the torus's size about the orbit)")
        spec = parse_request(args.around)
        if not spec.key:
            raise InputError(f"--around '{args.around}' has no target; e.g. \"halo L2 south "
                             "resonance=9:2\" or \"lyapunov L1 ax=5000km\"")
        make_target(system, spec.key, spec.value)   # bad units fail here, before any work
        amp = length(args.amplitude, system, default_unit="km")
        if not amp > 0:
            raise InputError(f"--amplitude {args.amplitude} must be a positive length")
        if amp > 0.2:
            raise InputError(f"--amplitude {args.amplitude} is larger than 0.2 of the distance "
                             "between the primaries; tori that large are not attempted")
    if args.plot:
        _check_output("--plot", args.plot)      # its suffix: cli.common.check_outputs
    if args.out:
        _check_output("--out", args.out)
    if getattr(args, "html", None) is not None:
        if members is not None:
            raise InputError("--html draws one torus; it does not go with --members (use --plot "
                             "for the family figure)")
        _check_output("--html", args.html, (".html", ".htm"))
    plan = _export_plan(args, system, members)
    cat = oo.open_catalog(args)
    from cr3bp import api
    if tspec is not None:
        common.progress(args, f"librate torus: the {tspec.family} torus '{args.request}'")
        torus = api.torus(system, args.request, catalog=cat,
                          progress=lambda m: common.progress(args, m, verbose_only=True))
        what = f"{tspec.family} torus '{args.request}'"
    elif args.family == "lissajous":
        common.progress(args, f"librate torus: the Lissajous torus at {point} with Ay {args.ay}, "
                        f"Az {args.az}")
        torus = api.torus(lissajous=(system, point, args.ay, args.az), catalog=cat,
                          progress=lambda m: common.progress(args, m, verbose_only=True))
        what = f"Lissajous torus at {point} (Ay {args.ay}, Az {args.az})"
    else:
        common.progress(args, f"librate torus: solving the periodic orbit {args.around}")
        common.progress(args, f"librate torus: growing the torus to {args.amplitude} "
                        f"(holding the {args.hold})")

        def step(k, a):
            size = f"{system.km(a):,.1f} km" if system.dimensional else f"{a:.3g} LU"
            common.progress(args, f"torus: step {k}, amplitude {size}", verbose_only=True)

        torus = api.torus(system, args.amplitude, around=args.around, hold=args.hold, catalog=cat,
                          progress=step)
        what = f"{torus.family} torus about the {args.around} orbit"
    if members is not None:
        return _run_family(args, system, torus, members, what, cat)
    from cr3bp.tori import surface
    d = _with_amplitudes(system, torus.to_dict(), torus)
    if plan is not None:
        d["export"] = _write_export(args, system, torus, plan, what)
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.tori import plot_torus
        fig = plot_torus(torus, grid=surface(system, torus.circle, torus.stroboscopic_time, 256))
        size = (f"amplitude {args.amplitude}" if args.amplitude else
                f"Ay {args.ay}, Az {args.az}" if args.ay else args.request)
        save(fig, args.plot, f"{what}, rotating frame of the circular restricted three-body "
             f"model, primaries to scale; {size}")
        common.progress(args, f"wrote {args.plot}")
    if getattr(args, "html", None) is not None:
        from cr3bp.io.atomic import write_text
        from cr3bp.tori.figures import html_page
        common.progress(args, "drawing the 3-D view of the torus...")
        write_text(args.html, html_page(torus, description=what))
        d["html"] = str(args.html)
        common.progress(args, f"wrote {args.html}")
    common.emit(args, payload=d, headers=_HEADERS, rows=_rows(torus), table=_table(system, d, what),
                comments=[f"invariance circle of the {what}: "
                          "theta (rad) and the state (nondimensional, rotating frame)"])
    return 0


def _export_plan(args, system, members):
    """Every --export option checked before any work: (spec, time system, step_s, fmt, phase)."""
    import math

    from cr3bp.errors import InputError
    from cr3bp.io import export
    from cr3bp.time import frames

    from .export import parse_orientation, step_seconds
    if args.export is None:
        for name in ("epoch", "span", "step", "export_format"):
            if getattr(args, name) is not None:
                raise InputError(f"--{name.replace('_', '-')} goes with --export FILE")
        if args.phase != "0,0":
            raise InputError("--phase goes with --export FILE")
        return None
    if members is not None:
        raise InputError("--export writes one torus; it does not go with --members")
    system.require_dimensional("an export in km")
    _check_output("--export", args.export)
    fmt = export.format_of(args.export, args.export_format)
    if fmt in ("oem", "xml") and args.frame == "rotating":
        raise InputError("OEM needs inertial axes (--frame j2000-equator or j2000-ecliptic); "
                         "use --export-format csv or json for the rotating frame")
    for name in ("epoch", "span", "step"):
        if getattr(args, name) is None:
            raise InputError(f"--export needs --{name}")
    parts = args.phase.split(",")
    try:
        phase = [math.radians(float(x)) for x in parts]
    except ValueError:
        raise InputError(f"--phase '{args.phase}' is not two angles THETA0,THETA1 (degrees)") from None
    if len(phase) != 2 or not all(math.isfinite(x) for x in phase):
        raise InputError(f"--phase '{args.phase}' must be two finite angles THETA0,THETA1 (degrees)")
    export.parse_span(args.span, system, 1.0)       # its form; Nperiods counted after solving
    step_s = step_seconds(args.step, system)
    ts = args.time_system.upper()
    spec = frames.frame(system, args.epoch, anchor=args.anchor, axes=args.frame,
                        center=args.center or "primary", orientation=parse_orientation(args),
                        time_scale=ts)
    return spec, ts, step_s, fmt, phase


def _write_export(args, system, torus, plan, what):
    """The trajectory on the torus through the export writers (atomic; caution in the header)."""
    from cr3bp.io import export
    from cr3bp.tori.trajectory import sample
    spec, ts, step_s, fmt, phase = plan
    T = torus.stroboscopic_time
    span_tu = export.parse_span(args.span, system, T)
    grid = export.epoch_grid(spec, ts, span_tu, step_s)
    common.progress(args, f"sampling {grid.size} states on the torus...")
    seg = sample(torus, grid, phase)
    model = {"torus": what, "stroboscopic time": f"{T!r} TU = {system.days(T):.9f} d",
             "rotation": f"{torus.rotation!r} rad per stroboscopic time",
             "jacobi": repr(float(torus.jacobi)),
             "torus phase (deg)": args.phase,
             "sampling": "re-started from the invariance circle every stroboscopic time "
                         f"(joins within the invariance error {torus.invariance_error:.1e})"}
    traj = export.Trajectory(spec, (seg,), ts, (), "LIBRATE DESIGN", "NONE", model)
    path = export.write(args.export, traj, fmt)
    common.progress(args, f"wrote {path}")
    return {"file": str(path), "format": fmt, "states": int(grid.size)}


def _with_amplitudes(system, d, torus):
    """``ay_km``/``az_km`` (and ``_lu``): largest |y| and |z| over the sampled torus surface."""
    from cr3bp.tori.lissajous import measured_amplitudes
    ay, az = measured_amplitudes(torus)
    d["ay_lu"], d["az_lu"] = ay, az
    d["ay_km"] = system.km(ay) if system.dimensional else None
    d["az_km"] = system.km(az) if system.dimensional else None
    return d


def _run_family(args, system, start, members, what, cat=None):
    from cr3bp import api

    def member(i, t):
        size = f"{system.km(t.amplitude_lu):,.1f} km" if system.dimensional else f"{t.amplitude_lu:.4g} LU"
        common.progress(args, f"torus family: member {i} of {members}, amplitude {size}, "
                        f"Jacobi constant {t.jacobi:.10f}, rotation {t.rotation_deg:.4f} deg")
    common.progress(args, f"librate torus: continuing the family from the {what} "
                    f"({members} members, holding the {args.hold})")
    fam = api.torus(start, members=members, hold=args.hold, progress=member, catalog=cat)
    d = fam.to_dict()
    d["members"] = [_with_amplitudes(system, m, t) for m, t in zip(d["members"], fam.members)]
    d["model"] = start.to_dict()["model"]
    d["system"] = system.name
    d["start"] = what
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.tori.figures import plot_family
        save(plot_family(fam), args.plot, f"family of {len(fam.members)} tori from the {what}, "
             f"{args.hold} held; rotating frame of the circular restricted three-body model")
        common.progress(args, f"wrote {args.plot}")
    headers, rows = _family_rows(system, fam)
    common.emit(args, payload=d, headers=headers, rows=rows,
                table=_family_table(system, fam, what, headers, rows),
                comments=[f"torus family from the {what}, {args.hold} held; distances and times "
                          "of the circular restricted three-body model"])
    return 0


#: Options of one torus that an atlas does not take (each family is named in --atlas).
ATLAS_EXCLUDES = (("request", "--request"), ("around", "--around"), ("amplitude", "--amplitude"),
                  ("family", "--family"), ("point", "--point"), ("ay", "--ay"), ("az", "--az"),
                  ("export", "--export"), ("epoch", "--epoch"), ("span", "--span"), ("step", "--step"),
                  ("export_format", "--export-format"), ("plot", "--plot"), ("html", "--html"))


def _atlas_run(args):
    """``librate torus --atlas``: cr3bp.api.torus_atlas, every option checked before any torus
    is solved; one block per family, with the columns of ``librate torus --members``."""
    from cr3bp import api, validate
    from cr3bp.errors import InputError
    for dest, flag in ATLAS_EXCLUDES:
        if getattr(args, dest, None) is not None:
            raise InputError(f"{flag} does not go with --atlas (name each torus family in the list, e.g. "
                             "--atlas 'quasi-halo around halo L1 north az=10000km amplitude=300km; ...')")
    if args.phase != "0,0":
        raise InputError("--phase does not go with --atlas (it goes with --export)")
    if args.members is None:
        raise InputError("--atlas needs --members N (the tori continued after each family's first, 1..500)")
    system = common.resolve_system(args)
    items, _specs = api._torus_atlas_entries(system, args.atlas)
    members = validate.whole_number("--members", args.members, 1, 500)
    workers = common.workers(args)
    scheduler = None
    if args.scheduler is not None:
        from cr3bp.transfers.tasks import check_scheduler
        check_scheduler(args.scheduler, workers)
        scheduler = args.scheduler.strip()
    if args.out:
        _check_output("--out", args.out)
    cat = oo.open_catalog(args)
    where = (f"on the dask scheduler '{scheduler}'" if scheduler else
             f"in {workers} worker processes" if workers and workers > 1 else "in this process")
    common.progress(args, f"librate torus: continuing {len(items)} {system.name} torus families {where} "
                          f"({members} more {'torus' if members == 1 else 'tori'} after each first one, holding the "
                          f"{args.hold})")

    def tick(done, total, request, fam):
        if fam is None:
            common.progress(args, f"torus family {done}/{total} failed: '{request}'")
            return
        common.progress(args, f"torus family {done}/{total} done: '{request}', {len(fam.members)} tori; "
                              f"stop: {fam.stop}")

    fams = api.torus_atlas(system, items, members=members, hold=args.hold, workers=workers,
                           scheduler=scheduler, progress=tick, catalog=cat)
    if cat is not None:
        common.progress(args, f"stored {len(fams)} torus families in the catalogue {cat.path}")
    tables, csv_rows, payloads, comments, headers = [], [], [], [], None
    for text, fam in zip(items, fams):
        start = fam.members[0]
        what = f"{start.family} torus '{text}'"
        d = fam.to_dict()
        d["members"] = [_with_amplitudes(system, m, t) for m, t in zip(d["members"], fam.members)]
        d["model"] = start.to_dict()["model"]
        d["system"] = system.name
        d["start"] = what
        d["request"] = text
        payloads.append(d)
        headers, rows = _family_rows(system, fam)
        tables.append(_family_table(system, fam, what, headers, rows))
        comments.append(f"torus family from the {what}, {args.hold} held; distances and times of the "
                        "circular restricted three-body model")
        csv_rows += [[text] + r for r in rows]
    payload = {"system": system.name, "atlas": items, "hold": args.hold, "families": payloads}
    common.emit(args, payload=payload, headers=["request"] + headers, rows=csv_rows, table="\n".join(tables),
                comments=comments)
    return 0


def _family_rows(system, fam):
    dim = system.dimensional
    names = system.names if dim else ("primary 1", "primary 2")
    u = "km" if dim else "LU"
    headers = ["member", f"amplitude_{u}", "jacobi",
               "stroboscopic_period_days" if dim else "stroboscopic_time_tu", "rotation_deg",
               "invariance_error", f"closest_{names[0]}_{u}", f"closest_{names[1]}_{u}"]
    conv = system.km if dim else (lambda v: v)
    rows = []
    for i, t in enumerate(fam.members):
        rows.append([i, conv(t.amplitude_lu), t.jacobi,
                     t.stroboscopic_period_days if dim else t.stroboscopic_time, t.rotation_deg,
                     t.invariance_error, conv(t.closest_approach_lu[0]),
                     conv(t.closest_approach_lu[1])])
    return headers, rows


def _family_table(system, fam, what, headers, rows):
    lines = [f"{system.name} torus family from the {what}, the {fam.hold} held "
             f"({len(fam.members)} tori; stop: {fam.stop})", ""]
    w = [max(len(h), 14) for h in headers]
    lines.append("  ".join(f"{h:>{n}}" for h, n in zip(headers, w)))
    for r in rows:
        cells = [f"{r[0]:d}", f"{r[1]:,.3f}", f"{r[2]:.12f}", f"{r[3]:.6f}", f"{r[4]:.6f}",
                 f"{r[5]:.1e}", f"{r[6]:,.1f}", f"{r[7]:,.1f}"]
        lines.append("  ".join(f"{c:>{n}}" for c, n in zip(cells, w)))
    lines.append("")
    lines.append("amplitude: RMS distance of the invariance circle from its centre; closest: least "
                 "distance from each primary's centre over the torus")
    lines.append("distances and times are those of the circular restricted three-body model")
    return "\n".join(lines) + "\n"


_HEADERS = ["theta", "x", "y", "z", "vx", "vy", "vz"]


def _rows(torus):
    from cr3bp.tori.circle import angles
    return [[float(th), *map(float, s)] for th, s in zip(angles(torus.n_circle_points), torus.circle)]


def _table(system, d, what):
    def km(v):
        return "-" if v is None else f"{v:,.3f} km"

    def days(v):
        return "" if v is None else f" = {v:.6f} d"
    o = d["around"]
    lines = [f"{system.name} {what}", ""]
    lines.append(f"grown from the {o['family']} {o['point']} orbit: period {o['period']:.12f} TU{days(o['period_days'])}, "
                 f"Jacobi constant {o['jacobi']:.12f}")
    lines.append(f"stroboscopic time    {d['stroboscopic_time']:.12f} TU"
                 f"{days(d['stroboscopic_period_days'])}")
    lines.append(f"rotation             {d['rotation_deg']:.9f} deg per stroboscopic time "
                 f"(rotation number {d['rotation_number']:.9f})")
    w = d["frequencies_rad_tu"]
    p = d["frequency_periods_days"]
    lines.append(f"frequencies          {w[0]:.12f}, {w[1]:.12f} rad/TU"
                 + ("" if p[0] is None else f" (periods {p[0]:.6f} d, {p[1]:.6f} d)"))
    lines.append(f"Jacobi constant      {d['jacobi']:.12f} (spread over the circle "
                 f"{d['jacobi_spread']:.1e})")
    amp = d["amplitude_km"]
    lines.append(f"amplitude            {km(amp) if amp is not None else d['amplitude_lu']} "
                 "(RMS distance of the invariance circle from its centre)")
    lines.append(f"invariance error     {d['invariance_error']:.2e} (nondimensional, between the "
                 f"circle's nodes; tolerance {d['invariance_tolerance']:.1e})")
    lines.append(f"circle points        {d['n_circle_points']}")
    st = d.get("stability") or {}
    if st:
        lines.append(f"stability            {st['kind']}: largest multiplier modulus "
                     f"{st['largest_modulus']:.6g}, smallest {st['smallest_modulus']:.6g} "
                     "(eigenvalues of the discretised stroboscopic map)")
    if d["ay_km"] is not None:
        lines.append(f"Ay, Az               {d['ay_km']:,.3f} km, {d['az_km']:,.3f} km (largest "
                     "|y| and |z| over the torus)")
    for name, v in d["closest_approach_km"].items():
        lines.append(f"closest approach     {name}: {km(v)} from its centre")
    for axis, (lo, hi) in d["extent_km"].items():
        lines.append(f"extent {axis}             {km(lo)} to {km(hi)}")
    lines.append("distances and times are those of the circular restricted three-body model")
    return "\n".join(lines) + "\n"
