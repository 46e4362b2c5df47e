"""librate torus end to end (in-process, through cli.main), and its refusals."""

import json

import pytest

from librate_cli.main import main


def run(capsys, *argv):
    try:
        rc = main(list(argv))
    except SystemExit as e:     # argparse's own refusals (a choice not allowed)
        rc = e.code
    out = capsys.readouterr()
    return rc, out.out, out.err


def test_torus_json_keys_and_figure(capsys, tmp_path):
    plot = tmp_path / "t.png"
    rc, out, err = run(capsys, "torus", "--system", "earth-moon", "--around",
                       "halo L2 south resonance=9:2", "--amplitude", "1000km", "--format", "json",
                       "--plot", str(plot), "-q")
    assert rc == 0, err
    d = json.loads(out)
    for k in ("frequencies_rad_tu", "rotation_deg", "stroboscopic_period_days", "invariance_error",
              "n_circle_points", "jacobi", "closest_approach_km", "extent_km", "caution", "circle"):
        assert k in d
    assert d["family"] == "quasi-halo" and len(d["frequencies_rad_tu"]) == 2
    assert d["amplitude_km"] == pytest.approx(1000.0, abs=1e-3)
    assert d["invariance_error"] < d["invariance_tolerance"]
    assert len(d["circle"]) == d["n_circle_points"]
    # held at the orbit's Jacobi constant (the default)
    assert d["jacobi"] == pytest.approx(d["around"]["jacobi"], abs=1e-10)
    assert 5000.0 > d["closest_approach_km"]["moon"] > 1737.4
    assert plot.exists() and plot.stat().st_size > 20000


def test_torus_table_has_caution_and_model(capsys):
    rc, out, err = run(capsys, "torus", "--system", "earth-moon", "--around", "lyapunov L1 ax=2000km",
                       "--amplitude", "300km", "--hold", "period", "-q")
    assert rc == 0, err
    assert "lissajous torus" in out and "CAUTION" in out
    assert "circular restricted three-body model" in out


@pytest.mark.parametrize("argv", [
    ["--around", "halo L2 south resonance=9:2", "--amplitude", "-5km"],
    ["--around", "halo L2 south resonance=9:2", "--amplitude", "2000 parsecs"],
    ["--around", "halo L2 south resonance=9:2", "--amplitude", "200000km"],
    ["--around", "halo L2 south", "--amplitude", "2000km"],
    ["--around", "blob L2 az=3km", "--amplitude", "2000km"],
    ["--around", "halo L2 south resonance=9:2", "--amplitude", "2000km", "--plot", "t.gif"],
    ["--around", "halo L2 south resonance=9:2", "--amplitude", "2000km", "--plot", "/no/such/t.png"],
    ["--around", "halo L2 south resonance=9:2", "--amplitude", "2000km", "--hold", "mass"],
])
def test_torus_bad_input_exit_2(capsys, argv):
    rc, out, err = run(capsys, "torus", "--system", "earth-moon", *argv)
    assert rc == 2 and err.startswith("librate") and "error:" in err and out == ""
    assert len(err.strip().splitlines()) == 1


@pytest.mark.parametrize("argv, words", [
    (["--family", "lissajous", "--point", "L2", "--ay", "-5km", "--az", "500000km"], ["--ay", "positive"]),
    (["--family", "lissajous", "--point", "L2", "--ay", "800000", "--az", "500000km"], ["--ay", "no unit"]),
    (["--family", "lissajous", "--point", "L2", "--ay", "800000km"], ["--az", "missing"]),
    (["--family", "lissajous", "--point", "L4", "--ay", "800000km", "--az", "5km"], ["--point L4", "L1 or L2"]),
    (["--ay", "800000km", "--az", "500000km"], ["--ay", "--family lissajous"]),
    (["--around", "halo L2 south resonance=9:2", "--amplitude", "2000km", "--az", "5km"], ["--az", "--family lissajous"]),
    (["--family", "lissajous", "--point", "L2", "--ay", "8km", "--az", "5km", "--around", "halo L2 south"], ["not both"]),
    (["--family", "lissajous", "--point", "L2", "--ay", "8km", "--az", "5km", "--members", "0"], ["--members 0", "allowed range"]),
])
def test_lissajous_and_family_bad_input_exit_2(capsys, argv, words):
    rc, out, err = run(capsys, "torus", "--system", "sun-earth", *argv)
    assert rc == 2 and out == "" and len(err.strip().splitlines()) == 1
    for w in words:
        assert w in err


def test_lissajous_unreachable_target_exit_3_with_range(capsys, monkeypatch):
    # the walk is allowed only 2 torus solves, far too few to grow Az to 150000 km: refused with
    # status 3 and the range of amplitudes that was reached
    import cr3bp.tori.lissajous as liss
    monkeypatch.setattr(liss, "RAY_MAX_SOLVES", 2)
    rc, out, err = run(capsys, "torus", "--system", "sun-earth", "--family", "lissajous",
                       "--point", "L2", "--ay", "300000km", "--az", "150000km", "-q")
    assert rc == 3 and out == "", err
    assert len(err.strip().splitlines()) == 1
    assert "reached Ay" in err and "Az" in err and " km to " in err


def test_torus_family_table_csv_and_figure(capsys, tmp_path):
    plot = tmp_path / "fam.png"
    rc, out, err = run(capsys, "torus", "--system", "earth-moon", "--around", "lyapunov L1 ax=2000km",
                       "--amplitude", "300km", "--members", "2", "--plot", str(plot), "--format", "json")
    assert rc == 0, err
    d = json.loads(out)
    assert len(d["members"]) == 3 and d["hold"] == "jacobi"
    c = [m["jacobi"] for m in d["members"]]
    assert max(c) - min(c) < 1e-10                                       # held
    a = [m["amplitude_km"] for m in d["members"]]
    assert a[0] < a[1] < a[2]
    assert all(m["invariance_error"] < m["invariance_tolerance"] for m in d["members"])
    assert all(m["az_km"] > 0 for m in d["members"])
    assert err.count("torus family: member") == 2
    assert plot.exists() and plot.stat().st_size > 20000
