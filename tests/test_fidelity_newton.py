"""The shared minimum-norm Newton of the ephemeris-model corrections (cr3bp/fidelity/newton.py)."""

import numpy as np
import pytest

from cr3bp.errors import ConvergenceError
from cr3bp.fidelity import newton


def test_linear_underdetermined_system_gives_the_least_norm_solution():
    """From z = 0 one Newton step on J z = b is the least-norm solution (Golub & Van Loan,
    *Matrix Computations*, 4th ed., 2013, section 5.6), i.e. LAPACK's pseudo-inverse solution."""
    rng = np.random.default_rng(7)
    J = rng.normal(size=(3, 7))
    b = rng.normal(size=3)
    z, it, hist = newton.solve(lambda z: (J @ z - b, J), np.zeros(7), 1e-12, 5)
    assert it == 1 and hist[-1] < 1e-12
    assert np.allclose(z, np.linalg.pinv(J) @ b, rtol=0, atol=1e-12)


def test_nonlinear_system_converges_with_the_progress_reported():
    seen = []
    z, it, hist = newton.solve(lambda z: (np.array([z[0] ** 2 + z[1] ** 2 - 2.0]),
                                          np.array([[2 * z[0], 2 * z[1]]])),
                               np.array([3.0, 0.5]), 1e-13, 30, progress=lambda i, e: seen.append(i))
    assert abs(z @ z - 2.0) < 1e-13 and seen == list(range(it + 1))


@pytest.mark.parametrize("case,text", [
    ("slow", "toy shooting did not converge in 2 iterations"),
    ("nan", "toy shooting diverged (non-finite mismatch) at iteration 0"),
    ("inadmissible", "toy shooting: step halving failed at iteration 0"),
])
def test_failures_name_what_failed(case, text):
    def constraints(z):
        if case == "nan":
            return np.array([np.nan]), np.array([[1.0]])
        return np.array([z[0] ** 3 - 8.0]), np.array([[3.0 * z[0] ** 2]])   # slow from z = 100
    admissible = (lambda z: False) if case == "inadmissible" else None
    with pytest.raises(ConvergenceError) as err:
        newton.solve(constraints, np.array([100.0]), 1e-12, 2, what="toy shooting", admissible=admissible)
    assert text in str(err.value)


def test_sparse_least_norm_step_equals_the_dense_minimum_norm_solution():
    """A block-banded multiple-shooting-like Jacobian (blocks Phi_k and -I): the sparse step
    (SuperLU on J J^T) equals numpy's minimum-norm least-squares solution (LAPACK gelsd) to
    rounding, for the matrix given dense and given sparse."""
    from scipy import sparse
    from cr3bp.fidelity.newton import least_norm_step
    rng = np.random.default_rng(4)
    m = 60
    J = np.zeros((6 * m, 6 * (m + 1) + m - 1))
    for k in range(m):
        J[6 * k:6 * k + 6, 6 * k:6 * k + 6] = np.eye(6) + 0.3 * rng.standard_normal((6, 6))
        J[6 * k:6 * k + 6, 6 * k + 6:6 * k + 12] = -np.eye(6)
        if k >= 1:
            J[6 * k:6 * k + 6, 6 * (m + 1) + k - 1] = rng.standard_normal(6)
    F = rng.standard_normal(6 * m)
    want = -np.linalg.lstsq(J, F, rcond=None)[0]
    assert J.size >= 40000                                      # the sparse path is taken
    for given in (J, sparse.csr_matrix(J)):
        got = least_norm_step(given, F)
        assert np.allclose(got, want, rtol=0, atol=1e-10 * np.abs(want).max()), np.abs(got - want).max()
    with pytest.raises(np.linalg.LinAlgError):
        least_norm_step(sparse.csr_matrix(np.zeros((6 * m, J.shape[1]))), F)
