"""Ephemeris API: shapes, frames, compositions, validity, velocities vs differences of positions,
the labelled fallback to the analytic series, the kernel file's checks."""

import numpy as np
import pytest

from cr3bp.time import ephemeris as eph
from cr3bp.time import ephemeris_series as series
from cr3bp.time import ephemeris_tables as tables
from cr3bp.errors import EphemerisSpanError, InputError
from cr3bp.time.scales import parse_iso

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
    # the EMB lies between Earth and Moon at the mass ratio: DE421's own Earth/Moon mass ratio
    # and the DE430 GMs of data/systems.toml agree to 1e-10 (measured 8.5e-11)
    emb = eph.position("emb", t, "earth")
    frac = np.linalg.norm(emb, axis=1) / np.linalg.norm(b[:, :3], axis=1)
    assert np.allclose(frac, 1 / (1 + 398600.435436 / 4902.800066), rtol=1e-9)
    assert np.ptp(frac) < 1e-14                       # a constant of the tables


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
    """DE421's span is the kernel's coverage, 1899-07-29 .. 2053-10-09 TDB; outside it a typed
    error (an InputError) names the epoch and the span; the series stays available on request."""
    lo, hi = eph.valid_interval("moon")
    assert lo.to_iso("tdb", 0) == "1899-07-29T00:00:00 TDB"
    assert hi.to_iso("tdb", 0) == "2053-10-09T00:00:00 TDB"
    eph.position("moon", ["1899-07-29T00:00:00 TDB", "2053-10-09T00:00:00 TDB"])   # both ends
    for when in ("2053-10-09T00:00:01 TDB", "1899-07-28T23:59:59 TDB"):
        with pytest.raises(EphemerisSpanError, match=f"epoch {when[:19]} TDB is outside the validity of JPL DE421"):
            eph.position("mars", when, "sun")
    with pytest.raises(InputError, match="2060-01-01.*1899-07-29T00:00:00 TDB .. 2053-10-09T00:00:00 TDB"):
        eph.state("earth", parse_iso(["2031-01-01T00:00:00 TDB", "2060-01-01T00:00:00 TDB"]), "sun")
    # the analytic series, asked for by name, keeps its own spans
    eph.position("mars", "2060-01-01T00:00:00 TDB", "sun", model="series")   # Table 2 beyond 2050
    with pytest.raises(InputError, match="outside the validity"):
        eph.position("mars", "3001-01-01T00:00:00 TDB", "sun", model="series")
    with pytest.raises(InputError, match="outside the validity"):  # Earth needs the Moon
        eph.position("earth", "2101-06-01T00:00:00 TDB", "sun", model="series")
    lo, hi = eph.valid_interval("moon", model="series")
    assert lo.to_iso("tt", 0) == "1900-01-01T00:00:00 TT"
    eph.position("moon", "2095-01-01T00:00:00 TDB", model="series")   # Moon alone: wider span


def test_models_are_labelled():
    d = eph.describe()
    assert d["model"] == "de421" and "DE421" in d["label"]
    assert d["span_tdb"] == ["1899-07-29T00:00:00", "2053-10-09T00:00:00"]
    s = eph.describe("series")
    assert "not DE421" in s["label"] and s["span_tdb"][0].startswith("1900-01-01")
    with pytest.raises(InputError, match="model 'de405'"):
        eph.position("moon", "2031-01-01T00:00:00 TDB", model="de405")


def test_series_differs_from_de421():
    """The fallback is not DE421: its documented errors show (so a caller mixing the two up
    would be caught by tests that compare with DE421)."""
    t = parse_iso("2031-03-01T00:00:00 TDB") + np.linspace(0, 3e8, 50)
    d = np.linalg.norm(eph.position("moon", t) - eph.position("moon", t, model="series"), axis=1)
    assert 0.1 < d.max() < series.ACCURACY[("moon", "earth", (1900, 2100))]["km"] + 40.0


def test_bad_names():
    with pytest.raises(InputError, match="'pluto'"):
        eph.position("pluto", "2031-01-01T00:00:00 TDB")
    with pytest.raises(InputError, match="center"):
        eph.position("moon", "2031-01-01T00:00:00 TDB", center="vesta")
    with pytest.raises(InputError, match="frame"):
        eph.position("moon", "2031-01-01T00:00:00 TDB", frame="icrs")


def test_blocks_agree_with_single_evaluation():
    t = parse_iso("2031-03-01T00:00:00 TDB") + np.linspace(0, 3e8, tables.CHUNK * 2 + 17)
    whole = eph.state("moon", t)
    parts = np.vstack([eph.state("moon", t[i:i + 100]) for i in range(0, len(t), 100)])
    # (the whole array takes TDB - TT from interpolation, within 0.1 ns: a few um at most)
    assert np.max(np.abs(whole - parts)) < ONE_METER * 1e-3
    t = parse_iso("2031-03-01T00:00:00 TDB") + np.linspace(0, 3e8, series.CHUNK * 2 + 17)
    whole = eph.state("moon", t, model="series")
    parts = np.vstack([eph.state("moon", t[i:i + 100], model="series") for i in range(0, len(t), 100)])
    assert np.array_equal(whole, parts)


def test_continuous_across_records():
    """At the boundary between two of DE421's records (4 days for the Moon and the Earth) the
    two polynomials meet: position within 1 mm and velocity within 1 um/s (JPL fits them so)."""
    seg = tables.kernel().segments[301]
    edge_s = seg.init_s + 3000 * seg.length_s                  # a boundary in 1932
    dt = 1e-4
    t = parse_iso("2000-01-01T12:00:00 TDB") + (edge_s + np.array([-dt, dt]))
    s = eph.state("moon", t)
    moved = s[1, :3] - s[0, :3] - 0.5 * (s[0, 3:] + s[1, 3:]) * 2 * dt
    assert np.max(np.abs(moved)) < ONE_METER * 1e-3
    assert np.max(np.abs(s[1, 3:] - s[0, 3:])) < ONE_MM_PER_S * 1e-3


def test_table_switch_is_small():
    """Series: at the 2051-01-01 switch from Table 1 to Table 2 the position jumps by no more
    than the two tables' documented errors."""
    t = parse_iso("2051-01-01T00:00:00 TT") + np.array([-1e-3, 1e-3])
    acc = eph.SERIES_ACCURACY
    for body in ("emb", "mars", "jupiter"):
        p = eph.position(body, t, "sun", model="series")
        jump = np.linalg.norm(p[1] - p[0])
        bound = acc[(body, "sun", (1800, 2050))]["km"] + acc[(body, "sun", (1000, 3000))]["km"]
        assert jump < bound


def test_position_and_state_paths_agree():
    t = parse_iso("1900-03-01T00:00:00 TDB") + np.linspace(0, 4.7e9, 5001)
    for model in eph.MODELS:
        for body, center in (("moon", "earth"), ("sun", "earth"), ("mars", "sun")):
            p = eph.position(body, t, center, model=model)
            s = eph.state(body, t, center, model=model)
            assert np.max(np.abs(p - s[:, :3])) < ONE_METER * 1e-3


def test_kepler_solver():
    m = np.linspace(-np.pi, np.pi, 1001)
    for e in (0.0, 0.2, 0.7):
        big = series.kepler_eccentric_anomaly(m, e)
        assert np.max(np.abs(big - e * np.sin(big) - m)) < 1e-13


def test_kernel_errors(tmp_path, monkeypatch):
    """A missing package or a file of another layout: one-line errors naming the problem."""
    bad = tmp_path / "not-a-kernel.bsp"
    bad.write_bytes(b"\0" * 2048)
    with pytest.raises(tables.KernelError, match="not a little-endian DAF/SPK"):
        tables.read_kernel(str(bad))
    monkeypatch.setattr(tables.importlib.util, "find_spec", lambda name: None)
    with pytest.raises(tables.KernelError, match="install it .pip install skyfield-data."):
        tables.kernel_path()


def test_many_epochs_interpolate_tdb(monkeypatch):
    """For many epochs TDB - TT is interpolated between quarter-day nodes (module docstring
    bound: 3 ns); against the series summed at every epoch it stays within 5 ns, and the
    Earth about the Sun within 1 mm of the epoch-by-epoch path."""
    from cr3bp.time import scales as timescales
    t = parse_iso("2031-03-01T00:00:00 TDB") + np.linspace(0.0, 5 * 365.25 * 86400.0, 100_001)
    sizes = []
    real = timescales.tdb_minus_tt
    monkeypatch.setattr(timescales, "tdb_minus_tt", lambda a, b=0.0: sizes.append(np.size(b)) or real(a, b))
    j1, j2 = eph._tdb_jd(t)
    assert sizes and max(sizes) < 10_000          # the nodes only, not 100 001 epochs
    monkeypatch.undo()
    b1, b2 = t.two_part_jd("tdb")
    assert np.max(np.abs(((j1 - b1) + (j2 - b2)) * 86400.0)) < 5e-9
    whole = eph.position("earth", t, "sun")
    parts = np.vstack([eph.position("earth", t[i:i + 10_000], "sun") for i in range(0, len(t), 10_000)])
    assert np.max(np.abs(whole - parts)) < ONE_METER * 1e-3
