"""Propagation: the compiled adaptive integrator, its events and its result type.

``propagate`` and ``propagate_batch`` are the entry points; ``propagate_scipy`` is the same
interface on scipy's ``solve_ivp`` for benchmarks and cross-checks.
"""

from .arc import Arc, EventHit
from .events import Event, escape, impact, plane
from .reference import propagate_scipy
from .propagate import propagate, propagate_batch, BatchResult

__all__ = ["Arc", "EventHit", "Event", "plane", "impact", "escape", "propagate",
           "propagate_batch", "BatchResult", "propagate_scipy"]
