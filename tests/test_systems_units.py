"""Systems and the unit parser: behaviour and errors."""

import math

import pytest

from cr3bp import system, system_names, units
from cr3bp.errors import InputError, UnitError, UnknownSystemError


def test_all_tabulated_systems_build():
    names = system_names()
    assert len(names) == 12
    for n in names:
        s = system(n)
        assert 0 < s.mu <= 0.5
        assert s.dimensional
        assert s.velocity_kms == pytest.approx(s.length_km / s.time_s)


def test_unknown_system_suggests_nearest():
    with pytest.raises(UnknownSystemError, match="earth-moon"):
        system("earth-mon")


@pytest.mark.parametrize("mu", [0.0, -0.1, 0.6, float("nan"), float("inf")])
def test_mu_out_of_range(mu):
    with pytest.raises(InputError, match="mu"):
        system(mu=mu)


def test_custom_system_from_mu_without_units_refuses_km():
    s = system(mu=0.0121)
    assert not s.dimensional
    with pytest.raises(InputError, match="no dimensional units"):
        units.length("100km", s)
    assert units.length("0.5LU", s) == 0.5


def test_from_gms_units():
    from cr3bp.systems import from_gms
    s = from_gms(398600.0, 4900.0, 384400.0)
    assert s.mu == pytest.approx(4900.0 / 403500.0)
    assert s.time_s == pytest.approx(math.sqrt(384400.0**3 / 403500.0))


@pytest.mark.parametrize("text,dim,expected_si", [
    ("15000km", "length", 15000.0), ("15000 km", "length", 15000.0), ("6.56d", "time", 6.56 * 86400),
    ("3.2h", "time", 3.2 * 3600), ("450m/s", "velocity", 0.45), ("1e3 m", "length", 1.0),
    ("10min", "time", 600.0), ("2km/s", "velocity", 2.0),
])
def test_parse_si(text, dim, expected_si):
    assert units.parse(text, dim).si() == pytest.approx(expected_si)


def test_nondimensional_units():
    em = system("earth-moon")
    assert units.time("0.3TU", em) == 0.3
    assert units.length("1.2LU", em) == 1.2
    assert units.length("384400km", em) == pytest.approx(1.0)
    assert units.time("1d", em) == pytest.approx(86400 / em.time_s)
    assert units.velocity("1VU", em) == 1.0


@pytest.mark.parametrize("text", ["15000furlongs", "km", "", "12..3km", "nan km", "inf d", "1e999km"])
def test_bad_quantities(text):
    with pytest.raises(UnitError):
        units.parse(text, "length")


def test_wrong_dimension():
    with pytest.raises(UnitError, match="is a time"):
        units.parse("3d", "length")


def test_bare_number_needs_unit_when_dimension_given():
    with pytest.raises(UnitError, match="no unit"):
        units.parse("3", "length")
    assert units.parse("3", "length", default_unit="km").si() == 3.0
