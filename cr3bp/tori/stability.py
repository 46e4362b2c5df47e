"""Stability of a torus: the eigenvalues of its discretised stroboscopic map.

The linearised map of the invariance circle is ``DG = (Q(rho) (x) I_6) diag(Phi_j)``: the
state transition matrices ``Phi_j`` of the N points over the stroboscopic time ``T``, followed
by the Fourier rotation by ``-rho`` (the matrix whose ``I - DG`` block is the Newton solver's).
Its 6N eigenvalues hold the torus's normal multipliers, each repeated around a circle as
``lambda e^{i k rho}`` by the discretisation, plus ill-resolved copies carried by the highest
harmonics (Jorba, "Numerical computation of the normal behaviour of invariant curves of
n-dimensional maps", Nonlinearity 14, 2001, §3; Olikara & Scheeres, AAS 12-361, 2012, §IV).
The multipliers are told apart from the copies by their eigenvectors: a well-resolved
eigenvector keeps most of its size in the lower half of the harmonics (Jorba 2001's filter).
The moduli are what the stability is read from: a modulus above 1 is an unstable direction
(hyperbolic torus), all moduli at 1 a neutrally stable (elliptic) torus.
"""

from __future__ import annotations

import math

import numpy as np

from ..integrate import propagate_batch
from . import circle, solver

#: A modulus counts as 1 (neutral) within this relative distance.
UNIT_RTOL = 1e-3
#: An eigenvector is well resolved when the lower half of the harmonics holds this share of it.
RESOLVED_SHARE = 0.9


def map_matrix(system, u, T, rho) -> np.ndarray:
    """``DG`` (6N x 6N) of the invariance circle ``u`` over ``T`` turned by ``rho``.

    One batch propagation with state transition matrices.

    Parameters
    ----------
    system : System
        The system.
    u : numpy.ndarray, shape (N, 6)
        The invariance circle.
    T : float
        Stroboscopic time, TU.
    rho : float
        Rotation number, radians.

    Returns
    -------
    numpy.ndarray, shape (6N, 6N)
        The linearised stroboscopic map.

    Raises
    ------
    NoSolutionError
        A propagation stops early.

    Examples
    --------
    >>> dg = map_matrix(em, torus.circle, torus.stroboscopic_time, torus.rotation)   # doctest: +SKIP

    On a hand-made circle near L1 (not a solved torus), to show the call:

    >>> import numpy as np
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> u = np.tile([0.8369, 0, 0, 0, 0, 0], (5, 1)) + 1e-3 * np.eye(5, 6)  # hand-made, not solved
    >>> from cr3bp.tori.stability import map_matrix
    >>> map_matrix(em, u, 2.7, 0.3).shape
    (30, 30)

    References
    ----------
    Olikara, Z. P. & Scheeres, D. J., AAS 12-361 (2012), sec. III (stability of the torus);
    Jorba, À., "Numerical computation of the normal behaviour of invariant curves of
    n-dimensional maps", Nonlinearity 14, 943 (2001).
    """
    n = u.shape[0]
    stm = propagate_batch(system, np.ascontiguousarray(u, dtype=float), T, rtol=solver.RTOL,
                          atol=solver.ATOL, stm=True).stm
    q, _ = circle.rotation(n, rho)
    return np.einsum("jl,lcd->jcld", q, stm).reshape(6 * n, 6 * n)


def _resolved(vecs: np.ndarray, n: int) -> np.ndarray:
    """Share of each eigenvector's size in the lower half of the harmonics (Jorba's filter)."""
    k = np.abs(np.fft.fftfreq(n, 1.0 / n))
    low = k <= (n - 1) // 4
    v = vecs.reshape(n, 6, -1)
    c = np.abs(np.fft.fft(v, axis=0)) ** 2
    total = c.sum(axis=(0, 1))
    return c[low].sum(axis=(0, 1)) / np.where(total > 0, total, 1.0)


def stability(system, u, T, rho) -> dict:
    """The torus's normal multipliers, their moduli and the verdict.

    ``moduli`` are the distinct moduli of the well-resolved eigenvalues (largest first, merged
    when within ``UNIT_RTOL``); ``kind`` is "hyperbolic" (a modulus above 1) or "neutrally stable
    (elliptic)".

    Parameters
    ----------
    system : System
        The system.
    u : numpy.ndarray, shape (N, 6)
        The invariance circle.
    T : float
        Stroboscopic time, TU.
    rho : float
        Rotation number, radians.

    Returns
    -------
    dict
        ``{"largest_modulus", "smallest_modulus", "moduli", "kind", "n_eigenvalues",
        "n_resolved"}``.

    Raises
    ------
    NoSolutionError
        A propagation stops early.

    Examples
    --------
    >>> stability(em, torus.circle, torus.stroboscopic_time, torus.rotation)["kind"]  # doctest: +SKIP
    'hyperbolic'

    On a hand-made circle near L1 (not a solved torus), to show the call:

    >>> import numpy as np
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> u = np.tile([0.8369, 0, 0, 0, 0, 0], (5, 1)) + 1e-3 * np.eye(5, 6)  # hand-made, not solved
    >>> from cr3bp.tori.stability import stability
    >>> stability(em, u, 2.7, 0.3)["largest_modulus"] > 1
    True

    References
    ----------
    Jorba, À., "Numerical computation of the normal behaviour of invariant curves of
    n-dimensional maps", Nonlinearity 14, 943 (2001); Olikara, Z. P. & Scheeres, D. J.,
    AAS 12-361 (2012), sec. III.
    """
    n = u.shape[0]
    w, vecs = np.linalg.eig(map_matrix(system, u, T, rho))
    share = _resolved(vecs, n)
    keep = share >= RESOLVED_SHARE
    if not keep.any():
        keep = share >= share.max() * 0.5
    mod = np.sort(np.abs(w[keep]))[::-1]
    groups = []
    for m in mod:
        if not groups or abs(m - groups[-1][-1]) > UNIT_RTOL * max(m, groups[-1][-1]):
            groups.append([m])
        else:
            groups[-1].append(m)
    moduli = [float(np.mean(g)) for g in groups]
    top = moduli[0]
    kind = "hyperbolic" if top > 1 + UNIT_RTOL else "neutrally stable (elliptic)"
    return {"largest_modulus": float(top), "smallest_modulus": float(moduli[-1]),
            "moduli": moduli, "kind": kind, "n_eigenvalues": int(w.size),
            "n_resolved": int(keep.sum()),
            "stability_index": float(0.5 * (top + 1.0 / top)) if top > 0 else math.inf}
