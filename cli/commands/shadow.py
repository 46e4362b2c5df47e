"""librate shadow: eclipses, Earth angles and ground-station visibility of an orbit at a date, or
along a trajectory file (exported orbit, route, scenario or refined arc) at its own epoch."""

from .. import common

NAME = "shadow"
ORDER = 85
KERNELS = (("cr3bp.integrate.dop853", "integrate"),)   # the orbit is sampled by propagation
HELP = ("eclipses, Earth angles and station visibility of an orbit at a date (phasing to avoid eclipses) "
        "or along a trajectory file at its epoch")
EXAMPLE = ('librate shadow --system earth-moon --orbit "halo L2 south resonance=9:2" '
           "--epoch 2031-03-01T00:00:00Z --span 365d --avoid-eclipses --plot timeline.png")

MODEL = ("CR3BP periodic orbit placed at the epoch by the ephemeris-anchored rotating frame "
         "(J2000 mean equator, Earth-centred; in Sun-Earth the Earth placed in the Earth-Moon barycentre by DE421); eclipse geometry from the project's ephemeris, "
         "conical shadow model (Montenbruck & Gill 2000, sec. 3.4.2), geometric positions, spherical bodies")
TRACK_MODEL = ("the trajectory file's states as written (CR3BP design, or ephemeris model for a refined arc), "
               "put on Earth-centred J2000 mean-equator axes through the file's own frame (anchoring and epoch); "
               "eclipse geometry from the project's ephemeris, conical shadow model "
               "(Montenbruck & Gill 2000, sec. 3.4.2), geometric positions, spherical bodies")
TORUS_MODEL = ("CR3BP trajectory on a quasi-periodic torus from its torus phase (re-started from the invariance "
               "circle every stroboscopic time), placed at the epoch by the ephemeris-anchored rotating frame "
               "(J2000 mean equator, Earth-centred; in Sun-Earth the Earth placed in the Earth-Moon barycentre by "
               "DE421); eclipse geometry from the project's ephemeris, conical shadow model (Montenbruck & Gill "
               "2000, sec. 3.4.2), geometric positions, spherical bodies")
#: Options that belong to an orbit or torus placed at a date (refused with --trajectory).
ORBIT_ONLY = (("phase", "--phase"), ("avoid_eclipses", "--avoid-eclipses"), ("until_epoch", "--until-epoch"),
              ("max_eclipse", "--max-eclipse"), ("span", "--span"), ("torus_phase", "--torus-phase"))
#: Systems whose orbits can be placed about the Earth (the Earth in the system, or inside its secondary).
SYSTEMS = ("earth-moon", "sun-earth")


def add_arguments(p):
    common.add_system_options(p, required=False)
    g = p.add_argument_group("orbit and date (or --trajectory)")
    common.add_orbit_at_date(g, "date of rotating time 0", "how long", required=False)
    g.add_argument("--torus", metavar="TEXT",
                   help="instead of --orbit: a quasi-periodic torus in words, as librate torus --request takes it "
                        "(e.g. \"quasi-halo around halo L2 south resonance=9:2 amplitude=2000km\"); the trajectory "
                        "on it from --torus-phase at the epoch is followed over --span")
    g.add_argument("--torus-phase", metavar="THETA0,THETA1",
                   help="with --torus: the torus phase at the epoch, degrees: theta0 along the stroboscopic time, "
                        "theta1 around the invariance circle (default 0,0; as librate torus --phase). --phase and "
                        "--avoid-eclipses then move the start along the flow by a fraction of the stroboscopic "
                        "time")
    g.add_argument("--trajectory", metavar="FILE",
                   help="instead of --orbit: a trajectory file (CCSDS OEM, OEM XML, CSV or JSON of librate export, "
                        "route, run or refine), followed from its first to its last epoch in its own frame and "
                        "epoch (a rotating-frame CSV without an epoch takes --epoch and --system)")
    g.add_argument("--step", metavar="TIME", default="5min",
                   help="search step, 10s..1h (default 5min); edges are refined, but a pass shorter "
                        "than the step may be missed")
    ph = g.add_mutually_exclusive_group()
    ph.add_argument("--phase", metavar="ANGLE", help="phase of the orbit at the epoch: 120deg, 0.25rev "
                                                     "(fraction of the period from its initial state; with "
                                                     "--torus of the stroboscopic time from --torus-phase; "
                                                     "default 0)")
    ph.add_argument("--avoid-eclipses", action="store_true",
                    help="scan --phases phases over one period (stroboscopic time for --torus) and keep the one "
                         "with the least shadow time (meeting --max-eclipse first when given)")
    g.add_argument("--phases", metavar="N", default="36", help="phases scanned by --avoid-eclipses, 1..720 "
                                                               "(default 36)")
    g.add_argument("--max-eclipse", metavar="TIME", help="with --avoid-eclipses or --until-epoch: prefer phases "
                                                         "(epochs) whose longest shadow pass is at most this "
                                                         "(e.g. 90min)")
    g.add_argument("--until-epoch", metavar="ISO",
                   help="scan --epochs start epochs evenly from --epoch to this one (ISO 8601) and keep the one "
                        "with the least shadow time (meeting --max-eclipse first when given); with "
                        "--avoid-eclipses the phases are scanned at every epoch")
    g.add_argument("--epochs", metavar="N", default="8",
                   help="start epochs scanned by --until-epoch, 2..200 (default 8)")
    g.add_argument("--bodies", metavar="LIST", default="earth,moon",
                   help="occulting bodies counted: earth, moon or earth,moon (default earth,moon)")
    g.add_argument("--stations", metavar="FILE",
                   help="ground stations, TOML: [stations.NAME] latitude_deg, longitude_deg (east), "
                        "min_elevation_deg (default 0), altitude_km (default 0)")
    o = p.add_argument_group("output")
    common.add_plot_option(o, "draw the timeline of the passes")
    common.add_output_options(p)


def _inputs(args):
    """Every check of the user's values, before anything is computed or written."""
    from cr3bp.errors import InputError
    if args.torus_phase is not None and args.torus is None and args.trajectory is None:
        raise InputError("--torus-phase goes with --torus")
    if args.torus is not None:
        if args.orbit is not None or args.trajectory is not None:
            raise InputError("give one of --orbit, --torus or --trajectory")
        from cr3bp.tori import request as treq
        treq.parse(args.torus)
    if args.trajectory is not None:
        if args.orbit is not None:
            raise InputError("give --orbit or --trajectory, not both")
        for attr, opt in ORBIT_ONLY:
            if getattr(args, attr):
                raise InputError(f"{opt} goes with --orbit; a --trajectory file is followed from its first "
                                 "to its last epoch as it is")
        from pathlib import Path
        if not Path(args.trajectory).is_file():
            raise InputError(f"--trajectory '{args.trajectory}' is not a file")
        sysm = common.resolve_system(args) if (args.system or args.mu) else None
    else:
        if args.orbit is None and args.torus is None:
            raise InputError("give --orbit REQUEST (with --epoch), --torus TEXT (with --epoch) or --trajectory FILE")
        if args.epoch is None:
            raise InputError(f"{'--orbit' if args.torus is None else '--torus'} needs --epoch ISO (the date of "
                             "rotating time 0)")
        if args.span is None:
            args.span = "365d"
        sysm = common.resolve_system(args)
    if sysm is None:
        return (None,) + _checks(args, None)
    sysm.require_dimensional("eclipses at a date")
    if sysm.name not in SYSTEMS:
        raise InputError(f"--system {sysm.name}: eclipses and stations are computed for {' and '.join(SYSTEMS)} "
                         "only (the Earth and the Moon as occulting bodies)")
    if args.torus is not None:
        from cr3bp.tori import request as treq
        treq.values(sysm, treq.parse(args.torus))
    return (sysm,) + _checks(args, sysm)


def _seconds(option, text, sysm):
    """A time option in seconds (:func:`._units.seconds`; TU only with a system)."""
    from ._units import seconds
    return seconds(option, text, sysm)


def _checks(args, sysm):
    from cr3bp.errors import InputError
    from cr3bp.operations import eclipses, placement, visibility
    bodies = tuple(b.strip().lower() for b in args.bodies.split(",") if b.strip())
    if not bodies or any(b not in eclipses.BODIES for b in bodies) or len(set(bodies)) != len(bodies):
        raise InputError(f"--bodies '{args.bodies}': allowed earth, moon or earth,moon")
    step_s = _seconds("--step", args.step, sysm)
    if not 10.0 <= step_s <= 3600.0:
        raise InputError(f"--step '{args.step}' is {step_s:g} s; allowed 10 s to 1 h")
    phase = placement.parse_phase(args.phase) if args.phase is not None else 0.0
    if args.torus_phase is not None:
        from cr3bp.validate import numbers
        args.torus_phase_deg = numbers("--torus-phase", args.torus_phase, 2, "THETA0,THETA1 (degrees)")
    else:
        args.torus_phase_deg = (0.0, 0.0)
    n_phases = common.whole_number("--phases", args.phases, 1, 720)
    max_min = None
    if args.max_eclipse is not None:
        if not (args.avoid_eclipses or args.until_epoch):
            raise InputError("--max-eclipse goes with --avoid-eclipses or --until-epoch")
        max_s = _seconds("--max-eclipse", args.max_eclipse, sysm)
        if not max_s >= 0:
            raise InputError(f"--max-eclipse '{args.max_eclipse}' must be zero or positive")
        max_min = max_s / 60.0
    stations = visibility.read_stations(args.stations) if args.stations else []
    if args.plot:
        common.folder_exists("--plot", args.plot)
    if args.out:
        common.folder_exists("--out", args.out)
    from cr3bp.time import frames
    if args.trajectory is not None:
        epochs = [] if args.epoch is None else [frames.epoch_from_text(args.epoch)]
        return bodies, step_s, 0.0, n_phases, None, stations, epochs
    epoch = frames.epoch_from_text(args.epoch)
    epochs = [epoch]
    if args.until_epoch is not None:
        from cr3bp.validate import iso8601
        last = frames.epoch_from_text(iso8601("--until-epoch", args.until_epoch))
        if not last > epoch:
            raise InputError(f"--until-epoch '{args.until_epoch}' must be after --epoch '{args.epoch}'")
        n = common.whole_number("--epochs", args.epochs, 2, 200)
        epochs = [epoch + (last - epoch) * k / (n - 1) for k in range(n)]
    return bodies, step_s, phase, n_phases, max_min, stations, epochs


def run(args):
    from .export import leap_second_notes
    return leap_second_notes(args, lambda: _run(args))


def _run(args):
    import numpy as np
    from cr3bp.io import export
    from cr3bp.time import frames

    sysm, bodies, step_s, phase, n_phases, max_min, stations, epochs = _inputs(args)
    if args.trajectory is not None:
        return _run_track(args, sysm, bodies, step_s, stations, epochs)
    epoch = epochs[0]
    # the ephemeris must cover the epoch (and its end, for a span given as a time) before the
    # orbit is solved: an EphemerisSpanError here names the epoch and the tables' span
    from cr3bp.time import ephemeris
    ends = [epoch, epochs[-1]]
    if export.span_periods(args.span) is None:
        ends.append(epochs[-1] + export.parse_span(args.span, sysm) * sysm.time_s)
    for body in ("sun", "moon"):
        ephemeris.position(body, frames._epoch(np.array(ends)), "earth")
    from cr3bp import api
    if args.torus is not None:
        common.progress(args, f"solving torus request '{args.torus}'...")
        orbit = api.torus(sysm, args.torus, progress=lambda m: common.progress(args, m))
        period, request, model_text = float(orbit.stroboscopic_time), args.torus, TORUS_MODEL
    else:
        common.progress(args, f"solving orbit request '{args.orbit}'...")
        orbit = api.orbit(sysm, args.orbit)
        period, request, model_text = float(orbit.period), args.orbit, MODEL
    span_s = export.parse_span(args.span, sysm, period) * sysm.time_s
    if span_s > 20 * 365.25 * 86400.0:
        from cr3bp.errors import InputError
        raise InputError(f"--span '{args.span}' is longer than 20 years")
    if args.torus is not None:
        common.progress(args, f"sampling the trajectory on the torus over {span_s / 86400.0:.4g} d...")
    if len(epochs) > 1:
        common.progress(args, f"scanning {len(epochs)} start epochs"
                        + (f", {n_phases} phases at each..." if args.avoid_eclipses else "..."))
    elif args.avoid_eclipses:
        common.progress(args, f"scanning {n_phases} phases over one period...")
    rep = api.shadow(orbit, args.epoch, span=args.span, step=args.step, phase=phase, bodies=bodies,
                     avoid_eclipses=args.avoid_eclipses, phases=n_phases, max_eclipse=args.max_eclipse,
                     torus_phase=args.torus_phase_deg, until_epoch=args.until_epoch,
                     epochs=args.epochs if args.until_epoch is not None else 8, stations=stations, report=True)
    span_s, step_s, sk, best = rep.span_s, rep.step_s, rep.sky, rep.best
    scan, epoch_scan, epoch = list(rep.phase_scan), list(rep.epoch_scan), rep.epoch_tdb_s
    phase = best.phase_deg
    ang = rep.angles
    rn = ang["range_km"]
    sun_angle, moon_angle = ang["sun_earth_spacecraft_deg"], ang["moon_earth_spacecraft_deg"]
    wins = rep.windows
    t0, t1 = frames.epoch_to_text(np.array([sk.tdb_s[0], sk.tdb_s[-1]]), "UTC", 3)
    model = {"model": model_text, "system": sysm.name,
             ("torus request" if args.torus else "orbit request"): request,
             ("torus" if args.torus else "orbit"): f"{orbit.family} {orbit.point} {orbit.branch}".strip(),
             "period_days": float(period * sysm.time_days), "epoch_utc": t0 + "Z", "end_utc": t1 + "Z",
             "span_days": span_s / 86400.0, "step_s": step_s, "bodies": list(bodies),
             "phase_deg": phase, "phase_chosen_by": "scan" if scan else "given",
             "epoch_chosen_by": f"scan of {len(epochs)} epochs" if epoch_scan else "given"}
    if args.torus:
        model["torus_phase_deg"] = list(args.torus_phase_deg)
        model["rotation_deg"] = float(orbit.rotation_deg)
        items = [["torus", f"{model['torus']} ({args.torus})"],
                 ["stroboscopic period (CR3BP)", f"{model['period_days']:.4f} d"],
                 ["torus phase at the epoch", "{:g}, {:g} deg (theta0, theta1)".format(*args.torus_phase_deg)]]
    else:
        items = [["orbit", f"{model['orbit']} ({args.orbit})"], ["period (CR3BP)", f"{model['period_days']:.4f} d"]]
    items += [
        ["from", model["epoch_utc"] + (f" (best of {len(epochs)} epochs scanned)" if epoch_scan else "")],
        ["to", model["end_utc"]], ["search step", f"{step_s:g} s"],
        ["phase at the epoch", f"{phase:g} deg ({'best of ' + str(n_phases) + ' scanned' if scan else 'given'})"]]
    payload, headers, rows, parts = _report(model_text, ("CR3BP torus trajectory" if args.torus else "CR3BP orbit")
                                            + " at the epoch, ephemeris eclipse geometry", model,
                                            items, best.passes, span_s, bodies, sun_angle, moon_angle, rn,
                                            stations, wins)
    payload.update({"phase_scan": [{"phase_deg": h.phase_deg, "shadow_total_min": h.total_min(),
                                    "longest_shadow_min": h.longest_min(),
                                    "umbra_total_min": h.total_min("umbra")} for h in scan],
                    "epoch_scan": [c.to_dict() for c in epoch_scan]})
    if scan:
        parts.append("")
        srows = [[h.phase_deg, round(h.total_min(), 1), round(h.longest_min(), 1), round(h.total_min("umbra"), 1),
                  sum(1 for p in h.passes if p.kind == "penumbra")] for h in scan[:5]]
        parts.append(common.format_table(["phase [deg]", "shadow total [min]", "longest [min]", "umbra total [min]",
                                          "passes"], srows, title="best phases of the scan"
                                         + (f" (longest pass at most {max_min:g} min first)" if max_min is not None
                                            else "")))
    if epoch_scan:
        parts.append("")
        erows = [[d["epoch_utc"], d["phase_deg"], round(d["shadow_total_min"], 1), round(d["longest_shadow_min"], 1),
                  round(d["umbra_total_min"], 1)] for d in (c.to_dict() for c in epoch_scan)]
        parts.append(common.format_table(["start epoch (UTC)", "phase [deg]", "shadow total [min]", "longest [min]",
                                          "umbra total [min]"], erows,
                                         title="start epochs scanned, best first"
                                         + (f" (longest pass at most {max_min:g} min first)" if max_min is not None
                                            else "")))
    parts += _visibility_table(payload["visibility"])
    table = "\n".join(parts)
    what = "torus" if args.torus else "orbit"
    comments = [f"librate shadow: {model_text}", f"{what} {request}; phase {phase:g} deg; epoch {t0}Z"]
    if args.torus:
        comments.append("torus phase at the epoch {:g}, {:g} deg".format(*args.torus_phase_deg))
    if args.plot:
        from cr3bp.plotting.eclipses import timeline
        timeline(best, epoch, args.plot, title=f"{request} from {t0[:10]}, phase {phase:g} deg",
                 text=("CR3BP torus trajectory" if args.torus else "CR3BP orbit")
                      + " placed at the epoch by the ephemeris-anchored frame; conical shadows of the Earth "
                      "and the Moon from the project's ephemeris (Montenbruck & Gill 2000, sec. 3.4.2).")
        common.progress(args, f"wrote {args.plot}")
    common.emit(args, payload=payload, headers=headers, rows=rows, table=table, comments=comments)
    return 0


def _report(model_text, label, model, items, passes, span_s, bodies, sun_angle, moon_angle, rn, stations, wins):
    """Payload, pass table and text parts shared by the orbit and the trajectory paths."""
    from cr3bp.operations import eclipses
    year = 365.25 * 86400.0
    tot = eclipses.totals(passes, span_s)
    angles = {"sun_earth_spacecraft_deg": {"min": float(sun_angle.min()), "max": float(sun_angle.max())},
              "moon_earth_spacecraft_deg": {"min": float(moon_angle.min()), "max": float(moon_angle.max())},
              "range_to_earth_km": {"min": float(rn.min()), "max": float(rn.max())}}
    vis = []
    for st in stations:
        ws = [w for w in wins if w.station == st.name]
        in_view = sum(w.duration_s for w in ws)
        vis.append({"station": st.name, "windows": len(ws), "in_view_h": in_view / 3600.0,
                    "in_view_fraction": in_view / span_s,
                    "longest_window_h": max((w.duration_s for w in ws), default=0.0) / 3600.0,
                    "min_elevation_deg": st.min_elevation_deg})
    payload = {"model": model, "passes": [p.to_dict() for p in passes], "totals": tot,
               "angles": angles, "stations": [s.to_dict() for s in stations], "visibility": vis,
               "windows": [w.to_dict() for w in wins]}
    headers = ["body", "kind", "start_utc", "end_utc", "duration_min", "depth"]
    rows = [[d["body"], d["kind"], d["start_utc"], d["end_utc"], round(d["duration_min"], 2),
             round(d["depth"], 4)] for d in payload["passes"]]
    parts = ["librate shadow", "", f"model: {model_text}", ""]
    parts.append(common.format_table(["item", "value"], items + [
        ["Sun-Earth-spacecraft angle", f"{sun_angle.min():.1f} .. {sun_angle.max():.1f} deg"],
        ["Moon-Earth-spacecraft angle", f"{moon_angle.min():.1f} .. {moon_angle.max():.1f} deg"],
        ["range to the Earth", f"{rn.min():,.0f} .. {rn.max():,.0f} km"]]))
    parts.append("")
    parts.append(common.format_table(headers[:4] + ["duration [min]", "depth (least visible Sun)"], rows,
                                     title=f"eclipse passes ({label}); a penumbra pass includes its umbra")
                 if rows else "eclipse passes: none over the span\n")
    parts.append("")
    trows = [[k.split()[0], k.split()[1], v["passes"], round(v["total_min"], 1), round(v["per_year_min"], 1),
              round(v["longest_min"], 1)] for k, v in tot.items() if k.split()[0] in bodies]
    parts.append(common.format_table(["body", "kind", "passes", "total [min]", "per year [min]",
                                      "longest [min]"], trows, title=f"totals ({label}; per year = x "
                                                                      f"{year / span_s:.4g})"))
    return payload, headers, rows, parts


def _visibility_table(vis):
    if not vis:
        return []
    return ["", common.format_table(["station", "min el [deg]", "windows", "in view [h]", "in view [%]",
                                     "longest [h]"],
                                    [[v["station"], v["min_elevation_deg"], v["windows"],
                                      round(v["in_view_h"], 1), round(100 * v["in_view_fraction"], 1),
                                      round(v["longest_window_h"], 2)] for v in vis],
                                    title="ground-station visibility (UT1 = UTC, no nutation: ~0.01 deg)")]


def _run_track(args, sysm, bodies, step_s, stations, epochs):
    """Eclipses and visibility along a trajectory file at its own epoch and frame."""
    import numpy as np
    from cr3bp.time import frames
    from cr3bp import api
    common.progress(args, f"eclipses along {args.trajectory}...")
    track, sh = api.shadow_along(args.trajectory, epoch=epochs[0] if epochs else None, system=sysm,
                                 step=step_s, bodies=bodies, stations=stations)
    span_s = track.end_tdb_s - track.start_tdb_s
    step = min(step_s, span_s / 2.0)
    t0, t1 = frames.epoch_to_text(np.array([track.start_tdb_s, track.end_tdb_s]), "UTC", 3)
    spec = track.spec
    model = {"model": TRACK_MODEL, "system": track.system.name, "trajectory": str(args.trajectory),
             "anchor": spec.anchor, "frame_epoch_utc": str(frames.epoch_to_text(spec.epoch_tdb_s, "UTC", 3)) + "Z",
             "epoch_utc": t0 + "Z", "end_utc": t1 + "Z", "span_days": span_s / 86400.0, "step_s": step,
             "bodies": list(bodies)}
    items = [["trajectory", str(args.trajectory)], ["system", track.system.name],
             ["frame", f"{spec.anchor} anchoring, time 0 at {model['frame_epoch_utc']}"],
             ["from", model["epoch_utc"]], ["to", model["end_utc"]], ["search step", f"{step:g} s"]]
    payload, headers, rows, parts = _report(TRACK_MODEL, "trajectory at its epoch, ephemeris eclipse geometry",
                                            model, items, sh.history.passes, span_s, bodies,
                                            sh.sun_earth_spacecraft_deg, sh.moon_earth_spacecraft_deg,
                                            sh.range_km, stations, sh.windows)
    parts += _visibility_table(payload["visibility"])
    table = "\n".join(parts)
    comments = [f"librate shadow: {TRACK_MODEL}", f"trajectory {args.trajectory}; from {t0}Z"]
    if args.plot:
        from cr3bp.plotting.eclipses import timeline
        timeline(sh.history, track.start_tdb_s, args.plot, title=f"{args.trajectory} from {t0[:10]}",
                 text="Trajectory placed by its file's frame; conical shadows of the Earth and the Moon from the "
                      "project's ephemeris (Montenbruck & Gill 2000, sec. 3.4.2).")
        common.progress(args, f"wrote {args.plot}")
    common.emit(args, payload=payload, headers=headers, rows=rows, table=table, comments=comments)
    return 0
