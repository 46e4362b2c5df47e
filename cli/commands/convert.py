"""librate convert: between OEM, CSV and JSON trajectory files, frames, centres and time systems."""

from cr3bp.vocabulary import EXPORT_FORMATS, OEM_FORMATS

from .. import common
from .export import add_frame_options, leap_second_notes, parse_orientation, summary

NAME = "convert"
ORDER = 85
KERNELS = ()   # no propagation: no compile notice
HELP = "convert a trajectory file between OEM, CSV and JSON, and between frames, centres and time systems"
EXAMPLE = "librate convert relay.oem relay.csv --frame j2000-ecliptic --center earth --time-system utc"


def add_arguments(p):
    p.add_argument("input", metavar="IN", help="a file written by 'librate export' or 'librate convert'")
    p.add_argument("output", metavar="OUT", help="file to write (atomically)")
    p.add_argument("--format", choices=EXPORT_FORMATS, help="format of OUT (default from its suffix)")
    add_frame_options(p, defaults=False)
    common.add_verbosity(p)


def run(args):
    return leap_second_notes(args, lambda: _run(args))


def _run(args):
    from cr3bp.io import export
    from cr3bp.time import frames
    from cr3bp.errors import InputError
    fmt = export.format_of(args.output, args.format)
    from cr3bp import api
    data = api.read_trajectory(args.input)
    if data.frame is None:
        raise InputError(f"'{args.input}' does not describe its CR3BP frame (no frame.* lines); "
                         "convert reads files written by librate")
    traj = export.trajectory_from(data)
    spec = traj.frame
    changes = {}
    if args.frame is not None:
        changes["axes"] = args.frame
    if args.center is not None:
        changes["center"] = args.center
    if args.anchor is not None and args.anchor != spec.anchor or args.orientation is not None:
        anchor = args.anchor or spec.anchor
        args.anchor = anchor
        spec = frames.frame(spec.system, spec.epoch_tdb_s, anchor=anchor, axes=spec.axes,
                            center=spec.center, orientation=parse_orientation(args))
    spec = frames.with_(spec, **changes)
    if fmt in OEM_FORMATS and spec.axes == "rotating":
        raise InputError("OEM needs inertial axes (--frame j2000-equator or j2000-ecliptic); "
                         "use csv or json for the rotating frame")
    ts = args.time_system.upper() if args.time_system else traj.time_system
    out = export.Trajectory(spec, traj.segments, ts, traj.maneuvers, traj.object_name,
                            traj.object_id, {"converted from": str(args.input)})
    path = api.export(out, args.output, fmt=args.format)
    common.progress(args, f"wrote {path}")
    summary(args, out, path, fmt)
    return 0
