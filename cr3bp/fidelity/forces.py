"""Compiled right-hand sides of the ephemeris model (point masses + cannonball radiation pressure).

The spacecraft moves about a central body c on inertial J2000 equator axes, perturbed by point
masses j whose positions ``s_j`` relative to c come from piecewise Chebyshev series; the
indirect term is the acceleration of the central body by the same masses (Montenbruck & Gill,
*Satellite Orbits*, 2000, eq. 3.37, from memory)::

    r'' = -GM_c r / |r|^3 + sum_j GM_j [ (s_j - r) / |s_j - r|^3 - s_j / |s_j|^3 ]
          + K (r - s_sun) / |r - s_sun|^3

with the cannonball radiation-pressure constant ``K = P_1au Cr (A/m) au^2`` (no shadow; the
force along the Sun-spacecraft line; Montenbruck & Gill 2000, eq. 3.75, from memory).

Variational equations (Montenbruck & Gill 2000, section 7.2): ``Phi' = [[0, I], [G, 0]] Phi``
with the gravity gradient ``G = sum_k GM_k (3 d_k d_k^T / |d_k|^5 - I / |d_k|^3)`` over the
central body (``d = r``) and every point mass (``d = r - s_j``), plus the radiation-pressure
partial ``K (I / |d|^3 - 3 d d^T / |d|^5)`` with ``d = r - s_sun`` (exact for the cannonball
model, so it is kept in the STM).

Everything is nondimensional (the CR3BP system's LU and TU). The parameter vector (float) is::

    p[0]      0.0 (the event kernels read it as mu: the central body sits at the origin)
    p[1]      GM of the central body
    p[2]      number of fitted bodies nb
    p[3]      segments of the series, p[4] terms per series (degree + 1)
    p[5]      start of the series (TU), p[6] segment length (TU)
    p[7]      radiation-pressure constant K (0: off), p[8] index of the Sun among the bodies (-1)
    p[9:9+nb] GM of each fitted body (0 for a body fitted only for the Sun-line)
    p[9+nb:]  coefficients, C order (nb, nseg, 3, n)
"""

from __future__ import annotations

import numpy as np
from numba import njit

HEADER = 9


@njit(cache=True)
def body_position(p, body, t, out):
    """Position of fitted body ``body`` at ``t`` into ``out[0:3]`` (Clenshaw's recurrence;
    Press et al., *Numerical Recipes*, 3rd ed., 2007, section 5.4)."""
    nb = int(p[2])
    nseg = int(p[3])
    n = int(p[4])
    t0 = p[5]
    h = p[6]
    s = int(np.floor((t - t0) / h))
    if s < 0:
        s = 0
    elif s >= nseg:
        s = nseg - 1
    u = 2.0 * (t - (t0 + s * h)) / h - 1.0
    base = HEADER + nb + ((body * nseg + s) * 3) * n
    for axis in range(3):
        off = base + axis * n
        b1 = 0.0
        b2 = 0.0
        for j in range(n - 1, 0, -1):
            b0 = 2.0 * u * b1 - b2 + p[off + j]
            b2 = b1
            b1 = b0
        out[axis] = u * b1 - b2 + p[off]


@njit(cache=True)
def _accel(t, s, p, out, grad, want_grad):
    """Acceleration into out[3:6] (and out[0:3] = velocity); gradient into grad if asked."""
    x = s[0]
    y = s[1]
    z = s[2]
    out[0] = s[3]
    out[1] = s[4]
    out[2] = s[5]
    r2 = x * x + y * y + z * z
    r = np.sqrt(r2)
    gm = p[1]
    k3 = gm / (r2 * r)
    ax = -k3 * x
    ay = -k3 * y
    az = -k3 * z
    if want_grad:
        k5 = 3.0 * gm / (r2 * r2 * r)
        grad[0, 0] = k5 * x * x - k3
        grad[1, 1] = k5 * y * y - k3
        grad[2, 2] = k5 * z * z - k3
        grad[0, 1] = k5 * x * y
        grad[0, 2] = k5 * x * z
        grad[1, 2] = k5 * y * z
    nb = int(p[2])
    isun = int(p[8])
    ksrp = p[7]
    pos = np.empty(3)
    for j in range(nb):
        gmj = p[HEADER + j]
        srp = ksrp != 0.0 and j == isun
        if gmj == 0.0 and not srp:
            continue
        body_position(p, j, t, pos)
        dx = x - pos[0]
        dy = y - pos[1]
        dz = z - pos[2]
        d2 = dx * dx + dy * dy + dz * dz
        d = np.sqrt(d2)
        d3 = d2 * d
        if gmj != 0.0:
            s2 = pos[0] * pos[0] + pos[1] * pos[1] + pos[2] * pos[2]
            s3 = s2 * np.sqrt(s2)
            ax += gmj * (-dx / d3 - pos[0] / s3)
            ay += gmj * (-dy / d3 - pos[1] / s3)
            az += gmj * (-dz / d3 - pos[2] / s3)
        # coefficient of (3 d d^T / d^5 - I / d^3) in the gradient
        c = gmj
        if srp:
            ax += ksrp * dx / d3
            ay += ksrp * dy / d3
            az += ksrp * dz / d3
            c -= ksrp
        if want_grad and c != 0.0:
            c3 = c / d3
            c5 = 3.0 * c / (d2 * d3)
            grad[0, 0] += c5 * dx * dx - c3
            grad[1, 1] += c5 * dy * dy - c3
            grad[2, 2] += c5 * dz * dz - c3
            grad[0, 1] += c5 * dx * dy
            grad[0, 2] += c5 * dx * dz
            grad[1, 2] += c5 * dy * dz
    out[3] = ax
    out[4] = ay
    out[5] = az


@njit(cache=True)
def eom(t, s, p, out):
    """Time derivative of a 6-state in the ephemeris model."""
    g = np.empty((3, 3))
    _accel(t, s, p, out, g, False)


@njit(cache=True)
def eom_stm(t, s, p, out):
    """Time derivative of the 42-state (state + row-major STM) in the ephemeris model."""
    g = np.empty((3, 3))
    _accel(t, s, p, out, g, True)
    gxx = g[0, 0]
    gyy = g[1, 1]
    gzz = g[2, 2]
    gxy = g[0, 1]
    gxz = g[0, 2]
    gyz = g[1, 2]
    for j in range(6):
        p0 = s[6 + j]
        p1 = s[12 + j]
        p2 = s[18 + j]
        out[6 + j] = s[24 + j]
        out[12 + j] = s[30 + j]
        out[18 + j] = s[36 + j]
        out[24 + j] = gxx * p0 + gxy * p1 + gxz * p2
        out[30 + j] = gxy * p0 + gyy * p1 + gyz * p2
        out[36 + j] = gxz * p0 + gyz * p1 + gzz * p2
