"""Input validation shared by the whole library (one validator, not one per module).

Each function takes the value as the user gave it (a number, or text from a command line or a
file), returns the cleaned value (a float, an int, an array, a path as text) and raises a typed
error (:mod:`cr3bp.errors`) naming the value and what is allowed; callers use what it returns.
The shape follows the small ``validate_*`` helpers of scipy's ``integrate/_ivp/common.py``
(Virtanen et al., Nature Methods 17, 2020: SciPy 1.0), shared by every solver there.
"""

from __future__ import annotations

import math
import os
import re
from datetime import datetime
from pathlib import Path

import numpy as np

from . import units
from .errors import InputError, StateError, shown, UnitError
from .vocabulary import DEPARTURE_ALTITUDE_KM, DEPARTURE_PATHS

RTOL_RANGE = (1e-14, 1e-3)


def tolerance(name: str, value) -> float:
    """An integration tolerance in [1e-14, 1e-3].

    Parameters
    ----------
    name : str
        What the value is, for the refusal.
    value : float or str
        The tolerance.

    Returns
    -------
    float
        The tolerance.

    Raises
    ------
    InputError
        Not a number in the range.

    Examples
    --------
    >>> tolerance("--rtol", "1e-10")
    1e-10

    References
    ----------
    Hairer, E., Nørsett, S. P. & Wanner, G., "Solving Ordinary Differential Equations I",
    2nd ed., Springer (1993), sec. II.4 (tolerances of embedded methods).
    """
    lo, hi = RTOL_RANGE
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name} = {value!r} is not a number; allowed range [{lo:g}, {hi:g}]") from None
    if not (math.isfinite(v) and lo <= v <= hi):
        raise InputError(f"{name} = {value!r} is outside the allowed range [{lo:g}, {hi:g}]")
    return v


def finite_time(name: str, value) -> float:
    """A finite number (a time, TU; negative values run backward).

    Parameters
    ----------
    name : str
        What the value is, for the refusal.
    value : float or str
        The time.

    Returns
    -------
    float
        The time.

    Raises
    ------
    InputError
        Not a finite number.

    Examples
    --------
    >>> finite_time("--time", "-2.5")
    -2.5

    References
    ----------
    IEEE Std 754-2019, "Standard for Floating-Point Arithmetic" (finite values).
    """
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name} = {value!r} is not a number") from None
    if not math.isfinite(v):
        raise InputError(f"{name} = {value!r} must be finite")
    return v


def state(system, value, name: str = "state", allow_inside: bool = False) -> np.ndarray:
    """A finite 6-vector (nondimensional) not inside either primary's mean radius.

    Parameters
    ----------
    system : System
        The system (its primaries' radii).
    value : array_like
        Six numbers x, y, z, vx, vy, vz.
    name : str, optional
        What the value is, for the refusal.
    allow_inside : bool, optional
        Skip the check against the primaries' radii.

    Returns
    -------
    numpy.ndarray, shape (6,)
        The state.

    Raises
    ------
    StateError
        Not six finite numbers, or inside a primary.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> state(system("earth-moon"), [0.8, 0, 0, 0, 0.1, 0]).tolist()
    [0.8, 0.0, 0.0, 0.0, 0.1, 0.0]

    References
    ----------
    Szebehely, V., "Theory of Orbits", Academic Press (1967) (the rotating frame and its units).
    """
    try:
        s = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise StateError(f"{name} {value!r} is not six numbers x,y,z,vx,vy,vz") from None
    if s.shape != (6,):
        raise StateError(f"{name} has shape {s.shape}; expected six numbers x,y,z,vx,vy,vz")
    # fast path (called before every propagation): 0 * v is 0 for a finite v, nan otherwise
    x, y, z, vx, vy, vz = s.tolist()
    if 0.0 * x + 0.0 * y + 0.0 * z + 0.0 * vx + 0.0 * vy + 0.0 * vz != 0.0:
        raise StateError(f"{name} {s.tolist()} has a non-finite entry")
    if not allow_inside:
        mu = system.mu
        r_1, r_2 = system.radii
        a, b = x + mu, x - 1 + mu       # products, not ** 2: 1e300 squares to inf, no OverflowError
        if not (math.sqrt(a * a + y * y + z * z) > r_1 and math.sqrt(b * b + y * y + z * z) > r_2):
            _outside(system, s[None, :], name)      # the refusal (or the edge cases) there
    return s


def states(system, value, name: str = "states") -> np.ndarray:
    """A finite (N, 6) array of states outside both primaries.

    Parameters
    ----------
    system : System
        The system.
    value : array_like
        The states.
    name : str, optional
        What the value is, for the refusal.

    Returns
    -------
    numpy.ndarray, shape (N, 6)
        The states.

    Raises
    ------
    StateError
        Not (N, 6) finite numbers, or a state inside a primary.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> states(system("earth-moon"), [[0.8, 0, 0, 0, 0.1, 0]]).shape
    (1, 6)

    References
    ----------
    Szebehely, V., "Theory of Orbits", Academic Press (1967).
    """
    try:
        s = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise StateError(f"{name} is not an (N, 6) array of numbers") from None
    if s.ndim != 2 or s.shape[1] != 6 or s.shape[0] == 0:
        raise StateError(f"{name} has shape {s.shape}; expected (N, 6) with N >= 1")
    bad = ~np.all(np.isfinite(s), axis=1)
    if bad.any():
        raise StateError(f"{name} row {int(np.argmax(bad))} has a non-finite entry")
    _outside(system, s, name)
    return np.ascontiguousarray(s)


def _outside(system, s, name):
    mu = system.mu
    r_1, r_2 = system.radii
    if s.shape[0] == 1:  # fast path for one state (called before every propagation)
        x, y, z = float(s[0, 0]), float(s[0, 1]), float(s[0, 2])
        a, b = x + mu, x - 1 + mu       # products, not ** 2 (which raises OverflowError at 1e300)
        d1 = math.sqrt(a * a + y * y + z * z)
        d2 = math.sqrt(b * b + y * y + z * z)
        if d1 > r_1 and d2 > r_2:
            return
    d1 = np.sqrt((s[:, 0] + mu) ** 2 + s[:, 1] ** 2 + s[:, 2] ** 2)
    d2 = np.sqrt((s[:, 0] - 1 + mu) ** 2 + s[:, 1] ** 2 + s[:, 2] ** 2)
    names = system.names
    for d, r, who in ((d1, r_1, names[0]), (d2, r_2, names[1])):
        inside = d <= max(r, 0.0) if r > 0 else d == 0.0
        if np.any(inside):
            i = int(np.argmax(inside))
            where = f" row {i}" if s.shape[0] > 1 else ""
            if r > 0 and system.dimensional:
                raise StateError(
                    f"{name}{where} lies inside {who}: {d[i] * system.length_km:.1f} km from its "
                    f"centre, radius {r * system.length_km:.1f} km")
            raise StateError(f"{name}{where} lies at the centre of {who}")


# ---- values given as text (command-line options): one parser per kind of value -------------
#
# Each returns the value or raises InputError naming the option and the text the user gave
# (escaped by errors.shown, so the message stays one line), and what is allowed.

def _show(text) -> str:
    return shown(text)


def finite_number(name: str, text) -> float:
    """A finite float (``nan``, ``inf``, ``1e999`` refused).

    Parameters
    ----------
    name : str
        What the value is, for the refusal.
    text : str or float
        The value.

    Returns
    -------
    float
        The number.

    Raises
    ------
    InputError
        Not a finite number.

    Examples
    --------
    >>> finite_number("--mu", "0.0121")
    0.0121

    References
    ----------
    IEEE Std 754-2019, "Standard for Floating-Point Arithmetic" (finite values).
    """
    try:
        v = float(str(text).strip())
    except (TypeError, ValueError):
        raise InputError(f"{name} '{_show(text)}' is not a number") from None
    if not math.isfinite(v):
        raise InputError(f"{name} '{_show(text)}' is not a finite number") from None
    return v


def number_in(name: str, text, lo: float | None = None, hi: float | None = None, *,
              open_lo: bool = False, open_hi: bool = False) -> float:
    """A finite float in the interval [lo, hi] (open at an end when asked).

    Parameters
    ----------
    name : str
        What the value is, for the refusal.
    text : str or float
        The value.
    lo, hi : float, optional
        The bounds (None: unbounded).
    open_lo, open_hi : bool, optional
        Exclude that end.

    Returns
    -------
    float
        The number.

    Raises
    ------
    InputError
        Not a finite number in the interval.

    Examples
    --------
    >>> number_in("--mu", "0.3", 0.0, 0.5)
    0.3

    References
    ----------
    IEEE Std 754-2019, "Standard for Floating-Point Arithmetic" (finite values).
    """
    v = finite_number(name, text)
    bad = (lo is not None and (v <= lo if open_lo else v < lo)) or \
          (hi is not None and (v >= hi if open_hi else v > hi))
    if bad:
        a = "-inf" if lo is None else f"{lo:g}"
        b = "inf" if hi is None else f"{hi:g}"
        raise InputError(f"{name} '{_show(text)}' is outside the allowed range "
                         f"{'(' if open_lo or lo is None else '['}{a}, {b}{')' if open_hi or hi is None else ']'}")
    return v


def numbers(name: str, value, count: int, what: str) -> tuple:
    """``count`` finite floats, from comma-separated text (``"1,2,3"``) or a sequence.

    Parameters
    ----------
    name : str
        What the value is, for the refusal.
    value : str or sequence
        The numbers.
    count : int
        How many.
    what : str
        Names them in a refusal (e.g. ``"INC,NODE,ARGLAT (degrees)"``).

    Returns
    -------
    tuple of float
        The numbers.

    Raises
    ------
    InputError
        Another count, or a value that is not a finite number.

    Examples
    --------
    >>> numbers("--orientation", "5,10,20", 3, "degrees")
    (5.0, 10.0, 20.0)

    References
    ----------
    IEEE Std 754-2019, "Standard for Floating-Point Arithmetic" (finite values).
    """
    parts = str(value).split(",") if isinstance(value, str) else value
    try:
        v = tuple(float(str(x).strip()) for x in parts)
    except (TypeError, ValueError):
        raise InputError(f"{name} '{_show(value)}' is not {count} numbers {what}") from None
    if len(v) != count:
        raise InputError(f"{name} '{_show(value)}' has {len(v)} numbers; expected {count}: {what}")
    if not all(math.isfinite(x) for x in v):
        raise InputError(f"{name} '{_show(value)}' must be {count} finite numbers {what}")
    return v


def number_value(name: str, value, lo: float | None = None, hi: float | None = None) -> float:
    """A finite number given as a number (a TOML value, a keyword argument), in [lo, hi].

    Text (``"5"``) and booleans are refused: a file or a call that means a number writes one.

    Parameters
    ----------
    name : str
        What the value is, with its unit (``"stations.north.latitude_deg"``), for the refusal.
    value : int or float
        The value.
    lo, hi : float, optional
        The bounds, inclusive (None: unbounded).

    Returns
    -------
    float
        The number.

    Raises
    ------
    InputError
        Not a number, not finite, or outside [lo, hi].

    Examples
    --------
    >>> number_value("min_elevation_deg", 10, -5, 90)
    10.0
    >>> number_value("min_elevation_deg", "10", -5, 90)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: min_elevation_deg = '10'; allowed a number in [-5, 90]

    References
    ----------
    IEEE Std 754-2019, "Standard for Floating-Point Arithmetic" (finite values).
    """
    a = "-inf" if lo is None else f"{lo:g}"
    b = "inf" if hi is None else f"{hi:g}"
    allowed = f"allowed a number in [{a}, {b}]"
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)):
        raise InputError(f"{name} = {_show(repr(value))}; {allowed}")
    v = float(value)
    if not math.isfinite(v) or (lo is not None and v < lo) or (hi is not None and v > hi):
        raise InputError(f"{name} = {_show(repr(value))}; {allowed}")
    return v


#: Angle units of :func:`angle_deg` and their size in degrees.
ANGLE_UNITS_DEG = {"deg": 1.0, "rev": 360.0, "rad": 180.0 / math.pi}


def angle_deg(name: str, text) -> float:
    """An angle as text with its unit (``120deg``, ``0.25rev``, ``2.1rad``; a bare number is
    degrees) -> degrees, finite, not wrapped.

    Parameters
    ----------
    name : str
        What the value is, for the refusal.
    text : str or float
        The angle.

    Returns
    -------
    float
        Degrees.

    Raises
    ------
    InputError
        Text that is not an angle, or not finite.

    Examples
    --------
    >>> angle_deg("--phase", "0.25rev"), angle_deg("--phase", "-90")
    (90.0, -90.0)

    References
    ----------
    ISO 80000-3:2019, "Quantities and units, Part 3: Space and time" (plane angle: radian,
    degree, revolution).
    """
    s = str(text).strip().lower()
    scale = 1.0
    for suffix, k in ANGLE_UNITS_DEG.items():
        if s.endswith(suffix):
            s, scale = s[: -len(suffix)].strip(), k
            break
    try:
        v = float(s) * scale
    except ValueError:
        raise InputError(f"{name} '{_show(text)}' is not an angle such as 120deg, 0.25rev or 2.1rad") from None
    if not math.isfinite(v):
        raise InputError(f"{name} '{_show(text)}' is not finite")
    return v


def positive_number(name: str, text) -> float:
    """A finite float > 0.

    Parameters
    ----------
    name : str
        What the value is, for the refusal.
    text : str or float
        The value.

    Returns
    -------
    float
        The number.

    Raises
    ------
    InputError
        Not a positive finite number.

    Examples
    --------
    >>> positive_number("--step", "0.5")
    0.5

    References
    ----------
    IEEE Std 754-2019, "Standard for Floating-Point Arithmetic" (finite values).
    """
    v = finite_number(name, text)
    if not v > 0:
        raise InputError(f"{name} '{_show(text)}' must be positive")
    return v


def whole_number(name: str, text, lo: int, hi: int | None = None) -> int:
    """A whole number in lo..hi (``hi`` None: no upper end; ``3.0``, ``1e3``, ``nan`` refused:
    no rounding). Python and numpy integers are taken as they are.

    Parameters
    ----------
    name : str
        What the value is, for the refusal.
    text : str or int
        The value.
    lo : int
        The least allowed (inclusive).
    hi : int or None
        The greatest allowed (inclusive); None: no upper end.

    Returns
    -------
    int
        The number.

    Raises
    ------
    InputError
        Not a whole number in the range.

    Examples
    --------
    >>> whole_number("--points", "12", 1, 100)
    12

    References
    ----------
    Common practice (counts are whole numbers; no silent rounding).
    """
    allowed = f"{lo}..{hi}" if hi is not None else f"{lo} or more"
    if isinstance(text, bool):
        raise InputError(f"{name} {text!r} is not a whole number; allowed {allowed}")
    if isinstance(text, (int, np.integer)):
        v = int(text)
    else:
        t = str(text).strip()
        if not t.lstrip("+-").isdigit() or len(t) > 12:
            raise InputError(f"{name} '{_show(text)}' is not a whole number; allowed {allowed}")
        v = int(t)
    if hi is None and v < lo:
        raise InputError(f"{name} {v} is too small; allowed {allowed}")
    if v < lo or (hi is not None and v > hi):
        raise InputError(f"{name} {v} is outside the allowed range {allowed}")
    return v


#: Most worker processes a leg computation may be given (``--workers``, ``settings.workers``).
MAX_WORKERS = 256


def workers(name: str, text) -> int:
    """A count of worker processes, 1..MAX_WORKERS (one parser for every ``--workers``).

    Parameters
    ----------
    name : str
        What the value is, for the refusal.
    text : str or int
        The value.

    Returns
    -------
    int
        The count.

    Raises
    ------
    InputError
        Not a whole number in 1..MAX_WORKERS.

    Examples
    --------
    >>> workers("--workers", "2")
    2

    References
    ----------
    Common practice (a bounded pool of processes).
    """
    return whole_number(name, text, 1, MAX_WORKERS)


def quantity(name: str, text, dimension: str, system=None, *, sign: str = "any",
             default_unit: str | None = None) -> float:
    """A length, time or velocity with its unit (no unit guessed unless ``default_unit``).

    Returns the value in LU, TU or LU/TU of ``system`` (or in km, s, km/s when ``system`` is None).
    ``sign``: "any", "positive" (> 0) or "nonnegative" (>= 0); a refusal names the text the user
    gave, in the user's unit.

    Parameters
    ----------
    name : str
        What the value is, for the refusal.
    text : str or float
        The quantity with its unit (``"12000km"``, ``"6.5d"``, ``"1500m/s"``).
    dimension : {"length", "time", "velocity"}
        What it must be.
    system : System, optional
        Converts to its units.
    sign : {"any", "positive", "nonnegative"}, optional
        The sign allowed.
    default_unit : str, optional
        The unit of a bare number.

    Returns
    -------
    float
        LU, TU or LU/TU (km, s, km/s without a system).

    Raises
    ------
    InputError
        No unit, a unit of another dimension, a value of the wrong sign.

    Examples
    --------
    >>> quantity("--altitude", "200km", "length")
    200.0

    References
    ----------
    BIPM, "The International System of Units (SI)", 9th ed. (2019); ISO 80000-3:2019.
    """
    try:
        q = units.parse(text, dimension, default_unit)
        v = q.nondim(system) if system is not None else q.si()
    except UnitError as e:
        raise UnitError(f"{name}: {e}") from None
    if sign == "positive" and not q.value > 0:
        raise InputError(f"{name} '{_show(text)}' must be positive")
    if sign == "nonnegative" and not q.value >= 0:
        raise InputError(f"{name} '{_show(text)}' must not be negative")
    return float(v)


def parking_altitude_km(body: str, altitude_km: float, path: str | None = None) -> float:
    """The altitude of a parking orbit about ``body``, checked for what will be asked of it.

    An Earth parking orbit must be at least 100 km up (lower, the atmosphere ends an orbit at
    once: common practice); one a departure path leaves (``path`` one of
    :data:`cr3bp.vocabulary.DEPARTURE_PATHS`) at most 50 000 km
    (:data:`cr3bp.vocabulary.DEPARTURE_ALTITUDE_KM`). Other bodies: any positive altitude.

    Parameters
    ----------
    body : str
        The primary's name, lower case (``"earth"``, ``"moon"``, ...).
    altitude_km : float
        Altitude above the body's mean radius, km.
    path : str or None
        The departure path the orbit is left by; None or ``"auto"``: the graph's choice.

    Returns
    -------
    float
        ``altitude_km``.

    Raises
    ------
    InputError
        Not positive, an Earth parking orbit below 100 km, or above 50 000 km for a departure path.

    Examples
    --------
    >>> from cr3bp.validate import parking_altitude_km
    >>> parking_altitude_km("earth", 200.0, "direct")
    200.0
    >>> parking_altitude_km("moon", 20.0)
    20.0
    >>> parking_altitude_km("earth", 60.0)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: Earth parking orbit at 60 km: below 100 km no orbit lasts; allowed: 100 km and up

    References
    ----------
    Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed., 2013, ch. 8 (atmospheric
    drag; from memory): below about 100-150 km a satellite re-enters within hours to days.
    """
    alt = float(altitude_km)
    lo, hi = DEPARTURE_ALTITUDE_KM
    if not (math.isfinite(alt) and alt > 0):
        raise InputError(f"parking orbit altitude {alt:g} km must be a positive length")
    if body == "earth" and alt < lo:
        raise InputError(f"Earth parking orbit at {alt:g} km: below {lo:g} km no orbit lasts; "
                         f"allowed: {lo:g} km and up")
    if body == "earth" and path in DEPARTURE_PATHS and alt > hi:
        raise InputError(f"Earth parking orbit at {alt:g} km for the '{path}' path; allowed: "
                         f"{lo:g} km to {hi:g} km")
    return alt


def plain_text(name: str, text, max_len: int = 200) -> str:
    """Free text written into a file header (an OEM's OBJECT_NAME, a comment), checked.

    No control characters (a line break would add header lines), at most ``max_len``
    characters.

    Parameters
    ----------
    name : str
        What the value is, for the refusal.
    text : str
        The text.
    max_len : int, optional
        Longest allowed.

    Returns
    -------
    str
        The text.

    Raises
    ------
    InputError
        A control character, or too long.

    Examples
    --------
    >>> plain_text("--object-name", "RELAY 1")
    'RELAY 1'

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages" (2023) (header values on one line).
    """
    t = str(text)
    bad = [c for c in t if not c.isprintable()]
    if bad:
        raise InputError(f"{name} '{_show(t)}' contains a control character ({bad[0].encode('unicode_escape').decode()}); "
                         "allowed: printable characters on one line")
    if len(t) > max_len:
        raise InputError(f"{name} '{_show(t)}' is longer than {max_len} characters")
    return t


_ISO_8601 = re.compile(r"^\d{4}-\d{2}-\d{2}(T\d{2}:\d{2}(:\d{2}(\.\d+)?)?)?(Z|[+-]\d{2}:\d{2})?$", re.ASCII)


def iso8601(name: str, text) -> str:
    """An ISO 8601 date or date-time, checked as a real calendar date; returned as given.

    Parameters
    ----------
    name : str
        What the value is, for the refusal.
    text : str
        ``2031-03-01`` or ``2031-03-01T00:00:00Z``.

    Returns
    -------
    str
        The text as given.

    Raises
    ------
    InputError
        Not ISO 8601, or not a real date.

    Examples
    --------
    >>> iso8601("--creation-date", "2031-03-01T00:00:00Z")
    '2031-03-01T00:00:00Z'

    References
    ----------
    ISO 8601-1:2019, "Date and time -- Representations for information interchange".
    """
    t = str(text)
    if not _ISO_8601.match(t):
        raise InputError(f"{name} '{_show(t)}' is not an ISO 8601 date or date-time "
                         "(e.g. 2031-03-01T00:00:00Z)")
    try:
        datetime.fromisoformat(t.replace("Z", "+00:00"))
    except ValueError:
        raise InputError(f"{name} '{_show(t)}' is not a calendar date-time") from None
    return t


# ---- files --------------------------------------------------------------------------------

#: Longest file name (one path component, in bytes) most file systems allow.
NAME_MAX = 255


def _same_path(a, b) -> bool:
    pa, pb = Path(a), Path(b)
    try:
        if pa.exists() and pb.exists():
            return os.path.samefile(pa, pb)
    except OSError:
        pass
    return os.path.realpath(pa) == os.path.realpath(pb)


def output_file(name: str, path, inputs=()) -> str:
    """Check, before any work, that ``path`` can be written as a file: not empty, not a folder,
    not one of ``inputs`` (files the command reads), each name at most NAME_MAX bytes, and the
    nearest existing folder above it writable. Returns ``path`` as text.

    Parameters
    ----------
    name : str
        The option, for the refusal.
    path : str or pathlib.Path
        The file.
    inputs : iterable of path, optional
        Files the command reads.

    Returns
    -------
    str
        ``path`` as text.

    Raises
    ------
    InputError
        The path cannot be written as a file (the message names it and why).

    Examples
    --------
    >>> import tempfile, os
    >>> folder = tempfile.mkdtemp()
    >>> output_file("--out", os.path.join(folder, "a.oem")).endswith("a.oem")
    True

    References
    ----------
    IEEE Std 1003.1-2017 (POSIX), ``access()`` and NAME_MAX.
    """
    t = str(path)
    if not t.strip():
        raise InputError(f"{name} is empty; give a file name")
    if "\x00" in t:
        raise InputError(f"{name} '{_show(t)}' contains a NUL character")
    p = Path(t)
    _short_names(name, t, p)
    if p.is_dir():
        raise InputError(f"{name} '{_show(t)}' is a folder; give a file name")
    for src in inputs:
        if src is not None and str(src) != "" and _same_path(p, src):
            raise InputError(f"{name} '{_show(t)}' is also an input of this command; "
                             "write to another file")
    _writable_folder(name, t, p.parent)
    return t


def output_folder(name: str, path, inputs=()) -> str:
    """As :func:`output_file`, for a folder that will hold the outputs (it may exist).

    Parameters
    ----------
    name : str
        The option, for the refusal.
    path : str or pathlib.Path
        The folder.
    inputs : iterable of path, optional
        Files the command reads.

    Returns
    -------
    str
        ``path`` as text.

    Raises
    ------
    InputError
        The path cannot hold the outputs (the message names it and why).

    Examples
    --------
    >>> import tempfile
    >>> folder = tempfile.mkdtemp()
    >>> output_folder("--out", folder) == folder
    True

    References
    ----------
    IEEE Std 1003.1-2017 (POSIX), ``access()`` and NAME_MAX.
    """
    t = str(path)
    if not t.strip():
        raise InputError(f"{name} is empty; give a folder")
    p = Path(t)
    _short_names(name, t, p)
    if p.exists() and not p.is_dir():
        raise InputError(f"{name} '{_show(t)}' exists and is not a folder")
    for src in inputs:
        if src is not None and str(src) != "" and _same_path(p, src):
            raise InputError(f"{name} '{_show(t)}' is also an input of this command")
    _writable_folder(name, t, p)
    return t


def _short_names(name, shown_path, p):
    """Each part of the path ``p`` at most NAME_MAX bytes."""
    for part in p.parts:
        if len(part.encode("utf-8", "surrogateescape")) > NAME_MAX:
            raise InputError(f"{name} '{_show(shown_path)}': the name '{_show(part)}' is longer than "
                             f"{NAME_MAX} bytes")


def _writable_folder(name, shown_path, folder):
    d = Path(folder) if str(folder) else Path(".")
    while not d.exists():
        if d.is_symlink():       # a dangling link
            raise InputError(f"{name} '{_show(shown_path)}': {d} is a broken link")
        d = d.parent
    if not d.is_dir():
        raise InputError(f"{name} '{_show(shown_path)}': {d} is not a folder")
    if not os.access(d, os.W_OK | os.X_OK):
        raise InputError(f"{name} '{_show(shown_path)}': the folder {d} is not writable")
    try:
        st = os.statvfs(d)
        if st.f_flag & os.ST_RDONLY:
            raise InputError(f"{name} '{_show(shown_path)}': {d} is on a read-only file system")
    except (AttributeError, OSError):
        pass
