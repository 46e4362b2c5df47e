"""Legs between a circular parking orbit about a primary and a periodic orbit (or back).

Among the stable (arrival) or unstable (departure) trajectories of the orbit's manifold,
those whose first periapsis about a primary is at a target altitude are refined in the
departure phase by Brent's method. The manoeuvre is tangential at periapsis::

    dv = | v + omega x (r - r_p) | - sqrt(GM_p / |r - r_p|)

(v the rotating-frame velocity, omega = z-hat in nondimensional units, GM_p = 1 - mu or mu:
the inertial speed relative to the primary minus the circular speed at that radius; Vallado,
*Fundamentals of Astrodynamics and Applications*, 4th ed., 2013, §6.3, for the tangential
burn and §3.7 for the rotating-frame velocity transformation).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from ..errors import ConvergenceError, NoSolutionError
from ..validate import number_in
from ..transfers.leg import Leg, Maneuver, _mps
from .arrival import arrival_time
from .manifolds import manifold_starts, describe
from .sections import apsides, apsis, primary_index


def inertial_velocity(system, state, primary):
    """Velocity relative to a primary in the inertial frame whose axes coincide with the
    rotating ones at that instant: v + omega x (r - r_p), omega = z-hat (nondimensional).

    Parameters
    ----------
    system : System
        The system.
    state : array_like, shape (6,)
        Rotating state.
    primary : {0, 1}
        The primary (0 larger, 1 smaller).

    Returns
    -------
    rel : numpy.ndarray, shape (3,)
        Position relative to the primary.
    v : numpy.ndarray, shape (3,)
        Inertial velocity relative to it.

    Raises
    ------
    IndexError
        A primary other than 0 or 1.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> em = system("earth-moon")
    >>> rel, v = inertial_velocity(em, np.array([1 - em.mu + 0.01, 0, 0, 0, 1.0, 0]), 1)
    >>> v.round(12).tolist()
    [0.0, 1.01, 0.0]

    References
    ----------
    Szebehely, V., "Theory of Orbits", Academic Press (1967), sec. 4.2 (rotating and inertial
    velocities).
    """
    c = system.positions[primary]
    rel = np.asarray(state[:3], dtype=float) - np.array([c, 0.0, 0.0])
    v = np.asarray(state[3:6], dtype=float)
    return rel, v + np.array([-rel[1], rel[0], 0.0])


def periapsis_summary(system, state, primary) -> dict:
    """Radius, altitude, inertial and circular speeds, tangential Δv and inclination of a
    periapsis state about ``primary`` (formulas in the module docstring).

    Parameters
    ----------
    system : System
        The system (dimensional for the km and m/s entries).
    state : array_like, shape (6,)
        A periapsis state, rotating.
    primary : {0, 1}
        The primary.

    Returns
    -------
    dict
        ``radius``, ``altitude_km``, ``speed_inertial(_kms)``, ``speed_circular(_kms)``,
        ``dv(_mps)``, ``inclination_deg``, ``flight_path_cos``.

    Raises
    ------
    IndexError
        A primary other than 0 or 1.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> em = system("earth-moon")
    >>> x = np.array([1 - em.mu + 2000 / em.length_km, 0, 0, 0, 1.0, 0])
    >>> round(periapsis_summary(em, x, 1)["altitude_km"], 1)
    262.6

    References
    ----------
    Vallado, D. A., "Fundamentals of Astrodynamics and Applications", 4th ed. (2013), sec. 6.3
    (tangential burns from circular orbits).
    """
    rel, vin = inertial_velocity(system, state, primary)
    gm = 1.0 - system.mu if primary == 0 else system.mu
    r = float(np.linalg.norm(rel))
    speed = float(np.linalg.norm(vin))
    vc = math.sqrt(gm / r)
    h = np.cross(rel, vin)
    inc = math.degrees(math.acos(max(-1.0, min(1.0, h[2] / np.linalg.norm(h)))))
    body = (system.primary, system.secondary)[primary]
    out = {"radius": r, "speed_inertial": speed, "speed_circular": vc, "dv": speed - vc,
           "inclination_deg": inc, "flight_path_cos": float(rel @ vin / (r * speed))}
    if system.dimensional:
        out.update({"altitude_km": system.km(r) - body.radius_km,
                    "speed_inertial_kms": system.mps(speed) / 1e3,
                    "speed_circular_kms": system.mps(vc) / 1e3,
                    "dv_mps": system.mps(speed - vc)})
    return out


@dataclass(frozen=True)
class PeriapsisMap:
    """First periapsis about a primary of each trajectory of a half-manifold.

    Parameters
    ----------
    system : System
        The system.
    primary : int
        The primary.
    stability, branch : str
        The half-manifold.
    t_orbit, phase : numpy.ndarray
        Step-off times and phases on the orbit.
    altitude_km, tof : numpy.ndarray
        Periapsis altitude and time to it.
    states : numpy.ndarray
        Periapsis states.
    origin : numpy.ndarray
        Step-off states.
    within : float
        The distance a periapsis must be inside, LU.
    passage : int
        Which periapsis.

    Examples
    --------
    >>> pmap = periapsis_map(nrho, 0, "stable", "interior")     # doctest: +SKIP

    References
    ----------
    Koon, W. S., Lo, M. W., Marsden, J. E. & Ross, S. D., "Dynamical Systems, the Three-Body
    Problem and Space Mission Design", Marsden Books (2011), ch. 7 (from memory).
    """

    system: object
    primary: int
    stability: str
    branch: str
    t_orbit: np.ndarray
    phase: np.ndarray
    altitude_km: np.ndarray    # NaN where no periapsis within the time limit
    tof: np.ndarray            # signed TU from the manifold start to the periapsis
    states: np.ndarray
    origin: str = ""
    within: float = math.inf   # only periapses closer than this (LU) count
    passage: int = 1           # which close periapsis (1 = nearest the orbit in time)

    def to_dict(self) -> dict:
        return {"primary": self.system.names[self.primary], "stability": self.stability,
                "branch": self.branch, "origin": self.origin, "phase": self.phase.tolist(),
                "passage": self.passage,
                "altitude_km": [None if not np.isfinite(a) else float(a) for a in self.altitude_km],
                "tof_days": [None if not np.isfinite(t) else float(self.system.days(abs(t)))
                             for t in self.tof]}


def periapsis_map(orbit, primary, stability="stable", branch="interior", n_points=60, *,
                  t_max=2 * math.pi, step_km=None, times=None, within=None, passage=1,
                  progress=None) -> PeriapsisMap:
    """Altitude of the first close periapsis about ``primary`` of each trajectory of a
    half-manifold (backward in time for the stable manifold: the periapsis the arriving
    trajectory leaves from).

    Apsides about the primary also occur while the trajectory still winds along the orbit;
    only those closer to the primary than ``within`` (LU; default half the orbit's least
    distance from the primary) count. ``passage`` = n maps the n-th such periapsis (a
    trajectory may pass the primary more than once between the parking orbit and the orbit).

    Parameters
    ----------
    orbit : PeriodicOrbit
        The orbit.
    primary : int or str
        The primary.
    stability : {"stable", "unstable"}
        The manifold.
    branch : str
        The branch.
    n_points, t_max, step_km, times, within, passage, progress
        Sampling of the orbit, propagation limit, step-off, which periapsis, progress lines.

    Returns
    -------
    PeriapsisMap
        The map.

    Raises
    ------
    InputError
        Bad options.

    Examples
    --------
    >>> pmap = periapsis_map(nrho, 0, "stable", "interior")     # doctest: +SKIP

    References
    ----------
    Koon, W. S., Lo, M. W., Marsden, J. E. & Ross, S. D., "Dynamical Systems, the Three-Body
    Problem and Space Mission Design", Marsden Books (2011), ch. 7 (from memory).
    """
    system = orbit.system
    system.require_dimensional("a periapsis altitude")
    p = primary_index(system, primary)
    ts, ostates, _, starts, _, _, _ = manifold_starts(orbit, stability, branch, n_points, "time",
                                                      step_km, None, times)
    c = np.array([system.positions[p], 0.0, 0.0])
    if within is None:
        within = 0.5 * float(np.min(np.linalg.norm(ostates[:, :3] - c, axis=1)))
    sign = 1.0 if stability == "unstable" else -1.0
    sec = apsis(system, p, "periapsis")
    cr = apsides(system, starts, sec, sign * t_max, passage, guard=False, progress=progress,
                 within=within).nth(passage)
    n = len(ts)
    alt = np.full(n, np.nan)
    tof = np.full(n, np.nan)
    st = np.full((n, 6), np.nan)
    body = (system.primary, system.secondary)[p]
    for k, i in enumerate(cr.trajectory):
        r = np.linalg.norm(cr.states[k, :3] - c)
        alt[i] = system.km(r) - body.radius_km
        tof[i] = cr.t[k]
        st[i] = cr.states[k]
    pm = PeriapsisMap(system, p, stability, branch, ts, ts / orbit.period, alt, tof, st,
                      _describe(orbit), within, passage)
    return pm


def _describe(orbit):
    return describe(orbit)


def parking_legs(orbit, primary, altitude_km, *, stability="stable", branch="interior",
                 n_points=60, t_max=2 * math.pi, step_km=None, max_legs=4, pmap=None,
                 progress=None):
    """Legs between a circular parking orbit at ``altitude_km`` about ``primary`` and ``orbit``.

    ``stability="stable"``: arrival at the orbit (departure burn at periapsis from the parking
    orbit); ``"unstable"``: departure from the orbit (insertion burn into the parking orbit).
    Each crossing of the target altitude by the periapsis map is refined in the departure
    phase by Brent's method to the altitude within 1 m.

    Raises
    ------
    NoSolutionError
        No trajectory's periapsis reaches the altitude (the message gives the lowest found).

    Parameters
    ----------
    orbit : PeriodicOrbit
        The orbit.
    primary : int or str
        The primary the parking orbit circles.
    altitude_km : float
        The parking orbit's altitude.
    stability, branch : str
        Arrival (``"stable"``) or departure (``"unstable"``), and the branch.
    n_points, t_max, step_km, max_legs, pmap, progress
        Sampling, limits, a precomputed :class:`PeriapsisMap`, progress lines.

    Returns
    -------
    list of Leg
        Ascending in Δv.

    Examples
    --------
    >>> legs = parking_legs(nrho, "earth", 200.0)               # doctest: +SKIP

    References
    ----------
    Koon, W. S., Lo, M. W., Marsden, J. E. & Ross, S. D., "Dynamical Systems, the Three-Body
    Problem and Space Mission Design", Marsden Books (2011), ch. 7 (from memory); Brent, R. P., "Algorithms for Minimization without
    Derivatives", Prentice-Hall (1973), ch. 4.
    """
    system = orbit.system
    p = primary_index(system, primary)
    altitude_km = number_in("parking altitude (km)", altitude_km, 0.0)
    pm = pmap or periapsis_map(orbit, p, stability, branch, n_points, t_max=t_max,
                               step_km=step_km, progress=progress)
    alt = pm.altitude_km
    n = len(alt)
    ok = np.isfinite(alt)
    if not ok.any():
        raise NoSolutionError(f"no trajectory of the {stability} {branch} manifold passes a "
                              f"periapsis about {system.names[p]} within {system.days(t_max):.1f} "
                              "days; try the other branch or a longer time limit")
    brackets = []
    for i in range(n):
        j = (i + 1) % n
        if ok[i] and ok[j] and (alt[i] - altitude_km) * (alt[j] - altitude_km) <= 0:
            brackets.append((i, j))
    if not brackets:
        lo, hi = float(np.nanmin(alt)), float(np.nanmax(alt))
        near = lo if lo > altitude_km else hi
        raise NoSolutionError(
            f"no periapsis of the {stability} {branch} manifold of {pm.origin} reaches "
            f"{altitude_km:g} km above {system.names[p]}: the periapses found span "
            f"{lo:.1f}..{hi:.1f} km (nearest feasible altitude {near:.1f} km)")
    sign = 1.0 if stability == "unstable" else -1.0
    sec = apsis(system, p, "periapsis")
    T = orbit.period
    within = pm.within

    def solve(t):
        _, _, _, starts, _, _, _ = manifold_starts(orbit, stability, branch, step_km=step_km,
                                                   times=np.array([t % T]))
        cr = apsides(system, starts, sec, sign * t_max, pm.passage, guard=False,
                     within=within).nth(pm.passage)
        if len(cr) == 0:
            return None
        return starts[0], cr

    def f(t):
        out = solve(t)
        if out is None:
            return np.nan
        cr = out[1]
        r = np.linalg.norm(cr.states[0, :3] - np.array([system.positions[p], 0, 0]))
        return system.km(r) - (system.primary, system.secondary)[p].radius_km - altitude_km

    legs = []
    for i, j in brackets[: max(1, max_legs)]:
        ta = pm.t_orbit[i]
        tb = pm.t_orbit[j] if j > i else pm.t_orbit[j] + T
        try:
            t = brentq(f, ta, tb, xtol=1e-12 * T, rtol=1e-14, maxiter=60)
        except ValueError:
            continue
        start, cr = solve(t)
        legs.append(_parking_leg(system, orbit, p, altitude_km, stability, branch, t, start, cr,
                                 step_km))
    if not legs:
        raise ConvergenceError("periapsis altitude refinement failed in every bracket", 0, [])
    legs.sort(key=lambda g: (g.dv_mps, g.tof))
    return legs


def _parking_leg(system, orbit, p, altitude_km, stability, branch, t_orbit, start, cr, step_km):
    ps = cr.states[0]
    tp = float(cr.t[0])
    info = periapsis_summary(system, ps, p)
    rel, vin = inertial_velocity(system, ps, p)
    unit = vin / np.linalg.norm(vin)
    dvn = info["dv"]
    name = system.names[p]
    parking = f"parking {name} {altitude_km:g}km"
    orbit_name = _describe(orbit)
    if stability == "stable":
        # leave the parking orbit at periapsis (speed up), coast to the orbit
        man = Maneuver(0.0, ps[:3].copy(), dvn * unit, _mps(system, abs(dvn)))
        segs = ((0.0, ps.copy(), float(-tp)),)
        origin, target, kind = parking, orbit_name, "arrival"
    else:
        man = Maneuver(float(tp), ps[:3].copy(), -dvn * unit, _mps(system, abs(dvn)))
        segs = ((0.0, start.copy(), float(tp)),)
        origin, target, kind = orbit_name, parking, "departure"
    details = {"periapsis": info, "t_orbit": t_orbit, "phase": (t_orbit / orbit.period) % 1.0,
               "primary": name, "target_altitude_km": altitude_km, "stability": stability,
               "branch": branch, "jacobi": orbit.jacobi,
               "tof_note": "time from periapsis to the manifold's step-off point on the orbit"}
    if stability == "stable":
        t_arr, d_arr = arrival_time(system, segs, orbit)
    else:
        t_arr, d_arr = abs(tp), math.nan
    return Leg(system, origin, target, (man,), man.dv_mps, abs(tp), ps.copy(), segs,
               "first periapsis of the manifold about the primary, departure phase refined by "
               "Brent's method to the target altitude; tangential burn at periapsis",
               kind, float(info.get("altitude_km", math.inf)), details, t_arr, d_arr)
