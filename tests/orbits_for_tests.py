"""Orbits shared by the propagator tests, closed by the correction in :mod:`benchmarks.seeds`
(computed once per test session)."""

import functools
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from benchmarks.seeds import earth_moon_dro, earth_moon_l1_halo  # noqa: E402
from cr3bp import system  # noqa: E402


@functools.lru_cache(maxsize=None)
def em():
    return system("earth-moon")


@functools.lru_cache(maxsize=None)
def dro():
    """(state, period) of an Earth-Moon distant retrograde orbit (linearly stable)."""
    return earth_moon_dro(em())


@functools.lru_cache(maxsize=None)
def halo():
    """(state, period) of an Earth-Moon L1 halo orbit (unstable)."""
    return earth_moon_l1_halo(em())
