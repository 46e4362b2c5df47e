"""The propagator against Hairer, Norsett & Wanner, *Solving Ordinary Differential Equations I:
Nonstiff Problems*, 2nd ed., Springer, 1993.

* The Dormand-Prince 8(5,3) coefficients satisfy the order conditions of the method
  (section II.2, the simplifying conditions sum_j a_ij = c_i and the quadrature conditions
  sum_i b_i c_i^(k-1) = 1/k, k = 1..8, of an order-8 method).
* The Arenstorf orbit (section II.0, eq. (0.1) and the values after it) closes after one
  period.
"""

import math

import numpy as np
import pytest

from cr3bp import propagate, system
from cr3bp.integrate import coefficients as co

# Section II.0, eq. (0.1): mu = 0.012277471, mu' = 1 - mu; the larger body at -mu, the
# smaller at 1 - mu (y1 along the line of the bodies), as in our convention.
ARENSTORF_MU = 0.012277471
# Initial values given after eq. (0.1): y1(0) = 0.994, y2(0) = 0, y1'(0) = 0,
# y2'(0) = -2.00158510637908252240537862224; period T = 17.0652165601579625588917206249.
ARENSTORF_STATE = (0.994, 0.0, 0.0, 0.0, -2.00158510637908252240537862224, 0.0)
ARENSTORF_PERIOD = 17.0652165601579625588917206249


def test_quadrature_conditions_order_8():
    b, c = co.B, co.C[: co.N_STAGES]
    for k in range(8):
        assert np.dot(b, c**k) == pytest.approx(1.0 / (k + 1), abs=1e-14), k


def test_row_sums_of_a_are_the_nodes():
    # every stage, the FSAL stage and the three dense-output stages
    np.testing.assert_allclose(co.A.sum(axis=1), co.C, atol=2e-15)


def test_a_is_strictly_lower_triangular_and_fsal_row_is_b():
    assert np.all(np.triu(co.A) == 0.0)
    np.testing.assert_array_equal(co.A[co.N_STAGES, : co.N_STAGES], co.B)


def test_error_estimators_annihilate_low_order_quadrature():
    # an embedded estimator is a difference of two quadratures of order >= its own: its
    # weights integrate 1 (and c for the 5th-order one) to zero (section II.4, common practice)
    c = co.C[: co.N_STAGES + 1]
    assert abs(np.sum(co.E5)) < 1e-14 and abs(np.sum(co.E3)) < 1e-14
    assert abs(np.dot(co.E5, c)) < 1e-14


def test_dense_output_nodes_are_those_of_dop853():
    # code dop853: the three extra stages are at c = 0.1, 0.2, 7/9
    np.testing.assert_allclose(co.C[13:16], [0.1, 0.2, 7.0 / 9.0], rtol=0, atol=1e-16)


def test_arenstorf_orbit_closes_after_one_period():
    arena = system(mu=ARENSTORF_MU)
    arc = propagate(arena, ARENSTORF_STATE, ARENSTORF_PERIOD, rtol=1e-13, atol=1e-13)
    assert arc.status == "time"
    assert arc.t_final == ARENSTORF_PERIOD
    # the orbit passes close to both bodies; at tolerance 1e-13 it closes to ~1e-9 LU
    err = np.max(np.abs(arc.final_state - np.array(ARENSTORF_STATE)))
    assert err < 1e-8, err


def test_arenstorf_orbit_error_shrinks_with_tolerance():
    arena = system(mu=ARENSTORF_MU)
    errs = [np.max(np.abs(propagate(arena, ARENSTORF_STATE, ARENSTORF_PERIOD, rtol=t, atol=t)
                          .final_state - np.array(ARENSTORF_STATE))) for t in (1e-7, 1e-10, 1e-13)]
    assert errs[0] > errs[1] > errs[2], errs
    assert errs[0] > 1e-6 and not math.isnan(errs[2])
