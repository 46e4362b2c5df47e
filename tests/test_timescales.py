"""Time scales: ISO 8601 text, leap seconds, bad input, the beyond-validity warning."""

import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cr3bp.errors import InputError
from cr3bp.timescales import (Epoch, LeapSecondsExpiredWarning, calendar_to_mjd, leap_second_table,
                              mjd_to_calendar, parse_iso, tai_minus_utc)

ONE_MICROSECOND = 1e-6
ONE_NANOSECOND = 1e-9


def test_leap_second_prints_as_60():
    e = parse_iso("2016-12-31T23:59:60.5Z")
    assert e.to_iso("utc", 1) == "2016-12-31T23:59:60.5Z"
    assert (e + 0.5).to_iso("utc", 1) == "2017-01-01T00:00:00.0Z"
    assert (parse_iso("2017-01-01T00:00:00Z") - parse_iso("2016-12-31T23:59:59Z")) == pytest.approx(2.0, abs=ONE_NANOSECOND)


def test_second_60_rejected_on_ordinary_day():
    with pytest.raises(InputError, match="2017-12-31T23:59:60"):
        parse_iso("2017-12-31T23:59:60Z")
    with pytest.raises(InputError, match="second 60"):
        parse_iso("2016-12-31T23:59:60 TT")


@pytest.mark.parametrize("text", ["2031-02-30", "2031-02-29T00:00:00Z", "2031-13-01", "2031-03-01T25:00Z",
                                  "2031-03-01T12:61:00Z", "junk", "", "2031-3-1", "2031-03-01T00:00:00 GPS"])
def test_bad_dates_raise_input_error_naming_value(text):
    with pytest.raises(InputError) as info:
        parse_iso(text)
    msg = str(info.value)
    assert "\n" not in msg and repr(text) in msg


def test_pre_1972_utc_rejected_with_reason():
    with pytest.raises(InputError, match="pre-1972 UTC"):
        parse_iso("1971-12-31T23:59:59Z")
    # TT is fine before 1972
    assert parse_iso("1960-01-01T00:00:00 TT").to_iso("tt", 0) == "1960-01-01T00:00:00 TT"


def test_conflicting_designator():
    with pytest.raises(InputError, match="TDB"):
        parse_iso("2031-03-01T00:00:00Z", scale="tdb")


def test_beyond_validity_warns():
    table = leap_second_table()
    y, m, d = mjd_to_calendar(table.valid_until_mjd + 10)
    with pytest.warns(LeapSecondsExpiredWarning, match="leap-second"):
        parse_iso(f"{int(y):04d}-{int(m):02d}-{int(d):02d}T00:00:00Z")
    with pytest.warns(LeapSecondsExpiredWarning):
        parse_iso("2040-01-01T00:00:00 TT").to_iso("utc")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        parse_iso("2040-01-01T00:00:00 TDB").to_iso("tt")   # no UTC involved: no warning
        parse_iso("2020-01-01T00:00:00Z")                    # inside validity: no warning


def test_table_has_source_and_validity():
    t = leap_second_table()
    assert "Bulletin C" in t.source and "FROM MEMORY" in t.source
    assert t.tai_minus_utc_s[0] == 10 and np.all(np.diff(t.tai_minus_utc_s) == 1)
    assert tai_minus_utc(calendar_to_mjd(2016, 12, 31)) == 36


def test_date_only_and_minutes_forms():
    with pytest.warns(LeapSecondsExpiredWarning):
        assert parse_iso("2031-03-01").to_iso("utc", 0) == "2031-03-01T00:00:00Z"
    assert parse_iso("2021-03-01 12:30").to_iso("utc", 0, designator=False) == "2021-03-01T12:30:00"


def test_rounding_carries_into_next_day():
    e = parse_iso("2021-12-31T23:59:59.9996Z")
    assert e.to_iso("utc", 3) == "2022-01-01T00:00:00.000Z"
    e = parse_iso("2016-12-31T23:59:60.9996Z")
    assert e.to_iso("utc", 3) == "2017-01-01T00:00:00.000Z"


def test_vectorised_arithmetic_and_shapes():
    t0 = parse_iso("2031-03-01T00:00:00 TDB")
    t = t0 + np.arange(100_000) * 60.0
    assert t.shape == (100_000,)
    iso = t.to_iso("tdb", 3)
    assert iso[0] == "2031-03-01T00:00:00.000 TDB" and iso[-1] == "2031-05-09T10:39:00.000 TDB"
    assert np.max(np.abs((t - t0) - np.arange(100_000) * 60.0)) < ONE_NANOSECOND


@settings(max_examples=60, deadline=None)
@given(day=st.integers(calendar_to_mjd(1972, 1, 1), calendar_to_mjd(2026, 6, 30)),
       micro=st.integers(0, 86_399_999_999), scale=st.sampled_from(["utc", "tai", "tt", "tdb"]))
def test_iso_round_trip(day, micro, scale):
    y, m, d = (int(v) for v in mjd_to_calendar(day))
    s = micro / 1e6
    text = f"{y:04d}-{m:02d}-{d:02d}T{int(s // 3600):02d}:{int(s % 3600 // 60):02d}:{micro % 60_000_000 / 1e6:09.6f}"
    e = parse_iso(text, scale=scale)
    out = e.to_iso(scale, 6, designator=False)
    assert out == text
    assert parse_iso(out, scale) - e == pytest.approx(0.0, abs=ONE_NANOSECOND)


@settings(max_examples=60, deadline=None)
@given(jd=st.floats(2441317.5, 2488069.5), scale=st.sampled_from(["tai", "tt", "tdb"]))
def test_jd_round_trip(jd, scale):
    e = Epoch.from_jd(jd, 0.0, scale)
    a, b = e.two_part_jd(scale)
    assert ((a - jd) + b) * 86400 == pytest.approx(0.0, abs=ONE_MICROSECOND)


def test_year_outside_iso_range():
    e = Epoch.from_jd(5_400_000.5, 0.0, "tt")   # year 10072
    with pytest.raises(InputError, match="10072"):
        e.to_iso("tt")


def test_text_fields_are_zero_padded_and_exact():
    e = parse_iso(["0001-01-01T00:00:00 TT", "2024-02-29T07:08:09.000001 TT"])
    assert e.to_iso("tt", 6) == ["0001-01-01T00:00:00.000000 TT", "2024-02-29T07:08:09.000001 TT"]


@settings(max_examples=40, deadline=None)
@given(step=st.integers(1, 27), offset=st.floats(-3.0, 3.0))
def test_utc_text_round_trip_across_leap_seconds(step, offset):
    """Instants within 3 s of each leap second: TT -> UTC text -> TT is exact to 1 us."""
    table = leap_second_table()
    y, m, d = (int(v) for v in mjd_to_calendar(table.mjd[step]))
    start = parse_iso(f"{y:04d}-{m:02d}-{d:02d}T00:00:00Z")
    e = start + offset
    text = e.to_iso("utc", 6)
    if -1.0 <= offset < -1e-6:
        assert "23:59:60" in text
    assert abs(parse_iso(text) - e) <= 0.5e-6 + 1e-9
