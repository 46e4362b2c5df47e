"""CR3BP dynamics as compiled kernels (numba ``njit(cache=True)``): the pseudo-potential, its
gradient and Hessian, the equations of motion with and without the variational equations,
and the Jacobi constant of many states. The integrator reaches them through its right-hand-side
dispatcher (:func:`cr3bp.integrate.dispatch.rhs`, modes in :mod:`cr3bp.integrate.modes`).

The equations and their sources are in the package :mod:`cr3bp.dynamics`, which holds the array-level
wrappers and imports nothing compiled: code that only needs the wrappers or the
ahead-of-time built kernels (:mod:`cr3bp.integrate.prebuilt`) does not import numba.
``cr3bp.dynamics.<kernel>`` still reaches every kernel here (module ``__getattr__``).
"""

from __future__ import annotations

import numpy as np
from numba import njit


@njit(cache=True, fastmath=False)
def omega(mu, x, y, z):
    """Pseudo-potential Omega at a position."""
    r1 = np.sqrt((x + mu) ** 2 + y * y + z * z)
    r2 = np.sqrt((x - 1.0 + mu) ** 2 + y * y + z * z)
    return 0.5 * (x * x + y * y) + (1.0 - mu) / r1 + mu / r2


@njit(cache=True)
def grad_omega(mu, x, y, z, out):
    """Gradient of Omega into ``out[0:3]``."""
    dx1 = x + mu
    dx2 = x - 1.0 + mu
    r1sq = dx1 * dx1 + y * y + z * z
    r2sq = dx2 * dx2 + y * y + z * z
    a = (1.0 - mu) / (r1sq * np.sqrt(r1sq))
    b = mu / (r2sq * np.sqrt(r2sq))
    out[0] = x - a * dx1 - b * dx2
    out[1] = y - a * y - b * y
    out[2] = -a * z - b * z


@njit(cache=True)
def hessian_omega(mu, x, y, z, out):
    """Hessian of Omega (3x3) into ``out``."""
    dx1 = x + mu
    dx2 = x - 1.0 + mu
    r1sq = dx1 * dx1 + y * y + z * z
    r2sq = dx2 * dx2 + y * y + z * z
    r1 = np.sqrt(r1sq)
    r2 = np.sqrt(r2sq)
    a3 = (1.0 - mu) / (r1sq * r1)
    b3 = mu / (r2sq * r2)
    a5 = 3.0 * (1.0 - mu) / (r1sq * r1sq * r1)
    b5 = 3.0 * mu / (r2sq * r2sq * r2)
    out[0, 0] = 1.0 - a3 - b3 + a5 * dx1 * dx1 + b5 * dx2 * dx2
    out[1, 1] = 1.0 - a3 - b3 + (a5 + b5) * y * y
    out[2, 2] = -a3 - b3 + (a5 + b5) * z * z
    out[0, 1] = out[1, 0] = (a5 * dx1 + b5 * dx2) * y
    out[0, 2] = out[2, 0] = (a5 * dx1 + b5 * dx2) * z
    out[1, 2] = out[2, 1] = (a5 + b5) * y * z


@njit(cache=True)
def eom(t, s, mu, out):
    """Time derivative of a 6-state ``s`` into ``out[0:6]``."""
    x, y, z, vx, vy, vz = s[0], s[1], s[2], s[3], s[4], s[5]
    dx1 = x + mu
    dx2 = x - 1.0 + mu
    r1sq = dx1 * dx1 + y * y + z * z
    r2sq = dx2 * dx2 + y * y + z * z
    a = (1.0 - mu) / (r1sq * np.sqrt(r1sq))
    b = mu / (r2sq * np.sqrt(r2sq))
    out[0] = vx
    out[1] = vy
    out[2] = vz
    out[3] = 2.0 * vy + x - a * dx1 - b * dx2
    out[4] = -2.0 * vx + y - (a + b) * y
    out[5] = -(a + b) * z


@njit(cache=True)
def eom_stm(t, s, mu, out):
    """Time derivative of the 42-state (state + row-major STM) into ``out[0:42]``.

    The accelerations and the Hessian share one square root and one division per primary
    (this kernel runs 13 times per integration step)."""
    x, y, z = s[0], s[1], s[2]
    dx1 = x + mu
    dx2 = x - 1.0 + mu
    yz2 = y * y + z * z
    q1 = 1.0 / (dx1 * dx1 + yz2)     # 1 / r1^2
    q2 = 1.0 / (dx2 * dx2 + yz2)
    a3 = (1.0 - mu) * q1 * np.sqrt(q1)   # (1 - mu) / r1^3
    b3 = mu * q2 * np.sqrt(q2)
    a5 = 3.0 * a3 * q1                   # 3 (1 - mu) / r1^5
    b5 = 3.0 * b3 * q2
    ab3 = a3 + b3
    ab5 = a5 + b5
    out[0] = s[3]
    out[1] = s[4]
    out[2] = s[5]
    out[3] = 2.0 * s[4] + x - a3 * dx1 - b3 * dx2
    out[4] = -2.0 * s[3] + y - ab3 * y
    out[5] = -ab3 * z
    m = a5 * dx1 + b5 * dx2
    hxx = 1.0 - ab3 + a5 * dx1 * dx1 + b5 * dx2 * dx2
    hyy = 1.0 - ab3 + ab5 * y * y
    hzz = -ab3 + ab5 * z * z
    hxy = m * y
    hxz = m * z
    hyz = ab5 * y * z
    # Phi' = A Phi; rows 0-2: Phi[3+i, :]; rows 3-5: H Phi[0:3, :] + 2 W Phi[3:6, :]
    for j in range(6):
        p0 = s[6 + j]
        p1 = s[12 + j]
        p2 = s[18 + j]
        p3 = s[24 + j]
        p4 = s[30 + j]
        p5 = s[36 + j]
        out[6 + j] = p3
        out[12 + j] = p4
        out[18 + j] = p5
        out[24 + j] = hxx * p0 + hxy * p1 + hxz * p2 + 2.0 * p4
        out[30 + j] = hxy * p0 + hyy * p1 + hyz * p2 - 2.0 * p3
        out[36 + j] = hxz * p0 + hyz * p1 + hzz * p2


@njit(cache=True)
def _jacobi_many(mu, states, out):
    for i in range(states.shape[0]):
        s = states[i]
        v2 = s[3] * s[3] + s[4] * s[4] + s[5] * s[5]
        out[i] = 2.0 * omega(mu, s[0], s[1], s[2]) - v2
