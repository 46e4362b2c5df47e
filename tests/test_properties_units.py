"""Property tests of the unit parser (cr3bp/units.py): formatted quantities round-trip, and
arbitrary junk is rejected with UnitError, never another exception."""

import math

from hypothesis import example, given, settings
from hypothesis import strategies as st

from cr3bp import system, units
from cr3bp.errors import UnitError
from cr3bp.units import _UNITS

EM = system("earth-moon")
UNIT_NAMES = sorted(_UNITS)
finite = st.floats(allow_nan=False, allow_infinity=False, min_value=-1e300, max_value=1e300)
SETTINGS = settings(max_examples=150, deadline=None)


@SETTINGS
@given(value=finite, unit=st.sampled_from(UNIT_NAMES), space=st.sampled_from(["", " ", "  "]))
def test_round_trip_of_formatted_quantity(value, unit, space):
    text = f"{value!r}{space}{unit}"
    q = units.parse(text)
    assert q.value == value and q.unit == unit and q.dimension == _UNITS[unit][0]
    # and the same text with the dimension required
    assert units.parse(text, q.dimension) == q


@SETTINGS
@given(value=st.floats(min_value=1e-6, max_value=1e9), unit=st.sampled_from(["m", "km", "Mm", "au"]))
def test_length_to_lu_and_back(value, unit):
    lu = units.length(f"{value!r}{unit}", EM)
    km = lu * EM.length_km
    assert math.isclose(km, value * _UNITS[unit][1], rel_tol=1e-12)


@SETTINGS
@given(value=st.floats(min_value=0.0, max_value=1e6), unit=st.sampled_from(["m/s", "km/s"]))
def test_velocity_to_vu_and_back(value, unit):
    vu = units.velocity(f"{value!r}{unit}", EM)
    assert math.isclose(EM.mps(vu), value * _UNITS[unit][1] * 1000.0, rel_tol=1e-12, abs_tol=1e-300)


def _parse_or_unit_error(text, dimension=None):
    try:
        q = units.parse(text, dimension)
    except UnitError as e:
        msg = str(e)
        assert msg and "\n" not in msg
        return None
    assert math.isfinite(q.value)
    return q


@settings(max_examples=300, deadline=None)
@given(text=st.text(max_size=30), dimension=st.sampled_from([None, "length", "time", "velocity"]))
def test_junk_text_gives_unit_error_or_a_valid_quantity(text, dimension):
    q = _parse_or_unit_error(text, dimension)
    if q is not None and dimension is not None:
        assert q.dimension == dimension


@SETTINGS
@given(text=st.from_regex(r"\A[0-9eE.+\- ]{0,6}(km|m/s|d|xx|LU|/|)[0-9a-z/ ]{0,4}\Z"),
       dimension=st.sampled_from([None, "length", "time", "velocity"]))
def test_near_miss_text(text, dimension):
    _parse_or_unit_error(text, dimension)


@SETTINGS
@given(obj=st.one_of(st.none(), st.booleans(), st.integers(), st.binary(max_size=8),
                     st.lists(st.integers(), max_size=3), st.floats(),
                     st.dictionaries(st.text(max_size=2), st.integers(), max_size=2)))
@example(obj=10**400)    # too large for a float
@example(obj=10**5000)   # too long even for str()
def test_non_text_gives_unit_error_or_a_valid_quantity(obj):
    _parse_or_unit_error(obj)
