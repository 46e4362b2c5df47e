"""librate keep: station-keeping budget of an orbit carried into the ephemeris model (Monte Carlo)."""

from .. import common
from ._units import velocity_mps

NAME = "keep"
ORDER = 92
KERNELS = (("cr3bp.integrate.dop853", "integrate"), ("cr3bp.fidelity.segments", "integrate_segments"))
HELP = "station-keeping Δv budget of an orbit in the ephemeris model: Monte Carlo with navigation and burn errors"
EXAMPLE = ('librate keep --system earth-moon --orbit "halo L2 south resonance=9:2" --epoch 2031-03-01T00:00:00Z '
           "--span 365d --trials 200 --nav-error 1km,1cm/s --burn-error 1%,1mm/s --min-burn 1cm/s --plot hist.png")


def add_arguments(p):
    common.add_system_options(p)
    g = p.add_argument_group("orbit, date and model")
    common.add_orbit_at_date(g, "date of the reference's start", "span maintained")
    g.add_argument("--bodies", metavar="LIST", default="sun,earth,moon",
                   help="point masses of the ephemeris model (default sun,earth,moon; the central body, the "
                        "smaller primary, is its own term)")
    g.add_argument("--srp", metavar="A/M,CR", help="cannonball radiation pressure in the reference and the "
                                                   "trials, e.g. 0.01m2/kg,1.3")
    m = p.add_argument_group("errors (1-sigma per axis) and control")
    m.add_argument("--trials", metavar="N", default="200", help="Monte Carlo trials, 1..100000 (default 200)")
    m.add_argument("--nav-error", metavar="POS,VEL", default="1km,1cm/s",
                   help="navigation error, position and velocity (default 1km,1cm/s)")
    m.add_argument("--burn-error", metavar="PROP,FIXED", default="1%,1mm/s",
                   help="execution error, proportional (%%) and fixed (default 1%%,1mm/s)")
    m.add_argument("--min-burn", metavar="VEL", default="0m/s",
                   help="planned burns smaller than this are skipped (default 0m/s)")
    m.add_argument("--interval", metavar="TIME", help="a maneuver every TIME (e.g. 7d) instead of once a "
                                                      "revolution at the far x-z plane crossing")
    m.add_argument("--policy", choices=("crossing", "floquet"), default="crossing",
                   help="the control: 'crossing' (default) gives back the reference's x velocity at a rotating "
                        "x-z plane crossing --target-revs downstream (Davis et al. 2017); 'floquet' cancels the "
                        "deviation's component along the unstable mode of the reference's map over --target-revs "
                        "revolutions (Simo et al. 1986; Howell & Gordon 1994)")
    m.add_argument("--target-revs", metavar="N",
                   help="revolutions from a maneuver to the crossing it targets (--policy crossing), or of the map "
                        "whose unstable mode is cancelled (--policy floquet), 1..10 (default 4)")
    m.add_argument("--hold-phase", action="store_true",
                   help="with --policy crossing: hold the target crossing's epoch too (keeps the reference's "
                        "timing; costs more)")
    m.add_argument("--seed", metavar="N", default="0", help="random seed, 0..999999999999 (default 0)")
    common.add_workers_option(m, "worker processes (default 1: in this process, whose compiled "
                                 "propagation already uses every core); results do not depend on it")
    m.add_argument("--scheduler", metavar="ADDRESS", help="run the trials on a dask.distributed scheduler "
                                                          "(e.g. tcp://10.0.0.5:8786), or 'local:N' for a local "
                                                          "cluster of N worker processes started here ('local': "
                                                          "--workers processes, default 2); needs librate[cluster]; "
                                                          "results do not depend on it")
    o = p.add_argument_group("output")
    common.add_plot_option(o, "draw the histogram of the Δv per year and per maneuver")
    p.add_argument("--format", choices=("table", "json"), default="table", help="output format (default table)")
    p.add_argument("--out", metavar="FILE", help="write the output to FILE instead of the screen")
    common.add_verbosity(p)


def _pair(option, text, example):
    from cr3bp.errors import InputError, shown
    parts = [w.strip() for w in str(text).split(",")]
    if len(parts) != 2 or not all(parts):
        raise InputError(f"{option} '{shown(text)}' must be two values separated by a comma, e.g. {example}")
    return parts


def parse_errors(nav_text, burn_text):
    """``1km,1cm/s`` and ``1%,1mm/s`` -> :class:`cr3bp.operations.keeping.Errors`."""
    from cr3bp.errors import InputError, shown
    from cr3bp.operations.keeping import Errors
    from cr3bp.validate import finite_number, quantity
    pos, vel = _pair("--nav-error", nav_text, "1km,1cm/s")
    pos_km = quantity("--nav-error position", pos, "length", sign="nonnegative")
    if pos_km > 1e5:
        raise InputError(f"--nav-error position '{shown(pos)}' is over 100000 km")
    vel_mps = velocity_mps("--nav-error velocity", vel)
    prop, fixed = _pair("--burn-error", burn_text, "1%,1mm/s")
    if not prop.endswith("%"):
        raise InputError(f"--burn-error '{shown(burn_text)}': the proportional error needs its unit %, e.g. 1%,1mm/s")
    p = finite_number("--burn-error proportional", prop[:-1])
    if not 0.0 <= p <= 100.0:
        raise InputError(f"--burn-error proportional '{shown(prop)}' must be in 0%..100%")
    fixed_mps = velocity_mps("--burn-error fixed", fixed)
    for name, v in (("--nav-error velocity", vel_mps), ("--burn-error fixed", fixed_mps)):
        if v > 1000.0:
            raise InputError(f"{name} {v:g} m/s is over 1 km/s")
    return Errors(pos_km, vel_mps, p / 100.0, fixed_mps)


def _inputs(args):
    """Every check of the user's values, before anything is computed or written."""
    from cr3bp.io import export
    from cr3bp.errors import InputError
    from cr3bp.fidelity import model as fm
    from .refine import _check_epoch, parse_srp
    sysm = common.resolve_system(args)
    sysm.require_dimensional("an ephemeris model")
    errors = parse_errors(args.nav_error, args.burn_error)
    min_burn = velocity_mps("--min-burn", args.min_burn)
    trials = common.whole_number("--trials", args.trials, 1, 100000)
    if args.policy == "floquet" and args.hold_phase:
        raise InputError("--hold-phase goes with --policy crossing; the Floquet-mode control holds no epoch")
    target = common.whole_number("--target-revs", "4" if args.target_revs is None else args.target_revs, 1, 10)
    seed = common.whole_number("--seed", args.seed, 0, 999999999999)
    workers = common.workers(args)
    if args.scheduler is not None:
        from cr3bp.transfers.tasks import check_scheduler
        check_scheduler(args.scheduler, workers)
    bodies = fm.parse_bodies(args.bodies)
    srp = parse_srp(args.srp)
    if export.span_periods(args.span) is None:   # a span in periods is read after the orbit's solve
        export.parse_span(args.span, sysm)
    interval = None
    if args.interval is not None:
        from cr3bp.validate import quantity
        interval = quantity("--interval", args.interval, "time", sysm, sign="positive")
    if args.plot:
        common.folder_exists("--plot", args.plot)
    if args.out:
        common.folder_exists("--out", args.out)
    _check_epoch(args, sysm)
    return sysm, errors, min_burn, trials, target, seed, workers, bodies, srp, interval


def run(args):
    from .export import leap_second_notes
    return leap_second_notes(args, lambda: _run(args))


def _run(args):
    from cr3bp.operations import keeping

    sysm, errors, min_burn, trials, target, seed, workers, bodies, srp, interval = _inputs(args)
    if args.scheduler is None:
        return _budget_run(args, sysm, errors, min_burn, trials, target, seed, workers, bodies, srp, interval, None)
    # reach the cluster before the reference's minutes of work (an unreachable address is refused now)
    common.progress(args, f"connecting to the dask scheduler '{args.scheduler}'...")
    client, cluster = keeping.dask_client(args.scheduler.strip(), workers)
    try:
        return _budget_run(args, sysm, errors, min_burn, trials, target, seed, workers, bodies, srp, interval,
                           client)
    finally:
        keeping.close_dask(client, cluster)


def _budget_run(args, sysm, errors, min_burn, trials, target, seed, workers, bodies, srp, interval, client):
    from cr3bp.io import export
    from cr3bp.errors import InputError
    from cr3bp import api
    from cr3bp.operations import keeping
    common.progress(args, f"solving orbit request '{args.orbit}'...")
    orbit = api.orbit(sysm, args.orbit)
    span_tu = export.parse_span(args.span, sysm, float(orbit.period))
    revs = span_tu / float(orbit.period)
    if revs + target + 2 > keeping.MAX_REVS:
        raise InputError(f"--span '{args.span}' is {revs:.1f} revolutions of {orbit.period_days:.4g} d; with "
                         f"--target-revs {target} at most {keeping.MAX_REVS - target - 3} revolutions")
    if revs < 1.0 and interval is None:
        raise InputError(f"--span '{args.span}' is shorter than one revolution ({orbit.period_days:.4g} d): no "
                         "maneuver once a revolution; lengthen it or give --interval")
    if interval is not None and not 0.05 * orbit.period <= interval <= span_tu:
        raise InputError(f"--interval '{args.interval}' must be between 5 % of the period "
                         f"({0.05 * orbit.period_days:.4g} d) and the span ({span_tu * sysm.time_days:.6g} d)")
    b = api.keep(orbit, args.epoch, span=args.span, trials=trials,
                 nav_error=(errors.nav_position_km, errors.nav_velocity_mps),
                 burn_error=(errors.burn_proportional, errors.burn_fixed_mps), min_burn_mps=min_burn,
                 bodies=bodies, srp=srp, target_revs=target, interval=args.interval, hold_phase=args.hold_phase,
                 policy=args.policy, seed=seed, workers=None if client is not None else workers,
                 scheduler=client, progress=lambda m: common.progress(args, m))
    s = b.summary()
    ref = b.reference
    model_line = (f"{ref.model_text}: {ref.info['central']} + {', '.join(ref.info['bodies'])}"
                  + (f", cannonball SRP A/m {srp[0]:g} m2/kg, Cr {srp[1]:g}" if srp else ""))
    payload = dict(b.to_dict(), orbit_request=args.orbit, epoch=args.epoch, model_line=model_line)
    d = s["dv_per_year_mps"]
    rows = [
        ["orbit", f"{args.orbit} (CR3BP period {orbit.period_days:.4f} d)"],
        ["reference", f"{ref.revs} revolutions from {args.epoch}, {ref.info['iterations']} iterations, continuity "
                      f"{ref.info['continuity_km'] * 1e6:.3g} mm / {ref.info['continuity_mps'] * 1e3:.3g} mm/s"],
        ["span", f"{b.span_days:.2f} d"],
        ["control", (f"every {interval * sysm.time_days:g} d" if interval else "once a revolution at the far x-z "
                     "crossing") + (f", target crossing {target} revolution(s) downstream"
                                    + (", crossing epoch held" if args.hold_phase else "")
                                    if args.policy == "crossing" else
                                    f", unstable mode of the {target}-revolution map cancelled")],
        ["errors (1-sigma per axis)", f"navigation {errors.nav_position_km:g} km, {errors.nav_velocity_mps * 100:g} cm/s; "
                                      f"execution {errors.burn_proportional * 100:g} %, "
                                      f"{errors.burn_fixed_mps * 1000:g} mm/s"],
        ["minimum burn", f"{min_burn * 100:g} cm/s"],
        ["trials (seed)", f"{b.trials} ({seed})"],
        ["Δv per year, mean", f"{d['mean']:.4g} m/s"],
        ["Δv per year, 95th percentile", f"{d['p95']:.4g} m/s"],
        ["Δv per year, least .. most", f"{d['min']:.4g} .. {d['max']:.4g} m/s"],
        ["Δv per maneuver, mean / 95th pct / most",
         f"{s['dv_per_maneuver_mps']['mean'] * 100:.3g} / {s['dv_per_maneuver_mps']['p95'] * 100:.3g} / "
         f"{s['dv_per_maneuver_mps']['max'] * 100:.3g} cm/s"],
        ["maneuvers over the span, mean (least .. most)",
         f"{s['maneuvers_over_span']['mean']:.1f} ({s['maneuvers_over_span']['min']} .. "
         f"{s['maneuvers_over_span']['max']}) of {s['maneuver_slots']} slots"],
        ["burns skipped under the minimum", str(s["skipped_under_min_burn"])],
        ["distance to the reference at maneuvers, median / 95th pct / most",
         f"{s['deviation_at_maneuvers_km']['median']:.3g} / {s['deviation_at_maneuvers_km']['p95']:.3g} / "
         f"{s['deviation_at_maneuvers_km']['max']:.3g} km"],
        ["trials lost (left the orbit)", str(s["lost_trials"])],
    ]
    width = max(len(r[0]) for r in rows)
    table = "\n".join(["librate keep", "", f"model: {model_line}", "",
                       "station-keeping budget (all Δv in the ephemeris model)", ""]
                      + [f"{k.ljust(width)}  {v}" for k, v in rows]) + "\n"
    if s["lost_trials"]:
        table += (f"\nnote: {s['lost_trials']} trials left the orbit (farther than {keeping.LOST_KM:g} km from the "
                  "reference): their Δv counts only up to that point"
                  + ("" if interval else "; maneuvers more often than once a revolution (e.g. --interval 30d "
                     "--target-revs 1 for Sun-Earth orbits) hold orbits that diverge within a revolution")
                  + "\n")
    if args.plot:
        from cr3bp.plotting.keeping import histogram
        histogram(b, args.plot, title=f"{args.orbit} from {args.epoch[:10]}, {b.span_days:.0f} d, {b.trials} trials",
                  text=f"Station-keeping Monte Carlo, ephemeris model ({ref.info['central']} + "
                       f"{', '.join(ref.info['bodies'])}{', SRP' if srp else ''}), {'x-axis crossing' if args.policy == 'crossing' else 'Floquet-mode'} control; navigation {errors.nav_position_km:g} km, "
                       f"{errors.nav_velocity_mps * 100:g} cm/s, execution {errors.burn_proportional * 100:g} %, "
                       f"{errors.burn_fixed_mps * 1000:g} mm/s (1-sigma per axis).")
        common.progress(args, f"wrote {args.plot}")
    common.emit(args, payload=payload, table=table, headers=["item", "value"], rows=rows, model="ephemeris")
    return 0
