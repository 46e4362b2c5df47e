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
    return 2.0 * np.pi * np.arange(n) / n


def _wavenumbers(n: int) -> np.ndarray:
    return np.fft.fftfreq(n, 1.0 / n)          # 0, 1, ..., K, -K, ..., -1 (n odd)


def rotation(n: int, rho: float) -> tuple[np.ndarray, np.ndarray]:
    """``(Q, dQ/drho)``: ``(Q U)(theta_j) = u(theta_j - rho)``, the circle turned by ``-rho``."""
    k = _wavenumbers(n)
    eye = np.eye(n)
    f = np.fft.fft(eye, axis=0)                   # coefficients of each unit column
    phase = np.exp(-1j * k * rho)[:, None]
    q = np.real(np.fft.ifft(phase * f, axis=0))
    dq = np.real(np.fft.ifft(-1j * k[:, None] * phase * f, axis=0))
    return q, dq


def derivative(u: np.ndarray) -> np.ndarray:
    """``du/dtheta`` at the nodes (spectral), u (N, m)."""
    n = u.shape[0]
    k = _wavenumbers(n)
    return np.real(np.fft.ifft(1j * k[:, None] * np.fft.fft(u, axis=0), axis=0))


def evaluate(u: np.ndarray, theta) -> np.ndarray:
    """The circle at arbitrary angles ``theta`` (M,) -> (M, m)."""
    n = u.shape[0]
    k = _wavenumbers(n)
    c = np.fft.fft(u, axis=0) / n
    th = np.atleast_1d(np.asarray(theta, dtype=float))
    return np.real(np.exp(1j * np.outer(th, k)) @ c)


def resample(u: np.ndarray, n_new: int) -> np.ndarray:
    """The same trigonometric polynomial on ``n_new`` (odd) nodes (zero-padded or truncated)."""
    return evaluate(u, angles(n_new))


def tail(u: np.ndarray) -> float:
    """Decay measure: the largest coefficient among the top quarter of harmonics (at least
    the top one), relative to the largest non-constant coefficient. Small: N is enough."""
    n = u.shape[0]
    kmax = (n - 1) // 2
    c = np.abs(np.fft.fft(u, axis=0)) / n
    k = np.abs(_wavenumbers(n))
    body = c[k >= 1].max()
    if body == 0.0:
        return 0.0
    top = c[k > kmax - max(1, kmax // 4)].max()
    return float(top / body)
