"""Lissajous tori by amplitudes from the smallest to observatory size: the walk along the
family (cr3bp.tori.lissajous, issue 16).

Sources: the linear frequencies at a collinear point, ``omega_p^2 = (2 - c2 + sqrt(9 c2^2 -
8 c2)) / 2`` and ``omega_v^2 = c2``, ``c2 = (1 - mu)/r1^3 + mu/r2^3`` (Richardson, "Analytic
construction of periodic orbits about the collinear points", Celestial Mechanics 22, 1980;
Szebehely, Theory of Orbits, 1967, §5.6), the point found with scipy's brentq; invariance
checked with scipy's DOP853 (Hairer, Nørsett & Wanner, Solving ODEs I, 1993).
"""

import functools
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from cr3bp import system
from cr3bp.tori.circle import evaluate
from cr3bp.tori.lissajous import lissajous


@functools.lru_cache(maxsize=None)
def sys_(name):
    return system(name)


@functools.lru_cache(maxsize=None)
def torus(name, point, ay_km, az_km):
    s = sys_(name)
    return lissajous(s, point, ay_km / s.length_km, az_km / s.length_km)


def linear_frequencies(mu, point):
    def fx(x):
        return (x - (1 - mu) * (x + mu) / abs(x + mu) ** 3
                - mu * (x - 1 + mu) / abs(x - 1 + mu) ** 3)
    x = brentq(fx, 0.5, 1 - mu - 1e-9) if point == "L1" else brentq(fx, 1 - mu + 1e-9, 1.5)
    c2 = (1 - mu) / abs(x + mu) ** 3 + mu / abs(x - 1 + mu) ** 3
    return math.sqrt((2 - c2 + math.sqrt(9 * c2 * c2 - 8 * c2)) / 2), math.sqrt(c2)


def scipy_miss(s, t, angles=(0.4, 2.5, 4.9)):
    mu, u, T, rho = s.mu, t.circle, t.stroboscopic_time, t.rotation

    def f(_, y):
        x, yy, z, vx, vy, vz = y
        r1 = math.sqrt((x + mu) ** 2 + yy * yy + z * z)
        r2 = math.sqrt((x - 1 + mu) ** 2 + yy * yy + z * z)
        k1, k2 = (1 - mu) / r1 ** 3, mu / r2 ** 3
        return [vx, vy, vz, x - k1 * (x + mu) - k2 * (x - 1 + mu) + 2 * vy,
                yy - k1 * yy - k2 * yy - 2 * vx, -k1 * z - k2 * z]
    worst = 0.0
    for th in angles:
        sol = solve_ivp(f, (0, T), evaluate(u, [th])[0], method="DOP853", rtol=1e-12, atol=1e-13)
        worst = max(worst, float(np.linalg.norm(sol.y[:, -1] - evaluate(u, [th + rho])[0])))
    return worst


@pytest.mark.parametrize("name, point, ay_km, az_km", [
    ("sun-earth", "L2", 30000.0, 15000.0),     # failed before: the first family step too coarse
    ("sun-earth", "L2", 5000.0, 2000.0),       # failed before: below the planar family's start
    ("earth-moon", "L2", 100.0, 100.0),        # failed before: below the planar family's start
    ("earth-moon", "L1", 2000.0, 2000.0),
    ("sun-earth", "L1", 200000.0, 100000.0),
])
def test_small_and_medium_targets_are_met_and_invariant_under_scipy(name, point, ay_km, az_km):
    s = sys_(name)
    t = torus(name, point, ay_km, az_km)
    assert s.km(t.extra["ay_lu"]) == pytest.approx(ay_km, rel=2e-5)
    assert s.km(t.extra["az_lu"]) == pytest.approx(az_km, rel=2e-5)
    assert t.invariance_error < t.invariance_tolerance
    # one stroboscopic time of scipy's DOP853 from three circle angles lands on the circle turned
    # by rho (nondimensional 6-vector; the Sun-Earth L1/L2 maps amplify errors ~10^3 per time)
    assert scipy_miss(s, t) < 1e-7


@pytest.mark.parametrize("name, point, small, big", [
    ("sun-earth", "L2", (5000.0, 2000.0), (10000.0, 4000.0)),
    ("earth-moon", "L2", (100.0, 100.0), (200.0, 200.0)),
])
def test_tiny_targets_have_the_linear_frequencies_to_second_order(name, point, small, big):
    # Richardson 1980: amplitude corrections of the frequencies are second order, so doubling
    # both amplitudes multiplies the difference from the linear frequencies by about four
    s = sys_(name)
    wp, wv = linear_frequencies(s.mu, point)
    ts, tb = torus(name, point, *small), torus(name, point, *big)
    for k, w in enumerate((wp, wv)):
        ds = abs(ts.frequencies_rad_tu[k] - w)
        db = abs(tb.frequencies_rad_tu[k] - w)
        assert ds < 1e-4 * w
        assert db / ds == pytest.approx(4.0, rel=0.25)


def test_issue_example_is_reached_in_few_torus_solves():
    # the walk with its quadratic predictor: the old continuation used 125 secant iterations
    # (each a torus solve) in 40 steps of 2.5 % for the same torus
    t = torus("sun-earth", "L2", 800000.0, 500000.0)
    assert t.extra["target_iterations"] <= 40
    assert t.invariance_error < t.invariance_tolerance


def test_unreachable_large_target_is_refused_in_one_line_with_the_range():
    from cr3bp.errors import NoSolutionError
    with pytest.raises(NoSolutionError) as e:
        torus("sun-earth", "L2", 1200000.0, 800000.0)
    msg = str(e.value)
    assert "\n" not in msg and "1,200,000 km" in msg and "reached Ay" in msg
