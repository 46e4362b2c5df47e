"""Eclipses, Earth angles and station visibility along a trajectory at its epoch: an exported or
refined arc read from a file, or a stitched route placed at an epoch.

The trajectory's rotating-frame segments (nondimensional, rotating time from the frame's
epoch) are read at any time by cubic Hermite interpolation of position with velocity, one
interpolant per maneuver-free segment (an impulse never smears into its neighbours), and put
on Earth-centred J2000 mean-equator axes by the trajectory's own frame (its anchoring and
epoch; :func:`cr3bp.time.frames.to_frame` with the centre moved to the Earth), the same
mapping as :mod:`.placement` uses for a periodic orbit. The Sun and the Moon come from the
project's ephemeris; passes from :func:`.eclipses.find_passes`, station windows from
:func:`.visibility.windows`. A file written by ``librate export`` of a periodic orbit at an
epoch therefore gives the passes of ``librate shadow --orbit`` at that epoch and phase.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..validate import positive_number
from . import eclipses, visibility
from .phasing import STEP_S, History
from ..time import frames
from ..io import export
from ..io.route import to_export
from ..io.export import MAX_SAMPLES
from .phasing import _bodies
from ..errors import EphemerisSpanError
from ..time.frames import epoch_to_text

#: Systems whose trajectories can be put about the Earth (the Earth is a primary, or inside the secondary).
SYSTEMS = ("earth-moon", "sun-earth")
#: Largest gap (s) between a requested epoch and the trajectory's first/last sample: rounding only.
EDGE_SLACK_S = 1e-3


@dataclass(frozen=True)
class Track:
    """A trajectory at its epoch: rotating segments and the Earth-centred frame they map into.

    Parameters
    ----------
    system : System
        The system of the rotating frame.
    spec : FrameSpec
        The trajectory's frame (anchoring, epoch) with Earth-centred J2000 mean-equator axes.
    segments : tuple
        ``(t_tu (n,), states (n, 6))`` rotating, nondimensional, in time order; one cubic
        Hermite interpolant per segment (a repeated time keeps its first sample, a segment of
        fewer than two samples is dropped).
    label : str, optional
        What the trajectory is (for outputs).

    Raises
    ------
    InputError
        No segment of two or more samples.

    Examples
    --------
    >>> tr = from_file("out/orbit.oem")                       # doctest: +SKIP
    >>> tr.geocentric(tr.start_tdb_s)                         # doctest: +SKIP

    A trajectory without two samples in any segment is refused when built:

    >>> Track(None, None, ((np.array([0.0]), np.zeros((1, 6))),))
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: the trajectory has no segment of two or more samples

    References
    ----------
    Fritsch, F. N. & Carlson, R. E., "Monotone Piecewise Cubic Interpolation", SIAM Journal on
    Numerical Analysis 17(2) (1980) (cubic Hermite interpolation from values and derivatives;
    common practice).
    """

    system: object
    spec: object
    segments: tuple
    label: str = ""

    def __post_init__(self):
        from scipy.interpolate import CubicHermiteSpline   # lazy: heavy library
        splines, starts = [], []
        for t, st in self.segments:
            t = np.asarray(t, dtype=float)
            st = np.asarray(st, dtype=float)
            keep = np.concatenate([[True], np.diff(t) > 0])        # a repeated time: keep the first
            t, st = t[keep], st[keep]
            if t.size < 2:
                continue
            splines.append(CubicHermiteSpline(t, st[:, :3], st[:, 3:], axis=0))
            starts.append(t[0])
        if not splines:
            raise InputError("the trajectory has no segment of two or more samples")
        object.__setattr__(self, "_splines", tuple(splines))
        object.__setattr__(self, "_starts", np.array(starts))

    @property
    def start_tdb_s(self) -> float:
        return self.spec.epoch_tdb_s + float(self._splines[0].x[0]) * self.system.time_s

    @property
    def end_tdb_s(self) -> float:
        return self.spec.epoch_tdb_s + float(self._splines[-1].x[-1]) * self.system.time_s

    def rotating(self, tdb_s) -> np.ndarray:
        """Rotating states (N, 6) at epochs (each from the segment that holds it; at a maneuver
        epoch, the segment that starts there)."""
        t = (np.atleast_1d(np.asarray(tdb_s, dtype=float)) - self.spec.epoch_tdb_s) / self.system.time_s
        k = np.clip(np.searchsorted(self._starts, t, side="right") - 1, 0, len(self._splines) - 1)
        out = np.empty((t.size, 6))
        for j in np.unique(k):
            m = k == j
            sp = self._splines[j]
            tt = np.clip(t[m], sp.x[0], sp.x[-1])
            out[m, :3] = sp(tt)
            out[m, 3:] = sp.derivative()(tt)
        return out

    def geocentric(self, tdb_s) -> np.ndarray:
        """Positions (N, 3) km about the Earth, J2000 mean-equator axes."""
        t = np.atleast_1d(np.asarray(tdb_s, dtype=float))
        t_tu = (t - self.spec.epoch_tdb_s) / self.system.time_s
        return frames.to_frame(self.spec, t_tu, self.rotating(t))[1][:, :3]


def _earth_spec(spec):
    """The frame ``spec`` (its anchoring and epoch) with Earth-centred J2000 mean-equator axes."""
    name = spec.system.name
    if name not in SYSTEMS:
        raise InputError(f"the trajectory is in {name}; eclipses and stations are computed for "
                         f"{' and '.join(SYSTEMS)} only (the Earth and the Moon as occulting bodies)")
    return frames.with_(spec, axes="j2000-equator", center="earth")


def from_file(path, epoch=None, system=None) -> Track:
    """A :class:`Track` from a trajectory file of ``librate export``, ``route``, ``run`` or
    ``refine`` (CCSDS OEM, OEM XML, CSV, JSON; read by :func:`cr3bp.io.export.read`).

    The file's own frame (system, anchoring, epoch) places it. A rotating-frame file without
    an epoch needs ``epoch`` (ISO text or TDB s) and ``system``: it is then anchored to the
    ephemeris at that epoch.

    Parameters
    ----------
    path : str or path-like
        The trajectory file.
    epoch : str or float, optional
        ISO text (Z = UTC) or TDB seconds since J2000 of the file's time 0; only for a
        rotating-frame file without an epoch (refused for a file that sets its own).
    system : str or System, optional
        The system of such a file.

    Returns
    -------
    Track
        The file's segments in time order, labelled by the path.

    Raises
    ------
    InputError   unreadable file, a system other than Earth-Moon or Sun-Earth, no frame, an
                 epoch missing or given twice, a non-dimensional system

    Examples
    --------
    >>> tr = from_file("out/orbit.oem")                       # doctest: +SKIP
    >>> tr = from_file("out/orbit.csv", epoch="2031-03-01T00:00:00Z", system="earth-moon")  # doctest: +SKIP

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023) (the OEM files read).
    """
    data = export.read(path)
    spec = data.frame
    if spec is None:
        rotating = all(s.metadata.get("ROTATING_NONDIMENSIONAL") for s in data.segments)
        if not rotating:
            raise InputError(f"'{path}' does not say which CR3BP frame its states are in")
        if epoch is None or system is None:
            raise InputError(f"'{path}' holds rotating-frame states without an epoch; give the epoch "
                             "(and the system) that its time 0 is")
        spec = frames.frame(system, epoch, anchor="ephemeris", axes="j2000-equator", center="primary")
    elif epoch is not None:
        raise InputError(f"'{path}' sets its own epoch ({frames.epoch_to_text(spec.epoch_tdb_s, 'UTC', 3)} UTC); "
                         "leave out the epoch")
    spec.system.require_dimensional("eclipses at a date")
    segs = export.to_rotating(data, spec)
    segs = sorted(((np.asarray(s.t_tu, float), np.asarray(s.states, float)) for s in segs),
                  key=lambda ts: float(ts[0][0]) if ts[0].size else math.inf)
    return Track(spec.system, _earth_spec(spec), tuple(segs), label=str(path))


def from_route(stitched, epoch, label: str = "") -> Track:
    """A stitched route (:class:`cr3bp.transfers.stitch.StitchedRoute`) with its time 0 at
    ``epoch``, anchored to the ephemeris (the frame of ``librate route --epoch``).

    Parameters
    ----------
    stitched : StitchedRoute
        The route (its system must be Earth-Moon or Sun-Earth and dimensional).
    epoch : str or float
        ISO text (Z = UTC) or TDB seconds since J2000: the route's time 0.
    label : str, optional
        What the route is (default: its nodes joined by arrows).

    Returns
    -------
    Track
        The route's maneuver-free segments (one interpolant each).

    Raises
    ------
    InputError
        A bad epoch, or a system other than Earth-Moon or Sun-Earth.
    EphemerisSpanError
        An epoch outside the ephemeris tables.

    Examples
    --------
    >>> tr = from_route(stitched, "2031-03-01T00:00:00Z")     # doctest: +SKIP

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009) (the ephemeris that anchors the frame).
    """
    spec = frames.frame(stitched.system, epoch, anchor="ephemeris", axes="j2000-equator", center="primary")
    traj = to_export(stitched, spec)
    segs = tuple((np.asarray(s.t_tu, float), np.asarray(s.states, float)) for s in traj.segments)
    return Track(stitched.system, _earth_spec(spec), segs, label=label or " -> ".join(stitched.nodes))


def samples(track: Track, step_s: float = STEP_S, start_tdb_s=None, end_tdb_s=None) -> np.ndarray:
    """Epochs (TDB s) every ``step_s`` over the track (or the part asked for), the last one at
    its end.

    Parameters
    ----------
    track : Track
        The trajectory (only its ``start_tdb_s`` and ``end_tdb_s`` are read).
    step_s : float, optional
        The sample step, s (default :data:`.phasing.STEP_S`).
    start_tdb_s, end_tdb_s : float, optional
        The part asked for, TDB s (default the whole track; :data:`EDGE_SLACK_S` of rounding
        allowed at either end).

    Returns
    -------
    numpy.ndarray
        The epochs, TDB s, increasing.

    Raises
    ------
    InputError
        A span outside the track or empty, a step that is not positive, or more than
        :data:`cr3bp.io.export.MAX_SAMPLES` samples.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> samples(SimpleNamespace(start_tdb_s=0.0, end_tdb_s=1000.0), 300.0)
    array([   0.,  300.,  600.,  900., 1000.])

    References
    ----------
    None: uniform sampling with the end kept (common practice).
    """
    t0 = track.start_tdb_s if start_tdb_s is None else float(start_tdb_s)
    t1 = track.end_tdb_s if end_tdb_s is None else float(end_tdb_s)
    if not (t0 >= track.start_tdb_s - EDGE_SLACK_S and t1 <= track.end_tdb_s + EDGE_SLACK_S and t1 > t0):
        raise InputError("the requested span lies outside the trajectory")
    step_s = positive_number("step (s)", step_s)
    n = int(math.floor((t1 - t0) / step_s * (1 + 1e-12))) + 1
    if n > MAX_SAMPLES:
        raise InputError(f"{n} samples exceed the limit of {MAX_SAMPLES}; use a larger step")
    t = t0 + np.arange(n) * step_s
    if t1 - t[-1] > 1e-6:
        t = np.append(t, t1)
    return t


def geometry(track: Track):
    """The callable :func:`.eclipses.find_passes` needs: positions about the Earth at any epochs.

    Parameters
    ----------
    track : Track
        The trajectory.

    Returns
    -------
    callable
        ``at(tdb_s)`` -> dict of ``spacecraft``, ``sun``, ``moon`` and ``earth`` positions
        (N, 3), km, geocentric J2000 mean-equator axes.

    Raises
    ------
    None
        The callable raises :class:`~cr3bp.errors.EphemerisSpanError` for epochs outside the
        ephemeris tables.

    Examples
    --------
    >>> at = geometry(track)                                  # doctest: +SKIP
    >>> at([track.start_tdb_s])["sun"].shape                  # doctest: +SKIP
    (1, 3)

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2 (conical shadow geometry).
    """

    def at(t):
        t = np.asarray(t, dtype=float)
        sun, moon = _bodies(t)
        sc = track.geocentric(t)
        return {"spacecraft": sc, "sun": sun, "moon": moon, "earth": np.zeros_like(sc)}
    return at


@dataclass(frozen=True)
class Shadows:
    """What :func:`shadows` finds along a track: the passes (as a :class:`.phasing.History` of
    phase 0), the sample epochs, the geocentric positions and the angles there, the station
    windows.

    Parameters
    ----------
    history : History
        The eclipse passes over the track's span.
    tdb_s : numpy.ndarray, shape (N,)
        Sample epochs, TDB s.
    position_km : numpy.ndarray, shape (N, 3)
        Spacecraft positions about the Earth, km, J2000 mean-equator axes.
    sun_earth_spacecraft_deg, moon_earth_spacecraft_deg : numpy.ndarray, shape (N,)
        Angles at the Earth (vertex) between the Sun or the Moon and the spacecraft, deg.
    windows : tuple
        The station windows (:func:`.visibility.windows`).

    Examples
    --------
    >>> from cr3bp.operations.phasing import History
    >>> sh = Shadows(History(0.0, (), 600.0), np.array([0.0, 600.0]),
    ...              np.array([[7000.0, 0.0, 0.0], [0.0, 7000.0, 0.0]]),
    ...              np.array([90.0, 80.0]), np.array([30.0, 40.0]), ())
    >>> sh.range_km
    array([7000., 7000.])
    >>> sh.to_dict()["angles"]["sun_earth_spacecraft_deg"]
    {'min': 80.0, 'max': 90.0}

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2 (conical shadow geometry).
    """

    history: History
    tdb_s: np.ndarray
    position_km: np.ndarray
    sun_earth_spacecraft_deg: np.ndarray
    moon_earth_spacecraft_deg: np.ndarray
    windows: tuple

    @property
    def range_km(self) -> np.ndarray:
        return np.linalg.norm(self.position_km, axis=1)

    def to_dict(self) -> dict:
        return {"passes": [p.to_dict() for p in self.history.passes],
                "totals": eclipses.totals(self.history.passes, self.history.span_s),
                "angles": {"sun_earth_spacecraft_deg": _span(self.sun_earth_spacecraft_deg),
                           "moon_earth_spacecraft_deg": _span(self.moon_earth_spacecraft_deg),
                           "range_to_earth_km": _span(self.range_km)},
                "windows": [w.to_dict() for w in self.windows]}


def _span(a):
    return {"min": float(np.min(a)), "max": float(np.max(a))}


def _angle(r, v):
    cosv = np.einsum("ij,ij->i", r, v) / (np.linalg.norm(r, axis=1) * np.linalg.norm(v, axis=1))
    return np.degrees(np.arccos(np.clip(cosv, -1.0, 1.0)))


def shadows(track: Track, step_s: float = STEP_S, bodies=eclipses.BODIES, stations=()) -> Shadows:
    """Eclipse passes (Earth and Moon, umbra and penumbra), the Sun-Earth-spacecraft and
    Moon-Earth-spacecraft angles and the station windows along ``track``, sampled every
    ``step_s`` (edges of the passes bisected on the geometry; a pass shorter than the step may
    be missed).

    Parameters
    ----------
    track : Track
        The trajectory at its epoch.
    step_s : float, optional
        The sample step, s (default :data:`.phasing.STEP_S`).
    bodies : tuple, optional
        The occulting bodies (default :data:`.eclipses.BODIES`, the Earth and the Moon).
    stations : sequence, optional
        Ground stations whose visibility windows are found (none by default).

    Returns
    -------
    Shadows
        The passes, samples, positions, angles and windows.

    Raises
    ------
    InputError
        A bad step, or a track shorter than two samples.
    EphemerisSpanError
        A track outside the ephemeris tables.

    Examples
    --------
    >>> sh = shadows(from_file("out/orbit.oem"), step_s=120.0)  # doctest: +SKIP
    >>> sh.to_dict()["totals"]["earth umbra"]["passes"]         # doctest: +SKIP

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2 (conical shadow geometry); Vallado, D. A., "Fundamentals of Astrodynamics
    and Applications", 4th ed., Microcosm Press (2013), sec. 4.4 (station visibility;
    from memory).
    """
    t = samples(track, step_s)
    if t.size < 2:
        raise InputError("the trajectory is shorter than two samples; use a smaller step")
    passes = eclipses.find_passes(t, geometry(track), bodies)
    r = track.geocentric(t)
    sun, moon = _bodies(t)
    wins = []
    if stations:
        m = visibility.terrestrial_matrices(t)
        for st in stations:
            wins += visibility.windows(t, r, st, m)
    return Shadows(History(0.0, tuple(passes), float(t[-1] - t[0])), t, r, _angle(r, sun), _angle(r, moon),
                   tuple(wins))


def route_section(stitched, epoch, step_s: float = STEP_S, bodies=eclipses.BODIES) -> dict | None:
    """The eclipse section of a stitched route at ``epoch`` (its time 0), for a report: every
    pass with the leg it starts in (legs split at the route's junction maneuvers), the totals,
    and the Earth angles and range along it. None when the system has no Earth to place about.

    Parameters
    ----------
    stitched : StitchedRoute or None
        The route (None gives None).
    epoch : str or float or None
        The route's time 0: ISO text (Z = UTC) or TDB seconds since J2000 (None gives None).
    step_s : float, optional
        The sample step, s (at most half the route's span is used).
    bodies : tuple, optional
        The occulting bodies (default :data:`.eclipses.BODIES`).

    Returns
    -------
    dict or None
        :meth:`Shadows.to_dict` with each pass's ``leg`` and ``start_day``, and ``epoch_utc``,
        ``span_days``, ``step_s``, ``legs`` and ``model``; a ``not_computed`` reason when the
        route runs past the ephemeris tables; None without a route, an epoch or an Earth.

    Raises
    ------
    InputError
        A bad epoch or step.

    Examples
    --------
    >>> route_section(None, "2031-03-01T00:00:00Z") is None
    True
    >>> sec = route_section(stitched, "2031-03-01T00:00:00Z")  # doctest: +SKIP

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2 (conical shadow geometry).
    """
    if stitched is None or epoch is None or stitched.system.name not in SYSTEMS:
        return None
    try:
        track = from_route(stitched, epoch)
        span = track.end_tdb_s - track.start_tdb_s
        sh = shadows(track, min(step_s, span / 2.0), bodies)
    except EphemerisSpanError as e:       # the route runs past the tables: say so in the report
        return {"model": "not computed", "epoch_utc": str(epoch), "span_days": float(stitched.tof_days),
                "step_s": float(step_s), "legs": 0, "passes": [], "not_computed": str(e)}
    t0 = track.spec.epoch_tdb_s
    joins = sorted(float(m["t_days"]) for m in stitched.maneuvers if m.get("name") == "junction")
    passes = []
    for p in sh.history.passes:
        d = p.to_dict()
        day = (p.start_tdb_s - t0) / 86400.0
        d["leg"] = 1 + sum(1 for j in joins if j <= day + 1e-9)
        d["start_day"] = day
        passes.append(d)
    out = sh.to_dict()
    out["passes"] = passes
    out["epoch_utc"] = str(epoch_to_text(t0, "UTC", 3)) + "Z"
    out["span_days"] = span / 86400.0
    out["step_s"] = float(sh.tdb_s[1] - sh.tdb_s[0]) if sh.tdb_s.size > 1 else 0.0
    out["legs"] = len(joins) + 1
    out["model"] = ("CR3BP route placed at the epoch by the ephemeris-anchored rotating frame; eclipse geometry "
                    "from DE421 positions, conical shadows (Montenbruck & Gill 2000, sec. 3.4.2)")
    return out
