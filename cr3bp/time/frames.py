"""Rotating <-> inertial frames anchored at an epoch, in km and km/s.

The CR3BP state (nondimensional, barycentric rotating; see :mod:`cr3bp.systems`) is mapped to
a body-centred frame with inertial axes by one formula for both anchorings. With ``rho`` the
rotating position, ``rho'`` its derivative in TU, ``rho_c`` the rotating position of the
chosen centre (``-mu``, ``0`` or ``1 - mu`` on the x axis), ``C(t)`` the matrix whose columns
are the rotating axes expressed in the inertial axes, ``l(t)`` the length scale, ``w`` the
angular velocity of the rotating axes (components on the rotating axes, rad/s) and ``T`` the
system's time unit (s)::

    R = l C (rho - rho_c)
    V = l' C (rho - rho_c) + l C [w x (rho - rho_c)] + (l / T) C rho'

Time: an epoch ``t0`` (TDB seconds since J2000) anchors rotating time 0, and rotating time
``tau`` is the epoch ``t0 + tau T``.

Anchorings
----------
``circular``
    The idealised model: ``l`` = the system's length unit, ``l' = 0``, the axes turn
    uniformly at the CR3BP mean motion about the normal of the secondary's orbit plane:
    ``C(tau) = R3(node) R1(inclination) R3(u0 + tau)``, ``w = (0, 0, 1/T)``, angles relative
    to the J2000 ecliptic (or equator). Default orientation: the osculating plane, node and
    argument of latitude of the secondary's ephemeris at the epoch.
``ephemeris``
    The instantaneous frame of the secondary's ephemeris state (r, v) relative to the
    primary: ``x = r/|r|``, ``z = r x v / |r x v|``, ``y = z x x``, ``l = |r|``,
    ``l' = r.v/|r|``, ``w = (|r| a.z / |h|, 0, |h| / r^2)`` (a = relative acceleration,
    h = r x v). Gomez, Llibre, Martinez & Simo, *Dynamics and Mission Design Near Libration
    Points*, vol. I, World Scientific (2001), ch. 1 (from memory); the same construction is
    used by Pavlak & Howell for the transition to ephemeris models (from memory).

Inertial axes: ``j2000-equator`` (EME2000: mean equator and equinox of J2000) and
``j2000-ecliptic`` (mean ecliptic and equinox of J2000, obtained from EME2000 by a rotation
of the IAU 2006 obliquity (:data:`cr3bp.constants.OBLIQUITY_J2000_ARCSEC`) about x; Hilton et al., Celest. Mech. Dyn. Astr. 94,
2006, from memory -- the value the project's ephemeris module uses for its J2000 ecliptic).
``rotating`` keeps the CR3BP axes, dimensional (km, km/s, length unit fixed), re-centred.

Centres: the primary, the secondary or the barycentre (points of the rotating x axis), and
where the secondary is itself a barycentre (Sun-Earth: the Earth-Moon barycentre) also the
``earth`` or the ``moon``: the state about the secondary minus the body's ephemeris state
about that barycentre (:func:`body_offset`; inertial axes only). Ground systems expect
geocentric states; the CR3BP places only the barycentre.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field, replace
import warnings

import numpy as np

from ..constants import MJD_ZERO_JD, OBLIQUITY_J2000_ARCSEC, SECONDS_PER_DAY
from ..errors import InputError
from ..vocabulary import ANCHORS, CENTER_ROLES, FRAMES, INERTIAL_FRAMES
from ..vocabulary import TIME_SYSTEMS as _TIME_SYSTEMS
from . import ephemeris
from ..systems import system
from ..validate import finite_number, numbers
from .scales import J2000_JD, Epoch, parse_iso, tai_minus_utc

AXES = FRAMES
CENTERS = CENTER_ROLES + ("earth", "moon")
#: Centres that are bodies of a secondary barycentre (Sun-Earth: the secondary is the
#: Earth-Moon barycentre): secondary name -> (body, ...). Their offset from the barycentre
#: comes from the ephemeris (:func:`body_offset`).
BODY_CENTERS = {"earth-moon": ("earth", "moon")}
#: The time systems as CCSDS writes them (upper case).
TIME_SYSTEMS = tuple(s.upper() for s in _TIME_SYSTEMS)

#: The obliquity of :mod:`cr3bp.constants` in radians.
OBLIQUITY_J2000_RAD = OBLIQUITY_J2000_ARCSEC * math.pi / (180.0 * 3600.0)

#: The instantaneous frame reads the secondary's ephemeris through Chebyshev series of this
#: degree on segments of this length aligned on J2000 (so the series at an epoch does not
#: depend on which other epochs are asked for). Position, velocity and acceleration are the
#: series and its derivatives: one consistent, smooth (r, v, a), and the ephemeris is called
#: at 14 nodes per half day however many epochs are transformed.
SERIES_SEGMENT_S = 43200.0
SERIES_DEGREE = 13



# ---- adapters to the project's time scales (cr3bp.time.scales) and ephemeris -------------

_DESIGNATOR = re.compile(r"(Z|\s(UTC|TAI|TT|TDB))\s*$", re.IGNORECASE)
_BODY = {"earth-moon": "emb", "mars-system": "mars", "jupiter-system": "jupiter"}


def _epoch(tdb_s):
    """TDB seconds since J2000 -> :class:`cr3bp.time.scales.Epoch` (two-part JD, exact split)."""
    t = np.asarray(tdb_s, dtype=float)
    days = np.floor(t / SECONDS_PER_DAY)
    return Epoch.from_jd(J2000_JD + days, (t - days * SECONDS_PER_DAY) / SECONDS_PER_DAY, "tdb")


def epoch_from_text(text: str, default_scale: str = "UTC") -> float:
    """ISO 8601 text -> TDB seconds since J2000.

    Parameters
    ----------
    text : str
        The epoch, e.g. ``"2031-03-01T00:00:00Z"``; ``Z`` or a trailing scale name
        (``UTC``, ``TAI``, ``TT``, ``TDB``) sets the scale.
    default_scale : str, optional
        Scale of text without a designator (default UTC).

    Returns
    -------
    float
        TDB seconds since J2000 (2000-01-01T12:00:00 TDB).

    Raises
    ------
    InputError
        Text that is not an ISO 8601 date, an unknown scale, or pre-1972 UTC.

    Examples
    --------
    >>> epoch_from_text("2000-01-01T12:00:00 TDB")
    0.0

    References
    ----------
    ISO 8601-1:2019; Petit, G. & Luzum, B. (eds.), "IERS Conventions (2010)", IERS Technical
    Note 36 (2010), ch. 10.
    """
    if not isinstance(text, str):
        raise InputError(f"epoch {text!r} is not text; expected ISO 8601 like 2031-03-01T00:00:00Z")
    named = _DESIGNATOR.search(text)
    ep = parse_iso(text) if named else parse_iso(text, time_system(default_scale).lower())
    return float(ep.seconds_since_j2000("tdb"))


_MJD0 = np.datetime64("1858-11-17T00:00:00", "us")


def epoch_to_text(tdb_s, scale: str = "TDB", digits: int = 6):
    """TDB seconds since J2000 -> ISO 8601 strings on ``scale`` (no zone suffix), vectorised.

    Microsecond text (``digits=6``, the files' form) is built by numpy's datetime64 from the
    scale's two-part Julian date; the rare instants inside a UTC leap second, and other digit
    counts, go through :meth:`cr3bp.time.scales.Epoch.to_iso`.

    Parameters
    ----------
    tdb_s : float or array_like
        Epochs, TDB seconds since J2000.
    scale : {"UTC", "TAI", "TT", "TDB"}, optional
        The clock the text is written on.
    digits : int, optional
        Digits of the seconds' fraction.

    Returns
    -------
    numpy.ndarray of str
        The texts, the shape of ``tdb_s``.

    Raises
    ------
    InputError
        An unknown time system.

    Examples
    --------
    >>> str(epoch_to_text(0.0, "TDB"))
    '2000-01-01T12:00:00.000000'

    References
    ----------
    ISO 8601-1:2019; CCSDS 502.0-B-3, "Orbit Data Messages" (2023), sec. 7.5.10 (epoch text);
    Petit & Luzum (eds.), "IERS Conventions (2010)", ch. 10.
    """
    t = np.asarray(tdb_s, dtype=float)
    flat = t.ravel()
    sc = time_system(scale).lower()
    ep = _epoch(flat)
    if digits != 6:
        out = ep.to_iso(sc, digits, designator=False)
        return np.asarray(out if isinstance(out, list) else [out]).reshape(t.shape)
    jd1, jd2 = (np.atleast_1d(x) for x in ep.two_part_jd(sc))
    mjd = np.rint(jd1 - MJD_ZERO_JD).astype(np.int64)
    length = np.full(mjd.shape, SECONDS_PER_DAY)
    if sc == "utc":
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")   # the conversion above has already warned
            length = SECONDS_PER_DAY + tai_minus_utc(mjd + 1) - tai_minus_utc(mjd)
    us = np.rint(jd2 * length * 1e6).astype(np.int64)
    out = np.datetime_as_string(_MJD0 + (mjd * 86_400_000_000 + us).astype("timedelta64[us]"), unit="us")
    odd = us >= 86_400_000_000                        # inside a leap second (23:59:60)
    if odd.any():
        out = out.astype(object)
        idx = np.flatnonzero(odd)
        fixed = ep[idx].to_iso(sc, 6, designator=False)
        out[idx] = fixed if isinstance(fixed, list) else [fixed]
        out = out.astype(str)
    return out.reshape(t.shape)


def epochs_from_texts(texts, scale: str) -> np.ndarray:
    """ISO 8601 strings on ``scale`` -> TDB seconds since J2000.

    Plain ``YYYY-MM-DDThh:mm:ss[.f]`` text is read by numpy's datetime64 (vectorised) and
    passed to :meth:`cr3bp.time.scales.Epoch.from_jd`; anything else (a leap second, other
    forms) goes through :func:`cr3bp.time.scales.parse_iso`, which also names bad values.

    Parameters
    ----------
    texts : sequence of str
        The epochs as ISO 8601 text without a designator.
    scale : {"UTC", "TAI", "TT", "TDB"}
        The clock of the texts.

    Returns
    -------
    numpy.ndarray
        TDB seconds since J2000, one per text.

    Raises
    ------
    InputError
        Malformed text, an unknown scale or pre-1972 UTC (the message names the value).

    Examples
    --------
    >>> epochs_from_texts(["2000-01-01T12:00:00"], "TDB").tolist()
    [0.0]

    References
    ----------
    ISO 8601-1:2019; Petit, G. & Luzum, B. (eds.), "IERS Conventions (2010)", ch. 10.
    """
    texts = [str(x).strip() for x in texts]
    sc = time_system(scale).lower()
    try:
        if any(":60" in x[16:19] for x in texts):
            raise ValueError("leap second")
        stamps = np.array(texts, dtype="datetime64[us]")
    except ValueError:
        return np.atleast_1d(parse_iso(texts, sc).seconds_since_j2000("tdb"))
    us = (stamps - _MJD0) / np.timedelta64(1, "us")
    mjd = np.floor(us / 86_400_000_000).astype(np.int64)
    sec = (us - mjd * 86_400_000_000) * 1e-6
    length = np.full(mjd.shape, SECONDS_PER_DAY)
    if sc == "utc":
        if mjd.min() < 41317:
            return np.atleast_1d(parse_iso(texts, sc).seconds_since_j2000("tdb"))  # its message
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            length = SECONDS_PER_DAY + tai_minus_utc(mjd + 1) - tai_minus_utc(mjd)
        tai_minus_utc(mjd, stacklevel=2)          # warns once past the leap-second table
    ep = Epoch.from_jd(mjd + MJD_ZERO_JD, sec / length, sc)
    return np.atleast_1d(ep.seconds_since_j2000("tdb"))


def clock_grid(epoch_tdb_s: float, n: int, step_s: float, scale: str) -> np.ndarray:
    """Epochs ``k * step_s`` apart on the clock ``scale``, from ``epoch_tdb_s``.

    Steps are TDB seconds for TDB and SI seconds (equal steps of TT, TAI and UTC away from leap
    seconds) otherwise.

    Parameters
    ----------
    epoch_tdb_s : float
        First epoch, TDB seconds since J2000.
    n : int
        Number of epochs.
    step_s : float
        Step on the chosen clock, s.
    scale : {"UTC", "TAI", "TT", "TDB"}
        The clock the steps are equal on.

    Returns
    -------
    numpy.ndarray
        ``n`` epochs, TDB seconds since J2000.

    Raises
    ------
    InputError
        An unknown time system.

    Examples
    --------
    >>> clock_grid(0.0, 3, 60.0, "TDB").tolist()
    [0.0, 60.0, 120.0]

    References
    ----------
    Petit, G. & Luzum, B. (eds.), "IERS Conventions (2010)", IERS Technical Note 36, ch. 10.
    """
    k = np.arange(n) * float(step_s)
    if time_system(scale) == "TDB":
        return epoch_tdb_s + k
    return np.asarray((_epoch(np.array([epoch_tdb_s])) + k).seconds_since_j2000("tdb"), dtype=float)


def time_system(name: str) -> str:
    """The time system's name as CCSDS writes it (upper case), checked.

    Parameters
    ----------
    name : str
        ``utc``, ``tai``, ``tt`` or ``tdb`` in any case.

    Returns
    -------
    str
        The upper-case name.

    Raises
    ------
    InputError
        An unknown name (the message lists the allowed ones).

    Examples
    --------
    >>> time_system("tdb")
    'TDB'

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages" (2023), annex A (TIME_SYSTEM values).
    """
    key = str(name).strip().upper()
    if key not in TIME_SYSTEMS:
        raise InputError(f"unknown time system '{name}'; allowed: {', '.join(_TIME_SYSTEMS)}")
    return key


def secondary_state(system, tdb_s) -> np.ndarray:
    """Ephemeris state of the secondary relative to the primary (:func:`cr3bp.time.ephemeris.state`).

    Parameters
    ----------
    system : System
        A system with named primaries (e.g. Earth-Moon).
    tdb_s : float or array_like
        Epochs, TDB seconds since J2000.

    Returns
    -------
    numpy.ndarray, shape (N, 6)
        Position (km) and velocity (km/s) on EME2000 axes.

    Raises
    ------
    InputError
        A system without named primaries or without an ephemeris for its pair, or epochs
        outside the ephemeris' validity.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> r = secondary_state(system("earth-moon"), 0.0)
    >>> 356000 < float(np.linalg.norm(r[0, :3])) < 407000
    True

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009).
    """
    if system.primary is None or system.secondary is None:
        raise InputError(f"system '{system.name}' has no named primaries, so it has no ephemeris; "
                         "use --anchor circular with an explicit orientation")
    body = _BODY.get(system.secondary.name, system.secondary.name)
    center = _BODY.get(system.primary.name, system.primary.name)
    if body not in ephemeris.BODIES or center not in ephemeris.CENTERS:
        raise InputError(f"no ephemeris for the {system.primary.name}-{system.secondary.name} pair; "
                         "use --anchor circular with an explicit orientation")
    t = np.atleast_1d(np.asarray(tdb_s, dtype=float))
    return np.asarray(ephemeris.state(body, _epoch(t), center, "j2000-equator")).reshape(t.size, 6)


def secondary_series(system, tdb_s):
    """Position, velocity and acceleration of the secondary relative to the primary.

    Chebyshev series fitted to the ephemeris positions: interpolation at the points of the first
    kind on each segment ``[k, k + 1] * SERIES_SEGMENT_S`` (TDB seconds since J2000) and the
    derivative recurrences ``T'_{j+1} = 2 T_j + 2u T'_j - T'_{j-1}``,
    ``T''_{j+1} = 4 T'_j + 2u T''_j - T''_{j-1}``.

    Parameters
    ----------
    system : System
        A system with named primaries.
    tdb_s : float or array_like
        Epochs, TDB seconds since J2000.

    Returns
    -------
    r, v, a : numpy.ndarray, shape (N, 3)
        km, km/s and km/s^2 on EME2000 axes.

    Raises
    ------
    InputError
        As :func:`secondary_state`.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> r, v, a = secondary_series(system("earth-moon"), [0.0])
    >>> 0.9 < float(np.linalg.norm(v[0])) < 1.1
    True

    References
    ----------
    Press, W. H., Teukolsky, S. A., Vetterling, W. T. & Flannery, B. P., "Numerical Recipes",
    3rd ed., Cambridge University Press (2007), sec. 5.8-5.9.
    """
    t = np.atleast_1d(np.asarray(tdb_s, dtype=float))
    h = SERIES_SEGMENT_S
    n = SERIES_DEGREE + 1
    seg = np.floor(t / h)
    uniq, inv = np.unique(seg, return_inverse=True)
    start = uniq * h                                                         # exact (integers)
    nodes = np.cos(np.pi * (np.arange(n) + 0.5) / n)
    times = start[:, None] + 0.5 * (nodes[None, :] + 1.0) * h                # (M, n), rounded
    pos = secondary_state(system, times.ravel())[:, :3].reshape(uniq.size, n, 3)
    # the series interpolates at the node times actually used (rounded to double), so that
    # rounding of ~1e-7 s does not become a 0.1 mm error at lunar speed
    uk = 2.0 * (times - start[:, None]) / h - 1.0
    coef = np.linalg.solve(np.polynomial.chebyshev.chebvander(uk, n - 1), pos)   # (M, n, 3)
    u = 2.0 * (t - seg * h) / h - 1.0
    T = np.empty((t.size, n))
    D1 = np.empty_like(T)
    D2 = np.empty_like(T)
    T[:, 0], D1[:, 0], D2[:, 0] = 1.0, 0.0, 0.0
    if n > 1:
        T[:, 1], D1[:, 1], D2[:, 1] = u, 1.0, 0.0
    for j in range(1, n - 1):
        T[:, j + 1] = 2.0 * u * T[:, j] - T[:, j - 1]
        D1[:, j + 1] = 2.0 * T[:, j] + 2.0 * u * D1[:, j] - D1[:, j - 1]
        D2[:, j + 1] = 4.0 * D1[:, j] + 2.0 * u * D2[:, j] - D2[:, j - 1]
    c = coef[inv]                                                            # (N, n, 3)
    r = np.einsum("nj,njx->nx", T, c)
    v = np.einsum("nj,njx->nx", D1, c) * (2.0 / h)
    a = np.einsum("nj,njx->nx", D2, c) * (2.0 / h) ** 2
    return r, v, a


# ---- elementary rotations ----------------------------------------------------------------

def _r1(a):
    c, s = np.cos(a), np.sin(a)
    o, z = np.ones_like(c), np.zeros_like(c)
    return np.stack([np.stack([o, z, z], -1), np.stack([z, c, -s], -1), np.stack([z, s, c], -1)], -2)


def _r3(a):
    c, s = np.cos(a), np.sin(a)
    o, z = np.ones_like(c), np.zeros_like(c)
    return np.stack([np.stack([c, -s, z], -1), np.stack([s, c, z], -1), np.stack([z, z, o], -1)], -2)


#: EME2000 -> J2000 ecliptic: v_ecl = ECL_FROM_EQ @ v_eq.
ECL_FROM_EQ = _r1(-OBLIQUITY_J2000_RAD)


def _axes_from_eq(axes: str) -> np.ndarray:
    return ECL_FROM_EQ if axes == "j2000-ecliptic" else np.eye(3)


# ---- the frame specification -------------------------------------------------------------

@dataclass(frozen=True)
class Orientation:
    """Orientation of the secondary's orbit plane at the epoch (circular anchoring).

    Parameters
    ----------
    inclination_deg, node_deg : float
        Inclination and longitude of the ascending node relative to ``plane``.
    latitude_arg_deg : float
        Argument of latitude of the secondary at the epoch (angle from the node).
    plane : str
        ``"j2000-ecliptic"`` or ``"j2000-equator"``.
    source : str
        ``"explicit"`` or ``"osculating ephemeris at epoch"``.

    Examples
    --------
    >>> Orientation(5.0, 0.0, 0.0).matrix().shape
    (3, 3)

    References
    ----------
    Vallado, D. A., "Fundamentals of Astrodynamics and Applications", 4th ed., Microcosm Press
    (2013), sec. 2.5 (orbital elements) and sec. 3.3 (elementary rotations).
    """

    inclination_deg: float
    node_deg: float
    latitude_arg_deg: float
    plane: str = "j2000-ecliptic"
    source: str = "explicit"

    def matrix(self, u_extra=0.0) -> np.ndarray:
        """Rotating axes in EME2000 axes, ``C = A R3(node) R1(i) R3(u0 + u_extra)``."""
        d = math.radians
        c = _r3(d(self.node_deg)) @ _r1(d(self.inclination_deg)) @ _r3(d(self.latitude_arg_deg) + np.asarray(u_extra))
        return np.swapaxes(_axes_from_eq(self.plane), -1, -2) @ c

    def to_dict(self) -> dict:
        return {"inclination_deg": self.inclination_deg, "node_deg": self.node_deg,
                "latitude_arg_deg": self.latitude_arg_deg, "plane": self.plane, "source": self.source}


def orientation_from_ephemeris(system, epoch_tdb_s: float, plane: str = "j2000-ecliptic") -> Orientation:
    """Osculating orbit plane, node and argument of latitude of the secondary at an epoch.

    From the relative state (r, v): the plane normal is r x v; angles relative to ``plane``.

    Parameters
    ----------
    system : System
        A system with named primaries.
    epoch_tdb_s : float
        The epoch, TDB seconds since J2000.
    plane : {"j2000-ecliptic", "j2000-equator"}, optional
        The reference plane of the angles.

    Returns
    -------
    Orientation
        Inclination, node and argument of latitude in degrees.

    Raises
    ------
    InputError
        As :func:`secondary_state`.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> o = orientation_from_ephemeris(system("earth-moon"), 0.0)
    >>> 4.0 < o.inclination_deg < 6.0             # the Moon's orbit on the ecliptic
    True

    References
    ----------
    Vallado, D. A., "Fundamentals of Astrodynamics and Applications", 4th ed., Microcosm Press
    (2013), sec. 2.5 (common practice, from memory).
    """
    rr, vv, _ = secondary_series(system, np.array([epoch_tdb_s]))
    a = _axes_from_eq(plane)
    r, v = a @ rr[0], a @ vv[0]
    h = np.cross(r, v)
    zh = h / np.linalg.norm(h)
    inc = math.acos(max(-1.0, min(1.0, zh[2])))
    node = math.atan2(zh[0], -zh[1])
    n = np.array([math.cos(node), math.sin(node), 0.0])
    xh = r / np.linalg.norm(r)
    u = math.atan2(float(np.dot(np.cross(n, xh), zh)), float(np.dot(n, xh)))
    return Orientation(math.degrees(inc), math.degrees(node) % 360.0, math.degrees(u) % 360.0,
                       plane, "osculating ephemeris at epoch")


@dataclass(frozen=True)
class FrameSpec:
    """Where a CR3BP trajectory is put: epoch, anchoring, axes and centre.

    Build with :func:`frame`. ``epoch_tdb_s`` is the epoch of rotating time 0 in TDB
    seconds since J2000 (2000-01-01T12:00:00 TDB).

    Parameters
    ----------
    system : System
        The system (with dimensional units).
    epoch_tdb_s : float
        Epoch of rotating time 0, TDB seconds since J2000.
    anchor : {"ephemeris", "circular"}
        How the rotating axes are tied to the inertial ones.
    axes : {"j2000-equator", "j2000-ecliptic", "rotating"}
        The output axes.
    center : str
        ``"primary"``, ``"secondary"``, ``"barycenter"`` or a body name.
    orientation : Orientation or None
        Circular anchoring only.
    extra : dict
        Free annotations (not compared).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> spec = frame(system("earth-moon"), "2031-03-01T00:00:00 TDB", anchor="circular")
    >>> spec.center_name
    'earth'

    References
    ----------
    Gómez, G., Llibre, J., Martínez, R. & Simó, C., "Dynamics and Mission Design Near Libration
    Points", vol. I, World Scientific (2001), ch. 1 (the instantaneous frame, from memory).
    """

    system: object
    epoch_tdb_s: float
    anchor: str = "ephemeris"
    axes: str = "j2000-equator"
    center: str = "primary"
    orientation: Orientation | None = None
    extra: dict = field(default_factory=dict, compare=False, repr=False)

    def __post_init__(self):
        # one spelling per centre: "earth" in Earth-Moon is the primary, in Sun-Earth a body
        # inside the secondary barycentre (placed by the ephemeris)
        object.__setattr__(self, "center", resolve_center(self.system, self.center))

    @property
    def center_x(self) -> float:
        """Rotating x of the centre (nondimensional)."""
        mu = self.system.mu
        return {"primary": -mu, "barycenter": 0.0}.get(self.center, 1.0 - mu)

    @property
    def center_name(self) -> str:
        """Plain name of the centre, e.g. ``"earth"`` or ``"earth-moon barycenter"``."""
        p, s = self.system.names
        return {"primary": p, "secondary": s, "barycenter": f"{p}-{s} barycenter"}.get(self.center, self.center)

    def to_dict(self) -> dict:
        return {
            "system": self.system.name, "mu": self.system.mu,
            "length_km": self.system.length_km, "time_s": self.system.time_s,
            "epoch_tdb_s": self.epoch_tdb_s,
            "epoch_tdb": str(epoch_to_text(self.epoch_tdb_s, "TDB")),
            "anchor": self.anchor, "axes": self.axes, "center": self.center,
            "center_name": self.center_name,
            "orientation": None if self.orientation is None else self.orientation.to_dict(),
        }

    @classmethod
    def from_dict(cls, d: dict) -> "FrameSpec":
        """Rebuild a spec written by :meth:`to_dict` (system by name, or by mu and units)."""
        try:
            sysm = system(d["system"])
            if abs(sysm.mu - float(d["mu"])) > 1e-15 * max(1.0, sysm.mu):
                raise InputError("mu differs")
        except InputError:
            sysm = system(mu=float(d["mu"]), length_km=float(d["length_km"]), time_s=float(d["time_s"]))
        o = d.get("orientation")
        ori = None if o is None else Orientation(float(o["inclination_deg"]), float(o["node_deg"]),
                                                 float(o["latitude_arg_deg"]), o["plane"], o.get("source", "explicit"))
        return cls(sysm, float(d["epoch_tdb_s"]), d["anchor"], d["axes"], d["center"], ori)


def _choice(name, value, allowed):
    v = str(value).strip().lower()
    if v not in allowed:
        raise InputError(f"unknown {name} '{value}'; allowed: {', '.join(allowed)}")
    return v


def resolve_center(system, center: str) -> str:
    """A centre's name -> its role ``primary``, ``secondary``, ``barycenter`` (or a body).

    Parameters
    ----------
    system : System
        The system whose primaries name the centres.
    center : str
        ``"moon"``, ``"earth"``, ``"barycenter"``, ``"primary"``, ...

    Returns
    -------
    str
        ``"primary"``, ``"secondary"``, ``"barycenter"``, or ``"earth"``/``"moon"`` for a body
        inside a secondary barycentre.

    Raises
    ------
    InputError
        An unknown centre (the message lists the allowed ones).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> resolve_center(system("earth-moon"), "Moon")
    'secondary'

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages" (2023), sec. 3.2.3 (CENTER_NAME).
    """
    key = str(center).strip().lower()
    p, s = (n.lower() for n in system.names)
    table = {**{r: r for r in CENTER_ROLES}, "barycentre": "barycenter", p: "primary", s: "secondary"}
    bodies = BODY_CENTERS.get(s, ())
    for b in bodies:
        table.setdefault(b, b)
    if key not in table:
        raise InputError(f"unknown centre '{center}'; allowed: {', '.join([p, s, 'barycenter', *bodies])}")
    return table[key]


def check_center_axes(system, center: str, axes: str) -> None:
    """Refuse a body centre inside the secondary barycentre on rotating axes.

    The Earth or the Moon in Sun-Earth is placed through the ephemeris, so it needs inertial axes.

    Parameters
    ----------
    system : System
        The system.
    center : str
        The resolved centre (:func:`resolve_center`).
    axes : str
        The output axes.

    Returns
    -------
    None

    Raises
    ------
    InputError
        ``center`` is such a body and ``axes`` is ``"rotating"``.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> check_center_axes(system("sun-earth"), "moon", "j2000-equator") is None
    True

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages" (2023), sec. 3.2.3 (CENTER_NAME, REF_FRAME).
    """
    if center in ("earth", "moon") and center not in (n.lower() for n in system.names) and axes == "rotating":
        raise InputError(f"centre '{center}' in {system.name} is placed by the ephemeris and needs inertial "
                         f"axes ({' or '.join(INERTIAL_FRAMES)}), not rotating")


def body_offset(spec: "FrameSpec", tdb_s):
    """State of a body centre relative to the secondary barycentre, on the spec's axes.

    Sun-Earth: the Earth (or the Moon) about the Earth-Moon barycentre from
    :func:`cr3bp.time.ephemeris.state` (``center="emb"``), whatever the anchoring: the CR3BP
    places the barycentre, the ephemeris the body inside it. Zeros for the centres on the CR3BP
    x axis.

    Parameters
    ----------
    spec : FrameSpec
        The frame.
    tdb_s : float or array_like
        Epochs, TDB seconds since J2000.

    Returns
    -------
    numpy.ndarray, shape (N, 6)
        km and km/s.

    Raises
    ------
    InputError
        Epochs outside the ephemeris' validity.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> spec = frame(system("earth-moon"), 0.0)
    >>> body_offset(spec, [0.0]).tolist()
    [[0.0, 0.0, 0.0, 0.0, 0.0, 0.0]]

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009).
    """
    t = np.atleast_1d(np.asarray(tdb_s, dtype=float))
    if spec.center not in ("earth", "moon") or spec.center in (n.lower() for n in spec.system.names):
        return np.zeros((t.size, 6))
    off = np.asarray(ephemeris.state(spec.center, _epoch(t), _BODY.get(spec.system.secondary.name, "emb"),
                                     "j2000-equator")).reshape(t.size, 6)
    a = _axes_from_eq(spec.axes)
    return np.hstack([off[:, :3] @ a.T, off[:, 3:] @ a.T])


def frame(system, epoch, *, anchor="ephemeris", axes="j2000-equator", center="primary",
          orientation=None, time_scale="UTC") -> FrameSpec:
    """A validated :class:`FrameSpec`.

    Parameters
    ----------
    system : System
        Must have dimensional units.
    epoch : str or float
        ISO 8601 text (``Z`` = UTC, or a trailing ``TDB``/``TT``/``TAI``/``UTC``; bare text is
        read on ``time_scale``), or TDB seconds since J2000.
    anchor : {"ephemeris", "circular"}
        Instantaneous frame of the secondary's ephemeris, or uniform rotation.
    axes : {"j2000-equator", "j2000-ecliptic", "rotating"}
        The output axes.
    center : str
        ``"primary"``, ``"secondary"``, ``"barycenter"`` or a primary's name; in Sun-Earth also
        ``"earth"`` or ``"moon"`` (through the ephemeris, inertial axes only).
    orientation : Orientation or (inclination_deg, node_deg, latitude_arg_deg), optional
        Circular anchoring only; default from the secondary's ephemeris at the epoch.
    time_scale : {"UTC", "TAI", "TT", "TDB"}, optional
        Scale of epoch text without a designator.

    Returns
    -------
    FrameSpec
        The checked specification.

    Raises
    ------
    InputError
        Unknown names, a system without units, an epoch outside the ephemeris validity.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> spec = frame(system("earth-moon"), "2031-03-01T00:00:00 TDB", center="moon")
    >>> spec.center, spec.anchor
    ('secondary', 'ephemeris')

    References
    ----------
    Gómez, G., Llibre, J., Martínez, R. & Simó, C., "Dynamics and Mission Design Near Libration
    Points", vol. I, World Scientific (2001), ch. 1 (from memory).
    """
    system.require_dimensional("an epoch-anchored frame")
    anchor = _choice("anchoring", anchor, ANCHORS)
    axes = _choice("frame", axes, AXES)
    center = resolve_center(system, center)
    check_center_axes(system, center, axes)
    t0 = (epoch_from_text(epoch, time_scale) if isinstance(epoch, str)
          else finite_number("epoch (TDB s since J2000)", epoch))
    ori = None
    if anchor == "circular":
        if orientation is None:
            ori = orientation_from_ephemeris(system, t0)
        elif isinstance(orientation, Orientation):
            ori = orientation
        else:
            i, n, u = numbers("orientation", orientation, 3,
                              "in degrees: inclination, node, argument of latitude")
            if not 0.0 <= i <= 180.0:
                raise InputError(f"orientation {orientation!r}: the inclination must be within "
                                 "[0, 180] degrees")
            ori = Orientation(i, n, u)
    elif orientation is not None:
        raise InputError("an orientation goes with the circular anchoring only")
    else:
        secondary_series(system, np.array([t0]))  # validity check of the epoch now, not later
    return FrameSpec(system, t0, anchor, axes, center, ori)


# ---- the kinematics of the rotating axes -------------------------------------------------

def basis(spec: FrameSpec, tdb_s):
    """Rotating axes at epochs: ``(C, w, l, ldot)``.

    Parameters
    ----------
    spec : FrameSpec
        The frame.
    tdb_s : float or array_like
        Epochs, TDB seconds since J2000.

    Returns
    -------
    C : numpy.ndarray, shape (N, 3, 3)
        Columns = rotating axes in the output axes.
    w : numpy.ndarray, shape (N, 3)
        Angular velocity of the rotating axes, on those axes, rad/s.
    l : numpy.ndarray, shape (N,)
        Length scale, km.
    ldot : numpy.ndarray, shape (N,)
        Its rate, km/s.

    Raises
    ------
    InputError
        Epochs outside the ephemeris' validity (ephemeris anchoring).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> c, w, l, ldot = basis(frame(system("earth-moon"), 0.0, anchor="circular"), [0.0])
    >>> bool(np.allclose(c[0] @ c[0].T, np.eye(3)))
    True

    References
    ----------
    Gómez, G., Llibre, J., Martínez, R. & Simó, C., "Dynamics and Mission Design Near Libration
    Points", vol. I, World Scientific (2001), ch. 1 (from memory).
    """
    t = np.atleast_1d(np.asarray(tdb_s, dtype=float))
    n = t.size
    sysm = spec.system
    if spec.axes == "rotating":
        return (np.broadcast_to(np.eye(3), (n, 3, 3)), np.zeros((n, 3)),
                np.full(n, sysm.length_km), np.zeros(n))
    a = _axes_from_eq(spec.axes)
    if spec.anchor == "circular":
        tau = (t - spec.epoch_tdb_s) / sysm.time_s
        c = a @ spec.orientation.matrix(tau)
        w = np.zeros((n, 3))
        w[:, 2] = 1.0 / sysm.time_s
        return c, w, np.full(n, sysm.length_km), np.zeros(n)
    r, v, acc = secondary_series(sysm, t)
    rn = np.linalg.norm(r, axis=1)
    h = np.cross(r, v)
    hn = np.linalg.norm(h, axis=1)
    xh = r / rn[:, None]
    zh = h / hn[:, None]
    yh = np.cross(zh, xh)
    c = np.stack([xh, yh, zh], axis=-1)          # columns
    w = np.zeros((n, 3))
    w[:, 0] = rn * np.einsum("ij,ij->i", acc, zh) / hn
    w[:, 2] = hn / rn**2
    c = a @ c
    return c, w, rn, np.einsum("ij,ij->i", r, v) / rn


def _epochs(spec, t_tu):
    return spec.epoch_tdb_s + np.asarray(t_tu, dtype=float) * spec.system.time_s


def to_frame(spec: FrameSpec, t_tu, states) -> tuple[np.ndarray, np.ndarray]:
    """Nondimensional rotating states at rotating times -> (epochs, km and km/s states).

    ``R = l C (rho - rho_c)`` and
    ``V = l' C (rho - rho_c) + l C [w x (rho - rho_c)] + (l / T) C rho'`` (module notes).

    Parameters
    ----------
    spec : FrameSpec
        The frame.
    t_tu : array_like, shape (N,)
        Rotating times, TU from the epoch.
    states : array_like, shape (N, 6)
        Nondimensional barycentric rotating states.

    Returns
    -------
    tdb_s : numpy.ndarray, shape (N,)
        Epochs, TDB seconds since J2000.
    out : numpy.ndarray, shape (N, 6)
        Position (km) and velocity (km/s) relative to the centre, on the spec's axes.

    Raises
    ------
    InputError
        States whose shape does not match the times.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> em = system("earth-moon")
    >>> spec = frame(em, 0.0, anchor="circular", axes="rotating")
    >>> _, out = to_frame(spec, [0.0], [[1 - em.mu, 0, 0, 0, 0, 0]])
    >>> round(float(out[0, 0]))                          # the Moon, one length unit from the Earth
    384400

    References
    ----------
    Gómez, G., Llibre, J., Martínez, R. & Simó, C., "Dynamics and Mission Design Near Libration
    Points", vol. I, World Scientific (2001), ch. 1 (from memory).
    """
    t_tu = np.atleast_1d(np.asarray(t_tu, dtype=float))
    s = np.atleast_2d(np.asarray(states, dtype=float))
    if s.shape != (t_tu.size, 6):
        raise InputError(f"states have shape {s.shape}; expected ({t_tu.size}, 6) to match the times")
    tdb = _epochs(spec, t_tu)
    c, w, l, ld = basis(spec, tdb)
    rho = s[:, :3].copy()
    rho[:, 0] -= spec.center_x
    rot_v = ld[:, None] * rho + l[:, None] * np.cross(w, rho) + (l / spec.system.time_s)[:, None] * s[:, 3:]
    out = np.empty_like(s)
    out[:, :3] = np.einsum("nij,nj->ni", c, l[:, None] * rho)
    out[:, 3:] = np.einsum("nij,nj->ni", c, rot_v)
    if spec.center in ("earth", "moon"):
        out -= body_offset(spec, tdb)
    return tdb, out


def from_frame(spec: FrameSpec, tdb_s, states_km) -> tuple[np.ndarray, np.ndarray]:
    """Inverse of :func:`to_frame`: (epochs, km and km/s states) -> (rotating times, states).

    Parameters
    ----------
    spec : FrameSpec
        The frame.
    tdb_s : array_like, shape (N,)
        Epochs, TDB seconds since J2000.
    states_km : array_like, shape (N, 6)
        Position (km) and velocity (km/s) relative to the centre, on the spec's axes.

    Returns
    -------
    t_tu : numpy.ndarray, shape (N,)
        Rotating times, TU from the epoch.
    states : numpy.ndarray, shape (N, 6)
        Nondimensional barycentric rotating states.

    Raises
    ------
    InputError
        States whose shape does not match the epochs.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> em = system("earth-moon")
    >>> spec = frame(em, 0.0, anchor="circular", axes="rotating")
    >>> t, s = from_frame(spec, [0.0], [[em.length_km, 0, 0, 0, 0, 0]])
    >>> round(float(s[0, 0] + em.mu), 12)
    1.0

    References
    ----------
    Gómez, G., Llibre, J., Martínez, R. & Simó, C., "Dynamics and Mission Design Near Libration
    Points", vol. I, World Scientific (2001), ch. 1 (from memory).
    """
    tdb = np.atleast_1d(np.asarray(tdb_s, dtype=float))
    s = np.atleast_2d(np.asarray(states_km, dtype=float))
    if s.shape != (tdb.size, 6):
        raise InputError(f"states have shape {s.shape}; expected ({tdb.size}, 6) to match the epochs")
    c, w, l, ld = basis(spec, tdb)
    if spec.center in ("earth", "moon"):
        s = s + body_offset(spec, tdb)
    ct = np.swapaxes(c, -1, -2)
    rho = np.einsum("nij,nj->ni", ct, s[:, :3]) / l[:, None]
    rv = np.einsum("nij,nj->ni", ct, s[:, 3:])
    vel = (spec.system.time_s / l)[:, None] * (rv - ld[:, None] * rho - l[:, None] * np.cross(w, rho))
    out = np.empty_like(s)
    out[:, :3] = rho
    out[:, 0] += spec.center_x
    out[:, 3:] = vel
    return (tdb - spec.epoch_tdb_s) / spec.system.time_s, out


def delta_v_to_frame(spec: FrameSpec, t_tu, dv) -> np.ndarray:
    """Impulsive velocity changes (nondimensional, rotating axes) -> km/s on the spec's axes.

    Position is continuous across an impulse, so only the ``(l / T) C rho'`` term changes:
    ``dV = (l / T) C dv``.

    Parameters
    ----------
    spec : FrameSpec
        The frame.
    t_tu : array_like, shape (N,)
        Rotating times of the impulses, TU from the epoch.
    dv : array_like, shape (N, 3)
        Nondimensional velocity changes on the rotating axes.

    Returns
    -------
    numpy.ndarray, shape (N, 3)
        km/s on the spec's axes.

    Raises
    ------
    InputError
        Epochs outside the ephemeris' validity (ephemeris anchoring).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> em = system("earth-moon")
    >>> spec = frame(em, 0.0, anchor="circular", axes="rotating")
    >>> dv = delta_v_to_frame(spec, [0.0], [[1.0, 0.0, 0.0]])
    >>> bool(abs(dv[0, 0] - em.length_km / em.time_s) < 1e-12)
    True

    References
    ----------
    Vallado, D. A., "Fundamentals of Astrodynamics and Applications", 4th ed. (2013), sec. 3.7
    (transport of a vector between rotating frames, common practice).
    """
    t_tu = np.atleast_1d(np.asarray(t_tu, dtype=float))
    dv = np.atleast_2d(np.asarray(dv, dtype=float))
    c, _, l, _ = basis(spec, _epochs(spec, t_tu))
    return np.einsum("nij,nj->ni", c, (l / spec.system.time_s)[:, None] * dv)


def delta_v_from_frame(spec: FrameSpec, tdb_s, dv_kms) -> np.ndarray:
    """Inverse of :func:`delta_v_to_frame`.

    Parameters
    ----------
    spec : FrameSpec
        The frame.
    tdb_s : array_like, shape (N,)
        Epochs of the impulses, TDB seconds since J2000.
    dv_kms : array_like, shape (N, 3)
        Velocity changes, km/s on the spec's axes.

    Returns
    -------
    numpy.ndarray, shape (N, 3)
        Nondimensional velocity changes on the rotating axes.

    Raises
    ------
    InputError
        Epochs outside the ephemeris' validity (ephemeris anchoring).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> em = system("earth-moon")
    >>> spec = frame(em, 0.0, anchor="circular", axes="rotating")
    >>> delta_v_from_frame(spec, [0.0], [[em.length_km / em.time_s, 0, 0]]).round(12).tolist()
    [[1.0, 0.0, 0.0]]

    References
    ----------
    Vallado, D. A., "Fundamentals of Astrodynamics and Applications", 4th ed. (2013), sec. 3.7
    (common practice).
    """
    c, _, l, _ = basis(spec, tdb_s)
    return np.einsum("nji,nj->ni", c, np.atleast_2d(dv_kms)) * (spec.system.time_s / l)[:, None]


def with_(spec: FrameSpec, **changes) -> FrameSpec:
    """A copy of ``spec`` with other axes or centre (validated).

    Parameters
    ----------
    spec : FrameSpec
        The frame to copy.
    **changes
        Fields of :class:`FrameSpec` to replace (``axes``, ``center``, ...).

    Returns
    -------
    FrameSpec
        The new specification.

    Raises
    ------
    InputError
        Unknown axes or centre, or a body centre on rotating axes.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> spec = frame(system("earth-moon"), 0.0)
    >>> with_(spec, center="moon").center
    'secondary'

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages" (2023), sec. 3.2.3 (CENTER_NAME, REF_FRAME).
    """
    if "axes" in changes:
        changes["axes"] = _choice("frame", changes["axes"], AXES)
    if "center" in changes:
        changes["center"] = resolve_center(spec.system, changes["center"])
    out = replace(spec, **changes)
    check_center_axes(out.system, out.center, out.axes)
    return out
