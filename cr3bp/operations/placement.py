"""A periodic orbit placed at a date: geocentric J2000-equator positions at any phase.

The orbit is sampled once over one period with the export sampler
(:func:`cr3bp.io.export.sample`, dense output of the project's integrator) and read at any
rotating time by cubic Hermite interpolation of position with velocity. Starting it at a
``phase`` (degrees of the period) means the state at rotating time 0 (the epoch) is the
orbit's state ``phase / 360`` of a period after its own initial state. Rotating states go
to Earth-centred J2000 mean-equator axes by the ephemeris-anchored frame of
:mod:`cr3bp.time.frames` (``R = l C (rho - rho_c)``), the same mapping as ``librate export
--anchor ephemeris --center primary --frame j2000-equator`` in Earth-Moon; in Sun-Earth the
frame is centred on the Earth-Moon barycentre and the Earth's place about it (DE421) is
subtracted, as ``--center earth`` does there.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import validate
from ..errors import InputError
from ..io import export
from ..time import frames
from ..time.frames import basis, body_offset

#: Samples of one period for the interpolant (about 140 s for the 9:2 NRHO).
SAMPLES_PER_PERIOD = 4000


def parse_phase(text) -> float:
    """An orbit phase as text -> degrees in [0, 360).

    Parameters
    ----------
    text : str or float
        ``"120deg"``, ``"120"`` (degrees), ``"0.25rev"`` or ``"2.1rad"``.

    Returns
    -------
    float
        Degrees in [0, 360).

    Raises
    ------
    InputError
        Text that is not an angle, or not finite.

    Examples
    --------
    >>> parse_phase("0.25rev"), parse_phase("-90deg")
    (90.0, 270.0)

    References
    ----------
    Common practice (angles with their unit written beside them, as ISO 80000-3:2019 writes
    quantities).
    """
    v = validate.angle_deg("phase", text)
    return v % 360.0


@dataclass(frozen=True)
class PlacedOrbit:
    """A periodic orbit, its frame at the epoch and its one-period sample.

    Parameters
    ----------
    system : System
        The system (dimensional).
    spec : FrameSpec
        Ephemeris anchoring, primary (or Earth) centre.
    period_tu : float
        The orbit's period.
    t_tu : numpy.ndarray
        One-period sample times, 0..period.
    states : numpy.ndarray
        Rotating states there, nondimensional.

    Examples
    --------
    >>> from cr3bp import orbit, system
    >>> em = system("earth-moon")
    >>> nrho = orbit(em, "halo L2 south resonance=9:2")                        # doctest: +SKIP
    >>> placed = place(em, nrho, "2031-03-01T00:00:00 TDB")                    # doctest: +SKIP
    >>> placed.geocentric([placed.epoch_tdb_s]).shape                          # doctest: +SKIP
    (1, 3)

    References
    ----------
    Fritsch, F. N. & Carlson, R. E., "Monotone piecewise cubic interpolation", SIAM Journal on
    Numerical Analysis 17, 238 (1980) (cubic Hermite interpolation); the frame of
    :mod:`cr3bp.time.frames`.
    """

    system: object
    spec: object              # cr3bp.time.frames.FrameSpec (ephemeris anchoring, primary centre)
    period_tu: float
    t_tu: np.ndarray          # one-period sample times, 0..period
    states: np.ndarray        # rotating states there, nondimensional

    @property
    def epoch_tdb_s(self) -> float:
        return self.spec.epoch_tdb_s

    def __post_init__(self):
        from scipy.interpolate import CubicHermiteSpline  # lazy: heavy library (scipy)
        spl = CubicHermiteSpline(self.t_tu, self.states[:, :3], self.states[:, 3:], axis=0)
        object.__setattr__(self, "_spline", spl)

    def rotating(self, t_tu, phase_deg: float = 0.0, velocity: bool = False) -> np.ndarray:
        """Rotating positions (N, 3), or states (N, 6) with ``velocity``, at rotating times
        from the epoch, started at ``phase_deg``."""
        tau = np.mod(np.asarray(t_tu, dtype=float) + phase_deg / 360.0 * self.period_tu, self.period_tu)
        pos = self._spline(tau)
        if not velocity:
            return pos
        return np.concatenate([pos, self._spline.derivative()(tau)], axis=-1)

    def frame_basis(self, tdb_s):
        """``(C, l, offset)`` of the anchored frame at epochs (reused across phases); ``offset``
        (N, 3) km is the frame centre's place relative to the secondary barycentre (the Earth
        about the Earth-Moon barycentre in Sun-Earth, :func:`cr3bp.time.frames.body_offset`),
        None when the centre lies on the CR3BP x axis."""
        c, _w, l, _ld = basis(self.spec, tdb_s)
        off = None
        if self.spec.center in ("earth", "moon") and self.spec.center not in (
                n.lower() for n in self.system.names):
            off = body_offset(self.spec, tdb_s)[:, :3]
        return c, l, off

    def geocentric(self, tdb_s, phase_deg: float = 0.0, basis=None) -> np.ndarray:
        """Positions (N, 3) km about the primary, J2000 mean-equator axes."""
        t = np.atleast_1d(np.asarray(tdb_s, dtype=float))
        c, l, off = basis if basis is not None else self.frame_basis(t)
        rho = self.rotating((t - self.epoch_tdb_s) / self.system.time_s, phase_deg)
        rho[:, 0] -= self.spec.center_x
        r = np.einsum("nij,nj->ni", c, l[:, None] * rho)
        return r if off is None else r - off


def place(system, orbit, epoch, samples_per_period: int = SAMPLES_PER_PERIOD) -> PlacedOrbit:
    """Place a periodic orbit (``state``, ``period``) at an epoch.

    Parameters
    ----------
    system : System
        Dimensional, with an ephemeris pair.
    orbit : PeriodicOrbit
        The orbit.
    epoch : str or float
        ISO text or TDB seconds since J2000.
    samples_per_period : int, optional
        Samples of one period for the interpolant.

    Returns
    -------
    PlacedOrbit
        The orbit, its frame and its sample.

    Raises
    ------
    InputError
        A system without units, a non-positive period, an epoch outside the ephemeris.

    Examples
    --------
    >>> from cr3bp import orbit, system
    >>> em = system("earth-moon")
    >>> nrho = orbit(em, "halo L2 south resonance=9:2")                        # doctest: +SKIP
    >>> placed = place(em, nrho, "2031-03-01T00:00:00 TDB")                    # doctest: +SKIP

    References
    ----------
    Gómez, G., Llibre, J., Martínez, R. & Simó, C., "Dynamics and Mission Design Near Libration
    Points", vol. I, World Scientific (2001), ch. 1 (the instantaneous frame, from memory).
    """
    system.require_dimensional("an orbit placed at a date")
    period = validate.positive_number("orbit period (TU)", orbit.period)
    spec = _earth_frame(system, epoch)
    grid = np.linspace(0.0, period, int(samples_per_period) + 1)
    seg = export.sample(system, orbit, grid)
    states = np.array(seg.states)
    states[-1] = states[0]            # close the loop exactly (periodic interpolant)
    return PlacedOrbit(system, spec, period, np.asarray(seg.t_tu, dtype=float), states)


def _earth_frame(system, epoch):
    """The ephemeris-anchored frame at ``epoch``, Earth-centred: the primary in Earth-Moon, the
    Earth inside the secondary barycentre in Sun-Earth."""
    center = "earth" if "earth" in frames.BODY_CENTERS.get(system.secondary.name.lower(), ()) else "primary"
    return frames.frame(system, epoch, anchor="ephemeris", axes="j2000-equator", center=center)


#: Samples of one stroboscopic time for a placed torus's interpolant (about 280 s for a
#: quasi-halo about the 9:2 NRHO; cubic Hermite error there well under 100 m).
TORUS_SAMPLES_PER_PERIOD = 2000


@dataclass(frozen=True)
class PlacedTorus(PlacedOrbit):
    """A trajectory on a torus from a torus phase, placed at a date (the torus never repeats,
    so it is sampled over the whole span plus one stroboscopic time).

    ``phase_deg`` of :meth:`rotating` (and of :mod:`.phasing`) moves the start along the flow:
    phase ``p`` starts the trajectory ``p / 360`` of a stroboscopic time later, at the torus
    phase ``(theta0 + p, theta1 + rho p / 360)`` (``rho`` the torus's rotation), as an orbit's
    phase moves its start along the orbit.

    Parameters
    ----------
    system, spec
        As :class:`PlacedOrbit`.
    period_tu : float
        The torus's stroboscopic time.
    t_tu : numpy.ndarray
        Sample times, 0..span + period.
    states : numpy.ndarray
        Rotating states there (:func:`cr3bp.tori.trajectory.sample`).
    torus_phase_deg : tuple of float
        ``(theta0, theta1)`` of the first sample, degrees.

    Examples
    --------
    >>> placed = place_torus(em, torus, "2031-03-01T00:00:00 TDB", 30.0)      # doctest: +SKIP

    References
    ----------
    Olikara, Z. P. & Scheeres, D. J., "Numerical method for computing quasi-periodic orbits and
    their stability in the restricted three-body problem", AAS 12-361 (2012), sec. II.
    """

    torus_phase_deg: tuple = (0.0, 0.0)

    def rotating(self, t_tu, phase_deg: float = 0.0, velocity: bool = False) -> np.ndarray:
        """Rotating positions (N, 3), or states (N, 6), at rotating times from the epoch, the
        start moved ``phase_deg / 360`` of a stroboscopic time along the flow."""
        tau = np.asarray(t_tu, dtype=float) + phase_deg / 360.0 * self.period_tu
        if tau.size and (tau.min() < self.t_tu[0] - 1e-9 or tau.max() > self.t_tu[-1] + 1e-9):
            days = self.system.time_days
            raise InputError(f"times {tau.min() * days:.6g}..{tau.max() * days:.6g} d lie outside the placed "
                             f"torus trajectory's 0..{self.t_tu[-1] * days:.6g} d")
        pos = self._spline(tau)
        if not velocity:
            return pos
        return np.concatenate([pos, self._spline.derivative()(tau)], axis=-1)


def place_torus(system, torus, epoch, span_tu: float, torus_phase_deg=(0.0, 0.0),
                samples_per_period: int = TORUS_SAMPLES_PER_PERIOD) -> PlacedTorus:
    """Place the trajectory on ``torus`` from ``torus_phase_deg`` at an epoch, over ``span_tu``.

    The trajectory is :func:`cr3bp.tori.trajectory.sample` (the one ``librate torus --export``
    and a scenario's torus export write) over ``span_tu`` plus one stroboscopic time (the room
    a phase scan moves the start over), read by cubic Hermite interpolation.

    Parameters
    ----------
    system : System
        Dimensional, with an ephemeris pair.
    torus : Torus
        The torus (:mod:`cr3bp.tori`).
    epoch : str or float
        ISO text or TDB seconds since J2000.
    span_tu : float
        The span, TU (at most 20 years).
    torus_phase_deg : (float, float), optional
        ``(theta0, theta1)`` at the epoch, degrees.
    samples_per_period : int, optional
        Samples of one stroboscopic time.

    Returns
    -------
    PlacedTorus
        The placed trajectory.

    Raises
    ------
    InputError
        A system without units, a bad span or phase, an epoch outside the ephemeris.

    Examples
    --------
    >>> placed = place_torus(em, torus, "2031-03-01T00:00:00 TDB", 30.0, (0.0, 90.0))  # doctest: +SKIP

    References
    ----------
    Olikara, Z. P. & Scheeres, D. J., "Numerical method for computing quasi-periodic orbits and
    their stability in the restricted three-body problem", AAS 12-361 (2012), sec. II.
    """
    from ..tori.trajectory import sample  # lazy: only for tori
    system.require_dimensional("a torus placed at a date")
    period = validate.positive_number("stroboscopic time (TU)", torus.stroboscopic_time)
    span_tu = validate.number_in("span (d)", float(span_tu) * system.time_days, 0.0,
                                 20 * 365.25, open_lo=True) / system.time_days
    ph = validate.numbers("torus phase", torus_phase_deg, 2, "THETA0,THETA1 (degrees)")
    spec = _earth_frame(system, epoch)
    end = span_tu + period
    n = int(math.ceil(end / period * int(samples_per_period)))
    grid = np.linspace(0.0, end, n + 1)
    seg = sample(torus, grid, tuple(math.radians(p) for p in ph))
    return PlacedTorus(system, spec, period, np.asarray(seg.t_tu, dtype=float), np.asarray(seg.states),
                       (float(ph[0]), float(ph[1])))


def with_epoch(placed, epoch_tdb_s: float):
    """The same placed orbit or torus with its frame at another epoch (the same rotating
    sample: rotating time 0 is now ``epoch_tdb_s``).

    Parameters
    ----------
    placed : PlacedOrbit or PlacedTorus
        The placed orbit.
    epoch_tdb_s : float
        The new epoch, TDB seconds since J2000.

    Returns
    -------
    PlacedOrbit or PlacedTorus
        Of the same kind.

    Raises
    ------
    InputError
        An epoch outside the ephemeris (when used).

    Examples
    --------
    >>> later = with_epoch(placed, placed.epoch_tdb_s + 86400.0)     # doctest: +SKIP

    References
    ----------
    Gómez, G., Llibre, J., Martínez, R. & Simó, C., "Dynamics and Mission Design Near Libration
    Points", vol. I, World Scientific (2001), ch. 1 (the instantaneous frame, from memory).
    """
    from dataclasses import replace  # lazy: used by this helper only
    return replace(placed, spec=frames.with_(placed.spec, epoch_tdb_s=float(epoch_tdb_s)))
