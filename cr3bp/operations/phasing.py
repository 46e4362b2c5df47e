"""Eclipse history of a placed orbit at a phase, and the choice of the phase at the epoch.

The Sun, the Moon and the frame's axes at the sample epochs do not depend on the phase, so
they are evaluated once (:class:`Sky`) and every phase of the scan reuses them; only the
spacecraft's interpolated positions change. Passes come from :func:`.eclipses.find_passes`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from . import eclipses

#: Default sample step of the eclipse search (a pass shorter than this may be missed).
STEP_S = 300.0


@dataclass(frozen=True)
class Sky:
    """Sample epochs and what is phase-independent at them (geocentric J2000 equator, km)."""

    tdb_s: np.ndarray
    sun: np.ndarray
    moon: np.ndarray
    basis: tuple              # (C, l) of the anchored frame


def _bodies(tdb_s):
    from ..time import ephemeris
    from ..time.frames import _epoch
    ep = _epoch(np.atleast_1d(np.asarray(tdb_s, dtype=float)))
    return (ephemeris.position("sun", ep, center="earth", frame="j2000-equator"),
            ephemeris.position("moon", ep, center="earth", frame="j2000-equator"))


def sky(placed, span_s: float, step_s: float = STEP_S) -> Sky:
    """Epochs ``epoch + k step`` (TDB) over ``span_s`` and the Sun, Moon and frame there."""
    if not (math.isfinite(span_s) and span_s > 0):
        raise InputError(f"span {span_s!r} s must be positive")
    if not (math.isfinite(step_s) and 0 < step_s <= span_s):
        raise InputError(f"step {step_s!r} s must be positive and at most the span ({span_s:g} s)")
    n = int(math.floor(span_s / step_s * (1 + 1e-12))) + 1
    from ..io.export import MAX_SAMPLES
    if n > MAX_SAMPLES:
        raise InputError(f"{n} samples exceed the limit of {MAX_SAMPLES}; use a larger step")
    t = placed.epoch_tdb_s + np.arange(n) * step_s
    sun, moon = _bodies(t)
    return Sky(t, sun, moon, placed.frame_basis(t))


def geometry(placed, sk: Sky, phase_deg: float):
    """The callable :func:`.eclipses.find_passes` needs: positions at any epochs."""
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
    """Eclipse passes of the orbit started at ``phase_deg`` over the sky's epochs."""
    passes = eclipses.find_passes(sk.tdb_s, geometry(placed, sk, phase_deg), bodies)
    return History(float(phase_deg), tuple(passes), float(sk.tdb_s[-1] - sk.tdb_s[0]))


def scan(placed, sk: Sky, n_phases: int = 36, max_pass_min: float | None = None,
         bodies=eclipses.BODIES) -> list:
    """Histories at ``n_phases`` phases evenly spread over one period, best first.

    Ranking: phases whose longest shadow pass (penumbra, any body) is at most
    ``max_pass_min`` first (when given), then by total shadow time, then by longest pass.
    """
    if not (isinstance(n_phases, int) and 1 <= n_phases <= 3600):
        raise InputError(f"number of phases {n_phases!r} must be a whole number in 1..3600")
    if max_pass_min is not None and not (math.isfinite(max_pass_min) and max_pass_min >= 0):
        raise InputError(f"maximum eclipse duration {max_pass_min!r} min must be zero or positive")
    hs = [history(placed, sk, 360.0 * k / n_phases, bodies) for k in range(n_phases)]

    def key(h):
        over = max_pass_min is not None and h.longest_min() > max_pass_min
        return (over, round(h.total_min(), 6), round(h.longest_min(), 6), h.phase_deg)
    return sorted(hs, key=key)


def earth_angles(placed, sk: Sky, phase_deg: float) -> dict:
    """Along the orbit at ``phase_deg``: geocentric positions (km), range to the Earth (km),
    Sun-Earth-spacecraft and Moon-Earth-spacecraft angles (deg), at the sky's epochs."""
    r = placed.geocentric(sk.tdb_s, phase_deg, basis=sk.basis)
    rn = np.linalg.norm(r, axis=1)

    def angle(v):
        cosv = np.einsum("ij,ij->i", r, v) / (rn * np.linalg.norm(v, axis=1))
        return np.degrees(np.arccos(np.clip(cosv, -1.0, 1.0)))
    return {"position_km": r, "range_km": rn, "sun_earth_spacecraft_deg": angle(sk.sun),
            "moon_earth_spacecraft_deg": angle(sk.moon)}
