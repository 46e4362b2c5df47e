"""Public propagation entry points.

PLACEHOLDER until the compiled Dormand-Prince 8(5,3) integrator lands: ``propagate`` calls
the scipy reference so that the rest of the library can be built against the interface.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .reference import propagate_scipy


@dataclass(frozen=True)
class BatchResult:
    """Final states and event records of a batch propagation.

    Attributes
    ----------
    t_final : ndarray (N,)      time each trajectory stopped
    states : ndarray (N, 6)     state there
    status : ndarray (N,) of str  "time", "event", "impact" or "escape"
    event_t, event_states, event_index : per-trajectory lists of recorded events
    """

    t_final: np.ndarray
    states: np.ndarray
    status: np.ndarray
    event_t: list
    event_states: list
    event_index: list


def propagate(system, state, t_final, stm=False, rtol=1e-12, atol=1e-12, events=(), t_eval=None):
    return propagate_scipy(system, state, t_final, stm=stm, rtol=rtol, atol=atol, events=events,
                           t_eval=t_eval)


def propagate_batch(system, states, t_final, rtol=1e-12, atol=1e-12, events=()):
    arcs = [propagate_scipy(system, s, t_final, rtol=rtol, atol=atol, events=events) for s in states]
    return BatchResult(np.array([a.t_final for a in arcs]), np.array([a.final_state for a in arcs]),
                       np.array([a.status for a in arcs]), [np.array([e.t for e in a.events]) for a in arcs],
                       [np.array([e.state for e in a.events]).reshape(-1, 6) for a in arcs],
                       [np.array([e.event for e in a.events], dtype=int) for a in arcs])
