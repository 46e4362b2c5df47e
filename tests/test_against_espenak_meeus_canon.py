"""Eclipses of the published canon found by the conical shadow model of cr3bp.operations.

Source: F. Espenak & J. Meeus, *Five Millennium Canon of Lunar Eclipses* (NASA/TP-2009-214172,
2009) and *Five Millennium Canon of Solar Eclipses* (NASA/TP-2006-214141, 2006). The instants
of greatest eclipse below are recalled FROM MEMORY (UT, to the minute; the canon lists TD, about
69 s later in these years).

Tolerance: 3 minutes. The project's analytic ephemeris places the Moon to ~20 km (about 20 s
of its motion) and the Sun to ~16 000 km (about 1e-4 rad, some 40 s of the Moon's motion
relative to the shadow axis); the canon uses apparent positions (aberration ~20 arcsec, again
some 40 s) where the model is geometric; the recalled times carry a minute; the TD/UT label
another. Greatest eclipse here is the instant the Moon's centre (lunar) or the Earth's centre
(solar) is closest, in angle, to the shadow axis: the least ``c - b`` of the model.
"""

import numpy as np
import pytest

from cr3bp.time import ephemeris, frames
from cr3bp.operations import eclipses

TOL_S = 180.0


def _geometry_lunar(t):
    ep = frames._epoch(np.asarray(t, dtype=float))
    moon = ephemeris.position("moon", ep, center="earth")
    sun = ephemeris.position("sun", ep, center="earth")
    return {"spacecraft": moon, "sun": sun, "earth": np.zeros_like(moon), "moon": moon}


def _geometry_solar(t):
    ep = frames._epoch(np.asarray(t, dtype=float))
    moon = ephemeris.position("moon", ep, center="earth")
    sun = ephemeris.position("sun", ep, center="earth")
    return {"spacecraft": np.zeros_like(moon), "sun": sun, "earth": np.zeros_like(moon), "moon": moon}


def _greatest(geometry, body, t_center):
    """Instant of least c - b over +-3 h at 5 s steps."""
    radii = eclipses.radii_km()
    t = t_center + np.arange(-3 * 3600.0, 3 * 3600.0 + 1, 5.0)
    pos = geometry(t)
    a, b, c = eclipses.disc_angles(pos["spacecraft"], pos["sun"], pos[body], radii[body], radii["sun"])
    return float(t[np.argmin(c - b)])


# (canon greatest eclipse UT, from memory)
LUNAR_TOTAL = ["2022-11-08T10:59:00Z", "2025-03-14T06:59:00Z"]


@pytest.mark.parametrize("greatest", LUNAR_TOTAL)
def test_total_lunar_eclipses_moon_centre_in_umbra(greatest):
    tg = frames.epoch_from_text(greatest)
    t = tg + np.arange(-12 * 3600.0, 12 * 3600.0 + 1, 120.0)
    passes = eclipses.find_passes(t, _geometry_lunar, bodies=("earth",))
    umbra = [p for p in passes if p.kind == "umbra"]
    assert len(umbra) == 1
    p = umbra[0]
    assert p.start_tdb_s < tg < p.end_tdb_s
    # the Moon's centre spends roughly the totality plus the partial phases' middle in the
    # umbra: between 1 and 4 hours (totality alone is about 1 h 25 min and 1 h 5 min, from memory)
    assert 3600.0 < p.duration_s < 4 * 3600.0
    assert abs(_greatest(_geometry_lunar, "earth", tg) - tg) < TOL_S


def test_full_moon_without_eclipse_finds_none():
    # 2022-12-08 ~04:08 UT full moon (from memory): the Moon passed well north of the shadow
    tg = frames.epoch_from_text("2022-12-08T04:08:00Z")
    t = tg + np.arange(-12 * 3600.0, 12 * 3600.0 + 1, 120.0)
    assert eclipses.find_passes(t, _geometry_lunar, bodies=("earth",)) == []


def test_total_solar_eclipse_2024_04_08_geocentre_in_lunar_penumbra():
    # canon: greatest eclipse 18:17 UT (from memory), gamma 0.343: the shadow axis passes about
    # 2 200 km from the Earth's centre, inside the Moon's penumbra there (radius ~3 500 km)
    tg = frames.epoch_from_text("2024-04-08T18:17:00Z")
    t = tg + np.arange(-12 * 3600.0, 12 * 3600.0 + 1, 120.0)
    passes = eclipses.find_passes(t, _geometry_solar, bodies=("moon",))
    assert [p.kind for p in passes] == ["penumbra"]
    p = passes[0]
    assert p.start_tdb_s < tg < p.end_tdb_s
    assert 0.0 < p.depth < 0.9
    assert abs(_greatest(_geometry_solar, "moon", tg) - tg) < TOL_S
