"""The compiled propagator against heyoka (an independent Taylor-series integrator, F. Biscani
& D. Izzo, "Revisiting high-order Taylor methods for astrodynamics and celestial mechanics",
MNRAS 504, 2021), with the CR3BP built here from heyoka's expression system in our
convention (:mod:`cr3bp.systems`), at tolerance ~ machine epsilon.
"""

import numpy as np
import pytest

from cr3bp import propagate
from orbits_for_tests import dro, em, halo

hy = pytest.importorskip("heyoka")

STATE_AGREEMENT_LU = 1e-10   # about 4 cm in Earth-Moon units


def cr3bp_dynamics(mu):
    """Our equations of motion (Szebehely 1967, section 1.5) as heyoka expressions."""
    x, y, z, vx, vy, vz = hy.make_vars("x", "y", "z", "vx", "vy", "vz")
    r1_3 = ((x + mu) ** 2 + y**2 + z**2) ** -1.5
    r2_3 = ((x - 1.0 + mu) ** 2 + y**2 + z**2) ** -1.5
    return [(x, vx), (y, vy), (z, vz),
            (vx, 2.0 * vy + x - (1.0 - mu) * (x + mu) * r1_3 - mu * (x - 1.0 + mu) * r2_3),
            (vy, -2.0 * vx + y - (1.0 - mu) * y * r1_3 - mu * y * r2_3),
            (vz, -(1.0 - mu) * z * r1_3 - mu * z * r2_3)]


@pytest.fixture(scope="module")
def heyoka_integrator():
    return hy.taylor_adaptive(cr3bp_dynamics(em().mu), np.zeros(6) + [0.8, 0, 0, 0, 0.5, 0],
                              tol=2.2e-16)


def _heyoka_grid(ta, s0, grid):
    ta.time = 0.0
    ta.state[:] = s0
    out = ta.propagate_grid(grid)
    assert str(out[0]).endswith("time_limit")
    return out[-1]


@pytest.mark.parametrize("orbit,periods,samples", [(dro, 5.0, 41), (halo, 0.5, 11)],
                         ids=["dro five periods", "halo half period"])
def test_states_agree_with_heyoka(heyoka_integrator, orbit, periods, samples):
    s0, period = orbit()
    grid = np.linspace(0.0, periods * period, samples)
    ours = propagate(em(), s0, grid[-1], rtol=1e-13, atol=1e-13, t_eval=grid).states
    ref = _heyoka_grid(heyoka_integrator, s0, grid)
    assert np.max(np.abs(ours - ref)) < STATE_AGREEMENT_LU


def test_jacobi_constant_of_heyoka_and_ours_agree(heyoka_integrator):
    from cr3bp.dynamics import jacobi
    s0, period = dro()
    grid = np.array([0.0, 10.0 * period])
    ours = propagate(em(), s0, grid[-1], rtol=1e-13, atol=1e-13).final_state
    ref = _heyoka_grid(heyoka_integrator, s0, grid)[-1]
    assert abs(jacobi(em().mu, ours) - jacobi(em().mu, ref)) < 1e-12
