"""Ground stations: Earth rotation, station positions, elevation and visibility intervals.

Earth rotation angle: IERS Conventions (2010), IERS Technical Note 36, eq. (5.15)::

    ERA(Tu) = 2 pi (0.7790572732640 + 1.00273781191135448 Tu),  Tu = JD(UT1) - 2451545.0

UT1 is taken equal to UTC (|UT1 - UTC| < 0.9 s by the definition of UTC: about 0.004 deg of
rotation). The station's terrestrial position is turned to the J2000 mean equator by the
Greenwich mean sidereal time of IERS Conventions (2010) eq. (5.32) (ERA plus the
accumulated precession in right ascension, Capitaine et al. 2003) and the transpose of the
IAU 1976 precession matrix (Lieske et al., A&A 58, 1977: zeta, z, theta). Nutation (up to
about 17 arcsec), frame bias and polar motion are left out: elevations are good to about
0.01 degree. Stations sit on the WGS 84 ellipsoid (a = 6378.137 km, 1/f = 298.257223563;
NIMA TR8350.2, 3rd ed., 2000, Table 3.1, from memory).
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .. import validate
from ..constants import DAYS_PER_JULIAN_CENTURY, J2000_JD, SECONDS_PER_DAY
from ..errors import InputError
from ..time.frames import _epoch, epoch_to_text

WGS84_A_KM = 6378.137                 # NIMA TR8350.2 (2000), Table 3.1 (from memory)
WGS84_INV_F = 298.257223563           # same table
ARCSEC = math.pi / 648000.0


@dataclass(frozen=True)
class Station:
    """A ground station on the WGS 84 ellipsoid.

    Parameters
    ----------
    name : str
        The station's name.
    latitude_deg, longitude_deg : float
        Geodetic latitude and longitude (east positive), degrees.
    min_elevation_deg : float, optional
        Least elevation of a pass, degrees.
    altitude_km : float, optional
        Height above the ellipsoid, km.

    Examples
    --------
    >>> Station("north", 60.0, 10.0).to_dict()["min_elevation_deg"]
    0.0

    References
    ----------
    NIMA TR8350.2, "Department of Defense World Geodetic System 1984", 3rd ed. (2000), Table 3.1
    (from memory).
    """
    name: str
    latitude_deg: float
    longitude_deg: float          # east positive
    min_elevation_deg: float = 0.0
    altitude_km: float = 0.0

    def to_dict(self) -> dict:
        return {"name": self.name, "latitude_deg": self.latitude_deg, "longitude_deg": self.longitude_deg,
                "min_elevation_deg": self.min_elevation_deg, "altitude_km": self.altitude_km}


def read_stations(path) -> list:
    """Stations from a TOML file.

    ``[stations.NAME]`` tables with ``latitude_deg``, ``longitude_deg`` (east positive), optional
    ``min_elevation_deg`` (default 0) and ``altitude_km`` (0).

    Parameters
    ----------
    path : str or pathlib.Path
        The TOML file.

    Returns
    -------
    list of Station
        In the file's order.

    Raises
    ------
    InputError
        A missing or unreadable file, invalid TOML, no stations, an unknown key or a value out of
        range (the message names the file, the key and the allowed range).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> f = pathlib.Path(tempfile.mkdtemp()) / "stations.toml"
    >>> _ = f.write_text("[stations.north]\\nlatitude_deg = 60.0\\nlongitude_deg = 10.0\\n")
    >>> [s.name for s in read_stations(f)]
    ['north']

    References
    ----------
    TOML v1.0.0 (2021), https://toml.io/en/v1.0.0.
    """
    p = Path(path)
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(f"stations file '{path}' does not exist") from None
    except (OSError, UnicodeDecodeError) as e:
        raise InputError(f"stations file '{path}' cannot be read: {e}") from None
    except tomllib.TOMLDecodeError as e:
        raise InputError(f"stations file '{path}' is not valid TOML: {e}") from None
    table = data.get("stations")
    if not isinstance(table, dict) or not table:
        raise InputError(f"stations file '{path}' has no [stations.NAME] tables")
    allowed = {"latitude_deg", "longitude_deg", "min_elevation_deg", "altitude_km"}
    out = []
    for name, row in table.items():
        if not isinstance(row, dict):
            raise InputError(f"stations file '{path}': stations.{name} is not a table")
        extra = set(row) - allowed
        if extra:
            raise InputError(f"stations file '{path}': stations.{name} has unknown key "
                             f"'{sorted(extra)[0]}'; allowed: {', '.join(sorted(allowed))}")
        vals = {}
        for key, lo, hi, need in (("latitude_deg", -90, 90, True), ("longitude_deg", -180, 360, True),
                                  ("min_elevation_deg", -5, 90, False), ("altitude_km", -1, 10, False)):
            if key not in row:
                if need:
                    raise InputError(f"stations file '{path}': stations.{name} needs {key}")
                continue
            vals[key] = validate.number_value(f"stations file '{path}': stations.{name}.{key}", row[key], lo, hi)
        out.append(Station(str(name), vals["latitude_deg"], vals["longitude_deg"],
                           vals.get("min_elevation_deg", 0.0), vals.get("altitude_km", 0.0)))
    return out


def earth_rotation_angle(jd1, jd2=0.0):
    """Earth rotation angle at a UT1 Julian date.

    ``ERA(Tu) = 2 pi (0.7790572732640 + 1.00273781191135448 Tu)``, ``Tu = JD(UT1) - 2451545.0``.

    Parameters
    ----------
    jd1, jd2 : float or array_like
        UT1 Julian date in two parts.

    Returns
    -------
    numpy.ndarray
        ERA, radians in [0, 2 pi).

    Raises
    ------
    ValueError
        Inputs that cannot be converted to floats.

    Examples
    --------
    >>> round(float(earth_rotation_angle(2451545.0)), 10)
    4.8949612128

    References
    ----------
    Petit, G. & Luzum, B. (eds.), "IERS Conventions (2010)", IERS Technical Note 36 (2010),
    eq. (5.15).
    """
    jd1, jd2 = np.asarray(jd1, dtype=float), np.asarray(jd2, dtype=float)
    tu = (jd1 - J2000_JD) + jd2
    frac = np.mod(jd1, 1.0) + np.mod(jd2, 1.0)
    return np.mod(2.0 * math.pi * (frac + 0.7790572732640 + 0.00273781191135448 * tu), 2.0 * math.pi)


def gmst(jd_ut1_1, jd_ut1_2, t_tt_centuries):
    """Greenwich mean sidereal time: ERA plus the accumulated precession in right ascension.

    Parameters
    ----------
    jd_ut1_1, jd_ut1_2 : float or array_like
        UT1 Julian date in two parts.
    t_tt_centuries : float or array_like
        TT Julian centuries since J2000.

    Returns
    -------
    numpy.ndarray
        GMST, radians.

    Raises
    ------
    ValueError
        Inputs that cannot be converted to floats.

    Examples
    --------
    >>> round(float(np.degrees(gmst(2451545.0, 0.0, 0.0))) % 360.0, 4)
    280.4606

    References
    ----------
    Petit, G. & Luzum, B. (eds.), "IERS Conventions (2010)", IERS Technical Note 36 (2010),
    eq. (5.32); Capitaine, N., Wallace, P. T. & Chapront, J., "Expressions for IAU 2000
    precession quantities", Astronomy & Astrophysics 412, 567 (2003).
    """
    t = np.asarray(t_tt_centuries, dtype=float)
    poly = (0.014506 + t * (4612.156534 + t * (1.3915817 + t * (-0.00000044
            + t * (-0.000029956 + t * -0.0000000368))))) * ARCSEC
    return np.mod(earth_rotation_angle(jd_ut1_1, jd_ut1_2) + poly, 2.0 * math.pi)


def precession_matrix(t_tt_centuries):
    """IAU 1976 precession, J2000 mean equator -> mean equator of date.

    Parameters
    ----------
    t_tt_centuries : float or array_like
        TT Julian centuries since J2000.

    Returns
    -------
    numpy.ndarray, shape (..., 3, 3)
        The rotation matrices.

    Raises
    ------
    ValueError
        Inputs that cannot be converted to floats.

    Examples
    --------
    >>> bool(np.allclose(precession_matrix(0.0), np.eye(3)))
    True

    References
    ----------
    Lieske, J. H., Lederle, T., Fricke, W. & Morando, B., "Expressions for the precession
    quantities based upon the IAU (1976) system of astronomical constants", Astronomy &
    Astrophysics 58, 1 (1977).
    """
    t = np.atleast_1d(np.asarray(t_tt_centuries, dtype=float))
    zeta = (2306.2181 + (0.30188 + 0.017998 * t) * t) * t * ARCSEC
    z = (2306.2181 + (1.09468 + 0.018203 * t) * t) * t * ARCSEC
    th = (2004.3109 - (0.42665 + 0.041833 * t) * t) * t * ARCSEC

    def r3(a):
        c, s = np.cos(a), np.sin(a)
        m = np.zeros(a.shape + (3, 3))
        m[..., 0, 0], m[..., 0, 1], m[..., 1, 0], m[..., 1, 1], m[..., 2, 2] = c, s, -s, c, 1.0
        return m

    def r2(a):
        c, s = np.cos(a), np.sin(a)
        m = np.zeros(a.shape + (3, 3))
        m[..., 0, 0], m[..., 0, 2], m[..., 2, 0], m[..., 2, 2], m[..., 1, 1] = c, -s, s, c, 1.0
        return m
    return r3(-z) @ r2(th) @ r3(-zeta)


def station_terrestrial_km(station: Station) -> np.ndarray:
    """Earth-fixed position of a station on the WGS 84 ellipsoid (geodetic latitude).

    Parameters
    ----------
    station : Station
        The station.

    Returns
    -------
    numpy.ndarray, shape (3,)
        km.

    Raises
    ------
    AttributeError
        Not a station.

    Examples
    --------
    >>> station_terrestrial_km(Station("equator", 0.0, 0.0)).round(3).tolist()
    [6378.137, 0.0, 0.0]

    References
    ----------
    NIMA TR8350.2, "Department of Defense World Geodetic System 1984", 3rd ed. (2000);
    Vallado, D. A., "Fundamentals of Astrodynamics and Applications", 4th ed. (2013), sec. 3.2.
    """
    f = 1.0 / WGS84_INV_F
    e2 = f * (2.0 - f)
    lat, lon = math.radians(station.latitude_deg), math.radians(station.longitude_deg)
    n = WGS84_A_KM / math.sqrt(1.0 - e2 * math.sin(lat) ** 2)
    h = station.altitude_km
    return np.array([(n + h) * math.cos(lat) * math.cos(lon), (n + h) * math.cos(lat) * math.sin(lon),
                     (n * (1.0 - e2) + h) * math.sin(lat)])


def terrestrial_matrices(tdb_s):
    """Matrices J2000 mean equator -> Earth-fixed at epochs (no nutation, no polar motion).

    Parameters
    ----------
    tdb_s : float or array_like
        Epochs, TDB seconds since J2000 (UT1 taken equal to UTC).

    Returns
    -------
    numpy.ndarray, shape (N, 3, 3)
        The rotation matrices.

    Raises
    ------
    InputError
        Pre-1972 epochs (UTC is not defined there with whole-second steps).

    Examples
    --------
    >>> m = terrestrial_matrices([0.0])
    >>> bool(np.allclose(m[0] @ m[0].T, np.eye(3)))
    True

    References
    ----------
    Petit, G. & Luzum, B. (eds.), "IERS Conventions (2010)", IERS Technical Note 36 (2010),
    ch. 5; Lieske, J. H. et al., Astronomy & Astrophysics 58, 1 (1977).
    """
    ep = _epoch(np.atleast_1d(np.asarray(tdb_s, dtype=float)))
    u1, u2 = ep.two_part_jd("utc")                # UT1 ~ UTC (module docstring)
    tt = np.atleast_1d(ep.seconds_since_j2000("tt")) / (SECONDS_PER_DAY * DAYS_PER_JULIAN_CENTURY)
    g = gmst(u1, u2, tt)
    c, s = np.cos(g), np.sin(g)
    rot = np.zeros(g.shape + (3, 3))
    rot[:, 0, 0], rot[:, 0, 1], rot[:, 1, 0], rot[:, 1, 1], rot[:, 2, 2] = c, s, -s, c, 1.0
    return rot @ precession_matrix(tt)


def look_angles(tdb_s, r_eq_km, station: Station, to_terrestrial=None):
    """Elevation and range of geocentric J2000-equator positions from a station.

    Parameters
    ----------
    tdb_s : array_like, shape (N,)
        Epochs, TDB seconds since J2000.
    r_eq_km : array_like, shape (N, 3)
        Geocentric positions, J2000 mean-equator axes, km.
    station : Station
        The station.
    to_terrestrial : numpy.ndarray, shape (N, 3, 3), optional
        :func:`terrestrial_matrices` at ``tdb_s`` (computed when omitted).

    Returns
    -------
    elevation_deg : numpy.ndarray, shape (N,)
        Degrees above the local horizon (ellipsoid normal).
    range_km : numpy.ndarray, shape (N,)
        Distance from the station.

    Raises
    ------
    ValueError
        Positions that do not match the epochs.

    Examples
    --------
    >>> st = Station("equator", 0.0, 0.0)
    >>> up = terrestrial_matrices([0.0])[0].T @ np.array([400000.0, 0.0, 0.0])
    >>> el, rng = look_angles([0.0], [up], st)
    >>> round(float(el[0]), 6), round(float(rng[0]), 3)
    (90.0, 393621.863)

    References
    ----------
    Vallado, D. A., "Fundamentals of Astrodynamics and Applications", 4th ed. (2013), sec. 4.4
    (topocentric horizon coordinates).
    """
    m = terrestrial_matrices(tdb_s) if to_terrestrial is None else to_terrestrial
    r = np.einsum("nij,nj->ni", m, np.atleast_2d(np.asarray(r_eq_km, dtype=float)))
    st = station_terrestrial_km(station)
    lat, lon = math.radians(station.latitude_deg), math.radians(station.longitude_deg)
    up = np.array([math.cos(lat) * math.cos(lon), math.cos(lat) * math.sin(lon), math.sin(lat)])
    d = r - st
    rng = np.linalg.norm(d, axis=1)
    return np.degrees(np.arcsin(np.clip(d @ up / rng, -1.0, 1.0))), rng


@dataclass(frozen=True)
class Window:
    """A visibility interval of one station.

    Parameters
    ----------
    station : str
        The station's name.
    start_tdb_s, end_tdb_s : float
        Edges, TDB seconds since J2000.
    max_elevation_deg : float
        Highest elevation in the interval.
    open_start, open_end : bool
        Already visible at the first sample, or still visible at the last.

    Examples
    --------
    >>> Window("north", 0.0, 3600.0, 45.0).duration_s
    3600.0

    References
    ----------
    Vallado, D. A., "Fundamentals of Astrodynamics and Applications", 4th ed. (2013), sec. 4.4.
    """
    station: str
    start_tdb_s: float
    end_tdb_s: float
    max_elevation_deg: float
    open_start: bool = False
    open_end: bool = False

    @property
    def duration_s(self) -> float:
        return self.end_tdb_s - self.start_tdb_s

    def to_dict(self) -> dict:
        s, e = epoch_to_text(np.array([self.start_tdb_s, self.end_tdb_s]), "UTC", 3)
        return {"station": self.station, "start_utc": s + "Z", "end_utc": e + "Z",
                "duration_h": self.duration_s / 3600.0, "max_elevation_deg": self.max_elevation_deg,
                "open_start": self.open_start, "open_end": self.open_end}


def windows(tdb_s, r_eq_km, station: Station, to_terrestrial=None) -> list:
    """Intervals with the elevation at or above the station's minimum.

    Edges are interpolated linearly in elevation between samples (the caller's step sets the edge
    accuracy).

    Parameters
    ----------
    tdb_s : array_like, shape (N,)
        Increasing epochs, TDB seconds since J2000.
    r_eq_km : array_like, shape (N, 3)
        Geocentric positions, J2000 mean-equator axes, km.
    station : Station
        The station.
    to_terrestrial : numpy.ndarray, optional
        :func:`terrestrial_matrices` at ``tdb_s``.

    Returns
    -------
    list of Window
        In time order.

    Raises
    ------
    ValueError
        Positions that do not match the epochs.

    Examples
    --------
    >>> t = np.arange(0.0, 86400.0, 600.0)
    >>> r = np.tile([400000.0, 0.0, 0.0], (t.size, 1))      # a fixed inertial direction
    >>> len(windows(t, r, Station("equator", 0.0, 0.0))) >= 1
    True

    References
    ----------
    Vallado, D. A., "Fundamentals of Astrodynamics and Applications", 4th ed. (2013), sec. 4.4.
    """
    t = np.asarray(tdb_s, dtype=float)
    el, _ = look_angles(t, r_eq_km, station, to_terrestrial)
    above = el >= station.min_elevation_deg
    if not above.any():
        return []
    d = np.diff(above.astype(np.int8))
    up, down = np.flatnonzero(d == 1), np.flatnonzero(d == -1)

    def cross(i):
        e0, e1 = el[i] - station.min_elevation_deg, el[i + 1] - station.min_elevation_deg
        return t[i] + (t[i + 1] - t[i]) * e0 / (e0 - e1)
    starts = ([(t[0], True, 0)] if above[0] else []) + [(cross(i), False, i + 1) for i in up]
    ends = [(cross(i), False, i) for i in down] + ([(t[-1], True, t.size - 1)] if above[-1] else [])
    return [Window(station.name, float(s), float(e), float(el[i0:i1 + 1].max()), os_, oe)
            for (s, os_, i0), (e, oe, i1) in zip(starts, ends)]
