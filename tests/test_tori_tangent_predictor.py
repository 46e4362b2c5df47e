"""The continuation predictor of tori in their held quantities (``family.hold_tangents``).

Outside reference: the Euler predictor of a continuation method is the tangent of the solution
curve, its error second order in the step (Allgower & Georg, "Introduction to Numerical
Continuation Methods", SIAM 2003, §2.2; Keller, "Numerical solution of bifurcation and
nonlinear eigenvalue problems", 1977). Checked here on an Earth-Moon L1 Lissajous torus: the
predicted unknowns ``[U, T, rho]`` at a changed (Jacobi constant, circle size) are within
O(step^2) of the torus Newton then solves there, the error falling about 4 times when the step
is halved; and the predicted T and rho carry the change (not the start's T and rho).
"""

import functools

import numpy as np
import pytest

from cr3bp import system
from cr3bp.orbits.request import solve_request
from cr3bp.tori import torus_around
from cr3bp.tori.family import hold_tangents
from cr3bp.tori.torus import solve_adaptive


@functools.lru_cache(maxsize=None)
def start():
    em = system("earth-moon")
    o = solve_request(em, "lyapunov L1 ax=2000km")
    return em, torus_around(o, 300.0 / em.length_km)


def _x(u, T, rho):
    return np.concatenate([u.ravel(), [T, rho]])


def test_tangent_predictor_is_second_order_in_the_step():
    em, t = start()
    n = t.n_circle_points
    ref = (t.circle, t.stroboscopic_time, t.rotation)
    p0 = np.array([t.jacobi, t.amplitude_lu])
    D = hold_tangents(em, t, {"jacobi": p0[0], "amplitude": p0[1]}, ref)
    assert D.shape == (6 * n + 2, 2)
    x0 = _x(t.circle, t.stroboscopic_time, t.rotation)
    direction = np.array([-2e-4, 0.5 * p0[1]])          # lower energy, 1.5 times the size
    errors = []
    for h in (1.0, 0.5):
        dp = h * direction
        xp = x0 + D @ dp
        u, T, rho, _ = solve_adaptive(em, xp[:6 * n].reshape(n, 6), xp[-2], xp[-1],
                                      {"jacobi": p0[0] + dp[0], "amplitude": p0[1] + dp[1]},
                                      reference=ref)
        assert u.shape[0] == n
        xs = _x(u, T, rho)
        errors.append(np.abs(xs - xp).max())
        change = np.abs(xs - x0).max()
        assert errors[-1] < 0.1 * change
        # T and rho predicted: nearer the solved ones than the start's (the old warm start)
        assert abs(xp[-2] - T) < 0.2 * abs(x0[-2] - T)
        assert abs(xp[-1] - rho) < 0.2 * abs(x0[-1] - rho)
    assert 2.5 < errors[0] / errors[1] < 6.0
