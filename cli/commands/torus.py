"""librate torus: a quasi-periodic invariant torus about a periodic orbit."""

from __future__ import annotations

import sys

from .. import common
from . import _orbit_options as oo

NAME = "torus"
KERNELS = (("cr3bp.integrate.dop853", "integrate"), ("cr3bp.integrate.dop853", "integrate_batch"))
ORDER = 45
HELP = "compute a quasi-periodic torus (quasi-halo, Lissajous) of a given amplitude about a periodic orbit"
EXAMPLE = ('librate torus --system earth-moon --around "halo L2 south resonance=9:2" '
           "--amplitude 2000km")

HOLDS = ("jacobi", "period", "rotation")


def add_arguments(p):
    common.add_system_options(p)
    p.add_argument("--around", metavar="REQUEST", required=True,
                   help="the periodic orbit, as an orbit request, e.g. \"halo L2 south "
                   "resonance=9:2\" (quasi-halo) or \"lyapunov L1 ax=5000km\" (Lissajous)")
    p.add_argument("--amplitude", metavar="LENGTH", required=True,
                   help="size of the torus about the orbit: the RMS distance of the invariance "
                   "circle's points from its centre (km unless another unit is given)")
    p.add_argument("--hold", choices=HOLDS, default="jacobi",
                   help="kept at the orbit's value while the torus grows from it: its Jacobi "
                   "constant (default), its period as the stroboscopic time, or the rotation of "
                   "its centre eigenpair")
    oo.add_catalog_option(p)
    p.add_argument("--plot", metavar="FILE", help="draw the torus in three views and its "
                   "invariance circle (PNG, PDF or SVG by suffix)")
    common.add_output_options(p)


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


def run(args):
    from cr3bp.errors import InputError
    from cr3bp.orbits.request import parse_request, solve_request
    from cr3bp.orbits.targets import make_target
    from cr3bp.units import length
    system = common.resolve_system(args)
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
        _check_output("--plot", args.plot, (".png", ".pdf", ".svg"))
    if args.out:
        _check_output("--out", args.out)
    cat = oo.open_catalog(args)
    common.progress(args, f"librate torus: solving the periodic orbit {args.around}")
    orbit = solve_request(system, spec, catalog=cat)
    common.progress(args, f"librate torus: growing the torus to {args.amplitude} "
                    f"(holding the {args.hold})")

    def step(k, a):
        size = f"{system.km(a):,.1f} km" if system.dimensional else f"{a:.3g} LU"
        common.progress(args, f"torus: step {k}, amplitude {size}", verbose_only=True)

    from cr3bp.tori import surface, torus_around
    torus = torus_around(orbit, amp, hold=args.hold, progress=step)
    d = torus.to_dict()
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.tori import plot_torus
        fig = plot_torus(torus, grid=surface(system, torus.circle, torus.stroboscopic_time, 256))
        save(fig, args.plot, f"{torus.family} torus about the {args.around} orbit, rotating frame "
             f"of the circular restricted three-body model, primaries to scale; amplitude "
             f"{args.amplitude}")
        common.progress(args, f"wrote {args.plot}")
    common.emit(args, payload=d, headers=_HEADERS, rows=_rows(torus), table=_table(system, d),
                comments=[f"invariance circle of the {torus.family} torus about {args.around}: "
                          "theta (rad) and the state (nondimensional, rotating frame)"])
    return 0


_HEADERS = ["theta", "x", "y", "z", "vx", "vy", "vz"]


def _rows(torus):
    from cr3bp.tori.circle import angles
    return [[float(th), *map(float, s)] for th, s in zip(angles(torus.n_circle_points), torus.circle)]


def _table(system, d):
    def km(v):
        return "-" if v is None else f"{v:,.3f} km"

    def days(v):
        return "" if v is None else f" = {v:.6f} d"
    o = d["around"]
    lines = [f"{system.name} {d['family']} torus about the {o['family']} {o['point']} "
             f"{o['branch']}".rstrip() + " orbit", ""]
    lines.append(f"periodic orbit       period {o['period']:.12f} TU{days(o['period_days'])}, "
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
    for name, v in d["closest_approach_km"].items():
        lines.append(f"closest approach     {name}: {km(v)} from its centre")
    for axis, (lo, hi) in d["extent_km"].items():
        lines.append(f"extent {axis}             {km(lo)} to {km(hi)}")
    lines.append("distances and times are those of the circular restricted three-body model")
    return "\n".join(lines) + "\n"
