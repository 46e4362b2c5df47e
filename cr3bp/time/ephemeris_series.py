"""The analytic series: approximate positions of the Sun, the Moon and the planets, in pure numpy.

Not the default: :mod:`cr3bp.time.ephemeris` evaluates JPL's DE421 tables and offers these series
only when asked (``model="series"``), e.g. for epochs outside DE421's span; outputs say which
model they come from (:func:`cr3bp.time.ephemeris.describe`). Against DE421 they are off by up to
27 km (Moon), 16 500 km (Sun about the Earth) and 1.9 million km (Jupiter), measured every
66 minutes over 2000-2049 (tests/test_against_jplephem.py shows the gap).

Everything is vectorised over epochs: an :class:`~cr3bp.time.scales.Epoch` array of N
instants gives an (N, 3) array in km (or (N, 6) in km and km/s); a single Epoch gives (3,)
or (6,). Import is cheap (no compilation); the tables in ``data/`` are read on first use.

Models
------
* **Planets** (and the Earth-Moon barycentre, EMB): Keplerian orbits from mean elements and
  their linear rates, E. M. Standish, "Keplerian Elements for Approximate Positions of the
  Major Planets" (JPL): **Table 1 (valid 1800-2050) inside 1800-2050**
  (``data/planet_elements.csv``) and **Table 2a/2b (valid 3000 BC-3000 AD) outside it**
  (``data/planet_elements_long.csv``, with the extra mean-anomaly terms of Jupiter to
  Pluto), accepted over **1000-3000 AD** only, the span we can check against plan94. The
  switch at 2051-01-01 jumps by up to the two tables' errors. Kepler's equation is solved
  by a vectorised Newton iteration. The elements are referred to the J2000 ecliptic and
  equinox.
* **Moon** (geocentric): the ELP-2000/82 main terms as truncated in J. Meeus, *Astronomical
  Algorithms*, 2nd ed. (1998), ch. 47 (Tables 47.A/47.B, 60 + 60 terms plus the additive
  terms), velocity by analytic differentiation of the same series. The series gives the
  mean ecliptic and equinox of date; it is rotated to the J2000 ecliptic with the IAU 1976
  ecliptic precession angles (Lieske et al. 1977, A&A 58, 1; as in Meeus ch. 21, eq. 21.5);
  the rotation's own rate (up to 3 mm/s in the Moon's velocity) is included.
* **Earth** from the EMB and the Moon: ``r_earth = r_emb - r_moon / (1 + GM_earth/GM_moon)``
  with the GMs of ``data/systems.toml``; **Sun** relative to the Earth is ``-r_earth``.
* **Solar-system barycentre** (SSB): the Sun's offset ``-sum(GM_i r_i) / sum(GM)`` over the
  eight planet systems and Pluto (GMs in ``data/planet_elements.csv``).
* **Axes**: ``"j2000-ecliptic"`` is the mean ecliptic and equinox of J2000;
  ``"j2000-equator"`` is the mean equator and equinox of J2000, reached by a rotation about
  x by the **IAU 2006 obliquity at J2000** (:data:`cr3bp.constants.OBLIQUITY_J2000_ARCSEC`; Hilton et al. 2006,
  Celest. Mech. Dyn. Astr. 94, 351), the value the current IAU precession model uses; the IAU
  1976 value, 0.042 arcsec larger, would move positions by 0.04 arcsec, far below these
  models' errors.
  The J2000 mean equator differs from the ICRS/GCRS axes by 23 mas (frame bias), neglected.
* **Time argument**: TT (taken for TDB; the difference, under 1.7 ms, moves the Moon by
  under 2 m and the planets by less).

Accuracy: worst differences from pyerfa measured in tests/test_against_pyerfa.py (bounds
asserted there; :data:`ACCURACY` holds them):

=================  =========  ==========  ===========  ========  ===================
body / center      years      km          arcsec       m/s       reference
=================  =========  ==========  ===========  ========  ===================
Moon / Earth       1900-2100  2.1         1.0          0.006     moon98 (same series)
Sun / Earth        1900-2050  19 000      26           2.5       epv00
Sun / Earth        2051-2100  30 000      41           4.1       epv00 (Table 2)
Sun / SSB          1900-2100  2 400       -            0.03      epv00
**Table 1**        1800-2050
Mercury / Sun                 6 600       30           6.7       plan94
Venus / Sun                   14 000      28           4.5       plan94
EMB / Sun                     18 000      25           3.4       plan94
Mars / Sun                    104 000     103          12        plan94
Jupiter / Sun                 1 850 000   514          38        plan94
Saturn / Sun                  4 900 000   656          41        plan94
Uranus / Sun                  2 370 000   147          21        plan94
Neptune / Sun                 1 660 000   66           8         plan94
**Table 2**        1000-1800, 2051-3000
Mercury / Sun                 10 800      33           8.1       plan94
Venus / Sun                   49 000      93           13        plan94
EMB / Sun                     44 000      61           6.6       plan94
Mars / Sun                    191 000     182          20        plan94
Jupiter / Sun                 2 830 000   788          45        plan94
Saturn / Sun                  10 400 000  1462         66        plan94
Uranus / Sun                  17 100 000  1262         43        plan94
Neptune / Sun                 11 700 000  534          13        plan94
=================  =========  ==========  ===========  ========  ===================

The Moon series is the one moon98 implements (it omits the 0.7 arcsec light-time constant
that Meeus' mean longitude contains, per its documentation), so against a full
lunar ephemeris our Moon inherits moon98's documented error: about 20 arcsec and 34 km worst,
3 arcsec and 6 km rms (1950-2100). The planetary differences are dominated by Standish's
mean elements: plan94's own worst errors against JPL DE200 over 1800-2100 are 7 arcsec
(Mercury) to 87 arcsec (Saturn) in longitude, per its documentation, so against a full
ephemeris add at most that much to the figures above.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

import numpy as np

from ..constants import (AU_KM, DAYS_PER_JULIAN_CENTURY, OBLIQUITY_J2000_ARCSEC,
                         SECONDS_PER_DAY)
from ..errors import ConvergenceError, InputError
from ..vocabulary import INERTIAL_FRAMES
from .scales import Epoch, parse_iso
from ..systems import body

__all__ = ["BODIES", "CENTERS", "FRAMES", "ACCURACY", "position", "state", "valid_interval",
           "ecliptic_to_equator_matrix", "OBLIQUITY_J2000_ARCSEC", "AU_KM", "LABEL"]

#: How outputs name this model.
LABEL = ("analytic series (Standish mean elements, Meeus ch. 47 Moon; km to 10^6 km level, "
         "not DE421)")

SECONDS_PER_CENTURY = DAYS_PER_JULIAN_CENTURY * SECONDS_PER_DAY
DEG = math.pi / 180.0
ARCSEC = DEG / 3600.0
KEPLER_TOL_RAD = 1e-13
KEPLER_MAX_ITER = 30
CHUNK = 4096                              # epochs per block in the lunar series (fits in cache)

#: Bodies whose elements are read; Pluto only enters the barycentre (no outside check of
#: its own position is available to us, so it is not offered as a body).
PLANETS = ("mercury", "venus", "emb", "mars", "jupiter", "saturn", "uranus", "neptune", "pluto")
BODIES = ("sun", "moon", "earth") + PLANETS[:-1]
CENTERS = BODIES + ("ssb",)           # any body, or the solar-system barycentre
FRAMES = INERTIAL_FRAMES

# Validity (TT). Planets: Standish Table 1 within 1800-2050, Table 2 outside it, accepted
# 1000-3000 AD (the span over which Table 2 is checked against pyerfa's plan94; Standish
# gives it for 3000 BC - 3000 AD). Moon: the span over which our series is checked against
# pyerfa's moon98 (itself checked by its authors against ELP/MPP02, 1950-2100).
# Anything needing both (Earth or Moon about the Sun, the SSB or a planet) gets the overlap.
TABLE1_SPAN = ("1800-01-01T00:00:00 TT", "2051-01-01T00:00:00 TT")
PLANET_SPAN = ("1000-01-01T00:00:00 TT", "3000-01-01T00:00:00 TT")
MOON_SPAN = ("1900-01-01T00:00:00 TT", "2101-01-01T00:00:00 TT")

#: Documented worst-case differences from pyerfa (position km, direction arcsec, velocity
#: m/s) over the years given; tests/test_against_pyerfa.py asserts each bound. "truth" is the
#: error against a full ephemeris implied by the reference's own published accuracy (moon98:
#: worst 18.3 arcsec / 31.7 km / 172 mm/s against ELP/MPP02 over 1950-2100, per its
#: documentation; plan94: worst 7-87 arcsec against DE200, 1800-2100).
ACCURACY = {
    # (body, center, years): dict(reference, km, arcsec, mps)
    ("moon", "earth", (1900, 2100)): dict(reference="pyerfa moon98", km=2.5, arcsec=1.3, mps=0.01,
                                          truth="about 34 km, 20 arcsec, 0.2 m/s worst (1950-2100)"),
    ("sun", "earth", (1900, 2050)): dict(reference="pyerfa epv00", km=22000.0, arcsec=30.0, mps=3.0),
    ("sun", "earth", (2051, 2100)): dict(reference="pyerfa epv00", km=34000.0, arcsec=46.0, mps=4.6),
    ("sun", "ssb", (1900, 2100)): dict(reference="pyerfa epv00", km=3000.0, arcsec=None, mps=0.05),
    # Standish Table 1, 1800-2050
    ("mercury", "sun", (1800, 2050)): dict(reference="pyerfa plan94", km=8000.0, arcsec=35.0, mps=8.0),
    ("venus", "sun", (1800, 2050)): dict(reference="pyerfa plan94", km=17000.0, arcsec=33.0, mps=6.0),
    ("emb", "sun", (1800, 2050)): dict(reference="pyerfa plan94", km=21000.0, arcsec=30.0, mps=4.0),
    ("mars", "sun", (1800, 2050)): dict(reference="pyerfa plan94", km=125000.0, arcsec=125.0, mps=14.0),
    ("jupiter", "sun", (1800, 2050)): dict(reference="pyerfa plan94", km=2.2e6, arcsec=620.0, mps=45.0),
    ("saturn", "sun", (1800, 2050)): dict(reference="pyerfa plan94", km=5.9e6, arcsec=790.0, mps=50.0),
    ("uranus", "sun", (1800, 2050)): dict(reference="pyerfa plan94", km=2.9e6, arcsec=180.0, mps=25.0),
    ("neptune", "sun", (1800, 2050)): dict(reference="pyerfa plan94", km=2.0e6, arcsec=80.0, mps=18.0),
    # Standish Table 2a/2b, 1000-1800 and 2051-3000
    ("mercury", "sun", (1000, 3000)): dict(reference="pyerfa plan94", km=13000.0, arcsec=40.0, mps=10.0),
    ("venus", "sun", (1000, 3000)): dict(reference="pyerfa plan94", km=60000.0, arcsec=110.0, mps=16.0),
    ("emb", "sun", (1000, 3000)): dict(reference="pyerfa plan94", km=54000.0, arcsec=74.0, mps=8.0),
    ("mars", "sun", (1000, 3000)): dict(reference="pyerfa plan94", km=230000.0, arcsec=220.0, mps=24.0),
    ("jupiter", "sun", (1000, 3000)): dict(reference="pyerfa plan94", km=3.4e6, arcsec=950.0, mps=54.0),
    ("saturn", "sun", (1000, 3000)): dict(reference="pyerfa plan94", km=1.25e7, arcsec=1750.0, mps=80.0),
    ("uranus", "sun", (1000, 3000)): dict(reference="pyerfa plan94", km=2.05e7, arcsec=1520.0, mps=52.0),
    ("neptune", "sun", (1000, 3000)): dict(reference="pyerfa plan94", km=1.4e7, arcsec=640.0, mps=16.0),
}


# ---------------------------------------------------------------------------------------
# Public API


def position(body: str, epochs, center: str = "earth", frame: str = "j2000-equator") -> np.ndarray:
    """Position of ``body`` relative to ``center``, km, in ``frame`` axes.

    Method: Standish's Table 1 / Table 2 mean elements (planets, EMB) and Meeus ch. 47 (Moon), see the
    module docstring for every model, frame rotation and constant.

    Parameters
    ----------
    body : str
        One of :data:`BODIES`: ``sun``, ``moon``, ``earth``, ``emb`` (Earth-Moon barycentre),
        ``mercury``, ``venus``, ``mars``, ``jupiter``, ``saturn``, ``uranus``, ``neptune``.
    epochs : Epoch or str or sequence of str
        Instants (any time scale inside an Epoch; ISO 8601 text is parsed with
        :func:`~cr3bp.time.scales.parse_iso`).
    center : str
        One of :data:`CENTERS`: any body above, or ``ssb`` (solar-system barycentre).
    frame : str
        ``"j2000-equator"`` (default) or ``"j2000-ecliptic"``.

    Returns
    -------
    ndarray
        (N, 3) km for N epochs, (3,) for a single epoch.

    Raises
    ------
    InputError
        Unknown body, center or frame; epochs outside the validity interval (see
        :func:`valid_interval`).

    Examples
    --------
    >>> r = position("moon", "2031-03-01T00:00:00 TDB")
    >>> 356000 < float(np.linalg.norm(r)) < 407000
    True

    References
    ----------
    Standish, E. M., "Keplerian Elements for Approximate Positions of the Major Planets", JPL
    Solar System Dynamics (Tables 1 and 2a/2b); Meeus, J., "Astronomical Algorithms", 2nd ed.,
    Willmann-Bell (1998), ch. 47.
    """
    return _evaluate(body, epochs, center, frame, False)


def state(body: str, epochs, center: str = "earth", frame: str = "j2000-equator") -> np.ndarray:
    """Position and velocity of ``body`` relative to ``center``: (N, 6) km and km/s.

    Same arguments as :func:`position`. Velocities are exact time derivatives of the
    positions: analytic differentiation of the lunar series (plus the turning of the
    ecliptic of date, by a central difference of the precession matrix), and for the
    planets the derivative of the Keplerian position including the rates of every element.

    Parameters
    ----------
    body, epochs, center, frame
        As for :func:`position`.

    Returns
    -------
    numpy.ndarray
        (N, 6) km and km/s for N epochs, (6,) for a single epoch.

    Raises
    ------
    InputError
        Unknown body, center or frame; epochs outside the validity interval.

    Examples
    --------
    >>> v = state("earth", "2031-03-01T00:00:00 TDB", center="sun")[3:]
    >>> 29.0 < float(np.linalg.norm(v)) < 31.0
    True

    References
    ----------
    Standish, E. M., "Keplerian Elements for Approximate Positions of the Major Planets", JPL
    Solar System Dynamics; Meeus, J., "Astronomical Algorithms", 2nd ed. (1998), ch. 47.
    """
    return _evaluate(body, epochs, center, frame, True)


def _evaluate(body, epochs, center, frame, _velocity: bool) -> np.ndarray:
    body = _choice("body", body, BODIES)
    center = _choice("center", center, CENTERS)
    frame = _choice("frame", frame, FRAMES)
    ep = _epochs(epochs)
    scalar = ep.isscalar
    t = np.atleast_1d(ep.seconds_since_j2000("tt")).ravel() / SECONDS_PER_CENTURY
    out = _relative(body, center, t, _velocity)
    if frame == "j2000-equator":   # rotation about x by -eps (ecliptic_to_equator_matrix)
        eps = OBLIQUITY_J2000_ARCSEC * ARCSEC
        c, s = math.cos(eps), math.sin(eps)
        for k in ((1, 2), (4, 5)) if _velocity else ((1, 2),):
            y, z = out[:, k[0]].copy(), out[:, k[1]]
            out[:, k[0]] = c * y - s * z
            out[:, k[1]] = s * y + c * z
    if not _velocity:
        out = out[:, :3]
    return out[0] if scalar else out.reshape(ep.shape + (out.shape[1],))


def valid_interval(body: str, center: str = "earth") -> tuple[Epoch, Epoch]:
    """(first, last) epochs at which :func:`position` accepts ``body`` about ``center``.

    Parameters
    ----------
    body : str
        One of :data:`BODIES`.
    center : str, optional
        One of :data:`CENTERS`.

    Returns
    -------
    first, last : Epoch
        The span (TT): 1900-2100 when the Moon or the Earth is involved, else 1000-3000 AD.

    Raises
    ------
    InputError
        Unknown body or centre.

    Examples
    --------
    >>> lo, hi = valid_interval("mars", "sun")
    >>> lo.to_iso("tt", 0)[:4], hi.to_iso("tt", 0)[:4]
    ('1000', '3000')

    References
    ----------
    Standish, E. M., "Keplerian Elements for Approximate Positions of the Major Planets", JPL
    Solar System Dynamics (validity of Tables 1 and 2); Meeus, J., "Astronomical Algorithms",
    2nd ed. (1998), ch. 47.
    """
    body = _choice("body", body, BODIES)
    center = _choice("center", center, CENTERS)
    pair = {body, center}
    spans = []
    if pair & {"moon", "earth"}:
        spans.append(MOON_SPAN)
    if not pair <= {"moon", "earth"}:
        spans.append(PLANET_SPAN)
    lo = max(parse_iso(sp[0]).jd("tt") for sp in spans)
    hi = min(parse_iso(sp[1]).jd("tt") for sp in spans)
    return Epoch.from_jd(lo, 0.0, "tt"), Epoch.from_jd(hi, 0.0, "tt")


def ecliptic_to_equator_matrix() -> np.ndarray:
    """Rotation taking J2000 ecliptic components to J2000 mean-equator components.

    ``r_eq = M @ r_ecl`` with M a rotation about x by -eps, eps the IAU 2006 obliquity
    (:data:`cr3bp.constants.OBLIQUITY_J2000_ARCSEC`).

    Returns
    -------
    numpy.ndarray, shape (3, 3)
        The rotation matrix.

    Raises
    ------
    None
        Nothing is checked.

    Examples
    --------
    >>> round(float(ecliptic_to_equator_matrix()[2, 1]), 6)
    0.397777

    References
    ----------
    Hilton, J. L. et al., "Report of the International Astronomical Union Division I Working
    Group on Precession and the Ecliptic", Celestial Mechanics and Dynamical Astronomy 94, 351
    (2006).
    """
    e = OBLIQUITY_J2000_ARCSEC * ARCSEC
    c, s = math.cos(e), math.sin(e)
    return np.array([[1.0, 0.0, 0.0], [0.0, c, -s], [0.0, s, c]])


# ---------------------------------------------------------------------------------------
# Composition of bodies and centres (J2000 ecliptic, km, km/s)


def _about_sun(name: str, t: np.ndarray, vel: bool) -> np.ndarray:
    """Heliocentric J2000-ecliptic state (km, km/s) of a body or centre."""
    n = t.size
    if name == "sun":
        return np.zeros((n, 6))
    if name == "ssb":
        return _ssb_heliocentric(t, vel)
    if name in ("earth", "moon"):
        moon = _moon_geocentric(t, vel)
        emb = _planet(t, "emb", vel)
        earth = emb - moon * _moon_fraction()
        return earth if name == "earth" else earth + moon
    return _planet(t, name, vel)


def _relative_pair_geocentric(body, center, t, vel):
    moon = _moon_geocentric(t, vel)
    return moon if body == "moon" else -moon


def _relative(body: str, center: str, t: np.ndarray, vel: bool) -> np.ndarray:
    """State of body about center; the Earth-Moon pair alone skips the planetary theory."""
    if body == center:
        return np.zeros((t.size, 6))
    lo, hi = valid_interval(body, center)
    _check_span(t, lo, hi, body, center)
    if {body, center} == {"moon", "earth"}:
        return _relative_pair_geocentric(body, center, t, vel)
    return _about_sun(body, t, vel) - _about_sun(center, t, vel)


@lru_cache(maxsize=1)
def _moon_fraction() -> float:
    """GM_moon / (GM_earth + GM_moon) from data/systems.toml (DE430 GMs, from memory)."""
    gm_e, gm_m = body("earth").gm_km3_s2, body("moon").gm_km3_s2
    return gm_m / (gm_e + gm_m)


def _ssb_heliocentric(t, vel):
    """Heliocentric state of the solar-system barycentre: sum(GM_i r_i) / (GM_sun + sum GM_i)."""
    el = _elements()
    total = _gm_sun()
    acc = np.zeros((t.size, 6))
    for name in PLANETS:
        gm = el[name]["gm_system_km3_s2"]
        acc += gm * _planet(t, name, vel)
        total += gm
    return acc / total


@lru_cache(maxsize=1)
def _gm_sun() -> float:
    return body("sun").gm_km3_s2


def _check_span(t, lo: Epoch, hi: Epoch, body, center):
    a = float(lo.seconds_since_j2000("tt")) / SECONDS_PER_CENTURY
    b = float(hi.seconds_since_j2000("tt")) / SECONDS_PER_CENTURY
    if t.size and (t.min() < a or t.max() > b):
        bad = t.min() if t.min() < a else t.max()
        when = parse_iso("2000-01-01T12:00:00 TT") + bad * SECONDS_PER_CENTURY
        raise InputError(
            f"epoch {when.to_iso('tt', 0)} is outside the validity of the {body}-about-{center} "
            f"analytic series, {lo.to_iso('tt', 0)} .. {hi.to_iso('tt', 0)}")


# ---------------------------------------------------------------------------------------
# Planets: Standish Table 1 mean elements + Kepler's equation


@lru_cache(maxsize=2)
def _elements(table: str = "planet_elements.csv") -> dict:
    """Standish's elements: Table 1 (``planet_elements.csv``) or Table 2a/2b
    (``planet_elements_long.csv``), as {body: {column: value}}; missing b, c, s, f are 0."""
    text = resources.files("cr3bp.data").joinpath(table).read_text()
    rows = [ln for ln in text.splitlines() if ln.strip() and not ln.startswith("#")]
    keys = rows[0].split(",")
    out = {}
    for ln in rows[1:]:
        vals = ln.split(",")
        el = {"b": 0.0, "c": 0.0, "s": 0.0, "f": 0.0}
        el.update({k: float(v) for k, v in zip(keys[1:], vals[1:])})
        out[vals[0]] = el
    return out


@lru_cache(maxsize=1)
def _table1_centuries() -> tuple[float, float]:
    return tuple(float(parse_iso(x).seconds_since_j2000("tt")) / SECONDS_PER_CENTURY for x in TABLE1_SPAN)


def _element_arrays(name: str, t: np.ndarray) -> dict:
    """Per-epoch element coefficients: Table 1 inside 1800-2050, Table 2a/2b outside."""
    one = _elements()[name]
    lo, hi = _table1_centuries()
    inside = (t >= lo) & (t <= hi)
    if inside.all():
        return dict(one)
    two = _elements("planet_elements_long.csv")[name]
    if not inside.any():
        return dict(two)
    return {k: np.where(inside, one[k], two[k]) for k in one if k != "gm_system_km3_s2"}


def kepler_eccentric_anomaly(mean_anomaly, e):
    """Eccentric anomaly E with E - e sin E = M (radians), vectorised Newton iteration.

    Newton's method from E0 = M + e sin M; stops when every |dE| < 1e-13 rad.

    Parameters
    ----------
    mean_anomaly : float or array_like
        Mean anomaly M, radians.
    e : float or array_like
        Eccentricity (broadcast with ``mean_anomaly``).

    Returns
    -------
    numpy.ndarray
        Eccentric anomaly E, radians.

    Raises
    ------
    ConvergenceError
        If 30 iterations do not reach the tolerance (not expected for e < 0.9).

    Examples
    --------
    >>> E = kepler_eccentric_anomaly(1.0, 0.5)
    >>> round(float(E - 0.5 * np.sin(E)), 12)
    1.0

    References
    ----------
    Danby, J. M. A., "Fundamentals of Celestial Mechanics", 2nd ed., Willmann-Bell (1988),
    sec. 6.6.
    """
    m = np.asarray(mean_anomaly, dtype=float)
    e = np.asarray(e, dtype=float)
    ecc = e + np.zeros_like(m)
    big = m + ecc * np.sin(m)
    residuals = []
    for i in range(KEPLER_MAX_ITER):
        f = big - ecc * np.sin(big) - m
        d = f / (1.0 - ecc * np.cos(big))
        big = big - d
        worst = float(np.max(np.abs(d))) if d.size else 0.0
        residuals.append(worst)
        if worst < KEPLER_TOL_RAD:
            return big
    raise ConvergenceError(f"Kepler's equation did not converge in {KEPLER_MAX_ITER} iterations "
                           f"(last step {residuals[-1]:.2e} rad)", KEPLER_MAX_ITER, residuals, big)


def _planet(t: np.ndarray, name: str, vel: bool) -> np.ndarray:
    """Heliocentric J2000-ecliptic state (km, km/s) from Standish's elements (T centuries TT):
    Table 1 within 1800-2050, Table 2a/2b (with the extra mean-anomaly terms) outside."""
    el = _element_arrays(name, t)
    a = (el["a"] + el["a_rate"] * t) * AU_KM
    e = el["e"] + el["e_rate"] * t
    inc = (el["i"] + el["i_rate"] * t) * DEG
    lon = el["L"] + el["L_rate"] * t
    peri = el["peri"] + el["peri_rate"] * t
    node = (el["node"] + el["node_rate"] * t) * DEG
    argp = peri * DEG - node
    ft = el["f"] * t * DEG
    m = lon - peri + el["b"] * t * t + el["c"] * np.cos(ft) + el["s"] * np.sin(ft)
    m = np.remainder(m + 180.0, 360.0) - 180.0
    big = kepler_eccentric_anomaly(m * DEG, e)
    cos_e, sin_e = np.cos(big), np.sin(big)
    b = a * np.sqrt(1.0 - e * e)
    xp = a * (cos_e - e)
    yp = b * sin_e
    co, so = np.cos(argp), np.sin(argp)
    cn, sn = np.cos(node), np.sin(node)
    ci, si = np.cos(inc), np.sin(inc)
    # columns of the orbit-plane -> ecliptic rotation (Standish, eq. 8.34-style)
    px, py, pz = co * cn - so * sn * ci, co * sn + so * cn * ci, so * si
    qx, qy, qz = -so * cn - co * sn * ci, -so * sn + co * cn * ci, co * si
    out = np.empty((t.size, 6))
    out[:, 0] = px * xp + qx * yp
    out[:, 1] = py * xp + qy * yp
    out[:, 2] = pz * xp + qz * yp
    if vel:
        # exact time derivative: d/dt of every element (Kepler's equation differentiated)
        per_s = DEG / SECONDS_PER_CENTURY
        m_dot = (el["L_rate"] - el["peri_rate"] + 2.0 * el["b"] * t
                 + el["f"] * DEG * (el["s"] * np.cos(ft) - el["c"] * np.sin(ft))) * per_s
        argp_dot = (el["peri_rate"] - el["node_rate"]) * per_s
        node_dot = el["node_rate"] * per_s
        inc_dot = el["i_rate"] * per_s
        a_dot = el["a_rate"] * AU_KM / SECONDS_PER_CENTURY
        e_dot = el["e_rate"] / SECONDS_PER_CENTURY
        root = np.sqrt(1.0 - e * e)
        denom = 1.0 - e * cos_e
        big_dot = (m_dot + sin_e * e_dot) / denom               # from E - e sin E = M
        vxp = (a_dot / a) * xp + a * (-sin_e * big_dot - e_dot)
        vyp = (a_dot / a) * yp + a * (root * cos_e * big_dot - e * e_dot * sin_e / root)
        x, y, z = out[:, 0], out[:, 1], out[:, 2]
        # rotations of the orbit: about its normal (argp), the ecliptic pole (node) and the
        # line of nodes (inclination): d r = omega x r
        wn = (sn * si, -cn * si, ci)
        vx = px * vxp + qx * vyp + argp_dot * (wn[1] * z - wn[2] * y) - node_dot * y + inc_dot * (sn * z)
        vy = py * vxp + qy * vyp + argp_dot * (wn[2] * x - wn[0] * z) + node_dot * x - inc_dot * (cn * z)
        vz = pz * vxp + qz * vyp + argp_dot * (wn[0] * y - wn[1] * x) + inc_dot * (cn * y - sn * x)
        out[:, 3], out[:, 4], out[:, 5] = vx, vy, vz
    else:
        out[:, 3:] = 0.0
    return out


# ---------------------------------------------------------------------------------------
# Moon: Meeus ch. 47 (ELP-2000/82 main terms)

# Fundamental arguments, degrees, polynomial coefficients in T (Meeus 1998, eq. 47.1-47.5)
_LP = (218.3164477, 481267.88123421, -0.0015786, 1.0 / 538841.0, -1.0 / 65194000.0)
_D = (297.8501921, 445267.1114034, -0.0018819, 1.0 / 545868.0, -1.0 / 113065000.0)
_M = (357.5291092, 35999.0502909, -0.0001536, 1.0 / 24490000.0, 0.0)
_MP = (134.9633964, 477198.8675055, 0.0087414, 1.0 / 69699.0, -1.0 / 14712000.0)
_F = (93.2720950, 483202.0175233, -0.0036539, -1.0 / 3526000.0, 1.0 / 863310000.0)
_A1 = (119.75, 131.849)
_A2 = (53.09, 479264.290)
_A3 = (313.45, 481266.484)
_E = (1.0, -0.002516, -0.0000074)           # eccentricity factor of the Earth's orbit, eq. 47.6
MOON_MEAN_DISTANCE_KM = 385000.56           # Meeus 1998, ch. 47


def _poly(c, t):
    r = np.full_like(t, c[-1])
    for k in c[-2::-1]:
        r = r * t + k
    return r


def _dpoly(c, t):
    """Derivative of the polynomial, per century."""
    d = [k * i for i, k in enumerate(c)][1:]
    return _poly(tuple(d), t) if d else np.zeros_like(t)


def _angle(c, t):
    """Angle in radians (not reduced: at most 1e4 rad over 1800-2100, so trigonometric
    functions lose under 1e-12 rad)."""
    return _poly(c, t) * DEG


def _rate(c, t):
    """Rate of the angle of :func:`_angle`, rad/s."""
    return _dpoly(c, t) * (DEG / SECONDS_PER_CENTURY)


def _unit(a):
    """exp(i a) built from cos and sin (cheaper than a complex exponential)."""
    z = np.empty(a.shape, complex)
    z.real = np.cos(a)
    z.imag = np.sin(a)
    return z


@dataclass(frozen=True)
class _LunarSeries:
    """The Meeus tables arranged for block evaluation (see :func:`_moon_geocentric`)."""

    y_keys: tuple      # (kD, kM) combinations
    x_keys: tuple      # (kMp, kF) combinations
    coef: np.ndarray   # (P, 3Q): longitude | distance | latitude blocks
    rows: tuple        # sparse rows of coef.T: per row ((p, value), ...), 165 entries in all
    k_d: np.ndarray    # (Q,)
    k_m: np.ndarray
    k_mp: np.ndarray   # (P,)
    k_f: np.ndarray


@lru_cache(maxsize=1)
def _lunar_series() -> _LunarSeries:
    text = resources.files("cr3bp.data").joinpath("moon_series.csv").read_text()
    rows = [ln.split(",") for ln in text.splitlines() if ln.strip() and not ln.startswith("#")][1:]
    terms = [(r[0], int(r[1]), int(r[2]), int(r[3]), int(r[4]), float(r[5]), float(r[6])) for r in rows]
    y_keys = tuple(sorted({(d, m) for _, d, m, _, _, _, _ in terms}))
    x_keys = tuple(sorted({(mp, f) for _, _, _, mp, f, _, _ in terms}))
    q, p = len(y_keys), len(x_keys)
    coef = np.zeros((p, 3 * q))
    for tab, d, m, mp, f, s, c in terms:
        iq, ip = y_keys.index((d, m)), x_keys.index((mp, f))
        if tab == "A":
            coef[ip, iq] += s
            coef[ip, q + iq] += c
        else:
            coef[ip, 2 * q + iq] += s
    coef_t = coef.T
    rows = tuple(tuple((int(j), float(coef_t[i, j])) for j in np.flatnonzero(coef_t[i]))
                 for i in range(coef_t.shape[0]))
    return _LunarSeries(y_keys, x_keys, coef, rows,
                        np.array([k[0] for k in y_keys], float), np.array([k[1] for k in y_keys], float),
                        np.array([k[0] for k in x_keys], float), np.array([k[1] for k in x_keys], float))


def _fused_sums(ser, x, y, vel):
    """Sums of the lunar series, row by row of the coefficient matrix so that only vectors
    of n stay in cache.

    Returns, per block (longitude, distance, latitude), the complex sum
    ``S = sum_q y_q (C @ x)_q`` and, with ``vel``, the weighted sums whose combination
    with the argument rates gives dS/dt: weights kD, kM, |kM| on the y factor and kM', kF
    on the x factor.
    """
    q = len(ser.y_keys)
    n = x[0].shape[0]
    names = ("s", "kd", "km", "ke", "kmp", "kf") if vel else ("s",)
    out = {k: [np.zeros(n, complex) for _ in range(3)] for k in names}
    w, tmp, prod = (np.empty(n, complex) for _ in range(3))
    w_mp, w_f = np.empty(n, complex), np.empty(n, complex)
    # real coefficients act on the interleaved (re, im) float views: one real multiply per
    # number instead of a complex one
    xv = [a.view(float) for a in x]
    wv, tv, w_mpv, w_fv = w.view(float), tmp.view(float), w_mp.view(float), w_f.view(float)
    for i, row in enumerate(ser.rows):
        if not row:
            continue
        blk, iq = divmod(i, q)
        (j0, v0), rest = row[0], row[1:]
        np.multiply(xv[j0], v0, out=wv)
        if vel:
            np.multiply(xv[j0], v0 * ser.k_mp[j0], out=w_mpv)
            np.multiply(xv[j0], v0 * ser.k_f[j0], out=w_fv)
        for j, v in rest:
            np.multiply(xv[j], v, out=tv)
            wv += tv
            if vel:
                if ser.k_mp[j]:
                    w_mpv += tv * ser.k_mp[j]
                if ser.k_f[j]:
                    w_fv += tv * ser.k_f[j]
        np.multiply(w, y[iq], out=prod)
        out["s"][blk] += prod
        if vel:
            pv = prod.view(float)
            for key, k in (("kd", ser.k_d[iq]), ("km", ser.k_m[iq]), ("ke", abs(ser.k_m[iq]))):
                if k:
                    out[key][blk].view(float)[:] += pv * k
            out["kmp"][blk] += w_mp * y[iq]
            out["kf"][blk] += w_f * y[iq]
    return out


def _powers(z, kmax):
    """{k: z**k} for -kmax <= k <= kmax (unit complex z; negative powers by conjugation)."""
    out = {0: np.ones_like(z), 1: z}
    for k in range(2, kmax + 1):
        out[k] = out[k - 1] * z
    for k in range(1, kmax + 1):
        out[-k] = np.conj(out[k])
    return out


def _moon_geocentric(t: np.ndarray, vel: bool) -> np.ndarray:
    """Geocentric J2000-ecliptic state of the Moon (km, km/s), T = centuries of TT."""
    out = np.empty((t.size, 6))
    for s in range(0, t.size, CHUNK):
        out[s:s + CHUNK] = _moon_block(t[s:s + CHUNK], vel)
    return out


def _cos_sin_small(x):
    """cos and sin of |x| < 0.2 rad by Taylor polynomials (error < 1e-16); cheaper than trig."""
    x2 = x * x
    c = 1.0 + x2 * (-1 / 2 + x2 * (1 / 24 + x2 * (-1 / 720 + x2 * (1 / 40320 + x2 * (-1 / 3628800
        + x2 * (1 / 479001600))))))
    s = x * (1.0 + x2 * (-1 / 6 + x2 * (1 / 120 + x2 * (-1 / 5040 + x2 * (1 / 362880 + x2 * (-1 / 39916800
        + x2 * (1 / 6227020800)))))))
    return c, s


def _moon_block(t: np.ndarray, vel: bool) -> np.ndarray:
    """Meeus ch. 47 for one block of epochs.

    Each term sin(kD D + kM M + kM' M' + kF F) is the imaginary part of
    ``exp(i (kD D + kM M)) * exp(i (kM' M' + kF F))``: the two factors take few distinct
    values (13 ``y_keys``, 33 ``x_keys``), so the series is a sparse real matrix (165
    entries) applied to the x factors, then weighted by the y factors; only eight angles
    need trigonometric functions.
    """
    ser = _lunar_series()
    lp, d, m, mp, f = (_angle(c, t) for c in (_LP, _D, _M, _MP, _F))
    ecc = _poly(_E, t)

    zd, zm, zmp, zf = _unit(d), _unit(m), _unit(mp), _unit(f)
    pd, pm = _powers(zd, 4), _powers(zm, 2)
    pmp, pf = _powers(zmp, 4), _powers(zf, 3)
    epow = {0: 1.0, 1: ecc, 2: ecc * ecc}
    # factors as lists of arrays; a factor that is a single power is that array (no copy)
    y = [pd[kd] if km == 0 else pd[kd] * (pm[km] * epow[abs(km)]) if kd else pm[km] * epow[abs(km)]
         for kd, km in ser.y_keys]
    x = [pmp[kmp] if kf == 0 else pf[kf] if kmp == 0 else pmp[kmp] * pf[kf] for kmp, kf in ser.x_keys]
    sums = _fused_sums(ser, x, y, vel)
    totals = sums["s"]

    # additive terms (Meeus 1998, ch. 47, after the tables)
    a1, a2, a3 = _angle(_A1, t), _angle(_A2, t), _angle(_A3, t)
    za1, zlp = _unit(a1), _unit(lp)
    s_a2, s_a3 = np.sin(a2), np.sin(a3)
    z_lp_f = zlp * pf[-1]
    z_a1_mf, z_a1_pf = za1 * pf[-1], za1 * zf
    z_lp_mmp, z_lp_pmp = zlp * pmp[-1], zlp * zmp
    add_l = 3958.0 * za1.imag + 1962.0 * z_lp_f.imag + 318.0 * s_a2
    add_b = (-2235.0 * zlp.imag + 382.0 * s_a3 + 175.0 * z_a1_mf.imag + 175.0 * z_a1_pf.imag
             + 127.0 * z_lp_mmp.imag - 115.0 * z_lp_pmp.imag)
    sum_l = totals[0].imag + add_l
    sum_r = totals[1].real
    sum_b = totals[2].imag + add_b

    # lambda = L' + dl with dl small; beta small
    cdl, sdl = _cos_sin_small(sum_l * (1e-6 * DEG))
    cl = zlp.real * cdl - zlp.imag * sdl
    sl = zlp.imag * cdl + zlp.real * sdl
    cb, sb = _cos_sin_small(sum_b * (1e-6 * DEG))
    dist = MOON_MEAN_DISTANCE_KM + sum_r * 1e-3
    out = np.empty((t.size, 6))
    if not vel:
        _precess_position(t, dist * cb, cl, sl, dist * sb, out)
        out[:, 3:] = 0.0
        return out
    rot = _ecliptic_date_to_j2000(t)
    _apply(rot, dist * cb * cl, dist * cb * sl, dist * sb, out[:, :3])

    lp_dot, d_dot, m_dot, mp_dot, f_dot, a1_dot, a2_dot, a3_dot = (
        _rate(c, t) for c in (_LP, _D, _M, _MP, _F, _A1, _A2, _A3))
    ecc_dot = _dpoly(_E, t) / SECONDS_PER_CENTURY
    # time derivatives of the three sums: d/dt sum A exp(i arg) = i sum A (k . rates) exp(i arg)
    # plus the E^|kM| factor's rate (d(E^k)/dt = k E^k Edot/E)
    def rate(blk):
        z = (d_dot * sums["kd"][blk] + m_dot * sums["km"][blk] + mp_dot * sums["kmp"][blk]
             + f_dot * sums["kf"][blk])
        return 1j * z + (ecc_dot / ecc) * sums["ke"][blk]

    rate_l, rate_r, rate_b = rate(0), rate(1), rate(2)

    add_l_dot = (3958.0 * za1.real * a1_dot + 1962.0 * z_lp_f.real * (lp_dot - f_dot)
                 + 318.0 * np.cos(a2) * a2_dot)
    add_b_dot = (-2235.0 * zlp.real * lp_dot + 382.0 * np.cos(a3) * a3_dot
                 + 175.0 * z_a1_mf.real * (a1_dot - f_dot) + 175.0 * z_a1_pf.real * (a1_dot + f_dot)
                 + 127.0 * z_lp_mmp.real * (lp_dot - mp_dot) - 115.0 * z_lp_pmp.real * (lp_dot + mp_dot))
    lam_dot = lp_dot + (rate_l.imag + add_l_dot) * (1e-6 * DEG)
    beta_dot = (rate_b.imag + add_b_dot) * (1e-6 * DEG)
    dist_dot = rate_r.real * 1e-3
    _apply(rot,
           dist_dot * cb * cl - dist * sb * cl * beta_dot - dist * cb * sl * lam_dot,
           dist_dot * cb * sl - dist * sb * sl * beta_dot + dist * cb * cl * lam_dot,
           dist_dot * sb + dist * cb * beta_dot, out[:, 3:])
    # turning of the ecliptic of date (up to 3 mm/s): d(rot)/dt by a central difference of
    # the precession matrix, step 0.001 century (its angles are cubics: error negligible)
    h = 1e-3
    r_plus, r_minus = _ecliptic_date_to_j2000(t + h), _ecliptic_date_to_j2000(t - h)
    scale = 1.0 / (2 * h * SECONDS_PER_CENTURY)
    rot_dot = [[(r_plus[i][k] - r_minus[i][k]) * scale for k in range(3)] for i in range(3)]
    turn = np.empty((t.size, 3))
    _apply(rot_dot, dist * cb * cl, dist * cb * sl, dist * sb, turn)
    out[:, 3:] += turn
    return out


def _apply(rot, x, y, z, out):
    """out[:, i] = sum_k rot[i][k] * (x, y, z)[k] for a 3x3 nested list of arrays."""
    for i in range(3):
        out[:, i] = rot[i][0] * x + rot[i][1] * y + rot[i][2] * z


def _precession_angles(t):
    """IAU 1976 ecliptic precession angles (Lieske et al. 1977; Meeus 1998, eq. 21.5, T = 0),
    radians: pi_A, Pi_A - 174.876384 deg, p_A."""
    pi_a = (47.0029 * t - 0.03302 * t**2 + 0.000060 * t**3) * ARCSEC
    d_pi = (-869.8089 * t + 0.03536 * t**2) * ARCSEC
    p_a = (5029.0966 * t + 1.11113 * t**2 - 0.000006 * t**3) * ARCSEC
    return pi_a, d_pi, p_a


_PI0 = 174.876384 * DEG


def _precess_position(t, rho, cl, sl, z, out):
    """out[:, :3] = R^T (rho cos l, rho sin l, z): the rotation of
    :func:`_ecliptic_date_to_j2000` applied as its three factors, R3(Pi_A + p_A) folded
    into the longitude, then R1(-pi_A) and R3(-Pi_A) (cheaper than forming the matrix)."""
    pi_a, d_pi, p_a = _precession_angles(t)
    c0, s0 = math.cos(_PI0), math.sin(_PI0)
    cda, sda = _cos_sin_small(d_pi + p_a)
    ca, sa = c0 * cda - s0 * sda, s0 * cda + c0 * sda          # of A = Pi_A + p_A
    x1 = rho * (cl * ca + sl * sa)                              # rho cos(l - A)
    y1 = rho * (sl * ca - cl * sa)                              # rho sin(l - A)
    ci, si = _cos_sin_small(pi_a)
    y2 = ci * y1 - si * z
    out[:, 2] = si * y1 + ci * z
    cd, sd = _cos_sin_small(d_pi)
    c_pi, s_pi = c0 * cd - s0 * sd, s0 * cd + c0 * sd          # of Pi_A
    out[:, 0] = c_pi * x1 - s_pi * y2
    out[:, 1] = s_pi * x1 + c_pi * y2


def _ecliptic_date_to_j2000(t: np.ndarray):
    """Rotation (3x3 nested list of arrays) taking mean-ecliptic-of-date components to J2000.

    Method: IAU 1976 ecliptic precession from J2000 to date (Lieske et al. 1977; Meeus 1998,
    eq. 21.5 with T = 0): inclination pi_A, node longitude Pi_A, general precession p_A;
    date <- J2000 is R = R3(-(Pi_A + p_A)) R1(pi_A) R3(Pi_A); we return R transposed.
    The angles stay within 0.2 rad of fixed values over 1800-2100, so their cosines and
    sines are Taylor polynomials about those values.
    """
    pi_a, d_pi, p_a = _precession_angles(t)
    c0, s0 = math.cos(_PI0), math.sin(_PI0)
    cd, sd = _cos_sin_small(d_pi)
    c_pi, s_pi = c0 * cd - s0 * sd, s0 * cd + c0 * sd          # of Pi_A
    cda, sda = _cos_sin_small(d_pi + p_a)
    ca, sa = c0 * cda - s0 * sda, s0 * cda + c0 * sda          # of Pi_A + p_A
    ci, si = _cos_sin_small(pi_a)
    r = [[ca * c_pi + sa * ci * s_pi, ca * s_pi - sa * ci * c_pi, -sa * si],
         [sa * c_pi - ca * ci * s_pi, sa * s_pi + ca * ci * c_pi, ca * si],
         [si * s_pi, -si * c_pi, ci]]
    return [[r[k][i] for k in range(3)] for i in range(3)]


# ---------------------------------------------------------------------------------------
# helpers


def _choice(what: str, value, allowed) -> str:
    v = str(value).lower()
    if v not in allowed:
        raise InputError(f"{what} {value!r} is not known; allowed: {', '.join(allowed)}")
    return v


def _epochs(epochs) -> Epoch:
    if isinstance(epochs, Epoch):
        return epochs
    if isinstance(epochs, str) or (isinstance(epochs, (list, tuple)) and epochs and isinstance(epochs[0], str)):
        return parse_iso(epochs)
    raise InputError(f"epochs {epochs!r:.60} are not an Epoch or ISO 8601 text")
