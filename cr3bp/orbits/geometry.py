"""Sizes and closest approaches of a closed trajectory.

* Extremes of x, y, z: located exactly as the events vx = 0, vy = 0, vz = 0 of the
  full-period propagation (the integrator finds them on its dense output), together with the
  end points.
* Closest approaches: first found on the integrator's accepted steps (which crowd where the
  motion is fast, e.g. at perilune), then refined on a fine grid from a short re-propagation
  around the minimum, and finally by the vertex of the parabola through the three best
  samples (the error of that last step is third order in the grid spacing). When the window
  of the sampled minimum holds an exact point of the trajectory where the distance is
  stationary and curves upward (the start, or a located perpendicular crossing: symmetric
  orbits cross their symmetry plane or axis with (r - c) . v = 0 for a primary c on the x
  axis), that point is the closest approach and no re-propagation is needed.
"""

from __future__ import annotations

import math

import numpy as np

from .. import dynamics
from ..integrate import plane, propagate

_FINE = 41


def _refine(system, arc, values_of, i, sign):
    """Refined extreme (sign=+1 max, -1 min) of values_of(states) near sample i of arc."""
    n = len(arc.t)
    i0, i1 = max(i - 1, 0), min(i + 1, n - 1)
    t0, t1 = float(arc.t[i0]), float(arc.t[i1])
    if t1 <= t0:
        return float(values_of(arc.states[i:i + 1])[0])
    grid = np.linspace(0.0, t1 - t0, _FINE)
    sub = propagate(system, arc.states[i0], t1 - t0, t_eval=grid)
    v = sign * values_of(sub.states)
    j = int(np.argmax(v))
    best = v[j]
    if 0 < j < len(v) - 1:
        a, b, c = v[j - 1], v[j], v[j + 1]
        den = a - 2 * b + c
        if den < 0:
            best = b - 0.125 * (a - c) ** 2 / den
    return float(sign * best)


#: events whose crossings are the extremes of x, y, z
EXTREME_EVENTS = tuple(plane(c, 0.0, 0, terminal=False, label=f"{c}=0") for c in ("vx", "vy", "vz"))


def extremes(system, arc):
    """Amplitudes and closest approaches of a full-period arc.

    The arc must have been propagated with ``events=EXTREME_EVENTS``. Ax, Ay: half the extent in
    x, y; Az: the largest |z|; d1, d2: least distance to the larger and the smaller primary
    (conventions in :mod:`cr3bp.orbits.orbit`), refined at the located stationary points.

    Parameters
    ----------
    system : System
    arc : Arc
        Full-period propagation with the extreme events.

    Returns
    -------
    amplitude_lu : tuple of float
        (Ax, Ay, Az) in LU.
    closest_approach_lu : tuple of float
        (d1, d2) in LU.

    Raises
    ------
    None

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967 (the rotating frame and the
       primaries' positions; from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.integrate import propagate
    >>> from cr3bp.orbits import geometry, seeds, shooting
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> o = shooting.correct(em, sd.state, sd.half_period, sd.symmetry)
    >>> arc = propagate(em, o.state, o.period, events=geometry.EXTREME_EVENTS)
    >>> amp, near = geometry.extremes(em, arc)
    >>> bool(round(amp[0], 5) == round(o.amplitude_lu[0], 5))
    True
    """
    s = arc.states
    t = arc.t
    mu = system.mu
    events = arc.events
    pts = np.array([s[0], s[-1]] + [e.state for e in events])
    out = [0.5 * (pts[:, 0].max() - pts[:, 0].min()), 0.5 * (pts[:, 1].max() - pts[:, 1].min()),
           float(np.abs(pts[:, 2]).max())]
    approach = []
    n = len(s)
    yz2 = s[:, 1] ** 2 + s[:, 2] ** 2
    for xc in (-mu, 1.0 - mu):
        i = int(np.argmin((s[:, 0] - xc) ** 2 + yz2))
        # exact points of the trajectory in the window of the sampled minimum where the
        # distance is stationary: the start, and the located events (perpendicular crossings)
        lo, hi = t[max(i - 1, 0)], t[min(i + 1, n - 1)]
        cands = [s[0]] if i == 0 else []
        cands += [e.state for e in events if lo < e.t < hi]
        exact = [d for d in (_stationary_minimum(mu, c, xc) for c in cands) if d is not None]
        if exact:
            approach.append(min(exact))
        else:
            f = lambda st, xc=xc: np.sqrt((st[:, 0] - xc) ** 2 + st[:, 1] ** 2 + st[:, 2] ** 2)  # noqa: E731
            approach.append(_refine(system, arc, f, i, -1))
    return tuple(out), tuple(approach)


#: |(r - c) . v| / (|r - c| |v|) below which a point counts as stationary in distance: at the
#: located perpendicular crossings it is ~1e-10 (the event and the periodicity tolerances);
#: the distance there exceeds the true minimum by rate^2 |v|^2 / (2 (|v|^2 + (r - c) . a)) of
#: itself (second order: ~1e-20 unless the distance hardly curves, as on a near-circular arc
#: about the primary).
STATIONARY_RATE = 1e-9


def _stationary_minimum(mu, state, xc):
    """The distance from (xc, 0, 0) to ``state`` when it is a local minimum along the
    trajectory, else None. A local minimum: zero rate, ``(r - c) . v = 0`` to
    :data:`STATIONARY_RATE` (as at the perpendicular crossings of every symmetric orbit: on the
    x-z plane with vx = vz = 0, or on the x axis with vx = 0), and positive curvature,
    ``d2(|r - c|^2 / 2)/dt2 = |v|^2 + (r - c) . a > 0``."""
    x, y, z, vx, vy, vz = state.tolist()
    rx = x - xc
    rr = rx * rx + y * y + z * z
    vv = vx * vx + vy * vy + vz * vz
    if abs(rx * vx + y * vy + z * vz) > STATIONARY_RATE * math.sqrt(rr * vv):
        return None
    a = dynamics.acceleration(mu, state)
    if vv + rx * a[3] + y * a[4] + z * a[5] > 0.0:
        return math.sqrt(rr)
    return None


def winding_about_larger(system, arc) -> int:
    """Whole turns of the rotating-frame position about the larger primary over one period.

    Signed, counter-clockwise positive: the angle ``atan2(y, x + mu)`` unwrapped along the
    integrator's accepted steps (re-sampled on a fine grid when a step turns by more than a
    quarter turn). For a p:q resonant orbit it is ``p - q``: in one period ``T = 2 pi q`` the
    spacecraft turns ``2 pi p`` in inertial space and the frame ``2 pi q``.

    Parameters
    ----------
    system : System
    arc : Arc
        A closed full-period arc.

    Returns
    -------
    int

    Raises
    ------
    None

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011 (resonant orbits in the rotating frame).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.integrate import propagate
    >>> from cr3bp.orbits import geometry, seeds, shooting
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> o = shooting.correct(em, sd.state, sd.half_period, sd.symmetry)
    >>> geometry.winding_about_larger(em, propagate(em, o.state, o.period))  # L1 orbit: Earth not enclosed
    0
    """
    s = arc.states
    ang = np.unwrap(np.arctan2(s[:, 1], s[:, 0] + system.mu))
    if len(ang) < 2 or np.max(np.abs(np.diff(ang))) > 0.5 * math.pi:
        fine = propagate(system, s[0], float(arc.t[-1] - arc.t[0]),
                         t_eval=np.linspace(0.0, float(arc.t[-1] - arc.t[0]), 20001))
        ang = np.unwrap(np.arctan2(fine.states[:, 1], fine.states[:, 0] + system.mu))
    return int(round((ang[-1] - ang[0]) / (2 * math.pi)))
