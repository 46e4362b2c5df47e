"""Sizes and closest approaches of a closed trajectory.

* Extremes of x, y, z: located exactly as the events vx = 0, vy = 0, vz = 0 of the
  full-period propagation (the integrator finds them on its dense output), together with the
  end points.
* Closest approaches: first found on the integrator's accepted steps (which crowd where the
  motion is fast, e.g. at perilune), then refined on a fine grid from a short re-propagation
  around the minimum, and finally by the vertex of the parabola through the three best
  samples (the error of that last step is third order in the grid spacing).
"""

from __future__ import annotations

import numpy as np

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
    """(amplitude_lu (Ax, Ay, Az), closest_approach_lu (d1, d2)) of a full-period arc that was
    propagated with ``events=EXTREME_EVENTS``.

    Ax, Ay: half the extent in x, y; Az: the largest |z|; d1, d2: least distance to the larger
    and the smaller primary (conventions in :mod:`cr3bp.orbits.orbit`).
    """
    s = arc.states
    mu = system.mu
    pts = [arc.states[0], arc.states[-1]] + [e.state for e in arc.events]
    pts = np.array(pts)
    out = [0.5 * (pts[:, 0].max() - pts[:, 0].min()), 0.5 * (pts[:, 1].max() - pts[:, 1].min()),
           float(np.abs(pts[:, 2]).max())]
    approach = []
    for xc in (-mu, 1.0 - mu):
        f = lambda st, xc=xc: np.sqrt((st[:, 0] - xc) ** 2 + st[:, 1] ** 2 + st[:, 2] ** 2)  # noqa: E731
        approach.append(_refine(system, arc, f, int(np.argmin(f(s))), -1))
    return tuple(out), tuple(approach)
