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


def _symplectic(S, jordan=0.3):
    """A 6x6 symplectic matrix in (q1, q2, q3, p1, p2, p3) order: diag(S, S^-T) on the first two
    degrees of freedom and the trivial Jordan block [[1, a], [0, 1]] on the third."""
    M = np.zeros((6, 6))
    M[np.ix_([0, 1], [0, 1])] = S
    M[np.ix_([3, 4], [3, 4])] = np.linalg.inv(S).T
    M[2, 2] = M[5, 5] = 1.0
    M[2, 5] = jordan
    J = np.block([[np.zeros((3, 3)), np.eye(3)], [-np.eye(3), np.zeros((3, 3))]])
    assert np.allclose(M.T @ J @ M, J)
    return M


def test_indices_of_a_complex_quadruple():
    """Eigenvalues rho e^{+-i th}, e^{+-i th}/rho give the complex indices
    nu = ((rho + 1/rho) cos th +- i (rho - 1/rho) sin th) / 2 (Broucke 1969)."""
    rho, th = 1.7, 0.6
    R = np.array([[np.cos(th), -np.sin(th)], [np.sin(th), np.cos(th)]])
    M = _symplectic(rho * R)
    nu = stability.stability_indices(M)
    assert all(isinstance(v, complex) for v in nu)
    assert nu[0].real == pytest.approx(0.5 * (rho + 1 / rho) * np.cos(th), abs=1e-12)
    assert abs(nu[0].imag) == pytest.approx(0.5 * (rho - 1 / rho) * np.sin(th), abs=1e-12)
    assert stability.largest_multiplier(nu) == pytest.approx(rho, abs=1e-12)
    assert not stability.is_stable(nu)


def test_indices_of_real_pairs():
    # two hyperbolic pairs: 40, 1/40 and 0.5, 2
    S = np.diag([40.0, 0.5])
    nu = stability.stability_indices(_symplectic(S))
    assert nu[0] == pytest.approx(0.5 * (40 + 1 / 40), abs=1e-12)
    assert nu[1] == pytest.approx(0.5 * (0.5 + 2.0), abs=1e-12)


def _per_dof(*blocks):
    """6x6 symplectic matrix from three 2x2 blocks of unit determinant, one per degree of
    freedom (q_i, p_i)."""
    M = np.zeros((6, 6))
    for i, B in enumerate(blocks):
        M[np.ix_([i, i + 3], [i, i + 3])] = B
    return M


def test_crossing_detector_kinds():
    """The detector used along families reports +1, -1 and complex transitions."""
    from cr3bp.orbits import continuation
    from cr3bp.orbits.orbit import PeriodicOrbit
    em = cache.em()

    def rot(th):
        return np.array([[np.cos(th), np.sin(th)], [-np.sin(th), np.cos(th)]])

    hyp = np.diag([30.0, 1 / 30.0])
    trivial = np.array([[1.0, 0.3], [0.0, 1.0]])

    def kinds(Ma, Mb):
        a, b = PeriodicOrbit(em, np.zeros(6), 1.0, Ma), PeriodicOrbit(em, np.zeros(6), 1.0, Mb)
        na = continuation._indices(a, False)
        nb = continuation._match(na, continuation._indices(b, False))
        return sorted(k for k, _ in continuation._crossings(na, nb, a, b))

    # elliptic pair nu = cos 0.3 becomes hyperbolic nu = (1.3 + 1/1.3)/2: crosses +1
    assert kinds(_per_dof(hyp, rot(0.3), trivial), _per_dof(hyp, np.diag([1.3, 1 / 1.3]), trivial)) == ["+1"]
    # nu = cos 2.9 becomes -(1.3 + 1/1.3)/2: crosses -1 (period doubling)
    assert kinds(_per_dof(hyp, rot(2.9), trivial), _per_dof(hyp, np.diag([-1.3, -1 / 1.3]), trivial)) == ["-1"]
    # two real pairs (nu 1.25, 1.11) become a complex quadruple
    before = _per_dof(np.diag([2.0, 0.5]), np.diag([1.6, 1 / 1.6]), trivial)
    R = np.array([[np.cos(0.6), -np.sin(0.6)], [np.sin(0.6), np.cos(0.6)]])
    assert kinds(before, _symplectic(1.7 * R)) == ["complex"]
    # no change: no report
    assert kinds(before, before) == []
