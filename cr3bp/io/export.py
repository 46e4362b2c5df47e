"""Hand-off files: CCSDS OEM (KVN), CSV and JSON writers and readers of epoch-anchored states.

A :class:`Trajectory` holds rotating-frame CR3BP segments (nondimensional), the
:class:`~cr3bp.time.frames.FrameSpec` that anchors them, the time system of the output and the
impulsive maneuvers between segments. Writers put it in km and km/s on the frame's axes,
centred on the frame's centre, with epochs on the chosen time system; readers give the
states back, and :func:`to_rotating` returns them to nondimensional rotating states.

OEM layout (CCSDS 502.0-B-3, Orbit Data Messages, 2023; header keywords sec. 5.2.2 table 5-2,
metadata sec. 5.2.3 table 5-3, data lines sec. 5.2.4 -- section numbers from memory):

* header ``CCSDS_OEM_VERS = 3.0``, the caution as COMMENT lines, ``CREATION_DATE``,
  ``ORIGINATOR``;
* one segment per maneuver-free arc: ``META_START`` ... ``META_STOP`` with COMMENT lines
  naming the model (CR3BP, system, mu, units, anchoring) and the machine-readable frame
  (``COMMENT frame.<key> = <value>``), then ``OBJECT_NAME``, ``OBJECT_ID``, ``CENTER_NAME``,
  ``REF_FRAME``, ``TIME_SYSTEM``, ``START_TIME``, ``USEABLE_START_TIME``,
  ``USEABLE_STOP_TIME``, ``STOP_TIME``, ``INTERPOLATION``, ``INTERPOLATION_DEGREE``;
* data lines ``epoch x y z vx vy vz`` (km, km/s). A maneuver that starts a segment is a
  COMMENT line at the start of that segment's data: ``COMMENT MANEUVER epoch = ... dv_kms =
  dx dy dz dv_mps = m``.

``REF_FRAME``: ``EME2000`` for the J2000 mean equator and equinox. The standard's frame list
(502.0-B-2 annex A; in B-3 the SANA registry -- from memory, not consulted here) has no mean
ecliptic of J2000, and values other than the listed ones are allowed by agreement between
the parties (from memory). For ``j2000-ecliptic`` we write ``REF_FRAME = J2000_ECLIPTIC``
and a COMMENT defining it; a reader that does not know the value will refuse the file rather
than misread it. The rotating frame has no OEM value: OEM output requires inertial axes.
"""

from __future__ import annotations

import csv
import io
import json
import math
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path
from xml.sax.saxutils import escape
import xml.etree.ElementTree as ET

import numpy as np

from ..time import frames as _frames
from .atomic import writing
from ..cautions import CAUTION, caution_lines
from ..constants import OBLIQUITY_J2000_ARCSEC
from .. import validate
from ..errors import InputError, NoSolutionError, shown
from ..vocabulary import EXPORT_FORMATS, INERTIAL_FRAMES
from ..integrate import propagate
from ..time.scales import leap_second_table, mjd_to_iso_date
from ..validate import iso8601, plain_text, quantity

FORMATS = EXPORT_FORMATS                 # xml = OEM in XML
OEM_VERSION = "3.0"
ORIGINATOR = "LIBRATE"
#: CCSDS REF_FRAME of each inertial frame (cr3bp.vocabulary.INERTIAL_FRAMES, in order).
REF_FRAMES = dict(zip(INERTIAL_FRAMES, ("EME2000", "J2000_ECLIPTIC")))
AXES_OF_REF_FRAME = {v: k for k, v in REF_FRAMES.items()}
POS_FMT, VEL_FMT = "%.7f", "%.10f"      # 0.1 mm, 0.1 um/s
MAX_SAMPLES = 5_000_000
JSON_FORMAT = "librate-trajectory"
COLUMNS = ["x_km", "y_km", "z_km", "vx_kms", "vy_kms", "vz_kms"]


# ---- what is written -----------------------------------------------------------------------

@dataclass(frozen=True)
class Segment:
    """A maneuver-free piece of trajectory: rotating times (TU from the epoch), states (N, 6).

    Parameters
    ----------
    t_tu : numpy.ndarray, shape (N,)
        Rotating times, TU from the frame epoch.
    states : numpy.ndarray, shape (N, 6)
        Nondimensional rotating states.

    Examples
    --------
    >>> Segment(np.array([0.0, 0.1]), np.zeros((2, 6))).to_dict()["t_tu"]
    [0.0, 0.1]

    References
    ----------
    Szebehely, V., "Theory of Orbits", Academic Press (1967) (the rotating frame and its units).
    """

    t_tu: np.ndarray
    states: np.ndarray

    def to_dict(self) -> dict:
        return {"t_tu": self.t_tu.tolist(), "states": self.states.tolist()}


@dataclass(frozen=True)
class Maneuver:
    """An impulsive velocity change at rotating time ``t_tu``, ``dv`` nondimensional rotating.

    ``dv_design_mps`` is the maneuver's Δv in the design model (the CR3BP); by default
    ``|dv|`` in the system's fixed velocity unit. The Δv written to a file is measured on the
    exported trajectory instead (:func:`maneuver_table`): with the ephemeris anchoring it
    differs, and both are written side by side.

    Parameters
    ----------
    t_tu : float
        Rotating time of the impulse, TU from the frame epoch.
    dv : array_like, shape (3,)
        Nondimensional velocity change on the rotating axes.
    label : str
        Its name in outputs.
    dv_design_mps : float, optional
        The design model's Δv, m/s.

    Examples
    --------
    >>> Maneuver(0.5, np.array([0.0, 0.001, 0.0]), "insertion").to_dict()["label"]
    'insertion'

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023). (maneuvers as COMMENT lines between segments).
    """

    t_tu: float
    dv: np.ndarray
    label: str = ""
    dv_design_mps: float | None = None

    def design_mps(self, system) -> float:
        if self.dv_design_mps is not None:
            return float(self.dv_design_mps)
        return float(np.linalg.norm(np.asarray(self.dv, dtype=float))) * system.velocity_kms * 1000.0

    def to_dict(self) -> dict:
        return {"t_tu": self.t_tu, "dv": np.asarray(self.dv).tolist(), "label": self.label,
                "dv_design_mps": self.dv_design_mps}


@dataclass(frozen=True)
class Trajectory:
    """Segments, the frame that anchors them, the output time system and maneuvers.

    ``model`` holds extra description for the COMMENT lines (e.g. the orbit request, period).

    Parameters
    ----------
    frame : FrameSpec
        The frame that anchors the segments.
    segments : tuple of Segment
        Maneuver-free arcs in time order.
    time_system : {"UTC", "TAI", "TT", "TDB"}, optional
        The output's time system.
    maneuvers : tuple of Maneuver, optional
        Impulses between segments.
    object_name, object_id : str, optional
        OEM ``OBJECT_NAME`` and ``OBJECT_ID``.
    model : dict, optional
        Extra description for the COMMENT lines.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> traj.to_dict()["time_system"]
    'TDB'

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023).
    """

    frame: _frames.FrameSpec
    segments: tuple
    time_system: str = "TDB"
    maneuvers: tuple = ()
    object_name: str = "LIBRATE DESIGN"
    object_id: str = "NONE"
    model: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        return {"frame": self.frame.to_dict(), "time_system": self.time_system,
                "object_name": self.object_name, "object_id": self.object_id,
                "segments": [s.to_dict() for s in self.segments],
                "maneuvers": [m.to_dict() for m in self.maneuvers], "model": dict(self.model)}


# ---- sampling --------------------------------------------------------------------------------

def span_periods(text) -> float | None:
    """The count of periods in a span such as ``"3periods"`` or ``"period"`` (one).

    Parameters
    ----------
    text : str
        A span.

    Returns
    -------
    float or None
        The count, or None when the span is a time instead.

    Raises
    ------
    InputError
        A count that is not a positive finite number.

    Examples
    --------
    >>> span_periods("3periods"), span_periods("12d")
    (3.0, None)

    References
    ----------
    Common practice (spans written with their unit, as ISO 80000-3:2019 writes quantities).
    """
    s = str(text).strip()
    low = s.lower()
    for suffix in ("periods", "period"):
        if low.endswith(suffix):
            num = s[: -len(suffix)].strip()
            try:
                k = float(num) if num else 1.0
            except ValueError:
                raise InputError(f"span '{shown(text)}' is not '<number>periods' or a time such as '20d'") from None
            if not (math.isfinite(k) and k > 0):
                raise InputError(f"span '{shown(text)}' is not allowed; a positive number of periods "
                                 "(e.g. '3periods') or a positive time is needed")
            return k
    return None


def parse_span(text, system, period_tu: float | None = None) -> float:
    """A span as text -> TU: ``"3periods"``, ``"12d"``, ``"2.5TU"``.

    Parameters
    ----------
    text : str
        The span.
    system : System
        Gives the time unit.
    period_tu : float, optional
        Needed for spans in periods.

    Returns
    -------
    float
        TU.

    Raises
    ------
    InputError
        An unreadable span, periods without ``period_tu``, a non-positive span.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> round(parse_span("3periods", system("earth-moon"), period_tu=1.5), 6)
    4.5

    References
    ----------
    Szebehely, V., "Theory of Orbits", Academic Press (1967) (the time unit).
    """
    s = str(text).strip()
    k = span_periods(s)
    if k is not None:
        if period_tu is None:
            raise InputError(f"span '{text}' counts periods, but this trajectory has no period; "
                             "give a time such as '12d', or the orbit's period (--period)")
        value = k * period_tu
    else:
        value = quantity("span", s, "time", system)
    if not (math.isfinite(value) and value > 0):
        raise InputError(f"span '{text}' must be positive")
    return float(value)


def sample_grid(span_tu: float, step_tu: float) -> np.ndarray:
    """Times ``0, step, 2 step, ...`` up to ``span`` (inclusive when it falls on the grid).

    Parameters
    ----------
    span_tu, step_tu : float
        Span and step, TU (positive).

    Returns
    -------
    numpy.ndarray
        The times.

    Raises
    ------
    InputError
        A non-positive span or step, or more than :data:`MAX_SAMPLES` samples.

    Examples
    --------
    >>> sample_grid(1.0, 0.25).tolist()
    [0.0, 0.25, 0.5, 0.75, 1.0]

    References
    ----------
    Common practice (a uniform output grid).
    """
    step_tu = validate.positive_number("step (TU)", step_tu)
    span_tu = validate.positive_number("span (TU)", span_tu)
    if step_tu > span_tu:
        raise InputError(f"step ({step_tu:.6g} TU) is larger than the span ({span_tu:.6g} TU)")
    n = int(math.floor(span_tu / step_tu * (1 + 1e-12))) + 1
    if n > MAX_SAMPLES:
        raise InputError(f"{n} samples exceed the limit of {MAX_SAMPLES}; use a larger step")
    return np.arange(n) * step_tu


def epoch_grid(spec, time_system: str, span_tu: float, step_s: float) -> np.ndarray:
    """Rotating times (TU) of samples evenly spaced by ``step_s`` on the output time system.

    The user's step is a step of the clock the file is written in: labels ``L0 + k step`` on
    ``time_system`` (L0 = the frame epoch on that scale), converted to TDB and then to TU.
    So a 10-minute step gives epochs ending in :00, :10, ... in UTC as in TDB. (A UTC grid
    across a leap second is uneven by that second.)

    Parameters
    ----------
    spec : FrameSpec
        The frame (its epoch and system).
    time_system : {"UTC", "TAI", "TT", "TDB"}
        The clock the step is equal on.
    span_tu : float
        The span, TU.
    step_s : float
        The step, s.

    Returns
    -------
    numpy.ndarray
        Rotating times, TU from the frame epoch.

    Raises
    ------
    InputError
        A non-positive step, an unknown time system, too many samples.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> em = system("earth-moon")
    >>> t = epoch_grid(frame(em, 0.0, anchor="circular"), "TDB", 3600.0 / em.time_s, 600.0)
    >>> len(t)
    7

    References
    ----------
    Petit, G. & Luzum, B. (eds.), "IERS Conventions (2010)", IERS Technical Note 36 (2010),
    ch. 10 (time scales).
    """
    ts = _frames.time_system(time_system)
    step_s = validate.positive_number("step (s)", step_s)
    validate.positive_number("span (TU)", span_tu)
    span_s = span_tu * spec.system.time_s
    if step_s > span_s * (1 + 1e-12):
        raise InputError(f"step ({step_s:.6g} s) is larger than the span ({span_s:.6g} s)")
    n = int(math.floor(span_s / step_s * (1 + 1e-12))) + 1
    if n > MAX_SAMPLES:
        raise InputError(f"{n} samples exceed the limit of {MAX_SAMPLES}; use a larger step")
    tdb = _frames.clock_grid(spec.epoch_tdb_s, n, step_s, ts)
    t = (np.asarray(tdb) - spec.epoch_tdb_s) / spec.system.time_s
    t[0] = 0.0
    return t


def sample(system, source, t_eval, rtol=1e-12, atol=1e-12) -> Segment:
    """Sample a trajectory at given rotating times by propagation with dense output.

    Parameters
    ----------
    system : System
        The system.
    source : Arc-like (``t``, ``states``), a :class:`Segment`, PeriodicOrbit-like (``state``)
        or a 6-vector. The
        propagation starts from its (first) state; ``t_eval`` counts from that state's time.
    t_eval : array
        Increasing times from 0, TU (e.g. from :func:`sample_grid` or :func:`epoch_grid`).
    rtol, atol : float, optional
        Integrator tolerances.

    Returns
    -------
    Segment
        Times ``t_eval`` shifted by the arc's own start time (0 for a state or an orbit).

    Uses ``cr3bp.propagate(..., t_eval=...)``: samples come from the integrator's dense output
    (Hairer, Norsett & Wanner, *Solving ODEs I*, 2nd ed., 1993, sec. II.6).

    Raises
    ------
    InputError
        A bad source or grid.
    NoSolutionError
        The propagation stops early (impact, escape).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> seg = sample(system("earth-moon"), np.array([0.8, 0, 0, 0, 0.5, 0]), np.linspace(0.0, 0.1, 3))
    >>> seg.states.shape
    (3, 6)

    References
    ----------
    Hairer, E., Nørsett, S. P. & Wanner, G., "Solving Ordinary Differential Equations I",
    2nd ed., Springer (1993), sec. II.6 (dense output).
    """
    t0 = 0.0
    if hasattr(source, "t") and hasattr(source, "states"):
        t0 = float(np.asarray(source.t, dtype=float)[0])
        state = np.asarray(source.states, dtype=float)[0]
    elif hasattr(source, "t_tu") and hasattr(source, "states"):
        t0 = float(np.asarray(source.t_tu, dtype=float)[0])
        state = np.asarray(source.states, dtype=float)[0]
    elif hasattr(source, "state"):
        state = np.asarray(source.state, dtype=float)
    else:
        state = np.asarray(source, dtype=float)
    grid = np.asarray(t_eval, dtype=float)
    if grid.ndim != 1 or grid.size == 0 or np.any(np.diff(grid) <= 0) or grid[0] < 0:
        raise InputError("sample times must be increasing from 0")
    if grid[-1] == 0.0:
        return Segment(grid + t0, validate.state(system, state)[None, :].copy())
    arc = propagate(system, state, float(grid[-1]), rtol=rtol, atol=atol, t_eval=grid)
    if arc.states.shape[0] != grid.size:
        raise NoSolutionError(f"propagation stopped ({arc.status}) at t = {arc.t_final:.6g} TU before "
                              f"the end of the span ({grid[-1]:.6g} TU)")
    return Segment(np.asarray(arc.t, dtype=float) + t0, np.ascontiguousarray(arc.states))


def sample_legs(system, legs, t_eval, labels=None, join_tol=1e-9, rtol=1e-12, atol=1e-12):
    """Segments and maneuvers of a piecewise trajectory (e.g. the legs of a route).

    Parameters
    ----------
    system : System
        The system.
    legs : sequence of Arc-like (``t`` in TU from the frame epoch, ``states``), in time order.
        Each leg starts where the previous one ends (same time, same position within
        ``join_tol`` LU); the velocity difference there is an impulsive maneuver.
    t_eval : array
        The global output grid (TU from the epoch, e.g. :func:`epoch_grid`). Each leg is
        sampled at the grid points inside it plus its own start and end, so every maneuver
        epoch is a sample of both segments it separates.
    labels : sequence of str, optional
        Names of the maneuvers (one per junction).
    join_tol : float, optional
        Largest position gap at a junction, LU.
    rtol, atol : float, optional
        Integrator tolerances.

    Returns
    -------
    segments : tuple of Segment
        The maneuver-free pieces.
    maneuvers : tuple of Maneuver
        The velocity jumps at the junctions.

    Raises
    ------
    InputError
        Legs that do not join (time or position), or a bad grid.

    Examples
    --------
    >>> segs, mans = sample_legs(em, [leg1, leg2], t_grid)      # doctest: +SKIP

    References
    ----------
    Hairer, E., Nørsett, S. P. & Wanner, G., "Solving Ordinary Differential Equations I",
    2nd ed., Springer (1993), sec. II.6 (dense output).
    """
    legs = list(legs)
    if not legs:
        raise InputError("no legs to sample")
    grid = np.asarray(t_eval, dtype=float)
    segs, mans = [], []
    for k, leg in enumerate(legs):
        t = np.asarray(leg.t, dtype=float)
        s = np.asarray(leg.states, dtype=float)
        t0, t1 = float(t[0]), float(t[-1])
        if k:
            prev = legs[k - 1]
            pt, ps = float(np.asarray(prev.t)[-1]), np.asarray(prev.states, dtype=float)[-1]
            if abs(pt - t0) > 1e-12 * max(1.0, abs(t0)) or np.linalg.norm(ps[:3] - s[0, :3]) > join_tol:
                raise InputError(f"leg {k + 1} does not start where leg {k} ends "
                                 f"(gap {abs(pt - t0):.3g} TU, {np.linalg.norm(ps[:3] - s[0, :3]):.3g} LU)")
            label = labels[k - 1] if labels and k - 1 < len(labels) else f"maneuver {k}"
            mans.append(Maneuver(t0, s[0, 3:] - ps[3:], label))
        inner = grid[(grid > t0 + 1e-12) & (grid < t1 - 1e-12)]
        te = np.concatenate([[t0], inner, [t1]]) if t1 > t0 else np.array([t0])
        if te.size == 1:
            segs.append(Segment(te, s[:1].copy()))
            continue
        arc = propagate(system, s[0], float(te[-1] - t0), rtol=rtol, atol=atol, t_eval=te - t0)
        if arc.states.shape[0] != te.size:
            raise NoSolutionError(f"leg {k + 1} stopped ({arc.status}) before its end")
        segs.append(Segment(te, np.ascontiguousarray(arc.states)))
    return tuple(segs), tuple(mans)


# ---- dimensional evaluation ------------------------------------------------------------------

def _center_name_oem(spec) -> str:
    def one(name):
        n = name.lower()
        if n == "earth-moon":
            return "EARTH-MOON BARYCENTER"
        if n.endswith("-system"):
            return n[: -len("-system")].upper() + " BARYCENTER"
        return n.upper()
    p, s = spec.system.names
    if spec.center in ("earth", "moon"):
        return spec.center.upper()
    if spec.center == "primary":
        return one(p)
    if spec.center == "secondary":
        return one(s)
    return f"{p.upper()}-{s.upper()} BARYCENTER"


def _evaluate(traj: Trajectory):
    """Per segment: (epochs TDB s, epoch strings on the time system, (N, 6) km & km/s).
    A non-finite state or time, or times that do not increase, are refused (InputError naming
    the row) before anything is written."""
    check_header(traj)
    out = []
    for k, seg in enumerate(traj.segments):
        t = np.asarray(seg.t_tu, dtype=float)
        st_in = np.asarray(seg.states, dtype=float)
        if t.size == 0:
            raise InputError(f"segment {k + 1} of the trajectory has no states")
        _check_table(f"segment {k + 1}", t, st_in.reshape(len(t), -1), "row")
        tdb, st = _frames.to_frame(traj.frame, seg.t_tu, seg.states)
        _check_table(f"segment {k + 1}", tdb, st, "row")
        out.append((tdb, _frames.epoch_to_text(tdb, traj.time_system), st))
    return out


def check_header(traj: Trajectory, creation_date: str | None = None) -> None:
    """Refuse header text that would break a file.

    OBJECT_NAME, OBJECT_ID, the model lines and the creation date hold no control characters (a
    line break would add header lines), and the creation date is ISO 8601.

    Parameters
    ----------
    traj : Trajectory
        The trajectory.
    creation_date : str, optional
        ISO 8601 text.

    Returns
    -------
    None

    Raises
    ------
    InputError
        A control character, or a creation date that is not ISO 8601.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> check_header(traj, "2031-01-01T00:00:00") is None
    True

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023). (header keywords); ISO 8601-1:2019.
    """
    plain_text("object name", traj.object_name, 100)
    plain_text("object id", traj.object_id, 100)
    for k, v in traj.model.items():
        plain_text("model key", k, 200)
        plain_text(f"model entry '{shown(k)}'", v, 2000)
    for m in traj.maneuvers:
        plain_text("maneuver label", m.label, 200)
    if creation_date is not None:
        iso8601("creation date", creation_date)


#: Exported and design Δv differing by more than this fraction get a warning line.
DV_WARN_FRACTION = 0.01
#: ... and by more than this (a zero impulse rescaled stays below it).
DV_WARN_FLOOR_MPS = 1e-3
_JOIN_TU = 1e-9


def _jump_states(traj: Trajectory, m: Maneuver):
    """Rotating states just before and just after maneuver ``m`` as the trajectory holds them:
    the last sample of the segment ending at the maneuver and the first of the one starting
    there; where the trajectory has only one side (a departure or arrival burn), the other
    side is that state less (plus) the maneuver's rotating ``dv``."""
    pre = post = None
    for seg in traj.segments:
        t = np.asarray(seg.t_tu, dtype=float)
        if pre is None and abs(t[-1] - m.t_tu) <= _JOIN_TU * max(1.0, abs(m.t_tu)) and t.size > 1:
            pre = np.asarray(seg.states[-1], dtype=float)
        if post is None and abs(t[0] - m.t_tu) <= _JOIN_TU * max(1.0, abs(m.t_tu)):
            post = np.asarray(seg.states[0], dtype=float)
    dv = np.concatenate([np.zeros(3), np.asarray(m.dv, dtype=float)])
    if pre is None and post is None:
        raise InputError(f"maneuver '{m.label}' at t = {m.t_tu:.9g} TU is not at a segment boundary of the "
                         "trajectory")
    if pre is None:
        pre = post - dv
    if post is None:
        post = pre + dv
    return pre, post


def maneuver_table(traj: Trajectory) -> list[dict]:
    """The maneuvers as written: per maneuver ``epoch`` (text on the trajectory's time system),
    ``tdb_s``, ``dv_kms`` (the velocity jump of the exported trajectory at that epoch, on the
    export axes: state after minus state before, both through :func:`cr3bp.time.frames.to_frame`),
    ``dv_exported_mps`` (its magnitude), ``dv_design_mps`` (the design model's, the CR3BP),
    ``dv_change_percent`` and ``label``.

    The exported jump is measured on the trajectory, not converted from the design's Δv: with
    the ephemeris anchoring velocities scale with the instantaneous distance of the
    primaries, so the two differ (by a few per cent in Earth-Moon); both are reported.

    Parameters
    ----------
    traj : Trajectory
        The trajectory.

    Returns
    -------
    list of dict
        One row per maneuver, as above.

    Raises
    ------
    InputError
        Epochs outside the ephemeris (ephemeris anchoring).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> maneuver_table(traj)
    []

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023).
    """
    rows = []
    system = traj.frame.system
    for m in traj.maneuvers:
        pre, post = _jump_states(traj, m)
        tdb, kms = _frames.to_frame(traj.frame, [m.t_tu, m.t_tu], np.vstack([pre, post]))
        dv = kms[1, 3:] - kms[0, 3:]
        exported = float(np.linalg.norm(dv)) * 1000.0
        design = m.design_mps(system)
        change = (exported - design) / design * 100.0 if design > 0 else 0.0
        rows.append({"epoch": str(_frames.epoch_to_text(tdb[:1], traj.time_system)[0]), "tdb_s": float(tdb[0]),
                     "dv_kms": dv, "dv_exported_mps": exported, "dv_design_mps": design,
                     "dv_change_percent": float(change), "label": m.label,
                     "position_jump_km": float(np.linalg.norm(kms[1, :3] - kms[0, :3]))})
    return rows


def dv_model_lines(traj: Trajectory) -> list[str]:
    """Header lines saying which model each Δv of the maneuver table belongs to.

    Parameters
    ----------
    traj : Trajectory
        The trajectory (its frame names the models).

    Returns
    -------
    list of str
        The lines.

    Raises
    ------
    AttributeError
        Not a trajectory.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> any("design" in line for line in dv_model_lines(traj))
    True

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023). (COMMENT lines).
    """
    sysm = traj.frame.system
    spec = traj.frame
    if spec.axes == "rotating":
        how = "CR3BP rotating axes with the fixed length unit"
    elif spec.anchor == "circular":
        how = "circular anchoring: the fixed CR3BP units, so equal to the design's up to rounding"
    else:
        how = (f"ephemeris anchoring: lengths and speeds scale with the instantaneous {sysm.names[0]}-"
               f"{sysm.names[1]} distance, so it differs from the design's")
    return [f"dv_design_mps: the maneuver's Δv in the design model, the CR3BP of {sysm.name} with fixed "
            f"units (1 VU = {sysm.velocity_kms:.9g} km/s)",
            f"dv_exported_mps: the velocity jump of the exported trajectory at the maneuver epoch "
            f"(state after minus state before, in this file's frame; {how}); dv_kms holds its components",
            "dv_change_percent: (dv_exported_mps - dv_design_mps) / dv_design_mps x 100"]


def dv_differs(row) -> bool:
    """Whether an exported Δv differs from its design Δv beyond the warning thresholds.

    More than :data:`DV_WARN_FRACTION` and more than :data:`DV_WARN_FLOOR_MPS`.

    Parameters
    ----------
    row : dict
        A row of :func:`maneuver_table`.

    Returns
    -------
    bool
        True when it differs.

    Raises
    ------
    KeyError
        A row without ``dv_change_percent``, ``dv_exported_mps`` or ``dv_design_mps``.

    Examples
    --------
    >>> dv_differs({"dv_exported_mps": 110.0, "dv_design_mps": 100.0, "dv_change_percent": 10.0})
    True

    References
    ----------
    Common practice (a review threshold on a converted quantity).
    """
    return (abs(row["dv_change_percent"]) > DV_WARN_FRACTION * 100.0
            and abs(row["dv_exported_mps"] - row["dv_design_mps"]) > DV_WARN_FLOOR_MPS)


def dv_warning(rows) -> str:
    """One warning line when an exported Δv differs from its design Δv too much, else "".

    Parameters
    ----------
    rows : list of dict
        :func:`maneuver_table`.

    Returns
    -------
    str
        The warning, or "".

    Raises
    ------
    KeyError
        Rows without the Δv columns.

    Examples
    --------
    >>> dv_warning([])
    ''

    References
    ----------
    Common practice (a review threshold on a converted quantity).
    """
    bad = [r for r in rows if dv_differs(r)]
    if not bad:
        return ""
    what = "; ".join(f"{r['label'] or r['epoch']}: design {r['dv_design_mps']:.1f} m/s, exported "
                     f"{r['dv_exported_mps']:.1f} m/s ({r['dv_change_percent']:+.1f}%)" for r in bad)
    return (f"WARNING: {len(bad)} of {len(rows)} exported maneuvers differ from the design (CR3BP) Δv by more "
            f"than {DV_WARN_FRACTION * 100:g}% ({what}); budget with the model you will fly")


def _model_lines(traj: Trajectory) -> list[str]:
    spec = traj.frame
    sysm = spec.system
    lines = [
        f"Model: circular restricted three-body problem (CR3BP), system {sysm.name}, "
        f"mu = {sysm.mu!r}",
        f"Units: length unit {sysm.length_km!r} km, time unit {sysm.time_s!r} s; "
        "positions km, velocities km/s",
    ]
    if spec.axes == "rotating":
        lines.append("Axes: CR3BP rotating axes (x from the larger to the smaller primary, z along "
                     "the orbit normal), dimensional with the fixed length unit; NOT inertial")
    elif spec.anchor == "circular":
        o = spec.orientation
        lines.append("Anchoring: circular (idealised): axes turn uniformly at the CR3BP mean motion; "
                     f"secondary orbit plane at epoch: inclination {o.inclination_deg:.6f} deg, node "
                     f"{o.node_deg:.6f} deg, argument of latitude {o.latitude_arg_deg:.6f} deg relative "
                     f"to the {o.plane} ({o.source})")
    else:
        lines.append("Anchoring: instantaneous ephemeris frame of the secondary relative to the primary "
                     "(x along r, z along r x v, lengths scaled by |r|)")
        lo, hi = _length_scale_range(traj)
        if lo is not None:
            lines.append(f"Length scale over this file: {lo:.1f} to {hi:.1f} km (x{lo / sysm.length_km:.4f} to "
                         f"x{hi / sysm.length_km:.4f} of the CR3BP length unit): distances, speeds and Δv here "
                         "differ from the CR3BP design's by that factor")
    if spec.center in ("earth", "moon"):
        lines.append(f"Centre: the {spec.center} placed in the {sysm.names[1]} barycentre by the ephemeris "
                     "(cr3bp.time.ephemeris); the CR3BP places only the barycentre")
    lines.append(f"Epoch of rotating time 0: {spec.to_dict()['epoch_tdb']} TDB; centre {spec.center_name}")
    if spec.axes == "j2000-ecliptic":
        lines.append("REF_FRAME J2000_ECLIPTIC: mean ecliptic and equinox of J2000, EME2000 rotated "
                     f"about x by the IAU 2006 obliquity {OBLIQUITY_J2000_ARCSEC} arcsec (not a registry value)")
    if _frames.time_system(traj.time_system) == "UTC":
        table = leap_second_table()
        lines.append(f"UTC epochs: leap-second table valid until {mjd_to_iso_date(table.valid_until_mjd)}, "
                     f"TAI-UTC = {table.tai_minus_utc_s[-1]:g} s assumed after it; a leap second announced "
                     "later would shift later epochs by 1 s (TDB/TT/TAI files do not depend on it)")
    for k, v in traj.model.items():
        lines.append(f"{k}: {v}")
    return lines


def _length_scale_range(traj: Trajectory, most: int = 4000):
    """Least and greatest length scale |r| (km) of the ephemeris anchoring over the trajectory's
    epochs (a subsample of at most ``most`` epochs, plus each segment's ends)."""
    t = np.concatenate([np.asarray(seg.t_tu, dtype=float) for seg in traj.segments]) if traj.segments else np.zeros(0)
    if t.size == 0:
        return None, None
    pick = np.unique(np.concatenate([t[:: max(1, t.size // most)], [t.min(), t.max()]]))
    _, _, length, _ = _frames.basis(traj.frame, traj.frame.epoch_tdb_s + pick * traj.frame.system.time_s)
    return float(length.min()), float(length.max())


def _frame_keys(traj: Trajectory) -> list[str]:
    d = traj.frame.to_dict()
    keys = [f"frame.{k} = {d[k]!r}" if isinstance(d[k], float) else f"frame.{k} = {d[k]}"
            for k in ("system", "mu", "length_km", "time_s", "epoch_tdb_s", "anchor", "axes", "center")]
    o = traj.frame.orientation
    if o is not None:
        keys.append(f"frame.orientation = {o.inclination_deg!r} {o.node_deg!r} {o.latitude_arg_deg!r} "
                    f"{o.plane} {o.source.replace(' ', '_')}")
    return keys


def _now_utc() -> str:
    return datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%S")


_ROW_FMT = "%s " + " ".join([POS_FMT] * 3 + [VEL_FMT] * 3) + "\n"


def _data_lines(epochs, st, rowfmt=_ROW_FMT) -> str:
    """Data lines ``epoch x y z vx vy vz``: one %-format over the whole block (fast path)."""
    n = len(epochs)
    if n == 0:
        return ""
    cols = [np.asarray(epochs, dtype=object)] + [st[:, k].tolist() for k in range(6)]
    items = np.empty((n, 7), dtype=object)
    items[:, 0] = cols[0]
    for k in range(6):
        items[:, k + 1] = cols[k + 1]
    return (rowfmt * n) % tuple(items.ravel().tolist())


# ---- OEM -------------------------------------------------------------------------------------

def _oem_parts(traj: Trajectory, creation_date, interpolation, degree):
    """The content of an OEM, independent of KVN or XML: header comments and keywords, and per
    segment (metadata comments, metadata keywords, data comments, epochs, states)."""
    spec = traj.frame
    if spec.axes not in REF_FRAMES:
        raise InputError(f"OEM needs inertial axes (allowed: {', '.join(REF_FRAMES)}); "
                         "use csv or json for the rotating frame")
    ts = _frames.time_system(traj.time_system)
    evaluated = _evaluate(traj)
    check_header(traj, creation_date)
    table = maneuver_table(traj)
    warn = dv_warning(table)
    header = (caution_lines() + ([warn] if warn else []),
              [("CREATION_DATE", creation_date or _now_utc()), ("ORIGINATOR", ORIGINATOR)])
    starts = [float(seg.t_tu[0]) for seg in traj.segments]
    segments = []
    for k, (seg, (tdb, ep, st)) in enumerate(zip(traj.segments, evaluated)):
        if k == 0:
            mcom = _model_lines(traj) + _frame_keys(traj)
            if table:
                mcom += ["Maneuver lines: " + line for line in dv_model_lines(traj)]
        else:
            mcom = [f"segment {k + 1} of {len(traj.segments)} (follows a maneuver or a gap)"]
        meta = [("OBJECT_NAME", traj.object_name), ("OBJECT_ID", traj.object_id),
                ("CENTER_NAME", _center_name_oem(spec)), ("REF_FRAME", REF_FRAMES[spec.axes]),
                ("TIME_SYSTEM", ts), ("START_TIME", ep[0]), ("USEABLE_START_TIME", ep[0]),
                ("USEABLE_STOP_TIME", ep[-1]), ("STOP_TIME", ep[-1])]
        if len(ep) > degree:
            meta += [("INTERPOLATION", interpolation), ("INTERPOLATION_DEGREE", str(degree))]
        dcom = [f"MANEUVER epoch = {r['epoch']} dv_kms = {float(r['dv_kms'][0])!r} {float(r['dv_kms'][1])!r} "
                f"{float(r['dv_kms'][2])!r} dv_exported_mps = {r['dv_exported_mps']!r} "
                f"dv_design_mps = {r['dv_design_mps']!r}" + (f" label = {r['label']}" if r["label"] else "")
                for m, r in zip(traj.maneuvers, table) if _segment_of(starts, m.t_tu) == k]
        segments.append((mcom, meta, dcom, ep, st))
    return header, segments


def oem_text(traj: Trajectory, *, creation_date: str | None = None, interpolation: str = "HERMITE",
             degree: int = 5) -> str:
    """The OEM (KVN) text of a trajectory (see the module notes for the layout).

    Parameters
    ----------
    traj : Trajectory
        The trajectory (inertial axes).
    creation_date : str, optional
        ISO 8601 ``CREATION_DATE`` (default: now), for reproducible output.
    interpolation : str, optional
        ``INTERPOLATION`` keyword value.
    degree : int, optional
        ``INTERPOLATION_DEGREE``.

    Returns
    -------
    str
        The file's text.

    Raises
    ------
    InputError
        Rotating axes (no OEM frame), bad header text.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> oem_text(traj, creation_date="2031-01-01T00:00:00").splitlines()[0]
    'CCSDS_OEM_VERS = 3.0'

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023).
    """
    (hcom, hkv), segments = _oem_parts(traj, creation_date, interpolation, degree)
    out = io.StringIO()
    w = out.write
    w(f"CCSDS_OEM_VERS = {OEM_VERSION}\n")
    for line in hcom:
        w(f"COMMENT {line}\n")
    for k, v in hkv:
        w(f"{k} = {v}\n")
    for mcom, meta, dcom, ep, st in segments:
        w("\nMETA_START\n")
        for line in mcom:
            w(f"COMMENT {line}\n")
        for k, v in meta:
            w(f"{k} = {v}\n")
        w("META_STOP\n\n")
        for line in dcom:
            w(f"COMMENT {line}\n")
        w(_data_lines(ep, st))
    return out.getvalue()


def oem_xml_text(traj: Trajectory, *, creation_date: str | None = None, interpolation: str = "HERMITE",
                 degree: int = 5) -> str:
    """The OEM in XML (CCSDS 505.0-B, XML Specification for Navigation Data Messages; element
    names as the KVN keywords, one ``stateVector`` per line of data -- from memory).

    Parameters
    ----------
    traj : Trajectory
        The trajectory (inertial axes).
    creation_date : str, optional
        ISO 8601 ``CREATION_DATE`` (default: now).
    interpolation : str, optional
        ``INTERPOLATION`` value.
    degree : int, optional
        ``INTERPOLATION_DEGREE``.

    Returns
    -------
    str
        The XML text.

    Raises
    ------
    InputError
        Rotating axes (no OEM frame), bad header text.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> "<oem" in oem_xml_text(traj, creation_date="2031-01-01T00:00:00")
    True

    References
    ----------
    CCSDS 505.0-B, "XML Specification for Navigation Data Messages", Blue Book, Consultative
    Committee for Space Data Systems (from memory); CCSDS 502.0-B-3, "Orbit Data Messages" (2023).
    """
    (hcom, hkv), segments = _oem_parts(traj, creation_date, interpolation, degree)
    out = io.StringIO()
    w = out.write
    w('<?xml version="1.0" encoding="UTF-8"?>\n')
    w(f'<oem id="CCSDS_OEM_VERS" version="{OEM_VERSION}">\n  <header>\n')
    for line in hcom:
        w(f"    <COMMENT>{escape(line)}</COMMENT>\n")
    for k, v in hkv:
        w(f"    <{k}>{escape(str(v))}</{k}>\n")
    w("  </header>\n  <body>\n")
    rowfmt = ("        <stateVector><EPOCH>%s</EPOCH><X>" + POS_FMT + "</X><Y>" + POS_FMT + "</Y><Z>" + POS_FMT
              + "</Z><X_DOT>" + VEL_FMT + "</X_DOT><Y_DOT>" + VEL_FMT + "</Y_DOT><Z_DOT>" + VEL_FMT
              + "</Z_DOT></stateVector>\n")
    for mcom, meta, dcom, ep, st in segments:
        w("    <segment>\n      <metadata>\n")
        for line in mcom:
            w(f"        <COMMENT>{escape(line)}</COMMENT>\n")
        for k, v in meta:
            w(f"        <{k}>{escape(str(v))}</{k}>\n")
        w("      </metadata>\n      <data>\n")
        for line in dcom:
            w(f"        <COMMENT>{escape(line)}</COMMENT>\n")
        w(_data_lines(ep, st, rowfmt))
        w("      </data>\n    </segment>\n")
    w("  </body>\n</oem>\n")
    return out.getvalue()


def _segment_of(starts, t_tu) -> int:
    """Index of the segment a maneuver at ``t_tu`` starts (the last one starting at or before)."""
    k = int(np.searchsorted(np.asarray(starts), t_tu + 1e-12, side="right")) - 1
    return max(k, 0)


def write_oem(path, traj: Trajectory, **kwargs) -> Path:
    """Write an OEM (KVN) file atomically. Keyword arguments go to :func:`oem_text`.

    Parameters
    ----------
    path : str or pathlib.Path
        The file.
    traj : Trajectory
        The trajectory.
    **kw
        ``creation_date``, ``interpolation``, ``degree``.

    Returns
    -------
    pathlib.Path
        The file written.

    Raises
    ------
    InputError
        As the text function.
    OutputError
        The folder cannot be written; nothing is left behind.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> read_oem(write_oem(folder / "a.oem", traj, creation_date="2031-01-01T00:00:00")).time_system
    'TDB'

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023).
    """
    text = oem_text(traj, **kwargs)
    with writing(path) as f:
        f.write(text)
    return Path(path)


def write_oem_xml(path, traj: Trajectory, **kwargs) -> Path:
    """Write an OEM in XML file atomically. Keyword arguments go to :func:`oem_xml_text`.

    Parameters
    ----------
    path : str or pathlib.Path
        The file.
    traj : Trajectory
        The trajectory.
    **kw
        ``creation_date``, ``interpolation``, ``degree``.

    Returns
    -------
    pathlib.Path
        The file written.

    Raises
    ------
    InputError
        As the text function.
    OutputError
        The folder cannot be written; nothing is left behind.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> read_oem_xml(write_oem_xml(folder / "a.xml", traj, creation_date="2031-01-01T00:00:00")).time_system
    'TDB'

    References
    ----------
    CCSDS 505.0-B, "XML Specification for Navigation Data Messages", Blue Book, Consultative
    Committee for Space Data Systems (from memory); CCSDS 502.0-B-3, "Orbit Data Messages" (2023).
    """
    text = oem_xml_text(traj, **kwargs)
    with writing(path) as f:
        f.write(text)
    return Path(path)


# ---- CSV -------------------------------------------------------------------------------------

def _meta_pairs(traj: Trajectory) -> list[str]:
    spec = traj.frame
    return [f"object_name = {traj.object_name}", f"object_id = {traj.object_id}",
            f"time_system = {_frames.time_system(traj.time_system)}",
            f"center_name = {_center_name_oem(spec)}",
            f"ref_frame = {REF_FRAMES.get(spec.axes, 'CR3BP_ROTATING')}"] + _frame_keys(traj)


def csv_text(traj: Trajectory) -> tuple[str, str | None]:
    """The CSV texts of a trajectory: the states, and the maneuver table or None.

    Parameters
    ----------
    traj : Trajectory
        The trajectory.

    Returns
    -------
    states : str
        CSV text, ``#`` header lines carrying the caution and the frame.
    maneuvers : str or None
        CSV text of the maneuver table, None without maneuvers.

    Raises
    ------
    InputError
        Bad header text.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> text, table = csv_text(traj)
    >>> table is None, text.startswith("# librate trajectory (CSV)")
    (True, True)

    References
    ----------
    RFC 4180, "Common Format and MIME Type for Comma-Separated Values (CSV) Files" (2005).
    """
    ts = _frames.time_system(traj.time_system)
    head = io.StringIO()
    head.write("# librate trajectory (CSV): one row per sample; 'segment' counts maneuver-free arcs\n")
    for line in caution_lines():
        head.write(f"# {line}\n")
    for line in _model_lines(traj) + _meta_pairs(traj):
        head.write(f"# {line}\n")
    head.write(",".join(["segment", f"epoch_{ts.lower()}"] + COLUMNS) + "\n")
    parts = [head.getvalue()]
    for k, (tdb, ep, st) in enumerate(_evaluate(traj)):
        body = _data_lines(ep, st).replace(" ", ",")
        parts.append("".join(f"{k},{line}\n" for line in body.splitlines()))
    table = maneuver_table(traj)
    mtext = None
    if table:
        buf = io.StringIO()
        buf.write("# librate maneuvers (CSV): impulsive velocity changes of the trajectory beside this file\n")
        for line in caution_lines():
            buf.write(f"# {line}\n")
        for line in dv_model_lines(traj):
            buf.write(f"# {line}\n")
        warn = dv_warning(table)
        if warn:
            buf.write(f"# {warn}\n")
        wr = csv.writer(buf, lineterminator="\n")
        wr.writerow(maneuver_columns(ts))
        for r in table:
            wr.writerow([r["epoch"], *(repr(float(x)) for x in r["dv_kms"]), repr(r["dv_exported_mps"]),
                         repr(r["dv_design_mps"]), f"{r['dv_change_percent']:.3f}", r["label"]])
        mtext = buf.getvalue()
    return "".join(parts), mtext


def maneuver_columns(ts: str) -> list[str]:
    """Columns of the maneuver table ``NAME.maneuvers.csv``.

    Parameters
    ----------
    ts : str
        The time system (names the epoch column).

    Returns
    -------
    list of str
        The column names.

    Raises
    ------
    InputError
        An unknown time system.

    Examples
    --------
    >>> maneuver_columns("UTC")[:2]
    ['epoch_utc', 'dvx_kms']

    References
    ----------
    RFC 4180, "Common Format and MIME Type for Comma-Separated Values (CSV) Files" (2005).
    """
    return [f"epoch_{ts.lower()}", "dvx_kms", "dvy_kms", "dvz_kms", "dv_exported_mps", "dv_design_mps",
            "dv_change_percent", "label"]


def maneuvers_path(path) -> Path:
    """Where the maneuver table of a CSV file goes: ``NAME.maneuvers.csv`` beside it.

    Parameters
    ----------
    path : str or pathlib.Path
        The CSV file.

    Returns
    -------
    pathlib.Path
        The table's path.

    Raises
    ------
    TypeError
        Not a path.

    Examples
    --------
    >>> maneuvers_path("out/leg.csv").as_posix()
    'out/leg.maneuvers.csv'

    References
    ----------
    RFC 4180, "Common Format and MIME Type for Comma-Separated Values (CSV) Files" (2005).
    """
    p = Path(path)
    return p.with_name(p.stem + ".maneuvers.csv")


def write_csv(path, traj: Trajectory) -> Path:
    """Write the CSV (and ``NAME.maneuvers.csv`` when there are maneuvers), atomically.

    Parameters
    ----------
    path : str or pathlib.Path
        The file.
    traj : Trajectory
        The trajectory.
    **kw
        ``creation_date``.

    Returns
    -------
    pathlib.Path
        The file written.

    Raises
    ------
    InputError
        Bad header text.
    OutputError
        The folder cannot be written; nothing is left behind.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> read_csv(write_csv(folder / "a.csv", traj)).segments[0].states.shape
    (2, 6)

    References
    ----------
    RFC 4180, "Common Format and MIME Type for Comma-Separated Values (CSV) Files" (2005).
    """
    text, mtext = csv_text(traj)
    if mtext is None:
        with writing(path) as f:
            f.write(text)
        return Path(path)
    # both files are written to temporary names first; a failure while writing either leaves
    # neither (the two renames happen only after both writes succeeded)
    with writing(path) as f, writing(maneuvers_path(path)) as g:
        f.write(text)
        g.write(mtext)
    return Path(path)


# ---- JSON ------------------------------------------------------------------------------------

def json_payload(traj: Trajectory, creation_date: str | None = None) -> dict:
    """The JSON document of a trajectory (a dict ready for :func:`json.dumps`).

    Parameters
    ----------
    traj : Trajectory
        The trajectory.
    creation_date : str, optional
        ISO 8601 creation date (default: now).

    Returns
    -------
    dict
        Format, caution, frame, time system, segments (epochs and states, km and km/s),
        maneuvers and warnings.

    Raises
    ------
    InputError
        Bad header text.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> json_payload(traj, "2031-01-01T00:00:00")["units"]["position"]
    'km'

    References
    ----------
    RFC 8259, "The JavaScript Object Notation (JSON) Data Interchange Format" (2017).
    """
    check_header(traj, creation_date)
    spec = traj.frame
    ts = _frames.time_system(traj.time_system)
    table = maneuver_table(traj)
    warn = dv_warning(table)
    segs = []
    for tdb, ep, st in _evaluate(traj):
        segs.append({"start_time": str(ep[0]), "stop_time": str(ep[-1]), "epochs": ep.tolist(),
                     "states": np.round(st, 10).tolist()})
    return {
        "format": JSON_FORMAT, "format_version": 1, "caution": CAUTION,
        "creation_date": creation_date or _now_utc(), "originator": ORIGINATOR,
        "object_name": traj.object_name, "object_id": traj.object_id,
        "model": _model_lines(traj), "frame": spec.to_dict(), "time_system": ts,
        "center_name": _center_name_oem(spec), "ref_frame": REF_FRAMES.get(spec.axes, "CR3BP_ROTATING"),
        "units": {"position": "km", "velocity": "km/s", "dv": "km/s"},
        "columns": ["epoch"] + COLUMNS,
        "segments": segs,
        "maneuvers": [{"epoch": r["epoch"], "dv_kms": r["dv_kms"].tolist(), "dv_exported_mps": r["dv_exported_mps"],
                       "dv_design_mps": r["dv_design_mps"], "dv_change_percent": r["dv_change_percent"],
                       "label": r["label"]} for r in table],
        "maneuver_keys": dv_model_lines(traj) if table else [],
        "warnings": [warn] if warn else [],
        "extra": dict(traj.model),
    }


def write_json(path, traj: Trajectory, creation_date: str | None = None) -> Path:
    """Write the JSON document of a trajectory atomically.

    Parameters
    ----------
    path : str or pathlib.Path
        The file.
    traj : Trajectory
        The trajectory.
    creation_date : str, optional
        ISO 8601 creation date (default: now).

    Returns
    -------
    pathlib.Path
        The file written.

    Raises
    ------
    InputError
        Bad header text.
    OutputError
        The folder cannot be written; nothing is left behind.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> read_json(write_json(folder / "a.json", traj)).format
    'json'

    References
    ----------
    RFC 8259, "The JavaScript Object Notation (JSON) Data Interchange Format" (2017).
    """
    text = json.dumps(json_payload(traj, creation_date), indent=1) + "\n"
    with writing(path) as f:
        f.write(text)
    return Path(path)


def format_of(path, fmt: str | None = None) -> str:
    """The format named by ``fmt`` or by the suffix of ``path`` (.oem/.csv/.json).

    Parameters
    ----------
    path : str or pathlib.Path
        The file.
    fmt : str, optional
        A format name (wins over the suffix).

    Returns
    -------
    str
        One of :data:`FORMATS`.

    Raises
    ------
    InputError
        An unknown format or suffix.

    Examples
    --------
    >>> format_of("a.oem"), format_of("a.txt", "csv")
    ('oem', 'csv')

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023).
    """
    if fmt:
        f = str(fmt).lower()
        if f not in FORMATS:
            raise InputError(f"unknown format '{fmt}'; allowed: {', '.join(FORMATS)}")
        return f
    suffix = Path(path).suffix.lower().lstrip(".")
    if suffix in FORMATS:
        return suffix
    raise InputError(f"cannot tell the format of '{path}' from its suffix; give --format "
                     f"({', '.join(FORMATS)})")


def write(path, traj: Trajectory, fmt: str | None = None, creation_date: str | None = None) -> Path:
    """Write ``traj`` to ``path`` in ``fmt`` (default from the suffix). ``creation_date`` (ISO
    text) fixes the file's creation date for reproducible output; default: now.

    Parameters
    ----------
    path : str or pathlib.Path
        The file.
    traj : Trajectory
        The trajectory.
    fmt : str, optional
        The format (default from the suffix).
    creation_date : str, optional
        ISO 8601 creation date.

    Returns
    -------
    pathlib.Path
        The file written.

    Raises
    ------
    InputError
        An unknown format, rotating axes for an OEM, bad header text.
    OutputError
        The folder cannot be written; nothing is left behind.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> write(folder / "a.oem", traj, creation_date="2031-01-01T00:00:00").name
    'a.oem'

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023).; RFC 4180, "Common Format and MIME Type for Comma-Separated Values (CSV) Files" (2005).; RFC 8259, "The JavaScript Object Notation (JSON) Data Interchange Format" (2017).
    """
    f = format_of(path, fmt)
    if f == "csv":
        return write_csv(path, traj)
    writer = {"oem": write_oem, "xml": write_oem_xml, "json": write_json}[f]
    return writer(path, traj, creation_date=creation_date)


# ---- readers ---------------------------------------------------------------------------------

@dataclass(frozen=True)
class FileSegment:
    """A segment read from a file: metadata, epoch strings, TDB seconds, states km & km/s.

    Parameters
    ----------
    metadata : dict
        The segment's metadata (OEM keywords or ours).
    epochs : list of str
        Epoch text as written.
    tdb_s : numpy.ndarray
        Epochs, TDB seconds since J2000.
    states : numpy.ndarray, shape (N, 6)
        km and km/s.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> str(read(write(folder / "a.oem", traj)).segments[0].epochs[0])
    '2000-01-01T12:00:00.000000'

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023).
    """

    metadata: dict
    epochs: np.ndarray
    tdb_s: np.ndarray
    states: np.ndarray


@dataclass(frozen=True)
class ReadResult:
    """What a reader returns. ``frame`` is None when the file does not say which CR3BP frame.

    Parameters
    ----------
    format : str
        The format read.
    header : dict
        Header keywords.
    segments : list of FileSegment
        The data.
    time_system : str
        The file's time system.
    frame : FrameSpec or None
        The CR3BP frame the file describes.
    maneuvers : list
        Maneuvers found in the file.
    object_name, object_id : str
        The object.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> read(write(folder / "a.csv", traj)).format
    'csv'

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023).
    """

    format: str
    header: dict
    segments: tuple
    time_system: str
    frame: _frames.FrameSpec | None
    maneuvers: tuple = ()          # (epoch str, tdb_s, dv_kms (3,), label)
    object_name: str = ""
    object_id: str = ""

    def to_dict(self) -> dict:
        return {"format": self.format, "header": self.header, "time_system": self.time_system,
                "frame": None if self.frame is None else self.frame.to_dict(),
                "segments": [{"metadata": s.metadata, "points": int(len(s.epochs))} for s in self.segments],
                "maneuvers": len(self.maneuvers)}


def _frame_from_keys(keys: dict):
    if "frame.system" not in keys:
        return None
    d = {k[len("frame."):]: v for k, v in keys.items() if k.startswith("frame.")}
    if "orientation" in d:
        parts = d["orientation"].split()
        d["orientation"] = {"inclination_deg": parts[0], "node_deg": parts[1], "latitude_arg_deg": parts[2],
                            "plane": parts[3], "source": parts[4].replace("_", " ") if len(parts) > 4 else "explicit"}
    else:
        d["orientation"] = None
    try:
        return _frames.FrameSpec.from_dict(d)
    except (KeyError, ValueError) as e:
        raise InputError(f"the frame description in the file is incomplete ({e})") from None


def _kv(line: str):
    k, _, v = line.partition("=")
    return k.strip(), v.strip()


def _parse_maneuver(text: str, ts: str):
    # "MANEUVER epoch = E dv_kms = a b c dv_mps = m [label = L]"
    try:
        body = text.split("MANEUVER", 1)[1]
        ep = body.split("epoch =", 1)[1].split("dv_kms =", 1)[0].strip()
        key = "dv_exported_mps =" if "dv_exported_mps =" in body else "dv_mps ="
        dvs = body.split("dv_kms =", 1)[1].split(key, 1)[0].split()
        label = body.split("label =", 1)[1].strip() if "label =" in body else ""
        dv = np.array([float(x) for x in dvs[:3]])
    except (IndexError, ValueError):
        raise InputError(f"malformed maneuver comment: {text.strip()!r}") from None
    return ep, float(_frames.epochs_from_texts([ep], ts)[0]), dv, label


def read_oem(path) -> ReadResult:
    """Read a KVN OEM file (ours or another writer's; covariance and accelerations ignored).

    Returns the states in km and km/s with epochs on the file's TIME_SYSTEM (converted to TDB
    seconds in ``tdb_s``); ``frame`` is rebuilt from our ``COMMENT frame.*`` lines if present.

    Parameters
    ----------
    path : str or pathlib.Path
        The file.

    Returns
    -------
    ReadResult
        Header, segments, time system and frame.

    Raises
    ------
    InputError
        A missing or malformed file, an unknown time system or frame.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> read_oem(write_oem(folder / "a.oem", traj)).segments[0].states.shape
    (2, 6)

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023).
    """
    try:
        lines = Path(path).read_text(encoding="utf-8").splitlines()
    except OSError as e:
        raise InputError(f"cannot read '{path}': {e.strerror}") from None
    if not lines or not lines[0].strip().startswith("CCSDS_OEM_VERS"):
        raise InputError(f"'{path}' is not a KVN OEM file (first line must be CCSDS_OEM_VERS = ...)")
    header, keys = {}, {}
    segments, man_texts = [], []
    meta, rows, in_meta, in_cov = None, [], False, False

    def close():
        if meta is not None:
            segments.append((meta, rows))

    for lineno, raw in enumerate(lines, 1):
        line = raw.strip()
        if not line:
            continue
        if line.startswith("COMMENT"):
            c = line[len("COMMENT"):].strip()
            if c.startswith("frame.") and "=" in c:
                k, v = _kv(c)
                keys[k] = v
            elif c.startswith("MANEUVER"):
                man_texts.append(c)
            continue
        if line == "META_START":
            close()
            meta, rows, in_meta, in_cov = {}, [], True, False
            continue
        if line == "META_STOP":
            in_meta = False
            continue
        if line in ("COVARIANCE_START",):
            in_cov = True
            continue
        if line in ("COVARIANCE_STOP",):
            in_cov = False
            continue
        if in_cov:
            continue
        if meta is None:
            k, v = _kv(line)
            header[k] = v
        elif in_meta:
            k, v = _kv(line)
            meta[k] = v
        else:
            rows.append((f"line {lineno}", line.split()))
    close()
    return _oem_result(path, "oem", header, segments, keys, man_texts)


def _comment_keys(comments, keys, man_texts):
    for c in comments:
        c = (c or "").strip()
        if c.startswith("frame.") and "=" in c:
            k, v = _kv(c)
            keys[k] = v
        elif c.startswith("MANEUVER"):
            man_texts.append(c)


def read_oem_xml(path) -> ReadResult:
    """Read an OEM in XML (``<oem><header/><body><segment><metadata/><data>`` with
    ``stateVector`` elements), ours or another writer's; covariance ignored.

    Parameters
    ----------
    path : str or pathlib.Path
        The file.

    Returns
    -------
    ReadResult
        Header, segments, time system and frame.

    Raises
    ------
    InputError
        A missing or malformed file.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> read_oem_xml(write_oem_xml(folder / "a.xml", traj)).segments[0].states.shape
    (2, 6)

    References
    ----------
    CCSDS 505.0-B, "XML Specification for Navigation Data Messages", Blue Book, Consultative
    Committee for Space Data Systems (from memory); CCSDS 502.0-B-3, "Orbit Data Messages" (2023).
    """
    try:
        root = ET.parse(path).getroot()
    except OSError as e:
        raise InputError(f"cannot read '{path}': {e.strerror}") from None
    except ET.ParseError as e:
        raise InputError(f"'{path}' is not well-formed XML ({e})") from None

    def tag(e):
        return e.tag.rpartition("}")[-1]
    if tag(root) != "oem":
        raise InputError(f"'{path}' is not an OEM in XML (root element <{tag(root)}>)")
    kids = {tag(e): e for e in root}
    if "header" not in kids or "body" not in kids:
        raise InputError(f"'{path}': an XML OEM needs <header> and <body>")
    header = {"CCSDS_OEM_VERS": root.attrib.get("version", "")}
    keys, man_texts = {}, []
    for e in kids["header"]:
        if tag(e) == "COMMENT":
            _comment_keys([e.text], keys, man_texts)
        else:
            header[tag(e)] = (e.text or "").strip()
    segments = []
    for seg in kids["body"]:
        if tag(seg) != "segment":
            continue
        parts = {tag(e): e for e in seg}
        meta = {}
        for e in parts.get("metadata", []):
            if tag(e) == "COMMENT":
                _comment_keys([e.text], keys, man_texts)
            else:
                meta[tag(e)] = (e.text or "").strip()
        rows = []
        for e in parts.get("data", []):
            if tag(e) == "COMMENT":
                _comment_keys([e.text], keys, man_texts)
            elif tag(e) == "stateVector":
                f = {tag(c): (c.text or "").strip() for c in e}
                rows.append((f"stateVector {len(rows) + 1} of segment {len(segments) + 1}",
                             [f.get(k, "") for k in ("EPOCH", "X", "Y", "Z", "X_DOT", "Y_DOT", "Z_DOT")]))
        segments.append((meta, rows))
    return _oem_result(path, "xml", header, segments, keys, man_texts)


def _oem_result(path, fmt, header, segments, keys, man_texts) -> ReadResult:
    if not segments:
        raise InputError(f"'{path}' has no OEM segment (metadata and data)")
    out = []
    ts = None
    for meta, rows in segments:
        for req in ("OBJECT_NAME", "OBJECT_ID", "CENTER_NAME", "REF_FRAME", "TIME_SYSTEM",
                    "START_TIME", "STOP_TIME"):
            if req not in meta:
                raise InputError(f"'{path}': a segment lacks the mandatory keyword {req}")
        ts = _frames.time_system(meta["TIME_SYSTEM"])
        if not rows:
            raise InputError(f"'{path}': a segment has no data lines")
        ep, st = _data_rows(path, rows)
        tdb = _frames.epochs_from_texts(ep, ts)
        _check_times(path, rows, tdb)
        start, stop = _frames.epochs_from_texts([meta["START_TIME"], meta["STOP_TIME"]], ts)
        tol = 1e-3      # s: epochs are written to the millisecond or better
        if abs(tdb[0] - start) > tol:
            raise InputError(f"'{path}': the first data line ({rows[0][0]}) is at {ep[0]}, not at "
                             f"START_TIME {meta['START_TIME']}")
        if abs(tdb[-1] - stop) > tol:
            raise InputError(f"'{path}': the data end at {ep[-1]} ({rows[-1][0]}), not at STOP_TIME "
                             f"{meta['STOP_TIME']}: the file is truncated or damaged")
        out.append(FileSegment(meta, ep, tdb, st))
    for k in range(1, len(out)):
        if out[k].tdb_s[0] < out[k - 1].tdb_s[-1] - 1e-3:
            raise InputError(f"'{path}': segment {k + 1} starts at {out[k].epochs[0]}, before segment {k} "
                             f"ends ({out[k - 1].epochs[-1]})")
    frame = _frame_from_keys(keys)
    if frame is not None:      # our frame description: REF_FRAME and CENTER_NAME must agree with it
        for seg in out:
            if seg.metadata["REF_FRAME"] not in AXES_OF_REF_FRAME:
                raise InputError(f"'{path}': REF_FRAME '{shown(seg.metadata['REF_FRAME'])}' is not one "
                                 f"librate writes ({', '.join(AXES_OF_REF_FRAME)}), but the file describes "
                                 f"a librate frame ({frame.axes})")
        axes = AXES_OF_REF_FRAME[out[0].metadata["REF_FRAME"]]
        if axes != frame.axes:
            raise InputError(f"'{path}': REF_FRAME {out[0].metadata['REF_FRAME']} contradicts frame.axes {frame.axes}")
        want = _center_name_oem(frame)
        for seg in out:
            if seg.metadata["CENTER_NAME"].strip().upper() != want:
                raise InputError(f"'{path}': CENTER_NAME '{shown(seg.metadata['CENTER_NAME'])}' contradicts "
                                 f"the frame the file describes (centre {want})")
    mans = tuple(_parse_maneuver(t, ts) for t in man_texts)
    return ReadResult(fmt, header, tuple(out), ts, frame, mans,
                      out[0].metadata["OBJECT_NAME"], out[0].metadata["OBJECT_ID"])


def _data_rows(path, rows):
    """(epoch strings, (N, 6) finite states) from OEM data rows ``(where, tokens)``; a row that is
    not 'epoch x y z vx vy vz' (accelerations may follow) or holds a non-finite number is named."""
    ep, st = [], []
    for where, r in rows:
        if len(r) not in (7, 10):
            raise InputError(f"'{path}' {where}: a data line must be 'epoch x y z vx vy vz' "
                             f"(found {len(r)} fields)")
        try:
            v = [float(x) for x in r[1:7]]
        except ValueError:
            raise InputError(f"'{path}' {where}: '{shown(' '.join(r))}' is not an epoch and six numbers") from None
        if not all(math.isfinite(x) for x in v):
            raise InputError(f"'{path}' {where}: a state is not finite ('{shown(' '.join(r))}')")
        ep.append(r[0])
        st.append(v)
    return np.array(ep), np.array(st, dtype=float)


def _check_times(path, rows, t):
    """Epochs (or times) must increase strictly, row after row; the first that does not is named."""
    t = np.asarray(t, dtype=float)
    if t.size and not np.all(np.isfinite(t)):
        k = int(np.argmin(np.isfinite(t)))
        raise InputError(f"'{path}' {rows[k][0]}: the time is not finite")
    if t.size > 1:
        bad = np.diff(t) <= 0
        if bad.any():
            k = int(np.argmax(bad)) + 1
            raise InputError(f"'{path}' {rows[k][0]}: the time does not increase (equal to or before the "
                             "previous row's)")


def _check_table(path, t, st, where="row", first_row=1):
    """Rotating or exported states from a table: finite, times strictly increasing."""
    st = np.asarray(st, dtype=float)
    rows = [(f"{where} {first_row + k}", None) for k in range(len(t))]
    bad = ~np.all(np.isfinite(st), axis=1) if st.ndim == 2 and len(st) else np.zeros(0, bool)
    if bad.any():
        k = int(np.argmax(bad))
        raise InputError(f"'{path}' {rows[k][0]}: a state is not finite")
    _check_times(path, rows, t)


def _read_rotating_table(path, headers, rows):
    """A CSV of nondimensional rotating states (``t, x, y, z, vx, vy, vz`` columns, time in TU;
    ``_lu``/``_vu``/``_tu`` suffixes allowed). A ``segment`` column splits it into segments.
    Returns (t, states, segment numbers)."""
    names = [h.strip().lower() for h in headers]

    def col(*cands):
        for c in cands:
            for i, n in enumerate(names):
                head, _, unit = n.partition("_")
                if n == c or (head == c and unit in ("lu", "vu", "tu", "nd")):
                    return i
        return None
    idx = [col("t", "time")] + [col(c) for c in ("x", "y", "z", "vx", "vy", "vz")]
    if idx[0] is None and "t_days" in names:
        raise InputError(f"'{path}' gives its times in days (t_days) but no t_tu column; rotating states "
                         "are read with their times in TU")
    if any(i is None for i in idx):
        raise InputError(f"'{path}' has neither our export columns nor rotating-state columns "
                         "t,x,y,z,vx,vy,vz")
    seg_col = names.index("segment") if "segment" in names else None
    try:
        a = np.array([[float(r[i]) for i in idx] for r in rows if r])
        seg = (np.array([int(r[seg_col]) for r in rows if r]) if seg_col is not None
               else np.zeros(len(a), dtype=int))
    except ValueError:
        raise InputError(f"'{path}': a row is not numbers") from None
    return a[:, 0], a[:, 1:], seg


def read_csv(path) -> ReadResult:
    """Read a CSV written by :func:`write_csv` (its ``# key = value`` lines carry the frame).

    Parameters
    ----------
    path : str or pathlib.Path
        The file.

    Returns
    -------
    ReadResult
        Header, segments, time system and frame.

    Raises
    ------
    InputError
        A missing or malformed file.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> read_csv(write_csv(folder / "a.csv", traj)).time_system
    'TDB'

    References
    ----------
    RFC 4180, "Common Format and MIME Type for Comma-Separated Values (CSV) Files" (2005).
    """
    try:
        text = Path(path).read_text(encoding="utf-8")
    except OSError as e:
        raise InputError(f"cannot read '{path}': {e.strerror}") from None
    keys, body = {}, []
    for line in text.splitlines():
        if line.startswith("#"):
            c = line[1:].strip()
            if " = " in c:
                k, v = _kv(c)
                keys[k] = v
        elif line.strip():
            body.append(line)
    if not body:
        raise InputError(f"'{path}' has no header row")
    rows = list(csv.reader(body))
    headers, rows = rows[0], rows[1:]
    if not rows:
        raise InputError(f"'{path}' has no data rows")
    ecol = [i for i, h in enumerate(headers) if h.startswith("epoch_")]
    if not ecol:
        t, st, seg = _read_rotating_table(path, headers, rows)
        return _rotating_result("csv", keys, t, st, seg, path)
    ts = _frames.time_system(headers[ecol[0]][len("epoch_"):])
    try:
        idx = [headers.index(c) for c in COLUMNS]
    except ValueError:
        raise InputError(f"'{path}' lacks one of the columns {', '.join(COLUMNS)}") from None
    seg_col = headers.index("segment") if "segment" in headers else None
    try:
        seg = np.array([int(r[seg_col]) for r in rows]) if seg_col is not None else np.zeros(len(rows), int)
        ep = np.array([r[ecol[0]] for r in rows])
        st = np.array([[float(r[i]) for i in idx] for r in rows])
    except (ValueError, IndexError):
        raise InputError(f"'{path}': a row is not segment, epoch and six numbers") from None
    tdb = _frames.epochs_from_texts(ep, ts)
    for k in np.unique(seg):
        m = np.flatnonzero(seg == k)
        _check_table(path, tdb[m], st[m], "data row", int(m[0]) + 1)
    segs = []
    meta = {"CENTER_NAME": keys.get("center_name", ""), "REF_FRAME": keys.get("ref_frame", ""),
            "TIME_SYSTEM": ts}
    for k in np.unique(seg):
        m = seg == k
        segs.append(FileSegment(meta, ep[m], tdb[m], st[m]))
    mans = []
    mp = maneuvers_path(path)
    if mp.exists():
        head = None
        for line in csv.reader(x for x in mp.read_text(encoding="utf-8").splitlines()[1:] if x and not x.startswith("#")):
            if line[0].startswith("epoch_"):
                head = line
                continue
            lab = head.index("label") if head and "label" in head else 5
            mans.append((line[0], float(_frames.epochs_from_texts([line[0]], ts)[0]),
                         np.array([float(x) for x in line[1:4]]), line[lab] if len(line) > lab else ""))
    return ReadResult("csv", {}, tuple(segs), ts, _frame_from_keys(keys), tuple(mans),
                      keys.get("object_name", ""), keys.get("object_id", ""))


def _rotating_result(fmt, keys, t, st, seg=None, path="<input>"):
    """Rotating nondimensional states without epochs: segments in TU (split on ``seg``), no frame."""
    t, st = np.asarray(t, float), np.asarray(st, float)
    seg = np.zeros(len(t), dtype=int) if seg is None else np.asarray(seg)
    if len(t) != len(st):
        raise InputError(f"'{path}': {len(t)} times but {len(st)} states")
    for k in np.unique(seg):
        m = np.flatnonzero(seg == k)
        _check_table(path, t[m], st[m], "data row", int(m[0]) + 1)
    segs = tuple(FileSegment({"ROTATING_NONDIMENSIONAL": "yes"}, np.array([]), t[seg == k], st[seg == k])
                 for k in np.unique(seg))
    return ReadResult(fmt, {k: v for k, v in keys.items()}, segs, "", None)


def read_json(path) -> ReadResult:
    """Read a JSON written by :func:`write_json`, or a JSON of rotating states
    (``{"t": [...], "states": [[...]]}`` or the same under ``"arc"``/``"points"``).

    Parameters
    ----------
    path : str or pathlib.Path
        The file.

    Returns
    -------
    ReadResult
        Header, segments, time system and frame.

    Raises
    ------
    InputError
        A missing or malformed file.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> read_json(write_json(folder / "a.json", traj)).segments[0].states.shape
    (2, 6)

    References
    ----------
    RFC 8259, "The JavaScript Object Notation (JSON) Data Interchange Format" (2017).
    """
    try:
        d = json.loads(Path(path).read_text(encoding="utf-8"))
    except OSError as e:
        raise InputError(f"cannot read '{path}': {e.strerror}") from None
    except json.JSONDecodeError as e:
        raise InputError(f"'{path}' is not valid JSON ({e.msg} at line {e.lineno})") from None
    if not isinstance(d, dict):
        raise InputError(f"'{path}' is not a JSON object")
    if d.get("format") != JSON_FORMAT:
        for key in (None, "arc", "trajectory"):
            src = d if key is None else d.get(key)
            if isinstance(src, dict) and "t" in src and "states" in src:
                try:
                    return _rotating_result("json", {}, np.asarray(src["t"], float), np.asarray(src["states"], float).reshape(-1, 6), path=path)
                except InputError:
                    raise
                except (ValueError, TypeError):
                    break
        if all(k in d for k in ("initial_state", "final_state", "t_final")):
            # a propagation summary (librate propagate --format json): its two end states
            try:
                st = np.array([d["initial_state"], d["final_state"]], float).reshape(2, 6)
                res = _rotating_result("json", {"system": d.get("system", "")},
                                       np.array([0.0, float(d["t_final"])]), st, path=path)
                return res
            except InputError:
                raise
            except (TypeError, ValueError):
                pass
        if isinstance(d.get("points"), list):
            try:
                t = np.array([p["t"] for p in d["points"]], float)
                st = np.array([p["state"] for p in d["points"]], float).reshape(-1, 6)
                return _rotating_result("json", {}, t, st, path=path)
            except InputError:
                raise
            except (KeyError, TypeError, ValueError):
                pass
        raise InputError(f"'{path}' is neither a librate trajectory nor a JSON of rotating states "
                         "(keys t and states)")
    try:
        ts = _frames.time_system(d["time_system"])
        segs = []
        for k, s in enumerate(d["segments"]):
            ep = np.array(s["epochs"], dtype=str)
            st = np.asarray(s["states"], float).reshape(-1, 6)
            if len(ep) != len(st) or not len(ep):
                raise InputError(f"'{path}': segment {k + 1} has {len(ep)} epochs and {len(st)} states")
            tdb = _frames.epochs_from_texts(ep, ts)
            _check_table(path, tdb, st, f"segment {k + 1} state")
            segs.append(FileSegment({"CENTER_NAME": d.get("center_name", ""), "REF_FRAME": d.get("ref_frame", ""),
                                     "TIME_SYSTEM": ts}, ep, tdb, st))
    except (KeyError, TypeError, ValueError) as e:
        if isinstance(e, InputError):
            raise
        raise InputError(f"'{path}': a librate trajectory JSON with a missing or malformed "
                         f"{e if isinstance(e, KeyError) else 'value'} ({type(e).__name__})") from None
    try:
        frame = _frames.FrameSpec.from_dict(d["frame"]) if d.get("frame") else None
    except (KeyError, ValueError, TypeError) as e:
        raise InputError(f"'{path}': the frame description is incomplete ({e})") from None
    mans = tuple((m["epoch"], float(_frames.epochs_from_texts([m["epoch"]], ts)[0]), np.asarray(m["dv_kms"], float),
                  m.get("label", "")) for m in d.get("maneuvers", []))
    return ReadResult("json", {"creation_date": d.get("creation_date"), "originator": d.get("originator")},
                      tuple(segs), ts, frame, mans, d.get("object_name", ""), d.get("object_id", ""))


def read(path, fmt: str | None = None) -> ReadResult:
    """Read any of our formats (by ``fmt``, the suffix, or a look at the first line).

    Parameters
    ----------
    path : str or pathlib.Path
        The file.
    fmt : str, optional
        The format.

    Returns
    -------
    ReadResult
        Header, segments, time system and frame.

    Raises
    ------
    InputError
        A missing file, an unknown format, a malformed file.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> read(write(folder / "a.json", traj)).format
    'json'

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023).; RFC 4180, "Common Format and MIME Type for Comma-Separated Values (CSV) Files" (2005).; RFC 8259, "The JavaScript Object Notation (JSON) Data Interchange Format" (2017).
    """
    p = Path(path)
    if not p.exists():
        raise InputError(f"input file '{path}' does not exist")
    try:
        f = format_of(p, fmt)
    except InputError:
        first = p.read_text(encoding="utf-8", errors="replace").lstrip()[:20]
        f = ("oem" if first.startswith("CCSDS_OEM_VERS") else "json" if first.startswith("{")
             else "xml" if first.startswith("<") else "csv")
    if p.is_dir():
        raise InputError(f"input file '{shown(path)}' is a folder")
    try:
        return {"oem": read_oem, "xml": read_oem_xml, "csv": read_csv, "json": read_json}[f](p)
    except UnicodeDecodeError as e:
        raise InputError(f"'{shown(path)}' is not UTF-8 text (byte {e.start}); a trajectory file is text") from None
    except RecursionError:
        raise InputError(f"'{shown(path)}' is nested too deeply to read") from None


def to_rotating(data: ReadResult, frame: _frames.FrameSpec | None = None) -> tuple:
    """States read from a file -> nondimensional rotating :class:`Segment` s (t in TU from the
    frame's epoch). ``frame`` defaults to the one the file describes.

    Parameters
    ----------
    data : ReadResult
        A file read.
    frame : FrameSpec, optional
        The frame (default: the file's).

    Returns
    -------
    list of Segment
        Nondimensional rotating segments.

    Raises
    ------
    InputError
        A file that does not describe its frame and no ``frame`` given.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> segs = to_rotating(read(write(folder / "a.oem", traj)))
    >>> bool(np.allclose(segs[0].states, traj.segments[0].states, atol=1e-9))
    True

    References
    ----------
    Gómez, G., Llibre, J., Martínez, R. & Simó, C., "Dynamics and Mission Design Near Libration
    Points", vol. I, World Scientific (2001), ch. 1 (from memory).
    """
    spec = frame or data.frame
    segs = []
    for s in data.segments:
        if s.metadata.get("ROTATING_NONDIMENSIONAL"):
            segs.append(Segment(s.tdb_s, s.states))
            continue
        if spec is None:
            raise InputError("the file does not say which CR3BP frame its states are in; give the "
                             "frame (system, epoch, anchoring, axes, centre)")
        t, st = _frames.from_frame(spec, s.tdb_s, s.states)
        segs.append(Segment(t, st))
    return tuple(segs)


def trajectory_from(data: ReadResult, frame: _frames.FrameSpec | None = None) -> Trajectory:
    """A :class:`Trajectory` again from a file read (for conversion between formats/frames).

    Parameters
    ----------
    data : ReadResult
        A file read.
    frame : FrameSpec, optional
        The frame (default: the file's).

    Returns
    -------
    Trajectory
        Ready to be written again.

    Raises
    ------
    InputError
        A file that does not describe its frame and no ``frame`` given.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.time.frames import frame
    >>> spec = frame(system("earth-moon"), 0.0, anchor="circular", center="earth")
    >>> traj = Trajectory(spec, (Segment(np.array([0.0, 0.01]), np.tile([0.8, 0, 0, 0, 0.5, 0], (2, 1))),))
    >>> import tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> trajectory_from(read(write(folder / "a.oem", traj))).time_system
    'TDB'

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023).
    """
    spec = frame or data.frame
    segs = to_rotating(data, spec)
    mans = tuple(Maneuver((tdb - spec.epoch_tdb_s) / spec.system.time_s,
                          _frames.delta_v_from_frame(spec, [tdb], [dv])[0], label)
                 for _, tdb, dv, label in data.maneuvers)
    return Trajectory(spec, segs, data.time_system or "TDB", mans, data.object_name or "LIBRATE DESIGN",
                      data.object_id or "NONE")
