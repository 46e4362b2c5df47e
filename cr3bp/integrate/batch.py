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
    """Which optional features the installed ``propagate_batch`` offers.

    Per-trajectory final times with STMs, a larger event record, marking failed trajectories
    instead of raising.

    Returns
    -------
    dict
        ``{"stm": bool, "max_events": bool, "on_failure": bool}``.

    Raises
    ------
    None

    References
    ----------
    .. [1] E. Hairer, S. P. Nørsett and G. Wanner, *Solving Ordinary Differential Equations I*,
       2nd ed., Springer, 1993 (the integrator behind the batch propagator).

    Examples
    --------
    >>> from cr3bp.integrate.batch import batch_features
    >>> sorted(batch_features())
    ['max_events', 'on_failure', 'stm']
    """
    params = inspect.signature(propagate_batch).parameters
    return {k: k in params for k in ("stm", "max_events", "on_failure")}


def batch(system, states, t_final, events=(), max_events=8):
    """``propagate_batch`` with the tube settings, using the optional features when present.

    Parameters
    ----------
    system : System
    states : array_like, shape (N, 6)
    t_final : float
        Signed time limit (TU).
    events : sequence of events
    max_events : int
        Events recorded per trajectory.

    Returns
    -------
    BatchResult
        As :func:`cr3bp.integrate.propagate_batch`.

    Raises
    ------
    InputError
        Bad states or time.

    References
    ----------
    .. [1] E. Hairer, S. P. Nørsett and G. Wanner, *Solving Ordinary Differential Equations I*,
       2nd ed., Springer, 1993 (DOP853 with dense output and event location).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.integrate.batch import batch
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry)
    >>> res = batch(em, [orbit.state], orbit.period)
    >>> bool(abs(res.states[0] - orbit.state).max() < 1e-9)
    True
    """
    kw = {}
    feats = batch_features()
    if feats["max_events"]:
        kw["max_events"] = int(max_events)
    if feats["on_failure"]:
        kw["on_failure"] = "mark"
    return propagate_batch(system, np.ascontiguousarray(states), t_final, rtol=BATCH_RTOL,
                           atol=BATCH_ATOL, events=events, **kw)
