"""librate points / librate zvc from the shell's point of view (in-process), and the plot."""

import csv
import io
import json

import pytest

from cr3bp.cautions import CAUTION
from librate_cli.main import main


def run(capsys, *argv):
    rc = main(list(argv))
    out, err = capsys.readouterr()
    return rc, out, err


def test_points_table_has_all_points_and_caution(capsys):
    rc, out, _ = run(capsys, "points", "--system", "earth-moon")
    assert rc == 0
    for n in ("L1", "L2", "L3", "L4", "L5"):
        assert f"   {n} " in out
    assert "CAUTION" in out and "58,019" in out  # Moon–L1 distance, km


def test_points_json(capsys):
    rc, out, _ = run(capsys, "points", "--system", "earth-moon", "--format", "json")
    assert rc == 0
    d = json.loads(out)
    assert d["system"] == "earth-moon" and d["mu"] == pytest.approx(0.0121505843, rel=1e-8)
    assert [p["name"] for p in d["points"]] == ["L1", "L2", "L3", "L4", "L5"]
    for p in d["points"]:
        for k in ("x", "y", "z", "jacobi", "distance_km", "modes", "periods_days", "stability"):
            assert k in p
    l2 = d["points"][1]
    assert 60_000 < l2["distance_km"]["secondary"] < 65_000
    assert l2["modes"]["saddle_exponent"] > 0
    assert d["routh_critical_mu"] == pytest.approx(0.0385208965, abs=1e-10)
    assert d["triangular_linearly_stable"] is True
    assert d["caution"] == CAUTION


def test_points_csv_custom_mu(capsys):
    rc, out, _ = run(capsys, "points", "--mu", "0.2", "--format", "csv")
    assert rc == 0
    lines = [ln for ln in out.splitlines() if not ln.startswith("#")]
    rows = list(csv.DictReader(io.StringIO("\n".join(lines))))
    assert [r["point"] for r in rows] == ["L1", "L2", "L3", "L4", "L5"]
    assert rows[3]["stability"].startswith("unstable")  # mu = 0.2 > mu_R
    assert rows[0]["from_primary_km"] == ""              # no dimensional units
    assert "# CAUTION" in out


def test_zvc_above_l1_with_plot(capsys, tmp_path):
    png = tmp_path / "hill.png"
    rc, out, err = run(capsys, "zvc", "--system", "earth-moon", "--above", "L1", "--dv", "20m/s",
                       "--plot", str(png), "--view", "secondary", "--km", "--resolution", "201",
                       "--format", "json")
    assert rc == 0
    d = json.loads(out)
    assert d["necks_open"] == {"L1": True, "L2": False, "L3": False}
    assert d["level"]["dv_mps"] == pytest.approx(20.0)
    l1 = d["points"][0]
    assert l1["speed_at_point_mps"] == pytest.approx(20.0, rel=1e-9)
    assert d["region"]["curve_residual"] < 1e-10
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert list(tmp_path.iterdir()) == [png]  # no temporary file left behind


def test_zvc_table_and_svg(capsys, tmp_path):
    svg = tmp_path / "hill.svg"
    rc, out, _ = run(capsys, "zvc", "--system", "earth-moon", "--jacobi", "3.1", "--plot", str(svg),
                     "--plane", "xz", "--resolution", "101")
    assert rc == 0
    assert "Moon realm opens to the exterior" in out and "CAUTION" in out
    text = svg.read_text()
    assert text.lstrip().startswith("<?xml") and "Preliminary CR3BP design" in text


def test_zvc_extent_with_units(capsys, tmp_path):
    png = tmp_path / "z.png"
    rc, out, _ = run(capsys, "zvc", "--system", "earth-moon", "--jacobi", "3.17", "--plot", str(png),
                     "--extent", "300000km,460000km,-80000km,80000km", "--resolution", "101",
                     "--format", "json")
    assert rc == 0
    e = json.loads(out)["region"]["extent_lu"]
    assert e[0] == pytest.approx(300000 / 384400) and e[3] == pytest.approx(80000 / 384400)


def test_plot_pieces():
    from cr3bp import system
    from cr3bp.energy import hill_region
    from cr3bp.plotting.energy import plot_hill_region
    ax = plot_hill_region(hill_region(system("earth-moon"), 3.17, resolution=101), km=True)
    labels = ax.get_legend_handles_labels()[1] + [t.get_text() for t in ax.get_legend().get_texts()]
    assert any("forbidden" in t for t in labels) and any("Lagrange" in t for t in labels)
    assert "necks open: L1, L2" in ax.get_title()
    assert {t.get_text() for t in ax.texts} >= {"L1", "L2", "L3", "L4", "L5"}
    import matplotlib.pyplot as plt
    plt.close(ax.figure)


def test_zvc_curves_csv_points_lie_on_the_curve(capsys, tmp_path):
    import numpy as np

    from cr3bp import dynamics, system
    out_csv = tmp_path / "zvc.csv"
    rc, out, _ = run(capsys, "zvc", "--system", "earth-moon", "--jacobi", "3.18", "--curves", str(out_csv),
                     "--view", "secondary", "--resolution", "151", "--format", "json")
    assert rc == 0 and json.loads(out)["curves_file"] == str(out_csv)
    text = out_csv.read_text()
    assert "# CAUTION" in text
    rows = list(csv.DictReader(io.StringIO("\n".join(ln for ln in text.splitlines() if not ln.startswith("#")))))
    assert len(rows) > 100
    em = system("earth-moon")
    states = np.zeros((len(rows), 6))
    states[:, 0] = [float(r["x_lu"]) for r in rows]
    states[:, 1] = [float(r["y_lu"]) for r in rows]
    assert np.max(np.abs(dynamics.jacobi(em.mu, states) - 3.18)) < 1e-10
    assert float(rows[0]["x_km"]) == pytest.approx(float(rows[0]["x_lu"]) * em.length_km)
