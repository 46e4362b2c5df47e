"""Eclipses and visibility along a trajectory file (``librate shadow --trajectory``,
:mod:`cr3bp.operations.along`).

Seam (export -> shadow): an arc of the 9:2 NRHO written by ``librate export`` at an epoch and
read back by ``librate shadow --trajectory`` meets the same shadow passes as ``librate shadow
--orbit`` at that epoch (phase 0), each edge within one second. Outside check: the shadow of a
spacecraft state on the file's track, computed independently from pyerfa's Sun and Moon
(the ray cast of tests/test_against_pyerfa_shadow.py, reused; pyerfa: IAU SOFA, epv00 and
moon98, Meeus 1998 ch. 47 for the Moon).
"""

import json

import numpy as np
import pytest

from cr3bp import system
from cr3bp.errors import InputError
from cr3bp.operations import along, eclipses
from librate_cli.main import main

pytestmark = pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")
EM = system("earth-moon")
NRHO = "halo L2 south resonance=9:2"
#: An epoch whose first 40 days from phase 0 hold Earth and Moon shadow passes (found with
#: librate shadow --orbit; the test asserts there are some).
EPOCH = "2031-03-01T00:00:00Z"
SPAN = "40d"
ONE_SECOND = 1.0


def _shadow_json(capsys, argv):
    rc = main(argv + ["--format", "json", "-q"])
    out = capsys.readouterr().out
    assert rc == 0, out
    return json.loads(out)


@pytest.fixture(scope="module")
def exported(tmp_path_factory):
    d = tmp_path_factory.mktemp("arc")
    path = d / "arc.oem"
    rc = main(["export", "--system", "earth-moon", "--orbit", NRHO, "--epoch", EPOCH, "--span", SPAN,
               "--step", "2min", "--anchor", "ephemeris", "--frame", "j2000-equator", "--out", str(path), "-q"])
    assert rc == 0
    return path


def test_exported_arc_meets_the_passes_of_the_orbit(exported, capsys):
    want = _shadow_json(capsys, ["shadow", "--system", "earth-moon", "--orbit", NRHO, "--epoch", EPOCH,
                                 "--span", SPAN])
    got = _shadow_json(capsys, ["shadow", "--trajectory", str(exported)])
    closed = [p for p in want["passes"] if not (p["open_start"] or p["open_end"])]
    assert len(closed) >= 2, "the span must hold shadow passes for the check to mean anything"
    assert [(p["body"], p["kind"]) for p in got["passes"]] == [(p["body"], p["kind"]) for p in want["passes"]]
    from cr3bp.time import frames
    for a, b in zip(got["passes"], want["passes"]):
        for key in ("start_utc", "end_utc"):
            ta, tb = frames.epochs_from_texts([a[key][:-1], b[key][:-1]], "UTC")
            assert abs(ta - tb) < ONE_SECOND, (key, a, b)
        assert a["depth"] == pytest.approx(b["depth"], abs=1e-3)
    for key in ("sun_earth_spacecraft_deg", "moon_earth_spacecraft_deg"):
        for end in ("min", "max"):
            assert got["angles"][key][end] == pytest.approx(want["angles"][key][end], abs=0.01)
    assert "CAUTION" in json.dumps(got) or "caution" in json.dumps(got).lower()


def test_track_shadow_against_pyerfa_ray_cast(exported):
    """One state of the track inside a pass: the visible fraction from the project's geometry
    against the ray cast on pyerfa's Sun and Moon (test_against_pyerfa_shadow)."""
    from test_against_pyerfa_shadow import RADII, _erfa_sun_moon, _ray_cast_fraction
    track = along.from_file(exported)
    sh = along.shadows(track, 300.0)
    p = next(p for p in sh.history.passes if p.kind == "penumbra" and not p.open_start)
    ts = np.linspace(p.start_tdb_s, p.end_tdb_s, 201)[1:-1]
    geo = along.geometry(track)(ts)
    nu = eclipses.visible_fraction(geo["spacecraft"], geo["sun"], geo[p.body], RADII[p.body])
    k = int(np.argmin(np.abs(nu - 0.5)))              # a partly hidden Sun: the ray cast can differ
    t, got = ts[k], nu[k]
    r = track.geocentric([t])[0]
    sun, moon = (np.reshape(v, (-1, 3))[0] for v in _erfa_sun_moon(t))
    body = {"earth": np.zeros(3), "moon": moon}[p.body]
    want = _ray_cast_fraction(r, sun, body, RADII[p.body], RADII["sun"])
    assert 0.05 < got < 0.95
    assert got == pytest.approx(want, abs=0.02)


def test_route_track_follows_the_stitched_segments():
    """from_route: a track's rotating states are the stitched route's samples (the maneuvers
    split it into segments that are each interpolated alone)."""
    from types import SimpleNamespace
    t = np.linspace(0.0, 1.0, 41)
    x = np.column_stack([1.1 + 0.01 * np.cos(t), 0.01 * np.sin(t), 0 * t, -0.01 * np.sin(t), 0.01 * np.cos(t), 0 * t])
    fake = SimpleNamespace(system=EM, nodes=("a", "b"), times_tu=t, states=x, segment=np.zeros(41, int),
                           maneuvers=(), dv_total_mps=0.0, tof_days=float(t[-1] * EM.time_days))
    track = along.from_route(fake, EPOCH)
    got = track.rotating(track.spec.epoch_tdb_s + t[::7] * EM.time_s)
    assert np.allclose(got, x[::7], atol=1e-12)


@pytest.mark.parametrize("extra, words", [
    (["--orbit", NRHO], "not both"),
    (["--phase", "10deg"], "--phase goes with --orbit"),
    (["--avoid-eclipses"], "--avoid-eclipses goes with --orbit"),
    (["--span", "3d"], "--span goes with --orbit"),
    (["--epoch", "2031-03-01T00:00:00Z"], "leave out the epoch"),
    (["--system", "sun-earth"], "is in earth-moon"),
])
def test_cli_refusals_with_a_trajectory(exported, capsys, extra, words):
    rc = main(["shadow", "--trajectory", str(exported)] + extra)
    err = capsys.readouterr().err
    assert rc == 2 and words in err and "Traceback" not in err


def test_missing_file_and_no_source(capsys, tmp_path):
    assert main(["shadow", "--trajectory", str(tmp_path / "none.oem")]) == 2
    assert "is not a file" in capsys.readouterr().err
    assert main(["shadow", "--system", "earth-moon"]) == 2
    assert "--trajectory FILE" in capsys.readouterr().err


def test_rotating_file_without_epoch_is_refused(tmp_path):
    p = tmp_path / "x.json"
    p.write_text("{}")
    with pytest.raises(InputError):
        along.from_file(p)


def test_the_call_gives_the_command_s_passes(exported, capsys):
    """Seam: ``cr3bp.api.shadow_along`` (what ``librate shadow --trajectory`` calls) finds the
    passes the command reports, to the second."""
    from cr3bp import api
    from cr3bp.time import frames
    got = _shadow_json(capsys, ["shadow", "--trajectory", str(exported)])
    track, sh = api.shadow_along(exported)
    passes = sh.history.passes
    assert len(passes) == len(got["passes"]) >= 2
    for p, q in zip(passes, got["passes"]):
        assert (p.body, p.kind) == (q["body"], q["kind"])
        t = frames.epochs_from_texts([q["start_utc"][:-1]], "UTC")[0]
        assert abs(p.start_tdb_s - t) < ONE_SECOND
    with pytest.raises(InputError, match="step '1s' is 1 s"):
        api.shadow_along(exported, step="1s")
