"""Primary pairs and their units: the ``System`` every computation is done in.

Conventions (the one place they are written down; everything else refers here):

* Nondimensional units: length unit LU = distance between the primaries, time unit
  TU = 1 / mean motion = sqrt(LU^3 / (GM1 + GM2)), mass unit = total mass, so G = 1.
* Barycentric rotating frame, state ``[x, y, z, vx, vy, vz]``; the larger primary sits at
  ``x = -mu``, the smaller at ``x = 1 - mu``; ``mu = GM2 / (GM1 + GM2)``.
* Pseudo-potential ``Omega = (x^2 + y^2)/2 + (1 - mu)/r1 + mu/r2`` and Jacobi constant
  ``C = 2 Omega - v^2`` (Szebehely, *Theory of Orbits*, 1967, ch. 1 and 4).
"""

from __future__ import annotations

import difflib
import functools
import math
import tomllib
from dataclasses import dataclass, field
from importlib import resources

from .constants import SECONDS_PER_DAY
from .errors import InputError, UnknownSystemError, shown


@dataclass(frozen=True)
class Body:
    """A primary: name, GM, mean radius and where the numbers come from.

    Parameters
    ----------
    name : str
        Body name as tabulated in ``data/systems.toml`` (``"moon"``).
    gm_km3_s2 : float
        Gravitational parameter GM (km^3/s^2).
    radius_km : float
        Mean radius (km).
    source : str
        Where GM and radius come from (the data file names its published source).

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, ch. 1 (the nondimensional units and the rotating frame; from memory).

    Examples
    --------
    >>> from cr3bp.systems import body
    >>> body("moon").radius_km
    1737.4
    """

    name: str
    gm_km3_s2: float
    radius_km: float
    source: str = ""


@dataclass(frozen=True)
class System:
    """A CR3BP system: mass ratio and the units that turn nondimensional values into km and s.

    Build one with :func:`system`. A system defined by ``mu`` alone has no dimensional units
    unless ``length_km`` and ``time_s`` are given; then ``dimensional`` is False and every
    dimensional conversion raises :class:`~cr3bp.errors.InputError`.

    Parameters
    ----------
    name : str
        System name (``"earth-moon"``) or ``"custom"``.
    mu : float
        Mass ratio ``GM2 / (GM1 + GM2)`` in (0, 0.5].
    length_km : float
        Length unit LU, the distance between the primaries (km); NaN when not dimensional.
    time_s : float
        Time unit TU, ``sqrt(LU^3 / (GM1 + GM2))`` (s); NaN when not dimensional.
    primary, secondary : Body, optional
        The larger and the smaller primary.
    source : str
        Where the distance comes from.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, ch. 1 (the nondimensional units and the rotating frame; from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> em = system("earth-moon")
    >>> em.dimensional, round(em.km(1.0))
    (True, 384400)
    """

    name: str
    mu: float
    length_km: float = float("nan")
    time_s: float = float("nan")
    primary: Body | None = None
    secondary: Body | None = None
    source: str = ""
    _extra: dict = field(default_factory=dict, compare=False, repr=False)

    # ---- derived units -------------------------------------------------------------
    @property
    def dimensional(self) -> bool:
        return math.isfinite(self.length_km) and math.isfinite(self.time_s)

    @property
    def velocity_kms(self) -> float:
        """Velocity unit, km/s."""
        return self.length_km / self.time_s

    @property
    def time_days(self) -> float:
        return self.time_s / SECONDS_PER_DAY

    @property
    def period_days(self) -> float:
        """Sidereal period of the primaries' mutual orbit, 2 pi TU, in days."""
        return 2.0 * math.pi * self.time_days

    @property
    def names(self) -> tuple[str, str]:
        """Display names of the larger and smaller primary."""
        p = self.primary.name if self.primary else "primary 1"
        s = self.secondary.name if self.secondary else "primary 2"
        return p, s

    @functools.cached_property
    def radii(self) -> tuple[float, float]:
        """Mean radii of the primaries, nondimensional (0 when unknown); computed once (it is
        read before every propagation)."""
        if not (self.primary and self.secondary and self.dimensional):
            return 0.0, 0.0
        return self.primary.radius_km / self.length_km, self.secondary.radius_km / self.length_km

    @property
    def positions(self) -> tuple[float, float]:
        """x of the larger and smaller primary."""
        return -self.mu, 1.0 - self.mu

    def require_dimensional(self, what: str = "this value") -> None:
        if not self.dimensional:
            raise InputError(
                f"system '{self.name}' has no dimensional units, so {what} cannot be given in "
                "km or days; give --length-km and --time-s, or use nondimensional LU/TU"
            )

    # ---- conversions -----------------------------------------------------------------
    def km(self, length_lu):
        self.require_dimensional("a length")
        return length_lu * self.length_km

    def days(self, time_tu):
        self.require_dimensional("a time")
        return time_tu * self.time_days

    def mps(self, velocity_vu):
        self.require_dimensional("a velocity")
        return velocity_vu * self.velocity_kms * 1000.0

    def to_dict(self) -> dict:
        d = {
            "name": self.name,
            "mu": self.mu,
            "length_km": self.length_km if self.dimensional else None,
            "time_s": self.time_s if self.dimensional else None,
            "time_days": self.time_days if self.dimensional else None,
            "velocity_kms": self.velocity_kms if self.dimensional else None,
            "primary": self.primary.name if self.primary else None,
            "secondary": self.secondary.name if self.secondary else None,
            "source": self.source,
        }
        if self.primary and self.secondary:
            d["primary_gm_km3_s2"] = self.primary.gm_km3_s2
            d["secondary_gm_km3_s2"] = self.secondary.gm_km3_s2
            d["primary_radius_km"] = self.primary.radius_km
            d["secondary_radius_km"] = self.secondary.radius_km
        return d


def _table() -> dict:
    text = resources.files("cr3bp.data").joinpath("systems.toml").read_text(encoding="utf-8")
    return tomllib.loads(text)


_TABLE = None


def _data() -> dict:
    global _TABLE
    if _TABLE is None:
        _TABLE = _table()
    return _TABLE


def body(name: str) -> Body:
    """A body of ``data/systems.toml`` by name.

    Parameters
    ----------
    name : str
        Body name (``"earth"``, ``"moon"``, ...).

    Returns
    -------
    Body

    Raises
    ------
    InputError
        ``name`` is not tabulated (the message suggests the nearest names).

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, ch. 1 (the nondimensional units and the rotating frame; from memory).

    Examples
    --------
    >>> from cr3bp.systems import body
    >>> round(body("moon").gm_km3_s2)
    4903
    """
    bodies = _data()["bodies"]
    if name not in bodies:
        near = difflib.get_close_matches(name, list(bodies), n=3)
        hint = f"; did you mean {', '.join(near)}?" if near else ""
        raise InputError(f"unknown body '{shown(name)}'{hint}")
    b = bodies[name]
    return Body(name, float(b["gm_km3_s2"]), float(b["radius_km"]), b.get("source", ""))


def system_names() -> list[str]:
    """Names of the tabulated systems, in table order.

    Returns
    -------
    list of str

    Raises
    ------
    None

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, ch. 1 (the nondimensional units and the rotating frame; from memory).

    Examples
    --------
    >>> from cr3bp.systems import system_names
    >>> "earth-moon" in system_names()
    True
    """
    return list(_data()["systems"])


def from_gms(gm1: float, gm2: float, distance_km: float, name: str = "custom",
             primary: Body | None = None, secondary: Body | None = None, source: str = "") -> System:
    """A system from two GMs and the distance between the primaries.

    ``mu = GM2 / (GM1 + GM2)``, ``LU = distance``, ``TU = sqrt(LU^3 / (GM1 + GM2))``.

    Parameters
    ----------
    gm1, gm2 : float
        Gravitational parameters of the larger and the smaller primary (km^3/s^2).
    distance_km : float
        Distance between the primaries (km).
    name : str
        Name of the system.
    primary, secondary : Body, optional
    source : str
        Where the numbers come from.

    Returns
    -------
    System

    Raises
    ------
    InputError
        A value that is not a positive finite number, or ``gm2 > gm1``.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, ch. 1 (the nondimensional units and the rotating frame; from memory).

    Examples
    --------
    >>> from cr3bp.systems import from_gms
    >>> s = from_gms(1000.0, 10.0, 100000.0)      # GMs (km^3/s^2) and distance (km) of a made-up pair
    >>> round(s.mu, 6), round(s.time_s)
    (0.009901, 995037)
    """
    for label, v in (("gm1", gm1), ("gm2", gm2), ("distance_km", distance_km)):
        if not (isinstance(v, (int, float)) and math.isfinite(v) and v > 0):
            raise InputError(f"{label} = {v!r} must be a positive finite number")
    if gm2 > gm1:
        raise InputError(f"gm2 = {gm2} exceeds gm1 = {gm1}: the larger primary comes first")
    mu = gm2 / (gm1 + gm2)
    time_s = math.sqrt(distance_km**3 / (gm1 + gm2))
    return System(name, mu, float(distance_km), time_s, primary, secondary, source)


def from_mu(mu: float, length_km: float | None = None, time_s: float | None = None,
            name: str = "custom") -> System:
    """A system from the mass ratio alone, optionally with dimensional units.

    Parameters
    ----------
    mu : float
        Mass ratio in (0, 0.5].
    length_km, time_s : float, optional
        Both or neither: the dimensional units.
    name : str

    Returns
    -------
    System

    Raises
    ------
    InputError
        ``mu`` out of range, one unit without the other, or a unit that is not positive.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, ch. 1 (the nondimensional units and the rotating frame; from memory).

    Examples
    --------
    >>> from cr3bp.systems import from_mu
    >>> from_mu(0.01).dimensional
    False
    """
    check_mu(mu)
    if (length_km is None) != (time_s is None):
        raise InputError("give both length_km and time_s for a custom system, or neither")
    if length_km is not None:
        for label, v in (("length_km", length_km), ("time_s", time_s)):
            if not (math.isfinite(v) and v > 0):
                raise InputError(f"{label} = {v!r} must be a positive finite number")
        return System(name, float(mu), float(length_km), float(time_s))
    return System(name, float(mu))


def check_mu(mu) -> None:
    """Refuse a mass ratio outside (0, 0.5].

    Parameters
    ----------
    mu : float
        Mass ratio (the smaller primary's share of the total mass).

    Returns
    -------
    None

    Raises
    ------
    InputError
        Naming the value when it is not a number in (0, 0.5].

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, ch. 1 (the nondimensional units and the rotating frame; from memory).

    Examples
    --------
    >>> from cr3bp.systems import check_mu
    >>> check_mu(0.6)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: mu = 0.6 is outside the allowed range (0, 0.5]
    """
    try:
        ok = math.isfinite(float(mu)) and 0.0 < float(mu) <= 0.5
    except (TypeError, ValueError):
        ok = False
    if not ok:
        raise InputError(f"mu = {mu!r} is outside the allowed range (0, 0.5]")


def system(name: str | None = None, *, mu: float | None = None, length_km: float | None = None,
           time_s: float | None = None) -> System:
    """The CR3BP system ``name`` from ``data/systems.toml``, or a custom one from ``mu``.

    Parameters
    ----------
    name : str, optional
        A tabulated system, e.g. ``"earth-moon"`` (see :func:`system_names`).
    mu : float, optional
        Mass ratio in (0, 0.5] for a custom system (instead of ``name``).
    length_km, time_s : float, optional
        Dimensional units of a custom system.

    Returns
    -------
    System

    Raises
    ------
    UnknownSystemError
        ``name`` is not tabulated (the message suggests the nearest names).
    InputError
        ``mu`` is out of range, or both or neither of ``name`` and ``mu`` are given.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, ch. 1 (the nondimensional units and the rotating frame; from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> round(system("earth-moon").mu, 6)
    0.012151
    """
    if (name is None) == (mu is None):
        raise InputError("give a system name or mu, not both and not neither")
    if mu is not None:
        return from_mu(mu, length_km, time_s)
    key = name.strip().lower().replace("_", "-").replace(" ", "-")
    systems = _data()["systems"]
    if key not in systems:
        near = difflib.get_close_matches(key, list(systems), n=3, cutoff=0.4)
        hint = f"; did you mean {', '.join(near)}?" if near else f"; known: {', '.join(systems)}"
        raise UnknownSystemError(f"unknown system '{shown(name)}'{hint}")
    row = systems[key]
    b1, b2 = body(row["primary"]), body(row["secondary"])
    return from_gms(b1.gm_km3_s2, b2.gm_km3_s2, float(row["distance_km"]), name=key,
                    primary=b1, secondary=b2, source=row.get("source", ""))
