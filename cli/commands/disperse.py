"""librate disperse: insertion dispersion of a manifold insertion or of the last maneuver of a
stitched route (Monte Carlo and linear covariance)."""

from cr3bp.vocabulary import TUBE_BRANCHES

from .. import common

NAME = "disperse"
ORDER = 93
KERNELS = (("cr3bp.integrate.dop853", "integrate"),)
HELP = ("insertion dispersion: errors of the last maneuver before a manifold insertion or before a route's "
        "end, correction maneuvers, Monte Carlo beside the linear covariance estimate (CR3BP)")
EXAMPLE = ('librate disperse --system earth-moon --orbit "halo L2 south resonance=9:2" --coast 10d '
           "--burn 20m/s --corrections 1d,4d --nav-error 1km,1cm/s --burn-error 1%,1mm/s --trials 2000")

MAX_COAST_DAYS = 1000.0


#: Options of the manifold insertion (refused with --route: the route sets them).
MANIFOLD_ONLY = (("coast", "--coast"), ("branch", "--branch"), ("burn", "--burn"), ("arrive_phase", "--arrive-phase"))


def add_arguments(p):
    common.add_system_options(p, required=False)
    g = p.add_argument_group("the insertion (--orbit with --coast, or --route)")
    g.add_argument("--orbit", metavar="SPEC",
                   help='periodic orbit inserted into, e.g. "halo L2 south resonance=9:2"')
    g.add_argument("--route", metavar="FILE",
                   help="instead of --orbit: the route.json of 'librate route --out DIR'; the last maneuver before "
                        "the route's end is dispersed over the coast to the end (an insertion burn at the very end "
                        "is the arrival); the system, the burn and the coast come from the file")
    g.add_argument("--coast", metavar="TIME",
                   help="coast along the orbit's stable manifold from the last maneuver to the insertion, "
                        "e.g. 10d (the manifold is traced back this long from the insertion point)")
    g.add_argument("--arrive-phase", metavar="ANGLE",
                   help="where the manifold reaches the orbit: 120deg or 0.25rev of the period from its "
                        "initial state (default 0deg)")
    g.add_argument("--branch", choices=TUBE_BRANCHES,
                   help="manifold branch (default interior)")
    g.add_argument("--burn", metavar="VEL",
                   help="size of the last maneuver, which scales its proportional execution error "
                        "(default 0m/s; units mm/s, cm/s, m/s, km/s)")
    m = p.add_argument_group("errors (1-sigma per axis, rotating frame) and corrections")
    m.add_argument("--corrections", metavar="LIST",
                   help="correction maneuver times after the last maneuver, increasing, before the insertion, "
                        "e.g. 1d,4d (default: none; each targets the nominal position at insertion)")
    m.add_argument("--nav-error", metavar="POS,VEL", default="1km,1cm/s",
                   help="navigation error, position and velocity (default 1km,1cm/s)")
    m.add_argument("--burn-error", metavar="PROP,FIXED", default="1%,1mm/s",
                   help="execution error of every maneuver, proportional (%%) and fixed (default 1%%,1mm/s)")
    m.add_argument("--trials", metavar="N", default="1000", help="Monte Carlo trials, 1..100000 (default 1000)")
    m.add_argument("--seed", metavar="N", default="0", help="random seed, 0..999999999999 (default 0)")
    common.add_workers_option(m, "run the trials in pieces over N worker processes (default: in this process, "
                                 "whose compiled propagation already uses every core); results do not depend on it")
    m.add_argument("--scheduler", metavar="ADDRESS", help="run the trials on a dask.distributed scheduler "
                                                          "(e.g. tcp://10.0.0.5:8786), or 'local:N' for a local "
                                                          "cluster of N worker processes started here ('local': "
                                                          "--workers processes, default 2); needs librate[cluster]; "
                                                          "results do not depend on it")
    p.add_argument("--format", choices=("table", "json"), default="table", help="output format (default table)")
    p.add_argument("--out", metavar="FILE", help="write the output to FILE instead of the screen")
    common.add_verbosity(p)


def _inputs(args):
    """Every check of the user's values, before anything is computed or written."""
    from cr3bp.errors import InputError
    from cr3bp.operations import dispersion as dp
    from cr3bp.operations.dispersion import MAX_CORRECTIONS
    from cr3bp.operations.placement import parse_phase
    from cr3bp.validate import quantity
    from .keep import parse_errors
    from ._units import velocity_mps
    nominal = None
    if args.route is not None:
        if args.orbit is not None:
            raise InputError("give --orbit or --route, not both")
        for attr, opt in MANIFOLD_ONLY:
            if getattr(args, attr) is not None:
                raise InputError(f"{opt} goes with --orbit; with --route the route sets the last maneuver and "
                                 "the coast")
        nominal = dp.after_route_maneuver(dp.read_route(args.route))
        if (args.system or args.mu) and common.resolve_system(args).name != nominal.system.name:
            raise InputError(f"--system {args.system or args.mu}: the route '{args.route}' is in "
                             f"{nominal.system.name}")
        sysm = nominal.system
        burn, coast, phase = nominal.burn_mps, nominal.tf_tu, 0.0
        coast_text = f"{coast * sysm.time_days:.6g}d (the route's coast)"
    else:
        if args.orbit is None:
            raise InputError("give --orbit SPEC (with --coast) or --route FILE")
        if args.coast is None:
            raise InputError("--orbit needs --coast TIME (the coast along the stable manifold)")
        sysm = common.resolve_system(args)
        sysm.require_dimensional("an insertion dispersion in km and m/s")
        burn = velocity_mps("--burn", args.burn or "0m/s")
        if burn > 1e5:
            raise InputError(f"--burn '{args.burn}' is over 100 km/s")
        coast = quantity("--coast", args.coast, "time", sysm, sign="positive")
        if coast * sysm.time_days > MAX_COAST_DAYS:
            raise InputError(f"--coast '{args.coast}' is over {MAX_COAST_DAYS:g} d")
        phase = parse_phase(args.arrive_phase or "0deg")
        coast_text = f"--coast '{args.coast}'"
    errors = parse_errors(args.nav_error, args.burn_error)
    corr = []
    if args.corrections is not None:
        parts = [w.strip() for w in str(args.corrections).split(",")]
        if not all(parts):
            raise InputError(f"--corrections '{args.corrections}' must be times separated by commas, e.g. 1d,4d")
        if len(parts) > MAX_CORRECTIONS:
            raise InputError(f"--corrections '{args.corrections}' has {len(parts)} times; at most {MAX_CORRECTIONS}")
        corr = [quantity("--corrections", w, "time", sysm, sign="positive") for w in parts]
        for a, b, w in zip(corr, corr[1:], parts[1:]):
            if not b > a:
                raise InputError(f"--corrections '{args.corrections}': {w} is not after the time before it")
        if corr[-1] >= coast:
            raise InputError(f"--corrections '{args.corrections}': every correction must come before the "
                             f"insertion at {coast_text}")
    trials = common.whole_number("--trials", args.trials, 1, 100000)
    seed = common.whole_number("--seed", args.seed, 0, 999999999999)
    workers = common.workers(args)
    if args.scheduler is not None:
        from cr3bp.transfers.tasks import check_scheduler
        check_scheduler(args.scheduler, workers)
    if args.out:
        common.folder_exists("--out", args.out)
    return sysm, errors, burn, coast, phase, corr, trials, seed, nominal, workers


def run(args):
    from cr3bp import api

    sysm, errors, burn, coast, phase, corr, trials, seed, nom, workers = _inputs(args)
    kw = dict(corrections=corr, nav_error=(errors.nav_position_km, errors.nav_velocity_mps),
              burn_error=(errors.burn_proportional, errors.burn_fixed_mps), trials=trials, seed=seed,
              workers=workers, scheduler=None if args.scheduler is None else args.scheduler.strip())
    if nom is None:
        common.progress(args, f"solving orbit request '{args.orbit}'...")
        orbit = api.orbit(sysm, args.orbit)
        common.progress(args, f"{trials} trials and the linear covariance...")
        d = api.disperse(orbit, coast=coast, arrive_phase=phase, burn=burn, branch=args.branch or "interior", **kw)
        first = ["orbit", f"{args.orbit} (CR3BP period {orbit.period_days:.4f} d)"]
        payload_extra = {"orbit_request": args.orbit}
    else:
        common.progress(args, f"{trials} trials and the linear covariance...")
        d = api.disperse(route=args.route, **kw)
        first = ["route", str(args.route)]
        payload_extra = {"route_file": str(args.route)}
    nom = d.nominal
    s = d.summary()
    payload = dict(d.to_dict(), **payload_extra)
    rows = [first,
            ["nominal", nom.label],
            ["last maneuver (CR3BP)", f"{burn:g} m/s"],
            ["errors (1-sigma per axis, rotating frame)",
             f"navigation {errors.nav_position_km:g} km, {errors.nav_velocity_mps * 100:g} cm/s; execution "
             f"{errors.burn_proportional * 100:g} %, {errors.burn_fixed_mps * 1000:g} mm/s"],
            ["trials (seed)", f"{s['trials']} ({seed}), {s['lost_trials']} lost"]]
    for j, c in enumerate(s["corrections"]):
        rows.append([f"correction {j + 1} at {c['time_days']:.4g} d: mean / 95th pct (Monte Carlo)",
                     f"{c['monte_carlo_mean_mps'] * 100:.4g} / {c['monte_carlo_p95_mps'] * 100:.4g} cm/s"])
        rows.append([f"correction {j + 1}: mean / rms (linear covariance) vs rms (Monte Carlo)",
                     f"{c['linear_mean_mps'] * 100:.4g} / {c['linear_rms_mps'] * 100:.4g} cm/s vs "
                     f"{c['monte_carlo_rms_mps'] * 100:.4g} cm/s"])
    t = s["total_correction_mps"]
    p, v = s["insertion_position_km"], s["insertion_velocity_mps"]
    rows += [["all corrections: mean / 95th pct (Monte Carlo)",
              f"{t['monte_carlo_mean'] * 100:.4g} / {t['monte_carlo_p95'] * 100:.4g} cm/s"],
             ["all corrections: mean (linear covariance)", f"{t['linear_mean'] * 100:.4g} cm/s"],
             ["position at insertion, RSS 1-sigma: Monte Carlo / linear",
              f"{p['monte_carlo_rss_1sigma']:.4g} / {p['linear_rss_1sigma']:.4g} km (95th pct of the miss "
              f"{p['monte_carlo_p95']:.4g} km)"],
             ["velocity at insertion, RSS 1-sigma: Monte Carlo / linear",
              f"{v['monte_carlo_rss_1sigma'] * 100:.4g} / {v['linear_rss_1sigma'] * 100:.4g} cm/s (95th pct "
              f"{v['monte_carlo_p95'] * 100:.4g} cm/s)"],
             ["without corrections (linear): position / velocity RSS 1-sigma",
              f"{p['linear_rss_1sigma_without_corrections']:.4g} km / "
              f"{v['linear_rss_1sigma_without_corrections'] * 100:.4g} cm/s"]]
    width = max(len(r[0]) for r in rows)
    from cr3bp.operations import dispersion as dp
    table = "\n".join(["librate disperse", "", f"model: {dp.MODEL_TEXT}", "",
                       "insertion dispersion (all Δv, distances and times in the CR3BP)", ""]
                      + [f"{k.ljust(width)}  {val}" for k, val in rows]) + "\n"
    if s["lost_trials"]:
        table += f"\nnote: {s['lost_trials']} trials stopped early (impact or step limit) and are left out\n"
    common.emit(args, payload=payload, table=table, headers=["item", "value"], rows=rows, model="cr3bp")
    return 0
