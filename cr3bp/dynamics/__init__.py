"""CR3BP dynamics: the array-level functions (Jacobi constant, accelerations, gradient and
Hessian of the pseudo-potential, the variational matrix, the mirror symmetry) over the
compiled kernels of :mod:`cr3bp.dynamics.kernels`.

Conventions are in :mod:`cr3bp.systems`. Equations of motion (Szebehely, *Theory of Orbits*,
1967, §1.5)::

    x'' - 2 y' = dOmega/dx,   y'' + 2 x' = dOmega/dy,   z'' = dOmega/dz

Variational equations for the state transition matrix Phi (6x6, row-major in the last 36
entries of the extended state): Phi' = A(t) Phi with A = [[0, I], [H, 2 W]], H the Hessian of
Omega and W = [[0, 1, 0], [-1, 0, 0], [0, 0, 0]] (Koon, Lo, Marsden & Ross, *Dynamical Systems,
the Three-Body Problem and Space Mission Design*, 2011, §4.4).

This module imports nothing compiled. The functions below call the ahead-of-time built
kernels when they are present and current (looked up by :mod:`cr3bp.compiled`; the same
source, built once by ``make``), otherwise numba's just-in-time ones; a single request therefore
does not pay numba's start-up. The kernels themselves (``omega``, ``grad_omega``,
``hessian_omega``, ``eom``, ``eom_stm``) are reached as ``cr3bp.dynamics.<name>``,
for use inside other compiled code.
"""

from __future__ import annotations

import numpy as np

from .. import compiled

#: Kernels of :mod:`cr3bp.dynamics.kernels` reachable as attributes of this module.
KERNEL_NAMES = ("omega", "grad_omega", "hessian_omega", "eom", "eom_stm", "_jacobi_many")


def __getattr__(name):
    if name in KERNEL_NAMES:
        from . import kernels  # lazy: heavy library (numba, via cr3bp.dynamics.kernels)
        return getattr(kernels, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def _kernels():
    """The prebuilt kernel module when present and current, else the just-in-time one (both
    export ``eom``, ``grad_omega``, ``hessian_omega`` and ``_jacobi_many``).

    The just-in-time kernels load numba, which a prebuilt run never needs."""
    k = compiled.kernels()
    if k is None:
        from . import kernels as k  # lazy: heavy library (numba)
    return k


# ---- array-level functions ------------------------------------------------------------

def jacobi(mu: float, states) -> np.ndarray | float:
    """Jacobi constant ``C = 2 Omega - v^2`` of one state (6,) or many (N, 6).

    Parameters
    ----------
    mu : float
        Mass parameter of the system.
    states : array_like, shape (6,) or (N, 6) (or wider: the first six entries are used)
        Rotating-frame states, nondimensional.

    Returns
    -------
    float or numpy.ndarray
        A float for one state, an array (N,) for many.

    Raises
    ------
    IndexError
        A state with fewer than six entries.

    Examples
    --------
    >>> mu = 0.012150584269542242                  # Earth-Moon
    >>> round(jacobi(mu, [0.8369, 0, 0, 0, 0, 0]), 4)       # at rest near L1
    3.1883
    >>> jacobi(mu, [[0.8369, 0, 0, 0, 0, 0]] * 3).shape
    (3,)

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*,
       Academic Press, 1967, §1.5 (equations of motion, Jacobi integral).
    """
    s = np.asarray(states, dtype=float)
    flat = np.atleast_2d(s)
    out = np.empty(flat.shape[0])
    _kernels()._jacobi_many(float(mu), np.ascontiguousarray(flat[:, :6]), out)
    return float(out[0]) if s.ndim == 1 else out


def acceleration(mu: float, state) -> np.ndarray:
    """Time derivative of one 6-state: velocities, then the accelerations of the equations of
    motion in the rotating frame (a numpy convenience for tests and scripts).

    Parameters
    ----------
    mu : float
        Mass parameter.
    state : array_like, shape (6,)
        Rotating-frame state, nondimensional.

    Returns
    -------
    numpy.ndarray, shape (6,)

    Raises
    ------
    IndexError
        A state with fewer than six entries.

    Examples
    --------
    >>> mu = 0.012150584269542242
    >>> acceleration(mu, [1.1, 0, 0, 0, 0.1, 0]).round(6).tolist()
    [0.0, 0.1, 0.0, -0.464701, 0.0, -0.0]

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*,
       Academic Press, 1967, §1.5 (equations of motion, Jacobi integral).
    """
    out = np.empty(6)
    _kernels().eom(0.0, np.ascontiguousarray(state, dtype=float)[:6], float(mu), out)
    return out


def gradient(mu: float, position) -> np.ndarray:
    """Gradient of the pseudo-potential Omega at a position.

    Parameters
    ----------
    mu : float
        Mass parameter.
    position : array_like, shape (3,)
        Rotating-frame position, nondimensional.

    Returns
    -------
    numpy.ndarray, shape (3,)

    Raises
    ------
    IndexError
        A position with fewer than three entries.

    Examples
    --------
    >>> gradient(0.012150584269542242, [0.5, 0, 0]).round(5).tolist()
    [-3.21508, 0.0, -0.0]

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*,
       Academic Press, 1967, §1.5 (equations of motion, Jacobi integral).
    """
    out = np.empty(3)
    p = np.asarray(position, dtype=float)
    _kernels().grad_omega(float(mu), float(p[0]), float(p[1]), float(p[2]), out)
    return out


def hessian(mu: float, position) -> np.ndarray:
    """Hessian (second derivatives) of the pseudo-potential Omega at a position.

    Parameters
    ----------
    mu : float
        Mass parameter.
    position : array_like, shape (3,)
        Rotating-frame position, nondimensional.

    Returns
    -------
    numpy.ndarray, shape (3, 3)
        Symmetric.

    Raises
    ------
    IndexError
        A position with fewer than three entries.

    Examples
    --------
    >>> h = hessian(0.012150584269542242, [0.5, 0, 0])
    >>> round(float(h[0, 0]), 4), bool((h == h.T).all())
    (15.9164, True)

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*,
       Academic Press, 1967, §1.5 (equations of motion, Jacobi integral).
    """
    out = np.empty((3, 3))
    p = np.asarray(position, dtype=float)
    _kernels().hessian_omega(float(mu), float(p[0]), float(p[1]), float(p[2]), out)
    return out


def jacobian(mu: float, state) -> np.ndarray:
    """The 6x6 matrix A of the variational equations at ``state``: Phi' = A Phi, with
    A = [[0, I], [H, 2 W]] (H the Hessian of Omega, W the Coriolis block).

    Parameters
    ----------
    mu : float
        Mass parameter.
    state : array_like, shape (6,)
        Rotating-frame state (only the position enters).

    Returns
    -------
    numpy.ndarray, shape (6, 6)

    Raises
    ------
    IndexError
        A state with fewer than three entries.

    Examples
    --------
    >>> a = jacobian(0.012150584269542242, [0.8369, 0, 0, 0, 0, 0])
    >>> a.shape, float(a[3, 4]), float(a[4, 3])
    ((6, 6), 2.0, -2.0)

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden, S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §4.4 (variational equations).
    """
    a = np.zeros((6, 6))
    a[0:3, 3:6] = np.eye(3)
    a[3:6, 0:3] = hessian(mu, np.asarray(state)[:3])
    a[3, 4] = 2.0
    a[4, 3] = -2.0
    return a


def mirror(states) -> np.ndarray:
    """Image under the CR3BP symmetry (x, y, z, vx, vy, vz, t) -> (x, -y, z, -vx, vy, -vz, -t).

    If ``s(t)`` is a solution then ``mirror(s(-t))`` is one too (the symmetry about the x-z
    plane with time reversal).

    Parameters
    ----------
    states : array_like, shape (..., 6)
        One state (6,) or many (N, 6); a copy is returned.

    Returns
    -------
    numpy.ndarray
        Same shape, y, vx and vz negated.

    Raises
    ------
    IndexError
        Fewer than six entries in the last axis.

    Examples
    --------
    >>> mirror([1, 2, 3, 4, 5, 6]).tolist()
    [1.0, -2.0, 3.0, -4.0, 5.0, -6.0]

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, 1967, §2.6 (symmetries of the restricted problem).
    """
    s = np.array(states, dtype=float, copy=True)
    s[..., 1] *= -1.0
    s[..., 3] *= -1.0
    s[..., 5] *= -1.0
    return s


#: Diagonal of the matrix G with mirror(s) = G s, for STM symmetry relations.
MIRROR = np.array([1.0, -1.0, 1.0, -1.0, 1.0, -1.0])
