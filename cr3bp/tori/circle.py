"""Fourier-discretised invariance circles: rotation, derivative, coefficient decay.

A circle is N states ``U[j] = u(theta_j)``, ``theta_j = 2 pi j / N`` (N odd, so every
harmonic up to ``K = (N - 1) / 2`` is resolved and no Nyquist term is needed), read as the
trigonometric polynomial through them (Gómez & Mondelo, "The dynamics around the collinear
equilibrium points of the RTBP", Physica D 157, 2001, §3; Olikara & Scheeres, "Numerical
method for computing quasi-periodic orbits and their stability in the restricted three-body
problem", AAS 12-361, 2012, §II). All operators are real N x N matrices acting on the rows.
"""

from __future__ import annotations

import numpy as np


def angles(n: int) -> np.ndarray:
    """The node angles ``theta_j = 2 pi j / n`` of a circle of ``n`` states.

    Parameters
    ----------
    n : int
        Nodes (odd).

    Returns
    -------
    numpy.ndarray, shape (n,)
        Radians.

    Raises
    ------
    TypeError
        ``n`` not an integer.

    Examples
    --------
    >>> (angles(3) / np.pi).round(6).tolist()
    [0.0, 0.666667, 1.333333]

    References
    ----------
    Gómez, G. & Mondelo, J. M., "The dynamics around the collinear equilibrium points of the
    RTBP", Physica D 157, 283 (2001), sec. 3.
    """
    return 2.0 * np.pi * np.arange(n) / n


def _wavenumbers(n: int) -> np.ndarray:
    return np.fft.fftfreq(n, 1.0 / n)          # 0, 1, ..., K, -K, ..., -1 (n odd)


def rotation(n: int, rho: float) -> tuple[np.ndarray, np.ndarray]:
    """``(Q, dQ/drho)``: ``(Q U)(theta_j) = u(theta_j - rho)``, the circle turned by ``-rho``.

    Parameters
    ----------
    n : int
        Nodes (odd).
    rho : float
        Rotation angle, radians.

    Returns
    -------
    Q, dQ : numpy.ndarray, shape (n, n)
        The rotation operator and its derivative in ``rho``.

    Raises
    ------
    TypeError
        ``n`` not an integer.

    Examples
    --------
    >>> q, _ = rotation(5, 2 * np.pi / 5)
    >>> u = np.cos(angles(5))[:, None]
    >>> bool(np.allclose(q @ u, np.cos(angles(5) - 2 * np.pi / 5)[:, None]))
    True

    References
    ----------
    Olikara, Z. P. & Scheeres, D. J., "Numerical method for computing quasi-periodic orbits and
    their stability in the restricted three-body problem", AAS 12-361 (2012), sec. II.
    """
    k = _wavenumbers(n)
    eye = np.eye(n)
    f = np.fft.fft(eye, axis=0)                   # coefficients of each unit column
    phase = np.exp(-1j * k * rho)[:, None]
    q = np.real(np.fft.ifft(phase * f, axis=0))
    dq = np.real(np.fft.ifft(-1j * k[:, None] * phase * f, axis=0))
    return q, dq


def derivative(u: np.ndarray) -> np.ndarray:
    """``du/dtheta`` at the nodes (spectral).

    Parameters
    ----------
    u : numpy.ndarray, shape (N, m)
        The circle's states.

    Returns
    -------
    numpy.ndarray, shape (N, m)
        The derivative.

    Raises
    ------
    IndexError
        A one-dimensional ``u``.

    Examples
    --------
    >>> th = angles(7)[:, None]
    >>> bool(np.allclose(derivative(np.sin(th)), np.cos(th)))
    True

    References
    ----------
    Trefethen, L. N., "Spectral Methods in MATLAB", SIAM (2000), ch. 3 (periodic spectral
    differentiation).
    """
    n = u.shape[0]
    k = _wavenumbers(n)
    return np.real(np.fft.ifft(1j * k[:, None] * np.fft.fft(u, axis=0), axis=0))


def evaluate(u: np.ndarray, theta) -> np.ndarray:
    """The circle at arbitrary angles ``theta`` (M,) -> (M, m).

    Parameters
    ----------
    u : numpy.ndarray, shape (N, m)
        The circle's states.
    theta : float or array_like
        Angles, radians.

    Returns
    -------
    numpy.ndarray, shape (M, m)
        The trigonometric polynomial there.

    Raises
    ------
    ValueError
        Angles that cannot be converted to floats.

    Examples
    --------
    >>> u = np.cos(angles(5))[:, None]
    >>> evaluate(u, [0.3]).round(12).tolist() == [[round(float(np.cos(0.3)), 12)]]
    True

    References
    ----------
    Gómez, G. & Mondelo, J. M., "The dynamics around the collinear equilibrium points of the
    RTBP", Physica D 157, 283 (2001), sec. 3.
    """
    n = u.shape[0]
    k = _wavenumbers(n)
    c = np.fft.fft(u, axis=0) / n
    th = np.atleast_1d(np.asarray(theta, dtype=float))
    return np.real(np.exp(1j * np.outer(th, k)) @ c)


def resample(u: np.ndarray, n_new: int) -> np.ndarray:
    """The same trigonometric polynomial on ``n_new`` (odd) nodes (zero-padded or truncated).

    Parameters
    ----------
    u : numpy.ndarray, shape (N, m)
        The circle's states.
    n_new : int
        New node count (odd).

    Returns
    -------
    numpy.ndarray, shape (n_new, m)
        The circle on the new nodes.

    Raises
    ------
    TypeError
        ``n_new`` not an integer.

    Examples
    --------
    >>> resample(np.ones((5, 1)), 9).shape
    (9, 1)

    References
    ----------
    Trefethen, L. N., "Spectral Methods in MATLAB", SIAM (2000), ch. 3.
    """
    return evaluate(u, angles(n_new))


def tail(u: np.ndarray) -> float:
    """Decay measure of the circle's Fourier coefficients.

    The largest coefficient among the top quarter of harmonics (at least the top one), relative
    to the largest non-constant coefficient. Small: N is enough.

    Parameters
    ----------
    u : numpy.ndarray, shape (N, m)
        The circle's states.

    Returns
    -------
    float
        The ratio (0 for a constant circle).

    Raises
    ------
    ValueError
        A circle of fewer than three nodes.

    Examples
    --------
    >>> tail(np.cos(angles(9))[:, None]) < 1e-12
    True

    References
    ----------
    Olikara, Z. P. & Scheeres, D. J., AAS 12-361 (2012), sec. II (choosing the number of nodes
    from the coefficients' decay).
    """
    n = u.shape[0]
    kmax = (n - 1) // 2
    c = np.abs(np.fft.fft(u, axis=0)) / n
    k = np.abs(_wavenumbers(n))
    body = c[k >= 1].max()
    if body == 0.0:
        return 0.0
    top = c[k > kmax - max(1, kmax // 4)].max()
    return float(top / body)
