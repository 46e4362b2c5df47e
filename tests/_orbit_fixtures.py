"""Orbits and Lagrange points for the manifold tests, from the library
(:func:`cr3bp.orbits.request.solve_request`, :func:`cr3bp.equilibria.lagrange_point`).

Until the orbit library landed these were a test-only single-shooting corrector; its orbits
agreed with the library's to the printed digits (Earth-Moon L1 Lyapunov at C = 3.15:
x0 = 0.81595853, period 2.84483137 TU; Sun-Earth L1 halo with z0 = 2.4e-3 LU:
x0 = 0.98889085, vy0 = 0.0096834), which is what the tests now use.
"""

from __future__ import annotations

import functools

from cr3bp.equilibria import lagrange_point
from cr3bp.orbits.request import solve_request


def collinear_x(mu, point, system=None):
    from cr3bp import system as _system
    s = system or _system(mu=mu)
    return float(lagrange_point(s, point).position[0])


def point_jacobi(mu, point):
    from cr3bp import system as _system
    return float(lagrange_point(_system(mu=mu), point).jacobi)


@functools.lru_cache(maxsize=None)
def lyapunov(system, point, target_jacobi):
    """Planar Lyapunov orbit about ``point`` with the given Jacobi constant."""
    return solve_request(system, f"lyapunov {point} jacobi={target_jacobi!r}")


@functools.lru_cache(maxsize=None)
def halo_az(system, point, az_lu, branch="north"):
    """Halo orbit about ``point`` with out-of-plane amplitude ``az_lu`` (LU)."""
    return solve_request(system, f"halo {point} {branch} az={az_lu!r}LU")


@functools.lru_cache(maxsize=None)
def halo_jacobi(system, point, target_jacobi, branch="north"):
    """Halo orbit about ``point`` with the given Jacobi constant."""
    return solve_request(system, f"halo {point} {branch} jacobi={target_jacobi!r}")
