"""Small Lissajous tori at the Earth–Moon L1 and L2 against the linear frequencies.

Sources: the characteristic roots of the motion linearised at a collinear point,
``omega_p^2 = (2 - c2 + sqrt(9 c2^2 - 8 c2)) / 2`` (in plane) and ``omega_v^2 = c2`` (out of
plane), with ``c2 = (1 - mu)/r1^3 + mu/r2^3`` (Richardson, "Analytic construction of periodic
orbits about the collinear points", Celestial Mechanics 22, 1980, eqs. for lambda, omega_p,
omega_v; Szebehely, Theory of Orbits, 1967, §5.6). Amplitude corrections are second order
(Richardson 1980), so halving the amplitudes divides the difference by about four. The point is
found here with scipy's brentq on the x-gradient of the potential, not by the library.
"""

import functools
import math

import pytest
from scipy.optimize import brentq

from cr3bp import system
from cr3bp.orbits.request import parse_request, solve_request
from cr3bp.tori import torus_around


@functools.lru_cache(maxsize=None)
def em():
    return system("earth-moon")


def linear_frequencies(mu, point):
    def fx(x):
        return (x - (1 - mu) * (x + mu) / abs(x + mu) ** 3
                - mu * (x - 1 + mu) / abs(x - 1 + mu) ** 3)
    x = brentq(fx, 0.5, 1 - mu - 1e-6) if point == "L1" else brentq(fx, 1 - mu + 1e-6, 1.5)
    c2 = (1 - mu) / abs(x + mu) ** 3 + mu / abs(x - 1 + mu) ** 3
    wp = math.sqrt((2 - c2 + math.sqrt(9 * c2 * c2 - 8 * c2)) / 2)
    return wp, math.sqrt(c2)


@functools.lru_cache(maxsize=None)
def lissajous(point, ax_km, amp_km):
    o = solve_request(em(), parse_request(f"lyapunov {point} ax={ax_km}km"))
    return torus_around(o, amp_km / em().length_km, hold="period")


@pytest.mark.parametrize("point", ["L1", "L2"])
def test_small_lissajous_frequencies_tend_to_the_linear_ones(point):
    wp, wv = linear_frequencies(em().mu, point)
    big = lissajous(point, 2000.0, 400.0)
    small = lissajous(point, 1000.0, 200.0)
    assert big.family == small.family == "lissajous"
    d_big = [abs(big.frequencies_rad_tu[0] - wp), abs(big.frequencies_rad_tu[1] - wv)]
    d_small = [abs(small.frequencies_rad_tu[0] - wp), abs(small.frequencies_rad_tu[1] - wv)]
    for b, s in zip(d_big, d_small):
        assert b / s == pytest.approx(4.0, rel=0.25)   # second order in the amplitudes
    assert max(d_small) < 2e-3 * wp
    assert small.invariance_error < small.invariance_tolerance


@pytest.mark.parametrize("point", ["L1", "L2"])
def test_lissajous_from_the_linear_solution_tends_to_the_linear_frequencies(point):
    """The same check for tori grown from the linear solution at the point itself."""
    from cr3bp.tori import lissajous_near_point
    wp, wv = linear_frequencies(em().mu, point)
    lu = em().length_km
    big = lissajous_near_point(em(), point, 200.0 / lu, 200.0 / lu)
    small = lissajous_near_point(em(), point, 100.0 / lu, 100.0 / lu)
    for t in (big, small):
        assert t.invariance_error < t.invariance_tolerance
        assert t.extent_lu["z"][1] * lu == pytest.approx(200.0 if t is big else 100.0, rel=0.02)
    for k, w in enumerate((wp, wv)):
        b, s = abs(big.frequencies_rad_tu[k] - w), abs(small.frequencies_rad_tu[k] - w)
        assert b / s == pytest.approx(4.0, rel=0.25)   # second order in the amplitudes
        assert s < 1e-4 * w
