"""librate orbit / family / catalog end to end (in-process, through cli.main)."""

import json

import pytest

from librate_cli.main import main


def run(capsys, *argv):
    rc = main(list(argv))
    out = capsys.readouterr()
    return rc, out.out, out.err


def test_orbit_json_keys(capsys, tmp_path):
    plot = tmp_path / "o.png"
    rc, out, err = run(capsys, "orbit", "--system", "earth-moon", "--family", "halo", "--point", "L1",
                       "--branch", "north", "--az", "8000km", "--format", "json", "--plot", str(plot))
    assert rc == 0, err
    d = json.loads(out)
    for k in ("family", "point", "branch", "state", "period", "period_days", "jacobi", "stability_indices",
              "periodicity_error", "closest_approach_km", "amplitude_km", "caution"):
        assert k in d
    assert len(d["state"]) == 6 and len(d["stability_indices"]) == 2
    assert set(d["amplitude_km"]) == {"x", "y", "z"} and set(d["closest_approach_km"]) == {"earth", "moon"}
    assert d["amplitude_km"]["z"] == pytest.approx(8000.0, abs=1e-3)
    assert d["periodicity_error"] < 1e-10
    assert plot.exists() and plot.stat().st_size > 10000


def test_orbit_table_has_caution(capsys):
    rc, out, _ = run(capsys, "orbit", "--system", "earth-moon", "--family", "lyapunov", "--point", "L1",
                     "--jacobi", "3.18", "-q")
    assert rc == 0 and "CAUTION" in out and "Jacobi constant      3.18" in out




@pytest.mark.parametrize("argv", [
    ["--family", "halo", "--point", "L7", "--branch", "north", "--az", "1km"],
    ["--family", "halo", "--point", "L1", "--branch", "up", "--az", "1km"],
    ["--family", "halo", "--point", "L1", "--branch", "north", "--az", "12"],
    ["--family", "halo", "--point", "L1", "--branch", "north"],
    ["--family", "halo", "--point", "L1", "--branch", "north", "--az", "1km", "--period", "3d"],
    ["--family", "blob", "--az", "1km"],
])
def test_orbit_bad_input_exit_2(capsys, argv):
    rc, out, err = run(capsys, "orbit", "--system", "earth-moon", *argv)
    assert rc == 2 and err.startswith("librate: error:") and out == ""


def test_family_and_catalog(capsys, tmp_path):
    cat = tmp_path / "cat.sqlite"
    prefix = tmp_path / "ly"
    rc, out, err = run(capsys, "family", "--system", "earth-moon", "--family", "lyapunov", "--point", "L1",
                       "--members", "30", "--format", "json", "--catalog", str(cat), "--plot", str(prefix))
    assert rc == 0, err
    d = json.loads(out)
    assert len(d["members"]) == 30 and "bifurcations" in d
    assert "member 10" in err          # progress while the family grows
    b = d["bifurcations"]
    assert len(b) == 1 and {"type", "member_index", "jacobi", "period"} <= set(b[0])
    assert (tmp_path / "ly-family.png").exists() and (tmp_path / "ly-stability.png").exists()
    rc, out, _ = run(capsys, "family", "--system", "earth-moon", "--family", "lyapunov", "--point", "L1",
                     "--members", "5", "--format", "csv", "-q")
    lines = [l for l in out.splitlines() if not l.startswith("#")]
    assert rc == 0 and lines[0].startswith("index,x,y,z") and len(lines) == 6 and "CAUTION" in out
    rc, out, _ = run(capsys, "catalog", "list", "--catalog", str(cat), "--format", "json")
    fams = json.loads(out)["families"]
    assert rc == 0 and len(fams) == 1 and fams[0]["members"] == 30
    fid = fams[0]["id"]
    rc, out, _ = run(capsys, "catalog", "show", str(fid), "--catalog", str(cat), "--format", "json")
    assert rc == 0 and len(json.loads(out)["members"]) == 30
    rc, out, _ = run(capsys, "catalog", "find", "--catalog", str(cat), "--system", "earth-moon", "--family",
                     "lyapunov", "--point", "L1", "--jacobi", "3.176", "--format", "json")
    assert rc == 0 and len(json.loads(out)["members"]) == 3
    rc, _, err = run(capsys, "catalog", "find", "--catalog", str(cat), "--system", "earth-moon", "--family",
                     "lyapunov", "--point", "L1", "--jacobi", "2.5")
    assert rc == 3 and "covers jacobi from" in err
    # a request for the catalogued family reads it (no recomputation) and solves exactly
    rc, out, err = run(capsys, "orbit", "--system", "earth-moon", "--family", "lyapunov", "--point", "L1",
                       "--jacobi", "3.176", "--catalog", str(cat), "--format", "json")
    assert rc == 0 and json.loads(out)["jacobi"] == pytest.approx(3.176, abs=1e-12)
    assert "member" not in err
    rc, _, err = run(capsys, "orbit", "--system", "earth-moon", "--family", "lyapunov", "--point", "L1",
                     "--period", "2d", "--catalog", str(cat), "-q")
    assert rc == 3 and "covers period from" in err and "Traceback" not in err
    rc, _, _ = run(capsys, "catalog", "remove", str(fid), "--catalog", str(cat), "-q")
    assert rc == 0
    rc, _, err = run(capsys, "catalog", "show", str(fid), "--catalog", str(cat))
    assert rc == 2


def test_family_bad_input(capsys):
    rc, _, err = run(capsys, "family", "--system", "earth-moon", "--family", "lyapunov", "--point", "L1",
                     "--members", "1")
    assert rc == 2 and "--members" in err
    rc, _, err = run(capsys, "family", "--system", "earth-moon", "--family", "lyapunov", "--point", "L1",
                     "--until", "colour=3")
    assert rc == 2


def test_family_route_option(capsys):
    """--route branch reaches the vertical family through the axial family; the members are
    vertical orbits (checked against the seeded route in tests/test_orbits_branching.py)."""
    rc, out, err = run(capsys, "family", "--system", "earth-moon", "--family", "vertical", "--point", "L1",
                       "--route", "branch", "--members", "6", "--format", "json", "-q")
    assert rc == 0, err
    d = json.loads(out)
    assert d["route"] == "branch" and len(d["members"]) == 6
    assert all(abs(m["state"][1]) == 0 and abs(m["state"][2]) == 0 for m in d["members"])
    assert all(m["periodicity_error"] < 1e-10 for m in d["members"])
    rc, _, err = run(capsys, "family", "--system", "earth-moon", "--family", "dro", "--route", "seed")
    assert rc == 2 and "--route" in err
    rc, _, err = run(capsys, "family", "--system", "earth-moon", "--family", "halo", "--point", "L3",
                     "--branch", "north", "--route", "seed")
    assert rc == 2 and "route 'seed'" in err
