"""cr3bp.operations and ``librate shadow``: placement seam, pass edges, phasing, CLI."""

import json

import numpy as np
import pytest

from cr3bp import system
from cr3bp.io import export
from cr3bp.time import frames
from cr3bp.operations import eclipses, phasing, placement, visibility
from cr3bp.orbits.request import solve_request
from librate_cli.main import main

pytestmark = pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")
EM = system("earth-moon")
EPOCH = "2031-03-01T00:00:00Z"
NRHO = "halo L2 south resonance=9:2"


@pytest.fixture(scope="module")
def placed():
    orbit = solve_request(EM, NRHO)
    return orbit, placement.place(EM, orbit, EPOCH)


@pytest.mark.parametrize("phase", [0.0, 137.0])
def test_placed_positions_match_the_export_pipeline(placed, phase):
    """Seam: the eclipse search's spacecraft positions are what `librate export --anchor
    ephemeris --center earth --frame j2000-equator` writes for the orbit started at the phase."""
    orbit, pl = placed
    spec = frames.frame(EM, EPOCH, anchor="ephemeris", axes="j2000-equator", center="earth")
    start = np.asarray(orbit.state, dtype=float)
    if phase:
        start = export.sample(EM, orbit, np.array([0.0, phase / 360.0 * float(orbit.period)])).states[-1]
    grid = export.epoch_grid(spec, "UTC", 20.0, 3600.0)
    seg = export.sample(EM, start, grid)
    tdb, want = frames.to_frame(spec, seg.t_tu, seg.states)
    got = pl.geocentric(tdb, phase)
    assert np.max(np.linalg.norm(got - want[:, :3], axis=1)) < 0.05      # km (interpolation)


def test_edges_sit_on_the_shadow_boundary(placed):
    _, pl = placed
    sk = phasing.sky(pl, 365 * 86400.0, 300.0)
    h = phasing.history(pl, sk, 0.0)
    assert h.passes, "phase 0 from 2031-03-01 meets shadows"
    geo = phasing.geometry(pl, sk, 0.0)
    r = eclipses.radii_km()
    for p in h.passes:
        if p.open_start or p.open_end:
            continue
        pos = geo(np.array([p.start_tdb_s - 1.0, p.start_tdb_s + 1.0, p.end_tdb_s - 1.0, p.end_tdb_s + 1.0]))
        a, b, c = eclipses.disc_angles(pos["spacecraft"], pos["sun"], pos[p.body], r[p.body], r["sun"])
        g = c - (a + b) if p.kind == "penumbra" else c - (b - a)
        assert g[0] > 0 > g[1] and g[2] < 0 < g[3], p     # outside just before, inside just after


def test_nrho_can_be_phased_to_meet_no_earth_eclipse_in_a_year(placed):
    """Common practice (from memory): the 9:2 NRHO's phase is chosen to avoid the Earth's
    shadow; over a year some phases meet none. Phase 0 from 2031-03-01 meets two passes."""
    _, pl = placed
    sk = phasing.sky(pl, 365 * 86400.0, 300.0)
    h0 = phasing.history(pl, sk, 0.0, bodies=("earth",))
    assert h0.total_min() > 60.0                       # the scan has something to avoid
    ranked = phasing.scan(pl, sk, 12, bodies=("earth",))
    best = ranked[0]
    assert best.passes == ()
    assert ranked[-1].total_min() > 0.0
    # and that phase is really clear when searched on a finer grid
    fine = phasing.sky(pl, 365 * 86400.0, 60.0)
    assert phasing.history(pl, fine, best.phase_deg, bodies=("earth",)).passes == ()


def test_scan_honours_a_maximum_pass_duration(placed):
    _, pl = placed
    sk = phasing.sky(pl, 120 * 86400.0, 600.0)
    ranked = phasing.scan(pl, sk, 8, max_pass_min=60.0)
    assert ranked[0].longest_min() <= 60.0 or all(h.longest_min() > 60.0 for h in ranked)


def test_phase_parsing():
    assert placement.parse_phase("120deg") == 120.0
    assert placement.parse_phase("0.25rev") == 90.0
    assert placement.parse_phase("-30") == 330.0
    with pytest.raises(Exception, match="phase 'abc'"):
        placement.parse_phase("abc")


def test_station_windows_respect_minimum_elevation():
    st = visibility.Station("x", 40.0, -4.0, 15.0)
    t = frames.epoch_from_text(EPOCH) + np.arange(0, 3 * 86400.0, 120.0)
    moonish = np.tile([3.0e5, 2.0e5, 1.0e5], (t.size, 1))
    ws = visibility.windows(t, moonish, st)
    el, _ = visibility.look_angles(t, moonish, st)
    assert len(ws) in (3, 4)                             # once a sidereal day
    for w in ws:
        inside = (t > w.start_tdb_s + 120) & (t < w.end_tdb_s - 120)
        assert np.all(el[inside] >= 15.0)


BASE = ["shadow", "--system", "earth-moon", "--orbit", NRHO, "--epoch", EPOCH, "--span", "60d", "-q"]


def test_cli_json_and_plot(tmp_path, capsys):
    stations = tmp_path / "st.toml"
    stations.write_text("[stations.one]\nlatitude_deg = 40.0\nlongitude_deg = -4.0\nmin_elevation_deg = 10\n")
    plot = tmp_path / "t.png"
    assert main(BASE + ["--phase", "0deg", "--stations", str(stations), "--format", "json",
                        "--plot", str(plot)]) == 0
    out = json.loads(capsys.readouterr().out)
    assert "CAUTION" in out["caution"] and "ephemeris-anchored" in out["model"]["model"]
    assert out["model"]["phase_deg"] == 0.0
    assert out["visibility"][0]["windows"] > 30
    for p in out["passes"]:
        assert p["start_utc"] < p["end_utc"] and 0.0 <= p["depth"] <= 1.0
    assert plot.stat().st_size > 10000


def test_cli_table_has_caution_and_model(capsys):
    assert main(BASE + ["--avoid-eclipses", "--phases", "4"]) == 0
    text = capsys.readouterr().out
    assert "CAUTION" in text and "best phases of the scan" in text and "conical shadow model" in text


@pytest.mark.parametrize("extra, words", [
    (["--phase", "abc"], "phase 'abc'"),
    (["--step", "1s"], "--step '1s'"),
    (["--bodies", "sun"], "--bodies 'sun'"),
    (["--max-eclipse", "10min"], "--max-eclipse goes with --avoid-eclipses"),
    (["--avoid-eclipses", "--phases", "0"], "--phases 0"),
    (["--stations", "/nonexistent/st.toml"], "does not exist"),
    (["--epoch", "2031-13-01T00:00:00Z"], "2031-13-01"),
])
def test_cli_bad_input(tmp_path, capsys, extra, words):
    args = list(BASE)
    if "--epoch" in extra:
        args[args.index("--epoch") + 1] = extra[1]
        extra = []
    plot, out = tmp_path / "t.png", tmp_path / "o.json"
    assert main(args + extra + ["--plot", str(plot), "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert words in err and len(err.strip().splitlines()) == 1
    assert list(tmp_path.iterdir()) == []


def test_cli_bad_plot_folder(tmp_path, capsys):
    assert main(BASE + ["--plot", str(tmp_path / "no" / "t.png")]) == 2
    assert "does not exist" in capsys.readouterr().err


def test_earth_angles_against_direct_geometry(placed):
    _, pl = placed
    sk = phasing.sky(pl, 5 * 86400.0, 3600.0)
    ang = phasing.earth_angles(pl, sk, 45.0)
    k = 37
    r, s, m = ang["position_km"][k], sk.sun[k], sk.moon[k]
    want = np.degrees(np.arctan2(np.linalg.norm(np.cross(r, s)), r @ s))
    assert abs(ang["sun_earth_spacecraft_deg"][k] - want) < 1e-9
    want = np.degrees(np.arctan2(np.linalg.norm(np.cross(r, m)), r @ m))
    assert abs(ang["moon_earth_spacecraft_deg"][k] - want) < 1e-9
    # an orbit about the Moon stays within about 10 deg of it seen from the Earth
    assert ang["moon_earth_spacecraft_deg"].max() < 12.0
    assert 3.2e5 < ang["range_km"].min() < ang["range_km"].max() < 4.6e5


@pytest.mark.parametrize("text, words", [
    ("[stations.a]\nlatitude_deg = 95\nlongitude_deg = 0\n", "stations.a.latitude_deg = 95"),
    ("[stations.a]\nlongitude_deg = 0\n", "stations.a needs latitude_deg"),
    ("[stations.a]\nlatitude_deg = 1\nlongitude_deg = 0\nelev = 3\n", "unknown key 'elev'"),
    ("[stations.a]\nlatitude_deg = 1\nlongitude_deg = 0\nmin_elevation_deg = true\n", "min_elevation_deg = True"),
    ("stations = 3\n", "no [stations.NAME] tables"),
    ("[stations.a\n", "not valid TOML"),
])
def test_station_file_errors(tmp_path, text, words):
    from cr3bp.errors import InputError
    f = tmp_path / "st.toml"
    f.write_text(text)
    with pytest.raises(InputError, match=None) as e:
        visibility.read_stations(f)
    assert words in str(e.value) and "\n" not in str(e.value)


def test_example_station_file_reads():
    from pathlib import Path
    st = visibility.read_stations(Path(__file__).resolve().parents[1] / "examples" / "stations.toml")
    assert [s.name for s in st] == ["north-hill", "south-plain", "west-coast"]


def test_span_beyond_the_tables_is_refused_before_the_orbit_is_solved(capsys, tmp_path):
    """An epoch whose span runs past DE421's end (2053-10-09 TDB) is refused at once, naming
    the tables' span, with no orbit solved and nothing written."""
    out = tmp_path / "s.json"
    rc = main(["shadow", "--system", "earth-moon", "--orbit", "halo L2 south resonance=9:2",
               "--epoch", "2053-09-01T00:00:00Z", "--span", "365d", "--format", "json", "--out", str(out)])
    err = capsys.readouterr().err
    assert rc == 2 and "DE421" in err and "2053-10-09" in err
    assert "solving orbit request" not in err and not out.exists()
