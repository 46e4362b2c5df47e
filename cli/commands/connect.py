"""librate connect: legs between periodic orbits, or a parking orbit and a periodic orbit, through tubes."""

import math

from cr3bp.vocabulary import COLLINEAR_POINTS, TUBE_BRANCHES

from .. import common
from . import _departure
from . import _optimise
from . import _torus_connect
from . import _tube_options as to

NAME = "connect"
KERNELS = (("cr3bp.integrate.dop853", "integrate"), ("cr3bp.integrate.lanes", "integrate_lanes"))
ORDER = 70
HELP = ("connect two orbits or tori (or a parking orbit and an orbit) through their manifolds, or design a "
        "departure from an Earth parking orbit to an orbit or a torus, or a return from one to an Earth "
        "parking orbit (--path): delta-v, time of flight")
EXAMPLE = ("librate connect --system earth-moon --from 'lyapunov L1 jacobi=3.15' "
           "--to 'lyapunov L2 jacobi=3.15' --section x=1-mu")


def add_arguments(p):
    common.add_system_options(p)
    p.add_argument("--from", dest="origin", required=True, metavar="WHAT",
                   help="departure: an orbit request ('lyapunov L1 jacobi=3.15', 'halo L1 north az=12000km', "
                        "'state=X,Y,Z,VX,VY,VZ period=T'), a parking orbit ('parking earth 200km') or a "
                        "quasi-periodic torus request ('quasi-halo around halo L1 north az=10000km "
                        "amplitude=300km', 'lissajous L2 ay=30000km az=20000km'). With a torus at one end or "
                        "both, the leg joins the unstable manifold of the first to the stable manifold of "
                        "the second on --section (a position plane; the torus phases are free); between a "
                        "parking orbit and a hyperbolic torus, its stable or unstable manifold through a "
                        "periapsis at the parking altitude, as for an orbit; from 'parking earth ALTITUDE' "
                        "to a torus --path direct or lunar-flyby designs a departure instead (the insertion "
                        "point free over both torus angles)")
    p.add_argument("--to", dest="target", required=True, metavar="WHAT",
                   help="arrival, same forms as --from; 'parking earth ALTITUDE' after an Earth-Moon orbit or "
                        "torus with --path direct or lunar-flyby designs the return (the time-reverse of the "
                        "departure to the orbit's mirror image y -> -y): departure from the orbit, [lunar "
                        "flyby,] insertion into the parking orbit by a tangential perigee burn")
    p.add_argument("--section", default="x=1-mu", metavar="SECTION",
                   help="common section of the two tubes (orbit to orbit; default x=1-mu); a half-plane "
                        "such as 'y=0,x<0' or 'x=1-mu,y>0' counts only crossings inside it (homoclinic "
                        "connections: the same orbit as --from and --to)")
    p.add_argument("--crossing", type=int, default=1, metavar="N", help="use the N-th crossing of the section")
    p.add_argument("--points", type=int, default=None, metavar="N",
                   help="trajectories per tube (default 200; 100 for parking-orbit legs)")
    p.add_argument("--from-branch", choices=TUBE_BRANCHES, default=None,
                   help="half-manifold of the departure orbit (default interior: toward the smaller primary; "
                        "for a leg to a parking orbit, the half facing that primary)")
    p.add_argument("--to-branch", choices=TUBE_BRANCHES, default=None,
                   help="half-manifold of the arrival orbit (default as for --from-branch)")
    p.add_argument("--time", default=None, metavar="TIME", help="time limit per trajectory (default 2pi TU)")
    p.add_argument("--step-off", metavar="LENGTH", help="step-off distance (default per system)")
    p.add_argument("--candidates", type=int, default=5, metavar="K", help="candidates refined (default 5)")
    p.add_argument("--arrival-within", metavar="LENGTH",
                   help="distance from the arrival orbit's path that counts as arrived, with its unit (e.g. "
                        "5000km), for the time of flight to arrival (default 1000km in earth-moon, 10000km in sun-earth, else 1%% of "
                        "the smaller primary's Hill radius)")
    common.add_plot_option(p, "draw the best leg over the tubes")
    p.add_argument("--map", metavar="FILE", help="parking-orbit legs: draw the periapsis map (altitude against "
                   "time of flight, the target altitude marked)")
    _departure.add_arguments(p)
    _optimise.add_arguments(p)
    common.add_output_options(p)


def parse_parking(text, system):
    """'parking earth 200km' -> (primary index, altitude km), or None if not a parking orbit."""
    from cr3bp.errors import InputError
    from cr3bp.tubes.sections import primary_index
    words = text.split()
    if not words or words[0].lower() != "parking":
        return None
    if len(words) != 3:
        raise InputError(f"'{text}': write 'parking BODY ALTITUDE', e.g. 'parking earth 200km'")
    p = primary_index(system, words[1])
    from cr3bp.validate import quantity
    system.require_dimensional("a parking altitude")
    alt = system.km(quantity(f"parking altitude in '{text}'", words[2], "length", system, sign="nonnegative"))
    return p, float(alt)


def _tof_text(leg):
    """'time of flight 99.1 d to within 10000 km of the orbit (210.3 d to the step-off point)'."""
    if math.isnan(leg.arrival_distance_km):
        return f"CR3BP time of flight {leg.tof_days:.4f} d"
    return (f"CR3BP time of flight {leg.tof_arrival_days:.4f} d to within {leg.arrival_distance_km:g} km of "
            f"the orbit ({leg.tof_days:.4f} d to the step-off point)")


def _jacobi_word(text):
    for w in text.split():
        if w.lower().startswith("jacobi="):
            try:
                return float(w.split("=", 1)[1])
            except ValueError:
                return None
    return None


def _points(text):
    return [w.upper() for w in text.split() if w.upper() in COLLINEAR_POINTS]


HEADERS = ["rank", "kind", "dv_mps", "tof_arrival_days", "tof_stepoff_days", "arrival_within_km", "patch_x", "patch_y", "patch_z", "patch_vx", "patch_vy",
           "patch_vz", "min_altitude_km"]


def run(args):
    import math

    from cr3bp import units
    from cr3bp.tubes.transit import necks_open
    from cr3bp.errors import InputError
    system = common.resolve_system(args)
    if args.map:
        common.plot_file("--map", args.map)
    common.whole_number("--candidates", args.candidates, 1, 1000)
    common.whole_number("--crossing", args.crossing, 1, 1000)
    if args.points is not None:
        common.whole_number("--points", args.points, 2, 100_000)
    from cr3bp.validate import quantity
    t_max = quantity("--time", args.time, "time", system, sign="positive", default_unit="TU") \
        if args.time is not None else 2 * math.pi
    pa, pb = parse_parking(args.origin, system), parse_parking(args.target, system)
    if getattr(args, "window", None) is not None and args.path != "low-energy":
        raise InputError("--window searches the launch dates of a low-energy transfer; give it with --path low-energy")
    if any(_torus_connect.ends(args)):
        return _torus_connect.run(args, system, pa, pb, t_max)
    if args.optimise:
        _departure.refuse_dated(args, "to --optimise (transfers between periodic orbits)")
        return _optimise.run(args, system, pa, pb, t_max)
    _optimise.check_unused(args)
    if args.path is not None:
        return _departure.run(args, system, pa, pb)
    if args.epoch is not None:
        raise InputError("--epoch dates a departure from a parking orbit; give it with --path")
    _departure.refuse_dated(args, "without --path")
    within_km = None
    if args.arrival_within is not None:
        within_km = units.length(args.arrival_within, system)
        within_km = within_km * system.length_km if system.dimensional else within_km
        if not (math.isfinite(within_km) and within_km > 0):
            raise InputError(f"--arrival-within {args.arrival_within!r} must be a positive length")
        if pb:
            raise InputError(f"--arrival-within {args.arrival_within!r} measures the approach to an arrival "
                             "orbit; this leg ends on a parking orbit, which it reaches when it ends")
    if args.map and not (pa or pb):
        raise InputError("--map draws the periapsis map of a parking-orbit leg; one end must be 'parking ...'")
    if pa and pb:
        raise InputError("one end must be a periodic orbit; both --from and --to are parking orbits")
    from cr3bp import api
    kw = dict(section=args.section, crossing=args.crossing, time=args.time, step_off=args.step_off,
              candidates=args.candidates, from_branch=args.from_branch, to_branch=args.to_branch,
              arrival_within=args.arrival_within, full=True)
    if pa or pb:
        primary, alt = pa or pb
        req = args.target if pa else args.origin
        stability = "stable" if pa else "unstable"
        facing = "interior" if primary == 1 else "exterior"
        branch = (args.to_branch if pa else args.from_branch) or facing
        orbit = to.orbit_from_request(system, req, args)
        n = args.points or 100
        common.progress(args, f"librate connect: periapsis map of {n} {stability} {branch} trajectories "
                        f"about {system.names[primary]}...")

        def draw(pm):
            if args.map and not any(math.isfinite(a) for a in pm.altitude_km):
                common.progress(args, f"no trajectory reached a periapsis about {system.names[primary]}: "
                                f"{args.map} not written")
            elif args.map:
                from cr3bp.plotting import save
                from cr3bp.plotting.manifolds import plot_periapsis_map
                ax = plot_periapsis_map(pm, target_km=alt)
                save(ax.figure, args.map, f"first close periapsis about {system.names[primary]} of each "
                     f"{stability} {branch} trajectory of {pm.origin}; colour: departure phase on the orbit")
                common.progress(args, f"wrote {args.map}")
        legs, tubes, pm = api.connect(args.origin if pa else orbit, orbit if pa else args.target, points=n,
                                      progress=to.progress_printer(args), on_map=draw, **kw)
        how = f"{stability} manifold ({branch}) periapsis at {alt:g} km above {system.names[primary]}"
    else:
        ca, cb = _jacobi_word(args.origin), _jacobi_word(args.target)
        if ca is not None and cb is not None and ca == cb:
            necks_open(system, ca, sorted(set(_points(args.origin) + _points(args.target))) or ("L1",))
        oa = to.orbit_from_request(system, args.origin, args)
        ob = to.orbit_from_request(system, args.target, args)
        n = args.points or 200
        common.progress(args, f"librate connect: growing two tubes of {n} trajectories to {args.section}...")
        args.from_branch = args.from_branch or "interior"
        args.to_branch = args.to_branch or "interior"
        legs, tubes, _ = api.connect(oa, ob, points=n, progress=to.progress_printer(args), **kw)
        how = f"unstable ({args.from_branch}) and stable ({args.to_branch}) tubes cut by {args.section}"
    rows = [[k + 1, g.kind, g.dv_mps, g.tof_arrival_days, g.tof_days,
             None if math.isnan(g.arrival_distance_km) else g.arrival_distance_km, *map(float, g.patch_state),
             None if math.isinf(g.min_altitude_km) else g.min_altitude_km] for k, g in enumerate(legs)]
    best = legs[0]
    head = [f"{args.origin} -> {args.target}: {len(legs)} leg(s) via {how}",
            f"best: {best.kind}, CR3BP dv {best.dv_mps:.6g} m/s, {_tof_text(best)}",
            f"method: {best.method}"]
    if best.kind in ("arrival", "departure"):
        per = best.details["periapsis"]
        head.append(f"periapsis: altitude {per['altitude_km']:.3f} km, inertial speed "
                    f"{per['speed_inertial_kms']:.4f} km/s, circular {per['speed_circular_kms']:.4f} km/s, "
                    f"inclination {per['inclination_deg']:.3f} deg (to the primaries' orbit plane)")
        head.append("dv = |v + omega x r| - sqrt(GM/r) at periapsis (tangential burn)")
    head.append("tof_arrival_days: from the leg's start until the trajectory first comes within "
                "arrival_within_km of the arrival orbit's path (nearest point of the orbit); "
                "tof_stepoff_days: to the manifold's step-off point on the orbit")
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.manifolds import plot_connection
        common.progress(args, "drawing the connection...")
        ax = plot_connection(legs[:3], tubes)
        save(ax.figure, args.plot, f"{args.origin} -> {args.target}; best dv {best.dv_mps:.4g} m/s, "
             f"{_tof_text(best)}; rotating frame (CR3BP)")
        common.progress(args, f"wrote {args.plot}")
    table = "\n".join(head) + "\n\n" + common.format_table(HEADERS, rows)
    common.emit(args, payload={"from": args.origin, "to": args.target, "legs": [g.to_dict() for g in legs]},
                headers=HEADERS, rows=rows, table=table, comments=head)
    return 0
