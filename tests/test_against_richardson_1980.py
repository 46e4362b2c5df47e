"""Collinear points and their linear modes against Richardson (1980).

Source: D. L. Richardson, "Analytic construction of periodic orbits about the collinear
points", *Celestial Mechanics* 22, 241–253, 1980: the coefficients
``c_n(mu) = (1/gamma^3) [(+-1)^n mu + (-1)^n (1 - mu) gamma^(n+1) / (1 -+ gamma)^(n+1)]`` and the
characteristic roots of the linearised motion::

    lambda^2  = (c2 - 2 + sqrt(9 c2^2 - 8 c2)) / 2
    omega_p^2 = (2 - c2 + sqrt(9 c2^2 - 8 c2)) / 2
    omega_v^2 = c2

and the worked case of the Sun–(Earth+Moon) L1 with mu = 3.040357143e-6.
"""

import math

import numpy as np
import pytest

from cr3bp import dynamics, system
from cr3bp.equilibria import lagrange_point, lagrange_points

RICHARDSON_MU = 3.040357143e-6
# Richardson 1980, Sun–(Earth+Moon) L1 (from memory):
RICHARDSON_GAMMA_L1 = 1.001090475e-2   # distance from the Earth, LU
RICHARDSON_OMEGA_P_L1 = 2.086453455    # in-plane frequency, rad/TU (his lambda)
RICHARDSON_C2_L1 = 4.061074            # c2, printed to 7 digits


def richardson_c(n, mu, gamma, point):
    """c_n(mu) of Richardson 1980 (upper signs L1, lower L2), written out independently."""
    if point == "L1":
        return (mu + (-1) ** n * (1 - mu) * gamma ** (n + 1) / (1 - gamma) ** (n + 1)) / gamma**3
    if point == "L2":
        return ((-1) ** n * mu + (-1) ** n * (1 - mu) * gamma ** (n + 1) / (1 + gamma) ** (n + 1)) / gamma**3
    # L3 (same paper's convention with gamma measured from the larger primary)
    return (1 - mu + mu * gamma ** (n + 1) / (1 + gamma) ** (n + 1)) / gamma**3


def test_sun_earth_l1_worked_case():
    p = lagrange_point(system(mu=RICHARDSON_MU), "L1")
    # gamma printed to 10 significant digits: agree within half a unit of the last printed
    # digit, 5e-12 LU (~0.75 m at 1 au), plus 10% slack
    assert p.gamma == pytest.approx(RICHARDSON_GAMMA_L1, abs=5.5e-12)
    assert p.modes.omega_inplane == pytest.approx(RICHARDSON_OMEGA_P_L1, abs=5e-10)
    assert p.modes.c2 == pytest.approx(RICHARDSON_C2_L1, abs=5e-7)


@pytest.mark.parametrize("mu", [RICHARDSON_MU, 9.537e-4, 0.01215058, 0.1, 0.3, 0.5])
@pytest.mark.parametrize("name", ["L1", "L2", "L3"])
def test_jacobian_eigenvalues_match_closed_forms(mu, name):
    p = lagrange_point(system(mu=mu), name)
    c2 = richardson_c(2, mu, p.gamma, name)
    assert p.modes.c2 == pytest.approx(c2, rel=1e-13)
    root = math.sqrt(9 * c2 * c2 - 8 * c2)
    lam = math.sqrt((c2 - 2 + root) / 2)
    wp = math.sqrt((2 - c2 + root) / 2)
    wv = math.sqrt(c2)
    # eigenvalues of the Jacobian, computed here directly with numpy
    ev = np.linalg.eigvals(dynamics.jacobian(mu, p.state))
    expected = np.array([lam, -lam, 1j * wp, -1j * wp, 1j * wv, -1j * wv])
    for e in expected:
        assert np.min(np.abs(ev - e)) < 1e-10 * max(1.0, abs(e))
    assert p.modes.saddle_exponent == pytest.approx(lam, rel=1e-13)
    assert p.modes.omega_inplane == pytest.approx(wp, rel=1e-13)
    assert p.modes.omega_vertical == pytest.approx(wv, rel=1e-13)
    assert p.modes.kind == "saddle x centre x centre" and not p.modes.linearly_stable


@pytest.mark.parametrize("name", ["L1", "L2", "L3"])
def test_exposed_eigenvectors_are_eigenvectors(name):
    mu = 0.01215058
    p = lagrange_point(system(mu=mu), name)
    a = dynamics.jacobian(mu, p.state)
    m = p.modes
    np.testing.assert_allclose(a @ m.unstable_direction, m.saddle_exponent * m.unstable_direction, atol=1e-12)
    np.testing.assert_allclose(a @ m.stable_direction, -m.saddle_exponent * m.stable_direction, atol=1e-12)
    # planar centre: re + i im is the eigenvector of i omega_p
    z = m.planar_centre[0] + 1j * m.planar_centre[1]
    np.testing.assert_allclose(a @ z, 1j * m.omega_inplane * z, atol=1e-11)
    z = m.vertical_centre[0] + 1j * m.vertical_centre[1]
    np.testing.assert_allclose(a @ z, 1j * m.omega_vertical * z, atol=1e-12)
    # numpy's eigenvectors, as exposed, satisfy A v = w v
    for k in range(6):
        v = m.eigenvectors[:, k]
        np.testing.assert_allclose(a @ v, m.eigenvalues[k] * v, atol=1e-10)


def test_linear_solution_agrees_with_integration():
    """A small step along the unstable direction grows as exp(lambda t) in the full model."""
    from scipy.integrate import solve_ivp
    mu = 0.01215058
    p = lagrange_point(system(mu=mu), "L1")
    eps = 1e-9
    s0 = p.state + eps * p.modes.unstable_direction

    def f(t, s):
        return dynamics.acceleration(mu, s)

    t = 2.0
    sol = solve_ivp(f, (0, t), s0, rtol=1e-12, atol=1e-15)
    grown = np.linalg.norm(sol.y[:, -1] - p.state)
    assert grown == pytest.approx(eps * math.exp(p.modes.saddle_exponent * t), rel=1e-3)


def test_triangular_frequencies_closed_form():
    # Szebehely 1967, §5.5: s^4 + s^2 + (27/4) mu (1 - mu) = 0 at L4/L5
    mu = 0.01215058
    pts = lagrange_points(system(mu=mu))
    for p in pts[3:]:
        ev = np.linalg.eigvals(dynamics.jacobian(mu, p.state))
        for w in (p.modes.omega_long, p.modes.omega_short, 1.0):
            assert np.min(np.abs(ev - 1j * w)) < 1e-10
        s2 = -p.modes.omega_long**2
        assert s2 * s2 + s2 + 27 / 4 * mu * (1 - mu) == pytest.approx(0.0, abs=1e-14)
