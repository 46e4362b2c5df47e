"""The batch propagation of the tubes: :func:`~cr3bp.integrate.propagate_batch` with the
settings that manifolds (:mod:`cr3bp.tubes.manifolds`) and section crossings
(:mod:`cr3bp.tubes.sections`) share, so that neither module reaches into the other for it.
"""

from __future__ import annotations

import inspect

import numpy as np

from .propagate import propagate_batch

__all__ = ["BATCH_RTOL", "BATCH_ATOL", "batch_features", "batch"]

#: Tolerances of the tube propagations (manifolds and section crossings in one batch).
BATCH_RTOL = 1e-12
BATCH_ATOL = 1e-12


def batch_features() -> dict:
    """Which optional features the installed ``propagate_batch`` offers (per-trajectory final
    times with STMs, a larger event record, marking failed trajectories instead of raising)."""
    params = inspect.signature(propagate_batch).parameters
    return {k: k in params for k in ("stm", "max_events", "on_failure")}


def batch(system, states, t_final, events=(), max_events=8):
    """``propagate_batch`` with the tube settings, using the optional features when present."""
    kw = {}
    feats = batch_features()
    if feats["max_events"]:
        kw["max_events"] = int(max_events)
    if feats["on_failure"]:
        kw["on_failure"] = "mark"
    return propagate_batch(system, np.ascontiguousarray(states), t_final, rtol=BATCH_RTOL,
                           atol=BATCH_ATOL, events=events, **kw)
