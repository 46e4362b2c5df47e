"""Monodromy of converged members: symplectic structure and the mirror relation.

Bounds:
* det M = 1: M is symplectic (Liouville); numerically det M = 1 to within the STM's
  integration error times its size, 1e-8 here.
* Eigenvalues come in reciprocal pairs (lambda, 1/lambda) (Meyer & Hall, *Introduction to
  Hamiltonian Dynamical Systems and the N-Body Problem*, 1992, §3.3).
* One pair is 1, 1 (flow direction and the Jacobi integral) and forms a 2x2 Jordan block; a
  perturbation of size eps of a Jordan block moves its eigenvalues by ~sqrt(eps ||M||)
  (Lidskii's perturbation theory; Wilkinson, *The Algebraic Eigenvalue Problem*, 1965, §2.11).
  With eps ~ 1e-12 and ||M|| up to ~1e4 that is ~1e-4, so the bound is |lambda - 1| < 1e-3.
"""

import numpy as np
import pytest

from cr3bp import propagate
from cr3bp.orbits import stability

import _orbit_cache as cache


@pytest.fixture(scope="module")
def members():
    return cache.sample_members()


def test_determinant_is_one(members):
    for o in members:
        assert np.linalg.det(o.monodromy) == pytest.approx(1.0, abs=1e-8), (o.family, o.state)


def test_reciprocal_pairs_and_trivial_pair(members):
    for o in members:
        ev = o.eigenvalues
        big = max(1.0, float(np.abs(ev).max()))
        assert stability.reciprocal_pair_error(o.monodromy) < 1e-6 * big
        near_one = sorted(np.abs(ev - 1.0))[:2]
        assert near_one[1] < 1e-3, (o.family, ev)


def test_indices_agree_with_eigenvalues(members):
    for o in members:
        ev = o.eigenvalues
        nus = sorted((0.5 * (l + 1 / l)).real for l in ev)
        for nu in o.stability_indices:
            assert min(abs(complex(nu).real - n) for n in nus) < 1e-6 * max(1.0, abs(complex(nu)))


def test_mirror_relation_matches_full_period_stm(members):
    """Monodromy from the half-period STM (Howell 1984) equals the propagated full-period STM."""
    for o in members[::3]:
        full = propagate(o.system, o.state, o.period, stm=True, rtol=1e-13, atol=1e-13).stm
        scale = max(1.0, np.abs(full).max())
        assert np.abs(full - o.monodromy).max() < 1e-6 * scale


def test_e_folding_time():
    o = cache.lyapunov("L1").members[0]
    lam = o.largest_multiplier
    assert o.e_folding_days == pytest.approx(o.period_days / np.log(lam), rel=1e-12)
    assert cache.dro().members[0].e_folding_days == float("inf")
