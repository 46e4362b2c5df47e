"""Positions and velocities of the Sun, the Moon and the planets: JPL DE421, in numpy.

Everything is vectorised over epochs: an :class:`~cr3bp.time.scales.Epoch` array of N
instants gives an (N, 3) array in km (or (N, 6) in km and km/s); a single Epoch gives (3,)
or (6,). Import is cheap (no compilation, no file read); the kernel is opened on first use.

Models (the ``model`` keyword; outputs name theirs with :func:`describe`)
----------------------------------------------------------------------------
``"de421"`` (default)
    JPL's planetary and lunar ephemeris DE421 (Folkner, Williams & Boggs, IPN Progress
    Report 42-178, 2009): its Chebyshev tables as shipped in the kernel ``de421.bsp`` of the
    PyPI data package ``skyfield-data``, read and evaluated by our own numpy code
    (:mod:`cr3bp.time.ephemeris_tables`). Velocities are the exact derivatives of the tables'
    polynomials. Agreement with ``jplephem`` reading the same file: every body within 1 m
    and 1 mm/s (tests/test_against_jplephem.py; measured: below 2 mm for Neptune, 0.03 mm
    for the Moon about the Earth: double-precision rounding). Span: the kernel's
    coverage, **1899-07-29 to 2053-10-09 TDB** (DE421 is documented for 1900-2050); epochs
    outside it raise :class:`~cr3bp.errors.EphemerisSpanError`, never a silent fallback.
``"series"``
    The analytic series of :mod:`cr3bp.time.ephemeris_series` (Standish's mean elements, Meeus'
    lunar series), accepted 1000-3000 AD (Moon 1900-2100): the labelled fallback for epochs
    outside DE421, km-level for the Moon and up to millions of km for the outer planets.

Bodies: ``sun``, ``moon``, ``earth``, ``emb`` (Earth-Moon barycentre), ``mercury``,
``venus``, ``mars``, and ``jupiter``, ``saturn``, ``uranus``, ``neptune`` (for these four:
the planet system's barycentre, which is what DE421 tabulates); centres: any body or ``ssb``
(the solar-system barycentre).

Axes: ``"j2000-equator"`` is the DE421 kernel's own frame, the ICRF as realised by DE421
(the mean equator and equinox of J2000 differ from it by the 23 mas frame bias, which is
not applied: the two are taken as one, as before); ``"j2000-ecliptic"`` is reached from it
by a rotation about x by the **IAU 2006 obliquity at J2000** (:data:`cr3bp.constants.OBLIQUITY_J2000_ARCSEC`; Hilton et
al. 2006, Celest. Mech. Dyn. Astr. 94, 351).

Time argument: TDB (the tables' argument), from the Epoch's two-part Julian date (TDB - TT
interpolated between quarter-day nodes for more than 20 000 epochs, see :func:`_tdb_jd`).

Accuracy against pyerfa's analytic models (:data:`ACCURACY`, asserted in
tests/test_against_pyerfa.py): the differences are those models' published errors, since
DE421 is far closer to the truth than they are (moon98 against ELP/MPP02, epv00 against
DE405 and plan94 against DE200, per the pyerfa docstrings of each function).
"""

from __future__ import annotations

import math

import numpy as np

from . import ephemeris_series as _series, ephemeris_tables as tables
from ..constants import AU_KM, J2000_JD, OBLIQUITY_J2000_ARCSEC, SECONDS_PER_DAY
from ..errors import EphemerisSpanError, InputError
from . import scales                  # scales.tdb_minus_tt looked up at call time (a test counts its calls)
from .scales import Epoch, parse_iso

__all__ = ["BODIES", "CENTERS", "FRAMES", "MODELS", "ACCURACY", "position", "state", "valid_interval",
           "describe", "ecliptic_to_equator_matrix", "OBLIQUITY_J2000_ARCSEC", "AU_KM"]

ARCSEC = math.pi / 180.0 / 3600.0

BODIES = _series.BODIES
CENTERS = _series.CENTERS
FRAMES = _series.FRAMES
MODELS = ("de421", "series")
TDB_DIRECT_MAX = 20000        # up to this many epochs TDB - TT is summed directly
TDB_NODE_DAYS = 0.25          # else interpolated between nodes this far apart
DEFAULT_MODEL = "de421"

#: How outputs name each model.
LABELS = {
    "de421": "JPL DE421 (Folkner et al. 2009), kernel de421.bsp of the skyfield-data package",
    "series": _series.LABEL,
}

#: Bounds on the differences between DE421 and pyerfa's analytic models over 1900-2050
#: (position km, direction arcsec, velocity m/s); tests/test_against_pyerfa.py asserts each.
#: Each bound is the model's own published worst error (``published``, quoted from the
#: pyerfa docstring of moon98, epv00 or plan94) plus 10 %, for the comparison being against
#: DE421 over 1900-2050 rather than the authors' reference and span. For plan94 the position
#: bound combines the published worst longitude L, latitude B and radius R errors (against
#: DE200, 1800-2100) at the planet's aphelion distance (from memory: 0.467, 0.728, 1.017,
#: 1.666, 5.46, 10.12, 20.1, 30.4 au), the direction bound is hypot(L, B), and the velocity
#: bound is 2.5 times the published worst radial-rate error (the transverse part is not
#: published). ``measured`` is the worst difference seen in the test (8001 epochs).
ACCURACY = {
    # (body, center, years): dict(reference, km, arcsec, mps, published, measured)
    ("moon", "earth", (1900, 2050)): dict(
        reference="pyerfa moon98", km=34.9, arcsec=20.1, mps=0.189,
        published="moon98 vs ELP/MPP02, 1950-2100: worst 31.7 km, 18.3 arcsec, 172 mm/s",
        measured="31.7 km, 18.2 arcsec, 0.150 m/s"),
    ("sun", "earth", (1900, 2050)): dict(
        reference="pyerfa epv00", km=12.3, arcsec=None, mps=0.0055,
        published="epv00 vs DE405, 1900-2100: heliocentric Earth worst 11.2 km, 5.0 mm/s",
        measured="11.2 km, 3.8 mm/s"),
    ("earth", "ssb", (1900, 2050)): dict(
        reference="pyerfa epv00", km=14.7, arcsec=None, mps=0.0054,
        published="epv00 vs DE405, 1900-2100: barycentric Earth worst 13.4 km, 4.9 mm/s",
        measured="12.8 km, 3.8 mm/s"),
    ("sun", "ssb", (1900, 2050)): dict(
        reference="pyerfa epv00 (barycentric minus heliocentric Earth)", km=27.1, arcsec=None,
        mps=0.0109, published="the sum of the two epv00 worst errors above",
        measured="5.7 km, 0.3 mm/s"),
    ("mercury", "sun", (1900, 2050)): dict(reference="pyerfa plan94", km=2690.0, arcsec=7.78, mps=1.75,
                                           published="L 7, B 1 arcsec, R 500 km, Rdot 0.7 m/s",
                                           measured="1472 km, 6.5 arcsec, 1.5 m/s"),
    ("venus", "sun", (1900, 2050)): dict(reference="pyerfa plan94", km=4280.0, arcsec=7.78, mps=2.25,
                                         published="L 7, B 1 arcsec, R 1100 km, Rdot 0.9 m/s",
                                         measured="3575 km, 6.8 arcsec, 1.8 m/s"),
    ("emb", "sun", (1900, 2050)): dict(reference="pyerfa plan94", km=7490.0, arcsec=9.96, mps=2.5,
                                       published="L 9, B 1 arcsec, R 1300 km, Rdot 1.0 m/s",
                                       measured="5721 km, 7.8 arcsec, 2.1 m/s"),
    ("mars", "sun", (1900, 2050)): dict(reference="pyerfa plan94", km=35970.0, arcsec=28.6, mps=6.25,
                                        published="L 26, B 1 arcsec, R 9000 km, Rdot 2.5 m/s",
                                        measured="26 848 km, 26.4 arcsec, 4.5 m/s"),
    ("jupiter", "sun", (1900, 2050)): dict(reference="pyerfa plan94", km=352510.0, arcsec=86.0, mps=20.5,
                                           published="L 78, B 6 arcsec, R 82 000 km, Rdot 8.2 m/s",
                                           measured="243 795 km, 66.2 arcsec, 16.3 m/s"),
    ("saturn", "sun", (1900, 2050)): dict(reference="pyerfa plan94", km=768020.0, arcsec=96.9, mps=61.5,
                                          published="L 87, B 14 arcsec, R 263 000 km, Rdot 24.6 m/s",
                                          measured="584 269 km, 87.3 arcsec, 36.5 m/s"),
    ("uranus", "sun", (1900, 2050)): dict(reference="pyerfa plan94", km=1563050.0, arcsec=94.9, mps=68.5,
                                          published="L 86, B 7 arcsec, R 661 000 km, Rdot 27.4 m/s",
                                          measured="1 173 225 km, 86.4 arcsec, 29.1 m/s"),
    ("neptune", "sun", (1900, 2050)): dict(reference="pyerfa plan94", km=384640.0, arcsec=12.3, mps=53.5,
                                           published="L 11, B 2 arcsec, R 248 000 km, Rdot 21.4 m/s",
                                           measured="276 881 km, 10.0 arcsec, 21.7 m/s"),
}

#: The analytic series' own bounds against pyerfa (1000-3000 AD), kept for the fallback.
SERIES_ACCURACY = _series.ACCURACY


# ---------------------------------------------------------------------------------------
# Public API


def position(body: str, epochs, center: str = "earth", frame: str = "j2000-equator", *,
             model: str = DEFAULT_MODEL) -> np.ndarray:
    """Position of ``body`` relative to ``center``, km, in ``frame`` axes.

    Method: JPL DE421's Chebyshev tables (module docstring), or with ``model="series"`` the
    analytic series of :mod:`cr3bp.time.ephemeris_series`.

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
    model : str
        ``"de421"`` (default) or ``"series"``.

    Returns
    -------
    ndarray
        (N, 3) km for N epochs, (3,) for a single epoch.

    Raises
    ------
    InputError
        Unknown body, center, frame or model.
    EphemerisSpanError
        Epochs outside the model's span (see :func:`valid_interval`); an ``InputError``.

    Examples
    --------
    >>> r = position("moon", "2031-03-01T00:00:00 TDB")
    >>> 356000 < float(np.linalg.norm(r)) < 407000
    True

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009).
    """
    return _evaluate(body, epochs, center, frame, model, False)


def state(body: str, epochs, center: str = "earth", frame: str = "j2000-equator", *,
          model: str = DEFAULT_MODEL) -> np.ndarray:
    """Position and velocity of ``body`` relative to ``center``: (N, 6) km and km/s.

    Same arguments as :func:`position`. Velocities are exact time derivatives of the
    positions (of the tables' Chebyshev polynomials for DE421).

    Parameters
    ----------
    body, epochs, center, frame, model
        As for :func:`position`.

    Returns
    -------
    numpy.ndarray
        (N, 6) km and km/s for N epochs, (6,) for a single epoch.

    Raises
    ------
    InputError
        Unknown body, center, frame or model.
    EphemerisSpanError
        Epochs outside the model's span (an ``InputError``).

    Examples
    --------
    >>> v = state("earth", "2031-03-01T00:00:00 TDB", center="sun")[3:]
    >>> 29.0 < float(np.linalg.norm(v)) < 31.0
    True

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009).
    """
    return _evaluate(body, epochs, center, frame, model, True)


def valid_interval(body: str, center: str = "earth", *, model: str = DEFAULT_MODEL) -> tuple[Epoch, Epoch]:
    """(first, last) epochs at which :func:`position` accepts ``body`` about ``center``.

    Parameters
    ----------
    body : str
        One of :data:`BODIES`.
    center : str, optional
        One of :data:`CENTERS`.
    model : {"de421", "series"}, optional
        The ephemeris model.

    Returns
    -------
    first, last : Epoch
        The span (TDB for DE421: the kernel's coverage).

    Raises
    ------
    InputError
        Unknown body, centre or model.

    Examples
    --------
    >>> lo, hi = valid_interval("moon")
    >>> lo.to_iso("tdb", 0)[:10], hi.to_iso("tdb", 0)[:10]
    ('1899-07-29', '2053-10-09')

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009).
    """
    model = _choice("model", model, MODELS)
    if model == "series":
        return _series.valid_interval(body, center)
    _choice("body", body, BODIES)
    _choice("center", center, CENTERS)
    k = tables.kernel()
    return _tdb_epoch(k.start_s), _tdb_epoch(k.end_s)


def describe(model: str = DEFAULT_MODEL) -> dict:
    """What an output should say about the ephemeris behind it.

    Parameters
    ----------
    model : {"de421", "series"}, optional
        The ephemeris model.

    Returns
    -------
    dict
        ``{"model", "label", "span_tdb"}`` (the span as ISO 8601 TDB text; the kernel is
        opened for DE421).

    Raises
    ------
    InputError
        An unknown model.

    Examples
    --------
    >>> describe()["span_tdb"][0][:10]
    '1899-07-29'

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009).
    """
    model = _choice("model", model, MODELS)
    lo, hi = valid_interval("moon", "earth", model=model)
    return {"model": model, "label": LABELS[model],
            "span_tdb": [lo.to_iso("tdb", 0, designator=False), hi.to_iso("tdb", 0, designator=False)]}


def ecliptic_to_equator_matrix() -> np.ndarray:
    """Rotation taking J2000 ecliptic components to J2000 equator components.

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
    >>> m = ecliptic_to_equator_matrix()
    >>> bool(np.allclose(m @ m.T, np.eye(3)))
    True

    References
    ----------
    Hilton, J. L. et al., "Report of the International Astronomical Union Division I Working
    Group on Precession and the Ecliptic", Celestial Mechanics and Dynamical Astronomy 94, 351
    (2006).
    """
    return _series.ecliptic_to_equator_matrix()


# ---------------------------------------------------------------------------------------


def _evaluate(body, epochs, center, frame, model, velocity: bool) -> np.ndarray:
    model = _choice("model", model, MODELS)
    if model == "series":
        fn = _series.state if velocity else _series.position
        return fn(body, epochs, center, frame)
    body = _choice("body", body, BODIES)
    center = _choice("center", center, CENTERS)
    frame = _choice("frame", frame, FRAMES)
    ep = _epochs(epochs)
    jd1, jd2 = _tdb_jd(ep)
    if body == center:
        out = np.zeros((jd1.size, 6))
    else:
        _check_span(tables.kernel(), jd1, jd2, body, center)
        out = tables.relative(body, center, jd1, jd2, velocity)
    if frame == "j2000-ecliptic":   # rotation about x by +eps (the transpose of the matrix)
        eps = OBLIQUITY_J2000_ARCSEC * ARCSEC
        c, s = math.cos(eps), math.sin(eps)
        for i, j in ((1, 2), (4, 5)) if velocity else ((1, 2),):
            y, z = out[:, i].copy(), out[:, j]
            out[:, i] = c * y + s * z
            out[:, j] = -s * y + c * z
    if not velocity:
        out = out[:, :3]
    return out[0] if ep.isscalar else out.reshape(ep.shape + (out.shape[1],))


def _tdb_jd(ep: Epoch):
    """Two-part TDB Julian dates (flat arrays) of the epochs, the whole part exact.

    TDB - TT is the 45-term series of :func:`cr3bp.time.scales.tdb_minus_tt`; for many epochs
    close together (more than :data:`TDB_DIRECT_MAX`, and at least four per node) it is
    evaluated at nodes every :data:`TDB_NODE_DAYS` days and interpolated by 4-point Lagrange
    polynomials. Interpolation error at most h^4 max|f^(4)| (9/16) / 24 (the remainder of
    polynomial interpolation, e.g. Hildebrand, *Introduction to Numerical Analysis*, 2nd ed.,
    1974, sec. 2.6), f^(4) dominated by the series' monthly term (1.55 us at 77 714 rad per
    millennium): under 3 ns, against the series' own 0.6 us (tests/test_ephemeris.py: 5 ns).
    """
    jd1, jd2 = (np.atleast_1d(np.asarray(x, dtype=float)).ravel() for x in ep.two_part_jd("tt"))
    n = jd1.size
    if n > TDB_DIRECT_MAX:
        days = (jd1 - J2000_JD) + jd2
        lo = math.floor(float(days.min()) / TDB_NODE_DAYS) - 1
        n_nodes = math.floor(float(days.max()) / TDB_NODE_DAYS) - lo + 3
        if 4 * n_nodes <= n:
            f = scales.tdb_minus_tt(J2000_JD, (lo + np.arange(n_nodes)) * TDB_NODE_DAYS)
            u = days / TDB_NODE_DAYS - lo
            i = np.floor(u).astype(np.int64)
            p = u - i
            q, r, w = p + 1.0, p - 1.0, p - 2.0
            dt = (p * r * w * (-1.0 / 6.0) * f[i - 1] + q * r * w * 0.5 * f[i]
                  - q * p * w * 0.5 * f[i + 1] + q * p * r * (1.0 / 6.0) * f[i + 2])
            return jd1, jd2 + dt / SECONDS_PER_DAY
    return jd1, jd2 + scales.tdb_minus_tt(jd1, jd2) / SECONDS_PER_DAY


def _check_span(kernel, jd1, jd2, body, center):
    if not jd1.size:
        return
    sec = (jd1 - J2000_JD) * SECONDS_PER_DAY + jd2 * SECONDS_PER_DAY
    bad = (sec < kernel.start_s) | (sec > kernel.end_s) | ~np.isfinite(sec)
    if bad.any():
        k = int(np.argmax(bad))
        when = Epoch.from_jd(jd1[k], jd2[k], "tdb").to_iso("tdb", 0) if np.isfinite(sec[k]) else repr(sec[k])
        lo, hi = _tdb_epoch(kernel.start_s), _tdb_epoch(kernel.end_s)
        raise EphemerisSpanError(
            f"epoch {when} is outside the validity of JPL DE421 for the {body} about the {center}, "
            f"{lo.to_iso('tdb', 0)} .. {hi.to_iso('tdb', 0)} (model='series' gives the "
            "approximate analytic series, 1000-3000 AD)")


def _tdb_epoch(seconds: float) -> Epoch:
    days = math.floor(seconds / SECONDS_PER_DAY)
    return Epoch.from_jd(J2000_JD + days, (seconds - days * SECONDS_PER_DAY) / SECONDS_PER_DAY, "tdb")


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
