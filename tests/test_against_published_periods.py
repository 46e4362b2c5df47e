"""The tabulated GMs and distances against independently published orbital periods.

Kepler's third law with our (GM1 + GM2, distance) gives the sidereal period 2*pi*TU of each
pair; it must agree with the period published for that body. Periods (days) are sidereal
orbital periods recalled from the JPL Solar System Dynamics planetary and satellite physical
parameter pages and the Astronomical Almanac (from memory). The mean distance is not exactly
the Keplerian semi-major axis for every pair, hence the per-pair tolerance.
"""

import pytest

from cr3bp import system

PUBLISHED_SIDEREAL_PERIOD_DAYS = {
    # system: (period_days, relative tolerance)
    "sun-earth": (365.256363, 2e-5),    # sidereal year (Astronomical Almanac; from memory)
    "earth-moon": (27.321662, 2e-3),    # sidereal month; 384 400 km is a mean distance, not a
    "sun-mars": (686.980, 1e-4),        # semi-major axis, so 0.14% apart (common practice)
    "sun-jupiter": (4332.589, 1e-4),
    "jupiter-io": (1.769138, 1e-3),
    "jupiter-europa": (3.551181, 1e-3),
    "jupiter-ganymede": (7.154553, 1e-3),
    "jupiter-callisto": (16.689018, 1e-3),
    "saturn-titan": (15.945, 1e-3),
    "saturn-enceladus": (1.370218, 1e-3),
    "mars-phobos": (0.31891, 1e-3),
    "pluto-charon": (6.387230, 1e-3),
}


@pytest.mark.parametrize("name", sorted(PUBLISHED_SIDEREAL_PERIOD_DAYS))
def test_kepler_period_matches_published(name):
    period, rel = PUBLISHED_SIDEREAL_PERIOD_DAYS[name]
    assert system(name).period_days == pytest.approx(period, rel=rel)


def test_earth_moon_mass_ratio():
    # mu = 0.012150585 for Earth-Moon from DE-series GMs (common practice in CR3BP work;
    # e.g. Koon, Lo, Marsden & Ross 2011 use 0.01215, from memory)
    assert system("earth-moon").mu == pytest.approx(0.0121505856, rel=1e-6)


def test_sun_earth_mass_ratio():
    # Sun / (Earth+Moon) mass ratio 328 900.56 (IAU 2009 system of astronomical constants,
    # from memory) gives mu = 1 / (1 + 328900.56)
    assert system("sun-earth").mu == pytest.approx(1 / (1 + 328900.56), rel=1e-6)
