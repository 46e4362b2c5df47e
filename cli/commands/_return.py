"""librate connect --path to 'parking earth ALTITUDE': returns from an Earth–Moon periodic orbit or
torus to a circular Earth parking orbit, the time-reverse of a departure designed by optimisation
in the CR3BP (:mod:`cr3bp.transfers.returns`)."""

from .. import common

HEADERS = ["maneuver", "t_days", "dv_mps", "x_km", "y_km", "z_km"]


def run(args, system, parking):
    """Every refusal first (the departure's checks, the parking orbit on --to), then the design."""
    from cr3bp.errors import InputError
    from . import _departure as depcli
    if args.path == "low-energy":
        raise InputError(f"--path low-energy designs a departure from a parking orbit; a return to "
                         f"{args.target!r} takes --path direct or --path lunar-flyby")
    if getattr(args, "epoch", None) is not None:
        raise InputError(f"--epoch dates a departure from a parking orbit; it does not apply to a return "
                         f"(--path {args.path} to {args.target!r})")
    depcli.refuse_dated(args, f"to a return (to {args.target!r})")
    if args.optimise:
        raise InputError("--optimise designs transfers between periodic orbits; a return to a parking orbit "
                         "takes --path alone")
    alt, tof, inc, fb = depcli.check(args, system, parking, returning=True)
    if args.plot:
        common.plot_file("--plot", args.plot)
    from cr3bp.tori.request import is_torus_request
    torus = is_torus_request(args.origin)
    if torus:
        from cr3bp.tori import request as treq
        from .manifold import torus_request
        spec = torus_request(system, args.origin, args)
        common.progress(args, f"librate connect: solving the torus '{args.origin}'...")
        target = treq.solve(system, spec, progress=lambda m: common.progress(args, m, verbose_only=True))
    else:
        from . import _tube_options as to
        target = to.orbit_from_request(system, args.origin, args)
    from cr3bp import api
    how = ("two-body first guesses" if args.path == "direct" else
           "first guesses from a scan of lunar periapsis states (a minute or more)")
    common.progress(args, f"librate connect: designing a {args.path} return from {args.origin} to "
                    f"{args.target} (the time-reverse of a departure: {how}, then optimisation in the CR3BP)...")
    ret = api.return_transfer(target, args.target, path=args.path, inclination=inc,
                              max_tof=None if args.max_tof is None else tof,
                              min_flyby_altitude=fb)
    d = ret.to_dict()
    d["from"] = args.origin
    if torus:
        d["torus_phase_deg"] = ret.details["torus_phase_deg"]
    rows = [[m["name"], m["t_days"], m["dv_mps"], *m["position_km"]] for m in d["maneuvers"]]
    names = {"departure": f"departure from the {'torus' if torus else 'orbit'}", "flyby": "lunar flyby",
             "insertion": "insertion into the parking orbit (perigee burn)"}
    head = [f"{args.origin} -> {args.target}: {args.path} return "
            f"({'optimised' if ret.optimised else 'feasible; the optimiser stopped short of its tolerance'})",
            f"CR3BP total dv {ret.dv_mps:.1f} m/s: "
            + ", ".join(f"{names[m['name']]} {m['dv_mps']:.1f} m/s" for m in d["maneuvers"]),
            f"CR3BP time of flight {ret.tof_days:.3f} d (departure burn to perigee burn)",
            f"arrival perigee: altitude {ret.perigee_altitude_km:.3f} km, Earth-relative speed "
            f"{ret.arrival_speed_kms:.4f} km/s before the burn, C3 {ret.c3_km2_s2:.4f} km^2/s^2 (two-body, "
            f"Earth), parking-orbit inclination {ret.inclination_deg:.2f} deg to the Moon's orbit plane (CR3BP)",
            "positions: Earth-Moon rotating frame, origin at the barycentre; t from the departure burn",
            "method: the time-reverse (y -> -y, t -> -t) of the least-dv departure to the mirror image of the "
            f"{'torus' if torus else 'orbit'}",
            f"check: forward re-propagation of the return closes on each burn within "
            f"{ret.details['closure_km']:.2e} km and ends on the parking orbit within "
            f"{ret.details['parking_radius_error_km']:.2e} km"]
    if torus:
        th0, th1 = ret.details["torus_phase_deg"]
        head.insert(3, f"departure from the torus at phase theta0 {th0:.3f} deg (along the stroboscopic time), "
                       f"theta1 {th1:.3f} deg (around the invariance circle)")
    if ret.flyby_altitude_km is not None:
        head.insert(3, f"lunar flyby altitude {ret.flyby_altitude_km:.1f} km over the Moon's mean radius "
                       f"(CR3BP; at least {fb:g} km asked)")
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.departures import plot_departure
        common.progress(args, "drawing the return...")
        shown = ret
        if torus:
            import dataclasses
            from types import SimpleNamespace
            # the torus drawn: its trajectory from the departure point over one stroboscopic time
            shown = dataclasses.replace(ret, orbit=SimpleNamespace(
                system=system, period=target.stroboscopic_time, state=ret.maneuvers[0]["state_before"],
                family=target.family, point=target.point, branch=target.branch,
                label="torus left (one stroboscopic time on it)"))
        save(plot_departure(shown), args.plot, f"{args.origin} -> {args.target}, {args.path} return: CR3BP total "
             f"dv {ret.dv_mps:.0f} m/s, time of flight {ret.tof_days:.2f} d; grey: the "
             + ("torus trajectory from the departure point over one stroboscopic period" if torus else
                "orbit left") + "; rotating Earth-Moon frame, positions in km from the "
             "barycentre")
        common.progress(args, f"wrote {args.plot}")
    table = "\n".join(head) + "\n\n" + common.format_table(HEADERS, rows)
    common.emit(args, payload={"from": args.origin, "to": args.target, "model": "cr3bp", "legs": [d]},
                headers=HEADERS, rows=rows, table=table, comments=head)
    return 0
