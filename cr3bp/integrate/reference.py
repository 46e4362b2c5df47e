"""The same propagation interface driven by scipy's ``solve_ivp`` (DOP853) with a plain numpy
right-hand side. It is the baseline in benchmarks and a cross-check in tests; library code
uses the compiled integrator (:mod:`cr3bp.integrate.dop853`).
"""

from __future__ import annotations

import numpy as np

from .. import validate
from .arc import Arc, EventHit
from .events import ESCAPE, IMPACT, PLANE, table


def eom_numpy(t, s, mu):
    """CR3BP equations of motion (optionally with the STM), plain numpy."""
    x, y, z, vx, vy, vz = s[:6]
    dx1, dx2 = x + mu, x - 1 + mu
    r1 = np.sqrt(dx1 * dx1 + y * y + z * z)
    r2 = np.sqrt(dx2 * dx2 + y * y + z * z)
    a, b = (1 - mu) / r1**3, mu / r2**3
    d = np.empty_like(s)
    d[:6] = [vx, vy, vz, 2 * vy + x - a * dx1 - b * dx2, -2 * vx + y - (a + b) * y, -(a + b) * z]
    if s.size == 42:
        a5, b5 = 3 * (1 - mu) / r1**5, 3 * mu / r2**5
        h = np.array([
            [1 - a - b + a5 * dx1**2 + b5 * dx2**2, (a5 * dx1 + b5 * dx2) * y, (a5 * dx1 + b5 * dx2) * z],
            [0.0, 1 - a - b + (a5 + b5) * y * y, (a5 + b5) * y * z],
            [0.0, 0.0, -a - b + (a5 + b5) * z * z]])
        h[1, 0], h[2, 0], h[2, 1] = h[0, 1], h[0, 2], h[1, 2]
        A = np.zeros((6, 6))
        A[:3, 3:] = np.eye(3)
        A[3:, :3] = h
        A[3, 4], A[4, 3] = 2.0, -2.0
        d[6:] = (A @ s[6:].reshape(6, 6)).ravel()
    return d


def _plane_g(i, v):
    def g(t, s, *_):
        return s[i] - v
    return g


def _radius_g(c, v):
    def g(t, s, *_):
        return np.sqrt((s[0] - c) ** 2 + s[1] ** 2 + s[2] ** 2) - v
    return g


def _event_functions(system, tab):
    mu = system.mu
    centres = {-1: (0.0,), 0: (-mu,), 1: (1 - mu,)}
    funcs = []
    for row in tab:
        kind, idx, value, direction, terminal = int(row[0]), int(row[1]), row[2], int(row[3]), row[4] > 0
        g = _plane_g(idx, value) if kind == PLANE else _radius_g(centres[idx][0], value)
        g.direction = direction
        g.terminal = (int(row[5]) if terminal else False) if kind == PLANE else True
        funcs.append((g, kind))
    return funcs


def propagate_scipy(system, state, t_final, stm=False, rtol=1e-12, atol=1e-12, events=(),
                    t_eval=None, method="DOP853"):
    """Propagate with ``scipy.integrate.solve_ivp``; same arguments and result as ``propagate``."""
    from scipy.integrate import solve_ivp  # lazy: heavy library (scipy); imported here: scipy is only the baseline
    s0 = validate.state(system, state)
    rtol = validate.tolerance("rtol", rtol)
    atol = validate.tolerance("atol", atol)
    events = tuple(events or ())
    tab = table(events)
    y0 = np.concatenate([s0, np.eye(6).ravel()]) if stm else s0
    funcs = _event_functions(system, tab)
    sol = solve_ivp(eom_numpy, (0.0, float(t_final)), y0, method=method, rtol=rtol, atol=atol,
                    args=(system.mu,), events=[g for g, _ in funcs] or None, t_eval=t_eval)
    hits = []
    status = "time"
    if funcs:
        for k, (g, kind) in enumerate(funcs):
            for t, y in zip(sol.t_events[k], sol.y_events[k]):
                hits.append(EventHit(k, events[k].name, float(t), np.array(y[:6])))
        hits.sort(key=lambda h: h.t)
        if sol.status == 1:
            last = hits[-1]
            kind = int(tab[last.event, 0])
            status = {PLANE: "event", IMPACT: "impact", ESCAPE: "escape"}[kind]
    ys = sol.y.T
    phi = None
    if stm:
        if t_eval is None:
            phi = ys[-1, 6:].reshape(6, 6)
        else:
            sol2 = solve_ivp(eom_numpy, (0.0, sol.t[-1] if status == "time" else hits[-1].t), y0,
                             method=method, rtol=rtol, atol=atol, args=(system.mu,))
            phi = sol2.y[6:, -1].reshape(6, 6)
    return Arc(system, sol.t, np.ascontiguousarray(ys[:, :6]), phi, status, tuple(hits),
               int(sol.nfev), int(len(sol.t)))
