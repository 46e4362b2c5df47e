"""Conical shadow model of a spherical body with the Sun's finite size.

Method: Montenbruck & Gill, *Satellite Orbits*, Springer 2000, sec. 3.4.2 (conical shadow
model, eqs. 3.85-3.87 as recalled). Seen from the spacecraft at ``r`` (positions relative to
any common origin, km), with ``s = r - r_body``::

    a = asin(R_sun / |r_sun - r|)          apparent radius of the Sun
    b = asin(R_body / |s|)                 apparent radius of the occulting body
    c = acos(-s . (r_sun - r) / (|s| |r_sun - r|))   their apparent separation

    c >= a + b        no occultation: visible fraction nu = 1
    c <= b - a        umbra (total):  nu = 0
    c <= a - b        antumbra (annular): nu = 1 - b^2 / a^2
    otherwise         penumbra: x = (c^2 + a^2 - b^2) / (2c), y = sqrt(a^2 - x^2),
                      A = a^2 acos(x/a) + b^2 acos((c - x)/b) - c y,  nu = 1 - A / (pi a^2)

Positions are geometric (no light time or aberration); the bodies are spheres of the mean
radii of ``data/systems.toml``. Pass edges are found on a sample grid and refined by
bisection on the geometry re-evaluated at refined times (not on interpolated fractions).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..systems import body
from ..time.frames import epoch_to_text

#: Bisection halvings of each pass edge: a 300 s sample step gives edges to 0.3 ms.
EDGE_BISECTIONS = 20

BODIES = ("earth", "moon")
KINDS = ("umbra", "penumbra")


def _radius_km(name: str) -> float:
    return float(body(name).radius_km)


def radii_km() -> dict:
    """Mean radii (km) of the Sun, the Earth and the Moon from ``data/systems.toml``.

    Returns
    -------
    dict
        ``{"sun": km, "earth": km, "moon": km}``.

    Raises
    ------
    InputError
        A body missing from the data file (a damaged installation).

    Examples
    --------
    >>> round(radii_km()["moon"])
    1737

    References
    ----------
    Archinal, B. A. et al., "Report of the IAU Working Group on Cartographic Coordinates and
    Rotational Elements: 2015", Celestial Mechanics and Dynamical Astronomy 130, 22 (2018)
    (mean radii, as tabulated in ``data/systems.toml`` with their sources).
    """
    return {n: _radius_km(n) for n in ("sun", "earth", "moon")}


def disc_angles(r, r_sun, r_body, radius_body_km, radius_sun_km):
    """Apparent radii ``a`` (Sun), ``b`` (body) and their separation ``c`` seen from ``r``.

    Parameters
    ----------
    r, r_sun, r_body : array_like, shape (N, 3) or (3,)
        Spacecraft, Sun and occulting body, km, about one common origin, on common axes.
    radius_body_km, radius_sun_km : float
        Radii of the occulting body and the Sun, km.

    Returns
    -------
    a, b, c : numpy.ndarray, shape (N,)
        Radians.

    Raises
    ------
    ValueError
        Positions that do not broadcast to (N, 3).

    Examples
    --------
    >>> a, b, c = disc_angles([0, 0, 0], [1.496e8, 0, 0], [384400.0, 0, 0], 1737.4, 695700.0)
    >>> round(float(np.degrees(a[0])), 3), round(float(np.degrees(b[0])), 3), round(float(c[0]), 6)
    (0.266, 0.259, 0.0)

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2.
    """
    r = np.atleast_2d(np.asarray(r, dtype=float))
    d_sun = np.atleast_2d(np.asarray(r_sun, dtype=float)) - r
    s = r - np.atleast_2d(np.asarray(r_body, dtype=float))
    ns = np.linalg.norm(s, axis=1)
    nd = np.linalg.norm(d_sun, axis=1)
    a = np.arcsin(np.clip(radius_sun_km / nd, -1.0, 1.0))
    b = np.arcsin(np.clip(radius_body_km / ns, -1.0, 1.0))
    cosc = -np.einsum("ij,ij->i", s, d_sun) / (ns * nd)
    c = np.arccos(np.clip(cosc, -1.0, 1.0))
    return a, b, c


def fraction_from_angles(a, b, c):
    """Visible fraction of the Sun's disc from the apparent radii and separation (rad).

    Parameters
    ----------
    a, b, c : float or array_like
        Apparent radius of the Sun, of the occulting body, and their separation, radians
        (broadcast together).

    Returns
    -------
    numpy.ndarray
        The visible fraction in [0, 1]: 1 in sunlight, 0 in umbra.

    Raises
    ------
    ValueError
        Inputs that cannot be converted to floats.

    Examples
    --------
    >>> fraction_from_angles(0.01, 0.02, 0.0).tolist(), fraction_from_angles(0.01, 0.005, 0.0).tolist()
    (0.0, 0.75)

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2 (conical shadow model).
    """
    a, b, c = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (a, b, c)))
    nu = np.ones(a.shape)
    total = c <= b - a
    annular = (~total) & (c <= a - b)
    part = (~total) & (~annular) & (c < a + b)
    nu[total] = 0.0
    nu[annular] = 1.0 - (b[annular] / a[annular]) ** 2
    if part.any():
        aa, bb, cc = a[part], b[part], c[part]
        x = (cc * cc + aa * aa - bb * bb) / (2.0 * cc)
        y = np.sqrt(np.maximum(aa * aa - x * x, 0.0))
        area = (aa * aa * np.arccos(np.clip(x / aa, -1.0, 1.0))
                + bb * bb * np.arccos(np.clip((cc - x) / bb, -1.0, 1.0)) - cc * y)
        nu[part] = np.clip(1.0 - area / (math.pi * aa * aa), 0.0, 1.0)
    return nu


def visible_fraction(r, r_sun, r_body, radius_body_km, radius_sun_km=None):
    """Fraction of the Sun's disc visible from ``r`` past one spherical body, (N,) in [0, 1].

    Parameters
    ----------
    r, r_sun, r_body : array_like, shape (N, 3) or (3,)
        Spacecraft, Sun and occulting body, km, about one common origin, on common axes.
    radius_body_km : float
        Radius of the occulting body, km.
    radius_sun_km : float, optional
        Default: the Sun's radius of ``data/systems.toml``.

    Returns
    -------
    numpy.ndarray, shape (N,)
        1 in sunlight, 0 in umbra, between in penumbra or antumbra.

    Raises
    ------
    ValueError
        Positions that do not broadcast to (N, 3).

    Examples
    --------
    >>> visible_fraction([[-7000.0, 0, 0]], [1.496e8, 0, 0], [0, 0, 0], 6371.0).tolist()
    [0.0]

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2 (conical shadow model).
    """
    if radius_sun_km is None:
        radius_sun_km = _radius_km("sun")
    return fraction_from_angles(*disc_angles(r, r_sun, r_body, radius_body_km, radius_sun_km))


@dataclass(frozen=True)
class Pass:
    """One eclipse pass.

    ``kind`` is umbra (Sun fully hidden) or penumbra (any part hidden; a penumbra pass contains
    the umbra pass of the same crossing, if any).

    Parameters
    ----------
    body : str
        The occulting body.
    kind : {"umbra", "penumbra"}
        The shadow.
    start_tdb_s, end_tdb_s : float
        Edges, TDB seconds since J2000.
    depth : float
        Least visible fraction of the Sun's disc during the pass.
    deepest_tdb_s : float
        Sample time of the least visible fraction.
    open_start, open_end : bool
        The pass was already on at the first sample, or still on at the last.

    Examples
    --------
    >>> Pass("earth", "umbra", 0.0, 600.0, 0.0, 300.0).duration_s
    600.0

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2.
    """

    body: str
    kind: str
    start_tdb_s: float
    end_tdb_s: float
    depth: float              # least visible fraction of the Sun's disc during the pass
    deepest_tdb_s: float      # sample time of the least visible fraction
    open_start: bool = False  # the pass was already on at the first sample
    open_end: bool = False    # still on at the last sample

    @property
    def duration_s(self) -> float:
        return self.end_tdb_s - self.start_tdb_s

    def to_dict(self) -> dict:
        s, e, d = epoch_to_text(np.array([self.start_tdb_s, self.end_tdb_s, self.deepest_tdb_s]), "UTC", 3)
        return {"body": self.body, "kind": self.kind, "start_utc": s + "Z", "end_utc": e + "Z",
                "duration_min": self.duration_s / 60.0, "depth": self.depth, "deepest_utc": d + "Z",
                "open_start": self.open_start, "open_end": self.open_end}


def _margins(pos, bodies, kinds, radii):
    """Per-edge g(t) < 0 inside the shadow: ``c - (a + b)`` (penumbra), ``c - (b - a)`` (umbra)."""
    g = np.empty(len(bodies))
    for body in set(bodies):
        m = bodies == body
        a, b, c = disc_angles(pos["spacecraft"][m], pos["sun"][m], pos[body][m], radii[body], radii["sun"])
        g[m] = np.where(kinds[m] == "penumbra", c - (a + b), c - (b - a))
    return g


def _refine(geometry, lo, hi, inside_lo, bodies, kinds, radii):
    """Vectorised bisection of every edge at once, the geometry re-evaluated at each halving."""
    lo, hi = np.array(lo, dtype=float), np.array(hi, dtype=float)
    if lo.size == 0:
        return lo
    for _ in range(EDGE_BISECTIONS):
        mid = 0.5 * (lo + hi)
        inside = _margins(geometry(mid), bodies, kinds, radii) < 0.0
        same = inside == inside_lo
        lo = np.where(same, mid, lo)
        hi = np.where(same, hi, mid)
    return 0.5 * (lo + hi)


def find_passes(tdb_s, geometry, bodies=BODIES, radii=None) -> list:
    """Eclipse passes over sample epochs.

    Parameters
    ----------
    tdb_s : array_like, shape (N,)
        Increasing epochs, TDB seconds since J2000; a pass shorter than the sample step
        may be missed (the caller chooses the step).
    geometry : callable
        ``geometry(tdb_s) -> {"spacecraft": (N,3), "sun": (N,3), "earth": (N,3), "moon": (N,3)}``
        km about one common origin on common axes, at any epochs (called again at refined edge
        times).
    bodies : iterable of {"earth", "moon"}, optional
        The occulting bodies.
    radii : dict, optional
        km for "sun", "earth", "moon"; default :func:`radii_km`.

    Returns
    -------
    list of Pass
        Sorted by start. Edges: sign changes of ``c - (a+b)`` (penumbra) and ``c - (b-a)``
        (umbra) between samples, bisected :data:`EDGE_BISECTIONS` times on the geometry
        re-evaluated (all edges together).

    Raises
    ------
    InputError
        Fewer than two or non-increasing epochs, or an unknown body.

    Examples
    --------
    >>> def geometry(t):           # a spacecraft crossing behind the Earth along y
    ...     n = len(t)
    ...     sc = np.column_stack([np.full(n, -10000.0), np.asarray(t) - 50.0, np.zeros(n)])
    ...     return {"spacecraft": sc, "sun": np.tile([1.496e8, 0, 0], (n, 1)),
    ...             "earth": np.zeros((n, 3)), "moon": np.tile([0, 4e5, 0], (n, 1))}
    >>> [(p.kind, round(p.duration_s)) for p in find_passes(np.linspace(-20000, 20000, 401), geometry)]
    [('penumbra', 12836), ('umbra', 12650)]

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2.
    """
    t = np.asarray(tdb_s, dtype=float)
    if t.ndim != 1 or t.size < 2 or np.any(np.diff(t) <= 0):
        raise InputError("eclipse sample epochs must be at least two increasing times")
    radii = radii or radii_km()
    bodies = tuple(bodies)
    for b in bodies:
        if b not in BODIES:
            raise InputError(f"unknown occulting body '{b}'; allowed: {', '.join(BODIES)}")
    pos = geometry(t)
    found = []                       # (body, kind, start_i, end_i, open_start, open_end, depth_i)
    nus = {}
    for body in bodies:
        a, b, c = disc_angles(pos["spacecraft"], pos["sun"], pos[body], radii[body], radii["sun"])
        nus[body] = fraction_from_angles(a, b, c)
        for kind in KINDS:
            inside = (c < a + b) if kind == "penumbra" else (c < b - a)
            if not inside.any():
                continue
            d = np.diff(inside.astype(np.int8))
            up, down = np.flatnonzero(d == 1), np.flatnonzero(d == -1)
            idx_s = ([0] if inside[0] else []) + list(up + 1)
            idx_e = list(down) + ([t.size - 1] if inside[-1] else [])
            for i0, i1 in zip(idx_s, idx_e):
                found.append((body, kind, i0, i1))
    # refine every edge between samples at once
    lo, hi, ins, eb, ek, slot = [], [], [], [], [], []
    for n, (body, kind, i0, i1) in enumerate(found):
        if i0 > 0:
            lo.append(t[i0 - 1]); hi.append(t[i0]); ins.append(False); eb.append(body); ek.append(kind)
            slot.append((n, 0))
        if i1 < t.size - 1:
            lo.append(t[i1]); hi.append(t[i1 + 1]); ins.append(True); eb.append(body); ek.append(kind)
            slot.append((n, 1))
    refined = _refine(geometry, lo, hi, np.array(ins, bool), np.array(eb, dtype=object),
                      np.array(ek, dtype=object), radii)
    ends = {}
    for (n, side), x in zip(slot, refined):
        ends[(n, side)] = float(x)
    out = []
    for n, (body, kind, i0, i1) in enumerate(found):
        seg = nus[body][i0:i1 + 1]
        k = int(np.argmin(seg)) + i0
        depth = 0.0 if kind == "umbra" else float(nus[body][k])
        out.append(Pass(body, kind, ends.get((n, 0), float(t[i0])), ends.get((n, 1), float(t[i1])),
                        depth, float(t[k]), (n, 0) not in ends, (n, 1) not in ends))
    out.sort(key=lambda p: (p.start_tdb_s, p.body, p.kind))
    return out


def totals(passes, span_s: float) -> dict:
    """Shadow time per body and kind: total minutes, per year (365.25 d), longest, count.

    Parameters
    ----------
    passes : list of Pass
        From :func:`find_passes`.
    span_s : float
        The span the passes were searched over, s.

    Returns
    -------
    dict
        ``"earth umbra"`` etc. -> ``{"passes", "total_min", "per_year_min", "longest_min"}``.

    Raises
    ------
    ZeroDivisionError
        A zero span.

    Examples
    --------
    >>> totals([Pass("earth", "umbra", 0.0, 600.0, 0.0, 300.0)], 86400.0)["earth umbra"]["total_min"]
    10.0

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2 (the shadow model the passes come from).
    """
    res = {}
    for body in BODIES:
        for kind in KINDS:
            ps = [p for p in passes if p.body == body and p.kind == kind]
            tot = sum(p.duration_s for p in ps)
            res[f"{body} {kind}"] = {
                "passes": len(ps), "total_min": tot / 60.0,
                "per_year_min": tot / 60.0 * (365.25 * 86400.0 / span_s),
                "longest_min": max((p.duration_s for p in ps), default=0.0) / 60.0}
    return res
