"""Jacobi helpers, necks and Hill regions: behaviour, edges, and an independent
connectivity check of the allowed region (scipy.ndimage.label on the grid)."""

import math

import numpy as np
import pytest
from scipy import ndimage

from cr3bp import dynamics, system
from cr3bp.energy import (check_jacobi, hill_region, jacobi, jacobi_above, necks, realms,
                          speed_at_point, two_omega)
from cr3bp.equilibria import jacobi_constants, lagrange_point
from cr3bp.errors import InputError

EM = system("earth-moon")
LEVELS = jacobi_constants(EM)


def test_jacobi_wraps_dynamics():
    s = np.array([0.8, 0.1, 0.02, 0.01, -0.2, 0.03])
    assert jacobi(EM, s) == dynamics.jacobi(EM.mu, s)
    assert jacobi(EM, np.vstack([s, s])).shape == (2,)


def test_jacobi_above_is_level_minus_dv_squared():
    dv = 20.0 / (EM.velocity_kms * 1000.0)  # 20 m/s in LU/TU
    assert jacobi_above(EM, "L1", "20m/s") == pytest.approx(LEVELS["L1"] - dv * dv, abs=1e-15)
    assert jacobi_above(EM, "l2", 0.0) == LEVELS["L2"]
    # a state at L1 moving at dv has that Jacobi constant
    state = lagrange_point(EM, "L1").state + np.array([0, 0, 0, 0, dv, 0])
    assert dynamics.jacobi(EM.mu, state) == pytest.approx(jacobi_above(EM, "L1", "20 m/s"), abs=1e-14)
    assert speed_at_point(EM, "L1", jacobi_above(EM, "L1", "20m/s")) == pytest.approx(dv, rel=1e-9)
    assert speed_at_point(EM, "L2", LEVELS["L2"] + 1e-3) is None


@pytest.mark.parametrize("bad", ["-1m/s", "nanm/s", "1e999m/s", "3km", "fast", -0.1, float("nan"),
                                 float("inf"), None])
def test_jacobi_above_rejects(bad):
    with pytest.raises(InputError):
        jacobi_above(EM, "L1", bad)


@pytest.mark.parametrize("bad", ["L0", "L6", "", "moon", None])
def test_unknown_point(bad):
    with pytest.raises(InputError, match="Lagrange point"):
        jacobi_above(EM, bad, 0.0)


@pytest.mark.parametrize("bad", [float("nan"), float("inf"), "x", None, "-inf"])
def test_jacobi_must_be_finite(bad):
    with pytest.raises(InputError):
        check_jacobi(bad)
    with pytest.raises(InputError):
        hill_region(EM, bad)


@pytest.mark.parametrize("name", ["L1", "L2", "L3"])
@pytest.mark.parametrize("sysname", ["earth-moon", "sun-earth", "pluto-charon"])
def test_necks_open_exactly_below_level(name, sysname):
    s = system(sysname)
    c = jacobi_constants(s)[name]
    eps = 1e-9
    assert necks(s, c - eps)[name] is True
    assert necks(s, c + eps)[name] is False
    assert necks(s, c)[name] is False  # at the level the neck is pinched shut


def test_realm_texts_follow_the_cases():
    assert "all necks closed" in realms(EM, LEVELS["L1"] + 0.01)
    t = realms(EM, 0.5 * (LEVELS["L1"] + LEVELS["L2"]))
    assert "L1 neck" in t and "L2 neck" not in t
    t = realms(EM, 0.5 * (LEVELS["L2"] + LEVELS["L3"]))
    assert "L1 neck" in t and "L2 neck" in t and "L3 neck" not in t
    t = realms(EM, 0.5 * (LEVELS["L3"] + LEVELS["L4"]))
    assert "L3 neck" in t and "L4 and L5" in t
    assert "no forbidden region" in realms(EM, LEVELS["L4"] - 0.01)


@pytest.mark.parametrize("plane", ["xy", "xz"])
@pytest.mark.parametrize("c", [3.25, 3.18, 3.1, 3.0])
def test_zvc_points_satisfy_2omega_equals_c(plane, c):
    h = hill_region(EM, c, plane=plane, resolution=301)
    assert h.curves, "expected at least one curve"
    pts = np.vstack(h.curves)
    states = np.zeros((len(pts), 6))
    states[:, 0] = pts[:, 0]
    states[:, 1 if plane == "xy" else 2] = pts[:, 1]
    # dynamics.jacobi (a compiled kernel) at rest on the curve: 2 Omega = C
    assert np.max(np.abs(dynamics.jacobi(EM.mu, states) - c)) < 1e-10
    assert h.curve_residual < 1e-10


def test_grid_field_is_2omega_minus_c():
    h = hill_region(EM, 3.1, resolution=51)
    i, j = 7, 33
    x, y = h.u[j], h.v[i]
    assert h.field[i, j] == pytest.approx(2 * dynamics.omega(EM.mu, x, y, 0.0) - 3.1, rel=1e-13)
    assert two_omega(EM, x, y) == pytest.approx(2 * dynamics.omega(EM.mu, x, y, 0.0), rel=1e-14)


def _label_at(h, x, y):
    lab, _ = ndimage.label(h.allowed)
    j = int(np.argmin(np.abs(h.u - x)))
    i = int(np.argmin(np.abs(h.v - y)))
    return lab[i, j]


@pytest.mark.parametrize("delta", [-2e-3, 2e-3])
def test_l1_neck_connects_earth_and_moon_on_the_grid(delta):
    c = LEVELS["L1"] + delta
    h = hill_region(EM, c, extent=(-0.3, 1.3, -0.4, 0.4), resolution=1201)
    earth_side = _label_at(h, 0.1, 0.0)      # allowed, near the Earth
    moon_side = _label_at(h, 1.0 - EM.mu + 0.02, 0.0)
    assert earth_side and moon_side
    assert (earth_side == moon_side) == (delta < 0) == h.necks["L1"]


@pytest.mark.parametrize("delta", [-2e-3, 2e-3])
def test_l2_neck_connects_moon_and_exterior_on_the_grid(delta):
    c = LEVELS["L2"] + delta
    h = hill_region(EM, c, extent=(0.7, 1.5, -0.4, 0.4), resolution=1001)
    moon_side = _label_at(h, 1.0 - EM.mu + 0.02, 0.0)
    exterior = _label_at(h, 1.45, 0.0)
    assert moon_side and exterior
    assert (moon_side == exterior) == (delta < 0) == h.necks["L2"]


def test_below_l4_nothing_forbidden_in_plane():
    h = hill_region(EM, LEVELS["L4"] - 1e-3, resolution=201)
    assert h.forbidden_region_vanishes and h.allowed.all() and not h.curves


def test_views_and_bad_arguments():
    h = hill_region(EM, 3.18, view="secondary", resolution=101)
    assert h.extent[0] < lagrange_point(EM, "L1").position[0] < lagrange_point(EM, "L2").position[0] < h.extent[1]
    for kw in ({"plane": "yz"}, {"view": "far"}, {"extent": (1, 0, 0, 1)}, {"extent": (0, 1, 0)},
               {"extent": (0, 1, 0, math.nan)}, {"resolution": 5}, {"resolution": 2.5}):
        with pytest.raises(InputError):
            hill_region(EM, 3.18, **kw)


def test_to_dict_keys():
    d = hill_region(EM, 3.17, resolution=101).to_dict()
    assert d["necks_open"] == {"L1": True, "L2": True, "L3": False}
    for k in ("system", "mu", "jacobi", "plane", "realms", "levels", "extent_lu", "curve_count",
              "curve_residual", "allowed_fraction"):
        assert k in d
