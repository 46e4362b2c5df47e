"""Piecewise Chebyshev interpolants of body positions, evaluated inside compiled code.

Body positions come from :mod:`cr3bp.time.ephemeris` once, at Chebyshev nodes of equal time
segments; the integrator then evaluates the fitted series (position and its time derivative)
by Clenshaw's recurrence, with no Python call per step. Method: Chebyshev interpolation at the
Chebyshev points of the first kind (Press et al., *Numerical Recipes*, 3rd ed., 2007, §5.8,
"Chebyshev Approximation"); Clenshaw's recurrence (ibid. §5.4).

Layout of a fit (a 4-D float array ``coef[body, segment, axis, k]``) with the segment grid
``t0 + i * h``; time outside ``[t0, t0 + n_segments * h]`` is clamped to the end segments (the
caller checks the span).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numba import njit

from ..errors import InputError
from ..validate import finite_number, whole_number


@dataclass(frozen=True)
class ChebyshevFit:
    """Fitted series of several bodies over one span (times in the caller's unit).

    Parameters
    ----------
    t0 : float
        Start of the span.
    h : float
        Segment length.
    coef : numpy.ndarray, shape (n_bodies, n_segments, 3, degree + 1)
        Chebyshev coefficients per body, segment and axis.

    Examples
    --------
    >>> f = fit(lambda t: np.stack([np.stack([np.cos(t), np.sin(t), 0 * t], -1)]), 0.0, 1.0, 2, 12, 1)
    >>> bool(np.allclose(f.position(0, [0.3])[0], [np.cos(0.3), np.sin(0.3), 0.0], atol=1e-12))
    True

    References
    ----------
    Press, W. H., Teukolsky, S. A., Vetterling, W. T. & Flannery, B. P., "Numerical Recipes",
    3rd ed., Cambridge University Press (2007), sec. 5.8.
    """

    t0: float
    h: float
    coef: np.ndarray  # (n_bodies, n_segments, 3, degree + 1)

    @property
    def t1(self) -> float:
        return self.t0 + self.h * self.coef.shape[1]

    def position(self, body: int, t) -> np.ndarray:
        t = np.atleast_1d(np.asarray(t, dtype=float))
        out = np.empty((t.size, 6))
        for i, ti in enumerate(t):
            _eval_body(self.coef, self.t0, self.h, body, ti, out[i])
        return out[:, :3]

    def state(self, body: int, t) -> np.ndarray:
        t = np.atleast_1d(np.asarray(t, dtype=float))
        out = np.empty((t.size, 6))
        for i, ti in enumerate(t):
            _eval_body(self.coef, self.t0, self.h, body, ti, out[i])
        return out


def fit(sample, t0: float, t1: float, n_segments: int, degree: int, n_bodies: int) -> ChebyshevFit:
    """Fit ``sample(times) -> (n_bodies, len(times), 3)`` on ``[t0, t1]``.

    Chebyshev interpolation at the points of the first kind on equal segments.

    Parameters
    ----------
    sample : callable
        Vectorised over times; returns positions of every body at those times.
    t0, t1 : float
        The span.
    n_segments, degree : int
        Equal segments and the series degree in each.
    n_bodies : int
        Bodies ``sample`` returns.

    Returns
    -------
    ChebyshevFit
        The series.

    Raises
    ------
    ValueError
        ``sample`` returning another shape.

    Examples
    --------
    >>> f = fit(lambda t: np.stack([np.stack([t**2, t, 0 * t], -1)]), 0.0, 2.0, 1, 4, 1)
    >>> f.position(0, [1.5]).round(12).tolist()
    [[2.25, 1.5, 0.0]]

    References
    ----------
    Press, W. H., Teukolsky, S. A., Vetterling, W. T. & Flannery, B. P., "Numerical Recipes",
    3rd ed., Cambridge University Press (2007), sec. 5.8.
    """
    t0, t1 = finite_number("Chebyshev span start", t0), finite_number("Chebyshev span end", t1)
    if not t1 > t0:
        raise InputError(f"Chebyshev span [{t0}, {t1}] must be increasing")
    n_segments = whole_number("n_segments", n_segments, 1)
    degree = whole_number("degree", degree, 2, 40)
    h = (t1 - t0) / n_segments
    n = degree + 1
    k = np.arange(n)
    nodes = np.cos(np.pi * (k + 0.5) / n)                     # Chebyshev points of the first kind
    # T_j(nodes) matrix and the discrete orthogonality weights
    tj = np.cos(np.outer(np.arange(n), np.pi * (k + 0.5) / n))  # (j, k)
    times = (t0 + h * (np.arange(n_segments)[:, None] + 0.5 * (nodes[None, :] + 1.0))).ravel()
    pos = np.asarray(sample(times), dtype=float).reshape(n_bodies, n_segments, n, 3)
    coef = 2.0 / n * np.einsum("jk,bskx->bsxj", tj, pos)
    coef[..., 0] *= 0.5
    return ChebyshevFit(float(t0), float(h), np.ascontiguousarray(coef))


@njit(cache=True)
def _eval_body(coef, t0, h, body, t, out):
    """Position (out[0:3]) and its time derivative (out[3:6]) of ``body`` at ``t``."""
    nseg = coef.shape[1]
    n = coef.shape[3]
    s = int(np.floor((t - t0) / h))
    if s < 0:
        s = 0
    elif s >= nseg:
        s = nseg - 1
    u = 2.0 * (t - (t0 + s * h)) / h - 1.0
    for axis in range(3):
        # Clenshaw for the value and for the derivative (series of U-like recurrences)
        b1 = 0.0
        b2 = 0.0
        d1 = 0.0
        d2 = 0.0
        for j in range(n - 1, 0, -1):
            c = coef[body, s, axis, j]
            b0 = 2.0 * u * b1 - b2 + c
            d0 = 2.0 * u * d1 - d2 + 2.0 * b1
            b2 = b1
            b1 = b0
            d2 = d1
            d1 = d0
        c0 = coef[body, s, axis, 0]
        out[axis] = u * b1 - b2 + c0
        out[3 + axis] = (u * d1 - d2 + b1) * 2.0 / h
