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
    multipliers ``e^{i alpha}`` with ``0 < alpha < pi`` on the unit circle, largest angle first.

    Parameters
    ----------
    monodromy : array_like (6, 6)
        The monodromy matrix of a periodic orbit.

    Returns
    -------
    list of (float, ndarray (6,) complex)
        ``(alpha, v)`` per centre pair, ``alpha`` in rad; empty when there is none.

    Raises
    ------
    numpy.linalg.LinAlgError
        The eigen-decomposition fails (a matrix of non-finite values).

    Examples
    --------
    >>> from cr3bp.tori.seeds import centre_pairs
    >>> import math, numpy as np
    >>> from scipy.linalg import block_diag
    >>> c, s = math.cos(0.5), math.sin(0.5)
    >>> M = block_diag([[c, -s], [s, c]], 2.0, 0.5, 1.0, 1.0)     # one centre pair at 0.5 rad
    >>> [round(a, 6) for a, _ in centre_pairs(M)]
    [0.5]

    References
    ----------
    Jorba, Nonlinearity 14, 2001; Olikara & Scheeres, AAS 12-361, 2012, §III.A.
    """
    w, vecs = np.linalg.eig(np.asarray(monodromy, dtype=float))
    out = []
    for k in range(w.size):
        lam = w[k]
        if abs(abs(lam) - 1.0) < UNIT_TOL and lam.imag > 0 and np.angle(lam) > TRIVIAL_ANGLE:
            out.append((float(np.angle(lam)), vecs[:, k]))
    out.sort(key=lambda p: -p[0])
    return out


def multipliers_text(monodromy) -> str:
    """The monodromy's six multipliers as text (four significant digits each), for messages.

    Parameters
    ----------
    monodromy : array_like (6, 6)

    Returns
    -------
    str
        ``"re+imi, ..."`` in numpy's eigenvalue order.

    Raises
    ------
    numpy.linalg.LinAlgError
        The eigenvalues cannot be computed.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.tori.seeds import multipliers_text
    >>> multipliers_text(np.diag([2.0, 0.5, 1.0, 1.0, 1.0, 1.0]))
    '2+0i, 0.5+0i, 1+0i, 1+0i, 1+0i, 1+0i'

    References
    ----------
    Common practice.
    """
    w = np.linalg.eigvals(np.asarray(monodromy, dtype=float))
    return ", ".join(f"{z.real:.4g}{z.imag:+.4g}i" for z in w)


def circle_from_pair(state, v, eps: float, n: int) -> np.ndarray:
    """``x0 + eps Re(e^{i theta_j} v)`` with ``v`` scaled so that ``eps`` is the RMS distance of
    the circle's positions from ``x0`` (LU).

    Parameters
    ----------
    state : array_like (6,)
        The orbit's state ``x0`` (nondimensional).
    v : array_like (6,) complex
        A centre eigenvector of the monodromy.
    eps : float
        RMS distance of the circle's positions from ``x0``, LU.
    n : int
        Points on the circle.

    Returns
    -------
    ndarray (n, 6)
        The circle's states at ``circle.angles(n)``.

    Raises
    ------
    NoSolutionError
        The eigenvector has no position part.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.tori.seeds import circle_from_pair
    >>> v = np.array([1, 1j, 0, 0, 0, 0])
    >>> u = circle_from_pair(np.zeros(6), v, 0.01, 8)
    >>> u.shape, round(float(np.sqrt((u[:, :3] ** 2).sum(axis=1).mean())), 6)
    ((8, 6), 0.01)

    References
    ----------
    Olikara & Scheeres, AAS 12-361, 2012, §III.A (first-order circle from the centre pair).
    """
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
    ``e^{i alpha}``, -1: of its conjugate).

    Parameters
    ----------
    alpha : float
        Angle of the centre multiplier, rad (0 < alpha < pi).
    rho_linear : float or None
        The rotation number the linear theory expects, rad.

    Returns
    -------
    (float, int)
        The rotation, rad, and the sign of the eigenvector to use.

    Raises
    ------
    TypeError
        ``alpha`` or ``rho_linear`` is not a number.

    Examples
    --------
    >>> import math
    >>> from cr3bp.tori.seeds import branch_rotation
    >>> branch_rotation(0.5, None)
    (0.5, 1)
    >>> rho, sign = branch_rotation(0.5, 2 * math.pi - 0.4)
    >>> round(rho, 6), sign
    (5.783185, -1)

    References
    ----------
    Olikara & Scheeres, AAS 12-361, 2012, §III.A (the rotation number is the multiplier's angle
    modulo 2 pi; from memory).
    """
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
    ``T = 2 pi / omega_p`` and ``rho = 2 pi omega_v / omega_p``.

    Parameters
    ----------
    modes : object
        Linear modes at the point: ``omega_inplane``, ``omega_vertical`` and ``planar_centre``
        (the in-plane centre state direction first).
    position : array_like (3,)
        The collinear point's position, LU.
    ax_lu, az_lu : float
        In-plane and out-of-plane amplitudes, LU.
    n : int
        Points on the circle.

    Returns
    -------
    (ndarray (n, 6), float, float)
        The circle ``U``, stroboscopic time ``T`` (TU) and rotation ``rho`` (rad).

    Raises
    ------
    AttributeError
        ``modes`` lacks the frequencies or the planar centre direction.

    Examples
    --------
    >>> import math
    >>> from types import SimpleNamespace
    >>> from cr3bp.tori.seeds import linear_lissajous
    >>> modes = SimpleNamespace(omega_inplane=2.0, omega_vertical=1.8,
    ...                         planar_centre=[[1, 0, 0, 0, 0, 0]])
    >>> u, T, rho = linear_lissajous(modes, [0.8, 0, 0], 0.0, 0.01, 8)
    >>> u.shape, round(T, 6), round(rho, 6), round(float(u[:, 2].max()), 6)
    ((8, 6), 3.141593, 5.654867, 0.01)

    References
    ----------
    Richardson, Celestial Mechanics 22, 1980 (the linear solution); Szebehely 1967, §5.6.
    """
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
