"""Time scales: ISO 8601 text, leap seconds, bad input, the beyond-validity warning."""

import re
import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cr3bp.errors import InputError
from cr3bp.time.scales import (Epoch, LeapSecondsExpiredWarning, calendar_to_mjd, leap_second_table,
    mjd_to_calendar, mjd_to_iso_date, parse_iso, tai_minus_utc)

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
    assert "Bulletin C" in t.source and "astropy-iers-data" in t.source
    assert t.tai_minus_utc_s[0] == 10 and np.all(np.diff(t.tai_minus_utc_s) == 1)
    assert tai_minus_utc(calendar_to_mjd(2016, 12, 31)) == 36
    assert t.to_dict()["valid_until"] >= "2027-06-28"      # Bulletin C 72 (July 2026) or later


def test_table_is_the_data_package_copy():
    """data/leap_seconds.txt is what data/refresh_leap_seconds.py writes from the IERS file of
    the installed astropy-iers-data (a test extra): the same steps up to the table's validity,
    its expiry as the valid-until date, and on the same package version the same bytes."""
    refresh = pytest.importorskip("cr3bp.data.refresh_leap_seconds")
    pytest.importorskip("astropy_iers_data")
    src = refresh.load()
    table = leap_second_table()
    ours = [(mjd_to_iso_date(int(m)), float(v)) for m, v in zip(table.mjd, table.tai_minus_utc_s)]
    valid = table.to_dict()["valid_until"]
    theirs = [(d, float(v)) for d, v in src.steps if d < valid]
    assert ours == theirs, "rerun data/refresh_leap_seconds.py (make leap-seconds)"
    assert valid <= src.expires
    recorded = re.search(rf"{refresh.PACKAGE} (\S+);", table.source)
    assert recorded, "the table does not name the package version it was copied from"
    if recorded[1] == src.version:
        assert valid == src.expires
        assert refresh.render(src) == refresh.TARGET.read_text()


def test_refresh_parses_the_iers_layout():
    """The IERS layout (rows 'MJD day month year TAI-UTC', 'File expires on ...'); rows in
    another shape are refused rather than guessed."""
    refresh = pytest.importorskip("cr3bp.data.refresh_leap_seconds")
    text = ("#  Updated through IERS Bulletin 72 issued in July 2026\n#  File expires on 28 June 2027\n"
            "    41317.0    1  1 1972       10\n    57754.0    1  1 2017       37\n")
    f = refresh.parse(text)
    assert f.steps == (("1972-01-01", 10), ("2017-01-01", 37)) and f.expires == "2027-06-28"
    assert "Bulletin 72" in f.updated_through
    with pytest.raises(ValueError, match="unexpected row"):
        refresh.parse(text + "2017-01-01 37\n")
    with pytest.raises(ValueError, match="expires"):
        refresh.parse("    41317.0    1  1 1972       10\n")


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
