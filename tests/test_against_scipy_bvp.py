"""The targeted leg against scipy's boundary-value solver.

scipy.integrate.solve_bvp (a collocation method of Kierzenka & Shampine, "A BVP solver based
on residual control and the MATLAB PSE", ACM TOMS 27, 2001) solves the same two-point problem
as :func:`cr3bp.transfers.targeting.solve_departure` — CR3BP motion with the position fixed at both ends
and a fixed time of flight — by a method that shares nothing with our shooting: no state
transition matrix, no propagator. Both departure velocities must agree.
"""

import numpy as np
import pytest
from scipy.integrate import solve_bvp

from cr3bp.integrate.reference import eom_numpy
from cr3bp.transfers.targeting import solve_departure

from graph_fixtures import perturbed_states

ONE_MM_PER_S = 1e-3   # m/s


def test_departure_velocity_matches_collocation():
    s, st = perturbed_states(3)
    r0, r1 = st[0, :3], st[1, :3]
    tof = 2.0 / s.time_days
    v0, its, miss = solve_departure(s, r0, st[0, 3:], r1, tof)
    assert miss < 1e-11

    def fun(t, y):
        return np.stack([eom_numpy(0.0, y[:, k], s.mu) for k in range(y.shape[1])], axis=1)

    def bc(ya, yb):
        return np.concatenate([ya[:3] - r0, yb[:3] - r1])

    t = np.linspace(0.0, tof, 60)
    guess = np.array([np.linspace(r0[i], r1[i], t.size) for i in range(3)] +
                     [np.full(t.size, (r1[i] - r0[i]) / tof) for i in range(3)])
    sol = solve_bvp(fun, bc, t, guess, tol=1e-10, max_nodes=200000)
    assert sol.success, sol.message
    dv_mps = np.linalg.norm(sol.sol(0.0)[3:] - v0) * s.velocity_kms * 1e3
    print(f"departure velocities differ by {dv_mps:.2e} m/s")
    assert dv_mps < ONE_MM_PER_S
