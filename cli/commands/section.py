"""librate section: cut one or more tubes with a Poincaré section and draw or export the map."""

from cr3bp.vocabulary import STABILITIES, TUBE_BRANCHES

from .. import common
from . import _tube_options as to

NAME = "section"
KERNELS = (("cr3bp.integrate.dop853", "integrate"), ("cr3bp.integrate.lanes", "integrate_lanes"))
ORDER = 66
HELP = "cut tubes with a Poincaré section (plane, sphere, periapsis) and draw or export the map"
EXAMPLE = ("librate section --system earth-moon --tube 'lyapunov L1 jacobi=3.15 unstable' "
           "--tube 'lyapunov L2 jacobi=3.15 stable' --section x=1-mu --coords y,vy --plot map.png")


def add_arguments(p):
    common.add_system_options(p)
    p.add_argument("--tube", action="append", required=True, metavar="SPEC",
                   help="an orbit request plus 'stable' or 'unstable' and optionally 'interior' (default) "
                        "or 'exterior', e.g. 'lyapunov L1 jacobi=3.15 unstable'; or "
                        "'state=X,Y,Z,VX,VY,VZ period=T stable exterior'; or a torus request plus the same "
                        "words, e.g. 'quasi-halo around halo L1 north az=10000km amplitude=300km unstable' (the "
                        "manifold of a hyperbolic torus, from a grid of --points on it). Repeatable")
    p.add_argument("--section", required=True, metavar="SECTION",
                   help="x=1-mu, y=0:+ (one direction), sphere:moon:20000km, periapsis:earth, apoapsis:moon")
    p.add_argument("--coords", "--coordinates", default=None, action="append", metavar="A,B",
                   help="map coordinates (default y,vy for x=c, and also z,vz when a tube leaves the plane "
                        "z = 0; x,vx for y=c; tof_days,altitude_km for spheres and apsides); any of x y z vx vy "
                        "vz t tof_days altitude_km r jacobi. Several maps, one panel each: 'y,vy|z,vz' or "
                        "the option repeated")
    p.add_argument("--crossing", type=int, default=1, metavar="N", help="take the N-th crossing (default 1)")
    p.add_argument("--points", type=int, default=200, metavar="N", help="trajectories per tube (default 200)")
    p.add_argument("--time", default=None, metavar="TIME", help="time limit per trajectory (default 2pi TU)")
    p.add_argument("--step-off", metavar="LENGTH", help="step-off distance (default per system)")
    to.add_parallel_options(p)
    common.add_plot_option(p, "draw the map")
    common.add_output_options(p)


def parse_tube_spec(text):
    from cr3bp.errors import InputError
    words = text.split()
    stab = [w for w in words if w.lower() in STABILITIES]
    br = [w for w in words if w.lower() in TUBE_BRANCHES]
    if len(stab) != 1:
        raise InputError(f"tube '{text}' must say 'stable' or 'unstable' once")
    if len(br) > 1:
        raise InputError(f"tube '{text}' names more than one branch")
    rest = " ".join(w for w in words if w.lower() not in STABILITIES + TUBE_BRANCHES)
    if not rest:
        raise InputError(f"tube '{text}' has no orbit request")
    return rest, stab[0].lower(), (br[0].lower() if br else "interior")


def default_coords(section):
    if section.kind != "plane":
        return ("tof_days", "altitude_km")
    return {0: ("y", "vy"), 1: ("x", "vx"), 2: ("x", "y")}.get(section.coordinate, ("x", "y"))


def parse_pairs(texts):
    """``['y,vy|z,vz']`` or ``['y,vy', 'z,vz']`` -> (('y', 'vy'), ('z', 'vz')); InputError naming
    the text otherwise."""
    from cr3bp.errors import InputError
    from cr3bp.tubes.sections import MAP_COORDS
    pairs = []
    for text in texts:
        for part in text.split("|"):
            names = tuple(w.strip() for w in part.split(","))
            if len(names) != 2 or any(n not in MAP_COORDS for n in names):
                raise InputError(f"--coords '{text}' must be pairs A,B (several separated by '|') of "
                                 f"{', '.join(MAP_COORDS)}")
            if names not in pairs:
                pairs.append(names)
    return tuple(pairs)


def spatial_pairs(section, cuts, tol=1e-9):
    """The default maps: (z, vz) beside (y, vy) on an x = c section when a cut leaves z = 0."""
    first = default_coords(section)
    if first == ("y", "vy") and any(len(c) and float(abs(c.states[:, [2, 5]]).max()) > tol for c in cuts):
        return (first, ("z", "vz"))
    return (first,)


def _torus_cut(args, system, req, spec, stab, br, section, workers=None, scheduler=None):
    """The cut of a torus's half-manifold with the section (cr3bp.api.section of the torus)."""
    from cr3bp import api
    from cr3bp.tori import request as treq
    label = f"{req} {stab} {br}"
    common.progress(args, f"librate section: solving the torus '{req}'...")
    torus = treq.solve(system, spec, progress=lambda m: common.progress(args, m, verbose_only=True))
    common.progress(args, f"librate section: {label}: {args.points} trajectories to {section.label}...")
    return api.section(torus, args.section, stability=stab, branch=br, points=args.points, crossing=args.crossing,
                       time=args.time, step_off=args.step_off, label=label, origin=req,
                       progress=to.progress_printer(args), workers=workers, scheduler=scheduler)


HEADERS = ["tube", "trajectory", "phase", "crossing", "t", "map_a", "map_b", "x", "y", "z", "vx", "vy", "vz"]


def run(args):
    """Each tube's cut is cr3bp.api.section of its orbit (cr3bp.api.orbit) or torus; the options
    are checked here first, so a refusal names the option before any work."""
    from cr3bp import api
    from cr3bp.tubes.sections import parse_section
    system = common.resolve_system(args)
    section = parse_section(args.section, system)
    pairs = parse_pairs(args.coords) if args.coords else None
    names = pairs[0] if pairs else default_coords(section)
    common.whole_number("--crossing", args.crossing, 1, 1000)
    common.whole_number("--points", args.points, 2, 100_000)
    if args.time is not None:
        from cr3bp.validate import quantity
        quantity("--time", args.time, "time", system, sign="positive", default_unit="TU")
    specs = [parse_tube_spec(t) for t in args.tube]
    from cr3bp.tori.request import is_torus_request
    from .manifold import torus_request
    tori = {req: torus_request(system, req, args) for req, _, _ in specs if is_torus_request(req)}
    workers, scheduler = to.parallel(args, "an apsis map" if section.kind == "apsis" else None)
    cuts, out = [], []
    for req, stab, br in specs:
        if req in tori:
            cuts.append(_torus_cut(args, system, req, tori[req], stab, br, section, workers, scheduler))
            continue
        orbit = to.orbit_from_request(system, req, args)
        from cr3bp.tubes.manifolds import describe
        label = f"{describe(orbit) if 'state=' in req else req} {stab} {br}"
        common.progress(args, f"librate section: {label}: {args.points} trajectories to {section.label}...")
        cuts.append(api.section(orbit, args.section, stability=stab, branch=br, points=args.points,
                                crossing=args.crossing, time=args.time, step_off=args.step_off, label=label,
                                origin=req, progress=to.progress_printer(args), workers=workers,
                                scheduler=scheduler))
    pairs = pairs or spatial_pairs(section, cuts)
    columns = tuple(dict.fromkeys(n for p in pairs for n in p))
    grid = [req in tori for req, _, _ in specs]      # a torus tube's cut is a grid, not a curve
    for cut, on_grid in zip(cuts, grid):
        d = cut.to_dict(names)
        d["closed"] = cut.closed and not on_grid
        d["area"] = cut.area(names) if d["closed"] else None
        if on_grid:
            d["kind"] = "torus manifold (a grid of its trajectories on the torus, not a closed curve)"
        if len(pairs) > 1:
            d["maps"] = [{"coordinates": list(p), "map": cut.coords(p).tolist()} for p in pairs]
        out.append(d)
    rows = []
    for k, cut in enumerate(cuts):
        m = cut.coords(columns)
        for i in range(len(cut)):
            rows.append([k + 1, int(cut.trajectory[i]), None if cut.phase is None else float(cut.phase[i]),
                         int(cut.count[i]), float(cut.t[i]), *map(float, m[i]),
                         *map(float, cut.states[i])])
    maps = ", ".join(f"({a}, {b})" for a, b in pairs)
    head = [f"section {section.label}, map{'s' if len(pairs) > 1 else ''} {maps}, crossing {args.crossing}"]
    head += [f"tube {k + 1}: {c.label}: {len(c)} of {c.n_trajectories} trajectories crossed"
             + (", a torus manifold (its cut is a grid of points, not a closed curve)" if on_grid else
                f", closed cut, area {c.area(names):.6g}" if c.closed else "")
             for k, (c, on_grid) in enumerate(zip(cuts, grid))]
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.manifolds import plot_section_map
        ax = plot_section_map(cuts, pairs)
        save(ax.figure, args.plot, f"Poincaré map on {section.label}: " + "; ".join(c.label for c in cuts))
        common.progress(args, f"wrote {args.plot}")
    hdr = HEADERS[:5] + [f"map_{n}" for n in columns] + HEADERS[7:]
    table = "\n".join(head) + "\n\n" + common.format_table(hdr, rows)
    common.emit(args, payload={"section": section.to_dict(), "coords": list(names),
                               "maps": [list(p) for p in pairs], "cuts": out},
                headers=hdr, rows=rows, table=table, comments=head)
    return 0
