"""Minimum-norm Newton with step halving on the residual norm, shared by the ephemeris-model
corrections (:func:`cr3bp.fidelity.transition.correct`, :func:`cr3bp.fidelity.route.transition_route`).

The update is the least-norm solution of J d = -F, d = -J^T (J J^T)^-1 F (Golub & Van Loan,
*Matrix Computations*, 4th ed., 2013, section 5.6); the step is halved, at most eight times,
until it is admissible and lowers the residual's 2-norm.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import ConvergenceError

HALVINGS = 8
#: Jacobians with at least this many entries, and at most :data:`SPARSE_FILL` of them nonzero,
#: take the sparse least-norm step (a multiple-shooting Jacobian is block-banded: its normal
#: matrix ``J J^T`` is banded and factors in linear time instead of cubic).
SPARSE_MIN_ENTRIES = 40000
SPARSE_FILL = 0.2


def least_norm_step(J, F) -> np.ndarray:
    """The least-norm solution ``d = -J^T (J J^T)^-1 F`` of ``J d = -F``.

    Dense (``numpy.linalg.solve``) for small or full Jacobians; for large, mostly-zero ones
    (multiple shooting over many revolutions) ``J J^T`` is formed and LU-factored sparse
    (scipy's SuperLU): the same step to rounding, in time linear in the number of patch points.

    Parameters
    ----------
    J : numpy.ndarray or scipy.sparse matrix, shape (k, n)
        The Jacobian (k <= n, full row rank); a sparse one always takes the sparse path.
    F : numpy.ndarray, shape (k,)
        The residual.

    Returns
    -------
    numpy.ndarray, shape (n,)
        The step.

    Raises
    ------
    numpy.linalg.LinAlgError
        A singular ``J J^T``.

    Examples
    --------
    >>> least_norm_step(np.array([[1.0, 1.0]]), np.array([2.0]))
    array([-1., -1.])

    References
    ----------
    Golub, G. H. & Van Loan, C. F., "Matrix Computations", 4th ed. (2013), sec. 5.6 (least-norm
    solutions); Li, X. S., "An overview of SuperLU", ACM TOMS 31(3), 302 (2005).
    """
    F = np.asarray(F, dtype=float)
    if hasattr(J, "tocsr") or np.size(J) >= SPARSE_MIN_ENTRIES:
        from scipy import sparse  # lazy: heavy library (scipy)
        from scipy.sparse.linalg import splu  # lazy: heavy library (scipy)
        Js = sparse.csr_matrix(J)
        if sparse.issparse(J) or Js.nnz <= SPARSE_FILL * np.size(J):
            try:
                y = splu((Js @ Js.T).tocsc()).solve(F)
            except RuntimeError:               # SuperLU: "Factor is exactly singular"
                raise np.linalg.LinAlgError("singular normal matrix") from None
            if not np.all(np.isfinite(y)):
                raise np.linalg.LinAlgError("singular normal matrix")
            return -(Js.T @ y)
    J = np.asarray(J, dtype=float)
    return -(J.T @ np.linalg.solve(J @ J.T, F))


def history_text(hist) -> str:
    """The mismatch by iteration, for an error message.

    Parameters
    ----------
    hist : sequence of float
        Mismatch per iteration.

    Returns
    -------
    str
        The values in ``%.2e`` form, space-separated.

    Raises
    ------
    TypeError
        Values that are not numbers.

    Examples
    --------
    >>> history_text([1e-3, 2.5e-9])
    '1.00e-03 2.50e-09'

    References
    ----------
    Common practice (the convergence history shown with the error).
    """
    return " ".join(f"{h:.2e}" for h in hist)


def solve(constraints, z, tol, max_iter, *, what="multiple shooting", residual=None,
          admissible=None, progress=None, shown=None):
    """Drive ``constraints(z) -> (F, J)`` to ``max |F| < tol``.

    Parameters
    ----------
    constraints : callable   residual F (k,) and its Jacobian J (k, n) at z (n,)
    z : (n,) float           start
    residual : callable, optional   F alone (cheaper, for trial steps; default from constraints)
    admissible : callable, optional  False for a trial z that must not be evaluated
    progress : callable(iteration, mismatch), optional
    shown : callable, optional   what the error's ``last`` carries (default z itself)

    Returns
    -------
    (z, iterations, mismatch history)

    Raises
    ------
    ConvergenceError  non-finite mismatch, singular system, failed step halving or no
                      convergence in ``max_iter`` iterations; the message names ``what``.

    Examples
    --------
    >>> z, it, hist = solve(lambda z: (z**2 - 2.0, np.diag(2.0 * z)), np.array([1.0]), 1e-12, 20)
    >>> round(float(z[0]), 12)
    1.414213562373

    References
    ----------
    Dennis, J. E. & Schnabel, R. B., "Numerical Methods for Unconstrained Optimization and
    Nonlinear Equations", SIAM (1996), ch. 6 (Newton's method with step halving).
    """
    residual = residual or (lambda zz: constraints(zz)[0])
    shown = shown or (lambda zz: zz)
    z = np.asarray(z, dtype=float)
    hist = []
    for it in range(max_iter + 1):
        F, J = constraints(z)
        err = float(np.max(np.abs(F)))
        hist.append(err)
        if progress is not None:
            progress(it, err)
        if not math.isfinite(err):
            raise ConvergenceError(f"{what} diverged (non-finite mismatch) at iteration {it}",
                                   iterations=it, residuals=hist)
        if err < tol:
            return z, it, hist
        if it == max_iter:
            break
        try:
            d = least_norm_step(J, F)
        except np.linalg.LinAlgError:
            raise ConvergenceError(f"singular {what} system at iteration {it}",
                                   iterations=it, residuals=hist) from None
        norm0 = float(np.linalg.norm(F))
        alpha = 1.0
        for _ in range(HALVINGS):
            zn = z + alpha * d
            if admissible is not None and not admissible(zn):
                alpha *= 0.5
                continue
            try:
                Fn = residual(zn)
            except ConvergenceError:
                alpha *= 0.5
                continue
            if np.linalg.norm(Fn) < norm0:
                break
            alpha *= 0.5
        else:
            raise ConvergenceError(f"{what}: step halving failed at iteration {it} (mismatch "
                                   f"{err:.3g}); mismatch by iteration: {history_text(hist)}",
                                   iterations=it, residuals=hist, last=shown(z))
        z = zn
    raise ConvergenceError(f"{what} did not converge in {max_iter} iterations (mismatch "
                           f"{hist[-1]:.3g}, tolerance {tol:g}); mismatch by iteration: "
                           f"{history_text(hist)}", iterations=max_iter, residuals=hist,
                           last=shown(z))
