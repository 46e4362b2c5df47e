"""Stability of periodic orbits from the monodromy matrix.

* Monodromy of an x-z-symmetric orbit from its half-period STM with the mirror relation
  ``M = G Phi(T/2)^-1 G Phi(T/2)``, ``G = diag(1, -1, 1, -1, 1, -1)`` — the symmetry of
  Szebehely (*Theory of Orbits*, 1967, §2.6) applied to the STM as in Howell, "Three-dimensional,
  periodic, 'halo' orbits", *Celestial Mechanics* 32 (1984), §4. Derivation: ``s(-t) = G s(t)``
  gives ``Phi(-t, 0) = G Phi(t, 0) G``; periodicity gives ``Phi(T, T/2) = Phi(0, -T/2) =
  Phi(-T/2, 0)^-1``. The same relation with ``G = diag(1, -1, -1, -1, 1, 1)`` holds for orbits
  symmetric about the x axis (axial, vertical).
* Stability indices ``nu = (lambda + 1/lambda) / 2`` of the two non-trivial reciprocal pairs,
  computed from the invariants of the symplectic monodromy: the pairs' sums
  ``s_i = lambda_i + 1/lambda_i`` satisfy ``s1 + s2 = tr M - 2`` and
  ``s1^2 + s2^2 = tr(M^2) + 2`` once the trivial pair (1, 1) is removed (Broucke, "Stability of
  periodic orbits in the elliptic restricted three-body problem", *AIAA J.* 7, 1969, §II, the
  trace method). This is well conditioned even when two pairs are close to 1, where picking
  eigenvalues is not.
"""

from __future__ import annotations

import cmath
import math

import numpy as np

G_XZ = np.diag([1.0, -1.0, 1.0, -1.0, 1.0, -1.0])
G_XAXIS = np.diag([1.0, -1.0, -1.0, -1.0, 1.0, 1.0])


def monodromy_from_half(phi_half: np.ndarray, mirror: np.ndarray = G_XZ) -> np.ndarray:
    """Full-period STM of a symmetric orbit from its half-period STM.

    ``M = G Phi(T/2)^-1 G Phi(T/2)`` with the symmetry's reflection ``G`` (derivation in the
    module notes).

    Parameters
    ----------
    phi_half : ndarray, shape (6, 6)
        STM from the start to the half period.
    mirror : ndarray, shape (6, 6)
        :data:`G_XZ` or :data:`G_XAXIS`.

    Returns
    -------
    ndarray, shape (6, 6)

    Raises
    ------
    numpy.linalg.LinAlgError
        When ``phi_half`` is singular.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984, §4 (monodromy from the half-period STM).

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.orbits.stability import monodromy_from_half
    >>> monodromy_from_half(np.eye(6)).tolist() == np.eye(6).tolist()
    True
    """
    phi = np.asarray(phi_half, dtype=float)
    return mirror @ np.linalg.solve(phi, mirror @ phi)


def stability_indices(monodromy: np.ndarray):
    """The two non-trivial stability indices, largest |nu| first (trace method).

    Parameters
    ----------
    monodromy : ndarray, shape (6, 6)

    Returns
    -------
    tuple
        Two floats, or two complex conjugates when the non-trivial eigenvalues form a complex
        quadruple.

    Raises
    ------
    None

    References
    ----------
    .. [1] R. A. Broucke, "Stability of periodic orbits in the elliptic restricted three-body
       problem", *AIAA Journal* 7, 1969 (stability indices; trace method).

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.orbits import stability
    >>> M = np.diag([4.0, 0.25, 1.0, 1.0, 1.0, 1.0])
    >>> stability.stability_indices(M)
    (2.125, 1.0)
    """
    m = np.asarray(monodromy, dtype=float)
    t1 = float(np.trace(m))
    t2 = float(np.trace(m @ m))
    p = t1 - 2.0                   # s1 + s2
    q = 0.5 * (p * p - (t2 + 2.0))  # s1 s2
    disc = p * p - 4.0 * q
    if disc >= 0.0:
        r = math.sqrt(disc)
        s = sorted([0.5 * (p + r), 0.5 * (p - r)], key=abs, reverse=True)
        return (0.5 * s[0], 0.5 * s[1])
    r = cmath.sqrt(disc)
    return (0.5 * (0.5 * (p + r)), 0.5 * (0.5 * (p - r)))


def planar_indices(monodromy: np.ndarray):
    """(in-plane, out-of-plane) indices of a planar orbit.

    The z-block decouples, so ``nu_out = (M[2,2] + M[5,5]) / 2`` and
    ``nu_in = (tr M - 2)/2 - nu_out`` (exact for z = 0 orbits).

    Parameters
    ----------
    monodromy : ndarray, shape (6, 6)

    Returns
    -------
    tuple of float

    Raises
    ------
    None

    References
    ----------
    .. [1] R. A. Broucke, "Stability of periodic orbits in the elliptic restricted three-body
       problem", *AIAA Journal* 7, 1969 (stability indices; trace method).

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.orbits import stability
    >>> M = np.diag([4.0, 0.25, 1.0, 1.0, 1.0, 1.0])
    >>> stability.planar_indices(M)
    (2.125, 1.0)
    """
    m = np.asarray(monodromy, dtype=float)
    nu_out = 0.5 * (m[2, 2] + m[5, 5])
    nu_in = 0.5 * (np.trace(m) - 2.0) - nu_out
    return (float(nu_in), float(nu_out))


def eigenvalues(monodromy: np.ndarray) -> np.ndarray:
    """Eigenvalues of the monodromy, sorted by decreasing modulus.

    Parameters
    ----------
    monodromy : ndarray, shape (6, 6)

    Returns
    -------
    ndarray of complex

    Raises
    ------
    numpy.linalg.LinAlgError
        When the eigenvalue computation does not converge.

    References
    ----------
    .. [1] R. A. Broucke, "Stability of periodic orbits in the elliptic restricted three-body
       problem", *AIAA Journal* 7, 1969 (stability indices; trace method).

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.orbits import stability
    >>> M = np.diag([4.0, 0.25, 1.0, 1.0, 1.0, 1.0])
    >>> float(abs(stability.eigenvalues(M)[0]))
    4.0
    """
    ev = np.linalg.eigvals(np.asarray(monodromy, dtype=float))
    return ev[np.argsort(-np.abs(ev))]


def largest_multiplier(indices) -> float:
    """|lambda| of the most unstable mode from the indices (``lambda = nu + sqrt(nu^2 - 1)``).

    Parameters
    ----------
    indices : iterable of float or complex

    Returns
    -------
    float
        1.0 for a linearly stable orbit.

    Raises
    ------
    None

    References
    ----------
    .. [1] R. A. Broucke, "Stability of periodic orbits in the elliptic restricted three-body
       problem", *AIAA Journal* 7, 1969 (stability indices; trace method).

    Examples
    --------
    >>> from cr3bp.orbits.stability import largest_multiplier
    >>> largest_multiplier((2.125, 1.0))
    4.0
    """
    best = 1.0
    for nu in indices:
        if isinstance(nu, complex) and abs(nu.imag) > 0:
            lam = nu + cmath.sqrt(nu * nu - 1.0)
            best = max(best, abs(lam), 1.0 / abs(lam))
        else:
            nu = float(nu.real if isinstance(nu, complex) else nu)
            if abs(nu) > 1.0:
                best = max(best, abs(nu) + math.sqrt(nu * nu - 1.0))
    return best


def is_stable(indices, tol: float = 1e-6) -> bool:
    """Linearly stable: both indices real with |nu| <= 1 (+tol).

    Parameters
    ----------
    indices : iterable of float or complex
    tol : float

    Returns
    -------
    bool

    Raises
    ------
    None

    References
    ----------
    .. [1] R. A. Broucke, "Stability of periodic orbits in the elliptic restricted three-body
       problem", *AIAA Journal* 7, 1969 (stability indices; trace method).

    Examples
    --------
    >>> from cr3bp.orbits.stability import is_stable
    >>> is_stable((0.9, -0.5)), is_stable((2.125, 1.0))
    (True, False)
    """
    for nu in indices:
        if isinstance(nu, complex) and abs(nu.imag) > tol:
            return False
        if abs(complex(nu).real) > 1.0 + tol:
            return False
    return True


def reciprocal_pair_error(monodromy: np.ndarray) -> float:
    """How far the eigenvalues are from reciprocal pairs (0 for a symplectic matrix).

    ``max over lambda of min_j |lambda lambda_j - 1| / max(1, |lambda lambda_j|)``.

    Parameters
    ----------
    monodromy : ndarray, shape (6, 6)

    Returns
    -------
    float

    Raises
    ------
    numpy.linalg.LinAlgError
        When the eigenvalue computation does not converge.

    References
    ----------
    .. [1] R. A. Broucke, "Stability of periodic orbits in the elliptic restricted three-body
       problem", *AIAA Journal* 7, 1969 (stability indices; trace method).

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.orbits import stability
    >>> M = np.diag([4.0, 0.25, 1.0, 1.0, 1.0, 1.0])
    >>> stability.reciprocal_pair_error(M)
    0.0
    """
    ev = eigenvalues(monodromy)
    return float(max(min(abs(a * b - 1.0) / max(1.0, abs(a * b)) for b in ev) for a in ev))
