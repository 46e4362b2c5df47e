"""librate orbit: one periodic orbit picked out of a family by a target value."""

import sys

from .. import common
from . import _orbit_options as oo

NAME = "orbit"
KERNELS = (("cr3bp.integrate.dop853", "integrate"),)   # the prebuilt build counts
ORDER = 40
HELP = "compute a periodic orbit (halo, Lyapunov, vertical, axial, DRO, resonant) meeting a target"
EXAMPLE = "librate orbit --system earth-moon --family halo --point L2 --branch south --period 6.5626d"


def add_arguments(p):
    common.add_system_options(p)
    oo.add_family_options(p)
    for a in p._actions:        # lissajous: a torus (librate torus --family lissajous)
        if "--family" in a.option_strings:
            a.help += "; or lissajous: a Lissajous torus at --point L1|L2 sized by --ay and --az"
    oo.add_target_options(p)
    oo.add_catalog_option(p)
    p.add_argument("--occurrence", metavar="N", help="where the family meets the target more than once: "
                   "the N-th place from the family's start (default 1; every place is listed)")
    common.add_plot_option(p, "draw the orbit in three views")
    common.add_output_options(p)


def run(args):
    """The orbit of cr3bp.api.orbit (its request checked by cr3bp.api.orbit_request first)."""
    from cr3bp import api
    from cr3bp.errors import InputError
    if (args.family or "").strip().lower() == "lissajous":
        from .torus import run_from_orbit
        return run_from_orbit(args)
    system = common.resolve_system(args)
    given = oo.targets_given(args)
    if not given:
        raise InputError("give a target: " + ", ".join("--" + t for t, _, _ in oo.TARGETS))
    spec = api.orbit_request(system, family=args.family, point=args.point, branch=args.branch, ratio=args.ratio,
                             occurrence=args.occurrence, **given)   # bad units fail here, before any work
    cat = oo.open_catalog(args)
    common.progress(args, f"librate orbit: solving {spec.family} {spec.point} {spec.branch_label} "
                    f"{spec.key}={spec.value}".replace("  ", " "))
    orbit = api.orbit(system, spec, catalog=cat, progress=oo.progress_printer(args, "family"))
    d = orbit.to_dict()
    note = _places_note(spec, d)
    if note:
        print(f"librate: note: {note}", file=sys.stderr)
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.orbits import plot_orbit
        fig = plot_orbit(orbit)
        save(fig, args.plot, f"{spec.family} {spec.point} {spec.branch_label} orbit, rotating frame, "
             f"primaries to scale; {spec.key} = {spec.value}")
        common.progress(args, f"wrote {args.plot}")
    ratio = ["spacecraft_revolutions", "primaries_revolutions"] if "period_ratio" in d else []
    common.emit(args, payload=d, headers=_HEADERS + ratio, rows=[_row(d) + list(d.get("period_ratio", []))],
                table=_table(system, d))
    return 0


_HEADERS = ["family", "point", "branch", "x", "y", "z", "vx", "vy", "vz", "period", "period_days",
            "jacobi", "nu1", "nu2", "periodicity_error", "amplitude_x_km", "amplitude_y_km",
            "amplitude_z_km", "closest_approach_1_km", "closest_approach_2_km"]


def _row(d):
    ca = list(d["closest_approach_km"].values())
    a = d["amplitude_km"]
    return [d["family"], d["point"], d["branch"], *d["state"], d["period"], d["period_days"], d["jacobi"],
            *d["stability_indices"], d["periodicity_error"], a["x"], a["y"], a["z"], *ca]


def _table(system, d):
    from cr3bp.orbits.request import describe_places
    def km(v):
        return "-" if v is None else f"{v:,.3f} km"
    lines = [f"{system.name} {d['family']} {d['point']} {d['branch']}".rstrip() + " periodic orbit", ""]
    lines.append("initial state (nondimensional, rotating frame, barycentric):")
    for k, v in zip(("x", "y", "z", "vx", "vy", "vz"), d["state"]):
        lines.append(f"  {k:<3} {v: .15f}")
    per_d = "" if d["period_days"] is None else f" = {d['period_days']:.6f} d"
    lines.append(f"period               {d['period']:.12f} TU{per_d}")
    lines.append(f"Jacobi constant      {d['jacobi']:.12f}")
    if "period_ratio" in d:
        from cr3bp.orbits.families import RESONANCE_TOL
        n_sc, n_prim = d["period_ratio"]
        osc = d["osculating_period_ratio"]
        lines.append(f"period ratio         {n_sc:.4f}:{n_prim:.4f} (revolutions of the spacecraft about "
                     f"{system.names[0]} : of the primaries, in one period; family {d['branch']}, kept within "
                     f"{RESONANCE_TOL:.0%} of its period)")
        if osc is not None:
            lines.append(f"osculating period    {osc:.6f} periods of the primaries (two-body, about "
                         f"{system.names[0]}, at the initial state)")
    nu = d["stability_indices"]
    cplx = " (complex pair: real parts shown)" if d["stability_complex"] else ""
    lines.append(f"stability indices    {nu[0]:.6g}, {nu[1]:.6g}{cplx}; "
                 + ("linearly stable" if d["stable"] else "unstable"))
    if d["e_folding_days"] is not None:
        lines.append(f"e-folding time       {d['e_folding_days']:.4f} d (most unstable mode)")
    lines.append(f"periodicity error    {d['periodicity_error']:.2e} (nondimensional, over one period)")
    a = d["amplitude_km"]
    lines.append(f"amplitudes           Ax {km(a['x'])}, Ay {km(a['y'])}, Az {km(a['z'])}")
    for name, v in d["closest_approach_km"].items():
        lines.append(f"closest approach     {name}: {km(v)} from its centre")
    places = describe_places(d)
    if places:
        lines.append(f"target met at        {len(places)} places along the family, from its start:")
        for i, text in enumerate(places, 1):
            mark = "  <- this orbit" if i == d["target_matches"]["occurrence"] else ""
            lines.append(f"  {i}: {text}{mark}")
    return "\n".join(lines) + "\n"


def _places_note(spec, d):
    """One line when the family meets the target at more than one place."""
    from cr3bp.orbits.request import describe_places
    places = describe_places(d)
    if not places:
        return ""
    this = d["target_matches"]["occurrence"]
    others = "; ".join(f"{i}: {text}" for i, text in enumerate(places, 1) if i != this)
    return (f"{spec.key} = {spec.value} is met at {len(places)} places along the family; this is "
            f"place {this} from its start; the others ({others}) are chosen with --occurrence N")

