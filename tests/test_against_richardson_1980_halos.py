"""Seeds and small-amplitude limits against Richardson (1980) and Szebehely (1967).

References
----------
Richardson, D. L., "Analytic construction of periodic orbits about the collinear points",
Celestial Mechanics 22 (1980) 241-253: linear frequencies (eqs. (5)-(7)), third-order halo
solution and amplitude constraint ``l1 Ax^2 + l2 Az^2 + Delta = 0``.
Szebehely, V., *Theory of Orbits*, 1967, §4.5: linear motion at the collinear points; small
periodic orbits have the periods 2 pi / omega of the linear modes.
"""

import math

import numpy as np
import pytest

from cr3bp import system
from cr3bp.orbits import seeds, shooting
from cr3bp.orbits._collinear import collinear_point

import _orbit_cache as cache

EM = system("earth-moon")

# Earth-Moon linear frequencies (rad/TU): in-plane omega_p, out-of-plane omega_v, and the
# distance gamma (LU) of L1 and L2 from the Moon — widely tabulated, e.g. Koon, Lo, Marsden &
# Ross, Dynamical Systems, the Three-Body Problem and Space Mission Design, 2011 (from memory).
PUBLISHED_EM = {
    "L1": {"omega_p": 2.3344, "omega_v": 2.2689, "gamma": 0.15094},
    "L2": {"omega_p": 1.8626, "omega_v": 1.7862, "gamma": 0.16783},
}


@pytest.mark.parametrize("point", ["L1", "L2"])
def test_linear_frequencies_match_published(point):
    p = collinear_point(EM.mu, point)
    ref = PUBLISHED_EM[point]
    assert p.omega_p == pytest.approx(ref["omega_p"], abs=2e-4)
    assert p.omega_v == pytest.approx(ref["omega_v"], abs=2e-4)
    assert p.gamma == pytest.approx(ref["gamma"], abs=2e-5)


@pytest.mark.parametrize("point", ["L1", "L2", "L3"])
def test_small_lyapunov_period_tends_to_linear(point):
    """Szebehely 1967 §4.5 / Richardson 1980 eq. (7): T -> 2 pi / omega_p as Ax -> 0."""
    p = collinear_point(EM.mu, point)
    t_lin = 2 * math.pi / p.omega_p
    errs = []
    for ax in (4e-3 * p.gamma, 1e-3 * p.gamma, 2.5e-4 * p.gamma):
        sd = seeds.linear_lyapunov(EM.mu, point, ax)
        o = shooting.correct(EM, sd.state, sd.half_period, sd.symmetry, shooting.fix("x", sd.state[0]))
        assert o.periodicity_error < 1e-10
        errs.append(abs(o.period - t_lin))
    assert errs[0] > errs[1] > errs[2]
    # the period correction is second order in the amplitude: quartering Ax divides it by ~16
    assert errs[1] / errs[2] == pytest.approx(16, rel=0.2)
    assert errs[2] / t_lin < 1e-6


@pytest.mark.parametrize("point", ["L1", "L2"])
def test_small_vertical_period_tends_to_linear(point):
    p = collinear_point(EM.mu, point)
    t_lin = 2 * math.pi / p.omega_v
    errs = []
    for az in (8e-3 * p.gamma, 2e-3 * p.gamma):
        sd = seeds.linear_vertical(EM.mu, point, az)
        tau = shooting.locate_half_period(EM, sd.state, "z", direction=-1)
        o = shooting.correct(EM, sd.state, tau, "x-axis", shooting.fix("vz", sd.state[5]))
        errs.append(abs(o.period - t_lin))
    assert errs[0] / errs[1] == pytest.approx(16, rel=0.2)
    assert errs[1] / t_lin < 1e-5


@pytest.mark.parametrize("point,branch", [("L1", "north"), ("L1", "south"), ("L2", "north"), ("L2", "south")])
def test_richardson_halo_converges_and_stays_close(point, branch):
    """The third-order seed corrects (z held) into a halo of the same Az; the seed's period
    and initial state stay close to the corrected ones for small Az."""
    for az_km in (2000.0, 6000.0, 12000.0):
        sd = seeds.richardson_halo(EM.mu, point, az_km / EM.length_km, branch)
        o = shooting.correct(EM, sd.state, sd.half_period, sd.symmetry, shooting.fix("z", sd.state[2]))
        assert o.periodicity_error < 1e-10
        # same Az: max |z| of the corrected orbit equals the seed's (both at the held crossing)
        assert o.amplitude_lu[2] == pytest.approx(abs(sd.state[2]), rel=1e-9)
        assert (o.state[2] > 0) == (branch == "north")
        assert abs(o.period - 2 * sd.half_period) / o.period < 2e-3
        # initial position within 2% of the orbit's y size, velocity within 2%
        assert abs(o.state[0] - sd.state[0]) < 0.02 * o.amplitude_lu[1]
        assert abs(o.state[4] - sd.state[4]) < 0.02 * abs(o.state[4])


@pytest.mark.parametrize("point", ["L1", "L2"])
def test_richardson_minimum_ax_matches_located_bifurcation(point):
    """Richardson's amplitude constraint with Az = 0 gives the smallest halo, Ax_min =
    sqrt(-Delta/l1): it must agree with the halo bifurcation located on the computed Lyapunov
    family (third-order theory, so a few per cent)."""
    c = seeds.richardson_coefficients(EM.mu, point)
    p = collinear_point(EM.mu, point)
    ax_min = math.sqrt(-c.delta / c.l1) * p.gamma
    fam = cache.lyapunov(point)
    bif = [b for b in fam.bifurcations if b.kind == "+1" and b.which == 1]
    assert bif, fam.stop_reason
    assert bif[0].orbit.amplitude_lu[0] == pytest.approx(ax_min, rel=0.03)
