"""librate connect --path low-energy: a ballistic lunar transfer with the Sun's pull from an
Earth parking orbit to an Earth-Moon periodic orbit, designed in the bicircular model
(:mod:`cr3bp.transfers.low_energy`)."""

from .. import common

MODEL = "bicircular"


def add_arguments(g):
    g.add_argument("--epoch", default=None, metavar="ISO",
                   help="--path low-energy: the launch date (ISO 8601; Z = UTC, or a trailing TDB/TT/TAI/UTC): "
                        "the Sun's phase at the departure burn is the date's. Without it the Sun's phase is "
                        "searched over a full synodic month, which holds every Sun-Earth-Moon geometry a year "
                        "of launch dates brings in the bicircular model. --path direct or lunar-flyby to a "
                        "periodic orbit: the departure date, which places the Earth's equator in the rotating "
                        "frame (the inclination to it is reported; --launch-latitude and --equator-inclination "
                        "need it)")
    g.add_argument("--window", default=None, metavar="START/END",
                   help="--path low-energy: a launch window, two ISO 8601 dates joined by '/' (at most two years "
                        "apart): the Sun's phase is searched with no date, then each date of the window on which "
                        "the ephemeris brings that phase is designed for its date (a window shorter than that: "
                        "its two edges, by continuation in the Sun's phase); the launches are listed best first "
                        "with their departure and insertion dv (bicircular model). Not with --epoch")


def check(args, system, parking):
    """Everything --path low-energy refuses, before any work: (altitude_km, max_tof_days,
    inclination_deg or None, epoch TDB seconds or None)."""
    from cr3bp.errors import InputError
    from cr3bp.time.frames import epoch_from_text
    from cr3bp.transfers.low_energy import MAX_TOF_DAYS, MIN_TOF_DAYS
    from . import _departure
    _departure.refuse_dated(args, "with --path low-energy")
    given = args.max_tof is not None
    alt, tof, inc, _ = _departure.check(args, system, parking)     # (the flyby altitude: not this path)
    if not given:
        tof = MAX_TOF_DAYS
    elif not MIN_TOF_DAYS < tof <= 200.0:
        raise InputError(f"--max-tof {args.max_tof!r} with --path low-energy; allowed: more than "
                         f"{MIN_TOF_DAYS:g}d (the shortest low-energy flight searched) up to 200d")
    epoch = None
    if args.epoch is not None:
        from cr3bp.bicircular import sun_phase_at
        epoch = epoch_from_text(args.epoch)
        sun_phase_at(epoch, system)   # a date outside the ephemeris is refused here, before any work
    window = None
    if getattr(args, "window", None) is not None:
        from cr3bp.errors import shown
        from cr3bp.transfers.low_energy import window_seconds
        if epoch is not None:
            raise InputError("give --epoch (one launch date) or --window (a launch window), not both")
        parts = args.window.split("/")
        if len(parts) != 2 or not all(p.strip() for p in parts):
            raise InputError(f"--window '{shown(args.window)}' must be START/END, two ISO 8601 dates, e.g. "
                             "2027-03-01T00:00:00Z/2027-05-01T00:00:00Z")
        window = window_seconds(parts[0].strip(), parts[1].strip(), system)
    return alt, tof, inc, epoch, window


HEADERS = ["maneuver", "t_days", "dv_mps", "x_km", "y_km", "z_km"]


def run(args, system, parking):
    from cr3bp import api
    from . import _tube_options as to
    alt, tof, inc, epoch, window = check(args, system, parking)
    if args.plot:
        common.plot_file("--plot", args.plot)
    orbit = to.orbit_from_request(system, args.target, args)
    if window is not None:
        return _run_window(args, orbit, alt, tof, inc, window)
    common.progress(args, f"librate connect: designing a low-energy transfer from {args.origin} in the "
                    "bicircular model (backward sweep from the target, then correction; about a minute)...")
    tr = api.low_energy_transfer(orbit, args.origin, epoch=epoch, inclination=inc, max_tof=tof,
                                 progress=lambda m: common.progress(args, m))
    return _emit(args, tr)


def run_torus(args, system, parking, spec):
    """--path low-energy from 'parking earth ALT' to a torus (the insertion point free over both
    torus angles, cr3bp.tori.low_energy): every refusal first, then the torus, then the design."""
    from cr3bp import api
    from cr3bp.errors import InputError
    from cr3bp.tori import request as treq
    if getattr(args, "window", None) is not None:
        raise InputError(f"--window searches the launch dates of a low-energy transfer to a periodic orbit; to "
                         f"the torus {args.target!r} give one launch date with --epoch, or none")
    alt, tof, inc, epoch, _ = check(args, system, parking)
    if args.plot:
        common.plot_file("--plot", args.plot)
    common.progress(args, f"librate connect: solving the torus '{args.target}'...")
    torus = treq.solve(system, spec, progress=lambda m: common.progress(args, m, verbose_only=True))
    common.progress(args, f"librate connect: designing a low-energy transfer from {args.origin} to the torus in "
                    "the bicircular model (backward sweep from a grid over both torus angles, then correction; "
                    "a few minutes)...")
    tr = api.low_energy_transfer(torus, args.origin, epoch=epoch, inclination=inc, max_tof=tof,
                                 progress=lambda m: common.progress(args, m))
    return _emit(args, tr, torus)


def _emit(args, tr, torus=None):
    """The table, JSON and figure of the transfer ``tr`` (to a torus when ``torus`` is given)."""
    d = tr.to_dict()
    if torus is not None:
        d["to"] = args.target
        d["torus_phase_deg"] = tr.details["torus_phase_deg"]
    m_ = "bicircular"
    rows = [[m["name"], m["t_days"], m["dv_mps"], *m["position_km"]] for m in d["maneuvers"]]
    when = (f", departure {tr.departure_epoch}, insertion {tr.insertion_epoch} (UTC)"
            if tr.departure_epoch else " (no date given: the phase is the design's)")
    head = [f"{args.origin} -> {args.target}: low-energy transfer "
            f"({'optimised' if tr.optimised else 'corrected onto the parking orbit, but the least-insertion search stopped short of its tolerance'}), "
            "model: bicircular (Sun–Earth–Moon)",
            f"{m_} total dv {tr.dv_mps:.1f} m/s: departure {tr.departure_dv_mps:.1f} m/s, insertion "
            f"{tr.insertion_dv_mps:.2f} m/s",
            f"{m_} time of flight {tr.tof_days:.2f} d (departure burn to insertion burn)",
            f"{m_} greatest distance from the Earth {tr.max_distance_km:,.0f} km",
            f"departure: C3 {tr.c3_km2_s2:.4f} km^2/s^2 (two-body, Earth), Earth-relative speed "
            f"{tr.departure_speed_kms:.4f} km/s after the burn, parking-orbit inclination "
            f"{tr.inclination_deg:.2f} deg to the Moon's orbit plane",
            f"Sun phase at departure {tr.sun_phase_deg:.2f} deg from the Earth-Moon line (0 new moon, 180 full "
            f"moon){when}",
            "positions: Earth-Moon rotating frame, origin at the barycentre; t from the departure burn",
            f"check: each of the {len(tr.patches)} coasts, re-propagated forward, closes on the next patch point "
            f"(the last on the insertion point) within {tr.details['closure_km']:.2e} km"]
    if torus is not None:
        th0, th1 = tr.details["torus_phase_deg"]
        head.insert(4, f"insertion on the torus at phase theta0 {th0:.3f} deg (along the stroboscopic time), theta1 "
                       f"{th1:.3f} deg (around the invariance circle); the torus is the CR3BP's, Jacobi constant "
                       f"{torus.jacobi:.10f}")
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.low_energy import plot_low_energy
        common.progress(args, "drawing the transfer...")
        fig = plot_low_energy(tr)
        save(fig, args.plot, f"{args.origin} -> {args.target}, low-energy: bicircular-model total dv "
             f"{tr.dv_mps:.0f} m/s (departure {tr.departure_dv_mps:.0f}, insertion {tr.insertion_dv_mps:.1f} m/s), "
             f"time of flight {tr.tof_days:.1f} d, Sun phase at departure {tr.sun_phase_deg:.0f} deg"
             + (f" ({tr.departure_epoch})" if tr.departure_epoch else ""),
             model="bicircular")
        common.progress(args, f"wrote {args.plot}")
    table = "\n".join(head) + "\n\n" + common.format_table(HEADERS, rows)
    payload = {"from": args.origin, "to": args.target, "model": d["model"], "legs": [d]}
    common.emit(args, payload=payload, headers=HEADERS, rows=rows, table=table, comments=head, model=MODEL)
    return 0


WINDOW_HEADERS = ["departure_utc", "how", "phase_miss_deg", "dv_mps", "departure_dv_mps", "insertion_dv_mps",
                  "tof_days", "insertion_utc"]


def _run_window(args, orbit, alt, tof, inc, window):
    """--window: the best launch dates of the window (cr3bp.transfers.low_energy.launch_window)."""
    from cr3bp import api
    common.progress(args, f"librate connect: searching a launch window for a low-energy transfer from {args.origin} "
                    "in the bicircular model (Sun phase searched with no date, then each date; a few minutes)...")
    w = api.launch_window(orbit, args.window, args.origin, inclination=inc, max_tof=tof,
                          progress=lambda m: common.progress(args, m))
    by_date = {t.departure_epoch: t for t in w.transfers}
    rows = []
    for d in sorted(w.dates, key=lambda d: d["departure_epoch_utc"]):
        t = by_date.get(d["departure_epoch_utc"])
        rows.append([d["departure_epoch_utc"], d["how"], d["phase_miss_deg"],
                     *( [t.dv_mps, t.departure_dv_mps, t.insertion_dv_mps, t.tof_days, t.insertion_epoch] if t
                        else [None, None, None, None, f"not designed: {d['reason']}"])])
    best = w.best
    head = [f"{args.origin} -> {args.target}: low-energy launch window {w.to_dict()['window_utc'][0]} to "
            f"{w.to_dict()['window_utc'][1]} (UTC), model: bicircular (Sun–Earth–Moon)",
            f"best Sun phase with no date: {w.free.sun_phase_deg:.2f} deg from the Earth-Moon line at departure, "
            f"bicircular total dv {w.free.dv_mps:.1f} m/s (insertion {w.free.insertion_dv_mps:.2f} m/s)",
            f"best launch: {best.departure_epoch} (UTC), bicircular total dv {best.dv_mps:.1f} m/s: departure "
            f"{best.departure_dv_mps:.1f} m/s, insertion {best.insertion_dv_mps:.2f} m/s, time of flight "
            f"{best.tof_days:.2f} d, insertion {best.insertion_epoch} (UTC)",
            "the bicircular model repeats every synodic month: dates bringing the same Sun phase give the same "
            "transfer here; the ephemeris model (librate refine) tells them apart"]
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.low_energy import plot_low_energy
        common.progress(args, "drawing the best launch...")
        save(plot_low_energy(best), args.plot,
             f"{args.origin} -> {args.target}, low-energy, best launch of the window {best.departure_epoch}: "
             f"bicircular-model total dv {best.dv_mps:.0f} m/s (departure {best.departure_dv_mps:.0f}, insertion "
             f"{best.insertion_dv_mps:.1f} m/s), time of flight {best.tof_days:.1f} d", model="bicircular")
        common.progress(args, f"wrote {args.plot}")
    table = "\n".join(head) + "\n\n" + common.format_table(WINDOW_HEADERS, rows)
    payload = {"from": args.origin, "to": args.target, "model": "bicircular (Sun–Earth–Moon)",
               "window": w.to_dict(), "legs": [best.to_dict()]}
    common.emit(args, payload=payload, headers=WINDOW_HEADERS, rows=rows, table=table, comments=head, model=MODEL)
    return 0
