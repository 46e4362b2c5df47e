"""Our Lambert solver (:mod:`cr3bp.transfers.lambert`, Izzo 2015's formulation) against
published worked examples, and against scipy's DOP853 on the two-body equations.

References (values from memory, as printed in the books):
* Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed., 2013, Example 7-5:
  r1 = (15945.34, 0, 0) km, r2 = (12214.83899, 10249.46731, 0) km, 76 min, GM 398600.4418
  -> v1 = (2.058913, 2.915965, 0) km/s, v2 = (-3.451565, 0.910315, 0) km/s.
* Curtis, *Orbital Mechanics for Engineering Students*, 3rd ed., 2014, Example 5.2:
  r1 = (5000, 10000, 2100) km, r2 = (-14600, 2500, 7000) km, 1 h, GM 398600
  -> v1 = (-5.9925, 1.9254, 3.2456) km/s, v2 = (-3.3125, -4.1966, -0.38529) km/s.
"""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_ivp

from cr3bp.errors import InputError
from cr3bp.transfers.lambert import lambert

#: The books print 6 (Vallado) and 5 (Curtis) significant figures: half a unit of the last
#: printed digit, in km/s.
VALLADO_TOL_KMS = 1e-6
CURTIS_TOL_KMS = 5e-5


def test_vallado_2013_example_7_5():
    v1, v2 = lambert([15945.34, 0.0, 0.0], [12214.83899, 10249.46731, 0.0], 76.0 * 60.0, 398600.4418)
    np.testing.assert_allclose(v1, [2.058913, 2.915965, 0.0], atol=VALLADO_TOL_KMS)
    np.testing.assert_allclose(v2, [-3.451565, 0.910315, 0.0], atol=VALLADO_TOL_KMS)


def test_curtis_2014_example_5_2():
    v1, v2 = lambert([5000.0, 10000.0, 2100.0], [-14600.0, 2500.0, 7000.0], 3600.0, 398600.0)
    np.testing.assert_allclose(v1, [-5.9925, 1.9254, 3.2456], atol=CURTIS_TOL_KMS)
    np.testing.assert_allclose(v2, [-3.3125, -4.1966, -0.38529], atol=CURTIS_TOL_KMS)


def _two_body(t, y, gm):
    r = y[:3]
    return np.concatenate([y[3:], -gm * r / np.linalg.norm(r) ** 3])


@settings(max_examples=40, deadline=None)
@given(a1=st.floats(0.0, 2 * math.pi), a2=st.floats(0.2, 3.0), z=st.floats(-0.5, 0.5),
       n2=st.floats(0.5, 3.0), tof=st.floats(0.1, 4.0), prograde=st.booleans())
def test_arc_reaches_the_second_position_scipy_dop853(a1, a2, z, n2, tof, prograde):
    """Re-propagating (r1, v1) with scipy's DOP853 for the time of flight lands on r2, and
    the velocity there is v2 (nondimensional: gm = 1, |r1| = 1)."""
    r1 = np.array([math.cos(a1), math.sin(a1), 0.0])
    r2 = n2 * np.array([math.cos(a1 + a2), math.sin(a1 + a2), z])
    v1, v2 = lambert(r1, r2, tof, 1.0, prograde=prograde)
    h = np.cross(r1, v1)
    assert (h[2] > 0) == prograde
    sol = solve_ivp(_two_body, (0.0, tof), np.concatenate([r1, v1]), method="DOP853", rtol=1e-12,
                    atol=1e-12, args=(1.0,))
    np.testing.assert_allclose(sol.y[:3, -1], r2, atol=1e-8)
    np.testing.assert_allclose(sol.y[3:, -1], v2, atol=1e-7)


def test_bad_input():
    with pytest.raises(InputError):
        lambert([1, 0, 0], [2, 0, 0], 1.0, 1.0)      # collinear
    with pytest.raises(InputError):
        lambert([1, 0, 0], [0, 1, 0], -1.0, 1.0)     # negative time
