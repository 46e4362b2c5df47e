"""`librate refine` end to end: table, JSON keys, OEM written and read back, bad input (exit 2),
no convergence (exit 4)."""

import json

import numpy as np
import pytest

from cr3bp import CAUTION
from librate_cli.main import main

ARGS = ["refine", "--system", "earth-moon", "--orbit", "halo L2 south resonance=9:2",
        "--epoch", "2031-03-01T00:00:00Z", "--revs", "3", "--bodies", "sun,earth"]


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_table_oem_and_plot(capsys, tmp_path):
    oem = tmp_path / "nrho.oem"
    png = tmp_path / "nrho.png"
    code, out, err = run(capsys, *ARGS, "--out", str(oem), "--plot", str(png))
    assert code == 0, err
    assert "min_r_moon_km" in out and "CAUTION:" in out
    assert "iteration 0" in err
    assert png.stat().st_size > 10000
    from cr3bp.io import export
    data = export.read(oem)
    seg = data.segments[0]
    assert data.header.get("CENTER_NAME", "MOON").upper() == "MOON"
    assert seg.states.shape[0] > 1000 and np.all(np.isfinite(seg.states))
    # the file holds the converged ephemeris trajectory (through the rotating round trip)
    from fidelity_cases import nrho_transition
    tr = nrho_transition(3)
    n = min(seg.states.shape[0], tr.sample_km.shape[0])
    assert np.abs(seg.states[:n, :3] - tr.sample_km[:n, :3]).max() < 1e-3      # 1 m
    assert np.abs(seg.states[:n, 3:] - tr.sample_km[:n, 3:]).max() < 1e-6      # 1 mm/s


def test_json(capsys):
    code, out, _ = run(capsys, *ARGS, "--format", "json", "-q")
    assert code == 0
    d = json.loads(out)
    for key in ("per_revolution", "dv_total_mps", "iterations", "residuals", "continuity_km",
                "continuity_mps", "patches_km", "model", "caution"):
        assert key in d, key
    assert len(d["per_revolution"]) == 3
    assert d["residuals"][-1] < 1e-9
    assert d["continuity_km"] < 1e-3


def test_offsets_are_named_for_what_they_are(capsys):
    """Regression: the table showed 'max_dv_mps' and 'max_dr_km', differences at equal epochs
    that read as Δv and distance but are mostly timing. Now: the distance to the nearest point
    of the design's path, the timing offset, and the separation at equal epochs, named so; no
    Δv column but real maneuvers."""
    code, out, _ = run(capsys, *ARGS, "-q")
    assert code == 0
    for old in ("max_dv_mps", "max_dr_km"):
        assert old not in out
    for new in ("max_path_offset_km", "max_timing_offset_min", "max_same_epoch_separation_km"):
        assert new in out
    code, out, _ = run(capsys, *ARGS, "--format", "json", "-q")
    rows = json.loads(out)["per_revolution"]
    for r in rows:
        assert not any(k.startswith("max_dv") or k.startswith("max_dr") for k in r)
        # the path offset is a distance to the nearest point: never more than the separation at equal epochs
        assert 0.0 <= r["max_path_offset_km"] <= r["max_same_epoch_separation_km"] + 1e-6
        assert r["max_timing_offset_min"] >= 0.0


@pytest.mark.parametrize("extra,needle", [
    (["--bodies", "sun,vulcan"], "unknown body 'vulcan'"),
    (["--srp", "0.01m2/kg"], "--srp"),
    (["--revs", "0"], "--revs"),
    (["--epoch", "2031-13-01T00:00:00Z"], "2031-13-01"),
    (["--plot", "x.gif"], ".png"),          # one rule for every --plot: .png, .svg or .pdf
    (["--system", "jupiter-europa"], "no ephemeris"),
])
def test_bad_input_exit_2(capsys, tmp_path, extra, needle):
    argv = list(ARGS)
    for i in range(0, len(extra), 2):
        if extra[i] in argv:
            argv[argv.index(extra[i]) + 1] = extra[i + 1]
        else:
            argv += extra[i:i + 2]
    code, out, err = run(capsys, *argv, "--out", str(tmp_path / "x.oem"))
    assert code == 2
    assert needle in err and "Traceback" not in err
    assert not (tmp_path / "x.oem").exists()


def test_no_convergence_exit_4(capsys, tmp_path):
    code, _, err = run(capsys, *ARGS, "--max-iter", "1", "--out", str(tmp_path / "x.oem"))
    assert code == 4
    assert "did not converge" in err
    assert not (tmp_path / "x.oem").exists()


def test_oem_file_read_by_the_oem_package(capsys, tmp_path):
    """The refined trajectory's OEM is read by the independent `oem` package (test extra)."""
    oem = pytest.importorskip("oem")
    path = tmp_path / "nrho.oem"
    code, _, err = run(capsys, *ARGS, "--out", str(path), "-q")
    assert code == 0, err
    seg = list(oem.OrbitEphemerisMessage.open(str(path)))[0]
    states = list(seg.states)
    from fidelity_cases import nrho_transition
    tr = nrho_transition(3)
    assert len(states) == tr.sample_km.shape[0]
    assert np.abs(np.asarray(states[0].position) - tr.sample_km[0, :3]).max() < 1e-3   # 1 m
    assert np.abs(np.asarray(states[-1].velocity) - tr.sample_km[-1, 3:]).max() < 1e-6
