"""Multiple shooting for periodic orbits with no symmetry assumed (unstable, long or
asymmetric orbits: L3 halos, near-rectilinear halos, resonant orbits).

Method (Pavlak, "Mission design applications in the Earth-Moon system: transfer
trajectories and stationkeeping", MSc thesis, Purdue, 2010, ch. 3; Marchand, Howell & Wilson,
"An improved corrections process for constrained trajectory design in the n-body problem",
J. Spacecraft and Rockets 44, 2007): unknowns ``Z = (s_0 ... s_{N-1}, dt_0 ... dt_{N-1})``;
constraints ``phi_{dt_k}(s_k) - s_{k+1 mod N} = 0`` (continuity and closure), one phase
condition (a component of ``s_0`` held) and optionally one family condition (Jacobi constant
or period held). The system is underdetermined; the update is the least-norm Newton step
``dZ = -J^+ F`` (J^+ the Moore-Penrose pseudo-inverse, via numpy's lstsq), damped by halving
until the residual norm decreases (Armijo backtracking; common practice).

The monodromy is the product of the segment STMs, ``M = Phi_{N-1} ... Phi_0``.
"""

from __future__ import annotations

import numpy as np

from .. import dynamics
from .. import validate
from ..errors import ConvergenceError, InputError
from ..integrate import propagate
from . import geometry
from .orbit import PeriodicOrbit
from .shooting import COMPONENTS

TOL = 1e-11
#: a residual this small that no damped Newton step reduces further is the floor set by the
#: integration tolerance (RTOL/ATOL over N segments, amplified by the STMs): accepted as converged
#: and recorded as ``extra["stalled_at"]``. Measured: 1.3e-11 on some hosts for a 6-patch L2 halo.
FLOOR = 1e-10
MAX_ITER = 40
MAX_HALVINGS = 8
RTOL = ATOL = 1e-13


def patches_from_trajectory(system, state, period, n: int):
    """N patch states spaced evenly in time along the propagated guess.

    Parameters
    ----------
    system : System
    state : array_like, shape (6,)
    period : float
        TU.
    n : int
        Patch count, at least 2.

    Returns
    -------
    patches : ndarray, shape (n, 6)
    dts : ndarray, shape (n,)
        Segment durations (TU).

    Raises
    ------
    InputError
        ``n`` not an integer >= 2.

    References
    ----------
    .. [1] T. A. Pavlak, "Mission design applications in the Earth-Moon system: transfer
       trajectories and stationkeeping", MSc thesis, Purdue University, 2010, ch. 3.
    .. [2] B. G. Marchand, K. C. Howell and R. S. Wilson, "An improved corrections process for
       constrained trajectory design in the n-body problem", *J. Spacecraft and Rockets* 44, 2007.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds
    >>> from cr3bp.orbits.multiple import patches_from_trajectory
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> S, dts = patches_from_trajectory(em, sd.state, 2 * sd.half_period, 4)
    >>> S.shape, dts.shape
    ((4, 6), (4,))
    """
    n = validate.whole_number("patch count", n, 2)
    t = np.linspace(0.0, period, n + 1)[:-1]
    arc = propagate(system, state, period, t_eval=np.append(t, period), rtol=RTOL, atol=ATOL)
    return np.array(arc.states[:n]), np.full(n, period / n)


def _segments(system, S, dts):
    ends, phis = [], []
    for s, dt in zip(S, dts):
        if not dt > 0:
            raise ConvergenceError(f"a segment duration became non-positive ({dt:g} TU)")
        a = propagate(system, s, float(dt), stm=True, rtol=RTOL, atol=ATOL)
        if a.status != "time":
            raise ConvergenceError(f"segment propagation stopped early ({a.status})")
        ends.append(a.final_state)
        phis.append(a.stm)
    return np.array(ends), np.array(phis)


def _system(system, Z, n, phase, hold):
    S = Z[:6 * n].reshape(n, 6)
    dts = Z[6 * n:]
    ends, phis = _segments(system, S, dts)
    F = (ends - np.roll(S, -1, axis=0)).ravel()
    m = 6 * n + n
    rows = 6 * n + 1 + (1 if hold else 0)
    J = np.zeros((rows, m))
    for k in range(n):
        J[6 * k:6 * k + 6, 6 * k:6 * k + 6] = phis[k]
        nxt = (k + 1) % n
        J[6 * k:6 * k + 6, 6 * nxt:6 * nxt + 6] -= np.eye(6)
        J[6 * k:6 * k + 6, 6 * n + k] = dynamics.acceleration(system.mu, ends[k])
    idx, val = phase
    extra = [S[0, idx] - val]
    J[6 * n, idx] = 1.0
    if hold:
        kind, value = hold
        if kind == "period":
            extra.append(dts.sum() - value)
            J[6 * n + 1, 6 * n:] = 1.0
        elif kind == "jacobi":
            s0 = S[0]
            g = dynamics.gradient(system.mu, s0[:3])
            extra.append(dynamics.jacobi(system.mu, s0) - value)
            J[6 * n + 1, :6] = np.concatenate([2 * g, -2 * s0[3:]])
        else:
            raise InputError(f"multiple shooting can hold 'period' or 'jacobi', not '{kind}'")
    return np.concatenate([F, extra]), J, phis


def correct_multiple(system, patches, dts, phase=("y", 0.0), hold=None, family="", point="", branch="",
                     tol=TOL, max_iter=MAX_ITER) -> PeriodicOrbit:
    """Correct N patch points into a periodic orbit by multiple shooting (module notes).

    Parameters
    ----------
    system : System
    patches : array_like, shape (N, 6)
        Initial guesses.
    dts : array_like, shape (N,)
        Segment durations (TU).
    phase : tuple
        ``(component, value)`` held at patch 0, e.g. ``("y", 0.0)``.
    hold : tuple, optional
        None, ``("period", T)`` or ``("jacobi", C)``.
    family, point, branch : str
        Labels of the orbit.
    tol : float
    max_iter : int

    Returns
    -------
    PeriodicOrbit
        With ``symmetry="none"``, ``extra["patches"]`` (N, 6), ``extra["defects"]``.

    Raises
    ------
    ConvergenceError
        With iterations, the residual history and the last patch states.
    InputError
        A bad phase component or hold.

    References
    ----------
    .. [1] T. A. Pavlak, "Mission design applications in the Earth-Moon system: transfer
       trajectories and stationkeeping", MSc thesis, Purdue University, 2010, ch. 3.
    .. [2] B. G. Marchand, K. C. Howell and R. S. Wilson, "An improved corrections process for
       constrained trajectory design in the n-body problem", *J. Spacecraft and Rockets* 44, 2007.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.orbits.multiple import correct_multiple, patches_from_trajectory
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> o = shooting.correct(em, sd.state, sd.half_period, sd.symmetry)
    >>> S, dts = patches_from_trajectory(em, o.state, o.period, 4)
    >>> m = correct_multiple(em, S, dts)
    >>> abs(m.period - o.period) < 1e-8, m.symmetry
    (True, 'none')
    """
    S = np.array(patches, dtype=float)
    n = S.shape[0]
    if S.ndim != 2 or S.shape[1] != 6 or n < 2:
        raise InputError("patches must be an (N, 6) array with N >= 2")
    dts = np.array(dts, dtype=float)
    if dts.shape != (n,) or not np.all(dts > 0):
        raise InputError("dts must be N positive segment durations")
    comp = phase[0]
    if comp not in COMPONENTS:
        raise InputError(f"phase component '{comp}' is not one of {', '.join(COMPONENTS)}")
    ph = (COMPONENTS[comp], float(phase[1]))
    Z = np.concatenate([S.ravel(), dts])
    history = []
    stalled = None
    R, J, phis = _system(system, Z, n, ph, hold)
    for it in range(1, max_iter + 1):
        norm = float(np.linalg.norm(R))
        history.append(norm)
        if norm < tol:
            break
        dZ = np.linalg.lstsq(J, -R, rcond=None)[0]
        step = 1.0
        for _ in range(MAX_HALVINGS):
            try:
                R2, J2, phis2 = _system(system, Z + step * dZ, n, ph, hold)
                if np.linalg.norm(R2) < norm or step < 1.0 / 2 ** (MAX_HALVINGS - 1):
                    break
            except ConvergenceError:
                pass
            step *= 0.5
        else:
            if norm < FLOOR:
                stalled = norm
                break
            raise ConvergenceError(f"multiple shooting: no damped step reduced the residual {norm:.3e}",
                                   it, history, Z[:6 * n].reshape(n, 6))
        Z = Z + step * dZ
        R, J, phis = R2, J2, phis2
    else:
        raise ConvergenceError(f"multiple shooting did not converge in {max_iter} iterations; residual "
                               f"{history[-1]:.3e} (needed < {tol:.0e})", max_iter, history,
                               Z[:6 * n].reshape(n, 6))
    S = Z[:6 * n].reshape(n, 6)
    dts = Z[6 * n:]
    T = float(dts.sum())
    M = np.eye(6)
    for P in phis:
        M = P @ M
    arc = propagate(system, S[0], T, rtol=RTOL, atol=ATOL, events=geometry.EXTREME_EVENTS)
    err = float(np.linalg.norm(arc.final_state - S[0]))
    amp, approach = geometry.extremes(system, arc)
    defects = np.linalg.norm(R[:6 * n].reshape(n, 6), axis=1)
    extra = {"method": "multiple shooting", "patches": S.tolist(), "segment_durations": dts.tolist(),
             "defects": defects.tolist(), "residuals": history}
    if stalled is not None:
        extra["stalled_at"] = stalled
    return PeriodicOrbit(system, S[0].copy(), T, M, family, point, branch,
                         float(dynamics.jacobi(system.mu, S[0])), err, len(history) - 1, extra,
                         tuple(float(a) for a in amp), tuple(float(d) for d in approach), "none")
