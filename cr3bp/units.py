"""Quantities with units for the edges of the program: ``"15000km"``, ``"6.56d"``, ``"450m/s"``.

Internally everything is nondimensional (see :mod:`cr3bp.systems`). This module is the one
place where text with a unit becomes a number in LU, TU or LU/TU.

Units understood (case-sensitive, optional space between number and unit):

=========  ==================================================
dimension  units
=========  ==================================================
length     ``m``, ``km``, ``Mm``, ``au``, ``LU``
time       ``s``, ``min``, ``h``, ``d``, ``yr`` (Julian year), ``TU``
velocity   ``m/s``, ``km/s``, ``VU`` (= ``LU/TU``)
=========  ==================================================
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from .constants import AU_KM, SECONDS_PER_DAY
from .errors import UnitError
from .errors import shown as _shown

# unit -> (dimension, factor to the SI-ish base: km, s, km/s); None factor = nondimensional
_UNITS = {
    "m": ("length", 1e-3), "km": ("length", 1.0), "Mm": ("length", 1e3), "au": ("length", AU_KM),
    "LU": ("length", None),
    "s": ("time", 1.0), "min": ("time", 60.0), "h": ("time", 3600.0), "d": ("time", SECONDS_PER_DAY),
    "yr": ("time", 365.25 * SECONDS_PER_DAY), "TU": ("time", None),
    "m/s": ("velocity", 1e-3), "km/s": ("velocity", 1.0), "VU": ("velocity", None),
    "LU/TU": ("velocity", None),
}
_NUMBER = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
_PATTERN = re.compile(rf"^\s*({_NUMBER})\s*([A-Za-z/]*)\s*$", re.ASCII)



@dataclass(frozen=True)
class Quantity:
    """A parsed number with its unit and dimension.

    Parameters
    ----------
    value : float
        The number as written.
    unit : str
        The unit as written (``"km"``), ``""`` for a bare number.
    dimension : str
        ``"length"``, ``"time"``, ``"velocity"`` or ``"none"``.

    References
    ----------
    .. [1] Bureau International des Poids et Mesures, *The International System of Units (SI)*,
       9th edition, 2019 (the units m, s, min, h, d; the Julian year of 365.25 d is the IAU's;
       from memory).
    .. [2] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, ch. 1 (the nondimensional
       units LU and TU; from memory).

    Examples
    --------
    >>> from cr3bp.units import parse
    >>> parse("450m/s").si()
    0.45
    """

    value: float
    unit: str
    dimension: str

    def nondim(self, system) -> float:
        """The value in LU, TU or LU/TU of ``system``."""
        if self.dimension == "none":
            return self.value
        factor = _UNITS[self.unit][1]
        if factor is None:
            return self.value
        system.require_dimensional(f"'{self.value}{self.unit}'")
        scale = {"length": system.length_km, "time": system.time_s,
                 "velocity": system.velocity_kms}[self.dimension]
        return self.value * factor / scale

    def si(self) -> float:
        """The value in km, s or km/s (raises for nondimensional units)."""
        factor = _UNITS.get(self.unit, (None, None))[1]
        if factor is None:
            raise UnitError(f"'{self.value}{self.unit}' is nondimensional; it needs a system to convert")
        return self.value * factor


def parse(text: str, dimension: str | None = None, default_unit: str | None = None) -> Quantity:
    """Parse ``"<number><unit>"``.

    Parameters
    ----------
    text : str
        E.g. ``"15000km"``, ``"6.56 d"``, ``"0.3TU"``, ``"450m/s"``.
    dimension : {"length", "time", "velocity"}, optional
        Required dimension; a unit of another dimension is an error.
    default_unit : str, optional
        Unit assumed when ``text`` is a bare number. Without it a bare number is an error
        when ``dimension`` is given (no silent guess of units).

    Returns
    -------
    Quantity

    Raises
    ------
    UnitError
        Malformed text, an unknown unit, a non-finite number or the wrong dimension.

    References
    ----------
    .. [1] Bureau International des Poids et Mesures, *The International System of Units (SI)*,
       9th edition, 2019 (the units m, s, min, h, d; the Julian year of 365.25 d is the IAU's;
       from memory).
    .. [2] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, ch. 1 (the nondimensional
       units LU and TU; from memory).

    Examples
    --------
    >>> from cr3bp.units import parse
    >>> parse("6.56 d")
    Quantity(value=6.56, unit='d', dimension='time')
    >>> parse("3km", "time")
    Traceback (most recent call last):
    ...
    cr3bp.errors.UnitError: '3km' is a length, but a time is needed (s, min, h, d, yr, TU)
    """
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        try:
            text = repr(float(text))
        except OverflowError:
            raise UnitError("an integer too large to be a quantity was given") from None
    if not isinstance(text, str):
        raise UnitError(f"{_shown(repr(text))} is not a quantity; expected text like '15000km'")
    m = _PATTERN.match(text)
    shown = _shown(text)
    if not m:
        raise UnitError(f"'{shown}' is not a number with a unit; expected e.g. '15000km', '6.56d', '450m/s'")
    value = float(m.group(1))
    unit = m.group(2)
    if not math.isfinite(value):
        raise UnitError(f"'{shown}' is not finite")
    if unit == "":
        if default_unit is None:
            if dimension is not None:
                raise UnitError(f"'{shown}' has no unit; give one of {', '.join(units_of(dimension))}")
            return Quantity(value, "", "none")
        unit = default_unit
    if unit not in _UNITS:
        allowed = units_of(dimension) if dimension else list(_UNITS)
        raise UnitError(f"unknown unit '{unit}' in '{shown}'; allowed: {', '.join(allowed)}")
    dim = _UNITS[unit][0]
    if dimension is not None and dim != dimension:
        raise UnitError(f"'{shown}' is a {dim}, but a {dimension} is needed ({', '.join(units_of(dimension))})")
    return Quantity(value, unit, dim)


def units_of(dimension: str) -> list[str]:
    """The units understood for a dimension, in table order.

    Parameters
    ----------
    dimension : str
        ``"length"``, ``"time"`` or ``"velocity"``.

    Returns
    -------
    list of str
        Empty for an unknown dimension.

    Raises
    ------
    None

    References
    ----------
    .. [1] Bureau International des Poids et Mesures, *The International System of Units (SI)*,
       9th edition, 2019 (the units m, s, min, h, d; the Julian year of 365.25 d is the IAU's;
       from memory).
    .. [2] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, ch. 1 (the nondimensional
       units LU and TU; from memory).

    Examples
    --------
    >>> from cr3bp.units import units_of
    >>> units_of("velocity")
    ['m/s', 'km/s', 'VU', 'LU/TU']
    """
    return [u for u, (d, _) in _UNITS.items() if d == dimension]


def length(text, system, default_unit=None) -> float:
    """Parse a length and return it in LU of ``system``.

    Parameters
    ----------
    text : str or float
        A length with its unit (see :func:`parse`).
    system : System
        Gives the units; must be dimensional unless the unit is LU.
    default_unit : str, optional
        Unit of a bare number (none: a bare number is refused).

    Returns
    -------
    float
        The length in LU.

    Raises
    ------
    UnitError
        Malformed text, unknown unit or wrong dimension.
    InputError
        A dimensional unit with a system that has no dimensional units.

    References
    ----------
    .. [1] Bureau International des Poids et Mesures, *The International System of Units (SI)*,
       9th edition, 2019 (the units m, s, min, h, d; the Julian year of 365.25 d is the IAU's;
       from memory).
    .. [2] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, ch. 1 (the nondimensional
       units LU and TU; from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.units import length
    >>> length("384400km", system("earth-moon"))
    1.0
    """
    return parse(text, "length", default_unit).nondim(system)


def time(text, system, default_unit=None) -> float:
    """Parse a time and return it in TU of ``system``.

    Parameters
    ----------
    text : str or float
        A time with its unit (see :func:`parse`).
    system : System
        Gives the units; must be dimensional unless the unit is TU.
    default_unit : str, optional
        Unit of a bare number (none: a bare number is refused).

    Returns
    -------
    float
        The time in TU.

    Raises
    ------
    UnitError
        Malformed text, unknown unit or wrong dimension.
    InputError
        A dimensional unit with a system that has no dimensional units.

    References
    ----------
    .. [1] Bureau International des Poids et Mesures, *The International System of Units (SI)*,
       9th edition, 2019 (the units m, s, min, h, d; the Julian year of 365.25 d is the IAU's;
       from memory).
    .. [2] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, ch. 1 (the nondimensional
       units LU and TU; from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.units import time
    >>> round(time("1d", system("earth-moon")), 6)
    0.230283
    """
    return parse(text, "time", default_unit).nondim(system)


def velocity(text, system, default_unit=None) -> float:
    """Parse a velocity and return it in LU/TU of ``system``.

    Parameters
    ----------
    text : str or float
        A velocity with its unit (see :func:`parse`).
    system : System
        Gives the units; must be dimensional unless the unit is LU/TU.
    default_unit : str, optional
        Unit of a bare number (none: a bare number is refused).

    Returns
    -------
    float
        The velocity in LU/TU.

    Raises
    ------
    UnitError
        Malformed text, unknown unit or wrong dimension.
    InputError
        A dimensional unit with a system that has no dimensional units.

    References
    ----------
    .. [1] Bureau International des Poids et Mesures, *The International System of Units (SI)*,
       9th edition, 2019 (the units m, s, min, h, d; the Julian year of 365.25 d is the IAU's;
       from memory).
    .. [2] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, ch. 1 (the nondimensional
       units LU and TU; from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.units import velocity
    >>> round(velocity("1km/s", system("earth-moon")), 6)
    0.976041
    """
    return parse(text, "velocity", default_unit).nondim(system)
