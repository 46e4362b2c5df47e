"""Path and timing offsets against a reference path (cr3bp.fidelity.offsets), checked on
geometry with exact answers: a trajectory on a circle of radius R + d that runs a fixed time
late against a circle of radius R is d from the path everywhere (elementary geometry: the
nearest point of a circle lies on the radius through the point) and late by that time."""

import numpy as np
import pytest

from cr3bp.fidelity.offsets import path_and_timing_offsets

ONE_M_KM = 1e-3
ONE_S = 1.0


def _circle(radius_km, period_s, t):
    w = 2 * np.pi / period_s
    pos = np.column_stack([radius_km * np.cos(w * t), radius_km * np.sin(w * t), 0.0 * t])
    vel = np.column_stack([-radius_km * w * np.sin(w * t), radius_km * w * np.cos(w * t), 0.0 * t])
    return pos, vel


@pytest.mark.parametrize("late_s", [-300.0, 0.0, 37.0, 1000.0])
def test_circle_offset_and_lateness_are_exact(late_s):
    period = 86400.0                                   # a one-day circle of 10 000 km
    rt = np.arange(0.0, 3 * period + 1, 600.0)         # reference every 10 min (2.5 deg)
    rp, rv = _circle(10000.0, period, rt)
    t = np.linspace(0.3 * period, 2.7 * period, 5001)
    w = 2 * np.pi / period
    q = np.column_stack([10002.5 * np.cos(w * (t - late_s)), 10002.5 * np.sin(w * (t - late_s)), 0.0 * t])
    path, timing = path_and_timing_offsets(t, q, rt, rp, rv, window_s=0.5 * period)
    assert np.abs(path - 2.5).max() < ONE_M_KM                 # 2.5 km off the path, everywhere
    assert np.abs(timing - late_s).max() < ONE_S               # and late by exactly that
    # the separation at equal epochs mixes both: for 1000 s late it is ~730 km, not 2.5 km
    sep = np.linalg.norm(q - _circle(10000.0, period, t)[0], axis=1)
    assert sep.max() >= path.max() - ONE_M_KM


def test_nearest_sample_alone_would_overstate_the_offset():
    """With coarse reference sampling the nearest sample is far from the nearest point; the
    interpolated search is not (the reason for the local refinement)."""
    period = 86400.0
    rt = np.arange(0.0, period + 1, 3600.0)            # hourly: 15 deg apart
    rp, rv = _circle(10000.0, period, rt)
    t = np.array([1800.0])                             # half-way between two samples, on the path
    q, _ = _circle(10000.0, period, t)
    path, timing = path_and_timing_offsets(t, q, rt, rp, rv)
    assert np.linalg.norm(rp - q, axis=1).min() > 1000.0
    assert path[0] < 0.2 and abs(timing[0]) < 5.0          # Hermite error over 15 deg: ~0.1 km
