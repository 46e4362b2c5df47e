"""Input validation shared by the whole library (one validator, not one per module)."""

from __future__ import annotations

import math

import numpy as np

from .errors import InputError, StateError

RTOL_RANGE = (1e-14, 1e-3)


def tolerance(name: str, value) -> float:
    """An integration tolerance in [1e-14, 1e-3]."""
    lo, hi = RTOL_RANGE
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name} = {value!r} is not a number; allowed range [{lo:g}, {hi:g}]") from None
    if not (math.isfinite(v) and lo <= v <= hi):
        raise InputError(f"{name} = {value!r} is outside the allowed range [{lo:g}, {hi:g}]")
    return v


def finite_time(name: str, value) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name} = {value!r} is not a number") from None
    if not math.isfinite(v):
        raise InputError(f"{name} = {value!r} must be finite")
    return v


def state(system, value, name: str = "state", allow_inside: bool = False) -> np.ndarray:
    """A finite 6-vector (nondimensional) not inside either primary's mean radius."""
    try:
        s = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise StateError(f"{name} {value!r} is not six numbers x,y,z,vx,vy,vz") from None
    if s.shape != (6,):
        raise StateError(f"{name} has shape {s.shape}; expected six numbers x,y,z,vx,vy,vz")
    if not np.isfinite(s).all():
        raise StateError(f"{name} {s.tolist()} has a non-finite entry")
    if not allow_inside:
        _outside(system, s[None, :], name)
    return s


def states(system, value, name: str = "states") -> np.ndarray:
    """A finite (N, 6) array of states outside both primaries."""
    try:
        s = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise StateError(f"{name} is not an (N, 6) array of numbers") from None
    if s.ndim != 2 or s.shape[1] != 6 or s.shape[0] == 0:
        raise StateError(f"{name} has shape {s.shape}; expected (N, 6) with N >= 1")
    bad = ~np.all(np.isfinite(s), axis=1)
    if bad.any():
        raise StateError(f"{name} row {int(np.argmax(bad))} has a non-finite entry")
    _outside(system, s, name)
    return np.ascontiguousarray(s)


def _outside(system, s, name):
    mu = system.mu
    r_1, r_2 = system.radii
    if s.shape[0] == 1:  # fast path for one state (called before every propagation)
        x, y, z = float(s[0, 0]), float(s[0, 1]), float(s[0, 2])
        d1 = math.sqrt((x + mu) ** 2 + y * y + z * z)
        d2 = math.sqrt((x - 1 + mu) ** 2 + y * y + z * z)
        if d1 > r_1 and d2 > r_2:
            return
    d1 = np.sqrt((s[:, 0] + mu) ** 2 + s[:, 1] ** 2 + s[:, 2] ** 2)
    d2 = np.sqrt((s[:, 0] - 1 + mu) ** 2 + s[:, 1] ** 2 + s[:, 2] ** 2)
    names = system.names
    for d, r, who in ((d1, r_1, names[0]), (d2, r_2, names[1])):
        inside = d <= max(r, 0.0) if r > 0 else d == 0.0
        if np.any(inside):
            i = int(np.argmax(inside))
            where = f" row {i}" if s.shape[0] > 1 else ""
            if r > 0 and system.dimensional:
                raise StateError(
                    f"{name}{where} lies inside {who}: {d[i] * system.length_km:.1f} km from its "
                    f"centre, radius {r * system.length_km:.1f} km")
            raise StateError(f"{name}{where} lies at the centre of {who}")
