"""Symmetric periodic orbits for benchmarks and tests, found by a quick correction here.

Not the library's orbit correction (that is :mod:`cr3bp.orbits`): a minimal, self-contained
single-shooting differential correction of x-z-plane-symmetric orbits, so that the states
used to check and time the propagator have a provenance (a guess plus a correction that
closes the orbit) instead of being magic numbers.

Method: a trajectory that crosses y = 0 perpendicularly twice is periodic (mirror theorem,
Roy & Ovenden 1955; the CR3BP symmetry of Szebehely 1967, section 2.6). Starting on y = 0
with (vx, vz) = 0, Newton's method on the free initial values drives (vx, vz) to zero at
the next y = 0 crossing, with the STM corrected for the free crossing time (Howell,
"Three-dimensional, periodic, 'halo' orbits", Celestial Mechanics 32, 1984, section 3).
"""

from __future__ import annotations

import numpy as np

from cr3bp import propagate
from cr3bp.dynamics import acceleration
from cr3bp.integrate import plane


def _half(system, s0, tol):
    arc = propagate(system, s0, 10.0, stm=True, rtol=tol, atol=tol,
                    events=[plane("y", terminal=True)])
    if arc.status != "event":
        raise RuntimeError("no y = 0 crossing within 10 TU")
    return arc


def correct_planar(system, x0, vy0, tol=1e-13, iterations=30):
    """Planar symmetric orbit through (x0, 0): correct vy0 so that vx = 0 at the next y = 0
    crossing. Returns (state, period)."""
    for _ in range(iterations):
        s0 = np.array([x0, 0.0, 0.0, 0.0, vy0, 0.0])
        arc = _half(system, s0, tol)
        sf, phi = arc.final_state, arc.stm
        if abs(sf[3]) < 1e-12:
            return s0, 2.0 * arc.t_final
        f = acceleration(system.mu, sf)
        d = phi[3, 4] - f[3] / sf[4] * phi[1, 4]
        vy0 -= sf[3] / d
    raise RuntimeError(f"planar correction did not converge (vx = {sf[3]:.3e})")


def correct_spatial(system, x0, z0, vy0, tol=1e-13, iterations=30):
    """Spatial symmetric orbit (e.g. a halo) through (x0, 0, z0) with z0 fixed: correct x0
    and vy0 so that vx = vz = 0 at the next y = 0 crossing. Returns (state, period)."""
    for _ in range(iterations):
        s0 = np.array([x0, 0.0, z0, 0.0, vy0, 0.0])
        arc = _half(system, s0, tol)
        sf, phi = arc.final_state, arc.stm
        r = np.array([sf[3], sf[5]])
        if np.max(np.abs(r)) < 1e-12:
            return s0, 2.0 * arc.t_final
        f = acceleration(system.mu, sf)
        cols = [0, 4]
        J = np.array([[phi[3, c] - f[3] / sf[4] * phi[1, c] for c in cols],
                      [phi[5, c] - f[5] / sf[4] * phi[1, c] for c in cols]])
        dx = np.linalg.solve(J, -r)
        x0 += dx[0]
        vy0 += dx[1]
    raise RuntimeError(f"spatial correction did not converge (residual {np.max(np.abs(r)):.3e})")


def earth_moon_l1_halo(system):
    """An Earth-Moon L1 halo orbit (z0 = 0.0224 LU, about 8 600 km above the plane; period
    about 2.75 TU = 11.9 days; unstable, largest monodromy eigenvalue about 2 200).

    Guess x0 = 0.8234, vy0 = 0.1343 (a point of the L1 halo family, from memory), closed by
    :func:`correct_spatial`."""
    return correct_spatial(system, 0.8234, 0.0224, 0.1343)


def earth_moon_dro(system):
    """An Earth-Moon distant retrograde orbit crossing the x-axis 0.2 LU (about 77 000 km)
    inside the Moon, a linearly stable orbit.

    Guess vy0 = 0.5 (retrograde about the Moon, from memory), closed by
    :func:`correct_planar`."""
    return correct_planar(system, 1.0 - system.mu - 0.2, 0.5)
