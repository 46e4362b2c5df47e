"""Stable and unstable manifolds ("tubes") of periodic orbits and of the collinear Lagrange points.

Method (Gómez, Koon, Lo, Marsden, Masdemont & Ross, "Connecting orbits and invariant manifolds
in the spatial restricted three-body problem", *Nonlinearity* 17, 2004, §3; Koon, Lo, Marsden
& Ross, *Dynamical Systems, the Three-Body Problem and Space Mission Design*, 2011, §4.5):

1. The monodromy matrix M of the orbit has a real pair of eigenvalues lambda_u > 1 and
   lambda_s = 1/lambda_u with eigenvectors v_u, v_s (the unstable and stable directions).
2. At N points x(t_k) along the orbit (equal time or equal arc length), the directions are
   carried by the state transition matrix: w_k = Phi(t_k, 0) v (Phi(t_k) M Phi(t_k)^-1 has
   the same eigenvalues, with eigenvector Phi(t_k) v).
3. Each w_k is normalised on its position part and the orbit state is displaced by a step-off
   distance d along it: x_k +/- d w_k / |w_k[0:3]|.
4. The displaced states are propagated (one batch) forward in time for the unstable manifold,
   backward for the stable one, until a stop condition: a Poincaré section, a time limit, an
   altitude above a primary, impact with a primary's surface, or escape.

Branches. ``"interior"`` is the half-manifold whose step-off at the orbit's initial state
points toward the smaller primary (into the smaller primary's realm, between the L1 and L2
necks); ``"exterior"`` is the other one (toward the larger primary's realm for an L1 orbit, the
exterior realm for an L2 orbit). The sign is fixed once at the orbit's initial state and kept
along the orbit, since w_k varies continuously with t_k: each branch is one half-tube.

Step-off distance. Large enough that the trajectory leaves the orbit in a few periods, small
enough that the linear approximation holds (its error grows with d^2). Common practice is a
few tens of km in the Earth–Moon system and a few hundred km in the Sun–Earth system; the
defaults are 40 km and 200 km (common practice), and for other systems 3e-4 of the smaller
primary's Hill radius (mu/3)^(1/3) (our own rule, which gives 49 km for Earth–Moon and 450 km
for Sun–Earth). The value used is stored on every :class:`Tube` and printed by the CLI.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .. import validate
from ..dynamics import jacobi as _jacobi, jacobian
from ..display import Shown
from ..equilibria import lagrange_point
from ..errors import InputError, NoSolutionError
from ..vocabulary import STABILITIES as _STABILITIES
from ..vocabulary import TUBE_BRANCHES
from ..integrate import escape, impact, propagate, propagate_batch
from ..integrate.batch import batch, batch_features
from ..orbits import PeriodicOrbit
from ..validate import quantity, whole_number, positive_number
from .sections import (Crossings, Section, bounded_max_events, guard_events, parse_section,
    primary_index)

#: Step-off distances (km) by system name (common practice, see module docstring).
STEP_OFF_KM = {"earth-moon": 40.0, "sun-earth": 200.0}
HILL_FRACTION = 3e-4
STABILITIES = _STABILITIES
BRANCHES = TUBE_BRANCHES
SPACINGS = ("time", "arc")
RTOL = 1e-12
ATOL = 1e-12


def default_step_km(system) -> float:
    """The default step-off distance in km for ``system`` (see the module docstring).

    Parameters
    ----------
    system : System

    Returns
    -------
    float

    Raises
    ------
    InputError
        A system without dimensional units and no tabulated default.

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.tubes.manifolds import default_step_km
    >>> default_step_km(system("earth-moon"))
    40.0
    """
    if system.name in STEP_OFF_KM:
        return STEP_OFF_KM[system.name]
    system.require_dimensional("a step-off distance")
    return HILL_FRACTION * (system.mu / 3.0) ** (1.0 / 3.0) * system.length_km


def step_lu(system, step_km=None) -> tuple[float, float]:
    """The step-off distance in LU and in km.

    Parameters
    ----------
    system : System
    step_km : float or str, optional
        km as a float, or a length with its unit (``"50km"``, ``"1e-4LU"``); default
        :func:`default_step_km` (1e-6 LU for a nondimensional system).

    Returns
    -------
    step : float
        LU.
    step_km : float
        km; NaN for a nondimensional system given in LU.

    Raises
    ------
    InputError
        A step that is not positive, or km with a nondimensional system.

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.tubes.manifolds import step_lu
    >>> step_lu(system("earth-moon"), 384.4)
    (0.001, 384.4)
    """
    if step_km is None:
        if not system.dimensional and system.name not in STEP_OFF_KM:
            return 1e-6, float("nan")
        step_km = default_step_km(system)
    if isinstance(step_km, str):
        v = quantity("step-off distance", step_km, "length", system, sign="positive")
        return v, (v * system.length_km if system.dimensional else float("nan"))
    step_km = positive_number("step-off distance (km)", step_km)
    system.require_dimensional("a step-off distance in km")
    return step_km / system.length_km, step_km


# ---- eigen-directions -------------------------------------------------------------------

@dataclass(frozen=True)
class Modes:
    """The hyperbolic pair of a monodromy (or Jacobian) matrix.

    Parameters
    ----------
    lambda_unstable, lambda_stable : float
        The real eigenvalues of greatest and least modulus (or sign, for a Jacobian).
    unstable, stable : ndarray, shape (6,)
        Their real eigenvectors.

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.tubes.manifolds import hyperbolic_modes
    >>> hyperbolic_modes(np.diag([4.0, 0.25, 1.0, 1.0, 1.0, 1.0])).lambda_unstable
    4.0
    """

    lambda_unstable: float
    lambda_stable: float
    unstable: np.ndarray
    stable: np.ndarray


def hyperbolic_modes(matrix, continuous=False) -> Modes:
    """The real eigenvalue pair of greatest and least modulus, with real eigenvectors.

    ``lambda_u lambda_s = 1`` for a monodromy matrix; ``+- lambda`` for a Jacobian when
    ``continuous``.

    Parameters
    ----------
    matrix : array_like, shape (6, 6)
    continuous : bool
        The matrix is the Jacobian of the flow (eigenvalues ``+- lambda``) rather than a monodromy.

    Returns
    -------
    Modes

    Raises
    ------
    NoSolutionError
        The matrix has no real eigenvalue off the unit circle (the orbit is linearly stable and
        has no stable/unstable manifolds).

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.tubes.manifolds import hyperbolic_modes
    >>> m = hyperbolic_modes(np.diag([4.0, 0.25, 1.0, 1.0, 1.0, 1.0]))
    >>> m.lambda_stable, np.abs(m.unstable).tolist()
    (0.25, [1.0, 0.0, 0.0, 0.0, 0.0, 0.0])
    """
    w, v = np.linalg.eig(np.asarray(matrix, dtype=float))
    real = np.abs(w.imag) < 1e-8 * np.maximum(1.0, np.abs(w))
    key = w.real if continuous else np.abs(w.real)
    cand = np.where(real)[0]
    if cand.size < 2:
        raise NoSolutionError("the orbit has no real eigenvalue pair: it is linearly stable and "
                              "has no stable or unstable manifold")
    iu = cand[np.argmax(key[cand])]
    is_ = cand[np.argmin(key[cand])]
    lu, ls = w[iu].real, w[is_].real
    big = lu > 0 if continuous else abs(lu) > 1.0 + 1e-6
    if not big:
        raise NoSolutionError(f"largest real eigenvalue {lu:.6g} is not hyperbolic: the orbit has "
                              "no stable or unstable manifold")
    return Modes(float(lu), float(ls), np.real(v[:, iu]), np.real(v[:, is_]))


def orbit_times(orbit, n_points: int, spacing: str = "time") -> np.ndarray:
    """Times in [0, T) of ``n_points`` along the orbit, equally spaced in time or in arc length.

    Parameters
    ----------
    orbit : PeriodicOrbit
    n_points : int
    spacing : str
        ``"time"`` or ``"arc"``.

    Returns
    -------
    ndarray, shape (n_points,)

    Raises
    ------
    InputError
        A bad count or spacing.

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import manifolds
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> manifolds.orbit_times(orbit, 4).tolist() == [k * orbit.period / 4 for k in range(4)]
    True
    """
    n = _count(n_points)
    if spacing not in SPACINGS:
        raise InputError(f"spacing '{spacing}' must be one of {', '.join(SPACINGS)}")
    T = float(orbit.period)
    if spacing == "time":
        return np.arange(n) * (T / n)
    grid = np.linspace(0.0, T, max(20 * n, 2001))
    arc = propagate(orbit.system, orbit.state, T, t_eval=grid, rtol=RTOL, atol=ATOL)
    ds = np.linalg.norm(np.diff(arc.states[:, :3], axis=0), axis=1)
    s = np.concatenate([[0.0], np.cumsum(ds)])
    return np.interp(np.arange(n) * (s[-1] / n), s, arc.t)


def _count(n):
    return validate.whole_number("number of points", n, 3, 100000)




def carry(orbit, times, progress=None):
    """Orbit states x(t_k) and STMs Phi(t_k, 0) at ascending ``times`` (first 0).

    One batch propagation when the batch propagator returns STMs, else one propagation each.

    Parameters
    ----------
    orbit : PeriodicOrbit
    times : array_like
        Ascending, from 0 (TU).
    progress : callable(done, total, message), optional

    Returns
    -------
    states : ndarray, shape (N, 6)
    stms : ndarray, shape (N, 6, 6)

    Raises
    ------
    None

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import manifolds
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> states, stms = manifolds.carry(orbit, [0.0, 1.0])
    >>> stms.shape, bool(abs(stms[0] - __import__("numpy").eye(6)).max() < 1e-12)
    ((2, 6, 6), True)
    """
    system = orbit.system
    times = np.asarray(times, dtype=float)
    n = len(times)
    states = np.empty((n, 6))
    phis = np.empty((n, 6, 6))
    states[0] = orbit.state
    phis[0] = np.eye(6)
    if n > 2 and batch_features()["stm"]:
        # the orbit sampled once, then every segment t_k -> t_k+1 with its STM in one batch;
        # Phi(t_k, 0) is the running product (one period of variational integration in all)
        arc = propagate(system, orbit.state, float(times[-1]), t_eval=times, rtol=RTOL, atol=ATOL)
        states[:] = arc.states
        res = propagate_batch(system, states[:-1], np.diff(times), rtol=RTOL, atol=ATOL, stm=True)
        for k in range(1, n):
            phis[k] = res.stm[k - 1] @ phis[k - 1]
        if progress is not None:
            progress(n, n, "carrying eigenvectors along the orbit")
        return states, phis
    for k in range(1, n):
        arc = propagate(system, states[k - 1], float(times[k] - times[k - 1]), stm=True, rtol=RTOL,
                        atol=ATOL)
        states[k] = arc.final_state
        phis[k] = arc.stm @ phis[k - 1]
        if progress is not None and (k % 50 == 0 or k == n - 1):
            progress(k + 1, n, "carrying eigenvectors along the orbit")
    return states, phis


# ---- stop conditions ---------------------------------------------------------------------

@dataclass(frozen=True)
class Stop:
    """When a tube trajectory stops (the first of these to happen).

    Parameters
    ----------
    section : Section or None
        A Poincaré section (its ``count``-th crossing).
    count : int
    t_max : float
        Time limit, TU (always set).
    altitudes : tuple of (primary, altitude_km)
        Stop on descending to that altitude.
    escape_radius : float or None
        Distance (LU) counted as escape, from ``escape_center``.
    escape_center : int
        -1 the barycentre (default), 0 / 1 a primary.

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.tubes.manifolds import parse_until
    >>> parse_until(["section:x=1-mu", "time:20d"], system("earth-moon")).count
    1
    """

    section: Section | None = None
    count: int = 1
    t_max: float = 2.0 * math.pi
    altitudes: tuple = ()
    escape_radius: float | None = None
    escape_center: int = -1

    def events(self, system, time_sign):
        evs, names = [], []
        if self.section is not None:
            if self.section.kind == "apsis":
                raise InputError("an apsis cannot stop a tube; grow the tube to a time limit and "
                                 "take its apsides with sections.crossings")
            if self.section.bounded:  # recorded, filtered to the half-plane in _globalise
                evs.append(self.section.event(system, time_sign, False, 1))
            else:
                evs.append(self.section.event(system, time_sign, True, self.count))
            names.append("section")
        for p, alt in self.altitudes:
            body = (system.primary, system.secondary)[p]
            evs.append(impact(p, (body.radius_km + alt) / system.length_km,
                              label=f"altitude {body.name} {alt:g}km"))
            names.append("altitude")
        for e in guard_events(system):
            evs.append(e)
            names.append("impact")
        if self.escape_radius is not None:
            evs.append(escape(self.escape_radius, self.escape_center))
            names.append("escape")
        return evs, names

    def to_dict(self, system=None) -> dict:
        d = {"section": None if self.section is None else self.section.to_dict(),
             "count": self.count, "t_max": self.t_max,
             "altitudes_km": [[p, a] for p, a in self.altitudes],
             "escape_radius": self.escape_radius, "escape_center": self.escape_center}
        if system is not None and system.dimensional:
            d["t_max_days"] = system.days(self.t_max)
        return d


def parse_until(texts, system, t_max=None) -> Stop:
    """A :class:`Stop` from text.

    ``section:x=1-mu``, ``section:y=0:+``, ``time:20d``, ``altitude:earth:200km``,
    ``escape:3LU``; several may be given (a list).

    Parameters
    ----------
    texts : str or list of str
    system : System
    t_max : float, optional
        Time limit (TU) when none is given; default 2 pi.

    Returns
    -------
    Stop

    Raises
    ------
    InputError
        A condition that is not understood, or a bad value in it.

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.tubes.manifolds import parse_until
    >>> round(parse_until("time:1d", system("earth-moon")).t_max, 6)
    0.230283
    """
    if isinstance(texts, str):
        texts = [texts]
    section, count, tmax, alts, esc = None, 1, t_max, [], None
    for text in texts or ():
        kind, _, rest = str(text).strip().partition(":")
        kind = kind.strip().lower()
        if kind == "section":
            body, _, n = rest.partition("#")
            section = parse_section(body, system)
            if n:
                count = whole_number(f"crossing number in '{text}'", n, 1, 1000)
        elif kind == "time":
            tmax = quantity(f"time limit in '{text}'", rest, "time", system, sign="positive",
                            default_unit="TU")
        elif kind == "altitude":
            body, _, h = rest.partition(":")
            p = primary_index(system, body)
            system.require_dimensional("an altitude")
            alt_km = system.km(quantity(f"altitude in '{text}'", h, "length", system, sign="nonnegative"))
            alts.append((p, float(alt_km)))
        elif kind == "escape":
            esc = quantity(f"escape radius in '{text}'", rest, "length", system, sign="positive",
                           default_unit="LU")
        else:
            raise InputError(f"stop condition '{text}' is not understood; use section:x=1-mu, "
                             "time:20d, altitude:earth:200km or escape:3LU")
    if tmax is None:
        tmax = 2.0 * math.pi
    return Stop(section, count, float(tmax), tuple(alts), esc)


# ---- the tube ----------------------------------------------------------------------------

@dataclass(frozen=True, repr=False)
class Tube(Shown):
    """A globalised half-manifold of a periodic orbit (or of a Lagrange point).

    Parameters
    ----------
    system : System
    origin : str                description of the orbit, e.g. ``"lyapunov L1 C=3.15"``
    stability : {"stable", "unstable"}
    branch : {"interior", "exterior"}
    jacobi : float              the orbit's Jacobi constant
    period : float              the orbit's period, TU (0 for a Lagrange point)
    eigenvalue : float          dominant monodromy eigenvalue lambda_u (> 1)
    step : float                step-off distance, LU (``step_km`` the same in km)
    phase : ndarray (N,)        departure points on the orbit, as a fraction of the period
    t_orbit : ndarray (N,)      the same as time along the orbit, TU
    orbit_states : ndarray (N, 6)  states on the orbit there
    directions : ndarray (N, 6)    manifold directions (position part of unit length)
    start_states : ndarray (N, 6)  displaced initial states
    tof : ndarray (N,)          signed time of flight to the stop (negative for stable)
    end_states : ndarray (N, 6)
    status : tuple of str       per trajectory: "section", "time", "altitude", "impact", "escape"
    stop : Stop

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import manifolds
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> tube = manifolds.grow_tube(orbit, "unstable", "interior", 4, until="time:2d")
    >>> tube.n, tube.label
    (4, 'lyapunov L1 C=3.181211 unstable interior')
    """

    system: object
    origin: str
    stability: str
    branch: str
    jacobi: float
    period: float
    eigenvalue: float
    step: float
    step_km: float
    phase: np.ndarray
    t_orbit: np.ndarray
    orbit_states: np.ndarray
    directions: np.ndarray
    start_states: np.ndarray
    tof: np.ndarray
    end_states: np.ndarray
    status: tuple
    stop: Stop
    spacing: str = "time"
    orbit: object = field(default=None, compare=False, repr=False)

    @property
    def n(self) -> int:
        return int(self.start_states.shape[0])

    @property
    def time_sign(self) -> float:
        return 1.0 if self.stability == "unstable" else -1.0

    @property
    def label(self) -> str:
        return f"{self.origin} {self.stability} {self.branch}"

    def reached(self, what="section") -> np.ndarray:
        return np.array([s == what for s in self.status])

    def section_cut(self):
        """The tube's cut on its stop section as :class:`~cr3bp.tubes.sections.Crossings`."""
        if self.stop.section is None:
            raise InputError("this tube was not grown to a section")
        m = self.reached("section")
        idx = np.nonzero(m)[0]
        return Crossings(self.system, self.stop.section, self.end_states[m], self.tof[m], idx,
                         np.full(idx.size, self.stop.count), self.n, self.phase[m], self.label)

    def trajectories(self, n_samples: int = 300, indices=None):
        """Full trajectories for plotting: a list of ``(t, states)`` (each from its start state
        to its end, ``n_samples`` points), one propagation per trajectory."""
        idx = range(self.n) if indices is None else indices
        out = []
        for i in idx:
            tf = float(self.tof[i])
            if tf == 0.0:
                out.append((np.zeros(1), self.start_states[i][None, :]))
                continue
            te = np.linspace(0.0, tf, int(n_samples))
            arc = propagate(self.system, self.start_states[i], tf, t_eval=te, rtol=RTOL, atol=ATOL)
            out.append((arc.t, arc.states))
        return out

    def to_dict(self) -> dict:
        s = self.system
        dim = s.dimensional
        counts = {k: int(sum(1 for x in self.status if x == k)) for k in sorted(set(self.status))}
        d = {
            "system": s.name, "origin": self.origin, "stability": self.stability,
            "branch": self.branch, "jacobi": self.jacobi, "period": self.period,
            "eigenvalue": self.eigenvalue, "step_lu": self.step,
            "step_km": self.step_km if math.isfinite(self.step_km) else None,
            "n_trajectories": self.n, "spacing": self.spacing, "stop": self.stop.to_dict(s),
            "status_counts": counts,
            "trajectories": [
                {"phase": float(self.phase[i]), "t_orbit": float(self.t_orbit[i]),
                 "tof": float(self.tof[i]),
                 "tof_days": float(s.days(abs(self.tof[i]))) if dim else None,
                 "status": self.status[i], "start_state": self.start_states[i].tolist(),
                 "end_state": self.end_states[i].tolist()}
                for i in range(self.n)],
        }
        return d


def describe(orbit) -> str:
    """A short description of an orbit for a tube's ``origin``: family, point, branch and C.

    Parameters
    ----------
    orbit : PeriodicOrbit

    Returns
    -------
    str

    Raises
    ------
    None

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import manifolds
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> manifolds.describe(orbit)[:12]
    'lyapunov L1 '
    """
    parts = [p for p in (orbit.family, orbit.point, orbit.branch) if p]
    return " ".join(parts + [f"C={orbit.jacobi:.6f}"])


def branch_sign(system, state, direction, branch) -> float:
    """+1 or -1 so that ``sign * direction`` steps toward the smaller primary ("interior") or
    away from it ("exterior").

    1 or -1 so that ``sign * direction`` steps toward the smaller primary or away from it.

    Toward it for ``"interior"``, away for ``"exterior"``.

    Parameters
    ----------
    system : System
    state : array_like, shape (6,)
    direction : array_like, shape (6,)
    branch : str

    Returns
    -------
    float

    Raises
    ------
    InputError
        ``branch`` not interior or exterior.

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.tubes.manifolds import branch_sign
    >>> branch_sign(system("earth-moon"), [0.8, 0, 0, 0, 0, 0], [1, 0, 0, 0, 0, 0], "exterior")
    -1.0
    """
    if branch not in BRANCHES:
        raise InputError(f"branch '{branch}' must be interior or exterior")
    to_secondary = np.array([1.0 - system.mu, 0.0, 0.0]) - state[:3]
    s = 1.0 if float(np.dot(direction[:3], to_secondary)) >= 0 else -1.0
    return s if branch == "interior" else -s


def manifold_starts(orbit, stability, branch, n_points=200, spacing="time", step_km=None,
                    progress=None, times=None):
    """Departure data of a half-manifold (steps 1-3 of the module docstring).

    Parameters
    ----------
    orbit : PeriodicOrbit
    stability : str
        ``"stable"`` or ``"unstable"``.
    branch : str
        ``"interior"`` or ``"exterior"``.
    n_points : int
    spacing : str
    step_km : float or str, optional
    progress : callable, optional
    times : array_like, optional
        Departure times (TU, in [0, T)); overrides ``n_points``/``spacing``.

    Returns
    -------
    tuple
        ``(times, orbit states, unit directions, displaced start states, Modes, step LU,
        step km)``.

    Raises
    ------
    InputError
        A bad stability or branch.
    NoSolutionError
        The orbit is linearly stable, or a displaced state leaves the Hill region.

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import manifolds
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> ts, states, w, starts, modes, d, d_km = manifolds.manifold_starts(orbit, "stable", "exterior", 3)
    >>> starts.shape, d_km
    ((3, 6), 40.0)
    """
    if stability not in STABILITIES:
        raise InputError(f"stability '{stability}' must be stable or unstable")
    system = orbit.system
    d, d_km = step_lu(system, step_km)
    modes = hyperbolic_modes(orbit.monodromy)
    v = modes.unstable if stability == "unstable" else modes.stable
    if orbit.state[2] == 0.0 and orbit.state[5] == 0.0 and np.all(np.abs(v[[2, 5]]) < 1e-9 * np.abs(v).max()):
        v = v.copy()
        v[[2, 5]] = 0.0  # planar orbit: the in-plane eigenvector, without round-off out of plane
    t = orbit_times(orbit, n_points, spacing) if times is None else np.asarray(times, dtype=float)
    order = np.argsort(t)
    ts = t[order]
    grid = np.concatenate([[0.0], ts]) if ts[0] != 0.0 else ts
    states, phis = carry(orbit, grid, progress)
    if ts[0] != 0.0:
        states, phis = states[1:], phis[1:]
    w = np.einsum("kij,j->ki", phis, v)
    w /= np.linalg.norm(w[:, :3], axis=1)[:, None]
    # fix the sign at t = 0 (orbit.state), keep it along the orbit
    sign = branch_sign(system, orbit.state, v / np.linalg.norm(v[:3]), branch)
    w *= sign
    inv = np.empty_like(order)
    inv[order] = np.arange(order.size)
    states, w, ts = states[inv], w[inv], ts[inv]
    return ts, states, w, on_energy(system, states + d * w, orbit.jacobi), modes, d, d_km


def on_energy(system, states, c):
    """Rescale each state's rotating-frame speed so its Jacobi constant is ``c`` exactly.

    The step-off direction is tangent to the energy surface, so a displacement d changes C by
    O(d^2) only; this removes that second-order error (a change of the same order as the linear
    approximation's own), so that every tube trajectory has its orbit's energy.

    Parameters
    ----------
    system : System
    states : array_like, shape (N, 6)
    c : float
        Jacobi constant.

    Returns
    -------
    ndarray, shape (N, 6)

    Raises
    ------
    NoSolutionError
        A state lies outside the Hill region of ``c`` or is at rest.

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.dynamics import jacobi
    >>> from cr3bp.tubes.manifolds import on_energy
    >>> em = system("earth-moon")
    >>> s = on_energy(em, [[0.85, 0.0, 0.0, 0.0, 0.1, 0.0]], 3.1)
    >>> round(float(jacobi(em.mu, s[0])), 12)
    3.1
    """
    s = np.array(states, dtype=float, copy=True)
    v2 = np.einsum("ij,ij->i", s[:, 3:6], s[:, 3:6])
    two_omega = _jacobi(system.mu, s) + v2
    target = two_omega - c
    if np.any(target <= 0) or np.any(v2 == 0):
        raise NoSolutionError("a displaced state falls outside the orbit's Hill region; "
                              "use a smaller step-off distance")
    s[:, 3:6] *= np.sqrt(target / v2)[:, None]
    return s


def grow_tube(orbit, stability: str, branch: str, n_points: int = 200, until=None, *,
              spacing: str = "time", step_km=None, times=None, progress=None, origin=None,
              runner=None) -> Tube:
    """Grow a half-manifold of ``orbit`` in one batch propagation.

    Parameters
    ----------
    orbit : PeriodicOrbit
    stability : {"stable", "unstable"}
    branch : {"interior", "exterior"}
    n_points : int
        Departure points along the orbit.
    until : Stop, str or list of str
        Stop condition (see :func:`parse_until`); default: a time limit of 2 pi TU.
    spacing : {"time", "arc"}
    step_km : float or str, optional
        Step-off distance (default :func:`default_step_km`).
    times : array, optional
        Departure times along the orbit (TU) instead of ``n_points``.
    progress : callable(done, total, message), optional
    origin : str, optional
        Description of the orbit (default :func:`describe`).
    runner : callable(function, tasks) -> list, optional
        Runs the propagation in pieces elsewhere (``cr3bp.transfers.tasks.run_tasks`` with a
        pool or a dask cluster bound to it): the departure states go in consecutive pieces
        (:func:`propagate_piece`), and the result is the same, bit for bit, as in one batch
        here (every trajectory is integrated on its own).

    Returns
    -------
    Tube

    Raises
    ------
    InputError
        A bad stability, branch, stop condition or step.
    NoSolutionError
        The orbit is linearly stable.

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import manifolds
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> tube = manifolds.grow_tube(orbit, "unstable", "interior", 4, until="section:x=1-mu")
    >>> set(tube.status)
    {'section'}
    """
    system = orbit.system
    stop = until if isinstance(until, Stop) else parse_until(until, system)
    ts, ostates, w, starts, modes, d, d_km = manifold_starts(
        orbit, stability, branch, n_points, spacing, step_km, progress, times)
    sign = 1.0 if stability == "unstable" else -1.0
    if runner is None:
        tof, ends, status = _globalise(system, starts, stop, sign, progress)
    else:
        tof, ends, status = _globalise_pieces(system, starts, stop, sign, runner, progress)
    return Tube(system, origin or describe(orbit), stability, branch, float(orbit.jacobi),
                float(orbit.period), modes.lambda_unstable, d, d_km, ts / orbit.period, ts, ostates,
                w, starts, tof, ends, status, stop, spacing, orbit)



def _globalise(system, starts, stop, sign, progress=None):
    events, names = stop.events(system, sign)
    if progress is not None:
        progress(0, len(starts), f"propagating {len(starts)} trajectories")
    sec = stop.section
    bounded = sec is not None and sec.bounded
    res = batch(system, starts, sign * stop.t_max, events,
                max_events=bounded_max_events(stop.count) if bounded else stop.count + 8)
    status = []
    tof = np.array(res.t_final, dtype=float)
    ends = np.array(res.states, dtype=float)
    for i in range(len(starts)):
        st = str(res.status[i])
        idx = np.asarray(res.event_index[i], dtype=int)
        if bounded:
            # the count-th crossing inside the half-plane ends the trajectory; other crossings
            # are passed through (Stop.events made the plane event non-terminal)
            et = np.asarray(res.event_t[i], dtype=float)
            es = np.asarray(res.event_states[i], dtype=float).reshape(-1, 6)
            hit = np.nonzero((idx == 0) & (np.abs(et) > 1e-12) & sec.inside(es))[0] \
                if idx.size else np.zeros(0, dtype=int)
            if hit.size >= stop.count:
                k = hit[stop.count - 1]
                tof[i], ends[i] = et[k], es[k]
                status.append("section")
                continue
            other = idx[idx != 0]
            if st in ("event", "impact", "escape"):
                st = names[int(other[-1])] if other.size else st
            status.append(st)
            continue
        if st in ("event", "impact", "escape"):
            st = names[int(idx[-1])] if idx.size else st
        status.append(st)
    if progress is not None:
        progress(len(starts), len(starts), "propagated")
    return tof, ends, tuple(status)


#: Departure states per piece of a tube propagated elsewhere (the runner groups pieces in chunks).
PIECE_POINTS = 16


def propagate_piece(task) -> tuple:
    """One piece of a tube's propagation, run in a pool or dask worker: ``(tof, ends, status)``
    of the departure states ``task["starts"]`` (compiled code on one thread: the workers are the
    parallelism).

    Parameters
    ----------
    task : dict
        ``system``, ``starts`` (n, 6), ``stop`` (:class:`Stop`), ``sign`` (+1 forward, -1
        backward).

    Returns
    -------
    tuple
        Times of flight, end states and how each trajectory ended, as in :func:`grow_tube`.

    Raises
    ------
    InputError
        A stop the system cannot evaluate (as in :func:`grow_tube`).

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.systems import system
    >>> from cr3bp.tubes.manifolds import Stop, propagate_piece
    >>> em = system("earth-moon")
    >>> tof, ends, status = propagate_piece({"system": em, "starts": np.array([[0.8, 0, 0, 0, 0.1, 0]]),
    ...                                      "stop": Stop(None, 1, 0.5), "sign": 1.0})
    >>> float(tof[0]), status
    (0.5, ('time',))

    References
    ----------
    Gómez et al., *Nonlinearity* 17, 2004, §3 (the globalisation of a manifold from its
    linear approximation).
    """
    try:
        import numba  # lazy: heavy library (numba), its failure handled here
        numba.set_num_threads(1)
    except Exception:          # pragma: no cover - a numba without threading control
        pass
    return _globalise(task["system"], task["starts"], task["stop"], task["sign"])


def _globalise_pieces(system, starts, stop, sign, runner, progress=None):
    """:func:`_globalise` in pieces of :data:`PIECE_POINTS` consecutive states, run by ``runner``."""
    n = len(starts)
    if progress is not None:
        progress(0, n, f"propagating {n} trajectories in pieces")
    pieces = [{"system": system, "starts": np.ascontiguousarray(starts[a:a + PIECE_POINTS]), "stop": stop,
               "sign": sign} for a in range(0, n, PIECE_POINTS)]
    parts = runner(propagate_piece, pieces)
    tof = np.concatenate([p[0] for p in parts])
    ends = np.concatenate([p[1] for p in parts])
    status = tuple(s for p in parts for s in p[2])
    if progress is not None:
        progress(n, n, "propagated")
    return tof, ends, status


def _lagrange_jacobi(system, point) -> float:
    """Jacobi constant of a collinear Lagrange point (:func:`cr3bp.equilibria.lagrange_point`)."""
    return float(lagrange_point(system, point).jacobi)


def orbit_from_state(system, state, period, family="given", point="", branch="",
                     tolerance=1e-8):
    """A PeriodicOrbit from a state and period the user already has.

    Its monodromy is propagated here and its periodicity checked.

    Parameters
    ----------
    system : System
    state : array_like, shape (6,)
    period : float
        TU.
    family, point, branch : str
        Labels.
    tolerance : float
        Largest ``|s(T) - s(0)|`` accepted (LU, LU/TU).

    Returns
    -------
    PeriodicOrbit

    Raises
    ------
    InputError
        The state does not return to itself within ``tolerance`` after ``period``, or a bad
        state or period.

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import manifolds
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> again = manifolds.orbit_from_state(em, orbit.state, orbit.period)
    >>> again.periodicity_error < 1e-9
    True
    """
    s0 = validate.state(system, state)
    T = validate.positive_number("period (TU)", validate.finite_time("period", period))
    arc = propagate(system, s0, T, stm=True, rtol=RTOL, atol=ATOL)
    err = float(np.linalg.norm(arc.final_state - s0))
    if err > tolerance:
        raise InputError(f"the state does not return to itself after the period: |s(T) - s(0)| = "
                         f"{err:.3e} > {tolerance:g}; give a converged periodic orbit")
    return PeriodicOrbit(system=system, state=s0, period=T, monodromy=arc.stm, family=family,
                         point=point, branch=branch, jacobi=float(_jacobi(system.mu, s0)),
                         periodicity_error=err, iterations=0)


def point_tube(system, point, stability: str, branch: str, until=None, *, step_km=None,
               position=None) -> Tube:
    """The one-dimensional manifold branch of a collinear Lagrange point.

    The real eigenvector of the linearised flow at the point, displaced by the step-off distance
    and propagated like a tube trajectory. ``point`` is a name (``"L1"``, ``"L2"``, ``"L3"``;
    located by :mod:`cr3bp.equilibria`) and ``position`` (3,) may give its position directly.

    Parameters
    ----------
    system : System
    point : str
    stability : str
    branch : str
    until : Stop, str or list of str, optional
    step_km : float or str, optional
    position : array_like, optional

    Returns
    -------
    Tube

    Raises
    ------
    InputError
        A bad point, stability, branch or stop condition.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §4.6 (from memory).
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §2.5.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.tubes.manifolds import point_tube
    >>> point_tube(system("earth-moon"), "L1", "unstable", "interior", until="time:1d").n
    1
    """
    if position is None:
        position = lagrange_point(system, point).position
    pos = np.asarray(position, dtype=float)
    xl = np.concatenate([pos, np.zeros(3)])
    stop = until if isinstance(until, Stop) else parse_until(until, system)
    d, d_km = step_lu(system, step_km)
    modes = hyperbolic_modes(jacobian(system.mu, xl), continuous=True)
    v = modes.unstable if stability == "unstable" else modes.stable
    if stability not in STABILITIES:
        raise InputError(f"stability '{stability}' must be stable or unstable")
    w = v / np.linalg.norm(v[:3])
    w = w * branch_sign(system, xl, w, branch)
    start = xl + d * w
    c_point = float(_jacobi(system.mu, xl))
    start = on_energy(system, start[None, :], c_point)[0] if stability else start
    sign = 1.0 if stability == "unstable" else -1.0
    tof, ends, status = _globalise(system, start[None, :], stop, sign)
    c = float(_jacobi(system.mu, xl))
    return Tube(system, f"{point}", stability, branch, c, 0.0, float(modes.lambda_unstable),
                d, d_km, np.zeros(1), np.zeros(1), xl[None, :], w[None, :], start[None, :], tof,
                ends, status, stop, "time", None)


TUBE_POINTS = 16          # trajectories per half-manifold in a corridor figure
TUBE_DAYS = "8d"          # how far each is grown there


def corridor_tubes(orbits, n_points=TUBE_POINTS, until=f"time:{TUBE_DAYS}"):
    """Stable and unstable half-manifolds (both branches) of each orbit, as trajectory arrays.

    For :func:`cr3bp.plotting.routes.plot_corridor`: the tubes are the corridors the route
    rides.

    Parameters
    ----------
    orbits : sequence of PeriodicOrbit
    n_points : int
        Trajectories per half-manifold.
    until : str
        Stop condition.

    Returns
    -------
    list of list of ndarray
        Per tube, the sampled states of each trajectory.

    Raises
    ------
    NoSolutionError
        An orbit is linearly stable.

    References
    ----------
    .. [1] G. Gómez, W. S. Koon, M. W. Lo, J. E. Marsden, J. Masdemont and S. D. Ross, "Connecting
       orbits and invariant manifolds in the spatial restricted three-body problem",
       *Nonlinearity* 17, 2004, §3.
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.5.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import manifolds
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> tubes = manifolds.corridor_tubes([orbit], n_points=3, until="time:1d")
    >>> len(tubes), len(tubes[0])
    (4, 3)
    """
    tubes = []
    for orbit in orbits:
        for stability in STABILITIES:
            for branch in TUBE_BRANCHES:
                tube = grow_tube(orbit, stability, branch, n_points, until=until)
                tubes.append([states for _, states in tube.trajectories(200)])
    return tubes
