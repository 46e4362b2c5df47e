"""Sizes and closest approaches of a closed trajectory.

Extremes are first found on the integrator's accepted steps (which crowd where the motion is
fast, e.g. at perilune), then refined on a fine grid from a short re-propagation around each
extreme, and finally by the vertex of the parabola through the three best samples (the error
of that last step is third order in the grid spacing).
"""

from __future__ import annotations

import numpy as np

from ..integrate import propagate

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


def extremes(system, arc):
    """(amplitude_lu (Ax, Ay, Az), closest_approach_lu (d1, d2)) of a full-period arc.

    Ax, Ay: half the extent in x, y; Az: the largest |z|; d1, d2: least distance to the larger
    and the smaller primary (conventions in :mod:`cr3bp.orbits.orbit`).
    """
    s = arc.states
    mu = system.mu
    out = []
    for k in (0, 1):
        f = lambda st, k=k: st[:, k]  # noqa: E731
        hi = _refine(system, arc, f, int(np.argmax(s[:, k])), +1)
        lo = _refine(system, arc, f, int(np.argmin(s[:, k])), -1)
        out.append(0.5 * (hi - lo))
    fz = lambda st: np.abs(st[:, 2])  # noqa: E731
    zabs = fz(s)
    out.append(_refine(system, arc, fz, int(np.argmax(zabs)), +1) if zabs.max() > 0 else 0.0)
    approach = []
    for xc in (-mu, 1.0 - mu):
        f = lambda st, xc=xc: np.sqrt((st[:, 0] - xc) ** 2 + st[:, 1] ** 2 + st[:, 2] ** 2)  # noqa: E731
        approach.append(_refine(system, arc, f, int(np.argmin(f(s))), -1))
    return tuple(out), tuple(approach)
