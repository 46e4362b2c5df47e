"""Tubes: energy conservation along every trajectory, growth by the monodromy eigenvalue,
branches, stop conditions, the Lagrange points' one-dimensional manifolds, bad input."""

import math

import numpy as np
import pytest

from cr3bp import propagate, system
from cr3bp.dynamics import jacobi
from cr3bp.errors import InputError, NoSolutionError
from cr3bp.tubes.manifolds import (default_step_km, grow_tube, hyperbolic_modes, manifold_starts, parse_until,
    point_tube)

from _orbit_fixtures import collinear_x, lyapunov, point_jacobi

EM = system("earth-moon")


@pytest.fixture(scope="module")
def l1():
    return lyapunov(EM, "L1", 3.15)


def test_jacobi_constant_along_every_tube_trajectory(l1):
    tube = grow_tube(l1, "unstable", "interior", 12, "section:x=1-mu")
    assert tube.jacobi == pytest.approx(3.15, abs=1e-12)
    for t, states in tube.trajectories(n_samples=150):
        assert np.max(np.abs(jacobi(EM.mu, states) - l1.jacobi)) < 1e-10
    assert np.max(np.abs(jacobi(EM.mu, tube.end_states) - l1.jacobi)) < 1e-10


@pytest.mark.parametrize("stability", ["unstable", "stable"])
def test_separation_scales_by_the_monodromy_eigenvalue_per_period(l1, stability):
    # A displacement d along the unstable direction grows by lambda_u over one period
    # forward in time; along the stable direction it shrinks by lambda_u forward, i.e. grows
    # by lambda_u backward (Koon et al. 2011, §4.5; lambda_s = 1/lambda_u, symplecticity).
    lam = float(np.max(np.abs(np.linalg.eigvals(l1.monodromy))))
    d_lu = 1e-9
    times = np.array([0.0, 0.37 * l1.period])
    ts, orbit_states, w, starts, modes, d, _ = manifold_starts(
        l1, stability, "interior", step_km=f"{d_lu}LU", times=times)
    assert modes.lambda_unstable == pytest.approx(lam, rel=1e-9)
    sign = 1.0 if stability == "unstable" else -1.0
    for k in range(2):
        end = propagate(EM, starts[k], sign * l1.period, rtol=1e-13, atol=1e-14).final_state
        growth = np.linalg.norm(end - orbit_states[k]) / np.linalg.norm(starts[k] - orbit_states[k])
        assert growth == pytest.approx(lam, rel=2e-3)


def test_branches_step_toward_and_away_from_the_moon(l1):
    xm = 1 - EM.mu
    _, ostates, w, starts, *_ = manifold_starts(l1, "unstable", "interior", 8)
    assert np.dot(starts[0, :3] - ostates[0, :3], [xm - ostates[0, 0], -ostates[0, 1], 0]) > 0
    _, _, w2, starts2, *_ = manifold_starts(l1, "unstable", "exterior", 8)
    np.testing.assert_allclose(w2, -w, atol=1e-12)
    # the interior branch reaches the Moon's meridian, the exterior one heads for the Earth
    ti = grow_tube(l1, "unstable", "interior", 8, ["section:x=1-mu", "time:3TU"])
    te = grow_tube(l1, "unstable", "exterior", 8, ["section:x=0.7", "time:5TU"])
    assert all(s in ("section", "impact") for s in ti.status)
    assert all(s == "section" for s in te.status)
    assert np.all(te.end_states[:, 3] < 0)


def test_step_off_defaults_and_shown():
    assert default_step_km(EM) == 40.0
    assert default_step_km(system("sun-earth")) == 200.0
    # other systems: 3e-4 of the Hill radius (our own rule)
    sj = system("sun-jupiter")
    assert default_step_km(sj) == pytest.approx(3e-4 * (sj.mu / 3) ** (1 / 3) * sj.length_km)


def test_tube_record(l1):
    tube = grow_tube(l1, "stable", "interior", 6, "time:1d")
    assert tube.step_km == 40.0
    assert all(s == "time" for s in tube.status)
    np.testing.assert_allclose(tube.tof, -EM.time_s ** -1 * 86400.0 * np.ones(6) / 1.0, rtol=1e-12)
    d = tube.to_dict()
    assert d["n_trajectories"] == 6 and d["step_km"] == 40.0 and d["stability"] == "stable"
    assert len(d["trajectories"]) == 6 and d["trajectories"][0]["tof_days"] == pytest.approx(1.0)
    assert np.allclose(tube.phase, np.arange(6) / 6)


def test_equal_arc_length_spacing(l1):
    tube = grow_tube(l1, "unstable", "interior", 40, "time:0.01TU", spacing="arc")
    p = tube.orbit_states[:, :3]
    chords = np.linalg.norm(np.diff(np.vstack([p, p[:1]]), axis=0), axis=1)
    # chords fall short of the arcs where the orbit turns sharply: a few per cent
    assert np.ptp(chords) / chords.mean() < 0.06
    by_time = grow_tube(l1, "unstable", "interior", 40, "time:0.01TU").orbit_states[:, :3]
    chords_t = np.linalg.norm(np.diff(np.vstack([by_time, by_time[:1]]), axis=0), axis=1)
    assert np.ptp(chords_t) / chords_t.mean() > 0.5


def test_altitude_stop_on_descent_to_the_moon(l1):
    tube = grow_tube(l1, "unstable", "interior", 24, ["altitude:moon:500km", "time:3TU"])
    hit = tube.reached("altitude")
    assert hit.any()
    r = np.linalg.norm(tube.end_states[hit, :3] - [1 - EM.mu, 0, 0], axis=1) * EM.length_km
    np.testing.assert_allclose(r, 1737.4 + 500.0, atol=1e-6)


def test_lagrange_point_manifold():
    x1 = collinear_x(EM.mu, "L1")
    tube = point_tube(EM, "L1", "unstable", "interior", "time:1TU", position=[x1, 0, 0])
    assert tube.jacobi == pytest.approx(point_jacobi(EM.mu, "L1"), abs=1e-12)
    lam = tube.eigenvalue
    # the linearised flow at L1 has real eigenvalues +/- 2.93 for Earth-Moon (from memory;
    # Koon et al. 2011, §2.5 give the formula), checked here against the formula
    c2 = (1 - EM.mu) / abs(x1 + EM.mu) ** 3 + EM.mu / abs(x1 - 1 + EM.mu) ** 3
    assert lam == pytest.approx(math.sqrt((c2 - 2 + math.sqrt(9 * c2**2 - 8 * c2)) / 2), rel=1e-10)
    # the displacement grows as exp(lambda t) while small
    t = 1.5
    end = propagate(EM, tube.start_states[0], t, rtol=1e-13, atol=1e-14).final_state
    assert np.linalg.norm(end[:3] - [x1, 0, 0]) / tube.step == pytest.approx(math.exp(lam * t), rel=0.02)
    assert end[0] > x1  # interior: toward the Moon
    assert abs(jacobi(EM.mu, end) - tube.jacobi) < 1e-10


def test_stable_orbit_has_no_manifold():
    with pytest.raises(NoSolutionError):
        hyperbolic_modes(np.eye(6))


@pytest.mark.parametrize("text", ["section:q=1", "time:-3d", "altitude:venus:200km", "sideways",
                                  "time:3kg", "section:x=1-mu#two"])
def test_bad_stop_conditions(text):
    with pytest.raises(InputError):
        parse_until(text, EM)


def test_bad_tube_input(l1):
    with pytest.raises(InputError):
        grow_tube(l1, "unstable", "sideways", 10)
    with pytest.raises(InputError):
        grow_tube(l1, "neutral", "interior", 10)
    with pytest.raises(InputError):
        grow_tube(l1, "stable", "interior", 2)


def test_lagrange_point_manifold_from_equilibria():
    # the point located by cr3bp.equilibria gives the same branch as the fixture's position
    x1 = collinear_x(EM.mu, "L1")
    a = point_tube(EM, "L1", "stable", "exterior", "time:1TU")
    b = point_tube(EM, "L1", "stable", "exterior", "time:1TU", position=[x1, 0, 0])
    np.testing.assert_allclose(a.start_states, b.start_states, atol=1e-12)
    assert a.start_states[0, 0] < x1 and a.tof[0] == pytest.approx(-1.0)
