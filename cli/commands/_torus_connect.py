"""librate connect with a quasi-periodic torus at one end or both: manifold connections between a
torus and a periodic orbit or another torus on a section (:mod:`cr3bp.tori.connections`), legs
between a parking orbit and a torus through its manifold's periapsis (:mod:`cr3bp.tori.parking`),
and departures from an Earth parking orbit to a torus (``--path direct`` or ``lunar-flyby``,
:mod:`cr3bp.tori.departure`; ``--path low-energy``, :mod:`cr3bp.tori.low_energy`, through
``_low_energy.run_torus``)."""

from .. import common


def ends(args):
    """(from is a torus request, to is a torus request)."""
    from cr3bp.tori.request import is_torus_request
    return is_torus_request(args.origin), is_torus_request(args.target)


def run(args, system, pa, pb, t_max):
    """Every refusal first, then the legs, through connect's own table."""
    from cr3bp.errors import InputError
    from .manifold import torus_request
    ta, tb = ends(args)
    if args.optimise:
        if not (ta and tb):
            raise InputError("--optimise joins two periodic orbits or two tori; "
                             f"{args.origin if ta else args.target!r} is a torus and the other end is not")
        return _optimise_tori(args, system, pa, pb, t_max)
    if pb is not None and args.path is not None:
        from . import _return
        return _return.run(args, system, pb)
    from . import _optimise
    _optimise.check_unused(args)
    if args.path is not None:
        if ta:
            raise InputError(f"--path {args.path} designs a departure from a parking orbit: --from must be "
                             f"'parking earth ALTITUDE', not the torus {args.origin!r}")
        if args.path == "low-energy":
            from . import _low_energy
            return _low_energy.run_torus(args, system, pa, torus_request(system, args.target, args))
        return _departure(args, system, pa, torus_request(system, args.target, args))
    if args.epoch is not None:
        raise InputError("--epoch dates a departure from a parking orbit; give it with --path")
    from . import _departure as depcli
    depcli.refuse_dated(args, "to a connection between a torus and an orbit")
    if args.map and pa is None and pb is None:
        raise InputError("--map draws the periapsis map of a parking-orbit leg; one end must be 'parking ...'")
    if args.arrival_within is not None:
        raise InputError(f"--arrival-within {args.arrival_within!r} measures the approach to an arrival "
                         "periodic orbit; it does not apply to a leg with a torus")
    for name, d in (("--max-tof", args.max_tof), ("--inclination", args.inclination),
                    ("--min-flyby-altitude", args.min_flyby_altitude)):
        if d is not None:
            raise InputError(f"{name} goes with --path (a departure from a parking orbit)")
    if pa is not None or pb is not None:
        return _parking(args, system, pa, pb, t_max)
    if args.crossing != 1:
        raise InputError(f"--crossing {args.crossing}: connections with a torus use the first crossing "
                         "of the section")
    from cr3bp.tubes.sections import parse_section
    sec = parse_section(args.section, system)
    if sec.kind != "plane" or sec.coordinate > 2:
        raise InputError(f"--section {args.section!r}: connections with a torus need a position plane such as "
                         "x=1-mu or y=0")
    from . import _tube_options as to
    spec_a = torus_request(system, args.origin, args) if ta else None
    spec_b = torus_request(system, args.target, args) if tb else None
    ob = None if tb else to.orbit_from_request(system, args.target, args)
    oa = None if ta else to.orbit_from_request(system, args.origin, args)
    from cr3bp import api
    from cr3bp.tori import request as treq
    say = (lambda m: common.progress(args, m, verbose_only=True))
    if ta:
        common.progress(args, f"librate connect: solving the torus '{args.origin}'...")
        oa = treq.solve(system, spec_a, progress=say)
    if tb:
        common.progress(args, f"librate connect: solving the torus '{args.target}'...")
        ob = treq.solve(system, spec_b, progress=say)
    n = args.points or 100
    fb, tb_ = args.from_branch or "interior", args.to_branch or "interior"
    common.progress(args, f"librate connect: growing two manifolds of {n} trajectories to {args.section} "
                    "and refining the nearest pairs...")
    legs = api.connect(oa, ob, section=args.section, points=n, time=t_max, step_off=args.step_off,
                       candidates=args.candidates, from_branch=fb, to_branch=tb_)
    return _emit_legs(args, system, legs, oa, ob, f"unstable ({fb}) and stable ({tb_}) manifolds cut by "
                      f"{args.section}, positions matched by Newton's method on the departure phases")


def _parking(args, system, pa, pb, t_max):
    """A parking orbit and a torus: the torus's stable (arrival) or unstable (departure)
    manifold through its first periapsis at the parking altitude (cr3bp.tori.parking), as
    connect's parking-orbit legs of a periodic orbit."""
    import math

    from cr3bp import api
    from cr3bp.errors import InputError
    from cr3bp.tori import request as treq
    from cr3bp.tori.parking import not_hyperbolic
    from . import _tube_options as to
    from .connect import HEADERS, _tof_text
    from .manifold import torus_request
    primary, alt = pa or pb
    opt, req = ("--to", args.target) if pa else ("--from", args.origin)
    spec = torus_request(system, req, args)
    stability = "stable" if pa else "unstable"
    branch = (args.to_branch if pa else args.from_branch) or ("interior" if primary == 1 else "exterior")
    common.progress(args, f"librate connect: solving the torus '{req}'...")
    torus = treq.solve(system, spec, progress=lambda m: common.progress(args, m, verbose_only=True))
    why = not_hyperbolic(torus.stability, "parking orbit through a periapsis")
    if why:
        raise InputError(f"{opt} {req!r}: the torus is {why}")
    n = args.points or 100
    common.progress(args, f"librate connect: periapsis map of {n} {stability} {branch} trajectories of the torus "
                    f"about {system.names[primary]}...")

    def draw(pm):
        if args.map and not any(math.isfinite(a) for a in pm.altitude_km):
            common.progress(args, f"no trajectory reached a periapsis about {system.names[primary]}: "
                            f"{args.map} not written")
        elif args.map:
            from cr3bp.plotting import save
            from cr3bp.plotting.manifolds import plot_periapsis_map
            ax = plot_periapsis_map(pm, target_km=alt)
            save(ax.figure, args.map, f"first close periapsis about {system.names[primary]} of each {stability} "
                 f"{branch} trajectory of {pm.origin}; colour: departure phase along the stroboscopic period")
            common.progress(args, f"wrote {args.map}")
    legs, _, _ = api.connect(args.origin if pa else torus, torus if pa else args.target, system=system, points=n,
                             time=t_max, step_off=args.step_off, candidates=args.candidates,
                             from_branch=None if pa else branch, to_branch=branch if pa else None,
                             progress=to.progress_printer(args), on_map=draw, full=True)
    rows = [[k + 1, g.kind, g.dv_mps, g.tof_arrival_days, g.tof_days, None, *map(float, g.patch_state),
             None if math.isinf(g.min_altitude_km) else g.min_altitude_km] for k, g in enumerate(legs)]
    best = legs[0]
    d, per = best.details, best.details["periapsis"]
    head = [f"{args.origin} -> {args.target}: {len(legs)} leg(s) via the torus's {stability} manifold ({branch}), "
            f"periapsis at {alt:g} km above {system.names[primary]}",
            f"best: {best.kind}, CR3BP dv {best.dv_mps:.6g} m/s, {_tof_text(best)}",
            f"method: {best.method}",
            f"periapsis: altitude {per['altitude_km']:.3f} km, inertial speed {per['speed_inertial_kms']:.4f} km/s, "
            f"circular {per['speed_circular_kms']:.4f} km/s, inclination {per['inclination_deg']:.3f} deg (to the "
            "primaries' orbit plane)",
            "dv = |v + omega x r| - sqrt(GM/r) at periapsis (tangential burn)",
            f"torus phase of the best leg's step-off point (deg, along the stroboscopic period and around the "
            f"invariance circle): {d['torus_phase_deg'][0]:.3f}, {d['torus_phase_deg'][1]:.3f}; step-off "
            f"{d['step_off_km']:g} km; Jacobi constant of the torus {torus.jacobi:.10f}",
            "tof_stepoff_days: from periapsis to the manifold's step-off point on the torus (CR3BP)"]
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.manifolds import plot_connection
        common.progress(args, "drawing the legs...")
        ax = plot_connection(legs[:3], [])
        save(ax.figure, args.plot, f"{args.origin} -> {args.target}; best dv {best.dv_mps:.4g} m/s, "
             f"{_tof_text(best)}; rotating frame (CR3BP)")
        common.progress(args, f"wrote {args.plot}")
    table = "\n".join(head) + "\n\n" + common.format_table(HEADERS, rows)
    common.emit(args, payload={"from": args.origin, "to": args.target, "model": "cr3bp",
                               "legs": [g.to_dict() for g in legs]},
                headers=HEADERS, rows=rows, table=table, comments=head)
    return 0


def _optimise_tori(args, system, pa, pb, t_max):
    """--optimise between two tori: the heteroclinic patch (positions and velocities matched) where
    the manifolds' cuts meet, else the position-matched patch, then the optimiser with both tori's
    angles free (:func:`cr3bp.api.optimise`)."""
    from cr3bp import api
    from cr3bp.errors import ConvergenceError, InputError, NoSolutionError
    from cr3bp.tori import request as treq
    from . import _optimise
    from .manifold import torus_request
    cap = _optimise.check(args, system, pa, pb)
    if args.start != "patch":
        raise InputError(f"--start {args.start}: between two tori the optimiser starts from their manifold patch "
                         "(--start patch)")
    if args.epoch is not None:
        raise InputError("--epoch dates a departure from a parking orbit; give it with --path")
    from . import _departure as depcli
    depcli.refuse_dated(args, "to --optimise (transfers between two tori)")
    if args.min_flyby_altitude is not None:
        raise InputError("--min-flyby-altitude goes with --path (a departure from a parking orbit)")
    if args.crossing != 1:
        raise InputError(f"--crossing {args.crossing}: connections with a torus use the first crossing "
                         "of the section")
    from cr3bp.tubes.sections import parse_section
    sec = parse_section(args.section, system)
    if sec.kind != "plane" or sec.coordinate > 2:
        raise InputError(f"--section {args.section!r}: connections with a torus need a position plane such as "
                         "x=1-mu or y=0")
    if args.plot:
        common.plot_file("--plot", args.plot)
    spec_a, spec_b = torus_request(system, args.origin, args), torus_request(system, args.target, args)
    say = (lambda m: common.progress(args, m, verbose_only=True))
    common.progress(args, f"librate connect --optimise: solving the torus '{args.origin}'...")
    a = treq.solve(system, spec_a, progress=say)
    common.progress(args, f"librate connect --optimise: solving the torus '{args.target}'...")
    b = treq.solve(system, spec_b, progress=say)
    n = args.points or 100
    fb, tb_ = args.from_branch or "interior", args.to_branch or "interior"
    legs, why = None, ""
    for match in ("state", "position"):
        common.progress(args, f"librate connect --optimise: growing two manifolds of {n} trajectories to "
                        f"{args.section}, matching the {'positions and velocities' if match == 'state' else 'positions'}...")
        try:
            legs = api.connect(a, b, section=args.section, points=n, time=t_max, step_off=args.step_off,
                               candidates=args.candidates, from_branch=fb, to_branch=tb_, match=match)
            break
        except (NoSolutionError, ConvergenceError) as e:
            why = str(e)
            common.progress(args, f"no heteroclinic patch ({e}); starting from the position-matched patch"
                            if match == "state" else str(e))
    if legs is None:
        raise NoSolutionError(f"no manifold patch between the two tori to start from: {why}")
    tr = api.optimise(a, b, impulses=args.impulses, max_tof=cap, start=legs[0],
                      progress=lambda m: common.progress(args, "librate connect --optimise: " + m))
    return _optimise.emit(args, system, tr)


def _emit_legs(args, system, legs, a, b, how):
    import math

    from .connect import HEADERS, _tof_text
    rows = [[k + 1, g.kind, g.dv_mps, g.tof_arrival_days, g.tof_days,
             None if math.isnan(g.arrival_distance_km) else g.arrival_distance_km, *map(float, g.patch_state),
             None if math.isinf(g.min_altitude_km) else g.min_altitude_km] for k, g in enumerate(legs)]
    best = legs[0]
    d = best.details
    head = [f"{args.origin} -> {args.target}: {len(legs)} leg(s) via {how}",
            f"best: {best.kind}, CR3BP dv {best.dv_mps:.6g} m/s at the patch, {_tof_text(best)}",
            f"method: {best.method}; Jacobi constants {d['jacobi_from']:.10f} -> {d['jacobi_to']:.10f}",
            "torus phases of the best leg (deg, stroboscopic phase and circle angle at departure from the "
            "torus): " + _phases(best.kind, d, a, b),
            "tof_stepoff_days: step-off point on the departure torus or orbit to the step-off point on the "
            "arrival one; patch: the matched point on the section (rotating frame, nondimensional)"]
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.manifolds import plot_connection
        common.progress(args, "drawing the connection...")
        ax = plot_connection(legs[:3], [])
        save(ax.figure, args.plot, f"{args.origin} -> {args.target}; best dv {best.dv_mps:.4g} m/s, "
             f"{_tof_text(best)}; rotating frame (CR3BP)")
        common.progress(args, f"wrote {args.plot}")
    table = "\n".join(head) + "\n\n" + common.format_table(HEADERS, rows)
    common.emit(args, payload={"from": args.origin, "to": args.target, "model": "cr3bp",
                               "legs": [g.to_dict() for g in legs]},
                headers=HEADERS, rows=rows, table=table, comments=head)
    return 0


def _phases(kind, d, a, b):
    import math
    out = []
    first = (b, "to") if kind == "orbit-to-torus" else (a, "from")
    for key, (torus, side) in (("torus", first), ("arrival_torus", (b, "to"))):
        tau = d.get(f"{key}_tau")
        if tau is None:
            continue
        th0 = math.degrees(2 * math.pi * (tau / torus.stroboscopic_time) % (2 * math.pi)) % 360.0
        th1 = math.degrees(d[f"{key}_circle_angle"] + torus.rotation * tau / torus.stroboscopic_time) % 360.0
        out.append(f"{side} {th0:.3f}, {th1:.3f}")
    return "; ".join(out) or "-"


HEADERS = ["maneuver", "t_days", "dv_mps", "x_km", "y_km", "z_km"]


def _departure(args, system, parking, spec):
    """--path direct from 'parking earth ALT' to a torus (the insertion point free over both
    torus angles)."""
    from cr3bp.errors import InputError
    from . import _departure as depcli
    if args.path not in ("direct", "lunar-flyby"):
        raise InputError(f"--path {args.path} to a torus is not built yet; to a torus, --path direct, "
                         "lunar-flyby or low-energy")
    if getattr(args, "epoch", None) is not None:
        raise InputError(f"--epoch: a departure to a torus is not dated yet (--path {args.path}); dated "
                         "departures go to periodic orbits")
    depcli.refuse_dated(args, "to a torus (a dated departure goes to a periodic orbit)")
    alt, tof, inc, fb = depcli.check(args, system, parking)
    from cr3bp import api
    from cr3bp.tori import request as treq
    common.progress(args, f"librate connect: solving the torus '{args.target}'...")
    torus = treq.solve(system, spec, progress=lambda m: common.progress(args, m, verbose_only=True))
    how = ("two-body first guesses over both torus angles" if args.path == "direct" else
           "first guesses from a scan of lunar periapsis states matched over both torus angles")
    common.progress(args, f"librate connect: designing a {args.path} departure from {args.origin} to the torus "
                    f"({how}, then optimisation in the CR3BP)...")
    dep = api.departure(torus, args.origin, path=args.path, inclination=inc,
                        max_tof=None if args.max_tof is None else tof, min_flyby_altitude=fb)
    d = dep.to_dict()
    d["to"] = args.target
    d["torus_phase_deg"] = dep.details["torus_phase_deg"]
    rows = [[m["name"], m["t_days"], m["dv_mps"], *m["position_km"]] for m in d["maneuvers"]]
    th0, th1 = dep.details["torus_phase_deg"]
    head = [f"{args.origin} -> {args.target}: {args.path} departure to the torus "
            f"({'optimised' if dep.optimised else 'feasible; the optimiser stopped short of its tolerance'})",
            f"CR3BP total dv {dep.dv_mps:.1f} m/s: departure {dep.departure_dv_mps:.1f} m/s"
            + "".join(f", {m['name']} {m['dv_mps']:.1f} m/s" for m in d["maneuvers"][1:]),
            f"CR3BP time of flight {dep.tof_days:.3f} d (departure burn to insertion burn)",
            f"insertion on the torus at phase theta0 {th0:.3f} deg (along the stroboscopic time), theta1 "
            f"{th1:.3f} deg (around the invariance circle); Jacobi constant of the torus {torus.jacobi:.10f}",
            f"departure: C3 {dep.c3_km2_s2:.4f} km^2/s^2 (two-body, Earth), Earth-relative speed "
            f"{dep.departure_speed_kms:.4f} km/s after the burn, parking-orbit inclination "
            f"{dep.inclination_deg:.2f} deg to the Moon's orbit plane",
            "positions: Earth-Moon rotating frame, origin at the barycentre; t from the departure burn",
            f"check: forward re-propagation of the transfer closes on each burn within "
            f"{dep.details['closure_km']:.2e} km"]
    if dep.flyby_altitude_km is not None:
        head.insert(3, f"lunar flyby altitude {dep.flyby_altitude_km:.1f} km over the Moon's mean radius "
                       f"(CR3BP; at least {fb:g} km asked)")
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.departures import plot_departure
        common.progress(args, "drawing the departure...")
        # the target drawn: the torus trajectory from the insertion point over one stroboscopic time
        import dataclasses
        from types import SimpleNamespace

        import numpy as np
        ins = dep.maneuvers[-1]
        arc = SimpleNamespace(system=system, period=torus.stroboscopic_time,
                              state=np.asarray(ins["state_before"], dtype=float) + np.r_[0, 0, 0, ins["dv_vector"]],
                              family=torus.family, point=torus.point, branch=torus.branch)
        save(plot_departure(dataclasses.replace(dep, orbit=arc)), args.plot, f"{args.origin} -> {args.target}, {args.path}: CR3BP total dv "
             f"{dep.dv_mps:.0f} m/s, time of flight {dep.tof_days:.2f} d; grey: the torus trajectory from the "
             "insertion point over one stroboscopic period; rotating Earth-Moon frame, positions in km from "
             "the barycentre")
        common.progress(args, f"wrote {args.plot}")
    table = "\n".join(head) + "\n\n" + common.format_table(HEADERS, rows)
    common.emit(args, payload={"from": args.origin, "to": args.target, "model": "cr3bp", "legs": [d]},
                headers=HEADERS, rows=rows, table=table, comments=head)
    return 0
