"""Picking one orbit out of a family by a property: amplitude, Jacobi constant, period,
closest approach to a primary, or a synodic resonance.

Synodic resonance (Earth–Moon only): a p:q resonance means ``p`` orbit periods equal ``q``
synodic months, ``T = q * S / p``. The synodic month is computed from the sidereal month and
the sidereal year, ``1/S = 1/P_month - 1/P_year`` (the Moon's sidereal rate minus the Sun's
apparent rate; common practice), with P_month = 27.321662 d and P_year = 365.256363 d
(Astronomical Almanac; from memory), giving S = 29.530589 d. The Earth–Moon L2 9:2
near-rectilinear halo therefore has ``T = 2 S / 9 = 6.5624 d``.
"""

from __future__ import annotations

from dataclasses import dataclass

from .. import units
from ..constants import SECONDS_PER_DAY, SIDEREAL_MONTH_DAYS, SIDEREAL_YEAR_DAYS
from ..errors import InputError, UnitError
from ..vocabulary import LENGTH_TARGETS, ORBIT_TARGETS
from ..validate import finite_number, whole_number

SYNODIC_MONTH_DAYS = 1.0 / (1.0 / SIDEREAL_MONTH_DAYS - 1.0 / SIDEREAL_YEAR_DAYS)

#: The user targets (:data:`cr3bp.vocabulary.ORBIT_TARGETS`) and the library's own
#: ``approach1`` (closest approach to the larger primary; not offered to users yet).
KINDS = ORBIT_TARGETS + ("approach1",)
#: Targets whose value must be positive.
POSITIVE = ("period",) + LENGTH_TARGETS + ("approach1",)


@dataclass(frozen=True)
class Target:
    """A requested property of an orbit, in nondimensional units.

    Parameters
    ----------
    kind : str
        One of :data:`KINDS`.
    quantity : str
        The family quantity it picks by (see :func:`cr3bp.orbits.continuation.quantity`).
    value : float
        Nondimensional value.
    text : str
        The user's text, for messages.
    unit : str

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking family members by amplitude, period or Jacobi constant).
    .. [2] The Astronomical Almanac (sidereal month and year; from memory); synodic month
       ``1/S = 1/P_month - 1/P_year`` (common practice).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits.targets import make_target
    >>> make_target(system("earth-moon"), "perilune", "3500km").quantity
    'approach2'
    """

    kind: str
    quantity: str
    value: float
    text: str
    unit: str = ""

    def to_dict(self) -> dict:
        return {"kind": self.kind, "quantity": self.quantity, "value": self.value, "text": self.text}


def synodic_period_days(p: int, q: int) -> float:
    """Period (days) of a p:q synodic resonance: q synodic months over p orbit periods.

    Parameters
    ----------
    p, q : int

    Returns
    -------
    float
        Days.

    Raises
    ------
    ZeroDivisionError
        When ``p`` is 0.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking family members by amplitude, period or Jacobi constant).
    .. [2] The Astronomical Almanac (sidereal month and year; from memory); synodic month
       ``1/S = 1/P_month - 1/P_year`` (common practice).

    Examples
    --------
    >>> from cr3bp.orbits.targets import synodic_period_days
    >>> round(synodic_period_days(9, 2), 4)
    6.5624
    """
    return q * SYNODIC_MONTH_DAYS / p


def parse_resonance(text: str) -> tuple[int, int]:
    """``"p:q"`` as two positive integers.

    Parameters
    ----------
    text : str

    Returns
    -------
    tuple of int

    Raises
    ------
    InputError
        Not two positive integers separated by a colon.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking family members by amplitude, period or Jacobi constant).
    .. [2] The Astronomical Almanac (sidereal month and year; from memory); synodic month
       ``1/S = 1/P_month - 1/P_year`` (common practice).

    Examples
    --------
    >>> from cr3bp.orbits.targets import parse_resonance
    >>> parse_resonance("9:2")
    (9, 2)
    """
    parts = str(text).split(":")
    if len(parts) != 2:
        raise InputError(f"resonance '{text}' is not p:q with two positive integers, e.g. 9:2")
    p, q = (whole_number(f"resonance '{text}' (p:q, e.g. 9:2): {w}", x, 1) for w, x in zip("pq", parts))
    return p, q


def make_target(system, kind: str, text) -> Target:
    """Turn a user target into a nondimensional :class:`Target`.

    E.g. ``("period", "6.5626d")``, ``("az", "12000km")``, ``("jacobi", "3.15")``,
    ``("resonance", "9:2")``.

    Parameters
    ----------
    system : System
    kind : str
        One of :data:`KINDS`.
    text : str
        The value with its unit.

    Returns
    -------
    Target

    Raises
    ------
    InputError
        Unknown kind, a value that must be positive and is not, a synodic resonance outside
        Earth-Moon.
    UnitError
        Malformed value or wrong unit (the message names the kind).

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking family members by amplitude, period or Jacobi constant).
    .. [2] The Astronomical Almanac (sidereal month and year; from memory); synodic month
       ``1/S = 1/P_month - 1/P_year`` (common practice).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits.targets import make_target
    >>> round(make_target(system("earth-moon"), "resonance", "9:2").value, 4)
    1.5112
    """
    try:
        t = _make(system, str(kind).strip().lower(), str(text).strip())
    except UnitError as e:
        raise UnitError(f"{str(kind).strip().lower()}: {e}") from None
    if t.kind in POSITIVE and not t.value > 0:
        raise InputError(f"{t.kind} = {t.text} must be positive")
    return t


def _make(system, kind, text):
    if kind == "period":
        return Target(kind, "period", units.time(text, system), text)
    if kind == "jacobi":
        v = finite_number("Jacobi constant", text)
        return Target(kind, "jacobi", v, text)
    if kind in ("ax", "ay", "az", "x"):
        if kind == "x":
            return Target(kind, "x", units.length(text, system, default_unit="LU"), text)
        return Target(kind, kind, units.length(text, system), text)
    if kind == "perilune":
        return Target(kind, "approach2", units.length(text, system), text)
    if kind == "approach1":
        return Target(kind, "approach1", units.length(text, system), text)
    if kind == "resonance":
        p, q = parse_resonance(text)
        if system.name != "earth-moon":
            raise InputError(f"synodic resonance is defined for earth-moon only (system '{system.name}')")
        T = synodic_period_days(p, q) * SECONDS_PER_DAY / system.time_s
        return Target(kind, "period", T, text)
    raise InputError(f"unknown target '{kind}'; allowed: {', '.join(ORBIT_TARGETS)}")


def describe_value(system, quantity: str, value: float) -> str:
    """A nondimensional family quantity in the user's units, for messages.

    Parameters
    ----------
    system : System
    quantity : str
    value : float

    Returns
    -------
    str

    Raises
    ------
    None

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking family members by amplitude, period or Jacobi constant).
    .. [2] The Astronomical Almanac (sidereal month and year; from memory); synodic month
       ``1/S = 1/P_month - 1/P_year`` (common practice).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits.targets import describe_value
    >>> describe_value(system("earth-moon"), "az", 0.03)
    '11532 km'
    """
    if system.dimensional:
        if quantity == "period":
            return f"{system.days(value):.6g} d"
        if quantity in ("ax", "ay", "az", "approach1", "approach2"):
            return f"{system.km(value):.6g} km"
    if quantity == "period":
        return f"{value:.8g} TU"
    if quantity in ("x", "ax", "ay", "az", "approach1", "approach2"):
        return f"{value:.8g} LU"
    return f"{value:.10g}"
