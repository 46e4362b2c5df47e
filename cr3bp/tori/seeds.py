"""First guesses of invariance circles from a periodic orbit's centre eigenpair.

A periodic orbit with state ``x0``, period ``T`` and a monodromy eigenpair
``M v = e^{i alpha} v`` on the unit circle is, to first order, surrounded by invariant tori
whose invariance circle at ``x0`` is ``u(theta) = x0 + eps Re(e^{i theta} v)``: then
``M Re(e^{i theta} v) = Re(e^{i(theta + alpha)} v)``, so the stroboscopic map over ``T`` turns
the circle by ``rho = alpha`` (Jorba, "Numerical computation of the normal behaviour of
invariant curves of n-dimensional maps", Nonlinearity 14, 2001; Olikara & Scheeres, AAS
12-361, 2012, §III.A). Around halo orbits and near-rectilinear halos this gives quasi-halo
tori; around planar (vertical) Lyapunov orbits the out-of-plane (in-plane) centre pair gives
Lissajous tori.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import NoSolutionError
from . import circle

#: A multiplier is on the unit circle when ||lambda| - 1| is below this.
UNIT_TOL = 1e-5
#: ... and it is not the trivial pair (along the flow, across the energy) when its angle is
#: larger than this (rad).
TRIVIAL_ANGLE = 1e-4


def centre_pairs(monodromy) -> list:
    """The centre eigenpairs ``(alpha, v)`` of a monodromy (numpy eigen-decomposition):
    multipliers ``e^{i alpha}`` with ``0 < alpha < pi`` on the unit circle, largest angle first."""
    w, vecs = np.linalg.eig(np.asarray(monodromy, dtype=float))
    out = []
    for k in range(w.size):
        lam = w[k]
        if abs(abs(lam) - 1.0) < UNIT_TOL and lam.imag > 0 and np.angle(lam) > TRIVIAL_ANGLE:
            out.append((float(np.angle(lam)), vecs[:, k]))
    out.sort(key=lambda p: -p[0])
    return out


def multipliers_text(monodromy) -> str:
    w = np.linalg.eigvals(np.asarray(monodromy, dtype=float))
    return ", ".join(f"{z.real:.4g}{z.imag:+.4g}i" for z in w)


def circle_from_pair(state, v, eps: float, n: int) -> np.ndarray:
    """``x0 + eps Re(e^{i theta_j} v)`` with ``v`` scaled so that ``eps`` is the RMS distance of
    the circle's positions from ``x0`` (LU)."""
    v = np.asarray(v, dtype=complex)
    scale = math.sqrt((np.sum(v.real[:3] ** 2) + np.sum(v.imag[:3] ** 2)) / 2.0)
    if scale == 0.0:
        raise NoSolutionError("the centre eigenvector has no position part")
    v = v / scale
    th = circle.angles(n)
    return np.asarray(state, dtype=float)[None, :] + eps * np.real(np.exp(1j * th)[:, None] * v[None, :])


def branch_rotation(alpha: float, rho_linear: float | None) -> tuple[float, int]:
    """The rotation to start from: ``alpha`` itself (``rho_linear`` None), or the member of
    ``{+-alpha + 2 pi k}`` nearest ``rho_linear``; with the sign (+1: eigenvector of
    ``e^{i alpha}``, -1: of its conjugate)."""
    if rho_linear is None:
        return alpha, 1
    best = None
    for sign in (1, -1):
        k = round((rho_linear - sign * alpha) / (2 * math.pi))
        cand = sign * alpha + 2 * math.pi * k
        if best is None or abs(cand - rho_linear) < abs(best[0] - rho_linear):
            best = (cand, sign)
    return best


def linear_lissajous(modes, position, ax_lu: float, az_lu: float, n: int):
    """Invariance circle of the linearised Lissajous motion at a collinear point (Richardson,
    Celestial Mechanics 22, 1980, eqs. for the linear solution; Szebehely 1967, §5.6):
    in plane ``Ax (planar_centre[0])`` at phase 0 (the x-axis crossing), out of plane
    ``Az (cos theta e_z - omega_v sin theta e_vz)``. Returns ``(U, T, rho)`` with
    ``T = 2 pi / omega_p`` and ``rho = 2 pi omega_v / omega_p``."""
    wp, wv = modes.omega_inplane, modes.omega_vertical
    th = circle.angles(n)
    base = np.concatenate([np.asarray(position, dtype=float), np.zeros(3)])
    base = base + ax_lu * np.asarray(modes.planar_centre[0], dtype=float)
    u = np.tile(base, (n, 1))
    u[:, 2] += az_lu * np.cos(th)
    u[:, 5] += -az_lu * wv * np.sin(th)
    return u, 2 * math.pi / wp, 2 * math.pi * wv / wp


def linear_lissajous_jacobi(modes, jacobi_point: float, ay_lu: float, az_lu: float) -> float:
    """Jacobi constant of the linearised Lissajous motion with in-plane amplitude ``ay_lu``
    (the largest ``|y|``) and out-of-plane amplitude ``az_lu`` at a collinear point.

    Parameters
    ----------
    modes : cr3bp.equilibria.LinearModes
        The point's linear modes (collinear: ``planar_centre`` set).
    jacobi_point : float
        Jacobi constant of the point itself.
    ay_lu, az_lu : float
        Amplitudes (LU).

    Returns
    -------
    float
        ``C_L + (1 + 2 c2 - kappa^2 omega_p^2) Ax^2 - c2 Az^2`` with ``Ax = Ay / kappa``.

    Raises
    ------
    TypeError
        ``modes`` without the collinear eigenvectors.

    Notes
    -----
    The linear solution ``x = Ax cos(omega_p t)``, ``y = -kappa Ax sin(omega_p t)``,
    ``z = Az cos(omega_v t)`` with ``kappa = (omega_p^2 + 1 + 2 c2) / (2 omega_p)`` and
    ``omega_v^2 = c2`` (Richardson 1980, eq. 7 and the linear frequencies; Szebehely 1967,
    §5.6) put into the quadratic part of the Jacobi integral
    ``C = 2 Omega - v^2``, ``2 Omega = C_L + (1 + 2 c2) x^2 + (1 - c2) y^2 - c2 z^2 + ...``
    (Szebehely 1967, §4.4), which the linear flow keeps constant: evaluated at ``t = 0``.
    The two oscillations' energies add; the error is of third order in the amplitudes.
    It estimates the target's Jacobi constant without growing the planar and vertical
    families to their members of amplitude Ay and Az.

    Examples
    --------
    >>> from cr3bp.equilibria import lagrange_point
    >>> from cr3bp.systems import system
    >>> lp = lagrange_point(system("earth-moon"), "L1")
    >>> linear_lissajous_jacobi(lp.modes, 3.19, 0.0, 0.0)
    3.19

    References
    ----------
    Richardson, D. L., "Analytic construction of periodic orbits about the collinear points",
    Celestial Mechanics 22, 241 (1980), eq. 7. Szebehely, V., Theory of Orbits, Academic Press
    (1967), §4.4 and §5.6.
    """
    wp, c2 = modes.omega_inplane, modes.omega_vertical ** 2
    kappa = float(modes.planar_centre[1][1])
    ax = ay_lu / kappa
    return float(jacobi_point + (1 + 2 * c2 - kappa ** 2 * wp ** 2) * ax * ax - c2 * az_lu * az_lu)
