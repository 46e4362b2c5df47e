"""Event specifications for the propagators.

An event is a scalar function g(t, s) whose sign change the integrator locates to full
precision using its dense output. Each spec compiles to one row of a float table read by
the compiled integrator::

    [kind, index, value, direction, terminal, max_count]

========  =================================  ==========================================
kind      g(t, s)                            meaning
========  =================================  ==========================================
PLANE     s[index] - value                   crossing of a coordinate plane
IMPACT    |r - r_primary(index)| - value     distance to a primary falls below a radius
ESCAPE    |r - centre(index)| - value        distance above a bound (index -1: barycentre)
========  =================================  ==========================================

``direction`` +1 counts only increasing g, -1 only decreasing, 0 both. A terminal event
stops the propagation at its ``max_count``-th occurrence; a non-terminal one is recorded
every time. IMPACT and ESCAPE are always terminal. The time limit is ``t_final`` itself.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import validate
from ..errors import InputError

PLANE, IMPACT, ESCAPE = 0, 1, 2
KIND_NAMES = {PLANE: "plane", IMPACT: "impact", ESCAPE: "escape"}
COORDS = {"x": 0, "y": 1, "z": 2, "vx": 3, "vy": 4, "vz": 5}


@dataclass(frozen=True)
class Event:
    """One event specification. Build with :func:`plane`, :func:`impact` or :func:`escape`."""

    kind: int
    index: int
    value: float
    direction: int = 0
    terminal: bool = False
    count: int = 1
    label: str = ""

    def row(self) -> list[float]:
        return [float(self.kind), float(self.index), float(self.value), float(self.direction),
                1.0 if self.terminal else 0.0, float(self.count)]

    @property
    def name(self) -> str:
        return self.label or KIND_NAMES[self.kind]


def plane(coordinate, value: float = 0.0, direction: int = 0, terminal: bool = False,
          count: int = 1, label: str = "") -> Event:
    """Crossing of ``coordinate = value`` (coordinate 0..5 or a name such as ``"y"``, ``"vx"``)."""
    if isinstance(coordinate, str):
        if coordinate not in COORDS:
            raise InputError(f"unknown coordinate '{coordinate}'; allowed: {', '.join(COORDS)}")
        coordinate = COORDS[coordinate]
    if coordinate not in range(6):
        raise InputError(f"coordinate index {coordinate} is outside 0..5")
    if direction not in (-1, 0, 1):
        raise InputError(f"direction {direction} must be -1, 0 or +1")
    count = validate.whole_number("count", count, 1)
    return Event(PLANE, int(coordinate), float(value), int(direction), bool(terminal), int(count),
                 label or f"{list(COORDS)[coordinate]}={value:g}")


def impact(primary: int, radius: float, label: str = "") -> Event:
    """Distance to primary ``primary`` (0 = larger, 1 = smaller) falls below ``radius`` (LU)."""
    if primary not in (0, 1):
        raise InputError(f"primary {primary} must be 0 (larger) or 1 (smaller)")
    radius = validate.positive_number("impact radius (LU)", radius)
    return Event(IMPACT, primary, float(radius), -1, True, 1, label or f"impact-{primary}")


def escape(radius: float, center: int = -1, label: str = "") -> Event:
    """Distance from ``center`` (-1 barycentre, 0/1 a primary) rises above ``radius`` (LU)."""
    if center not in (-1, 0, 1):
        raise InputError(f"escape centre {center} must be -1 (barycentre), 0 or 1")
    radius = validate.positive_number("escape radius (LU)", radius)
    return Event(ESCAPE, center, float(radius), 1, True, 1, label or "escape")


def table(events) -> np.ndarray:
    """The (K, 6) float table of a sequence of events (K may be 0)."""
    events = tuple(events or ())
    for e in events:
        if not isinstance(e, Event):
            raise InputError(f"{e!r} is not an event; build events with plane(), impact(), escape()")
    if not events:
        return np.zeros((0, 6))
    return np.array([e.row() for e in events], dtype=float)
