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

COLLINEAR = COLLINEAR_POINTS


@dataclass(frozen=True)
class CollinearPoint:
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
    p = str(point).strip().upper()
    if p not in COLLINEAR:
        raise InputError(f"Lagrange point '{point}' is not collinear; allowed: L1, L2, L3")
    return p


def cn(mu: float, point: str, gamma: float, n: int) -> float:
    """Richardson's Legendre coefficients c_n (Richardson 1980, eq. (4); L3 form from the same paper)."""
    if point == "L1":
        return (mu + (-1) ** n * (1 - mu) * gamma ** (n + 1) / (1 - gamma) ** (n + 1)) / gamma**3
    if point == "L2":
        return ((-1) ** n * (mu + (1 - mu) * gamma ** (n + 1) / (1 + gamma) ** (n + 1))) / gamma**3
    # L3: gamma is the distance to the larger primary
    return (1 - mu + mu * gamma ** (n + 1) / (1 + gamma) ** (n + 1)) / gamma**3


def collinear_point(mu: float, point: str) -> CollinearPoint:
    """Collinear Lagrange point ``point`` of mass ratio ``mu`` with its linear frequencies
    (from :func:`cr3bp.equilibria.lagrange_point`)."""
    p = point_name(point)
    return _cached(float(mu), p)


@lru_cache(maxsize=64)
def _cached(mu: float, p: str) -> CollinearPoint:
    from ..equilibria import lagrange_point
    from ..systems import from_mu
    lp = lagrange_point(from_mu(mu), p)
    m = lp.modes
    c2 = float(m.c2)
    w = float(m.omega_inplane)
    kappa = (w**2 + 1.0 + 2.0 * c2) / (2.0 * w)
    return CollinearPoint(p, float(lp.position[0]), float(lp.gamma), c2, w, float(m.saddle_exponent),
                          float(m.omega_vertical), kappa)
