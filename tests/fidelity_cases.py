"""Orbits and transitions shared by the ephemeris-model tests (computed once per session)."""

import functools
import warnings

import numpy as np

from cr3bp import system

EPOCH = "2031-03-01T00:00:00Z"   # an epoch of our choosing


@functools.lru_cache(maxsize=None)
def nrho():
    """The Earth-Moon L2 southern halo in 9:2 synodic resonance (the NRHO), by orbit request."""
    from cr3bp.orbits.request import solve_request
    return solve_request(system("earth-moon"), "halo L2 south resonance=9:2")


@functools.lru_cache(maxsize=None)
def sel1_halo():
    from cr3bp.orbits.request import solve_request
    return solve_request(system("sun-earth"), "halo L1 north az=200000km")


@functools.lru_cache(maxsize=None)
def nrho_transition(revs=12):
    from cr3bp.fidelity.transition import transition
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")   # leap-second table ends before 2031 (tested elsewhere)
        return transition(nrho(), EPOCH, revs, "sun,earth")


@functools.lru_cache(maxsize=None)
def sel1_transition(revs=4):
    from cr3bp.fidelity.transition import transition
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return transition(sel1_halo(), EPOCH, revs, "sun,moon")


def epoch_tdb_s(text=EPOCH):
    from cr3bp.time import frames
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return frames.epoch_from_text(text)


def as_array(x):
    return np.asarray(x, dtype=float)
