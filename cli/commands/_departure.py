"""librate connect --path: departures from a parking orbit about the Earth to an Earth–Moon
periodic orbit (direct, or past the Moon), designed by optimisation in the CR3BP
(:mod:`cr3bp.transfers.departure`)."""

from cr3bp.vocabulary import DEPARTURE_PATHS

from .. import common

PATH_CHOICES = DEPARTURE_PATHS


def add_arguments(p):
    g = p.add_argument_group("departures from a parking orbit (--path)")
    g.add_argument("--path", choices=PATH_CHOICES, default=None,
                   help="design a departure from 'parking earth ALTITUDE' (--from) to an Earth-Moon periodic "
                        "orbit (--to) by optimisation in the CR3BP instead of following manifolds: 'direct' "
                        "(departure burn, coast, insertion burn) or 'lunar-flyby' (departure burn, coast to a "
                        "close lunar periapsis where a powered flyby burn is made, coast, insertion burn); "
                        "least total delta-v over the departure phase, times of flight and insertion point "
                        "(with 'parking earth ALTITUDE' as --to and an orbit or torus as --from: the return, "
                        "'direct' or 'lunar-flyby'); "
                        "or 'low-energy' (a ballistic transfer out to about 1.5 million km where the Sun's pull "
                        "raises the perigee, 70-130 d, designed in the bicircular Sun-Earth-Moon model; see --epoch)")
    g.add_argument("--max-tof", default=None, metavar="TIME",
                   help="longest time of flight, departure to insertion, with its unit (default 150d; "
                        "with --path lunar-flyby default 10d, where the delta-v keeps falling slowly with "
                        "longer flights so the optimum lies on this bound; at most 400d; with --path "
                        "low-energy default 130d, more than 70d, at most 200d)")
    g.add_argument("--min-flyby-altitude", default=None, metavar="LENGTH",
                   help="--path lunar-flyby: least altitude of the lunar flyby over the Moon's mean radius, "
                        "with its unit (default 100km; above 0 to 20000km)")
    g.add_argument("--inclination", default=None, metavar="ANGLE",
                   help="inclination of the parking orbit to the Moon's orbit plane (the model's x-y plane), "
                        "e.g. 28.5deg (default: free). The CR3BP has no Earth equator: the equator is "
                        "inclined 18.3-28.6 deg to the Moon's orbit plane, depending on the date; with --epoch, "
                        "see --equator-inclination and --launch-latitude")
    g.add_argument("--launch-latitude", default=None, metavar="ANGLE",
                   help="--path direct or lunar-flyby to a periodic orbit, with --epoch: a launch site's "
                        "latitude, e.g. 28.5deg: the parking orbit's inclination to the Earth's equator is held "
                        "at least its absolute value (free when the free design is already above it)")
    g.add_argument("--equator-inclination", default=None, metavar="ANGLE",
                   help="--path direct or lunar-flyby to a periodic orbit, with --epoch: hold the parking "
                        "orbit's inclination to the Earth's mean equator of J2000, e.g. 51.6deg")
    from . import _low_energy
    _low_energy.add_arguments(g)


def refuse_dated(args, why):
    """--launch-latitude and --equator-inclination apply to a dated direct or flyby departure to a
    periodic orbit only: refused elsewhere, ``why`` naming the case."""
    from cr3bp.errors import InputError
    for opt in ("launch_latitude", "equator_inclination"):
        if getattr(args, opt, None) is not None:
            raise InputError(f"--{opt.replace('_', '-')} holds a direct or lunar-flyby departure's plane to the "
                             f"Earth's equator (with --epoch); it does not apply {why}")


def dated(args):
    """(epoch text or None, equator inclination deg or None, launch latitude deg or None) of a
    direct or flyby departure, every refusal first."""
    from cr3bp.errors import InputError
    eq = None if args.equator_inclination is None else _angle_deg(args.equator_inclination, "--equator-inclination")
    lat = None if args.launch_latitude is None else _angle_deg(args.launch_latitude, "--launch-latitude", -90.0, 90.0)
    given = [o for o, v in (("--inclination", args.inclination), ("--equator-inclination", eq),
                            ("--launch-latitude", lat)) if v is not None]
    if (eq is not None or lat is not None) and args.epoch is None:
        raise InputError(f"{given[-1]} needs --epoch (the departure date): the Earth's equator turns in the "
                         "Earth-Moon rotating frame once a month")
    if len(given) > 1:
        raise InputError(f"{' and '.join(given)} each hold the parking orbit's plane; give at most one")
    if args.epoch is not None:
        from cr3bp.time.frames import epoch_from_text, secondary_state  # lazy: the ephemeris, dated departures only
        from cr3bp.systems import system as _system
        secondary_state(_system("earth-moon"), epoch_from_text(args.epoch))  # outside the ephemeris: refused now
    return args.epoch, eq, lat


def _angle_deg(text, option="--inclination", lo=0.0, hi=180.0):
    from cr3bp.errors import InputError
    t = text.strip().lower()
    for unit, f in (("deg", 1.0), ("°", 1.0), ("rad", 57.29577951308232)):
        if t.endswith(unit):
            try:
                v = float(t[: -len(unit)]) * f
            except ValueError:
                break
            if lo <= v <= hi:
                return v
            break
    raise InputError(f"{option} {text!r}: give an angle with its unit from {lo:g}deg to {hi:g}deg (e.g. 28.5deg)")


def check(args, system, parking, returning=False):
    """Everything --path refuses, before any work: (primary, altitude_km) of the parking orbit
    and the option values in the library's units. ``returning``: the parking orbit is --to (a
    return from an orbit or torus)."""
    from cr3bp.errors import InputError
    from cr3bp.validate import quantity
    if parking is None:
        raise InputError(f"--path {args.path} designs a departure from a parking orbit: --from must be "
                         f"'parking earth ALTITUDE' (e.g. 'parking earth 200km'), not {args.origin!r}")
    primary, alt = parking
    text = args.target if returning else args.origin
    if primary != 0 or system.name != "earth-moon":
        raise InputError(f"--path {args.path} {'returns to' if returning else 'departs from'} the Earth in the "
                         f"earth-moon system; got {text!r} in {system.name}")
    if not 100.0 <= alt <= 50_000.0:
        raise InputError(f"parking altitude {alt:g} km in {text!r}; allowed with --path: 100km to 50000km")
    from cr3bp.transfers.departure import FLYBY_MAX_TOF_DAYS, MAX_TOF_DAYS  # lazy: start-up of the CLI (scipy)
    tof = FLYBY_MAX_TOF_DAYS if args.path == "lunar-flyby" else MAX_TOF_DAYS
    if args.max_tof is not None:
        tof = system.days(quantity("--max-tof", args.max_tof, "time", system, sign="positive"))
        if not 1.0 <= tof <= 400.0:
            raise InputError(f"--max-tof {args.max_tof!r}; allowed: 1d to 400d")
    inc = None if args.inclination is None else _angle_deg(args.inclination)
    fb = 100.0
    if args.min_flyby_altitude is not None:
        if args.path != "lunar-flyby":
            raise InputError(f"--min-flyby-altitude applies to --path lunar-flyby, not --path {args.path}")
        fb = system.km(quantity("--min-flyby-altitude", args.min_flyby_altitude, "length", system, sign="positive"))
        if not 0.0 < fb <= 20_000.0:
            raise InputError(f"--min-flyby-altitude {args.min_flyby_altitude!r}; allowed: above 0km to 20000km")
    for opt, v in (("--section", args.section != "x=1-mu"), ("--map", args.map),
                   ("--arrival-within", args.arrival_within), ("--step-off", args.step_off)):
        if v:
            raise InputError(f"{opt} follows manifolds; it does not apply with --path {args.path}")
    return alt, float(tof), inc, float(fb)


HEADERS = ["maneuver", "t_days", "dv_mps", "x_km", "y_km", "z_km"]


def run(args, system, parking, to_parking=None):
    if to_parking is not None and parking is None:
        from . import _return
        return _return.run(args, system, to_parking)
    if args.path == "low-energy":
        from . import _low_energy
        return _low_energy.run(args, system, parking)
    from cr3bp import api
    from . import _tube_options as to
    alt, tof, inc, fb = check(args, system, parking)
    epoch, eq, lat = dated(args)
    orbit = to.orbit_from_request(system, args.target, args)
    how = ("two-body first guesses" if args.path == "direct" else
           "first guesses from a scan of lunar periapsis states (a minute or more)")
    common.progress(args, f"librate connect: designing a {args.path} departure from {args.origin} "
                    f"({how}, then optimisation in the CR3BP)...")
    dep = api.departure(orbit, args.origin, path=args.path, inclination=inc, max_tof=tof, min_flyby_altitude=fb,
                        epoch=epoch, equator_inclination=eq, launch_latitude=lat)
    d = dep.to_dict()
    rows = [[m["name"], m["t_days"], m["dv_mps"], *m["position_km"]] for m in d["maneuvers"]]
    fo = dep.details.get("first_order")
    if fo is not None:            # the flyby path: its first-order check and the bounds it hit
        state = (f"optimised: first-order (KKT) conditions hold, relative remainder {fo['relative_residual']:.1e} "
                 f"(tolerance {fo['tolerance']:g})" if dep.optimised else
                 f"not proven optimal: first-order (KKT) remainder {fo['relative_residual']:.1e} above its "
                 f"tolerance {fo['tolerance']:g}")
        state += "; bounds hit: " + (", ".join(
            f"max-tof ({tof:g} d)" if b == "max-tof" else f"min-flyby-altitude ({fb:g} km)"
            for b in fo["bounds_hit"]) or "none")
    else:
        state = "optimised" if dep.optimised else "first guess: the optimiser stopped short of its tolerance"
    head = [f"{args.origin} -> {args.target}: {args.path} departure ({state})",
            f"CR3BP total dv {dep.dv_mps:.1f} m/s: departure {dep.departure_dv_mps:.1f} m/s"
            + "".join(f", {m['name']} {m['dv_mps']:.1f} m/s" for m in d["maneuvers"][1:]),
            f"CR3BP time of flight {dep.tof_days:.3f} d (departure burn to insertion burn)",
            f"departure: C3 {dep.c3_km2_s2:.4f} km^2/s^2 (two-body, Earth), Earth-relative speed "
            f"{dep.departure_speed_kms:.4f} km/s after the burn, parking-orbit inclination "
            f"{dep.inclination_deg:.2f} deg to the Moon's orbit plane",
            "positions: Earth-Moon rotating frame, origin at the barycentre; t from the departure burn"]
    if dep.flyby_altitude_km is not None:
        head.insert(3, f"lunar flyby altitude {dep.flyby_altitude_km:.1f} km over the Moon's mean radius "
                       f"(CR3BP; at least {fb:g} km asked)")
    if "inclination_equator_deg" in d:
        bound = ("" if lat is None else
                 f"; launch-site latitude {lat:g} deg: " + ("the bound holds it there" if "launch-latitude" in
                                                            d["bounds_hit"] else "above it, free"))
        head.insert(-1, f"departure {d['departure_epoch']}: parking-orbit inclination "
                        f"{d['inclination_equator_deg']:.2f} deg to the Earth's mean equator of J2000 (the CR3BP "
                        f"design placed by the Moon's DE421 ephemeris at that date){bound}")
    head.append(f"check: forward re-propagation of the transfer closes on each burn within "
                f"{dep.details['closure_km']:.2e} km")
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.departures import plot_departure
        common.progress(args, "drawing the departure...")
        fig = plot_departure(dep)
        save(fig, args.plot, f"{args.origin} -> {args.target}, {args.path}: CR3BP total dv {dep.dv_mps:.0f} m/s "
             f"(departure {dep.departure_dv_mps:.0f} m/s), time of flight {dep.tof_days:.2f} d; rotating "
             "Earth-Moon frame, positions in km from the barycentre")
        common.progress(args, f"wrote {args.plot}")
    table = "\n".join(head) + "\n\n" + common.format_table(HEADERS, rows)
    payload = {"from": args.origin, "to": args.target, "model": "cr3bp", "legs": [d]}
    common.emit(args, payload=payload, headers=HEADERS, rows=rows, table=table, comments=head)
    return 0
