"""librate refine: carry a CR3BP periodic orbit into the ephemeris model at an epoch."""

from .. import common

NAME = "refine"
ORDER = 90
KERNELS = (("cr3bp.integrate.dop853", "integrate"), ("cr3bp.fidelity.segments", "integrate_segments"))
HELP = "carry a CR3BP orbit into an ephemeris model at an epoch and correct it to a continuous trajectory"
EXAMPLE = ('librate refine --system earth-moon --route out/route --epoch 2031-03-01T00:00:00Z '
           "--bodies sun,earth,moon --out route.oem\n"
           'librate refine --system earth-moon --orbit "halo L2 south resonance=9:2" '
           "--epoch 2031-03-01T00:00:00Z --revs 12 --bodies sun,earth,moon --out nrho.oem\n"
           'librate refine --system earth-moon --torus "quasi-halo around halo L1 north az=10000km '
           'amplitude=300km" --span 2periods --phase 30,60 --epoch 2031-03-01T00:00:00Z --out arc.oem')


def add_arguments(p):
    common.add_system_options(p)
    g = p.add_argument_group("design and model")
    src = g.add_mutually_exclusive_group(required=True)
    src.add_argument("--orbit", metavar="SPEC",
                     help='periodic-orbit request, e.g. "halo L2 south period=6.5626d"')
    src.add_argument("--torus", metavar="REQUEST",
                     help='an arc on a quasi-periodic torus: a torus request, e.g. "quasi-halo around halo '
                          'L2 south resonance=9:2 amplitude=2000km" or "lissajous L2 ay=800000km '
                          'az=500000km"; the arc runs from --phase over --span')
    src.add_argument("--route", metavar="DIR_OR_FILE",
                     help="a stitched route: the folder written by 'librate route --out DIR' (or a file "
                          "in it); its maneuvers are re-optimised in the ephemeris model")
    g.add_argument("--epoch", metavar="ISO", required=True,
                   help="date of the first patch point, ISO 8601 (Z = UTC, or a trailing TDB/TT/TAI/UTC)")
    g.add_argument("--revs", metavar="N", default="12", help="with --orbit: revolutions (default 12)")
    g.add_argument("--span", metavar="SPAN", help="with --torus (required): the arc's length, a time (20d) "
                                                  "or Nperiods (stroboscopic periods of the torus)")
    g.add_argument("--phase", metavar="THETA0,THETA1", default="0,0",
                   help="with --torus: torus phase of the arc's first state, degrees: theta0 along the "
                        "stroboscopic period, theta1 around the invariance circle (default 0,0)")
    g.add_argument("--bodies", metavar="LIST", default="sun,earth,moon",
                   help="point masses, comma-separated: sun, earth, moon, mercury ... neptune (default "
                        "sun,earth,moon; the central body is its own term)")
    g.add_argument("--central", metavar="BODY", help="central body (default: the smaller primary; the "
                                                     "Earth for Sun-Earth)")
    g.add_argument("--srp", metavar="A/M,CR", help="cannonball radiation pressure: area-to-mass and "
                                                   "reflectivity, e.g. 0.01m2/kg,1.3")
    g.add_argument("--patches", metavar="N", default="7", help="patch points per revolution (with --torus: "
                                                                  "per stroboscopic period; default 7)")
    g.add_argument("--fix-first", action="store_true", help="hold the first patch state")
    g.add_argument("--fixed-times", action="store_true", help="hold the patch times (default: interior "
                                                              "times free)")
    g.add_argument("--patch-days", metavar="D", default="1", help="with --route: one patch segment per D days "
                                                                 "of each arc, at least two (default 1)")
    g.add_argument("--hold-end", choices=("yes", "no"), default="yes",
                   help="with --route: hold the route's end position (default yes)")
    g.add_argument("--max-iter", metavar="N", default="25", help="Newton iterations at most (default 25)")
    p.add_argument("--format", choices=common.FORMATS, default="table", help="output format (default table)")
    p.add_argument("--out", metavar="FILE", help="write the trajectory: .oem, .xml, .csv or .json")
    common.add_plot_option(p, "draw the CR3BP and ephemeris trajectories")
    common.add_verbosity(p)


def parse_srp(text):
    """``0.01m2/kg,1.3`` -> (0.01, 1.3)."""
    from cr3bp.errors import InputError
    if text is None:
        return None
    from cr3bp.errors import shown
    from cr3bp.validate import number_in
    parts = [w.strip() for w in text.split(",")]
    if len(parts) != 2:
        raise InputError(f"--srp '{shown(text)}' must be AREA_TO_MASS,CR, e.g. 0.01m2/kg,1.3")
    if not parts[0].endswith("m2/kg"):
        raise InputError(f"--srp '{shown(text)}': the area-to-mass ratio needs its unit m2/kg, e.g. 0.01m2/kg,1.3")
    am = number_in("--srp area-to-mass", parts[0].removesuffix("m2/kg").strip(), 0.0, 100.0)
    cr = number_in("--srp reflectivity coefficient", parts[1], 0.0, 2.0)
    return am, cr


def _check_epoch(args, sysm):
    import warnings

    from cr3bp.time import frames
    from cr3bp.errors import InputError
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            frames.frame(sysm, args.epoch, anchor="ephemeris", center="secondary")   # epoch check first
        except InputError as e:
            if "no ephemeris" in str(e) or "no named primaries" in str(e):
                raise InputError(f"system '{sysm.name}' has no ephemeris for its primaries, so it has "
                                 "no ephemeris model; refine supports systems whose primaries are in "
                                 "cr3bp.time.ephemeris (e.g. earth-moon, sun-earth, sun-mars)") from None
            raise
    for w in caught:
        common.progress(args, f"note: {w.message}")


def _float(name, text, lo, hi):
    """A number in lo..hi (a trailing 'd' for days allowed), cr3bp.validate.number_in."""
    from cr3bp.validate import number_in
    return number_in(name, str(text).lower().removesuffix("d"), lo, hi)


def _model_options(args, sysm):
    """The options --orbit and --route share, checked: (max_iter, srp, bodies, output format)."""
    from cr3bp.io import export
    from cr3bp.errors import InputError
    from cr3bp.fidelity import model as fm
    max_iter = common.whole_number("--max-iter", args.max_iter, 1, 200)
    srp = parse_srp(args.srp)
    bodies = fm.parse_bodies(args.bodies)
    fmt_out = export.format_of(args.out) if args.out else None
    _check_epoch(args, sysm)
    return max_iter, srp, bodies, fmt_out


def _run_route(args, sysm):
    """--route: a stitched route carried into the ephemeris model (cr3bp.fidelity.route)."""
    import warnings

    import numpy as np

    from cr3bp.io import export
    from cr3bp.time import frames
    from cr3bp.errors import InputError
    from pathlib import Path

    from cr3bp import api
    from cr3bp.fidelity.route import read_route
    from cr3bp.plotting.fidelity import rotating_states
    for flag, given in (("--revs", args.revs != "12"), ("--patches", args.patches != "7"),
                        ("--fix-first", args.fix_first), ("--fixed-times", args.fixed_times),
                        ("--span", args.span is not None), ("--phase", args.phase != "0,0")):
        if given:
            raise InputError(f"{flag} applies to --orbit only (and --torus); with --route use --patch-days and "
                             "--hold-end")
    patch_days = _float("--patch-days", args.patch_days, 0.01, 1000.0)
    max_iter, srp, bodies, fmt_out = _model_options(args, sysm)
    t_tu, states, maneuvers = read_route(args.route, sysm)
    from cr3bp.fidelity.route import route_launch
    low_energy = route_launch(args.route, args.epoch, sysm)   # a low-energy route: its own launch date only
    common.progress(args, f"route: {len(t_tu)} samples over {(t_tu[-1] - t_tu[0]) * sysm.time_days:.4g} d, "
                          f"{len(maneuvers)} maneuvers; multiple shooting in the ephemeris model...")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        tr = api.refine(Path(args.route), args.epoch, system=sysm, bodies=bodies, central=args.central, srp=srp,
                        patch_days=patch_days, hold_end=args.hold_end == "yes", max_iter=max_iter,
                        progress=lambda stage, i, err: common.progress(
                            args, f"  {stage} iteration {i}: largest mismatch {err:.3e} (nondimensional)"))
    central = tr.model.central
    design = "bicircular" if low_energy else "CR3BP"     # the model the route was designed in
    headers = ["t_days", f"t_{design.lower()}_days", "node", "kind", f"dv_{design.lower()}_mps", "dv_ephemeris_mps"]
    rows = [[m["t_days"], m["t_cr3bp_days"], m["node"], m["kind"], m["dv_cr3bp_mps"], m["dv_mps"]]
            for m in tr.maneuvers]
    rows.append(["total", "", "", "", tr.dv_total_cr3bp_mps, tr.dv_total_mps])
    arcs = common.format_table(["arc", "t_start_days", "t_end_days", "patches", "max_path_offset_km",
                                "max_timing_offset_min", "max_same_epoch_separation_km"],
                               [[a["arc"], a["t_start_days"], a["t_end_days"], a["patches"], a["max_path_offset_km"],
                                 a["max_timing_offset_min"], a["max_same_epoch_separation_km"]] for a in tr.arcs],
                               title=f"each arc of the ephemeris trajectory against the {design} route ({design} times): "
                                     "distance to the nearest point of the route's path, how far ahead or behind "
                                     "it runs, and the separation at equal epochs (path and timing mixed); none "
                                     "of these is a Δv")
    title = (f"{sysm.name}: route {args.route} in the ephemeris model ({central} + {', '.join(tr.model.bodies)}"
             f"{', SRP' if srp else ''}) from {args.epoch}; {len(tr.arcs)} arcs, {tr.t_tu.size} patch points; "
             f"iterations {tr.iterations}; continuity {tr.continuity_km * 1000:.3g} m / "
             f"{tr.continuity_mps:.3g} m/s away from the maneuvers; "
             f"{'maneuvers re-optimised' if tr.optimised else 'continuity solution (not optimised)'}")
    table = arcs + "\n\n" + common.format_table(headers, rows, title=title)
    if args.out:
        spec = frames.frame(sysm, tr.epoch_tdb_s, anchor="ephemeris", axes="j2000-equator", center="secondary")
        segs = []
        for j in range(len(tr.arcs)):
            m = tr.sample_arc == j
            segs.append(export.Segment(np.asarray(tr.sample_t_tu[m]),
                                       rotating_states(tr, tr.sample_km[m], tr.sample_t_tu[m])))
        mans = []
        for m in tr.maneuvers:
            pair = rotating_states(tr, np.array([m["state_before_km"], m["state_after_km"]]),
                                   np.array([m["t_tu"], m["t_tu"]]))
            mans.append(export.Maneuver(float(m["t_tu"]), pair[1, 3:] - pair[0, 3:], m["node"] or m["kind"],
                                        float(m["dv_cr3bp_mps"])))
        model = {"trajectory": "integrated in the ephemeris point-mass model below, NOT the CR3BP; "
                               "the CR3BP lines above describe only the frame that carries the states",
                 "route": str(args.route), "force model": f"point masses {central} (central), "
                 f"{', '.join(tr.model.bodies)}" + (f"; cannonball SRP A/m {srp[0]} m2/kg, Cr {srp[1]}" if srp else ""),
                 "ephemeris": tr.model.ephemeris,
                 "dv_total_mps": f"{tr.dv_total_mps:.6g} ({design} route: {tr.dv_total_cr3bp_mps:.6g})",
                 "continuity": f"{tr.continuity_km * 1000:.3g} m, {tr.continuity_mps:.3g} m/s"}
        traj = export.Trajectory(spec, tuple(segs), "TDB", tuple(mans), "LIBRATE REFINED ROUTE", "NONE", model)
        export.write(args.out, traj, fmt_out)
        common.progress(args, f"wrote {args.out}")
    _finish(args, tr, f"route {args.route} from {args.epoch}",
            f"{design} route (blue) and ephemeris trajectory (red); {central}-centred",
            {"route": str(args.route), "design_model": design,
             "design_model_note": None if design == "CR3BP" else "the *_cr3bp_* keys of this route hold the "
             "values of its design model, the bicircular (Sun-Earth-Moon) one"}, headers, rows, table)
    return 0


def _torus_options(args, sysm):
    """--torus's options, all checked before any work: (torus spec, phase in rad, span text)."""
    import math

    from cr3bp.errors import InputError, shown
    from cr3bp.io import export
    from cr3bp.tori import request as treq
    for flag, given in (("--revs", args.revs != "12"), ("--patch-days", args.patch_days != "1"),
                        ("--hold-end", args.hold_end != "yes")):
        if given:
            raise InputError(f"{flag} does not go with --torus; the arc is --span long from --phase, with "
                             "--patches per stroboscopic period")
    if args.span is None:
        raise InputError("--torus needs --span (the arc's length: a time such as 20d, or Nperiods)")
    spec = treq.parse(args.torus)
    treq.values(sysm, spec)                     # bad units and ranges fail here, before any work
    if spec.around:
        from cr3bp.orbits.request import parse_request
        from cr3bp.orbits.targets import make_target
        ospec = parse_request(spec.around)
        if ospec.family != "halo":
            raise InputError(f"a quasi-halo torus is about a halo orbit (or NRHO); '{shown(spec.around)}' is a "
                             f"{ospec.family} orbit")
        make_target(sysm, ospec.key, ospec.value)
    parts = args.phase.split(",")
    try:
        phase = [math.radians(float(x)) for x in parts]
    except ValueError:
        raise InputError(f"--phase '{shown(args.phase)}' is not two angles THETA0,THETA1 (degrees)") from None
    if len(phase) != 2 or not all(math.isfinite(x) for x in phase):
        raise InputError(f"--phase '{shown(args.phase)}' must be two finite angles THETA0,THETA1 (degrees)")
    export.parse_span(args.span, sysm, 1.0)     # its form; Nperiods counted once the torus is known
    return spec, phase


def _run_torus(args, sysm):
    """--torus: an arc on a torus carried into the ephemeris model (cr3bp.fidelity.torus_arc)."""
    import warnings

    import numpy as np

    from cr3bp import api
    from cr3bp.errors import InputError
    from cr3bp.fidelity.torus_arc import MAX_PERIODS
    from cr3bp.io import export
    from cr3bp.time import frames
    from cr3bp.tori import request as treq
    spec, phase = _torus_options(args, sysm)
    per = common.whole_number("--patches", args.patches, 2, 64)
    max_iter, srp, bodies, fmt_out = _model_options(args, sysm)
    common.progress(args, f"solving the torus '{args.torus}'...")
    torus = treq.solve(sysm, spec, progress=lambda m: common.progress(args, m, verbose_only=True))
    T = torus.stroboscopic_time
    span = export.parse_span(args.span, sysm, T)
    if span > MAX_PERIODS * T * (1 + 1e-12):
        raise InputError(f"--span {args.span} is {span / T:.4g} stroboscopic periods; at most {MAX_PERIODS}")
    common.progress(args, f"torus: stroboscopic period {torus.stroboscopic_period_days:.6f} d; arc of "
                          f"{sysm.days(span):.6g} d from phase {args.phase} deg with {per} patch points per "
                          "stroboscopic period")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        tr = api.refine(torus, args.epoch, span=args.span, phase=[float(x) for x in args.phase.split(",")],
                        bodies=bodies, central=args.central, srp=srp, patches=per, fix_first=args.fix_first,
                        fixed_times=args.fixed_times, max_iter=max_iter,
                        progress=lambda i, err: common.progress(
                            args, f"  iteration {i}: largest mismatch {err:.3e} (nondimensional)"))
    central = tr.model.central
    headers = ["stroboscopic_period", "max_path_offset_km", "max_timing_offset_min",
               "max_same_epoch_separation_km", f"min_r_{central}_km", "min_r_cr3bp_km"]
    rows = [[r["rev"], r["max_path_offset_km"], r["max_timing_offset_min"], r["max_same_epoch_separation_km"],
             r["min_radius_km"], r["min_radius_cr3bp_km"]] for r in tr.per_rev]
    start_km = float(np.linalg.norm(tr.patches_km[0, :3] - tr.initial_km[0, :3]))
    start_mps = float(np.linalg.norm(tr.patches_km[0, 3:] - tr.initial_km[0, 3:]) * 1000.0)
    title = (f"{sysm.name}: arc on the torus '{args.torus}' from phase {args.phase} deg over "
             f"{sysm.days(span):.6g} d, in the ephemeris model ({central} + {', '.join(tr.model.bodies)}"
             f"{', SRP' if srp else ''}) from {args.epoch}; converged in {tr.iterations} iterations, continuity "
             f"{tr.continuity_km * 1000:.3g} m / {tr.continuity_mps:.3g} m/s; first state moved "
             f"{start_km:.6g} km, {start_mps:.6g} m/s from the CR3BP torus (ephemeris model against the CR3BP "
             "design). Per stroboscopic period of the CR3BP torus: distance to the nearest point of the design's "
             "path, how far ahead or behind it runs, and the separation at equal epochs (not a Δv)")
    table = common.format_table(headers, rows, title=title)
    if args.out:
        from cr3bp.plotting.fidelity import rotating_states
        fspec = frames.frame(sysm, tr.epoch_tdb_s, anchor="ephemeris", axes="j2000-equator", center="secondary")
        rot = rotating_states(tr, tr.sample_km, tr.sample_t_tu)
        model = {"trajectory": "integrated in the ephemeris point-mass model below, NOT the CR3BP; "
                               "the CR3BP lines above describe only the frame that carries the states",
                 "torus request": args.torus, "torus phase (deg)": args.phase,
                 "stroboscopic period": f"{T!r} TU = {torus.stroboscopic_period_days:.9f} d (CR3BP)",
                 "force model": f"point masses {central} (central), "
                 f"{', '.join(tr.model.bodies)}" + (f"; cannonball SRP A/m {srp[0]} m2/kg, Cr {srp[1]}" if srp else ""),
                 "ephemeris": tr.model.ephemeris,
                 "iterations": str(tr.iterations), "continuity": f"{tr.continuity_km * 1000:.3g} m, "
                 f"{tr.continuity_mps:.3g} m/s"}
        traj = export.Trajectory(fspec, (export.Segment(np.asarray(tr.sample_t_tu), rot),), "TDB", (),
                                 "LIBRATE REFINED TORUS ARC", "NONE", model)
        export.write(args.out, traj, fmt_out)
        common.progress(args, f"wrote {args.out}")
    _finish(args, tr, f"arc on {args.torus} from {args.epoch}, phase {args.phase} deg",
            f"CR3BP torus arc (blue) and ephemeris trajectory (red); {central}-centred",
            {"torus_request": args.torus, "phase_deg": args.phase, "span_days": sysm.days(span),
             "first_state_offset_km": start_km, "first_state_offset_mps": start_mps,
             "first_state_cr3bp_km": tr.initial_km[0].tolist(),
             "torus": {k: v for k, v in torus.to_dict().items() if k != "circle"}}, headers, rows, table)
    return 0


def _finish(args, tr, title, caption, extra, headers, rows, table):
    """The plot (--plot) and the screen output shared by --orbit and --route."""
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.fidelity import transition_figure
        save(transition_figure(tr, title=title), args.plot, caption)
        common.progress(args, f"wrote {args.plot}")
    payload = dict(tr.to_dict(), **extra)
    out_save = args.out
    args.out = None          # the table goes to the screen; --out is the trajectory file
    try:
        common.emit(args, payload=payload, headers=headers, rows=rows, table=table)
    finally:
        args.out = out_save


def run(args):
    import warnings

    import numpy as np

    from cr3bp import api
    from cr3bp.io import export
    from cr3bp.time import frames

    sysm = common.resolve_system(args)
    sysm.require_dimensional("an ephemeris model")
    if args.route is not None:
        return _run_route(args, sysm)
    if args.torus is not None:
        return _run_torus(args, sysm)
    from cr3bp.errors import InputError
    for flag, given in (("--span", args.span is not None), ("--phase", args.phase != "0,0")):
        if given:
            raise InputError(f"{flag} goes with --torus (an arc on a torus); --orbit refines whole revolutions "
                             "(--revs)")
    revs = common.whole_number("--revs", args.revs, 1, 200)
    per_rev = common.whole_number("--patches", args.patches, 2, 64)
    max_iter, srp, bodies, fmt_out = _model_options(args, sysm)
    common.progress(args, f"solving orbit request '{args.orbit}'...")
    orbit = api.orbit(sysm, args.orbit)
    common.progress(args, f"orbit: period {orbit.period_days:.6f} d; transition over {revs} revolutions "
                          f"with {per_rev} patch points each")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        tr = api.refine(orbit, args.epoch, revs=revs, bodies=bodies, central=args.central, srp=srp, patches=per_rev,
                        fix_first=args.fix_first, fixed_times=args.fixed_times, max_iter=max_iter,
                        progress=lambda i, err: common.progress(
                            args, f"  iteration {i}: largest mismatch {err:.3e} (nondimensional)"))
    central = tr.model.central
    headers = ["rev", "max_path_offset_km", "max_timing_offset_min", "max_same_epoch_separation_km",
               f"min_r_{central}_km", "min_r_cr3bp_km"]
    rows = [[r["rev"], r["max_path_offset_km"], r["max_timing_offset_min"], r["max_same_epoch_separation_km"],
             r["min_radius_km"], r["min_radius_cr3bp_km"]] for r in tr.per_rev]
    title = (f"{sysm.name}: '{args.orbit}' in the ephemeris model ({central} + {', '.join(tr.model.bodies)}"
             f"{', SRP' if srp else ''}) from {args.epoch}, {revs} revolutions; converged in "
             f"{tr.iterations} iterations, continuity {tr.continuity_km * 1000:.3g} m / "
             f"{tr.continuity_mps:.3g} m/s, maneuvers (ephemeris model) {tr.dv_total_mps:.3g} m/s. Per "
             "revolution: distance to the nearest point of the CR3BP design's path, how far ahead or behind "
             "it the trajectory runs, and the separation at equal epochs (path and timing mixed; not a Δv)")
    table = common.format_table(headers, rows, title=title)
    if args.out:
        spec = frames.frame(sysm, tr.epoch_tdb_s, anchor="ephemeris", axes="j2000-equator", center="secondary")
        from cr3bp.plotting.fidelity import rotating_states
        rot = rotating_states(tr, tr.sample_km, tr.sample_t_tu)
        model = {"trajectory": "integrated in the ephemeris point-mass model below, NOT the CR3BP; "
                               "the CR3BP lines above describe only the frame that carries the states",
                 "orbit request": args.orbit, "force model": f"point masses {central} (central), "
                 f"{', '.join(tr.model.bodies)}" + (f"; cannonball SRP A/m {srp[0]} m2/kg, Cr {srp[1]}" if srp else ""),
                 "ephemeris": tr.model.ephemeris,
                 "iterations": str(tr.iterations), "continuity": f"{tr.continuity_km * 1000:.3g} m, "
                 f"{tr.continuity_mps:.3g} m/s"}
        traj = export.Trajectory(spec, (export.Segment(np.asarray(tr.sample_t_tu), rot),), "TDB", (),
                                 "LIBRATE REFINED", "NONE", model)
        export.write(args.out, traj, fmt_out)
        common.progress(args, f"wrote {args.out}")
    _finish(args, tr, f"{args.orbit} from {args.epoch}, {revs} revolutions",
            f"CR3BP design (blue) and ephemeris trajectory (red); {central}-centred",
            {"orbit_request": args.orbit}, headers, rows, table)
    return 0
