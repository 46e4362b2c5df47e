"""Options shared by the manifold, section and connect commands: picking a periodic orbit and
a half-manifold of it."""

from __future__ import annotations

from .. import common

from cr3bp.vocabulary import FAMILIES, ORBIT_TARGETS, TARGET_HELP, TUBE_BRANCHES

#: The orbit targets (cr3bp.vocabulary.ORBIT_TARGETS), one option each.
TARGETS = ORBIT_TARGETS


def add_orbit_options(p):
    g = p.add_argument_group("periodic orbit (a request, the family options, or a state)")
    g.add_argument("--orbit", metavar="REQUEST",
                   help="the orbit in words, e.g. 'lyapunov L1 jacobi=3.17' or 'halo L1 north az=12000km'")
    g.add_argument("--family", metavar="NAME", help=", ".join(FAMILIES))
    g.add_argument("--point", metavar="L1|L2|L3", help="collinear Lagrange point of the family")
    g.add_argument("--halo-branch", metavar="north|south", help="halo branch")
    for name in TARGETS:
        meta, text = TARGET_HELP[name]
        g.add_argument(f"--{name}", metavar=meta, help=f"target: {text}" + (
            " (with --state: the state's period)" if name == "period" else ""))
    g.add_argument("--state", metavar="X,Y,Z,VX,VY,VZ",
                   help="an already converged periodic orbit's state (LU, LU/TU) instead of a request; "
                        "needs --period")


def add_manifold_options(p, points_default=200):
    g = p.add_argument_group("manifold")
    s = g.add_mutually_exclusive_group()
    s.add_argument("--stable", dest="stability", action="store_const", const="stable",
                   help="stable manifold (arrivals; propagated backward in time)")
    s.add_argument("--unstable", dest="stability", action="store_const", const="unstable",
                   help="unstable manifold (departures; propagated forward in time)")
    g.add_argument("--branch", choices=TUBE_BRANCHES, default="interior",
                   help="interior: the half stepping toward the smaller primary; exterior: away from it "
                        "(default interior)")
    g.add_argument("--points", type=int, default=points_default, metavar="N",
                   help=f"departure points along the orbit (default {points_default})")
    g.add_argument("--spacing", choices=("time", "arc"), default="time",
                   help="points equally spaced in time or in arc length (default time)")
    g.add_argument("--step-off", metavar="LENGTH",
                   help="step-off distance from the orbit, e.g. 40km (default: 40 km Earth-Moon, "
                        "200 km Sun-Earth; why: docs/history.md)")


def orbit_options_given(args) -> list[str]:
    """The orbit-choosing options given (for refusing them beside another source)."""
    names = ["orbit", "family", "point", "halo_branch", "state", *TARGETS]
    return ["--" + n.replace("_", "-") for n in names if getattr(args, n, None) is not None]


def request_text(args) -> str | None:
    if args.orbit:
        return args.orbit
    if not args.family:
        return None
    given = [(k, getattr(args, k)) for k in TARGETS if getattr(args, k, None) is not None]
    from cr3bp.errors import InputError
    if len(given) != 1:
        raise InputError("give exactly one orbit target: " + ", ".join("--" + t for t in TARGETS) +
                         f" (got {len(given)})")
    words = [args.family] + [w for w in (args.point, args.halo_branch) if w]
    return " ".join(words + [f"{given[0][0]}={given[0][1]}"])


def orbit_from_request(system, text, args=None):
    """A PeriodicOrbit from a request: 'state=X,Y,Z,VX,VY,VZ period=T' (a given orbit) or the
    orbit library's grammar ('lyapunov L1 jacobi=3.15')."""
    from cr3bp.errors import InputError
    words = text.split()
    kv = dict(w.split("=", 1) for w in words if "=" in w)
    if "state" in kv:
        if "period" not in kv:
            raise InputError(f"'{text}': a state needs period=T (e.g. period=2.84TU)")
        return _given(system, kv["state"], kv["period"], kv.get("family", "given"), kv.get("point", ""))
    try:
        import cr3bp.orbits.request  # noqa: F401  (the orbit library: cr3bp.api.orbit solves with it)
    except ImportError:
        raise InputError(f"orbit request '{text}' needs the orbit library (cr3bp.orbits.request), "
                         "which is not in this build; give 'state=X,Y,Z,VX,VY,VZ period=T' instead") from None
    from cr3bp import api
    if args is not None:
        common.progress(args, f"solving the orbit '{text}'...")
    return api.orbit(system, text)


def _given(system, state_text, period_text, family="given", point=""):
    """A given orbit (cr3bp.api.orbit with state= and period=) from the option texts."""
    from cr3bp import api
    from cr3bp.validate import numbers
    s = list(numbers("state", state_text, 6, "x,y,z,vx,vy,vz"))
    return api.orbit(system, state=s, period=period_text, family=family, point=point)


def resolve_orbit(args, system):
    from cr3bp.errors import InputError
    if args.state is not None:
        if args.period is None:
            raise InputError("--state needs --period (the orbit's period, e.g. 2.84TU or 12.4d)")
        others = [o for o in orbit_options_given(args) if o not in ("--state", "--period")]
        if others:
            raise InputError(f"--state (with --period) gives the orbit; leave out {', '.join(others)}")
        return _given(system, args.state, args.period)
    if args.orbit is not None:
        others = [o for o in orbit_options_given(args) if o != "--orbit"]
        if others:
            raise InputError(f"--orbit gives the orbit; leave out {', '.join(others)}")
    text = request_text(args)
    if text is None:
        raise InputError("give the orbit: --orbit 'lyapunov L1 jacobi=3.17', or --family/--point and one "
                         "target, or --state and --period")
    return orbit_from_request(system, text, args)


def progress_printer(args):
    def report(done, total, message):
        common.progress(args, f"  {message}: {done}/{total}")
    return report



def add_parallel_options(p):
    """``--workers`` / ``--scheduler``: a periodic orbit's or a torus's tube propagated in pieces elsewhere."""
    from .. import common
    g = p.add_argument_group("propagating in pieces (same result, bit for bit)")
    common.add_workers_option(g, "propagate the trajectories in pieces over N worker processes "
                                 "(default: this process, on the compiled kernels' threads)")
    g.add_argument("--scheduler", metavar="ADDRESS", help="or on a dask.distributed scheduler (e.g. "
                   "tcp://10.0.0.5:8786), or 'local:N' for a local cluster of N worker processes started "
                   "and stopped here ('local': --workers processes, default 2); needs librate[cluster]; "
                   "a periodic orbit's or a torus's tube cut by a plane or a sphere only")


def parallel(args, what=None):
    """``(workers, scheduler)`` from the options, checked before any work; ``what`` names a source
    that cannot be split (a Lagrange point, an apsis map): refused when either is given."""
    from .. import common
    from cr3bp.errors import InputError
    workers = common.workers(args)
    scheduler = args.scheduler.strip() if args.scheduler is not None else None
    if scheduler is not None:
        from cr3bp.transfers.tasks import check_scheduler
        check_scheduler(scheduler, workers)
    if what and (scheduler is not None or (workers or 1) > 1):
        raise InputError(f"--workers/--scheduler split a periodic orbit's or a torus's tube; {what} is computed in this process")
    return workers, scheduler
