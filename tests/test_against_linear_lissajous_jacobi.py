"""The Lissajous seed's Jacobi constant against the published linear solution and integral.

Sources: the linear solution at a collinear point ``x = Ax cos(omega_p t)``,
``y = -kappa Ax sin(omega_p t)``, ``z = Az cos(omega_v t)`` with
``omega_p^2 = (2 - c2 + sqrt(9 c2^2 - 8 c2)) / 2``, ``omega_v^2 = c2`` and
``kappa = (omega_p^2 + 1 + 2 c2) / (2 omega_p)`` (Richardson, "Analytic construction of periodic
orbits about the collinear points", Celestial Mechanics 22, 1980, eq. 7 and the linear
frequencies); the Jacobi integral ``C = x^2 + y^2 + 2 (1 - mu) / r1 + 2 mu / r2 - v^2``
(Szebehely, Theory of Orbits, 1967, §1.4 / §4.4), evaluated here in full (not linearised) on
states of that solution at several times. The point is found with scipy's brentq, not by the
library. :func:`cr3bp.tori.seeds.linear_lissajous_jacobi` must agree to third order in the
amplitudes: halving them divides the difference by about eight.
"""

import functools
import math

import pytest
from scipy.optimize import brentq

from cr3bp import system
from cr3bp.equilibria import lagrange_point
from cr3bp.tori.seeds import linear_lissajous_jacobi


def _point(mu, point):
    def fx(x):
        return (x - (1 - mu) * (x + mu) / abs(x + mu) ** 3
                - mu * (x - 1 + mu) / abs(x - 1 + mu) ** 3)
    x = brentq(fx, 0.5, 1 - mu - 1e-6) if point == "L1" else brentq(fx, 1 - mu + 1e-6, 1.5)
    c2 = (1 - mu) / abs(x + mu) ** 3 + mu / abs(x - 1 + mu) ** 3
    return x, c2


def _jacobi(mu, s):
    x, y, z, vx, vy, vz = s
    r1 = math.sqrt((x + mu) ** 2 + y * y + z * z)
    r2 = math.sqrt((x - 1 + mu) ** 2 + y * y + z * z)
    return x * x + y * y + 2 * (1 - mu) / r1 + 2 * mu / r2 - (vx * vx + vy * vy + vz * vz)


@functools.lru_cache(maxsize=None)
def _sys(name):
    return system(name)


def _linear_states(mu, point, ay, az):
    """States of the published linear solution (amplitudes ay = kappa Ax, az) at four times."""
    xl, c2 = _point(mu, point)
    wp = math.sqrt((2 - c2 + math.sqrt(9 * c2 * c2 - 8 * c2)) / 2)
    wv = math.sqrt(c2)
    kappa = (wp * wp + 1 + 2 * c2) / (2 * wp)
    ax = ay / kappa
    out = []
    for t in (0.0, 0.4, 1.3, 2.9):
        out.append((xl + ax * math.cos(wp * t), -kappa * ax * math.sin(wp * t), az * math.cos(wv * t),
                    -ax * wp * math.sin(wp * t), -kappa * ax * wp * math.cos(wp * t),
                    -az * wv * math.sin(wv * t)))
    return xl, out


@pytest.mark.parametrize("name,point,ay_km,az_km", [
    ("earth-moon", "L1", 8000.0, 5000.0), ("earth-moon", "L2", 8000.0, 5000.0),
    ("sun-earth", "L2", 300000.0, 150000.0), ("sun-earth", "L1", 200000.0, 300000.0)])
def test_linear_lissajous_jacobi_is_the_integral_of_the_linear_solution(name, point, ay_km, az_km):
    s = _sys(name)
    mu = s.mu
    modes = lagrange_point(s, point).modes
    diffs = []
    for f in (1.0, 0.1, 0.05):
        ay, az = f * ay_km / s.length_km, f * az_km / s.length_km
        xl, states = _linear_states(mu, point, ay, az)
        c_point = _jacobi(mu, (xl, 0, 0, 0, 0, 0))
        got = linear_lissajous_jacobi(modes, c_point, ay, az)
        full = [_jacobi(mu, st) for st in states]
        scale = abs(full[0] - c_point)                  # the energy of the oscillations
        # at the full size within 10 % of the energy; a tenth of it within 1 %, at every time
        # (the quadratic form is an integral of the linear flow)
        for c in full:
            assert abs(got - c) < (0.1 if f == 1.0 else 0.01) * scale
        diffs.append(max(abs(got - c) for c in full))
        assert got < c_point                            # oscillations lower C at L1/L2
    # the remainder is of third order in the amplitudes (the first neglected term of 2 Omega):
    # a wrong quadratic coefficient would leave a second-order remainder (ratio 4)
    assert diffs[1] / diffs[2] == pytest.approx(8.0, rel=0.2)
