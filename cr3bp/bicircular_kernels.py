"""Compiled right-hand sides of the bicircular restricted four-body problem (BCR4BP): the
Earth-Moon CR3BP plus the Sun on a circle about the Earth-Moon barycentre.

Earth-Moon rotating frame and units of :mod:`cr3bp.systems` (larger primary at ``x = -mu``).
The Sun of mass ratio ``m_s`` (Sun mass / Earth-Moon mass) sits at distance ``a_s`` (LU) from
the barycentre in the x-y plane at the angle ``theta(t) = theta_0 + omega_s t`` from the +x
axis (``omega_s < 0``: in the rotating frame the Sun goes round clockwise, once per synodic
month). Equations of motion (Huang, *Very restricted four-body problem*, NASA TN D-501,
1960; Simo, Gomez, Jorba & Masdemont, *The bicircular model near the triangular libration
points of the RTBP*, in *From Newton to Chaos*, 1995; in the form of Boudad, Howell & Davis,
*Dynamics of synodic resonant near rectilinear halo orbits in the bicircular four-body
problem*, Adv. Space Res. 66, 2020, section 2 -- all from memory)::

    x'' - 2 y' = dU/dx,   y'' + 2 x' = dU/dy,   z'' = dU/dz
    U = (x^2 + y^2)/2 + (1 - mu)/r_1 + mu/r_2 + m_s/r_s - m_s (x x_s + y y_s) / a_s^3
    (x_s, y_s, 0) = a_s (cos theta, sin theta, 0),   r_s = |r - r_sun|

The last term is the indirect one: the Sun's pull on the Earth-Moon barycentre, the origin
of the frame. The Sun's direct and indirect terms cancel to within a tidal remainder ~400
times smaller; the kernels sum them without that cancellation (Battin, *An Introduction to
the Mathematics and Methods of Astrodynamics*, rev. ed., 1999, section 8.4, the function
f(q), from memory)::

    -m_s [ d/|d|^3 + r_sun/a_s^3 ] = -m_s/|d|^3 [ r + f(q) r_sun ],   d = r - r_sun,
    q = (|r|^2 - 2 r.r_sun) / a_s^2,   f(q) = q (3 + 3 q + q^2) / (1 + (1 + q)^(3/2))

Variational equations as for the CR3BP (:mod:`cr3bp.dynamics`), ``Phi' = [[0, I], [H, 2 W]]
Phi``, with the Sun's share of the Hessian ``m_s (3 d d^T / |d|^5 - I / |d|^3)`` (the
indirect term is linear in r). The model is time dependent: no Jacobi constant.

Parameter vector ``p``: ``[mu, m_s, a_s, omega_s, theta_0]`` (``p[0] = mu`` as the event
kernels expect). Modes ``MODE_BICIRCULAR`` (6 states) and ``MODE_BICIRCULAR_STM`` (42 states) of
:func:`cr3bp.integrate.dispatch.rhs` (numbers in :mod:`cr3bp.integrate.modes`).
"""

from __future__ import annotations

import numpy as np
from numba import njit


@njit(cache=True)
def _accelerations(t, s, p, out, h, want_hessian):
    """Velocity into out[0:3], acceleration (Coriolis included) into out[3:6]; the Hessian
    of U into h when asked."""
    mu = p[0]
    ms = p[1]
    a_s = p[2]
    theta = p[4] + p[3] * t
    x = s[0]
    y = s[1]
    z = s[2]
    # Earth and Moon
    dx1 = x + mu
    dx2 = x - 1.0 + mu
    yz2 = y * y + z * z
    q1 = 1.0 / (dx1 * dx1 + yz2)
    q2 = 1.0 / (dx2 * dx2 + yz2)
    a3 = (1.0 - mu) * q1 * np.sqrt(q1)
    b3 = mu * q2 * np.sqrt(q2)
    # Sun: direct + indirect without cancellation (Battin's f(q))
    xs = a_s * np.cos(theta)
    ys = a_s * np.sin(theta)
    ex = x - xs
    ey = y - ys
    d2 = ex * ex + ey * ey + z * z
    inv_d2 = 1.0 / d2
    c3 = ms * inv_d2 * np.sqrt(inv_d2)            # m_s / |d|^3
    q = (x * x + y * y + z * z - 2.0 * (x * xs + y * ys)) / (a_s * a_s)
    f = q * (3.0 + 3.0 * q + q * q) / (1.0 + (1.0 + q) * np.sqrt(1.0 + q))
    out[0] = s[3]
    out[1] = s[4]
    out[2] = s[5]
    out[3] = 2.0 * s[4] + x - a3 * dx1 - b3 * dx2 - c3 * (x + f * xs)
    out[4] = -2.0 * s[3] + y - (a3 + b3) * y - c3 * (y + f * ys)
    out[5] = -(a3 + b3) * z - c3 * z
    if want_hessian:
        a5 = 3.0 * a3 * q1
        b5 = 3.0 * b3 * q2
        c5 = 3.0 * c3 * inv_d2
        abc3 = a3 + b3 + c3
        m = a5 * dx1 + b5 * dx2
        h[0, 0] = 1.0 - abc3 + a5 * dx1 * dx1 + b5 * dx2 * dx2 + c5 * ex * ex
        h[1, 1] = 1.0 - abc3 + (a5 + b5) * y * y + c5 * ey * ey
        h[2, 2] = -abc3 + (a5 + b5 + c5) * z * z
        h[0, 1] = m * y + c5 * ex * ey
        h[0, 2] = m * z + c5 * ex * z
        h[1, 2] = (a5 + b5) * y * z + c5 * ey * z


@njit(cache=True)
def eom(t, s, p, out):
    """Time derivative of a 6-state in the bicircular model into ``out[0:6]``."""
    h = np.empty((3, 3))
    _accelerations(t, s, p, out, h, False)


@njit(cache=True)
def eom_stm(t, s, p, out):
    """Time derivative of the 42-state (state + row-major STM) in the bicircular model."""
    h = np.empty((3, 3))
    _accelerations(t, s, p, out, h, True)
    hxx = h[0, 0]
    hyy = h[1, 1]
    hzz = h[2, 2]
    hxy = h[0, 1]
    hxz = h[0, 2]
    hyz = h[1, 2]
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
