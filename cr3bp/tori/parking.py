"""Legs between a circular parking orbit about a primary and a hyperbolic torus, through the
first periapsis of the torus's stable (arrival) or unstable (departure) manifold.

Method: the parking legs of a periodic orbit (:mod:`cr3bp.tubes.parking`) with the torus's two
departure phases in place of the orbit's one. The half-manifold's departure points are a grid
on the torus (:func:`cr3bp.tori.manifolds.manifold_starts`: ``n_0`` stroboscopic times ``tau``
by ``n_1`` circle angles ``phi``; the torus point is the invariance circle's Fourier interpolant
at ``phi`` carried by the flow over ``tau``, Olikara & Scheeres, AAS 12-361, 2012, §II). Each
trajectory's first close periapsis about the primary gives an altitude over the grid (the
periapsis map); the target altitude is a curve on the torus, crossed between neighbouring grid
points along the circle (``phi``, periodic) or along the stroboscopic time (``tau``). The
crossings are taken cheapest first by the Δv interpolated between their two grid points, and
each is refined by Brent's method in its one phase (the other held) to the altitude within
1 m. The manoeuvre is the tangential burn at periapsis of :mod:`cr3bp.tubes.parking`::

    dv = | v + omega x (r - r_p) | - sqrt(GM_p / |r - r_p|)

(Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed., 2013, §6.3 and §3.7).
Manifolds of tori: Gómez & Mondelo, Physica D 157, 2001, §5; Olikara, PhD thesis, University
of Colorado, 2016, ch. 5. Brent, *Algorithms for Minimization without Derivatives*, 1973, ch. 4.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import brentq

from ..errors import ConvergenceError, NoSolutionError
from ..integrate import propagate_batch
from ..transfers.leg import Leg, Maneuver, _mps
from ..tubes.manifolds import branch_sign, on_energy, step_lu
from ..tubes.parking import PeriapsisMap, inertial_velocity, periapsis_summary
from ..tubes.sections import apsides, apsis, primary_index
from ..validate import number_in
from . import circle, solver
from .manifolds import describe, grid_shape, manifold_starts, modes

#: Refinements tried per leg asked for (a bracket whose ends disagree once refined is skipped).
TRIES_PER_LEG = 2


@dataclass(frozen=True)
class TorusPeriapsisMap(PeriapsisMap):
    """The periapsis map of a torus's half-manifold: a :class:`cr3bp.tubes.parking.PeriapsisMap`
    over the grid of departure points on the torus. ``t_orbit`` holds each point's time ``tau``
    along the stroboscopic period, ``phase`` its ``tau / T``, ``circle_angle`` its angle ``phi``
    on the invariance circle at departure (rad; the torus angle is ``phi + rho tau / T``).

    Parameters
    ----------
    *args
        The fields of :class:`cr3bp.tubes.parking.PeriapsisMap`, in its order.
    circle_angle : ndarray
        ``phi`` of each departure point, rad.
    grid : (int, int)
        ``(n_0, n_1)``: stroboscopic times by circle angles (``tau`` slowest).
    torus : Torus
        The torus.

    Examples
    --------
    >>> from cr3bp.tori.torus import example_torus
    >>> from cr3bp.tori.parking import torus_periapsis_map
    >>> pm = torus_periapsis_map(example_torus(), "moon", "stable", "interior", 4, t_max=0.5)
    >>> pm.grid, pm.to_dict()["kind"]
    ((2, 2), 'torus periapsis map')

    References
    ----------
    Gómez & Mondelo, Physica D 157, 2001, §5 (manifolds of tori); Koon, Lo, Marsden & Ross,
    *Dynamical Systems, the Three-Body Problem and Space Mission Design*, 2011, ch. 7 (from
    memory).
    """

    circle_angle: np.ndarray = field(default=None, compare=False)
    grid: tuple = (0, 0)
    torus: object = field(default=None, compare=False, repr=False)

    def to_dict(self) -> dict:
        d = super().to_dict()
        d["kind"] = "torus periapsis map"
        d["torus_phase_deg"] = [[float(math.degrees(2 * math.pi * p)), float(math.degrees(a))]
                                for p, a in zip(self.phase, self.torus_angle)]
        return d

    @property
    def torus_angle(self) -> np.ndarray:
        """The torus angle ``theta_1 = phi + rho tau / T`` of each departure point, rad."""
        T = self.torus.stroboscopic_time
        return self.circle_angle + self.torus.rotation * self.t_orbit / T


def not_hyperbolic(stability, what) -> str | None:
    """Why a torus of this stability has no leg along its manifolds (None: it is hyperbolic, or
    its stability was not computed and the manifold's own modes will tell).

    Parameters
    ----------
    stability : dict
        The torus's stability (:func:`cr3bp.tori.stability.stability`: ``kind``,
        ``largest_modulus``), or an empty dict.
    what : str
        Where the leg would go, in words ("capture or escape").

    Returns
    -------
    str or None
        One line naming the largest multiplier modulus.

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.tori.parking import not_hyperbolic
    >>> not_hyperbolic({"kind": "hyperbolic", "largest_modulus": 40.1}, "capture or escape") is None
    True
    >>> not_hyperbolic({"kind": "neutrally stable (elliptic)", "largest_modulus": 1.0}, "capture or escape")
    'not hyperbolic (largest multiplier modulus 1): it has no stable or unstable manifold to a capture or escape'

    References
    ----------
    Gómez & Mondelo, Physica D 157, 2001, §5 (the manifolds of hyperbolic tori); Jorba,
    Nonlinearity 14, 2001 (the normal multipliers of an invariant curve).
    """
    st = stability or {}
    if st.get("kind", "hyperbolic") == "hyperbolic":
        return None
    return (f"not hyperbolic (largest multiplier modulus {st.get('largest_modulus', float('nan')):.6g}): it has "
            f"no stable or unstable manifold to a {what}")


def _grid(torus, stability, branch, n_points, step_km):
    th0, th1, tau, states, w, starts, m, d, d_km = manifold_starts(torus, stability, branch, n_points, step_km)
    n0, n1 = grid_shape(n_points)
    phi = np.tile(circle.angles(n1), n0)
    return tau, phi, states, starts, m, (n0, n1)


def torus_periapsis_map(torus, primary, stability="stable", branch="interior", n_points=100, *,
                        t_max=2 * math.pi, step_km=None, within=None, passage=1,
                        progress=None) -> TorusPeriapsisMap:
    """Altitude of the first close periapsis about ``primary`` of each trajectory of a torus's
    half-manifold (backward in time for the stable manifold: the periapsis the arriving
    trajectory leaves from), over the grid of departure points on the torus.

    Only periapses closer to the primary than ``within`` count (LU; default half the least
    distance of the grid's torus points from the primary), as for an orbit
    (:func:`cr3bp.tubes.parking.periapsis_map`).

    Parameters
    ----------
    torus : Torus
        A hyperbolic torus.
    primary : int or str
        The primary.
    stability : {"stable", "unstable"}
        The manifold.
    branch : {"interior", "exterior"}
        The branch.
    n_points : int
        Departure points, as a grid of :func:`cr3bp.tori.manifolds.grid_shape`.
    t_max, step_km, within, passage, progress
        Propagation limit (TU), step-off, which periapses count, which one, progress lines.

    Returns
    -------
    TorusPeriapsisMap

    Raises
    ------
    InputError
        Bad stability, branch, primary or step.
    NoSolutionError
        The torus is not hyperbolic.

    Examples
    --------
    >>> from cr3bp.tori.torus import example_torus
    >>> from cr3bp.tori.parking import torus_periapsis_map
    >>> pm = torus_periapsis_map(example_torus(), "moon", "stable", "interior", 9, t_max=0.5)
    >>> pm.altitude_km.shape, pm.circle_angle.shape
    ((9,), (9,))

    References
    ----------
    Koon, Lo, Marsden & Ross, *Dynamical Systems, the Three-Body Problem and Space Mission
    Design*, 2011, ch. 7 (periapsis maps, from memory); Gómez & Mondelo, Physica D 157, 2001, §5.
    """
    system = torus.system
    system.require_dimensional("a periapsis altitude")
    p = primary_index(system, primary)
    tau, phi, states, starts, _, shape = _grid(torus, stability, branch, n_points, step_km)
    c = np.array([system.positions[p], 0.0, 0.0])
    if within is None:
        within = 0.5 * float(np.min(np.linalg.norm(states[:, :3] - c, axis=1)))
    sign = 1.0 if stability == "unstable" else -1.0
    cr = apsides(system, starts, apsis(system, p, "periapsis"), sign * t_max, passage, guard=False,
                 progress=progress, within=within).nth(passage)
    n = len(tau)
    alt, tof, st = np.full(n, np.nan), np.full(n, np.nan), np.full((n, 6), np.nan)
    body = (system.primary, system.secondary)[p]
    for k, i in enumerate(cr.trajectory):
        alt[i] = system.km(np.linalg.norm(cr.states[k, :3] - c)) - body.radius_km
        tof[i] = cr.t[k]
        st[i] = cr.states[k]
    return TorusPeriapsisMap(system, p, stability, branch, tau, tau / torus.stroboscopic_time, alt, tof, st,
                             describe(torus), within, passage, circle_angle=phi, grid=shape, torus=torus)


class _Starts:
    """The step-off state of the half-manifold at the departure phases ``(tau, phi)``, exactly as
    :func:`cr3bp.tori.manifolds.manifold_starts` makes the grid's (same direction field, sign,
    step and energy)."""

    def __init__(self, torus, stability, branch, step_km):
        self.torus, self.system = torus, torus.system
        self.m = modes(torus)
        self.v = self.m.unstable if stability == "unstable" else self.m.stable
        self.d, self.d_km = step_lu(self.system, step_km)
        u0 = circle.evaluate(torus.circle, [0.0])[0]
        v0 = circle.evaluate(self.v, [0.0])[0]
        self.sign = branch_sign(self.system, u0, v0 / np.linalg.norm(v0[:3]), branch)

    def __call__(self, tau, phi):
        """``(start state, torus point)``."""
        t = self.torus
        u = circle.evaluate(t.circle, [float(phi)])
        dv = circle.evaluate(self.v, [float(phi)])
        if tau > 0.0:
            r = propagate_batch(self.system, np.ascontiguousarray(u), float(tau), rtol=solver.RTOL,
                                atol=solver.ATOL, stm=True)
            u, dv = r.states, np.einsum("kij,kj->ki", r.stm, dv)
        w = self.sign * dv / np.linalg.norm(dv[:, :3], axis=1)[:, None]
        return on_energy(self.system, u + self.d * w, t.jacobi)[0], np.asarray(u[0], dtype=float)


def _brackets(pm, altitude_km):
    """Neighbouring grid points whose periapsis altitudes straddle ``altitude_km``: ``(i, j,
    which)`` with ``which`` "phi" (along the circle, periodic) or "tau" (along the
    stroboscopic time)."""
    alt = pm.altitude_km
    ok = np.isfinite(alt)
    n0, n1 = pm.grid
    out = []
    for i0 in range(n0):
        for i1 in range(n1):
            i = i0 * n1 + i1
            nbrs = []
            if n1 > 1 and not (n1 == 2 and i1 == 1):      # (two points: one pair, not two)
                nbrs.append((i0 * n1 + (i1 + 1) % n1, "phi"))
            if i0 + 1 < n0:
                nbrs.append(((i0 + 1) * n1 + i1, "tau"))
            for j, which in nbrs:
                if ok[i] and ok[j] and (alt[i] - altitude_km) * (alt[j] - altitude_km) <= 0:
                    out.append((i, j, which))
    return out


def _estimate_dv(pm, i, j, altitude_km):
    """The tangential Δv at the target altitude interpolated between grid points i and j (LU/TU)."""
    a = [periapsis_summary(pm.system, pm.states[k], pm.primary)["dv"] for k in (i, j)]
    hi, hj = pm.altitude_km[i], pm.altitude_km[j]
    s = 0.5 if hi == hj else (altitude_km - hi) / (hj - hi)
    return a[0] + s * (a[1] - a[0])


def torus_parking_legs(torus, primary, altitude_km, *, stability="stable", branch="interior",
                       n_points=100, t_max=2 * math.pi, step_km=None, max_legs=4, pmap=None,
                       progress=None):
    """Legs between a circular parking orbit at ``altitude_km`` about ``primary`` and a
    hyperbolic ``torus`` through the first periapsis of its manifold (module notes).

    ``stability="stable"``: arrival at the torus (departure burn at periapsis from the parking
    orbit); ``"unstable"``: departure from the torus (insertion burn into the parking orbit).
    The crossings of the target altitude on the periapsis map are refined cheapest first (by
    the Δv interpolated between their grid points), each by Brent's method in one departure
    phase to the altitude within 1 m, until ``max_legs`` legs are found.

    Parameters
    ----------
    torus : Torus
        A hyperbolic torus.
    primary : int or str
        The primary the parking orbit circles.
    altitude_km : float
        The parking orbit's altitude.
    stability, branch : str
        Arrival (``"stable"``) or departure (``"unstable"``), and the half-manifold.
    n_points, t_max, step_km, max_legs, pmap, progress
        Departure points, time limit (TU), step-off, legs wanted, a precomputed
        :class:`TorusPeriapsisMap`, progress lines.

    Returns
    -------
    list of Leg
        Ascending in Δv; kind "arrival" or "departure"; ``details`` hold the periapsis
        (:func:`cr3bp.tubes.parking.periapsis_summary`), the departure phases ``torus_tau``
        (TU) and ``torus_circle_angle`` (rad), ``torus_phase_deg`` (the torus angles), the
        torus point ``torus_state`` and ``step_off_km``.

    Raises
    ------
    InputError
        Bad stability, branch, primary, altitude or step.
    NoSolutionError
        The torus is not hyperbolic, or no periapsis reaches the altitude (the message gives
        the range found).
    ConvergenceError
        Every refinement failed.

    Examples
    --------
    >>> from cr3bp.tori.torus import example_torus
    >>> from cr3bp.tori.parking import torus_parking_legs
    >>> torus_parking_legs(example_torus(), "moon", -5.0)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: parking altitude (km) '-5.0' is outside the allowed range [0, inf)

    References
    ----------
    Koon, Lo, Marsden & Ross, *Dynamical Systems, the Three-Body Problem and Space Mission
    Design*, 2011, ch. 7 (from memory); Gómez & Mondelo, Physica D 157, 2001, §5; Brent,
    *Algorithms for Minimization without Derivatives*, 1973, ch. 4.
    """
    system = torus.system
    p = primary_index(system, primary)
    altitude_km = number_in("parking altitude (km)", altitude_km, 0.0)
    pm = pmap or torus_periapsis_map(torus, p, stability, branch, n_points, t_max=t_max, step_km=step_km,
                                     progress=progress)
    alt = pm.altitude_km
    if not np.isfinite(alt).any():
        raise NoSolutionError(f"no trajectory of the {stability} {branch} manifold of {pm.origin} passes a "
                              f"periapsis about {system.names[p]} within {system.days(t_max):.1f} days; try "
                              "the other branch or a longer time limit")
    brackets = _brackets(pm, altitude_km)
    if not brackets:
        lo, hi = float(np.nanmin(alt)), float(np.nanmax(alt))
        near = lo if lo > altitude_km else hi
        raise NoSolutionError(
            f"no periapsis of the {stability} {branch} manifold of {pm.origin} reaches {altitude_km:g} km "
            f"above {system.names[p]}: the periapses found span {lo:.1f}..{hi:.1f} km (nearest feasible "
            f"altitude {near:.1f} km)")
    brackets.sort(key=lambda b: abs(_estimate_dv(pm, b[0], b[1], altitude_km)))
    starts = _Starts(torus, stability, branch, step_km)
    sign = 1.0 if stability == "unstable" else -1.0
    sec = apsis(system, p, "periapsis")
    centre = np.array([system.positions[p], 0.0, 0.0])
    radius = (system.primary, system.secondary)[p].radius_km
    T = torus.stroboscopic_time

    def solve(tau, phi):
        s, base = starts(tau, phi)
        cr = apsides(system, s[None, :], sec, sign * t_max, pm.passage, guard=False,
                     within=pm.within).nth(pm.passage)
        return (None if len(cr) == 0 else cr), s, base

    legs = []
    for i, j, which in brackets[: TRIES_PER_LEG * max(1, int(max_legs))]:
        if len(legs) >= max(1, int(max_legs)):
            break
        tau_i, phi_i = float(pm.t_orbit[i]), float(pm.circle_angle[i])
        if which == "phi":
            a, b = phi_i, phi_i + 2 * math.pi / pm.grid[1]

            def phases(x, _tau=tau_i):
                return _tau, x
        else:
            a, b = tau_i, float(pm.t_orbit[j])

            def phases(x, _phi=phi_i):
                return x, _phi

        def f(x):
            cr = solve(*phases(x))[0]
            if cr is None:
                return np.nan
            return system.km(np.linalg.norm(cr.states[0, :3] - centre)) - radius - altitude_km
        try:
            x = brentq(f, a, b, xtol=1e-12 * (b - a + T), rtol=1e-14, maxiter=60)
        except (ValueError, RuntimeError):
            continue
        tau, phi = phases(x)
        cr, s, base = solve(tau, phi)
        if cr is None:
            continue
        legs.append(_leg(torus, p, altitude_km, stability, branch, tau, phi, s, base, cr, starts.d_km))
    if not legs:
        raise ConvergenceError("periapsis altitude refinement failed in every bracket", 0, [])
    legs.sort(key=lambda g: (g.dv_mps, g.tof))
    return legs


def _leg(torus, p, altitude_km, stability, branch, tau, phi, start, base, cr, step_off_km):
    system = torus.system
    ps = cr.states[0]
    tp = float(cr.t[0])
    info = periapsis_summary(system, ps, p)
    rel, vin = inertial_velocity(system, ps, p)
    unit = vin / np.linalg.norm(vin)
    dvn = info["dv"]
    parking = f"parking {system.names[p]} {altitude_km:g}km"
    name = describe(torus)
    if stability == "stable":
        # leave the parking orbit at periapsis (speed up), coast to the torus
        man = Maneuver(0.0, ps[:3].copy(), dvn * unit, _mps(system, abs(dvn)))
        segs = ((0.0, ps.copy(), float(-tp)),)
        origin, target, kind = parking, name, "arrival"
    else:
        man = Maneuver(float(tp), ps[:3].copy(), -dvn * unit, _mps(system, abs(dvn)))
        segs = ((0.0, start.copy(), float(tp)),)
        origin, target, kind = name, parking, "departure"
    T = torus.stroboscopic_time
    details = {"periapsis": info, "primary": system.names[p], "target_altitude_km": altitude_km,
               "stability": stability, "branch": branch, "jacobi": float(torus.jacobi),
               "torus_tau": float(tau), "torus_circle_angle": float(phi),
               "torus_phase_deg": [float(math.degrees(2 * math.pi * tau / T) % 360.0),
                                   float(math.degrees(phi + torus.rotation * tau / T) % 360.0)],
               "torus_state": [float(v) for v in base], "step_off_km": float(step_off_km),
               "tof_note": "time from periapsis to the manifold's step-off point on the torus"}
    return Leg(system, origin, target, (man,), man.dv_mps, abs(tp), ps.copy(), segs,
               "first periapsis of the torus's manifold about the primary, departure phase refined by "
               "Brent's method to the target altitude; tangential burn at periapsis",
               kind, float(info.get("altitude_km", math.inf)), details)


__all__ = ["not_hyperbolic", "TorusPeriapsisMap", "torus_periapsis_map", "torus_parking_legs"]
