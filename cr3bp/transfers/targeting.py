"""Two-impulse targeted legs: the transfer arc that joins two positions in a given time.

This is the graph's own leg where no manifold connection applies (two fixed states, or any
two nodes whose states are known): the departure velocity is corrected by Newton's method so
that the arc reaches the arrival position after the time of flight, using the position-velocity
block of the state transition matrix (single shooting; Koon, Lo, Marsden & Ross, *Dynamical
Systems, the Three-Body Problem and Space Mission Design*, 2011, §4.6 "differential correction",
from memory). The leg costs the impulse at departure plus the one at arrival that matches the
arrival node's velocity. Manifold legs come from :mod:`cr3bp.tubes.connections`.

A targeted leg is a :class:`cr3bp.transfers.leg.Leg` in shooting form; its record
(:meth:`cr3bp.transfers.leg.Leg.record`: floats and lists) crosses a process boundary, goes
into the catalogue as JSON and comes back byte for byte.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import ConvergenceError
from ..integrate import impact, propagate
from .leg import LEG_FORMAT, Leg, Maneuver

#: Newton iterations on the departure velocity before giving up.
MAX_ITERATIONS = 30
#: Arrival position residual accepted, LU (~4e-6 m in Earth-Moon).
POSITION_TOL = 1e-11
#: Largest Newton step in velocity, LU/TU (damping far from the solution).
MAX_STEP = 0.5
RTOL = ATOL = 1e-12
#: What a targeted leg's ``method`` (the record's ``how``) says.
TARGETED_HOW = "two-impulse targeting: departure velocity by Newton's method on the arrival position"


def _impacts(system):
    r1, r2 = system.radii
    return [impact(k, r) for k, r in ((0, r1), (1, r2)) if r > 0]


def solve_departure(system, r0, v_guess, r1, tof):
    """Departure velocity that reaches ``r1`` from ``r0`` in ``tof`` (single shooting: Newton's
    method on the arrival position, the position-velocity block of the state transition matrix
    as its Jacobian, steps capped at ``MAX_STEP``).

    Parameters
    ----------
    system : System
    r0, r1 : ndarray (3,)
        Departure and arrival positions, LU (rotating frame).
    v_guess : ndarray (3,)
        First guess of the departure velocity, LU/TU.
    tof : float
        Time of flight, TU.

    Returns
    -------
    v0 : ndarray (3,)
        The departure velocity, LU/TU.
    iterations : int
    residual : float
        Arrival miss, LU (under ``POSITION_TOL``).

    Raises
    ------
    ConvergenceError
        No convergence in ``MAX_ITERATIONS``, or the arc strikes a primary.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> a = np.array([0.80, 0.0, 0.0, 0.0, 0.35, 0.0])
    >>> b = np.array([0.85, 0.05, 0.0, 0.05, 0.30, 0.0])
    >>> from cr3bp.transfers.targeting import solve_departure
    >>> v0, iterations, residual = solve_departure(em, a[:3], a[3:], b[:3], 3.0 / em.time_days)
    >>> residual < 1e-11
    True

    References
    ----------
    Koon, Lo, Marsden & Ross, *Dynamical Systems, the Three-Body Problem and Space Mission
    Design*, 2011, §4.6 (differential correction with the state transition matrix; from memory);
    Bryson & Ho, *Applied Optimal Control*, 1975, ch. 7 (shooting on boundary conditions; from
    memory).
    """
    v = np.array(v_guess, dtype=float)
    res = []
    events = _impacts(system)
    for it in range(1, MAX_ITERATIONS + 1):
        arc = propagate(system, np.concatenate([r0, v]), tof, stm=True, rtol=RTOL, atol=ATOL, events=events)
        if arc.status != "time":
            raise ConvergenceError(f"targeted arc ends in {arc.status} at t = {arc.t_final:.6g} TU",
                                   it, res, v.copy())
        f = arc.final_state[:3] - r1
        res.append(float(np.linalg.norm(f)))
        if res[-1] < POSITION_TOL:
            return v, it, res[-1]
        step = np.linalg.lstsq(arc.stm[:3, 3:], -f, rcond=None)[0]
        n = np.linalg.norm(step)
        if not np.isfinite(n):
            break
        if n > MAX_STEP:
            step *= MAX_STEP / n
        v = v + step
    raise ConvergenceError(f"targeting did not converge in {MAX_ITERATIONS} iterations "
                           f"(arrival miss {res[-1] if res else math.nan:.3e} LU)", MAX_ITERATIONS, res, v)


def targeted_leg(system, s_from, s_to, tof, patches=4) -> Leg:
    """The two-impulse leg from state ``s_from`` to state ``s_to`` in ``tof`` TU.

    Parameters
    ----------
    system : System
    s_from, s_to : array_like (6,)
        The end nodes' states, LU and LU/TU.
    tof : float
        Time of flight, TU.
    patches : int
        Shooting segments the arc is cut into.

    Returns
    -------
    cr3bp.transfers.leg.Leg
        In shooting form: ``dv_mps`` (both impulses), ``maneuvers`` (at departure and arrival,
        rotating-frame Δv vectors in LU/TU), ``patch_times`` / ``patch_states`` (the arc at
        ``patches`` evenly spaced times), ``departure_state`` / ``arrival_state`` (the nodes'
        states), ``min_altitude_km`` (least altitude over each primary along the arc), and under
        ``details`` the altitude over each body, the Newton iterations and the arrival miss (LU).

    Raises
    ------
    ConvergenceError
        The targeting does not converge or the arc strikes a primary.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> a = np.array([0.80, 0.0, 0.0, 0.0, 0.35, 0.0])
    >>> b = np.array([0.85, 0.05, 0.0, 0.05, 0.30, 0.0])
    >>> from cr3bp.transfers.targeting import targeted_leg
    >>> leg = targeted_leg(em, a, b, 3.0 / em.time_days, patches=3)
    >>> leg.solver, [m.where for m in leg.maneuvers], leg.patch_states.shape
    ('targeted', ['departure', 'arrival'], (3, 6))

    References
    ----------
    Koon, Lo, Marsden & Ross, *Dynamical Systems, the Three-Body Problem and Space Mission
    Design*, 2011, §4.6 (differential correction with the state transition matrix; from memory);
    Bryson & Ho, *Applied Optimal Control*, 1975, ch. 7 (shooting on boundary conditions; from
    memory).
    """
    s_from = np.asarray(s_from, dtype=float)
    s_to = np.asarray(s_to, dtype=float)
    v0, iterations, residual = solve_departure(system, s_from[:3], s_from[3:], s_to[:3], tof)
    start = np.concatenate([s_from[:3], v0])
    times = np.linspace(0.0, tof, patches + 1)
    arc = propagate(system, start, tof, rtol=RTOL, atol=ATOL)
    sampled = propagate(system, start, tof, rtol=RTOL, atol=ATOL, t_eval=times)
    end = sampled.states[-1]
    dv1 = v0 - s_from[3:]
    dv2 = s_to[3:] - end[3:]
    alts = {}
    for k, name in enumerate(system.names):
        d = np.linalg.norm(arc.states[:, :3] - np.array([system.positions[k], 0.0, 0.0]), axis=1).min()
        alts[name.lower()] = float(system.km(d) - system.km(system.radii[k]))
    mans = (Maneuver(0.0, s_from[:3].copy(), dv1, float(system.mps(np.linalg.norm(dv1))), "departure"),
            Maneuver(float(tof), end[:3].copy(), dv2, float(system.mps(np.linalg.norm(dv2))), "arrival"))
    return Leg(system, "", "", mans, float(system.mps(np.linalg.norm(dv1)) + system.mps(np.linalg.norm(dv2))),
               float(tof), None, ((0.0, start, float(tof)),), TARGETED_HOW,
               min_altitude_km=min(alts.values()) if alts else math.inf,
               details={"altitude_km_by_body": alts, "iterations": int(iterations),
                        "arrival_miss_lu": float(residual)},
               solver="targeted", format=LEG_FORMAT, patch_times=times[:-1].copy(),
               patch_states=sampled.states[:-1].copy(), departure_state=s_from.copy(),
               arrival_state=s_to.copy(), final_state=end.copy())
