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
    s = str(text).strip().lower()
    scale = 1.0
    for suffix, k in (("deg", 1.0), ("rev", 360.0), ("rad", 180.0 / math.pi)):
        if s.endswith(suffix):
            s, scale = s[: -len(suffix)].strip(), k
            break
    try:
        v = float(s) * scale
    except ValueError:
        raise InputError(f"phase '{text}' is not an angle such as 120deg, 0.25rev or 2.1rad") from None
    if not math.isfinite(v):
        raise InputError(f"phase '{text}' is not finite")
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
    # Earth-centred: the primary in Earth-Moon, the Earth inside the secondary barycentre in Sun-Earth
    center = "earth" if "earth" in frames.BODY_CENTERS.get(system.secondary.name.lower(), ()) else "primary"
    spec = frames.frame(system, epoch, anchor="ephemeris", axes="j2000-equator", center=center)
    grid = np.linspace(0.0, period, int(samples_per_period) + 1)
    seg = export.sample(system, orbit, grid)
    states = np.array(seg.states)
    states[-1] = states[0]            # close the loop exactly (periodic interpolant)
    return PlacedOrbit(system, spec, period, np.asarray(seg.t_tu, dtype=float), states)
