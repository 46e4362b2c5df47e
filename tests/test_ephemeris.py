"""Ephemeris API: shapes, frames, compositions, validity, velocities vs differences of positions."""

import numpy as np
import pytest

from cr3bp import ephemeris as eph
from cr3bp.errors import InputError
from cr3bp.timescales import parse_iso

ONE_KM = 1.0
ONE_METER = 1e-3
ONE_MM_PER_S = 1e-6  # km/s


def test_shapes():
    t = parse_iso("2031-03-01T00:00:00 TDB") + np.arange(5) * 3600.0
    assert eph.position("moon", t).shape == (5, 3)
    assert eph.state("sun", t, center="ssb").shape == (5, 6)
    assert eph.position("moon", t[0]).shape == (3,)
    assert eph.state("moon", "2031-03-01T00:00:00 TDB").shape == (6,)


def test_compositions_close():
    t = parse_iso("2031-03-01T00:00:00 TDB") + np.linspace(0, 3e7, 7)
    a = eph.state("moon", t, "sun") - eph.state("earth", t, "sun")
    b = eph.state("moon", t, "earth")
    assert np.max(np.abs(a[:, :3] - b[:, :3])) < ONE_METER
    assert np.max(np.abs(a[:, 3:] - b[:, 3:])) < ONE_MM_PER_S
    assert np.allclose(eph.state("earth", t, "moon"), -b)
    # the EMB lies between Earth and Moon at the mass ratio
    emb = eph.position("emb", t, "earth")
    frac = np.linalg.norm(emb, axis=1) / np.linalg.norm(b[:, :3], axis=1)
    assert np.allclose(frac, 1 / (1 + 398600.435436 / 4902.800066), rtol=1e-12)


def test_planet_centres():
    t = parse_iso("2031-03-01T00:00:00 TDB") + np.linspace(0, 3e7, 5)
    a = eph.state("earth", t, "mars")
    b = eph.state("earth", t, "sun") - eph.state("mars", t, "sun")
    assert np.max(np.abs(a - b)) < 1e-6


def test_frames():
    t = parse_iso("2031-03-01T00:00:00 TDB") + np.linspace(0, 3e7, 7)
    ecl = eph.state("emb", t, "sun", frame="j2000-ecliptic")
    equ = eph.state("emb", t, "sun", frame="j2000-equator")
    m = eph.ecliptic_to_equator_matrix()
    assert np.allclose(equ[:, :3], ecl[:, :3] @ m.T)
    # the EMB stays within 0.005 deg of the J2000 ecliptic (Standish Table 1: I = -0.00001531 - 0.01294668 T deg)
    assert np.max(np.abs(ecl[:, 2]) / np.linalg.norm(ecl[:, :3], axis=1)) < np.radians(0.005)


@pytest.mark.parametrize("body,center,h", [("moon", "earth", 20.0), ("mars", "sun", 100.0),
                                           ("sun", "ssb", 100.0), ("earth", "sun", 20.0)])
def test_velocity_is_derivative_of_position(body, center, h):
    """State velocities vs a central difference of positions (step h seconds: truncation
    h^2 w^2 / 6 and round-off 1e-7 s / 2h, both under 1e-8 of the speed)."""
    t = parse_iso("2031-03-01T00:00:00 TDB") + np.linspace(0, 3e7, 11)
    v_num = (eph.position(body, t + h, center) - eph.position(body, t - h, center)) / (2 * h)
    v = eph.state(body, t, center)[:, 3:]
    rel = np.max(np.linalg.norm(v - v_num, axis=1) / np.linalg.norm(v, axis=1))
    assert rel < 2e-8


def test_validity_interval():
    with pytest.raises(InputError, match="outside the validity"):
        eph.position("mars", "3001-01-01T00:00:00 TDB", "sun")
    with pytest.raises(InputError, match="outside the validity"):
        eph.position("mars", "0999-12-31T00:00:00 TDB", "sun")
    eph.position("mars", "2060-01-01T00:00:00 TDB", "sun")      # Table 2 beyond 2050
    with pytest.raises(InputError, match="outside the validity"):  # Earth needs the Moon
        eph.position("earth", "2101-06-01T00:00:00 TDB", "sun")
    with pytest.raises(InputError, match="outside the validity"):
        eph.position("moon", parse_iso("1899-12-31T00:00:00 TT"))
    lo, hi = eph.valid_interval("moon")
    assert lo.to_iso("tt", 0) == "1900-01-01T00:00:00 TT"
    eph.position("moon", "2095-01-01T00:00:00 TDB")   # Moon alone: wider span


def test_bad_names():
    with pytest.raises(InputError, match="'pluto'"):
        eph.position("pluto", "2031-01-01T00:00:00 TDB")
    with pytest.raises(InputError, match="center"):
        eph.position("moon", "2031-01-01T00:00:00 TDB", center="vesta")
    with pytest.raises(InputError, match="frame"):
        eph.position("moon", "2031-01-01T00:00:00 TDB", frame="icrs")


def test_blocks_agree_with_single_evaluation():
    t = parse_iso("2031-03-01T00:00:00 TDB") + np.linspace(0, 3e8, eph.CHUNK * 2 + 17)
    whole = eph.state("moon", t)
    parts = np.vstack([eph.state("moon", t[i:i + 100]) for i in range(0, len(t), 100)])
    assert np.array_equal(whole, parts)


def test_table_switch_is_small():
    """At the 2051-01-01 switch from Table 1 to Table 2 the position jumps by no more than the
    two tables' documented errors."""
    t = parse_iso("2051-01-01T00:00:00 TT") + np.array([-1e-3, 1e-3])
    for body in ("emb", "mars", "jupiter"):
        p = eph.position(body, t, "sun")
        jump = np.linalg.norm(p[1] - p[0])
        bound = eph.ACCURACY[(body, "sun", (1800, 2050))]["km"] + eph.ACCURACY[(body, "sun", (1000, 3000))]["km"]
        assert jump < bound


def test_position_and_state_paths_agree():
    t = parse_iso("1900-03-01T00:00:00 TDB") + np.linspace(0, 6e9, 5001)
    for body, center in (("moon", "earth"), ("sun", "earth"), ("mars", "sun")):
        p = eph.position(body, t, center)
        s = eph.state(body, t, center)
        assert np.max(np.abs(p - s[:, :3])) < ONE_METER * 1e-3


def test_kepler_solver():
    m = np.linspace(-np.pi, np.pi, 1001)
    for e in (0.0, 0.2, 0.7):
        big = eph.kepler_eccentric_anomaly(m, e)
        assert np.max(np.abs(big - e * np.sin(big) - m)) < 1e-13
