"""Chebyshev interpolants against the functions they fit (numpy's own Chebyshev module as the
outside reference for the series, and analytic derivatives for the velocity)."""

import numpy as np
import pytest
from numpy.polynomial import chebyshev as npcheb

from cr3bp.errors import InputError
from cr3bp.fidelity.chebyshev import fit


def circle(times):
    w = 2 * np.pi / 27.3
    return np.stack([np.stack([384400 * np.cos(w * times), 384400 * np.sin(w * times), 3e4 * np.sin(2 * w * times)], -1),
                     np.stack([1e8 * np.cos(times / 58.1), 1e8 * np.sin(times / 58.1), 0 * times], -1)])


def test_fit_reproduces_positions_and_velocities():
    f = fit(circle, 0.0, 60.0, n_segments=12, degree=14, n_bodies=2)
    t = np.linspace(0.0, 60.0, 997)
    want = circle(t)
    w = 2 * np.pi / 27.3
    vel = np.stack([-384400 * w * np.sin(w * t), 384400 * w * np.cos(w * t), 3e4 * 2 * w * np.cos(2 * w * t)], -1)
    got = f.state(0, t)
    assert np.max(np.abs(got[:, :3] - want[0])) < 1e-6          # km: a millimetre
    assert np.max(np.abs(got[:, 3:] - vel)) < 1e-7              # km/day
    assert np.max(np.abs(f.position(1, t) - want[1])) < 1e-4


def test_series_matches_numpy_chebyshev():
    f = fit(circle, 0.0, 5.0, n_segments=1, degree=10, n_bodies=2)
    u = np.linspace(-1, 1, 11)
    t = 2.5 * (u + 1)
    assert np.allclose(f.position(0, t)[:, 0], npcheb.chebval(u, f.coef[0, 0, 0]), rtol=0, atol=1e-8)


def test_bad_spans():
    with pytest.raises(InputError):
        fit(circle, 1.0, 0.0, 4, 10, 2)
    with pytest.raises(InputError):
        fit(circle, 0.0, 1.0, 0, 10, 2)
