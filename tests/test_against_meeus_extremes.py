"""The Moon's distance stays within the published extremes of its perigee and apogee.

J. Meeus, *Mathematical Astronomy Morsels* (Willmann-Bell, 1997), ch. 2 (from memory): over
1500-2500 the least perigee distance is 356 375 km and the greatest apogee 406 720 km
(centre to centre). Our series may err by up to about 35 km (moon98's documented worst
error, see cr3bp.ephemeris), so the bounds are widened by that much.
"""

import numpy as np

from cr3bp import ephemeris as eph
from cr3bp.timescales import parse_iso

LEAST_PERIGEE_KM = 356375.0     # Meeus 1997, ch. 2 (from memory)
GREATEST_APOGEE_KM = 406720.0   # Meeus 1997, ch. 2 (from memory)
SERIES_ERROR_KM = 35.0


def test_moon_distance_within_published_extremes():
    t = parse_iso("1900-01-01T00:00:00 TT") + np.linspace(0.0, 200 * 365.25 * 86400.0, 100001)
    r = np.linalg.norm(eph.position("moon", t), axis=1)
    assert r.min() > LEAST_PERIGEE_KM - SERIES_ERROR_KM
    assert r.max() < GREATEST_APOGEE_KM + SERIES_ERROR_KM
    # and the range is actually explored (perigees below 357 000 km, apogees above 406 000 km)
    assert r.min() < 357000.0 and r.max() > 406000.0
