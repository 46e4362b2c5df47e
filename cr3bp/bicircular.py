"""The bicircular restricted four-body problem (BCR4BP): the Earth-Moon CR3BP with the Sun on
a circle about the Earth-Moon barycentre, and propagation in it.

Frame and units are the Earth-Moon system's (:mod:`cr3bp.systems`: barycentric rotating
frame, Earth at ``x = -mu``, Moon at ``x = 1 - mu``, LU = Earth-Moon distance, TU = 1 / mean
motion). The Sun moves in the Earth-Moon plane at distance ``a_s`` and angle
``theta(t) = theta_0 + omega_s t`` from the +x axis (from the barycentre towards the Moon);
``theta_0`` is :attr:`BicircularSystem.sun_phase`, the Sun's angle at ``t = 0``: 0 at new
moon (Sun beyond the Moon), pi at full moon. Equations (Huang, *Very restricted four-body
problem*, NASA TN D-501, 1960; Simo, Gomez, Jorba & Masdemont, *The bicircular model near
the triangular libration points of the RTBP*, 1995; in the form of Boudad, Howell & Davis,
*Dynamics of synodic resonant near rectilinear halo orbits in the bicircular four-body
problem*, Adv. Space Res. 66, 2020, section 2 -- all from memory)::

    x'' - 2 y' = dU/dx,   y'' + 2 x' = dU/dy,   z'' = dU/dz
    U = (x^2 + y^2)/2 + (1 - mu)/r_1 + mu/r_2 + m_s/r_s - m_s (x cos theta + y sin theta) / a_s^2
    r_s = |(x - a_s cos theta, y - a_s sin theta, z)|

with ``m_s`` = Sun mass / (Earth + Moon mass) and ``omega_s = sqrt((1 + m_s) / a_s^3) - 1``
(the Sun-barycentre mean motion in Earth-Moon units, less the frame's rotation; negative).
Simo et al. write the Sun at ``(a_s cos(w t), -a_s sin(w t))`` with ``w = -omega_s > 0``:
the same motion. The model is not coherent (the Sun's circle ignores the Earth-Moon pair,
the Earth-Moon circle ignores the Sun; the Moon's 5 degree inclination and both
eccentricities are left out): a step between the CR3BP and the ephemeris model, nothing more.

The compiled right-hand side and variational equations are in
:mod:`cr3bp.bicircular_kernels` (modes ``MODE_BICIRCULAR``/``MODE_BICIRCULAR_STM`` of the
project's integrator, :mod:`cr3bp.integrate.dop853`).

Constants: the Sun's and the Earth-Moon GMs from ``data/systems.toml``
(:func:`cr3bp.systems.body`), the astronomical unit from :data:`cr3bp.constants.AU_KM` (IAU 2012
Resolution B2) for the Sun-barycentre distance, the Earth-Moon distance of the system
(384 400 km for ``earth-moon``). With those, ``m_s = 328 900.56``, ``a_s = 389.17``,
``omega_s = -0.925 30``; Boudad et al. (2020) quote 328 900.5, 388.81 and -0.925 195 from a
384 748 km length unit (from memory; ``tests/test_bicircular.py`` checks both).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from . import systems
from .constants import AU_KM, J2000_JD, SECONDS_PER_DAY
from .dynamics import jacobi
from .errors import InputError
from .integrate.modes import MODE_BICIRCULAR, MODE_BICIRCULAR_STM
from .integrate.propagate import propagate as _propagate, propagate_batch as _batch
from .integrate.status import DEFAULT_MAX_STEPS
from .time import ephemeris
from .time.frames import epoch_from_text
from .time.scales import Epoch
from .validate import finite_number, number_in

#: Status of a default-built model, shown by ``to_dict`` (where its numbers come from).
SOURCE = ("equations: Boudad, Howell & Davis, Adv. Space Res. 66, 2020, section 2 (from memory); "
          "Sun GM and Earth+Moon GM: data/systems.toml; Sun-barycentre distance: 1 au, IAU 2012 "
          "Resolution B2; omega_s = sqrt((1 + m_s)/a_s^3) - 1")
_TWO_PI = 2.0 * math.pi


@dataclass(frozen=True)
class BicircularSystem:
    """An Earth-Moon system with the Sun on a circle about its barycentre.

    Build the Earth-Moon-Sun one with :func:`bicircular_system`. Attribute access it does not
    define falls through to :attr:`system` (``mu``, ``length_km``, ``km()``, ``days()``,
    ``radii``...), so an :class:`~cr3bp.integrate.Arc` holding it reads like one in the CR3BP.

    Attributes
    ----------
    system : System            the Earth-Moon CR3BP system (frame and units)
    sun_mass_ratio : float     m_s, Sun mass / (Earth + Moon mass)
    sun_distance : float       a_s, Sun-barycentre distance, LU
    sun_rate : float           omega_s, the Sun's angular rate in the rotating frame, rad/TU
                               (negative: clockwise seen from +z)
    sun_phase : float          theta_0, the Sun's angle from +x at t = 0, rad
    epoch_tdb_s : float or None  the date of t = 0 (TDB seconds since J2000), when the phase
                               came from the ephemeris (:func:`sun_phase_at`)
    source : str

    Parameters
    ----------
    system, sun_mass_ratio, sun_distance, sun_rate, sun_phase, epoch_tdb_s, source
        The attributes above.

    Raises
    ------
    InputError
        No System, or a non-finite or negative parameter, or the Sun within 2 LU.

    Examples
    --------
    >>> from cr3bp.bicircular import bicircular_system
    >>> m = bicircular_system("earth-moon")
    >>> round(m.synodic_period_days, 3), m.name
    (29.487, 'earth-moon bicircular')

    References
    ----------
    .. [1] S.-S. Huang, "Very restricted four-body problem", NASA TN D-501, 1960; C. Simo,
       G. Gomez, A. Jorba and J. Masdemont, "The bicircular model near the triangular libration
       points of the RTBP", 1995; K. K. Boudad, K. C. Howell and D. C. Davis, "Dynamics of
       synodic resonant near rectilinear halo orbits in the bicircular four-body problem",
       *Advances in Space Research* 66, 2020, section 2 (all from memory).
    """

    system: object
    sun_mass_ratio: float
    sun_distance: float
    sun_rate: float
    sun_phase: float = 0.0
    epoch_tdb_s: float | None = None
    source: str = ""

    def __post_init__(self):
        mu = getattr(self.system, "mu", None)
        if mu is None:
            raise InputError("a bicircular model needs the System of its two primaries")
        number_in("sun_mass_ratio", self.sun_mass_ratio, 0.0)
        a_s = finite_number("sun_distance", self.sun_distance)
        finite_number("sun_rate", self.sun_rate)
        finite_number("sun_phase", self.sun_phase)
        if self.epoch_tdb_s is not None:
            finite_number("epoch_tdb_s", self.epoch_tdb_s)
        if a_s <= 2.0:  # a physical rule (the Sun outside the primaries' orbit), kept here
            raise InputError(f"sun_distance = {a_s!r} LU must exceed 2 LU (the Sun is far "
                             "outside the primaries' orbit)")

    def __getattr__(self, name):
        if name.startswith("__") or name == "system":
            raise AttributeError(name)
        return getattr(self.system, name)

    @property
    def name(self) -> str:
        return f"{self.system.name} bicircular"

    @property
    def params(self) -> np.ndarray:
        """Parameter vector of the compiled kernels: ``[mu, m_s, a_s, omega_s, theta_0]``."""
        return np.array([self.system.mu, self.sun_mass_ratio, self.sun_distance, self.sun_rate,
                         self.sun_phase], dtype=np.float64)

    @property
    def synodic_period(self) -> float:
        """The Sun's period in the rotating frame, 2 pi / |omega_s|, TU."""
        return _TWO_PI / abs(self.sun_rate) if self.sun_rate else math.inf

    @property
    def synodic_period_days(self) -> float:
        return self.system.days(self.synodic_period)

    @property
    def sun_phase_deg(self) -> float:
        """:attr:`sun_phase` in degrees, in [0, 360)."""
        return math.degrees(self.sun_phase) % 360.0

    def sun_angle(self, t):
        """The Sun's angle theta(t) = theta_0 + omega_s t, rad (t in TU)."""
        return self.sun_phase + self.sun_rate * np.asarray(t, dtype=float)

    def sun_position(self, t) -> np.ndarray:
        """The Sun's position at ``t`` (TU): (3,) or (N, 3), LU."""
        th = self.sun_angle(t)
        return np.stack([self.sun_distance * np.cos(th), self.sun_distance * np.sin(th),
                         np.zeros_like(th)], axis=-1)

    def with_phase(self, sun_phase: float) -> "BicircularSystem":
        """The same model with the Sun at ``sun_phase`` (rad) at t = 0 and no epoch."""
        return dataclasses.replace(self, sun_phase=float(sun_phase), epoch_tdb_s=None)

    def to_dict(self) -> dict:
        d = {
            "model": "bicircular",
            "system": self.system.to_dict(),
            "sun_mass_ratio": self.sun_mass_ratio,
            "sun_distance_lu": self.sun_distance,
            "sun_rate_rad_per_tu": self.sun_rate,
            "sun_phase_rad": self.sun_phase,
            "sun_phase_deg": self.sun_phase_deg,
            "epoch_tdb_s": self.epoch_tdb_s,
            "source": self.source,
        }
        if self.system.dimensional:
            d["sun_distance_km"] = self.system.km(self.sun_distance)
            d["synodic_period_days"] = self.synodic_period_days
        return d


def sun_parameters(system) -> tuple[float, float, float]:
    """``(m_s, a_s, omega_s)`` of the Sun for an Earth-Moon ``system``: the Sun's GM over the
    primaries' GMs (``data/systems.toml``), 1 au (:data:`cr3bp.constants.AU_KM`) over the
    system's length unit, and ``sqrt((1 + m_s) / a_s^3) - 1``.

    Parameters
    ----------
    system : System
        A dimensional system with named primaries.

    Returns
    -------
    (float, float, float)
        m_s, a_s (LU), omega_s (rad/TU).

    Raises
    ------
    InputError
        A system without named primaries, masses and units.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.bicircular import sun_parameters
    >>> [round(v, 3) for v in sun_parameters(system("earth-moon"))]
    [328900.56, 389.172, -0.925]

    References
    ----------
    .. [1] S.-S. Huang, "Very restricted four-body problem", NASA TN D-501, 1960; C. Simo,
       G. Gomez, A. Jorba and J. Masdemont, "The bicircular model near the triangular libration
       points of the RTBP", 1995; K. K. Boudad, K. C. Howell and D. C. Davis, "Dynamics of
       synodic resonant near rectilinear halo orbits in the bicircular four-body problem",
       *Advances in Space Research* 66, 2020, section 2 (all from memory).
    """
    if system.primary is None or system.secondary is None or not system.dimensional:
        raise InputError(f"system '{system.name}' has no named primaries with masses and units; "
                         "the Sun's mass ratio and distance cannot be formed")
    gm_sun = systems.body("sun").gm_km3_s2
    m_s = gm_sun / (system.primary.gm_km3_s2 + system.secondary.gm_km3_s2)
    a_s = AU_KM / system.length_km
    return m_s, a_s, math.sqrt((1.0 + m_s) / a_s ** 3) - 1.0


def bicircular_system(system="earth-moon", *, sun_phase=0.0, epoch=None) -> BicircularSystem:
    """The Earth-Moon-Sun bicircular model.

    Parameters
    ----------
    system : str or System
        The Earth-Moon system (only a system whose primaries are the Earth and the Moon is
        accepted: the Sun's distance is 1 au from their barycentre).
    sun_phase : float
        The Sun's angle from +x at t = 0, rad (0: new moon, pi: full moon).
    epoch : str or float, optional
        A date for t = 0 (ISO 8601 text, UTC unless it names its scale, or TDB seconds since
        J2000): the phase is then the Sun's angle at that date from the ephemeris
        (:func:`sun_phase_at`) and ``sun_phase`` must be left at 0.

    Returns
    -------
    BicircularSystem

    Raises
    ------
    InputError
        Another system, a non-finite phase, both a phase and an epoch, a bad epoch.

    Examples
    --------
    >>> from cr3bp.bicircular import bicircular_system
    >>> round(bicircular_system("earth-moon", sun_phase=3.141592653589793).sun_phase_deg, 6)
    180.0
    >>> bicircular_system("sun-earth")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: the bicircular model is set up for the earth-moon system only; got 'sun-earth'

    References
    ----------
    .. [1] S.-S. Huang, "Very restricted four-body problem", NASA TN D-501, 1960; C. Simo,
       G. Gomez, A. Jorba and J. Masdemont, "The bicircular model near the triangular libration
       points of the RTBP", 1995; K. K. Boudad, K. C. Howell and D. C. Davis, "Dynamics of
       synodic resonant near rectilinear halo orbits in the bicircular four-body problem",
       *Advances in Space Research* 66, 2020, section 2 (all from memory).
    """
    sys_ = systems.system(system) if isinstance(system, str) else system
    names = (getattr(sys_.primary, "name", None), getattr(sys_.secondary, "name", None))
    if names != ("earth", "moon"):
        raise InputError(f"the bicircular model is set up for the earth-moon system only; got "
                         f"'{sys_.name}'")
    phase = finite_number("sun_phase", sun_phase)
    m_s, a_s, w_s = sun_parameters(sys_)
    epoch_s = None
    if epoch is not None:
        if phase != 0.0:
            raise InputError("give the Sun's phase or an epoch, not both")
        epoch_s = _epoch_seconds(epoch)
        phase = sun_phase_at(epoch_s, sys_)
    return BicircularSystem(sys_, m_s, a_s, w_s, phase, epoch_s, SOURCE)


# ---- the Sun's phase from the ephemeris -----------------------------------------------

def _epoch_seconds(epoch) -> float:
    if isinstance(epoch, str):
        return epoch_from_text(epoch)
    return finite_number("epoch", epoch)


def sun_angles_at(epoch, system="earth-moon") -> tuple[float, float]:
    """The Sun's direction in the Earth-Moon rotating frame at a date, from the ephemeris
    (:func:`cr3bp.time.ephemeris.state`): ``(phase, elevation)`` in rad.

    The frame at the date: x from the Earth towards the Moon, z along the Moon's geocentric
    angular momentum r x v, y = z x x (the instantaneous rotating frame); the Sun's direction
    is taken from the Earth-Moon barycentre. ``phase`` is its angle from +x in the x-y plane,
    in [0, 2 pi); ``elevation`` its angle out of that plane (within about +-5.3 degrees, the
    Moon's orbit's inclination to the ecliptic; the bicircular model sets it to 0).

    ``epoch``: ISO 8601 text (UTC unless it names its scale) or TDB seconds since J2000.

    Parameters
    ----------
    epoch : str or float
    system : str or System
        The Earth-Moon system.

    Returns
    -------
    (float, float)
        phase, elevation, rad.

    Raises
    ------
    InputError
        Another system, or a bad epoch.

    Examples
    --------
    >>> from cr3bp.bicircular import sun_angles_at
    >>> [round(v, 4) for v in sun_angles_at("2031-03-01T00:00:00 TDB")]
    [4.7447, -0.0873]

    References
    ----------
    .. [1] Common practice: the instantaneous Earth-Moon rotating frame (x along the Moon's
       geocentric position, z along its angular momentum), with the ephemeris of
       :mod:`cr3bp.time.ephemeris`.
    """
    sys_ = systems.system(system) if isinstance(system, str) else system
    if getattr(sys_.secondary, "name", None) != "moon":
        raise InputError(f"the Sun's phase is defined for the earth-moon system; got '{sys_.name}'")
    t = _epoch_seconds(epoch)
    day = math.floor(t / SECONDS_PER_DAY)
    ep = Epoch.from_jd(J2000_JD + day, (t - day * SECONDS_PER_DAY) / SECONDS_PER_DAY, "tdb")
    moon = np.asarray(ephemeris.state("moon", ep, "earth", "j2000-equator"), dtype=float).ravel()
    sun = np.asarray(ephemeris.position("sun", ep, "emb", "j2000-equator"), dtype=float).ravel()
    x = moon[:3] / np.linalg.norm(moon[:3])
    z = np.cross(moon[:3], moon[3:6])
    z /= np.linalg.norm(z)
    y = np.cross(z, x)
    u = sun / np.linalg.norm(sun)
    phase = math.atan2(float(u @ y), float(u @ x)) % _TWO_PI
    elevation = math.asin(max(-1.0, min(1.0, float(u @ z))))
    return phase, elevation


def sun_phase_at(epoch, system="earth-moon") -> float:
    """The Sun's angle from +x in the Earth-Moon rotating frame at a date, rad in [0, 2 pi)
    (:func:`sun_angles_at`).

    Parameters
    ----------
    epoch : str or float
    system : str or System

    Returns
    -------
    float

    Raises
    ------
    InputError
        Another system, or a bad epoch.

    Examples
    --------
    >>> from cr3bp.bicircular import sun_phase_at
    >>> round(sun_phase_at("2031-03-01T00:00:00 TDB"), 4)
    4.7447

    References
    ----------
    .. [1] Common practice (see :func:`sun_angles_at`).
    """
    return sun_angles_at(epoch, system)[0]


# ---- array-level functions -----------------------------------------------------------

def _model(bsys):
    if not isinstance(bsys, BicircularSystem):
        raise InputError(f"expected a BicircularSystem, got {type(bsys).__name__}")
    return (MODE_BICIRCULAR, MODE_BICIRCULAR_STM, bsys.params)


def acceleration(bsys: BicircularSystem, t: float, state) -> np.ndarray:
    """Time derivative of one 6-state at time ``t`` (TU), from the compiled kernel.

    Parameters
    ----------
    bsys : BicircularSystem
    t : float
        TU.
    state : array (6,)
        LU and LU/TU.

    Returns
    -------
    ndarray (6,)

    Raises
    ------
    InputError
        ``bsys`` is not a BicircularSystem.

    Examples
    --------
    >>> from cr3bp.bicircular import bicircular_system
    >>> m = bicircular_system("earth-moon")
    >>> from cr3bp.bicircular import acceleration
    >>> acceleration(m, 0.0, [0.8, 0, 0, 0, 0.3, 0]).round(6).tolist()
    [0.0, 0.3, 0.0, 0.255613, 0.0, -0.0]

    References
    ----------
    .. [1] S.-S. Huang, "Very restricted four-body problem", NASA TN D-501, 1960; C. Simo,
       G. Gomez, A. Jorba and J. Masdemont, "The bicircular model near the triangular libration
       points of the RTBP", 1995; K. K. Boudad, K. C. Howell and D. C. Davis, "Dynamics of
       synodic resonant near rectilinear halo orbits in the bicircular four-body problem",
       *Advances in Space Research* 66, 2020, section 2 (all from memory).
    """
    from .bicircular_kernels import eom  # lazy: heavy library (numba, via cr3bp.bicircular_kernels); compiled (numba): loaded on first use
    out = np.empty(6)
    eom(float(t), np.ascontiguousarray(state, dtype=float)[:6].copy(), _model(bsys)[2], out)
    return out


def _sun_potential(bsys, t, states):
    """m_s (1/r_s - 1/a_s - (x cos theta + y sin theta)/a_s^2): the Sun's part of U less the
    constant m_s / a_s, summed without cancelling the first-order terms."""
    s = np.atleast_2d(np.asarray(states, dtype=float))
    th = np.asarray(bsys.sun_angle(t), dtype=float)
    a = bsys.sun_distance
    xs, ys = a * np.cos(th), a * np.sin(th)
    x, y, z = s[:, 0], s[:, 1], s[:, 2]
    rr = x * x + y * y + z * z
    rdot = x * xs + y * ys
    rs = np.sqrt((x - xs) ** 2 + (y - ys) ** 2 + z * z)
    # 1/r_s - 1/a = (a^2 - r_s^2) / (a r_s (a + r_s)) = -(rr - 2 rdot) / (a r_s (a + r_s))
    return bsys.sun_mass_ratio * (-(rr - 2.0 * rdot) / (a * rs * (a + rs)) - rdot / a ** 3)


def hamiltonian(bsys: BicircularSystem, t, states):
    """``H = 2 U - v^2 - 2 m_s / a_s`` of one state (6,) or many (N, 6) at time(s) ``t``.

    The Jacobi-like integral of the CR3BP extended by the Sun's potential (Boudad et al.
    2020, section 2, from memory), less the constant ``2 m_s / a_s`` (about 1690) so that it
    stays near the Jacobi constant and keeps its digits. It is NOT conserved: its rate is
    :func:`hamiltonian_rate`. With ``m_s = 0`` it is the Jacobi constant.

    Parameters
    ----------
    bsys : BicircularSystem
    t : float or array
        TU.
    states : array (6,) or (N, 6)

    Returns
    -------
    float or ndarray (N,)

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.bicircular import bicircular_system
    >>> m = bicircular_system("earth-moon")
    >>> from cr3bp.bicircular import hamiltonian
    >>> round(hamiltonian(m, 0.0, [0.8, 0, 0, 0, 0.3, 0]), 6)
    3.119198

    References
    ----------
    .. [1] S.-S. Huang, "Very restricted four-body problem", NASA TN D-501, 1960; C. Simo,
       G. Gomez, A. Jorba and J. Masdemont, "The bicircular model near the triangular libration
       points of the RTBP", 1995; K. K. Boudad, K. C. Howell and D. C. Davis, "Dynamics of
       synodic resonant near rectilinear halo orbits in the bicircular four-body problem",
       *Advances in Space Research* 66, 2020, section 2 (all from memory).
    """
    s = np.asarray(states, dtype=float)
    flat = np.atleast_2d(s)
    h = np.asarray(jacobi(bsys.system.mu, flat[:, :6]), dtype=float) + 2.0 * _sun_potential(bsys, t, flat)
    return float(h[0]) if s.ndim == 1 else h


def hamiltonian_rate(bsys: BicircularSystem, t, states):
    """dH/dt along a trajectory: ``2 dU/dt = 2 omega_s m_s (x sin theta - y cos theta)
    (1/a_s^2 - a_s/r_s^3)`` (the partial derivative of U in time; the Coriolis force does
    no work).

    Parameters
    ----------
    bsys : BicircularSystem
    t : float or array
        TU.
    states : array (6,) or (N, 6)

    Returns
    -------
    float or ndarray (N,)
        Per TU.

    Raises
    ------
    None

    Examples
    --------
    On the Sun-Earth line (Sun phase 0, the state on the x axis) the rate is zero:

    >>> from cr3bp.bicircular import bicircular_system
    >>> m = bicircular_system("earth-moon")
    >>> from cr3bp.bicircular import hamiltonian_rate
    >>> hamiltonian_rate(m, 0.0, [0.8, 0, 0, 0, 0.3, 0]), round(hamiltonian_rate(m, 0.3, [0.8, 0, 0, 0, 0.3, 0]), 6)
    (0.0, -0.005246)

    References
    ----------
    .. [1] S.-S. Huang, "Very restricted four-body problem", NASA TN D-501, 1960; C. Simo,
       G. Gomez, A. Jorba and J. Masdemont, "The bicircular model near the triangular libration
       points of the RTBP", 1995; K. K. Boudad, K. C. Howell and D. C. Davis, "Dynamics of
       synodic resonant near rectilinear halo orbits in the bicircular four-body problem",
       *Advances in Space Research* 66, 2020, section 2 (all from memory).
    """
    s = np.asarray(states, dtype=float)
    flat = np.atleast_2d(s)
    th = np.asarray(bsys.sun_angle(t), dtype=float)
    a = bsys.sun_distance
    x, y, z = flat[:, 0], flat[:, 1], flat[:, 2]
    rs2 = (x - a * np.cos(th)) ** 2 + (y - a * np.sin(th)) ** 2 + z * z
    du = bsys.sun_mass_ratio * (x * np.sin(th) - y * np.cos(th)) * (1.0 / a ** 2 - a / (rs2 * np.sqrt(rs2)))
    r = 2.0 * bsys.sun_rate * du
    return float(r[0]) if s.ndim == 1 else r


# ---- propagation ---------------------------------------------------------------------

def propagate(bsys: BicircularSystem, state, t_final, stm=False, rtol=1e-12, atol=1e-12,
              events=(), t_eval=None, *, t0=0.0, max_step=None, max_steps=None, first_step=None):
    """Propagate one state in the bicircular model, optionally with its STM.

    The project's compiled Dormand-Prince 8(5,3) integrator (Hairer, Norsett & Wanner,
    *Solving ODE I*, 2nd ed., 1993, section II.5) on the bicircular right-hand side; same
    arguments, events and errors as :func:`cr3bp.integrate.propagate`. The model depends on
    time: ``t0`` is where the Sun stands at ``theta_0 + omega_s t0``.

    Parameters
    ----------
    bsys : BicircularSystem
    state, t_final, stm, rtol, atol, events, t_eval, t0, max_step, max_steps, first_step
        As for :func:`cr3bp.integrate.propagate`.

    Returns
    -------
    Arc
        Its ``system`` is ``bsys``; ``stm`` is Phi(t_end, t0) when asked for.

    Raises
    ------
    InputError
        ``bsys`` is not a BicircularSystem, or a bad argument.
    ConvergenceError
        As for :func:`cr3bp.integrate.propagate`.

    Examples
    --------
    >>> from cr3bp.bicircular import bicircular_system
    >>> m = bicircular_system("earth-moon")
    >>> from cr3bp.bicircular import propagate
    >>> arc = propagate(m, [0.8, 0, 0, 0, 0.3, 0], 1.0)
    >>> arc.status, arc.system.name
    ('time', 'earth-moon bicircular')

    References
    ----------
    .. [1] S.-S. Huang, "Very restricted four-body problem", NASA TN D-501, 1960; C. Simo,
       G. Gomez, A. Jorba and J. Masdemont, "The bicircular model near the triangular libration
       points of the RTBP", 1995; K. K. Boudad, K. C. Howell and D. C. Davis, "Dynamics of
       synodic resonant near rectilinear halo orbits in the bicircular four-body problem",
       *Advances in Space Research* 66, 2020, section 2 (all from memory).
    """
    model = _model(bsys)
    arc = _propagate(bsys.system, state, t_final, stm=stm, rtol=rtol, atol=atol, events=events,
                     t_eval=t_eval, t0=t0, max_step=max_step,
                     max_steps=DEFAULT_MAX_STEPS if max_steps is None else max_steps,
                     first_step=first_step, model=model)
    return dataclasses.replace(arc, system=bsys)


def propagate_batch(bsys: BicircularSystem, states, t_final, rtol=1e-12, atol=1e-12, events=(),
                    *, stm=False, t0=0.0, **options):
    """Propagate many states in the bicircular model in parallel (compiled code, no Python
    loop): :func:`cr3bp.integrate.propagate_batch` with the bicircular right-hand side. All
    start at ``t0``. Returns its ``BatchResult``.

    Parameters
    ----------
    bsys : BicircularSystem
    states, t_final, rtol, atol, events, stm, t0, **options
        As for :func:`cr3bp.integrate.propagate_batch`.

    Returns
    -------
    BatchResult

    Raises
    ------
    InputError
        ``bsys`` is not a BicircularSystem, or a bad argument.

    Examples
    --------
    >>> from cr3bp.bicircular import bicircular_system
    >>> m = bicircular_system("earth-moon")
    >>> from cr3bp.bicircular import propagate_batch
    >>> propagate_batch(m, [[0.8, 0, 0, 0, 0.3, 0]] * 2, [1.0, 2.0]).t_final.tolist()
    [1.0, 2.0]

    References
    ----------
    .. [1] S.-S. Huang, "Very restricted four-body problem", NASA TN D-501, 1960; C. Simo,
       G. Gomez, A. Jorba and J. Masdemont, "The bicircular model near the triangular libration
       points of the RTBP", 1995; K. K. Boudad, K. C. Howell and D. C. Davis, "Dynamics of
       synodic resonant near rectilinear halo orbits in the bicircular four-body problem",
       *Advances in Space Research* 66, 2020, section 2 (all from memory).
    """
    return _batch(bsys.system, states, t_final, rtol, atol, events, stm=stm, t0=t0,
                  model=_model(bsys), **options)


def model_record(bsys: BicircularSystem) -> dict:
    """What rebuilds ``bsys`` on an Earth-Moon system (:func:`model_from_record`): the Sun's phase
    at t = 0 (rad) and the date of t = 0 (TDB seconds since J2000, or None).

    Parameters
    ----------
    bsys : BicircularSystem

    Returns
    -------
    dict
        ``model`` ("bicircular"), ``sun_phase_rad``, ``epoch_tdb_s``.

    Raises
    ------
    InputError
        ``bsys`` is not a BicircularSystem.

    Examples
    --------
    >>> from cr3bp.bicircular import bicircular_system, model_from_record, model_record
    >>> m = bicircular_system("earth-moon", sun_phase=1.0)
    >>> model_from_record(m.system, model_record(m)) == m
    True

    References
    ----------
    Boudad, Howell & Davis, Adv. Space Res. 66, 2020, section 2 (the model, from memory).
    """
    _model(bsys)
    return {"model": "bicircular", "sun_phase_rad": float(bsys.sun_phase),
            "epoch_tdb_s": None if bsys.epoch_tdb_s is None else float(bsys.epoch_tdb_s)}


def model_from_record(system, record: dict) -> BicircularSystem:
    """The bicircular model of :func:`model_record`'s ``record`` on the Earth-Moon ``system``.

    Parameters
    ----------
    system : System or str
        The Earth-Moon system.
    record : dict
        ``sun_phase_rad`` and ``epoch_tdb_s`` (None: no date).

    Returns
    -------
    BicircularSystem
        The Sun at ``sun_phase_rad`` at t = 0 (the recorded phase is kept as it is, not recomputed
        from the date).

    Raises
    ------
    InputError
        Another system, or a record without a finite phase.

    Examples
    --------
    >>> from cr3bp.bicircular import model_from_record
    >>> round(model_from_record("earth-moon", {"sun_phase_rad": 0.5}).sun_phase, 3)
    0.5

    References
    ----------
    Common practice: a model rebuilt from its own record.
    """
    if not isinstance(record, dict) or "sun_phase_rad" not in record:
        raise InputError("a bicircular model record needs 'sun_phase_rad'")
    m = bicircular_system(system, sun_phase=finite_number("sun_phase_rad", record["sun_phase_rad"]))
    epoch = record.get("epoch_tdb_s")
    return m if epoch is None else dataclasses.replace(m, epoch_tdb_s=finite_number("epoch_tdb_s", epoch))
