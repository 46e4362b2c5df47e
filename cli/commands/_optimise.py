"""librate connect --optimise: the least-Δv two- or three-impulse transfer between two periodic
orbits, by multiple shooting and SLSQP in the CR3BP (:mod:`cr3bp.transfers.optimise`), started
from the manifold patch (or a sweep of two-impulse legs)."""

from .. import common

IMPULSE_CHOICES = (2, 3)
START_CHOICES = ("patch", "sweep")
#: Longest cap on the time of flight accepted from --max-tof, in days (dimensional systems).
MAX_TOF_LIMIT_DAYS = 2000.0


def add_arguments(p):
    g = p.add_argument_group("optimised orbit-to-orbit transfers (--optimise)")
    g.add_argument("--optimise", action="store_true",
                   help="between two periodic orbits (--from, --to): optimise the transfer's total delta-v "
                        "over the departure and arrival phases, the times of flight and up to three impulses "
                        "(departure, mid-course, insertion), by multiple shooting in the CR3BP; starts from "
                        "the manifold patch of the tubes (--section etc. apply) or, where the tubes do not "
                        "meet, from the best two-impulse leg of a phase sweep; --max-tof caps the time of "
                        "flight (default: 1.5 times the start's, at least two periods of the longer orbit)")
    g.add_argument("--impulses", type=int, choices=IMPULSE_CHOICES, default=3,
                   help="with --optimise: impulses allowed, 2 (departure, insertion) or 3 (and one "
                        "mid-course; default 3)")
    g.add_argument("--start", choices=START_CHOICES, default="patch",
                   help="with --optimise: where the optimiser starts: 'patch' (the manifold patch; a phase "
                        "sweep of two-impulse legs if the tubes do not meet; default) or 'sweep' (the sweep "
                        "only, no tubes grown)")


def check(args, system, pa, pb):
    """Everything --optimise refuses, before any work; the cap on the time of flight (TU or None)."""
    from cr3bp.errors import InputError
    from cr3bp.validate import quantity
    if args.path is not None:
        raise InputError(f"--optimise joins two periodic orbits; --path {args.path} designs a departure from "
                         "a parking orbit: give one of them")
    if pa or pb:
        raise InputError(f"--optimise joins two periodic orbits; {args.origin if pa else args.target!r} is a "
                         "parking orbit (for a departure from one, use --path direct)")
    for opt, v in (("--map", args.map), ("--arrival-within", args.arrival_within),
                   ("--inclination", args.inclination)):
        if v:
            raise InputError(f"{opt} does not apply with --optimise")
    if not system.dimensional:
        raise InputError(f"--optimise reports m/s and days: system '{system.name}' has no dimensional units; "
                         "give --length-km and --time-s")
    cap = None
    if args.max_tof is not None:
        cap = quantity("--max-tof", args.max_tof, "time", system, sign="positive")
        if system.dimensional and system.days(cap) > MAX_TOF_LIMIT_DAYS:
            raise InputError(f"--max-tof {args.max_tof!r}; allowed: up to {MAX_TOF_LIMIT_DAYS:g}d")
    return cap


def check_unused(args):
    """--impulses and --start mean nothing without --optimise."""
    from cr3bp.errors import InputError
    if not args.optimise:
        if args.impulses != 3:
            raise InputError(f"--impulses {args.impulses} applies only with --optimise")
        if args.start != "patch":
            raise InputError(f"--start {args.start} applies only with --optimise")


HEADERS = ["maneuver", "t_days", "dv_mps", "x_km", "y_km", "z_km"]


def run(args, system, pa, pb, t_max):
    from cr3bp import api
    from cr3bp.errors import ConvergenceError, NoSolutionError
    from . import _tube_options as to
    cap = check(args, system, pa, pb)
    if args.plot:
        common.plot_file("--plot", args.plot)
    oa = to.orbit_from_request(system, args.origin, args)
    ob = to.orbit_from_request(system, args.target, args)
    start, why_sweep = None, "--start sweep"
    if args.start == "patch":
        n = args.points or 200
        common.progress(args, f"librate connect --optimise: growing two tubes of {n} trajectories to "
                        f"{args.section} for the starting patch...")
        try:
            legs = api.connect(oa, ob, section=args.section, points=n, crossing=args.crossing, time=t_max,
                               step_off=args.step_off, candidates=args.candidates, from_branch=args.from_branch,
                               to_branch=args.to_branch, progress=to.progress_printer(args))
            start = legs[0]
        except (NoSolutionError, ConvergenceError) as e:
            why_sweep = f"the tubes gave no patch ({e})"
            common.progress(args, f"{why_sweep}; starting from a phase sweep of two-impulse legs")
    tr = api.optimise(oa, ob, impulses=args.impulses, max_tof=cap, start="sweep" if start is None else start,
                      progress=lambda m: common.progress(args, "librate connect --optimise: " + m))
    return emit(args, system, tr, "" if start is not None else f"; {why_sweep}")


def emit(args, system, tr, why=""):
    """The optimised transfer's table or JSON (two orbits, or two tori: ``_torus_connect``)."""
    import math

    from cr3bp.errors import NoSolutionError
    d = tr.to_dict()
    unit_d = "d" if system.dimensional else "TU"
    rows = [[m["name"], m["t_days"], m["dv_mps"], *m["position_km"]] for m in d["maneuvers"]]
    st = tr.start
    pr = tr.primer
    head = [f"{args.origin} -> {args.target}: {tr.solution} transfer, {len(tr.maneuvers)} impulses "
            f"({args.impulses} allowed)",
            f"CR3BP total dv {tr.dv_mps:.3f} m/s; start ({st.solution}: {st.method}"
            + why + f") {st.dv_mps:.3f} m/s; improvement "
            f"{st.dv_mps - tr.dv_mps:.3f} m/s in {tr.iterations} SLSQP iterations"
            + ("" if d["start"].get("flown_dv_mps") is None else
               f"; the start flown from end to end (its step-offs counted) {d['start']['flown_dv_mps']:.3f} m/s"),
            f"CR3BP time of flight {tr.tof_days:.4f} {unit_d} (departure burn to insertion burn; cap "
            f"{d['max_tof_days']:.4f} {unit_d}); start {d['start']['tof_days']:.4f} {unit_d}",
            "active bounds: " + (", ".join(tr.active_bounds) or "none"),
            _phases(tr)]
    if "jacobi_from" in tr.details:
        head.append(f"Jacobi constants at departure and insertion {tr.details['jacobi_from']:.10f} -> "
                    f"{tr.details['jacobi_to']:.10f}")
    if not tr.optimised:
        head.append(f"not optimised: {tr.details.get('not_optimised', '')}")
    if pr.get("max_norm_on_coasts") is None:
        head.append(f"primer vector: {pr.get('note')}")
    else:
        head.append(f"primer vector (Lawden): max |p| on the coasts {pr['max_norm_on_coasts']:.4f} (optimal: <= 1), "
                    f"|p| = 1 at the impulses; {'satisfied' if pr['satisfied'] else 'NOT satisfied: a cheaper transfer exists (more impulses or other times)'}")
    closure = tr.details["closure_km"]
    head.append(f"check: forward re-propagation closes on each burn and on the arrival orbit within "
                f"{closure:.2e} {'km' if system.dimensional else 'LU'}")
    head.append("positions: rotating frame of the primaries, origin at the barycentre; t from the departure burn")
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.transfers import plot_orbit_transfer
        common.progress(args, "drawing the transfer...")
        fig = plot_orbit_transfer(tr)
        save(fig, args.plot, f"{args.origin} -> {args.target}: {tr.solution} CR3BP {tr.dv_mps:.1f} m/s in "
             f"{tr.tof_days:.2f} {unit_d} (start, dashed: {st.dv_mps:.1f} m/s); rotating frame, CR3BP")
        common.progress(args, f"wrote {args.plot}")
    table = "\n".join(head) + "\n\n" + common.format_table(HEADERS, rows)
    payload = {"from": args.origin, "to": args.target, "model": "cr3bp", "legs": [d]}
    if not math.isfinite(tr.dv_mps):
        raise NoSolutionError("the transfer's delta-v is not finite")
    common.emit(args, payload=payload, headers=HEADERS, rows=rows, table=table, comments=head)
    return 0


def _phases(tr):
    if isinstance(tr.phase_from, tuple):
        (sa, qa), (sb, qb) = tr.phase_from, tr.phase_to
        return (f"departure phases {sa:.6f}, {qa:.6f}; arrival phases {sb:.6f}, {qb:.6f} (each torus: fraction of "
                "its stroboscopic time from the invariance circle, circle angle in turns)")
    return (f"departure phase {tr.phase_from:.6f}, arrival phase {tr.phase_to:.6f} (fractions of each period "
            "from the orbit's initial state)")
