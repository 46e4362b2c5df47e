"""Collinear Lagrange points against an independent computation: scipy's brentq on
dOmega/dx = 0 along the x axis (Omega written out here, not taken from cr3bp).

Reference: scipy.optimize.brentq (Brent, *Algorithms for Minimization without
Derivatives*, 1973, ch. 4). Tolerance 1e-12 LU: 0.4 mm in the Earth–Moon system, 0.15 m
in the Sun–Earth one.
"""

import pytest
from scipy.optimize import brentq

from cr3bp import system, system_names
from cr3bp.equilibria import lagrange_points

ONE_E_12_LU = 1e-12


def d_omega_dx(x, mu):
    r1 = abs(x + mu)
    r2 = abs(x - 1 + mu)
    return x - (1 - mu) * (x + mu) / r1**3 - mu * (x - 1 + mu) / r2**3


def omega_axis(x, mu):
    return 0.5 * x * x + (1 - mu) / abs(x + mu) + mu / abs(x - 1 + mu)


def brentq_points(mu):
    tiny = 1e-14
    x1 = brentq(d_omega_dx, -mu + tiny, 1 - mu - tiny, args=(mu,), xtol=1e-15, rtol=8.9e-16)
    x2 = brentq(d_omega_dx, 1 - mu + tiny, 3.0, args=(mu,), xtol=1e-15, rtol=8.9e-16)
    x3 = brentq(d_omega_dx, -3.0, -mu - tiny, args=(mu,), xtol=1e-15, rtol=8.9e-16)
    return {"L1": x1, "L2": x2, "L3": x3}


@pytest.mark.parametrize("name", system_names())
def test_tabulated_systems(name):
    s = system(name)
    ref = brentq_points(s.mu)
    pts = {p.name: p for p in lagrange_points(s)}
    for n, x in ref.items():
        assert pts[n].position[0] == pytest.approx(x, abs=ONE_E_12_LU), n
        assert pts[n].jacobi == pytest.approx(2 * omega_axis(x, s.mu), abs=1e-12), n


@pytest.mark.parametrize("mu", [1e-9, 1e-5, 0.001, 0.02, 0.0385, 0.2, 0.4, 0.5])
def test_range_of_mass_ratios(mu):
    ref = brentq_points(mu)
    pts = {p.name: p for p in lagrange_points(system(mu=mu))}
    for n, x in ref.items():
        assert pts[n].position[0] == pytest.approx(x, abs=ONE_E_12_LU), (mu, n)
    # the conventions of cr3bp/systems.py: L1 between, L2 beyond the smaller, L3 beyond the larger
    assert -mu < pts["L1"].position[0] < 1 - mu < pts["L2"].position[0]
    assert pts["L3"].position[0] < -mu
