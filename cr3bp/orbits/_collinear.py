"""PRIVATE stand-in for :mod:`cr3bp.equilibria` (collinear points only).

TEMPORARY: the Lagrange-point module is being written on another branch. Until it is on main,
the orbit code needs the collinear points, their distance ``gamma`` to the nearest primary and
the linear frequencies there; this helper computes exactly that and nothing more. Switch the
imports in :mod:`cr3bp.orbits.seeds` to ``cr3bp.equilibria`` once it lands.

Method: the collinear points are the roots of dOmega/dx on the x axis, one in each interval
between and beyond the primaries (Szebehely, *Theory of Orbits*, 1967, §4.5); the linearised equations at a collinear point have the in-plane
frequencies ``lambda^2`` roots of ``s^2 + (2 - c2) s + (1 + c2)(1 - 2 c2) = 0`` with
``s = lambda^2`` and out-of-plane frequency ``sqrt(c2)``, where ``c2`` is Richardson's
coefficient (Richardson, Celestial Mechanics 22, 1980, eqs. (2)-(4)).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq

from ..errors import InputError

COLLINEAR = ("L1", "L2", "L3")


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
    """Collinear Lagrange point ``point`` of mass ratio ``mu`` with its linear frequencies."""
    p = point_name(point)
    def f(x):
        r1, r2 = x + mu, x - 1.0 + mu
        return x - (1.0 - mu) * r1 / abs(r1) ** 3 - mu * r2 / abs(r2) ** 3

    eps = 1e-9
    if p == "L1":
        x = brentq(f, -mu + eps, 1.0 - mu - eps * mu, xtol=1e-15, rtol=1e-15)
        gamma = 1.0 - mu - x
    elif p == "L2":
        x = brentq(f, 1.0 - mu + eps * mu, 2.0, xtol=1e-15, rtol=1e-15)
        gamma = x - (1.0 - mu)
    else:
        x = brentq(f, -2.0, -mu - eps, xtol=1e-15, rtol=1e-15)
        gamma = -mu - x
    c2 = cn(mu, p, gamma, 2)
    b = 2.0 - c2
    disc = math.sqrt(b * b + 4.0 * (c2 - 1.0) * (1.0 + 2.0 * c2))
    # s = lambda^2 roots of s^2 + (2 - c2) s - (c2 - 1)(1 + 2 c2) = 0
    s_plus = 0.5 * (-b + disc)
    s_minus = 0.5 * (-b - disc)
    lam_h = math.sqrt(s_plus)
    omega_p = math.sqrt(-s_minus)
    omega_v = math.sqrt(c2)
    kappa = (omega_p**2 + 1.0 + 2.0 * c2) / (2.0 * omega_p)
    return CollinearPoint(p, x, gamma, c2, omega_p, lam_h, omega_v, kappa)
