"""Eclipse history of a placed orbit at a phase, and the choice of the phase at the epoch.

The Sun, the Moon and the frame's axes at the sample epochs do not depend on the phase, so
they are evaluated once (:class:`Sky`) and every phase of the scan reuses them; only the
spacecraft's interpolated positions change. Passes come from :func:`.eclipses.find_passes`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from .. import validate
from ..errors import InputError
from . import eclipses
from ..io.export import MAX_SAMPLES
from ..time import ephemeris, frames
from ..time.frames import _epoch, epoch_to_text

#: Default sample step of the eclipse search (a pass shorter than this may be missed).
STEP_S = 300.0


@dataclass(frozen=True)
class Sky:
    """Sample epochs and what is phase-independent at them (geocentric J2000 equator, km).

    Parameters
    ----------
    tdb_s : numpy.ndarray
        Sample epochs, TDB seconds since J2000.
    sun, moon : numpy.ndarray, shape (N, 3)
        Geocentric positions, km.
    basis : tuple
        ``(C, l, offset)`` of the anchored frame (:meth:`PlacedOrbit.frame_basis`).

    Examples
    --------
    >>> sk = sky(placed, 7 * 86400.0, 600.0)          # doctest: +SKIP

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009).
    """

    tdb_s: np.ndarray
    sun: np.ndarray
    moon: np.ndarray
    basis: tuple              # (C, l) of the anchored frame


def _bodies(tdb_s):
    ep = _epoch(np.atleast_1d(np.asarray(tdb_s, dtype=float)))
    return (ephemeris.position("sun", ep, center="earth", frame="j2000-equator"),
            ephemeris.position("moon", ep, center="earth", frame="j2000-equator"))


def sky(placed, span_s: float, step_s: float = STEP_S) -> Sky:
    """Epochs ``epoch + k step`` (TDB) over ``span_s`` and the Sun, Moon and frame there.

    Parameters
    ----------
    placed : PlacedOrbit
        From :func:`cr3bp.operations.placement.place`.
    span_s : float
        The span, s.
    step_s : float, optional
        The sample step, s (a pass shorter than this may be missed).

    Returns
    -------
    Sky
        The samples.

    Raises
    ------
    InputError
        A non-positive span or step, a step over the span, or too many samples.

    Examples
    --------
    >>> sk = sky(placed, 7 * 86400.0, 600.0)          # doctest: +SKIP

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009).
    """
    span_s = validate.positive_number("span (s)", span_s)
    step_s = validate.number_in("step (s)", step_s, 0.0, span_s, open_lo=True)
    n = int(math.floor(span_s / step_s * (1 + 1e-12))) + 1
    if n > MAX_SAMPLES:
        raise InputError(f"{n} samples exceed the limit of {MAX_SAMPLES}; use a larger step")
    t = placed.epoch_tdb_s + np.arange(n) * step_s
    sun, moon = _bodies(t)
    return Sky(t, sun, moon, placed.frame_basis(t))


def geometry(placed, sk: Sky, phase_deg: float):
    """The callable :func:`.eclipses.find_passes` needs: positions at any epochs.

    Parameters
    ----------
    placed : PlacedOrbit
        The placed orbit.
    sk : Sky
        Its samples (reused at the sample epochs).
    phase_deg : float
        The orbit's phase at the epoch.

    Returns
    -------
    callable
        ``at(tdb_s) -> {"spacecraft", "sun", "moon", "earth"}`` geocentric km.

    Raises
    ------
    InputError
        Epochs outside the ephemeris (when called).

    Examples
    --------
    >>> at = geometry(placed, sk, 0.0)                 # doctest: +SKIP

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2.
    """
    def at(t):
        t = np.asarray(t, dtype=float)
        if t is sk.tdb_s or (t.shape == sk.tdb_s.shape and np.array_equal(t, sk.tdb_s)):
            sun, moon, basis = sk.sun, sk.moon, sk.basis
        else:
            (sun, moon), basis = _bodies(t), None
        sc = placed.geocentric(t, phase_deg, basis=basis)
        return {"spacecraft": sc, "sun": sun, "moon": moon, "earth": np.zeros_like(sc)}
    return at


@dataclass(frozen=True)
class History:
    """The eclipse passes of the orbit started at one phase.

    Parameters
    ----------
    phase_deg : float
        The phase at the epoch.
    passes : tuple of Pass
        The passes.
    span_s : float
        The span searched, s.

    Examples
    --------
    >>> History(0.0, (), 86400.0).total_min()
    0.0

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2.
    """
    phase_deg: float
    passes: tuple
    span_s: float

    def total_min(self, kind: str = "penumbra", body: str | None = None) -> float:
        return sum(p.duration_s for p in self.passes
                   if p.kind == kind and (body is None or p.body == body)) / 60.0

    def longest_min(self, kind: str = "penumbra") -> float:
        return max((p.duration_s for p in self.passes if p.kind == kind), default=0.0) / 60.0

    def to_dict(self) -> dict:
        return {"phase_deg": self.phase_deg, "passes": [p.to_dict() for p in self.passes],
                "totals": eclipses.totals(self.passes, self.span_s),
                "shadow_total_min": self.total_min(), "longest_shadow_min": self.longest_min()}


def history(placed, sk: Sky, phase_deg: float, bodies=eclipses.BODIES) -> History:
    """Eclipse passes of the orbit started at ``phase_deg`` over the sky's epochs.

    Parameters
    ----------
    placed : PlacedOrbit
        The placed orbit.
    sk : Sky
        Its samples.
    phase_deg : float
        The phase at the epoch.
    bodies : iterable of {"earth", "moon"}, optional
        The occulting bodies.

    Returns
    -------
    History
        The passes.

    Raises
    ------
    InputError
        An unknown body.

    Examples
    --------
    >>> h = history(placed, sk, 90.0)                  # doctest: +SKIP

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2.
    """
    passes = eclipses.find_passes(sk.tdb_s, geometry(placed, sk, phase_deg), bodies)
    return History(float(phase_deg), tuple(passes), float(sk.tdb_s[-1] - sk.tdb_s[0]))


def scan(placed, sk: Sky, n_phases: int = 36, max_pass_min: float | None = None,
         bodies=eclipses.BODIES) -> list:
    """Histories at ``n_phases`` phases evenly spread over one period, best first.

    Ranking: phases whose longest shadow pass (penumbra, any body) is at most ``max_pass_min``
    first (when given), then by total shadow time, then by longest pass.

    Parameters
    ----------
    placed : PlacedOrbit
        The placed orbit.
    sk : Sky
        Its samples.
    n_phases : int, optional
        Phases, 1..3600.
    max_pass_min : float, optional
        The longest acceptable pass, minutes.
    bodies : iterable of {"earth", "moon"}, optional
        The occulting bodies.

    Returns
    -------
    list of History
        Best first (:func:`rank`).

    Raises
    ------
    InputError
        A number of phases out of range or a negative maximum.

    Examples
    --------
    >>> best = scan(placed, sk, 36)[0]                 # doctest: +SKIP

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2.
    """
    n_phases = validate.whole_number("number of phases", n_phases, 1, 3600)
    if max_pass_min is not None:
        max_pass_min = validate.number_in("maximum eclipse duration (min)", max_pass_min, 0.0)
    hs = [history(placed, sk, 360.0 * k / n_phases, bodies) for k in range(n_phases)]
    return sorted(hs, key=lambda h: rank(h, max_pass_min))


def rank(h: History, max_pass_min: float | None = None) -> tuple:
    """Sort key of a history, best first.

    Meets ``max_pass_min`` (when given), then the least total shadow time, then the shortest
    longest pass, then the smallest phase.

    Parameters
    ----------
    h : History
        The history.
    max_pass_min : float, optional
        The longest acceptable pass, minutes.

    Returns
    -------
    tuple
        The key.

    Raises
    ------
    AttributeError
        Not a history.

    Examples
    --------
    >>> rank(History(90.0, (), 86400.0), 30.0)
    (False, 0.0, 0.0, 90.0)

    References
    ----------
    Common practice (shadow time first, then the longest pass, as power budgets are read).
    """
    over = max_pass_min is not None and h.longest_min() > max_pass_min
    return (over, round(h.total_min(), 6), round(h.longest_min(), 6), h.phase_deg)


#: Largest number of epochs of an epoch scan.
MAX_EPOCHS = 200


@dataclass(frozen=True)
class EpochChoice:
    """One epoch of :func:`scan_epochs`.

    Parameters
    ----------
    epoch_tdb_s : float
        The epoch, TDB seconds since J2000.
    best : History
        The best history there (at the given phase, or the best of the phase scan).
    phases : tuple of History
        The phase scan itself (best first; empty without).

    Examples
    --------
    >>> EpochChoice(0.0, History(0.0, (), 86400.0), ()).to_dict()["epoch_utc"]
    '2000-01-01T11:58:55.816Z'

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2.
    """

    epoch_tdb_s: float
    best: History
    phases: tuple

    def to_dict(self) -> dict:
        return {"epoch_utc": str(epoch_to_text(np.array([self.epoch_tdb_s]), "UTC", 3)[0]) + "Z",
                "phase_deg": self.best.phase_deg, "shadow_total_min": self.best.total_min(),
                "longest_shadow_min": self.best.longest_min(), "umbra_total_min": self.best.total_min("umbra")}


def scan_epochs(placed, epochs_tdb_s, span_s: float, step_s: float = STEP_S, *, phase_deg: float = 0.0,
                n_phases: int | None = None, max_pass_min: float | None = None,
                bodies=eclipses.BODIES) -> list:
    """The orbit placed at each of several epochs and its eclipse history there, best first.

    The same one-period sample in the frame of each epoch; its eclipse history over ``span_s``
    at ``phase_deg`` or, with ``n_phases``, the best of a phase scan there; the epochs ranked by
    :func:`rank`.

    Parameters
    ----------
    placed : PlacedOrbit
        The placed orbit.
    epochs_tdb_s : array_like
        Epochs, TDB seconds since J2000 (1..:data:`MAX_EPOCHS`).
    span_s, step_s : float
        As for :func:`sky`.
    phase_deg : float, optional
        The phase when no scan is asked for.
    n_phases : int, optional
        Scan this many phases at each epoch.
    max_pass_min : float, optional
        The longest acceptable pass, minutes.
    bodies : iterable of {"earth", "moon"}, optional
        The occulting bodies.

    Returns
    -------
    list of EpochChoice
        Best first.

    Raises
    ------
    InputError
        No epochs, too many, or bad span, step or phases.

    Examples
    --------
    >>> best = scan_epochs(placed, placed.epoch_tdb_s + 86400.0 * np.arange(5), 7 * 86400.0)[0]  # doctest: +SKIP

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2.
    """
    t = np.atleast_1d(np.asarray(epochs_tdb_s, dtype=float))
    if not 1 <= t.size <= MAX_EPOCHS or not np.all(np.isfinite(t)):
        raise InputError(f"{t.size} epochs; an epoch scan takes 1..{MAX_EPOCHS} finite epochs")
    out = []
    for ep in t:
        pl = replace(placed, spec=frames.with_(placed.spec, epoch_tdb_s=float(ep)))
        sk = sky(pl, span_s, step_s)
        if n_phases is None:
            hs = [history(pl, sk, phase_deg, bodies)]
        else:
            hs = scan(pl, sk, n_phases, max_pass_min, bodies)
        out.append(EpochChoice(float(ep), hs[0], tuple(hs) if n_phases is not None else ()))
    return sorted(out, key=lambda c: (rank(c.best, max_pass_min), c.epoch_tdb_s))


def earth_angles(placed, sk: Sky, phase_deg: float) -> dict:
    """Earth-centred geometry along the orbit at ``phase_deg``, at the sky's epochs.

    Parameters
    ----------
    placed : PlacedOrbit
        The placed orbit.
    sk : Sky
        Its samples.
    phase_deg : float
        The phase at the epoch.

    Returns
    -------
    dict
        ``position_km`` (N, 3) geocentric, ``range_km`` (N,), ``sun_earth_spacecraft_deg`` and
        ``moon_earth_spacecraft_deg`` (N,).

    Raises
    ------
    ValueError
        A sky of another placed orbit (mismatched shapes).

    Examples
    --------
    >>> angles = earth_angles(placed, sk, 0.0)         # doctest: +SKIP

    References
    ----------
    Vallado, D. A., "Fundamentals of Astrodynamics and Applications", 4th ed. (2013), sec. 5.3
    (Sun-Earth-spacecraft angles in visibility analysis; common practice).
    """
    r = placed.geocentric(sk.tdb_s, phase_deg, basis=sk.basis)
    rn = np.linalg.norm(r, axis=1)

    def angle(v):
        cosv = np.einsum("ij,ij->i", r, v) / (rn * np.linalg.norm(v, axis=1))
        return np.degrees(np.arccos(np.clip(cosv, -1.0, 1.0)))
    return {"position_km": r, "range_km": rn, "sun_earth_spacecraft_deg": angle(sk.sun),
            "moon_earth_spacecraft_deg": angle(sk.moon)}
