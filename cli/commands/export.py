"""librate export: a CR3BP trajectory as a dated hand-off file (CCSDS OEM, CSV or JSON)."""

from .. import common

NAME = "export"
ORDER = 80
KERNELS = (("cr3bp.integrate.dop853", "integrate"),)   # sampling propagates
HELP = "write a trajectory as CCSDS OEM, CSV or JSON at an epoch, in an inertial frame, km and km/s"
EXAMPLE = ("librate export --system earth-moon --state 1.1805031,0,-0.02,0,-0.1581343,0 --period 14.8177d "
           "--epoch 2031-03-01T00:00:00Z --span 3periods --step 10min --center moon --out relay.oem")

from cr3bp.vocabulary import ANCHORS, EXPORT_FORMATS, FRAMES, INERTIAL_FRAMES, OEM_FORMATS, TIME_SYSTEMS


def add_frame_options(p, defaults=True):
    """--frame, --center, --time-system, --anchor, --orientation (shared with convert)."""
    g = p.add_argument_group("frame and time")
    g.add_argument("--frame", choices=FRAMES, default="j2000-equator" if defaults else None,
                   help="axes of the output: J2000 mean equator (EME2000), J2000 ecliptic, or the "
                        "CR3BP rotating axes in km" + (" (default j2000-equator)" if defaults else ""))
    g.add_argument("--center", metavar="BODY", default=None,
                   help="origin: the larger primary (default), the smaller one, or barycenter; "
                        "by name, e.g. earth, moon, barycenter; in sun-earth also earth or moon "
                        "(placed in the Earth-Moon barycentre by the ephemeris)")
    g.add_argument("--time-system", choices=TIME_SYSTEMS, type=str.lower, default="tdb" if defaults else None,
                   help="time system of the epochs written" + (" (default tdb)" if defaults else ""))
    g.add_argument("--anchor", choices=ANCHORS, default="ephemeris" if defaults else None,
                   help="ephemeris: axes from the secondary's ephemeris state at each epoch, lengths "
                        "scaled by its distance; circular: the idealised uniformly rotating frame"
                        + (" (default ephemeris)" if defaults else ""))
    g.add_argument("--orientation", metavar="INC,NODE,ARGLAT",
                   help="circular anchoring: inclination, node and argument of latitude (degrees) of the "
                        "secondary's orbit at the epoch, relative to --orientation-plane; default: the "
                        "osculating values of the ephemeris at the epoch")
    g.add_argument("--orientation-plane", choices=INERTIAL_FRAMES,
                   default="j2000-ecliptic", help="reference plane of --orientation (default j2000-ecliptic)")


def add_arguments(p):
    common.add_system_options(p)
    src = p.add_argument_group("what to export (one of)")
    src.add_argument("--state", metavar="X,Y,Z,VX,VY,VZ",
                     help="initial rotating-frame state, nondimensional (or km and km/s with --km)")
    src.add_argument("--km", action="store_true", help="--state is in km and km/s (barycentric rotating frame)")
    src.add_argument("--period", metavar="TIME", help="period of the --state orbit (e.g. 13.1d, 3.41TU), "
                                                       "so that --span can count periods")
    src.add_argument("--orbit", metavar="SPEC", help='a periodic orbit request, e.g. "halo L2 south period=6.5626d"')
    src.add_argument("--from", dest="from_file", metavar="FILE",
                     help="a CSV or JSON of rotating-frame states (librate propagate --out, or a file "
                          "this command wrote)")
    t = p.add_argument_group("time span")
    t.add_argument("--epoch", metavar="ISO",
                   help="date of rotating time 0, ISO 8601: 2031-03-01T00:00:00Z (Z = UTC) or with a "
                        "trailing TDB, TT, TAI or UTC; bare text is read on --time-system")
    t.add_argument("--span", metavar="SPAN", help="how long: a time (12d, 36h, 3.5TU) or Nperiods (3periods)")
    t.add_argument("--step", metavar="TIME", help="output step on the output clock (10min, 1h, 60s)")
    add_frame_options(p)
    o = p.add_argument_group("output")
    o.add_argument("--format", choices=EXPORT_FORMATS, help="file format: oem (KVN), xml (OEM in XML), csv, json (default from the --out suffix)")
    o.add_argument("--object-name", metavar="NAME", default="LIBRATE DESIGN", help="OBJECT_NAME (default 'LIBRATE DESIGN')")
    o.add_argument("--object-id", metavar="ID", default="NONE", help="OBJECT_ID (default NONE)")
    o.add_argument("--out", metavar="FILE", required=True, help="file to write (atomically)")
    common.add_verbosity(p)


# ---- helpers shared with convert --------------------------------------------------------

def parse_orientation(args):
    from cr3bp.errors import InputError
    if args.orientation is None:
        return None
    if args.anchor != "circular":
        raise InputError("--orientation goes with --anchor circular")
    from cr3bp.validate import numbers
    vals = numbers("--orientation", args.orientation, 3, "INC,NODE,ARGLAT (degrees)")
    from cr3bp.time.frames import Orientation
    if not 0.0 <= vals[0] <= 180.0:
        raise InputError(f"--orientation '{args.orientation}': the inclination must be in [0, 180] degrees")
    return Orientation(vals[0], vals[1] % 360.0, vals[2] % 360.0, args.orientation_plane)


def step_seconds(text, system):
    from cr3bp.errors import InputError
    from cr3bp.validate import quantity
    s = quantity("--step", text, "time", system, sign="positive") * system.time_s
    if not s > 0:
        raise InputError(f"--step '{text}' must be positive")
    return float(s)


def summary(args, traj, path, fmt):
    import numpy as np
    from cr3bp.time import frames
    n = sum(len(s.t_tu) for s in traj.segments)
    first, last = traj.segments[0], traj.segments[-1]
    ep = frames.epoch_to_text(np.array([traj.frame.epoch_tdb_s + first.t_tu[0] * traj.frame.system.time_s,
                                        traj.frame.epoch_tdb_s + last.t_tu[-1] * traj.frame.system.time_s]),
                              traj.time_system, 3)
    rows = [["file", str(path)], ["format", fmt], ["states", n], ["segments", len(traj.segments)],
            ["maneuvers", len(traj.maneuvers)], ["start", f"{ep[0]} {traj.time_system}"],
            ["stop", f"{ep[1]} {traj.time_system}"], ["frame", traj.frame.axes],
            ["center", traj.frame.center_name], ["anchoring", traj.frame.anchor]]
    if not getattr(args, "quiet", False):
        text = common.format_table(["item", "value"], rows, title="librate export") + common.caution_footer()
        import sys
        sys.stdout.write(text)


def leap_second_notes(args, fn):
    """Run ``fn()`` and say once, in one line, if UTC went past the leap-second table
    (the time-scale module warns for every conversion; a person needs it once)."""
    import warnings
    from cr3bp.time.scales import LeapSecondsExpiredWarning, leap_second_table, mjd_to_iso_date
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", LeapSecondsExpiredWarning)
        out = fn()
    if any(issubclass(w.category, LeapSecondsExpiredWarning) for w in caught):
        table = leap_second_table()
        import sys
        print("librate: note: UTC epochs after "   # shown even with --quiet: it is not progress
              f"{mjd_to_iso_date(table.valid_until_mjd)} (end of the leap-second table) assume "
              f"TAI-UTC = {table.tai_minus_utc_s[-1]:g} s; a leap second announced later would "
              "shift them by 1 s", file=sys.stderr)
    for w in caught:
        if not issubclass(w.category, LeapSecondsExpiredWarning):
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    return out


# ---- the command ------------------------------------------------------------------------

def run(args):
    return leap_second_notes(args, lambda: _run(args))


def _run(args):
    """The trajectory of cr3bp.api.trajectory (an --orbit solved by cr3bp.api.orbit), written by
    cr3bp.api.export; the options are checked here first, so a refusal names the option."""
    import numpy as np
    from cr3bp import api
    from cr3bp.io import export
    from cr3bp.errors import InputError

    from cr3bp.validate import plain_text
    chosen = [x for x in (args.state, args.orbit, args.from_file) if x is not None]
    if len(chosen) != 1:
        raise InputError("give exactly one of --state, --orbit or --from FILE")
    plain_text("--object-name", args.object_name, 100)
    plain_text("--object-id", args.object_id, 100)
    if args.km and args.state is None:
        raise InputError("--km says how --state is given; it goes with --state only")
    fmt = export.format_of(args.out, args.format)
    if fmt in OEM_FORMATS and args.frame == "rotating":
        raise InputError("OEM needs inertial axes (--frame j2000-equator or j2000-ecliptic); "
                         "use --format csv or json for the rotating frame")
    sysm = None
    source = None
    period_tu = None
    model = {}
    file_frame = None
    if args.from_file is not None:
        data = api.read_trajectory(args.from_file)
        file_frame = data.frame
        if args.system or args.mu:
            sysm = common.resolve_system(args)
        elif file_frame is not None:
            sysm = file_frame.system
        elif data.header.get("system"):
            sysm = api.system(data.header["system"])
        else:
            raise InputError(f"'{args.from_file}' does not name its system; give --system")
        if file_frame is not None and file_frame.system.mu != sysm.mu:
            raise InputError(f"'{args.from_file}' is in system {file_frame.system.name}, not {sysm.name}")
        segs = export.to_rotating(data)
        if len(segs) != 1:
            raise InputError(f"'{args.from_file}' has {len(segs)} segments (arcs between maneuvers); export "
                             "one arc at a time, or write a stitched route with 'librate route --epoch ... "
                             "--out DIR' (route.oem) or 'librate run'")
        source = segs[0]
        model["source file"] = str(args.from_file)
    else:
        sysm = common.resolve_system(args)
    sysm.require_dimensional("an export in km")

    if args.orbit is not None:
        common.progress(args, f"solving orbit request '{args.orbit}'...")
        orbit = api.orbit(sysm, args.orbit, progress=lambda count, most, _orbit: common.progress(
            args, f"  family member {count} of at most {most}", verbose_only=True))
        source, period_tu = orbit, float(orbit.period)
        model["orbit"] = f"{orbit.family} {orbit.point} {orbit.branch}".strip()
        model["orbit request"] = args.orbit
        model["period"] = f"{orbit.period!r} TU = {orbit.period * sysm.time_days:.9f} d"
        model["jacobi"] = repr(float(orbit.jacobi))
    elif args.state is not None:
        from cr3bp.validate import numbers
        s = np.array(numbers("--state", args.state, 6, "x,y,z,vx,vy,vz"))
        if args.km:
            s[:3] /= sysm.length_km
            s[3:] /= sysm.velocity_kms
        from cr3bp import validate
        source = validate.state(sysm, s)
        model["initial state (rotating, nondimensional)"] = ", ".join(repr(float(x)) for x in s)
    if args.period is not None:
        if args.orbit is not None:
            raise InputError("--period goes with --state or --from (an --orbit has its own period)")
        from cr3bp.validate import quantity
        period_tu = quantity("--period", args.period, "time", sysm, sign="positive")
        model["period"] = f"{period_tu!r} TU = {period_tu * sysm.time_days:.9f} d"
    if args.span is not None:
        export.parse_span(args.span, sysm, period_tu)    # '3periods' without a period: said now
    if args.epoch is None and file_frame is None:
        raise InputError("give --epoch (the date of rotating time 0), e.g. 2031-03-01T00:00:00Z")
    epoch = file_frame.epoch_tdb_s if args.epoch is None else args.epoch
    orientation = parse_orientation(args)
    if args.step is None:
        if args.from_file is None:
            raise InputError("give --step (e.g. 10min)")
        if args.span is not None:
            raise InputError("--span needs --step (without --step the file's own samples are written)")
    else:
        step_seconds(args.step, sysm)
        if args.span is None and args.from_file is None:
            raise InputError("give --span (e.g. 12d or 3periods)")

    def sampling(done, total, message):
        common.progress(args, f"sampling {total} states...", verbose_only=total < 20000)

    traj = api.trajectory(source, epoch=epoch, span=args.span, step=args.step, frame=args.frame,
                          center=args.center, time_system=args.time_system, anchor=args.anchor,
                          orientation=orientation, object_name=args.object_name, object_id=args.object_id,
                          system=sysm, period=None if args.orbit is not None else period_tu, model=model,
                          progress=sampling)
    path = api.export(traj, args.out, fmt=args.format)
    common.progress(args, f"wrote {path}")
    summary(args, traj, path, fmt)
    return 0
