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
    """CR3BP equations of motion (optionally with the STM), plain numpy.

    Parameters
    ----------
    t : float
        Time, TU (the equations are autonomous).
    s : ndarray (6,) or (42,)
        State, or state followed by the row-major 6x6 state transition matrix.
    mu : float
        Mass ratio.

    Returns
    -------
    ndarray
        The derivative, same shape as ``s``.

    Raises
    ------
    None

    Examples
    --------
    At rest at the first Lagrange point of the Earth-Moon system nothing moves:

    >>> import numpy as np
    >>> from cr3bp.systems import system
    >>> from cr3bp.equilibria import lagrange_point
    >>> from cr3bp.integrate.reference import eom_numpy
    >>> em = system("earth-moon")
    >>> s = np.r_[lagrange_point(em, "L1").position, 0.0, 0.0, 0.0]
    >>> bool(np.abs(eom_numpy(0.0, s, em.mu)).max() < 1e-12)
    True

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §1.5 (the equations of motion
       in the rotating frame; from memory).
    """
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
    """Propagate with ``scipy.integrate.solve_ivp``; same arguments and result as ``propagate``.

    Parameters
    ----------
    system : System
    state : array (6,)
        LU and LU/TU.
    t_final : float
        TU (negative for backward).
    stm : bool
        Also integrate the state transition matrix.
    rtol, atol : float
    events : sequence of Event
    t_eval : array, optional
        Output times.
    method : str
        A ``solve_ivp`` method (default DOP853).

    Returns
    -------
    Arc

    Raises
    ------
    InputError
        A bad state or tolerance, or an item of ``events`` that is not an Event.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.systems import system
    >>> from cr3bp.integrate import propagate
    >>> from cr3bp.integrate.reference import propagate_scipy
    >>> em = system("earth-moon")
    >>> a = propagate_scipy(em, [0.8, 0, 0, 0, 0.3, 0], 1.0)
    >>> b = propagate(em, [0.8, 0, 0, 0, 0.3, 0], 1.0)
    >>> a.status, bool(np.abs(a.final_state - b.final_state).max() < 1e-9)
    ('time', True)

    References
    ----------
    .. [1] scipy documentation, :func:`scipy.integrate.solve_ivp`.
    .. [2] E. Hairer, S. P. Norsett and G. Wanner, *Solving Ordinary Differential Equations I*,
       2nd ed., Springer, 1993, §II.5 (DOP853; from memory).
    """
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
