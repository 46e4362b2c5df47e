"""The lunar-flyby departure's analytic derivatives (``cr3bp.transfers.departure``): the
gradient of the total Δv and the Jacobian of the constraints, built from the two coasts' state
transition matrices and the vector field, against central finite differences of the same
functions.

Source: the chain rule through the variational equations of a multiple-shooting transcription
(Betts, "Practical Methods for Optimal Control and Estimation Using Nonlinear Programming",
2nd ed., 2010, §4.4; Pavlak, PhD thesis, Purdue University, 2013, ch. 3); central differences
have an error of order h^2 (common practice), so the two agree to about 1e-6 relative here.
The transfer itself is checked against scipy's DOP853 and the published order in
tests/test_departure_flyby.py.
"""

import numpy as np
import pytest

from _orbit_cache import em, nrho_9_2
from cr3bp.transfers import departure as D

#: Relative agreement of an analytic derivative column with central differences (step 1e-7 of
#: each variable's scale).
REL_TOL = 1e-4


@pytest.fixture(scope="module")
def shooting():
    s = em()
    pb = D._Problem(nrho_9_2(), 200.0, 28.5, "lunar-flyby", 100.0, 150.0 / s.days(1.0))
    ms = D._FlybyShooting(pb)
    # a periapsis 100 km over the Moon, a burn there, 3 days either side
    st = D._perilune_state(pb, 0.3, 2.5, 1.0, 0.9)
    post = D._with_speed_factor(pb, st, 0.93)
    x = np.concatenate([st[:3] - ms.moon, st[3:], post[3:], [0.4, 3.0 / s.days(1.0),
                                                             3.0 / s.days(1.0)]])
    assert ms.evaluate(x) is not None
    return ms, x


def _central(f, x, k, h):
    d = np.zeros_like(x)
    d[k] = h
    return (np.atleast_1d(f(x + d)) - np.atleast_1d(f(x - d))) / (2 * h)


def test_cost_gradient_against_central_differences(shooting):
    ms, x = shooting
    g = ms.jac(x)
    for k in range(12):
        num = _central(ms.fun, x, k, 1e-7 * D.FLYBY_SCALES[k])[0]
        assert g[k] == pytest.approx(num, rel=REL_TOL, abs=1e-6 * np.abs(g).max()), k


def test_constraint_jacobian_against_central_differences(shooting):
    ms, x = shooting
    J = ms.eq_jac(x)
    assert J.shape == (8, 12)          # insertion point 3, perigee radius and speed, flyby 2, inclination
    for k in range(12):
        num = _central(ms.eq, x, k, 1e-7 * D.FLYBY_SCALES[k])
        scale = np.abs(J).max(axis=1) + 1e-12
        assert np.all(np.abs(J[:, k] - num) <= REL_TOL * scale), k
    Ji = ms.ineq_jac(x)
    for k in range(12):
        num = _central(ms.ineq, x, k, 1e-7 * D.FLYBY_SCALES[k])
        assert np.allclose(Ji[:, k], num, atol=1e-6)
