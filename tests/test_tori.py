"""Invariance circles: the Fourier operators, the seeds, the refusals."""

import math

import numpy as np
import pytest

from cr3bp import system
from cr3bp.errors import InputError, NoSolutionError
from cr3bp.orbits.orbit import PeriodicOrbit
from cr3bp.tori import circle, seeds, torus_around


def trig(theta):
    return np.stack([np.cos(theta) + 0.3 * np.sin(3 * theta), 0.2 * np.sin(2 * theta) - 1.0], axis=1)


def test_rotation_turns_a_trigonometric_polynomial_exactly():
    n = 15
    th = circle.angles(n)
    q, dq = circle.rotation(n, 0.7)
    assert np.allclose(q @ trig(th), trig(th - 0.7), atol=1e-13)
    h = 1e-6
    fd = (circle.rotation(n, 0.7 + h)[0] - circle.rotation(n, 0.7 - h)[0]) / (2 * h)
    assert np.allclose(dq, fd, atol=1e-8)


def test_derivative_evaluate_resample_and_tail():
    th = circle.angles(11)
    u = trig(th)
    d = np.stack([-np.sin(th) + 0.9 * np.cos(3 * th), 0.4 * np.cos(2 * th)], axis=1)
    assert np.allclose(circle.derivative(u), d, atol=1e-12)
    assert np.allclose(circle.evaluate(u, [0.123]), trig(np.array([0.123])), atol=1e-13)
    assert np.allclose(circle.resample(u, 23), trig(circle.angles(23)), atol=1e-13)
    assert circle.tail(u) < 1e-14
    rough = np.abs(np.sin(th))[:, None]          # a kink: slowly decaying coefficients
    assert circle.tail(rough) > 1e-3


def test_seed_circle_is_turned_by_the_monodromy_angle():
    a = 0.4
    M = np.eye(6)
    M[2:4, 2:4] = [[math.cos(a), -math.sin(a)], [math.sin(a), math.cos(a)]]
    (alpha, v), = seeds.centre_pairs(M)
    assert alpha == pytest.approx(a)
    u = seeds.circle_from_pair(np.zeros(6), v, 1e-3, 15)
    th = circle.angles(15)
    q, _ = circle.rotation(15, alpha)
    assert np.allclose(q @ (u @ M.T), u, atol=1e-15)


def _orbit(monodromy):
    em = system("earth-moon")
    return PeriodicOrbit(system=em, state=np.array([1.1, 0, 0.01, 0, 0.2, 0]), period=3.0,
                         monodromy=monodromy, family="halo", point="L2", branch="south", jacobi=3.1)


def test_no_centre_pair_is_refused():
    M = np.diag([50.0, 0.02, 1.0, 1.0, 30.0, 1 / 30.0])
    with pytest.raises(NoSolutionError, match="no centre eigenpair"):
        torus_around(_orbit(M), 1e-3)


@pytest.mark.parametrize("amp, hold", [(-1e-3, "jacobi"), (float("nan"), "jacobi"), (1e-3, "mass")])
def test_bad_amplitude_or_hold(amp, hold):
    with pytest.raises(InputError):
        torus_around(_orbit(np.eye(6)), amp, hold=hold)


def test_family_refuses_bad_settings():
    from cr3bp.tori.family import continue_family
    from cr3bp.tori.torus import Torus
    t = Torus(system=system("earth-moon"), circle=np.zeros((15, 6)), stroboscopic_time=1.0,
              rotation=0.1, jacobi=3.0, jacobi_spread=0.0, invariance_error=0.0)
    with pytest.raises(InputError, match="hold"):
        continue_family(t, "mass")
    with pytest.raises(InputError, match="members"):
        continue_family(t, "jacobi", members=0)
    with pytest.raises(InputError, match="direction"):
        continue_family(t, "jacobi", direction=2)


@pytest.mark.parametrize("point, ax, az", [("L4", 1e-3, 1e-3), ("L1", -1e-3, 1e-3), ("L2", 1e-3, 0.0)])
def test_linear_lissajous_refuses_bad_input(point, ax, az):
    from cr3bp.tori import lissajous_near_point
    with pytest.raises(InputError):
        lissajous_near_point(system("earth-moon"), point, ax, az)
