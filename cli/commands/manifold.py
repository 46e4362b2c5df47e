"""librate manifold: grow the stable or unstable manifold (tube) of a periodic orbit."""

from cr3bp.vocabulary import COLLINEAR_POINTS

from .. import common
from . import _tube_options as to

NAME = "manifold"
KERNELS = (("cr3bp.integrate.dop853", "integrate"), ("cr3bp.integrate.lanes", "integrate_lanes"))
ORDER = 65
HELP = ("grow a stable or unstable manifold (tube) of a periodic orbit or a hyperbolic torus to a section, "
        "time, altitude or escape")
EXAMPLE = ("librate manifold --system earth-moon --family lyapunov --point L1 --jacobi 3.17 --unstable "
           "--branch interior --points 200 --until section:x=1-mu --plot tube.png\n"
           "librate manifold --system earth-moon --torus 'quasi-halo around halo L1 north az=10000km "
           "amplitude=300km' --unstable --points 100 --until section:x=1-mu")


def add_arguments(p):
    common.add_system_options(p)
    to.add_orbit_options(p)
    to.add_manifold_options(p)
    to.add_parallel_options(p)
    p.add_argument("--torus", metavar="REQUEST",
                   help="grow the manifold of a hyperbolic quasi-periodic torus instead of an orbit's: a torus "
                        "request, e.g. 'quasi-halo around halo L1 north az=10000km amplitude=300km'; --points "
                        "departure points form a grid on the torus (about sqrt(N) stroboscopic phases times "
                        "sqrt(N) points of its invariance circle)")
    p.add_argument("--lagrange", metavar="L1|L2|L3",
                   help="grow the one-dimensional manifold of this collinear Lagrange point instead of an orbit's")
    p.add_argument("--until", action="append", metavar="STOP",
                   help="stop condition, repeatable: section:x=1-mu (section:y=0:+, #2 for the 2nd "
                        "crossing), time:20d, altitude:earth:200km, escape:3LU (default time:2pi TU)")
    common.add_plot_option(p, "draw the tube (xy and xz projections)")
    common.add_output_options(p)


HEADERS = ["phase", "t_orbit", "tof", "tof_days", "status", "x", "y", "z", "vx", "vy", "vz"]


def run(args):
    from cr3bp import api
    from cr3bp.errors import InputError
    from cr3bp.tubes.manifolds import parse_until
    system = common.resolve_system(args)
    if args.stability is None:
        raise InputError("give --stable or --unstable")
    common.whole_number("--points", args.points, 2, 100_000)
    stop = parse_until(args.until, system)
    if args.torus is not None:
        given = to.orbit_options_given(args) + (["--lagrange"] if args.lagrange else [])
        if given:
            raise InputError(f"--torus grows a torus's manifold; it does not go with {', '.join(given)}")
        if args.spacing != "time":
            raise InputError("--spacing does not go with --torus (its points are a grid on the torus)")
        return _torus(args, system, stop, *to.parallel(args))
    if args.lagrange:
        given = to.orbit_options_given(args)
        if given:
            raise InputError(f"--lagrange grows a Lagrange point's manifold; it does not go with "
                             f"{', '.join(given)} (an orbit's)")
        to.parallel(args, "a Lagrange point's manifold")
        return _point(args, system, stop)
    workers, scheduler = to.parallel(args)
    orbit = to.resolve_orbit(args, system)
    common.progress(args, f"librate manifold: growing {args.points} {args.stability} {args.branch} "
                    f"trajectories of {orbit.family} {orbit.point} (C = {orbit.jacobi:.6f})...")
    tube = api.manifold(orbit, args.stability, branch=args.branch, points=args.points, until=args.until,
                        spacing=args.spacing, step_off=args.step_off, progress=to.progress_printer(args),
                        workers=workers, scheduler=scheduler)
    d = tube.to_dict()
    rows = [[t["phase"], t["t_orbit"], t["tof"], t["tof_days"], t["status"], *t["end_state"]]
            for t in d["trajectories"]]
    step = f"{tube.step_km:.3f} km" if tube.step_km == tube.step_km else f"{tube.step:.3e} LU"
    head = [f"{tube.label}: {tube.n} trajectories, step-off {step} from the orbit",
            f"orbit period {tube.period:.6f} TU, dominant monodromy eigenvalue {tube.eigenvalue:.6g}",
            "stop: " + ", ".join(args.until or ["time:2pi TU"]) +
            "; ended by: " + ", ".join(f"{k} {v}" for k, v in d["status_counts"].items())]
    table = "\n".join(head) + "\n\n" + common.format_table(HEADERS, rows)
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.manifolds import plot_tubes
        common.progress(args, "drawing the tube...")
        planar = tube.orbit.state[2] == 0 and tube.orbit.state[5] == 0
        fig = plot_tubes([tube], views=("xy",) if planar else ("xy", "xz", "yz"))
        save(fig, args.plot, f"{tube.label}; step-off {step}; rotating frame (CR3BP); primaries to scale")
        common.progress(args, f"wrote {args.plot}")
    common.emit(args, payload={"tube": d}, headers=HEADERS, rows=rows, table=table,
                comments=head)
    return 0


def torus_request(system, text, args):
    """A torus from its request, every value checked before any work."""
    from cr3bp.tori import request as treq
    return treq.checked(system, text)


def _torus(args, system, stop, workers=None, scheduler=None):
    from cr3bp import api
    from cr3bp.tori import request as treq
    from cr3bp.tori.manifolds import grid_shape
    spec = torus_request(system, args.torus, args)
    common.progress(args, f"librate manifold: solving the torus '{args.torus}'...")
    torus = treq.solve(system, spec, progress=lambda m: common.progress(args, m, verbose_only=True))
    n0, n1 = grid_shape(args.points)
    common.progress(args, f"librate manifold: growing {n0 * n1} {args.stability} {args.branch} trajectories "
                          f"({n0} stroboscopic phases x {n1} circle points) of the torus (C = {torus.jacobi:.6f})...")
    tube = api.manifold(torus, args.stability, branch=args.branch, points=args.points, until=args.until,
                        step_off=args.step_off, progress=to.progress_printer(args), origin=f"torus '{args.torus}'",
                        workers=workers, scheduler=scheduler)
    d = tube.to_dict()
    rows = [[t["phase"], t["t_orbit"], t["tof"], t["tof_days"], t["status"], *t["end_state"]]
            for t in d["trajectories"]]
    step = f"{tube.step_km:.3f} km" if tube.step_km == tube.step_km else f"{tube.step:.3e} LU"
    st = torus.stability or {}
    head = [f"{tube.label}: {tube.n} trajectories ({n0} x {n1} grid on the torus), step-off {step} from it",
            f"stroboscopic period {tube.period:.6f} TU, multiplier of the step-off direction "
            f"{abs(tube.multiplier):.6g} (torus stability: largest modulus {st.get('largest_modulus', float('nan')):.6g})",
            "phase: theta0 / 360 deg of each departure point; t_orbit: its time along the stroboscopic period; "
            "times and distances of the circular restricted three-body model",
            "stop: " + ", ".join(args.until or ["time:2pi TU"]) +
            "; ended by: " + ", ".join(f"{k} {v}" for k, v in d["status_counts"].items())]
    table = "\n".join(head) + "\n\n" + common.format_table(HEADERS, rows)
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.manifolds import plot_tubes
        common.progress(args, "drawing the tube...")
        save(plot_tubes([tube], views=("xy", "xz", "yz")), args.plot,
             f"{tube.label}; step-off {step}; rotating frame (CR3BP); primaries to scale")
        common.progress(args, f"wrote {args.plot}")
    common.emit(args, payload={"tube": d}, headers=HEADERS, rows=rows, table=table, comments=head)
    return 0


def _point(args, system, stop):
    from cr3bp import api
    from cr3bp.errors import InputError
    name = args.lagrange.upper()
    if name not in COLLINEAR_POINTS:
        raise InputError(f"--lagrange {args.lagrange!r}: only the collinear points L1, L2, L3 have "
                         "one-dimensional manifolds")
    tube = api.manifold((system, name), args.stability, branch=args.branch, until=args.until,
                        step_off=args.step_off)
    d = tube.to_dict()
    rows = [[t["phase"], t["t_orbit"], t["tof"], t["tof_days"], t["status"], *t["end_state"]]
            for t in d["trajectories"]]
    step = f"{tube.step_km:.3f} km" if tube.step_km == tube.step_km else f"{tube.step:.3e} LU"
    head = [f"{name} {args.stability} {args.branch} branch: step-off {step} along the eigenvector "
            f"of eigenvalue {tube.eigenvalue:.6g} (per TU), C = {tube.jacobi:.6f}"]
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.manifolds import plot_tubes
        save(plot_tubes([tube], views=("xy",)), args.plot, head[0] + "; rotating frame (CR3BP)")
        common.progress(args, f"wrote {args.plot}")
    table = "\n".join(head) + "\n\n" + common.format_table(HEADERS, rows)
    common.emit(args, payload={"tube": d}, headers=HEADERS, rows=rows, table=table, comments=head)
    return 0
