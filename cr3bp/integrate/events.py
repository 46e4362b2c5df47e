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
    """One event specification. Build with :func:`plane`, :func:`impact` or :func:`escape`.

    Parameters
    ----------
    kind : int
        :data:`PLANE`, :data:`IMPACT` or :data:`ESCAPE`.
    index : int
        Coordinate (PLANE) or body (IMPACT, ESCAPE; -1 the barycentre).
    value : float
        Plane value or radius, LU (LU/TU for a velocity coordinate).
    direction : int
        +1 increasing g only, -1 decreasing only, 0 both.
    terminal : bool
    count : int
        Stop at this occurrence (terminal events).
    label : str
        Name of the event (default from its kind).

    Examples
    --------
    >>> from cr3bp.integrate.events import plane
    >>> e = plane("y", 0.0, direction=1, terminal=True)
    >>> e.name, e.row()
    ('y=0', [0.0, 1.0, 0.0, 1.0, 1.0, 1.0])

    References
    ----------
    .. [1] E. Hairer, S. P. Norsett and G. Wanner, *Solving Ordinary Differential Equations I*,
       2nd ed., Springer, 1993, §II.6 (dense output and event location; from memory).
    """

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
    """Crossing of ``coordinate = value`` (coordinate 0..5 or a name such as ``"y"``, ``"vx"``).

    Parameters
    ----------
    coordinate : int or str
        0..5, or "x", "y", "z", "vx", "vy", "vz".
    value : float
        LU (LU/TU for a velocity).
    direction : {-1, 0, 1}
    terminal : bool
        Stop the propagation at the ``count``-th crossing.
    count : int
        At least 1.
    label : str

    Returns
    -------
    Event

    Raises
    ------
    InputError
        Unknown coordinate, direction not -1/0/+1, or a count below 1.

    Examples
    --------
    >>> from cr3bp.integrate.events import plane
    >>> plane("vx", 0.0, count=2, terminal=True).name
    'vx=0'
    >>> plane("w")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: unknown coordinate 'w'; allowed: x, y, z, vx, vy, vz

    References
    ----------
    .. [1] E. Hairer, S. P. Norsett and G. Wanner, *Solving Ordinary Differential Equations I*,
       2nd ed., Springer, 1993, §II.6 (dense output and event location; from memory).
    """
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
    """Distance to primary ``primary`` (0 = larger, 1 = smaller) falls below ``radius`` (LU).

    Parameters
    ----------
    primary : {0, 1}
    radius : float
        Positive, LU.
    label : str

    Returns
    -------
    Event
        Always terminal.

    Raises
    ------
    InputError
        A primary other than 0 or 1, or a radius that is not positive.

    Examples
    --------
    >>> from cr3bp.integrate.events import impact
    >>> e = impact(1, 0.0045)
    >>> e.name, e.terminal, e.direction
    ('impact-1', True, -1)

    References
    ----------
    .. [1] Common practice: stop a propagation at the body's surface (radius in LU).
    """
    if primary not in (0, 1):
        raise InputError(f"primary {primary} must be 0 (larger) or 1 (smaller)")
    radius = validate.positive_number("impact radius (LU)", radius)
    return Event(IMPACT, primary, float(radius), -1, True, 1, label or f"impact-{primary}")


def escape(radius: float, center: int = -1, label: str = "") -> Event:
    """Distance from ``center`` (-1 barycentre, 0/1 a primary) rises above ``radius`` (LU).

    Parameters
    ----------
    radius : float
        Positive, LU.
    center : {-1, 0, 1}
    label : str

    Returns
    -------
    Event
        Always terminal.

    Raises
    ------
    InputError
        An unknown centre, or a radius that is not positive.

    Examples
    --------
    >>> from cr3bp.integrate.events import escape
    >>> e = escape(5.0)
    >>> e.name, e.index, e.value
    ('escape', -1, 5.0)

    References
    ----------
    .. [1] Common practice: stop a propagation that leaves the region of interest.
    """
    if center not in (-1, 0, 1):
        raise InputError(f"escape centre {center} must be -1 (barycentre), 0 or 1")
    radius = validate.positive_number("escape radius (LU)", radius)
    return Event(ESCAPE, center, float(radius), 1, True, 1, label or "escape")


def table(events) -> np.ndarray:
    """The (K, 6) float table of a sequence of events (K may be 0).

    Parameters
    ----------
    events : sequence of Event, or None

    Returns
    -------
    ndarray (K, 6)
        Rows ``[kind, index, value, direction, terminal, max_count]``.

    Raises
    ------
    InputError
        An item that is not an :class:`Event`.

    Examples
    --------
    >>> from cr3bp.integrate.events import escape, plane, table
    >>> table([plane("y"), escape(5.0)]).tolist()
    [[0.0, 1.0, 0.0, 0.0, 0.0, 1.0], [2.0, -1.0, 5.0, 1.0, 1.0, 1.0]]
    >>> table(None).shape
    (0, 6)

    References
    ----------
    .. [1] Common practice: events passed to compiled code as a plain numeric table.
    """
    events = tuple(events or ())
    for e in events:
        if not isinstance(e, Event):
            raise InputError(f"{e!r} is not an event; build events with plane(), impact(), escape()")
    if not events:
        return np.zeros((0, 6))
    return np.array([e.row() for e in events], dtype=float)
