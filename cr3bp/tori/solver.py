"""Newton solver for invariance circles of the stroboscopic map (GMOS formulation).

Unknowns: the circle ``U`` (N x 6 states at ``theta_j = 2 pi j / N``), the stroboscopic time
``T`` and the rotation ``rho``. Equations (Olikara & Scheeres, AAS 12-361, 2012, eqs. 9-14;
Gómez & Mondelo, Physica D 157, 2001, §3):

* invariance ``Q(rho) phi_T(U) - U = 0``: the flow over ``T`` followed by the Fourier rotation
  by ``-rho`` returns the circle (6N equations);
* two phase conditions against a reference circle ``U~``: ``<U - U~, dU~/dtheta1> = 0`` (the
  circle's own angle) and ``<U - U~, dU~/dtheta0> = 0`` with
  ``dU~/dtheta0 = (f(U~) - (rho~/T~) dU~/dtheta1) T~ / (2 pi)`` (the flow direction);
* the held quantities, from ``jacobi`` (mean Jacobi constant of the circle), ``period``
  (``T``), ``rotation`` (``rho``), ``amplitude`` (RMS position distance of the circle's points
  from its centre), and optionally a pseudo-arclength condition (families).

The invariance block has a 4-dimensional kernel at a solution (two phase shifts, and the
two-parameter family of 2-D tori of the spatial problem), so a single torus needs two held
quantities and a family member one held quantity plus the arclength condition. The system is
solved by Gauss-Newton in the least-squares sense (reduced QR, ``_lstsq``; one redundant
equation: the Jacobi constant is an integral of the flow) and halving damping. All N points are propagated with their STMs in
one :func:`cr3bp.integrate.propagate_batch` call per iteration (no Python loop over points).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import ConvergenceError, InputError, StateError
from ..integrate import propagate_batch
from . import circle

#: Newton stops when the largest residual component is below this (nondimensional).
RESIDUAL_TOL = 1e-10
#: ... or when it has stalled below ``max(STALL_TOL, FLOOR_PER_GAIN * |STM|)``: the integrator's
#: error (tolerance 1e-12) grows with the largest STM entry, so strongly hyperbolic tori
#: cannot close better than that.
STALL_TOL = 1e-8
FLOOR_PER_GAIN = 1e-11
#: ... or as soon as it is this fraction of that floor: a further iteration cannot make the
#: torus measurably better than the integrator's error (it used to be spent confirming the stall).
FLOOR_FRACTION = 0.05
MAX_ITER = 15
#: From this iteration on, a residual that has not halved over the last three iterations ends
#: the solve (ConvergenceError) instead of running to ``MAX_ITER``.
STAGNATION_ITER = 6
#: Integrator tolerances for the circle's propagation.
RTOL = ATOL = 1e-12
HOLD_KINDS = ("jacobi", "period", "rotation", "amplitude")


def eom_many(mu: float, s: np.ndarray) -> np.ndarray:
    """Right-hand side of the CR3BP for states (N, 6) (numpy; conventions in cr3bp.systems).

    Parameters
    ----------
    mu : float
        Mass ratio of the system.
    s : ndarray (N, 6)
        Rotating-frame states, nondimensional.

    Returns
    -------
    ndarray (N, 6)
        ``ds/dt`` for each state.

    Raises
    ------
    IndexError
        ``s`` is not two-dimensional with six columns.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.tori.solver import eom_many
    >>> mu = 0.0121505856
    >>> eom_many(mu, np.array([[0.5, 0.0, 0.0, 0.0, 0.1, 0.0]]))[0, :3]
    array([0. , 0.1, 0. ])

    References
    ----------
    Szebehely, *Theory of Orbits*, 1967, ch. 1 (the equations of motion in the rotating frame).
    """
    x, y, z = s[:, 0], s[:, 1], s[:, 2]
    r1 = np.sqrt((x + mu) ** 2 + y * y + z * z)
    r2 = np.sqrt((x - 1 + mu) ** 2 + y * y + z * z)
    k1, k2 = (1 - mu) / r1 ** 3, mu / r2 ** 3
    out = np.empty_like(s)
    out[:, :3] = s[:, 3:]
    out[:, 3] = x - k1 * (x + mu) - k2 * (x - 1 + mu) + 2 * s[:, 4]
    out[:, 4] = y - k1 * y - k2 * y - 2 * s[:, 3]
    out[:, 5] = -k1 * z - k2 * z
    return out


def jacobi_many(mu: float, s: np.ndarray) -> np.ndarray:
    """Jacobi constant ``C = 2 Omega - |v|^2`` of states (N, 6).

    Parameters
    ----------
    mu : float
        Mass ratio of the system.
    s : ndarray (N, 6)
        Rotating-frame states, nondimensional.

    Returns
    -------
    ndarray (N,)
        The Jacobi constant of each state.

    Raises
    ------
    IndexError
        ``s`` is not two-dimensional with six columns.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.tori.solver import jacobi_many
    >>> round(float(jacobi_many(0.0, np.array([[0.5, 0, 0, 0, 0, 0]]))[0]), 12)   # mu = 0: x^2 + 2/r
    4.25

    References
    ----------
    Szebehely, *Theory of Orbits*, 1967, ch. 1 (the Jacobi integral).
    """
    x, y, z = s[:, 0], s[:, 1], s[:, 2]
    r1 = np.sqrt((x + mu) ** 2 + y * y + z * z)
    r2 = np.sqrt((x - 1 + mu) ** 2 + y * y + z * z)
    return x * x + y * y + 2 * (1 - mu) / r1 + 2 * mu / r2 - np.sum(s[:, 3:] ** 2, axis=1)


def jacobi_gradient(mu: float, s: np.ndarray) -> np.ndarray:
    """dC/ds for states (N, 6).

    Parameters
    ----------
    mu : float
        Mass ratio of the system.
    s : ndarray (N, 6)
        Rotating-frame states, nondimensional.

    Returns
    -------
    ndarray (N, 6)
        The gradient of the Jacobi constant at each state.

    Raises
    ------
    IndexError
        ``s`` is not two-dimensional with six columns.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.tori.solver import jacobi_gradient, jacobi_many
    >>> s = np.array([[0.8, 0.01, 0.02, 0.0, 0.1, 0.0]]); h = 1e-6; e = np.eye(6)[0] * h
    >>> fd = (jacobi_many(0.012, s + e) - jacobi_many(0.012, s - e)) / (2 * h)
    >>> bool(abs(fd[0] - jacobi_gradient(0.012, s)[0, 0]) < 1e-6)
    True

    References
    ----------
    Szebehely, *Theory of Orbits*, 1967, ch. 1 (the Jacobi integral); the gradient is common practice.
    """
    f = eom_many(mu, s)
    g = np.empty_like(s)
    # 2 grad Omega = 2 (acceleration - Coriolis terms)
    g[:, 0] = 2 * (f[:, 3] - 2 * s[:, 4])
    g[:, 1] = 2 * (f[:, 4] + 2 * s[:, 3])
    g[:, 2] = 2 * f[:, 5]
    g[:, 3:] = -2 * s[:, 3:]
    return g


def amplitude(u: np.ndarray) -> float:
    """RMS distance of the circle's positions from their mean (LU).

    Parameters
    ----------
    u : ndarray (N, 6)
        The circle's states.

    Returns
    -------
    float
        RMS position distance from the centre, LU.

    Raises
    ------
    IndexError
        ``u`` is not two-dimensional.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.tori.solver import amplitude
    >>> u = np.zeros((4, 6)); u[:, 0] = [1, -1, 0, 0]; u[:, 1] = [0, 0, 1, -1]
    >>> amplitude(u)
    1.0

    References
    ----------
    Olikara & Scheeres, AAS 12-361 (Adv. Astronaut. Sci. 145), 2012, eqs. 9-14.
    """
    d = u[:, :3] - u[:, :3].mean(axis=0)
    return float(math.sqrt(np.mean(np.sum(d * d, axis=1))))


def check_holds(holds: dict, n_needed: int) -> dict:
    """The held quantities checked: known kinds (``HOLD_KINDS``) and exactly ``n_needed`` of them.

    Parameters
    ----------
    holds : dict
        Kind -> target value (``jacobi``, ``period`` TU, ``rotation`` rad, ``amplitude`` LU).
    n_needed : int
        How many the solve needs (two for one torus, one for a family member).

    Returns
    -------
    dict
        The same holds with float values.

    Raises
    ------
    InputError
        An unknown kind, or not ``n_needed`` of them.

    Examples
    --------
    >>> from cr3bp.tori.solver import check_holds
    >>> check_holds({"jacobi": 3.05, "amplitude": 0.005}, 2)
    {'jacobi': 3.05, 'amplitude': 0.005}
    >>> check_holds({"colour": 1}, 1)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: cannot hold 'colour'; allowed: jacobi, period, rotation, amplitude

    References
    ----------
    Olikara & Scheeres, AAS 12-361 (Adv. Astronaut. Sci. 145), 2012, eqs. 9-14.
    """
    bad = [k for k in holds if k not in HOLD_KINDS]
    if bad:
        raise InputError(f"cannot hold '{bad[0]}'; allowed: {', '.join(HOLD_KINDS)}")
    if len(holds) != n_needed:
        raise InputError(f"{n_needed} held quantities are needed here, got {len(holds)}: "
                         f"{', '.join(holds) or 'none'}")
    return {k: float(v) for k, v in holds.items()}


#: The QR solve of a Newton step falls back to numpy's SVD least squares when the smallest
#: diagonal entry of R is below this fraction of the largest (a rank-deficient Jacobian).
QR_RANK_TOL = 1e-12


def _lstsq(jac, rhs):
    """Least-squares solution of ``jac x = rhs`` (tall, full column rank) by a reduced QR
    factorisation (Golub & Van Loan, *Matrix Computations*, 4th ed., 2013, §5.3.3): measured
    about twice as fast as numpy's ``lstsq`` (an SVD) on the torus Jacobians (6 N + 4 rows);
    the SVD when R is (numerically) singular."""
    q, r = np.linalg.qr(jac)
    d = np.abs(np.diag(r))
    if d.size and d.min() > QR_RANK_TOL * d.max():
        x = np.linalg.solve(r, q.T @ rhs)
        if np.all(np.isfinite(x)):
            return x
    return np.linalg.lstsq(jac, rhs, rcond=None)[0]


def _residual_and_jacobian(system, x, n, ref, holds, arclength, with_jacobian=True):
    mu = system.mu
    u = x[:6 * n].reshape(n, 6)
    T, rho = x[-2], x[-1]
    if not (T > 0 and math.isfinite(T)):
        raise ConvergenceError(f"stroboscopic time left the positive reals (T = {T:.6g} TU)")
    try:
        res = propagate_batch(system, u, T, rtol=RTOL, atol=ATOL, stm=with_jacobian)
    except StateError as e:   # an iterate put a point inside a primary
        raise ConvergenceError(f"invariance-circle Newton put a point inside a primary ({e})") from None
    phi = res.states
    q, dq = circle.rotation(n, rho)
    inv = q @ phi - u
    rows, vals = [], []
    u_ref, t_ref, rho_ref = ref
    d1 = circle.derivative(u_ref)
    d0 = (eom_many(mu, u_ref) - (rho_ref / t_ref) * d1) * t_ref / (2 * math.pi)
    for d in (d1, d0):
        w = d.ravel() / max(np.linalg.norm(d), 1e-300)
        rows.append(np.concatenate([w, [0.0, 0.0]]))
        vals.append(float(w @ (u - u_ref).ravel()))
    for kind, target in holds.items():
        row = np.zeros(6 * n + 2)
        if kind == "jacobi":
            row[:6 * n] = (jacobi_gradient(mu, u) / n).ravel()
            vals.append(float(jacobi_many(mu, u).mean() - target))
        elif kind == "period":
            row[-2] = 1.0
            vals.append(T - target)
        elif kind == "rotation":
            row[-1] = 1.0
            vals.append(rho - target)
        else:
            a = amplitude(u)
            g = np.zeros((n, 6))
            g[:, :3] = (u[:, :3] - u[:, :3].mean(axis=0)) / (n * max(a, 1e-300))
            row[:6 * n] = g.ravel()
            vals.append(a - target)
        rows.append(row)
    if arclength is not None:
        x0, tangent, ds = arclength
        rows.append(tangent)
        vals.append(float(tangent @ (x - x0) - ds))
    f = np.concatenate([inv.ravel(), vals])
    if not with_jacobian:
        return f, None, None
    stm = res.stm
    j_u = np.einsum("jl,lcd->jcld", q, stm).reshape(6 * n, 6 * n) - np.eye(6 * n)
    j_t = (q @ eom_many(mu, phi)).ravel()
    j_r = (dq @ phi).ravel()
    jac = np.vstack([np.hstack([j_u, j_t[:, None], j_r[:, None]]), np.array(rows)])
    return f, jac, float(np.abs(stm).max())


def solve(system, u0, T0, rho0, holds, reference=None, arclength=None, max_iter=MAX_ITER):
    """Newton on the invariance circle.

    Parameters
    ----------
    system : System
    u0 : ndarray (N, 6), N odd     initial circle
    T0, rho0 : float               initial stroboscopic time (TU) and rotation (rad)
    holds : dict                   held quantities, e.g. ``{"jacobi": 3.05, "amplitude": 0.005}``
    reference : (U, T, rho) or None   reference of the phase conditions (default: the guess)
    arclength : (x0, tangent, ds) or None   pseudo-arclength condition in the unknowns
        ``x = [U.ravel(), T, rho]``

    Returns
    -------
    (U, T, rho, info) with ``info = {"iterations", "residuals"}``.

    Raises
    ------
    InputError
        The circle is not (N, 6) with N odd.
    ConvergenceError
        Newton does not converge in ``max_iter`` iterations.

    Examples
    --------
    >>> u, T, rho, info = solve(em, u0, T0, rho0, {"jacobi": 3.05, "amplitude": 0.005})   # doctest: +SKIP
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.solver import solve
    >>> solve(system("earth-moon"), np.zeros((4, 6)), 3.0, 1.0, {})
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: the circle must be (N, 6) with N odd, got (4, 6)

    References
    ----------
    Olikara & Scheeres, AAS 12-361 (Adv. Astronaut. Sci. 145), 2012, eqs. 9-14; Gómez & Mondelo,
    Physica D 157, 2001, §3.
    """
    u0 = np.ascontiguousarray(u0, dtype=float)
    n = u0.shape[0]
    if n % 2 == 0 or u0.shape[1:] != (6,):
        raise InputError(f"the circle must be (N, 6) with N odd, got {u0.shape}")
    ref = reference if reference is not None else (u0.copy(), float(T0), float(rho0))
    x = np.concatenate([u0.ravel(), [float(T0), float(rho0)]])
    history = []
    f, jac, gain = _residual_and_jacobian(system, x, n, ref, holds, arclength)
    norm = float(np.abs(f).max())
    floor = max(STALL_TOL, FLOOR_PER_GAIN * gain)
    done = max(RESIDUAL_TOL, FLOOR_FRACTION * floor)
    history.append(norm)
    for it in range(1, max_iter + 1):
        if norm < done:
            break
        step = _lstsq(jac, -f)
        # damping: trial points are judged by their residual alone (no STMs: about a seventh
        # of the cost); the Jacobian is computed once, at the accepted point
        lam = 1.0
        while True:
            xt = x + lam * step
            try:
                ft = _residual_and_jacobian(system, xt, n, ref, holds, arclength,
                                            with_jacobian=False)[0]
                nt = float(np.abs(ft).max())
            except ConvergenceError:
                nt = math.inf
            if nt < norm or lam < 1.0 / 64 or (norm < floor and nt < floor):
                break
            lam *= 0.5
        if not math.isfinite(nt):
            raise ConvergenceError("invariance-circle Newton left the region the integrator "
                                   "can follow", iterations=it, residuals=history)
        stalled = nt >= 0.5 * norm and nt < floor
        if stalled and nt >= norm:      # at the integrator's floor: keep the better point
            history.append(nt)
            break
        if nt >= norm:                  # no descent even with a 1/64 step: give up early
            history.append(nt)
            raise ConvergenceError(f"invariance-circle Newton found no descent (residual "
                                   f"{norm:.2e})", iterations=it, residuals=history)
        x, norm = xt, nt
        history.append(norm)
        if stalled or norm < done:
            break
        if it >= STAGNATION_ITER and norm > 0.5 * history[-4]:
            # less than halved over three iterations, far from the floor: Newton is not in its
            # quadratic range; the caller retries with a smaller continuation step
            raise ConvergenceError(f"invariance circle is converging too slowly (residual "
                                   f"{norm:.2e} after {it} iterations)", iterations=it,
                                   residuals=history)
        f, jac, _ = _residual_and_jacobian(system, x, n, ref, holds, arclength)
    else:
        if norm >= done:
            raise ConvergenceError(f"invariance circle did not converge in {max_iter} iterations "
                                   f"(residual {norm:.2e})", iterations=max_iter,
                                   residuals=history)
    if norm >= floor:
        raise ConvergenceError(f"invariance circle did not converge (residual {norm:.2e})",
                               iterations=len(history) - 1, residuals=history)
    u = x[:6 * n].reshape(n, 6).copy()
    return u, float(x[-2]), float(x[-1]), {"iterations": len(history) - 1, "residuals": history,
                                            "floor": floor, "gain": gain}


def invariance_error(system, u, T, rho) -> float:
    """Largest ``|phi_T(u(theta)) - u(theta + rho)|`` (6-vector norm, nondimensional) at the
    angles halfway between the nodes: an honest measure of the whole circle, not only of the
    nodes where the equations were solved.

    Parameters
    ----------
    system : System
    u : ndarray (N, 6)
        The invariance circle.
    T : float
        Stroboscopic time, TU.
    rho : float
        Rotation, rad.

    Returns
    -------
    float
        The largest miss, nondimensional.

    Raises
    ------
    StateError
        A point of the circle falls inside a primary.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.equilibria import lagrange_point
    >>> from cr3bp.tori.solver import invariance_error
    >>> em = system("earth-moon")
    >>> x = np.concatenate([lagrange_point(em, "L1").position, np.zeros(3)])
    >>> invariance_error(em, np.tile(x, (5, 1)), 1.0, 0.3) < 1e-9   # an equilibrium: a point circle
    True

    References
    ----------
    Olikara & Scheeres, AAS 12-361 (Adv. Astronaut. Sci. 145), 2012, eqs. 9-14.
    """
    n = u.shape[0]
    th = circle.angles(n) + math.pi / n
    mid = circle.evaluate(u, th)
    res = propagate_batch(system, mid, T, rtol=RTOL, atol=ATOL)
    want = circle.evaluate(u, th + rho)
    return float(np.linalg.norm(res.states - want, axis=1).max())
