"""TEST-ONLY stand-ins for the orbit and equilibrium libraries (issue 4 builds against their
interfaces before they land on main). Replace by ``cr3bp.equilibria.lagrange_point`` and
``cr3bp.orbits.request.solve_request`` once those are merged; nothing in ``cr3bp/`` imports this.

* ``collinear_x``: root of dOmega/dx on the x-axis (Szebehely 1967, §4.4), by brentq.
* ``lyapunov``: planar Lyapunov orbit at a Jacobi constant by single shooting on the
  half-period crossing of y = 0 (Koon, Lo, Marsden & Ross 2011, §4.6, differential
  correction), seeded from the linear solution and continued in amplitude.
* ``halo``: northern/southern halo by single shooting from a seed, z0 held fixed
  (Howell, "Three-dimensional, periodic, halo orbits", Celest. Mech. 32, 1984).
"""

from __future__ import annotations

import functools
import math

import numpy as np
from scipy.optimize import brentq

from cr3bp import plane, propagate
from cr3bp.dynamics import jacobi
from cr3bp.errors import ConvergenceError
from cr3bp.orbits import PeriodicOrbit


def collinear_x(mu, point):
    def gx(x):
        return x - (1 - mu) * (x + mu) / abs(x + mu) ** 3 - mu * (x - 1 + mu) / abs(x - 1 + mu) ** 3
    h = (mu / 3) ** (1 / 3)
    if point == "L1":
        return brentq(gx, 1 - mu - 2 * h, 1 - mu - 1e-9 * h, xtol=1e-15)
    if point == "L2":
        return brentq(gx, 1 - mu + 1e-9 * h, 1 - mu + 2 * h, xtol=1e-15)
    return brentq(gx, -mu - 1.5, -mu - 0.5, xtol=1e-15)


def point_jacobi(mu, point):
    return float(jacobi(mu, np.array([collinear_x(mu, point), 0, 0, 0, 0, 0.0])))


def _half_period(system, s0, stm=True):
    direction = -1 if s0[4] > 0 else 1
    arc = propagate(system, s0, 10.0, stm=stm, events=[plane("y", 0.0, direction, True, 1)], rtol=1e-12,
                    atol=1e-12)
    return arc


def _correct_vy(system, x0, vy0, z0=0.0, tol=1e-11, iters=30):
    """Fix x0 (and z0); vary vy0 (and x0 for 3D: see halo) so that vx = 0 at y = 0."""
    mu = system.mu
    for _ in range(iters):
        s0 = np.array([x0, 0, z0, 0, vy0, 0.0])
        arc = _half_period(system, s0)
        sf = arc.final_state
        if abs(sf[3]) < tol:
            return vy0, arc
        phi = arc.stm
        acc = np.empty(6)
        from cr3bp.dynamics import eom
        eom(0.0, sf, mu, acc)
        d = phi[3, 4] - acc[3] / sf[4] * phi[1, 4]
        vy0 -= sf[3] / d
    raise ConvergenceError("fixture Lyapunov correction did not converge", iters, [abs(sf[3])])


def _orbit(system, s0, family, point, branch=""):
    arc_half = _half_period(system, s0, stm=False)
    period = 2 * arc_half.t_final
    full = propagate(system, s0, period, stm=True, rtol=1e-13, atol=1e-13)
    err = float(np.linalg.norm(full.final_state - s0))
    return PeriodicOrbit(system=system, state=s0, period=period, monodromy=full.stm, family=family,
                         point=point, branch=branch, jacobi=float(jacobi(system.mu, s0)),
                         periodicity_error=err, iterations=0)


@functools.lru_cache(maxsize=None)
def lyapunov(system, point, target_jacobi):
    """Planar Lyapunov orbit about L1/L2 with Jacobi constant ``target_jacobi`` (to 1e-12)."""
    mu = system.mu
    xl = collinear_x(mu, point)
    r1, r2 = abs(xl + mu), abs(xl - 1 + mu)
    c2 = (1 - mu) / r1**3 + mu / r2**3
    nu = math.sqrt((2 - c2 + math.sqrt(9 * c2**2 - 8 * c2)) / 2)
    kappa = (nu**2 + 1 + 2 * c2) / (2 * nu)

    def solve(ax, vy_guess=None):
        x0 = xl - ax
        vy = kappa * nu * ax if vy_guess is None else vy_guess
        vy, _ = _correct_vy(system, x0, vy)
        return vy, float(jacobi(mu, np.array([x0, 0, 0, 0, vy, 0.0])))

    # continue in amplitude until the target is bracketed, then secant on the amplitude
    ax, vy = 1e-3, None
    prev = None
    c_l = point_jacobi(mu, point)
    if not target_jacobi < c_l:
        raise ValueError("target Jacobi constant must be below the Lagrange point's")
    while True:
        vy, c = solve(ax, vy)
        if c <= target_jacobi:
            break
        prev = (ax, vy, c)
        ax *= 1.25
        vy *= 1.25
    (a0, v0, _), (a1, v1, _) = prev, (ax, vy, c)
    memo = {}

    def f(a):
        v_guess = v0 + (a - a0) * (v1 - v0) / (a1 - a0)
        memo[a] = solve(a, v_guess)
        return memo[a][1] - target_jacobi

    a = brentq(f, a0, a1, xtol=1e-15, rtol=1e-15)
    vy = memo[a][0] if a in memo else solve(a)[0]
    s0 = np.array([xl - a, 0, 0, 0, vy, 0.0])
    return _orbit(system, s0, "lyapunov", point)


@functools.lru_cache(maxsize=None)
def halo(system, point, z0, x_seed, vy_seed, branch="north"):
    """Halo orbit with fixed z0 (vary x0, vy0; zero vx, vz at the y = 0 crossing)."""
    from cr3bp.dynamics import eom
    mu = system.mu
    x0, vy0 = x_seed, vy_seed
    res = []
    for _ in range(40):
        s0 = np.array([x0, 0, z0, 0, vy0, 0.0])
        arc = _half_period(system, s0)
        sf = arc.final_state
        res.append(math.hypot(sf[3], sf[5]))
        if res[-1] < 1e-11:
            return _orbit(system, s0, "halo", point, branch)
        phi = arc.stm
        acc = np.empty(6)
        eom(0.0, sf, mu, acc)
        rows = [3, 5]
        cols = [0, 4]
        m = np.array([[phi[r, c] - acc[r] / sf[4] * phi[1, c] for c in cols] for r in rows])
        dx = np.linalg.solve(m, -np.array([sf[3], sf[5]]))
        x0 += dx[0]
        vy0 += dx[1]
    raise ConvergenceError("fixture halo correction did not converge", 40, res)


def _lyapunov_at(system, point, ax, vy_guess):
    xl = collinear_x(system.mu, point)
    vy, _ = _correct_vy(system, xl - ax, vy_guess)
    return xl - ax, vy


def _vertical_trace(system, x0, vy):
    s0 = np.array([x0, 0, 0, 0, vy, 0.0])
    half = _half_period(system, s0, stm=False).t_final
    m = propagate(system, s0, 2 * half, stm=True, rtol=1e-12, atol=1e-12).stm
    return m[2, 2] + m[5, 5] - 2.0


@functools.lru_cache(maxsize=None)
def halo_by_continuation(system, point, z_target, n_steps=12):
    """Halo from the Lyapunov orbit where the vertical pair of the monodromy reaches +1 (the
    halo bifurcation; Howell 1984), continued in z0 (held fixed in each correction)."""
    mu = system.mu
    xl = collinear_x(mu, point)
    r1, r2 = abs(xl + mu), abs(xl - 1 + mu)
    c2 = (1 - mu) / r1**3 + mu / r2**3
    nu = math.sqrt((2 - c2 + math.sqrt(9 * c2**2 - 8 * c2)) / 2)
    kappa = (nu**2 + 1 + 2 * c2) / (2 * nu)
    h = (mu / 3) ** (1 / 3)
    ax = 0.02 * h
    vy = kappa * nu * ax
    prev = None
    for _ in range(200):
        x0, vy = _lyapunov_at(system, point, ax, vy)
        tr = _vertical_trace(system, x0, vy)
        if prev is not None and prev[2] * tr <= 0:
            break
        prev = (ax, vy, tr)
        ax *= 1.08
        vy *= 1.08
    else:
        raise ConvergenceError("fixture: no halo bifurcation found", 200, [])
    a0, v0, t0 = prev
    a1, v1, t1 = ax, vy, tr
    a = a0 - t0 * (a1 - a0) / (t1 - t0)
    x0, vy = _lyapunov_at(system, point, a, v0 + (a - a0) * (v1 - v0) / (a1 - a0))
    orbit = None
    for z in np.geomspace(1e-3 * z_target, z_target, n_steps):
        halo.cache_clear()
        orbit = halo(system, point, float(z), float(x0), float(vy))
        x0, vy = float(orbit.state[0]), float(orbit.state[4])
    return orbit


@functools.lru_cache(maxsize=None)
def halo_at_jacobi(system, point, target_jacobi, z_start=1e-3, growth=1.3):
    """Halo with a given Jacobi constant: continuation in z0 from the bifurcation until the
    target is bracketed, then Brent's method on z0 (each z0 corrected from its neighbour)."""
    base = halo_by_continuation(system, point, z_start)
    z, x0, vy = z_start, float(base.state[0]), float(base.state[4])
    prev = (z, x0, vy, base.jacobi)
    if base.jacobi < target_jacobi:
        raise ValueError("target above the start of the halo family")
    for _ in range(60):
        z *= growth
        halo.cache_clear()
        o = halo(system, point, float(z), x0, vy)
        x0, vy = float(o.state[0]), float(o.state[4])
        if o.jacobi <= target_jacobi:
            break
        prev = (z, x0, vy, o.jacobi)
    else:
        raise ConvergenceError("fixture: halo family never reached the target", 60, [])
    memo = {}

    def f(zz):
        t = (zz - prev[0]) / (z - prev[0])
        halo.cache_clear()
        oo = halo(system, point, float(zz), prev[1] + t * (x0 - prev[1]), prev[2] + t * (vy - prev[2]))
        memo[zz] = oo
        return oo.jacobi - target_jacobi

    zz = brentq(f, prev[0], z, xtol=1e-14, rtol=1e-14)
    return memo[zz] if zz in memo else (f(zz), memo[zz])[1]
