"""Dimensional facts of the trade (common practice) about where the Lagrange points lie."""

import pytest

from cr3bp import system
from cr3bp.equilibria import lagrange_point


def km_from_secondary(sysname, point):
    s = system(sysname)
    return lagrange_point(s, point).distances()["secondary"] * s.length_km


def test_earth_moon_l2_beyond_the_moon():
    # Earth–Moon L2 lies some 60 000–65 000 km beyond the Moon (common practice)
    d = km_from_secondary("earth-moon", "L2")
    assert 60_000.0 <= d <= 65_000.0
    assert lagrange_point(system("earth-moon"), "L2").position[0] > 1 - system("earth-moon").mu


def test_earth_moon_l1_on_the_earth_side():
    # Earth–Moon L1 lies about 58 000 km from the Moon on the Earth side (common practice);
    # "about" taken as +-1 000 km
    d = km_from_secondary("earth-moon", "L1")
    assert d == pytest.approx(58_000.0, abs=1_000.0)
    s = system("earth-moon")
    assert -s.mu < lagrange_point(s, "L1").position[0] < 1 - s.mu


@pytest.mark.parametrize("point", ["L1", "L2"])
def test_sun_earth_l1_l2_about_1_5_million_km(point):
    # Sun–Earth L1 and L2 lie about 1.5 million km from Earth (common practice); "about"
    # taken as +-50 000 km. Our secondary is the Earth+Moon barycentre, 4 700 km from Earth's
    # centre, well inside that tolerance.
    d = km_from_secondary("sun-earth", point)
    assert d == pytest.approx(1.5e6, abs=5e4)
