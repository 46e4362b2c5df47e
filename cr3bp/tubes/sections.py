"""Poincaré sections and their crossings: planes, spheres about a primary, apsides.

A section is a surface of the phase space that trajectories cross; the states where they
cross, mapped to two coordinates the user picks, form a Poincaré map (Poincaré, *Les méthodes
nouvelles de la mécanique céleste*, 1899; for tube cuts in the CR3BP: Koon, Lo, Marsden &
Ross, *Dynamical Systems, the Three-Body Problem and Space Mission Design*, 2011, §3.4 and
§4.5). Three kinds:

==========  ==========================================  =====================================
kind        surface                                     crossing found by
==========  ==========================================  =====================================
plane       ``s[coordinate] = value`` (x, y, z, vx...)  the integrator's event location
sphere      ``|r - r_primary| = radius``                the integrator's event location
apsis       ``(r - r_primary) . v = 0`` (peri-/apo-)    per-trajectory steps, Newton in time
==========  ==========================================  =====================================

``(r - r_p) . v`` is the same in the rotating and the inertial frame because
``(r - r_p) . (omega x (r - r_p)) = 0`` and the primary is at rest in the rotating frame;
its time derivative is ``|v|^2 + (r - r_p) . a`` (a the rotating-frame acceleration), which
Newton's method uses.

A plane may be bounded to a half-plane by a strict inequality on another coordinate
(``y=0,x<0``: the part of ``y = 0`` with ``x < 0``; ``x=1-mu:-,y>0``). Crossings outside the
half-plane are skipped, not stopped at: the ``count``-th crossing is the ``count``-th one
inside the bound (the half-plane sections U1..U4 of Koon, Lo, Marsden & Ross, "Heteroclinic
connections between periodic orbits and resonance transitions in celestial mechanics",
*Chaos* 10, 2000, §3 -- from memory).

Directions are physical: ``+1`` keeps crossings where the section function increases in
forward time (``vx > 0`` at ``x = c``; for an apsis, a periapsis), whatever the direction of
the propagation.

Crossings of whole batches run in one ``propagate_batch`` call (plane and sphere). For planar
tubes the cut is a closed curve ordered by the orbit phase; :meth:`Crossings.polygon` and
:meth:`Crossings.area` give it and its area (shoelace formula).
"""

from __future__ import annotations

import ast
import math
import operator
from dataclasses import dataclass, field

import numpy as np

from ..dynamics import acceleration, jacobi
from ..errors import InputError, StateError, shown
from ..integrate import escape, impact, plane, propagate
from ..integrate.batch import batch
from ..integrate.events import COORDS
from .. import validate
from ..validate import quantity, positive_number, finite_number

KINDS = ("plane", "sphere", "apsis")
#: Names the map coordinates may take (besides the six state components).
MAP_COORDS = tuple(COORDS) + ("t", "tof_days", "altitude_km", "radius", "r", "jacobi")


def bounded_max_events(count: int) -> int:
    """Events recorded per trajectory for a half-plane section's ``count``-th crossing.

    Crossings outside the bound take room too, so more are kept than ``count``.

    Parameters
    ----------
    count : int

    Returns
    -------
    int

    Raises
    ------
    ValueError
        ``count`` not a whole number.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.4 and §4.5 (Poincaré sections of tubes).
    .. [2] H. Poincaré, *Les méthodes nouvelles de la mécanique céleste*, 1899 (from memory).

    Examples
    --------
    >>> from cr3bp.tubes.sections import bounded_max_events
    >>> bounded_max_events(1)
    64
    """
    return 16 * int(count) + 48


@dataclass(frozen=True)
class Section:
    """A Poincaré section. Build with :func:`parse_section`, :func:`hyperplane`, :func:`sphere`
    or :func:`apsis`.

    Parameters
    ----------
    kind : {"plane", "sphere", "apsis"}
    coordinate : int        state index (plane)
    value : float           plane value, or sphere radius (LU)
    direction : int         +1, -1 or 0 (both), physical (see module docstring)
    primary : int           0 larger, 1 smaller (sphere, apsis)
    label : str             as the user wrote it, e.g. ``"x=1-mu"``
    bound : tuple           ``()`` or ``(coordinate, sign, value)``: a plane restricted to the
                            half-plane ``sign * (s[coordinate] - value) > 0``

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.4 and §4.5 (Poincaré sections of tubes).
    .. [2] H. Poincaré, *Les méthodes nouvelles de la mécanique céleste*, 1899 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.tubes import sections
    >>> em = system("earth-moon")
    >>> s = sections.parse_section("y=0,x<0", em)
    >>> s.kind, s.bounded
    ('plane', True)
    """

    kind: str
    coordinate: int = 0
    value: float = 0.0
    direction: int = 0
    primary: int = 1
    label: str = ""
    bound: tuple = ()

    @property
    def bounded(self) -> bool:
        return bool(self.bound)

    def inside(self, states) -> np.ndarray:
        """Whether (N, 6) states lie in the bound's half-plane (all True when unbounded)."""
        s = np.atleast_2d(np.asarray(states, dtype=float))
        if not self.bound:
            return np.ones(s.shape[0], dtype=bool)
        k, sign, value = self.bound
        return sign * (s[:, int(k)] - value) > 0

    def g(self, system, states) -> np.ndarray:
        """Section function of (N, 6) states (zero on the section)."""
        s = np.atleast_2d(np.asarray(states, dtype=float))
        if self.kind == "plane":
            return s[:, self.coordinate] - self.value
        c = system.positions[self.primary]
        rel = s[:, :3] - np.array([c, 0.0, 0.0])
        if self.kind == "sphere":
            return np.linalg.norm(rel, axis=1) - self.value
        return np.einsum("ij,ij->i", rel, s[:, 3:6])

    def event(self, system, time_sign: float, terminal=True, count=1):
        """The integrator event for this section (plane or sphere) in a propagation of the
        given time direction; ``None`` for an apsis (not an integrator event)."""
        d = int(self.direction * (1 if time_sign >= 0 else -1))
        if self.kind == "plane":
            return plane(self.coordinate, self.value, d, terminal, count, label=self.label)
        if self.kind == "sphere":
            if self.direction <= 0:
                return impact(self.primary, self.value, label=self.label)
            return escape(self.value, center=self.primary, label=self.label)
        return None

    def to_dict(self) -> dict:
        d = {"kind": self.kind, "label": self.label, "coordinate": list(COORDS)[self.coordinate]
             if self.kind == "plane" else None, "value": self.value, "direction": self.direction,
             "primary": self.primary if self.kind != "plane" else None}
        if self.bound:
            k, sign, value = self.bound
            d["bound"] = {"coordinate": list(COORDS)[int(k)], "side": "<" if sign < 0 else ">",
                          "value": value}
        return d


def hyperplane(coordinate, value: float, direction: int = 0, label: str = "",
               bound=None) -> Section:
    """The plane ``s[coordinate] = value`` (coordinate a name such as ``"x"`` or an index).

    ``bound = (coordinate, side, value)`` with side ``"<"`` or ``">"`` (or -1/+1) keeps only the
    half-plane where that other coordinate is below / above the value.

    Parameters
    ----------
    coordinate : str or int
    value : float
    direction : int
        +1, -1 or 0 (both), physical.
    label : str
    bound : tuple, optional

    Returns
    -------
    Section

    Raises
    ------
    InputError
        Unknown coordinate, direction or bound.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.4 and §4.5 (Poincaré sections of tubes).
    .. [2] H. Poincaré, *Les méthodes nouvelles de la mécanique céleste*, 1899 (from memory).

    Examples
    --------
    >>> from cr3bp.tubes.sections import hyperplane
    >>> hyperplane("x", 0.5, 1).label
    'x=0.5'
    """
    if isinstance(coordinate, str):
        if coordinate not in COORDS:
            raise InputError(f"unknown section coordinate '{coordinate}'; allowed: {', '.join(COORDS)}")
        coordinate = COORDS[coordinate]
    _check_direction(direction)
    b = ()
    if bound:
        bc, side, bv = bound
        if isinstance(bc, str):
            if bc not in COORDS:
                raise InputError(f"unknown bound coordinate '{bc}'; allowed: {', '.join(COORDS)}")
            bc = COORDS[bc]
        if int(bc) == int(coordinate) or int(bc) not in range(6):
            raise InputError(f"a half-plane bound must be on another coordinate than the plane's "
                             f"({list(COORDS)[coordinate]})")
        sign = {"<": -1, ">": 1, -1: -1, 1: 1}.get(side)
        if sign is None:
            raise InputError(f"bound side {side!r} must be '<' or '>'")
        b = (int(bc), int(sign), finite_number("bound value", bv))
    text = f"{list(COORDS)[coordinate]}={value:g}"
    if b:
        text += f",{list(COORDS)[b[0]]}{'<' if b[1] < 0 else '>'}{b[2]:g}"
    return Section("plane", int(coordinate), float(value), int(direction), 1, label or text, b)


def sphere(system, primary, radius: float, direction: int = -1, label: str = "") -> Section:
    """The sphere of ``radius`` (LU) about a primary (0/1 or its name); direction -1 = entering it.

    Parameters
    ----------
    system : System
    primary : int or str
    radius : float
        LU.
    direction : int
        -1 entering, +1 leaving.
    label : str

    Returns
    -------
    Section

    Raises
    ------
    InputError
        Unknown primary, a radius that is not positive, or direction 0.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.4 and §4.5 (Poincaré sections of tubes).
    .. [2] H. Poincaré, *Les méthodes nouvelles de la mécanique céleste*, 1899 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.tubes import sections
    >>> em = system("earth-moon")
    >>> sections.sphere(em, "moon", 0.05).primary
    1
    """
    p = primary_index(system, primary)
    radius = positive_number("sphere radius (LU)", radius)
    if direction == 0:
        raise InputError("a sphere section needs a direction: entering (-1) or leaving (+1)")
    _check_direction(direction)
    return Section("sphere", 0, float(radius), int(direction), p,
                   label or f"sphere {system.names[p]} r={radius:g}")


def apsis(system, primary, which: str = "periapsis", label: str = "") -> Section:
    """Periapsis (``which="periapsis"``) or apoapsis passages about a primary.

    Parameters
    ----------
    system : System
    primary : int or str
    which : str
        ``"periapsis"``, ``"apoapsis"`` or ``"both"``.
    label : str

    Returns
    -------
    Section

    Raises
    ------
    InputError
        Unknown primary or ``which``.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.4 and §4.5 (Poincaré sections of tubes).
    .. [2] H. Poincaré, *Les méthodes nouvelles de la mécanique céleste*, 1899 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.tubes import sections
    >>> em = system("earth-moon")
    >>> sections.apsis(em, "earth").label
    'periapsis earth'
    """
    p = primary_index(system, primary)
    if which not in ("periapsis", "apoapsis", "both"):
        raise InputError(f"apsis '{which}' must be periapsis, apoapsis or both")
    d = {"periapsis": 1, "apoapsis": -1, "both": 0}[which]
    return Section("apsis", 0, 0.0, d, p, label or f"{which} {system.names[p]}")


def primary_index(system, primary) -> int:
    """0 (larger) or 1 (smaller) from an index or a body name (``"earth"``, ``"moon"``).

    Parameters
    ----------
    system : System
    primary : int or str

    Returns
    -------
    int

    Raises
    ------
    InputError
        Not a primary of ``system``.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.4 and §4.5 (Poincaré sections of tubes).
    .. [2] H. Poincaré, *Les méthodes nouvelles de la mécanique céleste*, 1899 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.tubes import sections
    >>> em = system("earth-moon")
    >>> sections.primary_index(em, "Moon"), sections.primary_index(em, 0)
    (1, 0)
    """
    if isinstance(primary, (int, np.integer)) and primary in (0, 1):
        return int(primary)
    names = [n.lower() for n in system.names]
    key = str(primary).strip().lower()
    aliases = {"primary": 0, "larger": 0, "secondary": 1, "smaller": 1, "1": 0, "2": 1}
    if key in names:
        return names.index(key)
    # a body given as e.g. "earth" in a system whose secondary is the Earth+Moon barycentre
    for i, n in enumerate(names):
        if n.split("-")[0] == key:
            return i
    if key in aliases:
        return aliases[key]
    raise InputError(f"unknown primary '{primary}' for system {system.name}; "
                     f"allowed: {', '.join(names)}")


def _check_direction(d):
    if d not in (-1, 0, 1):
        raise InputError(f"section direction {d!r} must be -1, 0 or +1")


# ---- text form -------------------------------------------------------------------------

#: Longest arithmetic read in a section value (a 50 000-character one would exhaust the parser).
MAX_EXPRESSION_CHARS = 200
_OPS = {ast.Add: operator.add, ast.Sub: operator.sub, ast.Mult: operator.mul,
        ast.Div: operator.truediv, ast.USub: operator.neg, ast.UAdd: operator.pos}


def expression(text: str, system) -> float:
    """A number or simple arithmetic in ``mu`` (``"1-mu"``, ``"-mu"``, ``"0.8"``).

    Parameters
    ----------
    text : str
    system : System
        Gives ``mu``.

    Returns
    -------
    float

    Raises
    ------
    InputError
        Anything but numbers, ``mu``, + - * / and parentheses; too long; not finite.

    References
    ----------
    .. [1] Python Software Foundation, *The Python Language Reference*, "ast" module (the
       expression is read with Python's own parser and evaluated from its syntax tree).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.tubes import sections
    >>> em = system("earth-moon")
    >>> sections.expression("1-mu", em) == 1 - em.mu
    True
    """
    def ev(node):
        if isinstance(node, ast.Expression):
            return ev(node.body)
        if isinstance(node, ast.Constant) and isinstance(node.value, (int, float)):
            return float(node.value)
        if isinstance(node, ast.Name) and node.id == "mu":
            return float(system.mu)
        if isinstance(node, ast.BinOp) and type(node.op) in _OPS:
            return _OPS[type(node.op)](ev(node.left), ev(node.right))
        if isinstance(node, ast.UnaryOp) and type(node.op) in _OPS:
            return _OPS[type(node.op)](ev(node.operand))
        raise ValueError
    if len(str(text)) > MAX_EXPRESSION_CHARS:
        raise InputError(f"section value '{shown(text)}' is longer than {MAX_EXPRESSION_CHARS} "
                         "characters; give a number or short arithmetic in mu (e.g. 1-mu)")
    try:
        v = ev(ast.parse(text.strip(), mode="eval"))
    except (SyntaxError, ValueError, ZeroDivisionError, RecursionError, MemoryError, OverflowError):
        raise InputError(f"section value '{shown(text)}' is not a number or arithmetic in mu "
                         "(e.g. 1-mu, -mu, 0.8)") from None
    if not math.isfinite(v):
        raise InputError(f"section value '{shown(text)}' is not finite")
    return v


def parse_section(text: str, system) -> Section:
    """A section from text.

    Forms: ``x=1-mu`` (plane, both directions), ``y=0:+`` / ``y=0:-`` (one direction),
    ``y=0,x<0`` / ``x=1-mu:+,y>0`` (a half-plane: the plane, optionally a direction, then a comma
    and one strict inequality on another coordinate, whose right side may use mu),
    ``sphere:moon:20000km`` (entering), ``sphere:moon:20000km:+`` (leaving),
    ``periapsis:earth``, ``apoapsis:moon``.

    Parameters
    ----------
    text : str
    system : System

    Returns
    -------
    Section

    Raises
    ------
    InputError
        Naming the part of the text that is not understood.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.4 and §4.5 (Poincaré sections of tubes).
    .. [2] H. Poincaré, *Les méthodes nouvelles de la mécanique céleste*, 1899 (from memory).
    .. [3] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, "Heteroclinic connections between
       periodic orbits and resonance transitions in celestial mechanics", *Chaos* 10, 2000, §3
       (the half-plane sections; from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.tubes import sections
    >>> em = system("earth-moon")
    >>> s = sections.parse_section("x=1-mu:+", em)
    >>> s.kind, s.direction, s.label
    ('plane', 1, 'x=1-mu:+')
    """
    t = str(text).strip()
    if "," in t:
        plane_text, _, bound_text = t.partition(",")
        if "," in bound_text:
            raise InputError(f"section '{text}': only one bound is allowed, e.g. y=0,x<0")
        base = parse_section(plane_text, system)
        if base.kind != "plane":
            raise InputError(f"section '{text}': only a plane can be bounded, e.g. y=0,x<0")
        bt = bound_text.strip()
        side = "<" if "<" in bt else (">" if ">" in bt else None)
        if side is None or bt.count(side) != 1 or "=" in bt:
            raise InputError(f"bound '{bt}' in section '{text}' must be COORD<VALUE or COORD>VALUE, "
                             "e.g. x<0 or y>0")
        bc, bv = bt.split(side)
        bc = bc.strip()
        if bc not in COORDS:
            raise InputError(f"unknown bound coordinate '{bc}' in '{text}'; allowed: {', '.join(COORDS)}")
        return hyperplane(base.coordinate, base.value, base.direction, label=t,
                          bound=(bc, side, expression(bv, system)))
    parts = t.split(":")
    head = parts[0].strip().lower()
    if head in ("periapsis", "apoapsis"):
        if len(parts) != 2:
            raise InputError(f"section '{text}': write {head}:BODY, e.g. {head}:earth")
        return apsis(system, parts[1], head, label=t)
    if head == "sphere":
        if len(parts) not in (3, 4):
            raise InputError(f"section '{text}': write sphere:BODY:RADIUS[:+|-], e.g. sphere:moon:20000km")
        r = quantity(f"sphere radius in section '{text}'", parts[2], "length", system, sign="positive")
        d = _direction_text(parts[3], text) if len(parts) == 4 else -1
        return sphere(system, parts[1], r, d or -1, label=t)
    if "=" not in head:
        raise InputError(f"section '{text}' is not understood; use e.g. x=1-mu, y=0:+, "
                         "sphere:moon:20000km, periapsis:earth")
    coord, value = parts[0].split("=", 1)
    coord = coord.strip()
    if coord not in COORDS:
        raise InputError(f"unknown section coordinate '{coord}' in '{text}'; allowed: {', '.join(COORDS)}")
    d = _direction_text(parts[1], text) if len(parts) == 2 else 0
    if len(parts) > 2:
        raise InputError(f"section '{text}' has too many ':' parts")
    return hyperplane(coord, expression(value, system), d, label=t)


def _direction_text(s, text):
    s = s.strip()
    if s in ("+", "+1", "up", "increasing"):
        return 1
    if s in ("-", "-1", "down", "decreasing"):
        return -1
    if s in ("0", "both", "any"):
        return 0
    raise InputError(f"direction '{s}' in section '{text}' must be + or -")


# ---- crossings --------------------------------------------------------------------------

@dataclass(frozen=True)
class Crossings:
    """States where trajectories cross a section.

    Parameters
    ----------
    system : System
    section : Section
    states : ndarray (M, 6)     states on the section
    t : ndarray (M,)            signed time from each trajectory's start (TU)
    trajectory : ndarray (M,)   index of the trajectory each crossing belongs to
    count : ndarray (M,)        1 for a trajectory's first crossing, 2 for its second...
    n_trajectories : int        trajectories examined (those that never crossed have no row)
    phase : ndarray (M,) or None  orbit phase in [0, 1) of the trajectory (for tube cuts)
    label : str                 e.g. the tube's description, for legends

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.4 and §4.5 (Poincaré sections of tubes).
    .. [2] H. Poincaré, *Les méthodes nouvelles de la mécanique céleste*, 1899 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import sections
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry)
    >>> cut = sections.crossings(em, [orbit.state], sections.hyperplane("y", 0.0), orbit.period)
    >>> len(cut), bool(abs(cut.t[0] - orbit.period / 2) < 1e-8)
    (1, True)
    """

    system: object
    section: Section
    states: np.ndarray
    t: np.ndarray
    trajectory: np.ndarray
    count: np.ndarray
    n_trajectories: int
    phase: np.ndarray | None = None
    label: str = ""
    extra: dict = field(default_factory=dict, compare=False, repr=False)

    def __len__(self):
        return int(self.states.shape[0])

    @property
    def jacobi(self) -> np.ndarray:
        return jacobi(self.system.mu, self.states) if len(self) else np.zeros(0)

    def first(self) -> "Crossings":
        """Only the first crossing of each trajectory."""
        return self.select(self.count == 1)

    def one_each(self) -> "Crossings":
        """One crossing per trajectory: itself when that is already so (a tube's cut at its
        ``count``-th crossing, or :meth:`nth`), else :meth:`first`."""
        if len(self) and np.unique(self.trajectory).size == len(self):
            return self
        return self.first()

    def nth(self, n: int) -> "Crossings":
        return self.select(self.count == n)

    def select(self, mask) -> "Crossings":
        m = np.asarray(mask)
        return Crossings(self.system, self.section, self.states[m], self.t[m], self.trajectory[m],
                         self.count[m], self.n_trajectories,
                         None if self.phase is None else self.phase[m], self.label, dict(self.extra))

    def coords(self, names) -> np.ndarray:
        """Map coordinates (M, k) by name: a state component (``x``...``vz``), ``t`` (TU),
        ``tof_days``, ``r``/``radius`` (LU from the section's primary), ``altitude_km`` (above
        the section's primary's mean radius) or ``jacobi``."""
        cols = []
        for name in names:
            cols.append(map_coordinate(self.system, self.section, self.states, self.t, name))
        return np.column_stack(cols) if cols else np.zeros((len(self), 0))

    def polygon(self, names=("y", "vy")) -> np.ndarray:
        """The cut as a closed polygon in two map coordinates, ordered by orbit phase.

        Only meaningful for a planar tube whose trajectories all crossed (``closed``). Uses
        one crossing per trajectory (:meth:`one_each`)."""
        first = self.one_each()
        order = np.argsort(first.phase if first.phase is not None else first.trajectory)
        return first.coords(names)[order]

    @property
    def closed(self) -> bool:
        """Whether every trajectory of the tube crossed (so the first cut is a closed curve)."""
        return len(self.one_each()) == self.n_trajectories and self.n_trajectories >= 3

    def area(self, names=("y", "vy")) -> float:
        """Area enclosed by :meth:`polygon` (shoelace formula), in the product of the units."""
        p = self.polygon(names)
        if len(p) < 3:
            return 0.0
        x, y = p[:, 0], p[:, 1]
        return float(0.5 * abs(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))))

    def contains(self, points, names=("y", "vy")) -> np.ndarray:
        """Whether map points (K, 2) lie inside the closed cut (even-odd ray casting)."""
        poly = self.polygon(names)
        return points_in_polygon(np.atleast_2d(np.asarray(points, dtype=float)), poly)

    def to_dict(self, names=None) -> dict:
        d = {"section": self.section.to_dict(), "label": self.label, "crossings": len(self),
             "n_trajectories": self.n_trajectories, "states": self.states.tolist(),
             "t": self.t.tolist(), "trajectory": self.trajectory.tolist(), "count": self.count.tolist()}
        if self.phase is not None:
            d["phase"] = self.phase.tolist()
        if names:
            d["map_coordinates"] = list(names)
            d["map"] = self.coords(names).tolist()
        return d


def map_coordinate(system, section, states, t, name) -> np.ndarray:
    """One coordinate of a Poincaré map for states on a section.

    A state component (``x`` .. ``vz``), ``t`` (TU), ``tof_days``, ``jacobi``, ``r``/``radius``
    (LU, from the section's primary, the smaller one for planes) or ``altitude_km``.

    Parameters
    ----------
    system : System
    section : Section
    states : array_like, shape (M, 6)
    t : array_like, shape (M,)
        Times of the crossings (TU).
    name : str
        One of :data:`MAP_COORDS`.

    Returns
    -------
    ndarray, shape (M,)

    Raises
    ------
    InputError
        Unknown name, or a dimensional coordinate with a nondimensional system.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.4 and §4.5 (Poincaré sections of tubes).
    .. [2] H. Poincaré, *Les méthodes nouvelles de la mécanique céleste*, 1899 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.tubes import sections
    >>> em = system("earth-moon")
    >>> s = sections.hyperplane("x", 1 - em.mu)
    >>> sections.map_coordinate(em, s, [[1 - em.mu, 0.1, 0, 0, 0.2, 0]], [0.5], "r").tolist()
    [0.1]
    """
    states = np.atleast_2d(states)
    if name in COORDS:
        return states[:, COORDS[name]]
    if name == "t":
        return np.asarray(t, dtype=float)
    if name == "tof_days":
        return np.abs(system.days(np.asarray(t, dtype=float)))
    if name == "jacobi":
        return jacobi(system.mu, states)
    p = section.primary if section.kind != "plane" else 1
    c = system.positions[p]
    r = np.linalg.norm(states[:, :3] - np.array([c, 0.0, 0.0]), axis=1)
    if name in ("r", "radius"):
        return r
    if name == "altitude_km":
        return system.km(r) - (system.primary, system.secondary)[p].radius_km
    raise InputError(f"unknown map coordinate '{name}'; allowed: {', '.join(MAP_COORDS)}")


def points_in_polygon(points, poly) -> np.ndarray:
    """Even-odd rule point-in-polygon, vectorised over points.

    Parameters
    ----------
    points : ndarray, shape (M, 2)
    poly : ndarray, shape (K, 2)
        Vertices in order (closed implicitly).

    Returns
    -------
    ndarray of bool, shape (M,)

    Raises
    ------
    None

    References
    ----------
    .. [1] M. Shimrat, "Algorithm 112: Position of point relative to polygon", *Commun. ACM* 5,
       1962.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.tubes.sections import points_in_polygon
    >>> square = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], float)
    >>> points_in_polygon(np.array([[0.5, 0.5], [2.0, 0.5]]), square).tolist()
    [True, False]
    """
    x, y = points[:, 0][:, None], points[:, 1][:, None]
    x1, y1 = poly[:, 0][None, :], poly[:, 1][None, :]
    x2, y2 = np.roll(poly[:, 0], -1)[None, :], np.roll(poly[:, 1], -1)[None, :]
    cond = (y1 > y) != (y2 > y)
    with np.errstate(divide="ignore", invalid="ignore"):
        xint = x1 + (y - y1) * (x2 - x1) / (y2 - y1)
    hits = cond & (x < xint)
    return (np.count_nonzero(hits, axis=1) % 2) == 1


def guard_events(system, altitude_km=None):
    """Impact with either primary's surface (radius + altitude where given) as events.

    Parameters
    ----------
    system : System
    altitude_km : float, optional
        Added to each radius.

    Returns
    -------
    list of events

    Raises
    ------
    None

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.4 and §4.5 (Poincaré sections of tubes).
    .. [2] H. Poincaré, *Les méthodes nouvelles de la mécanique céleste*, 1899 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.tubes import sections
    >>> em = system("earth-moon")
    >>> len(sections.guard_events(em))
    2
    """
    evs = []
    radii = system.radii
    for p in (0, 1):
        r = radii[p]
        if r > 0:
            evs.append(impact(p, r, label=f"impact {system.names[p]}"))
    return evs


def crossings(system, states, section: Section, t_max: float, count: int = 1, *,
              phase=None, label="", rtol=1e-12, atol=1e-12, extra_events=()) -> Crossings:
    """Crossings of ``section`` by trajectories from ``states`` within time ``t_max``.

    ``t_max`` negative: backward in time; up to the ``count``-th crossing of each. Planes and
    spheres are located by the integrator's event finder in one batch; apsides by
    :func:`apsides` (one propagation per trajectory, Newton refinement in time). Trajectories
    that hit a primary's surface stop there.

    Parameters
    ----------
    system : System
    states : array_like, shape (N, 6)
    section : Section
    t_max : float
        Signed time limit (TU).
    count : int
    phase : array_like, optional
        Orbit phase of each trajectory (tube cuts).
    label : str
    rtol, atol : float
    extra_events : sequence of events

    Returns
    -------
    Crossings

    Raises
    ------
    InputError
        ``count`` < 1 or bad states.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.4 and §4.5 (Poincaré sections of tubes).
    .. [2] H. Poincaré, *Les méthodes nouvelles de la mécanique céleste*, 1899 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import sections
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry)
    >>> cut = sections.crossings(em, [orbit.state], sections.hyperplane("y", 0.0), 1.01 * orbit.period,
    ...                         count=2)
    >>> cut.count.tolist()
    [1, 2]
    """
    states = np.ascontiguousarray(np.atleast_2d(np.asarray(states, dtype=float)))
    count = validate.whole_number("crossing count", count, 1)
    if section.kind == "apsis":
        return apsides(system, states, section, t_max, count, phase=phase, label=label, rtol=rtol,
                       atol=atol)
    sign = 1.0 if t_max >= 0 else -1.0
    # a half-plane counts only crossings inside its bound: the plane event is then recorded
    # (not terminal) over the whole time limit and filtered here
    bounded = section.bounded
    ev = section.event(system, sign, terminal=not bounded, count=1 if bounded else count)
    events = [ev] + guard_events(system) + list(extra_events)
    res = batch(system, states, float(t_max), events,
                max_events=bounded_max_events(count) if bounded else count + 8)
    rows, ts, traj, cnt = [], [], [], []
    for i in range(states.shape[0]):
        idx = np.asarray(res.event_index[i], dtype=int)
        et = np.asarray(res.event_t[i], dtype=float)
        es = np.asarray(res.event_states[i], dtype=float).reshape(-1, 6)
        keep = (idx == 0) & (np.abs(et) > 1e-12)
        if bounded:
            keep &= section.inside(es) if es.shape[0] else keep
        k = 0
        for tt, ss in zip(et[keep], es[keep]):
            if k >= count:
                break
            k += 1
            rows.append(ss)
            ts.append(tt)
            traj.append(i)
            cnt.append(k)
    return _make(system, section, rows, ts, traj, cnt, states.shape[0], phase, label)


def _make(system, section, rows, ts, traj, cnt, n, phase, label):
    traj = np.asarray(traj, dtype=int)
    return Crossings(system, section, np.asarray(rows, dtype=float).reshape(-1, 6),
                     np.asarray(ts, dtype=float), traj, np.asarray(cnt, dtype=int), int(n),
                     None if phase is None else np.asarray(phase, dtype=float)[traj], label)


def _apsis_g(system, section, s):
    c = system.positions[section.primary]
    rel = s[:3] - np.array([c, 0.0, 0.0])
    a = acceleration(system.mu, s)
    return float(rel @ s[3:6]), float(s[3:6] @ s[3:6] + rel @ a[3:6])


def refine_apsis(system, section, t0, s0, t1, s1, rtol=1e-12, atol=1e-12, iters=12):
    """Time and state of the apsis between two samples.

    Newton's method on ``g(t) = (r - r_p).v`` with ``g' = |v|^2 + (r - r_p).a``, each iterate
    propagated from the left sample (so the result lies on the trajectory to the integrator's
    accuracy).

    Parameters
    ----------
    system : System
    section : Section
        An apsis section.
    t0, t1 : float
        Times of the samples (TU).
    s0, s1 : ndarray, shape (6,)
        States there (g changes sign between them).
    rtol, atol : float
    iters : int

    Returns
    -------
    t : float
    state : ndarray, shape (6,)

    Raises
    ------
    None

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.4 and §4.5 (Poincaré sections of tubes).
    .. [2] H. Poincaré, *Les méthodes nouvelles de la mécanique céleste*, 1899 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import sections
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry)
    >>> from cr3bp.integrate import propagate
    >>> sec = sections.apsis(em, "moon", "both")
    >>> a, b = propagate(em, orbit.state, 0.1).final_state, propagate(em, orbit.state, -0.1).final_state
    >>> t, s = sections.refine_apsis(em, sec, -0.1, b, 0.1, a)
    >>> abs(t) < 1e-9          # the perpendicular crossing of the x axis is an apsis
    True
    """
    g0, _ = _apsis_g(system, section, s0)
    g1, _ = _apsis_g(system, section, s1)
    dt = (t1 - t0) * g0 / (g0 - g1) if g0 != g1 else 0.5 * (t1 - t0)
    s = s0
    for _ in range(iters):
        arc = propagate(system, s0, dt, rtol=rtol, atol=atol) if dt != 0 else None
        s = s0 if arc is None else arc.final_state
        g, gp = _apsis_g(system, section, s)
        step = -g / gp if gp != 0 else 0.0
        new = dt + step
        lo, hi = min(0.0, t1 - t0), max(0.0, t1 - t0)
        if not lo <= new <= hi:  # keep the iterate in the bracket
            new = 0.5 * (dt + (hi if new > hi else lo))
        if abs(new - dt) < 1e-14 * max(1.0, abs(t1 - t0)) + 1e-15:
            dt = new
            break
        dt = new
    arc = propagate(system, s0, dt, rtol=rtol, atol=atol) if dt != 0 else None
    return t0 + dt, (s0 if arc is None else arc.final_state)


def apsides(system, states, section: Section, t_max: float, count: int = 1, *, phase=None,
            label="", rtol=1e-12, atol=1e-12, guard=True, progress=None,
            within=None) -> Crossings:
    """Periapsis/apoapsis passages about ``section.primary`` within ``t_max`` (signed).

    The first ``count`` of each trajectory. One propagation per trajectory (every accepted step
    is a sample; a sign change of g brackets an apsis), refined by :func:`refine_apsis`.
    ``guard=False`` lets trajectories pass through the primaries' surfaces (point masses), so
    that a periapsis below the surface is still found (altitude maps stay continuous).
    ``within`` (LU) keeps only apsides closer than that to the primary.

    Parameters
    ----------
    system : System
    states : array_like, shape (N, 6)
    section : Section
    t_max : float
    count : int
    phase : array_like, optional
    label : str
    rtol, atol : float
    guard : bool
    progress : callable, optional
    within : float, optional

    Returns
    -------
    Crossings

    Raises
    ------
    InputError
        Bad states.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.4 and §4.5 (Poincaré sections of tubes).
    .. [2] H. Poincaré, *Les méthodes nouvelles de la mécanique céleste*, 1899 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import sections
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry)
    >>> cut = sections.apsides(em, [orbit.state], sections.apsis(em, "moon"), orbit.period)
    >>> len(cut)
    1
    """
    states = np.atleast_2d(np.asarray(states, dtype=float))
    rows, ts, traj, cnt = [], [], [], []
    sign = 1.0 if t_max >= 0 else -1.0
    for i in range(states.shape[0]):
        arc = propagate(system, states[i], float(t_max), rtol=rtol, atol=atol,
                        events=guard_events(system) if guard else ())
        if progress is not None and (i % 10 == 0 or i == states.shape[0] - 1):
            progress(i + 1, states.shape[0], "periapsis search")
        g = section.g(system, arc.states)
        # physical direction of g in forward time: periapsis is g going - to +
        dg = np.sign(np.diff(g)) * sign
        change = np.nonzero((np.sign(g[:-1]) != np.sign(g[1:])) & (g[:-1] != 0))[0]
        k = 0
        for j in change:
            if section.direction != 0 and dg[j] != section.direction:
                continue
            if within is not None:
                c = system.positions[section.primary]
                rj = min(np.linalg.norm(arc.states[j, :3] - [c, 0, 0]),
                         np.linalg.norm(arc.states[j + 1, :3] - [c, 0, 0]))
                if rj > within:
                    continue
            try:
                tt, ss = refine_apsis(system, section, arc.t[j], arc.states[j], arc.t[j + 1],
                                      arc.states[j + 1], rtol, atol)
            except StateError:
                # the apsis lies inside the primary (possible with guard=False): keep the
                # nearer sample, which is enough to say it is below the surface
                c = system.positions[section.primary]
                jj = j if (np.linalg.norm(arc.states[j, :3] - [c, 0, 0])
                           < np.linalg.norm(arc.states[j + 1, :3] - [c, 0, 0])) else j + 1
                tt, ss = arc.t[jj], arc.states[jj]
            k += 1
            rows.append(ss)
            ts.append(tt)
            traj.append(i)
            cnt.append(k)
            if k >= count:
                break
    return _make(system, section, rows, ts, traj, cnt, states.shape[0], phase, label)
