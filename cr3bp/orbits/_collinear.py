"""Collinear points as the orbit code needs them: a thin adapter over :mod:`cr3bp.equilibria`
(position, ``gamma``, linear frequencies) adding Richardson's coefficients ``c_n``.

Richardson, "Analytic construction of periodic orbits about the collinear points", Celestial
Mechanics 22, 1980, eq. (4) for ``c_n``; the in-plane amplitude ratio
``k = (omega_p^2 + 1 + 2 c2) / (2 omega_p)`` is his eq. (7).
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..errors import InputError
from ..vocabulary import COLLINEAR_POINTS
from ..equilibria import lagrange_point
from ..systems import from_mu

COLLINEAR = COLLINEAR_POINTS


@dataclass(frozen=True)
class CollinearPoint:
    """A collinear Lagrange point with what the orbit code needs.

    Parameters
    ----------
    name : str
    x : float
        Barycentric rotating x (LU).
    gamma : float
        Distance to the nearest primary (L1, L2: smaller; L3: larger), LU.
    c2 : float
        Richardson's c2.
    omega_p : float
        In-plane (Lyapunov) frequency, rad/TU.
    lambda_h : float
        Real (hyperbolic) exponent.
    omega_v : float
        Out-of-plane (vertical) frequency, rad/TU.
    kappa : float
        In-plane amplitude ratio Ay/Ax of the linear Lyapunov mode.

    References
    ----------
    .. [1] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, eqs. (4) and (7).

    Examples
    --------
    >>> from cr3bp.orbits._collinear import collinear_point
    >>> round(collinear_point(0.0121505843, "L1").gamma, 5)
    0.15093
    """
    name: str
    x: float          # barycentric rotating x (LU)
    gamma: float      # distance to the nearest primary (L1, L2: smaller; L3: larger), LU
    c2: float         # Richardson's c2 (Richardson 1980, eq. (4) with n = 2)
    omega_p: float    # in-plane (Lyapunov) frequency, rad/TU
    lambda_h: float   # real (hyperbolic) exponent
    omega_v: float    # out-of-plane (vertical) frequency, rad/TU
    kappa: float      # in-plane amplitude ratio Ay/Ax of the linear Lyapunov mode

    @property
    def position(self):
        return np.array([self.x, 0.0, 0.0])


def point_name(point: str) -> str:
    """A collinear point's name cleaned (``"l2 "`` -> ``"L2"``).

    Parameters
    ----------
    point : str

    Returns
    -------
    str

    Raises
    ------
    InputError
        Not L1, L2 or L3.

    References
    ----------
    .. [1] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, eqs. (4) and (7).

    Examples
    --------
    >>> from cr3bp.orbits._collinear import point_name
    >>> point_name(" l3")
    'L3'
    """
    p = str(point).strip().upper()
    if p not in COLLINEAR:
        raise InputError(f"Lagrange point '{point}' is not collinear; allowed: L1, L2, L3")
    return p


def cn(mu: float, point: str, gamma: float, n: int) -> float:
    """Richardson's Legendre coefficients ``c_n``.

    Parameters
    ----------
    mu : float
    point : str
        ``"L1"``, ``"L2"`` or ``"L3"``.
    gamma : float
        Distance from the point to its nearest primary (LU).
    n : int
        Order (2, 3, 4, ...).

    Returns
    -------
    float

    Raises
    ------
    None

    References
    ----------
    .. [1] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, eqs. (4) and (7).

    Examples
    --------
    >>> from cr3bp.orbits._collinear import cn, collinear_point
    >>> p = collinear_point(0.0121505843, "L1")
    >>> abs(cn(0.0121505843, "L1", p.gamma, 2) - p.c2) < 1e-9
    True
    """
    if point == "L1":
        return (mu + (-1) ** n * (1 - mu) * gamma ** (n + 1) / (1 - gamma) ** (n + 1)) / gamma**3
    if point == "L2":
        return ((-1) ** n * (mu + (1 - mu) * gamma ** (n + 1) / (1 + gamma) ** (n + 1))) / gamma**3
    # L3: gamma is the distance to the larger primary
    return (1 - mu + mu * gamma ** (n + 1) / (1 + gamma) ** (n + 1)) / gamma**3


def collinear_point(mu: float, point: str) -> CollinearPoint:
    """Collinear Lagrange point ``point`` of mass ratio ``mu`` with its linear frequencies.

    From :func:`cr3bp.equilibria.lagrange_point`, cached per (mu, point).

    Parameters
    ----------
    mu : float
    point : str

    Returns
    -------
    CollinearPoint

    Raises
    ------
    InputError
        ``point`` is not collinear, or ``mu`` out of range.

    References
    ----------
    .. [1] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, eqs. (4) and (7).

    Examples
    --------
    >>> from cr3bp.orbits._collinear import collinear_point
    >>> round(collinear_point(0.0121505843, "L2").omega_p, 4)
    1.8626
    """
    p = point_name(point)
    return _cached(float(mu), p)


@lru_cache(maxsize=64)
def _cached(mu: float, p: str) -> CollinearPoint:
    lp = lagrange_point(from_mu(mu), p)
    m = lp.modes
    c2 = float(m.c2)
    w = float(m.omega_inplane)
    kappa = (w**2 + 1.0 + 2.0 * c2) / (2.0 * w)
    return CollinearPoint(p, float(lp.position[0]), float(lp.gamma), c2, w, float(m.saddle_exponent),
                          float(m.omega_vertical), kappa)
