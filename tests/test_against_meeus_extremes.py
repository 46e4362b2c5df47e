"""The Moon's distance stays within the published extremes of its perigee and apogee.

J. Meeus, *Mathematical Astronomy Morsels* (Willmann-Bell, 1997), ch. 2 (from memory): over
1500-2500 the least perigee distance is 356 375 km (on 1912-01-04, from memory) and the
greatest apogee 406 720 km (centre to centre), to the kilometre. The ephemeris is DE421
(metre level), checked over its span 1900-2053; the bounds are widened by 1 km for the
published rounding and the difference between Meeus' lunar theory and DE421.
"""

import numpy as np

from cr3bp.time import ephemeris as eph
from cr3bp.time.scales import parse_iso

LEAST_PERIGEE_KM = 356375.0     # Meeus 1997, ch. 2 (from memory)
GREATEST_APOGEE_KM = 406720.0   # Meeus 1997, ch. 2 (from memory)
ROUNDING_KM = 1.0


def test_moon_distance_within_published_extremes():
    # every 16 minutes over 1900-2053: at a perigee r'' is about 1e-7 km/s^2, so sampling misses
    # the least distance by at most 0.5 r'' (480 s)^2 = 12 m
    t = parse_iso("1900-01-01T00:00:00 TDB") + np.linspace(0.0, 153.7 * 365.25 * 86400.0, 300_001)
    r = np.linalg.norm(eph.position("moon", t), axis=1)
    assert r.min() > LEAST_PERIGEE_KM - ROUNDING_KM
    assert r.max() < GREATEST_APOGEE_KM + ROUNDING_KM
    # the least perigee of 1500-2500 falls inside the span: it is found, on the day published
    assert r.min() < LEAST_PERIGEE_KM + ROUNDING_KM
    assert t[int(np.argmin(r))].to_iso("tdb", 0).startswith("1912-01-04")
    # and the apogees explored reach above 406 000 km
    assert r.max() > 406000.0
