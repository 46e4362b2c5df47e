"""The result of a propagation."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np


@dataclass(frozen=True)
class EventHit:
    """One located event: which spec (index into the ``events`` given), its name, time and state.

    Parameters
    ----------
    event : int
        Index into the ``events`` given to the propagator.
    name : str
        The event's name (:attr:`cr3bp.integrate.events.Event.name`).
    t : float
        Time of the event, TU.
    state : ndarray (6,)
        State at the event, LU and LU/TU.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.systems import system
    >>> from cr3bp.integrate import plane, propagate
    >>> arc = propagate(system("earth-moon"), [0.8, 0, 0, 0, 0.3, 0], 5.0, events=[plane("y", 0.0, -1, terminal=True)])
    >>> hit = arc.events[0]
    >>> hit.event, hit.name, abs(float(hit.state[1])) < 1e-12
    (0, 'y=0', True)

    References
    ----------
    .. [1] E. Hairer, S. P. Norsett and G. Wanner, *Solving Ordinary Differential Equations I*,
       2nd ed., Springer, 1993, §II.6 (dense output and event location; from memory).
    """

    event: int
    name: str
    t: float
    state: np.ndarray

    def to_dict(self) -> dict:
        return {"event": self.event, "name": self.name, "t": self.t, "state": self.state.tolist()}


@dataclass(frozen=True)
class Arc:
    """A propagated trajectory.

    Parameters
    ----------
    system, t, states, stm, status, events, nfev, nsteps, t_end, state_end
        The attributes below (built by the propagators, not by hand).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.integrate import propagate
    >>> arc = propagate(system("earth-moon"), [0.8, 0, 0, 0, 0.3, 0], 1.0)
    >>> arc.status, arc.t_final, arc.states.shape[1]
    ('time', 1.0, 6)

    References
    ----------
    .. [1] Common practice: a propagation result with times, states, the state transition
       matrix, the events met and the integrator's counts.

    Attributes
    ----------
    system : System
    t : ndarray (n,)
        Output times: every accepted step, or the requested ``t_eval`` reached.
    states : ndarray (n, 6)
    stm : ndarray (6, 6) or None
        State transition matrix from the initial to the final time, when asked for.
    status : str
        How it ended: ``"time"`` (reached ``t_final``), ``"event"`` (a terminal plane
        crossing), ``"impact"`` or ``"escape"``.
    events : tuple of EventHit
        Every recorded event, in time order.
    nfev, nsteps : int
        Right-hand-side evaluations and accepted steps.
    t_end, state_end : float, ndarray (6,)
        Where the integration stopped (``t_final``/``final_state`` return them). They differ
        from ``t[-1]``/``states[-1]`` only when ``t_eval`` did not include the end point.
    """

    system: object
    t: np.ndarray
    states: np.ndarray
    stm: np.ndarray | None
    status: str
    events: tuple = field(default_factory=tuple)
    nfev: int = 0
    nsteps: int = 0
    t_end: float | None = None
    state_end: np.ndarray | None = None

    @property
    def t_final(self) -> float:
        """Time at which the integration stopped (``t_final`` reached, or the stopping event)."""
        return float(self.t[-1]) if self.t_end is None else float(self.t_end)

    @property
    def final_state(self) -> np.ndarray:
        """State at :attr:`t_final`."""
        return self.states[-1] if self.state_end is None else self.state_end

    def events_named(self, name: str) -> list[EventHit]:
        return [e for e in self.events if e.name == name]

    def to_dict(self) -> dict:
        return {
            "system": self.system.name,
            "status": self.status,
            "t_final": self.t_final,
            "final_state": self.final_state.tolist(),
            "stm": None if self.stm is None else self.stm.tolist(),
            "events": [e.to_dict() for e in self.events],
            "nfev": self.nfev,
            "nsteps": self.nsteps,
            "points": int(len(self.t)),
        }
