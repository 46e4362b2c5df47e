"""The interactive 3-D figures (plotly, inline) draw in headless Chromium: no console error, no
network request, each plotly figure with its WebGL canvas and its axes."""

import pytest

from _chromium import probe3d

from cr3bp.cautions import caution_short


@pytest.fixture(scope="module")
def halo():
    import cr3bp
    return cr3bp.orbit(cr3bp.system("earth-moon"), "halo L2 south resonance=9:2")


def page_with(tmp_path, fragments):
    from cr3bp.scenario import page
    path = tmp_path / "report.html"
    page.write(path, "3-D test report", [(f"Figure {k}", f) for k, f in enumerate(fragments)])
    return path


def test_two_figures_draw_offline_with_one_plotlyjs(tmp_path, halo):
    from cr3bp.plotting.interactive import ReportFigures
    views = ReportFigures()
    path = page_with(tmp_path, [views.html(halo.to_plotly(), "first"),
                                views.html(halo.to_plotly(name="again"), "second")])
    text = path.read_text()
    assert "<script src=" not in text
    assert text.count("plotly.js v") == 1 and 3e6 < len(text) < 8e6    # the library once (~4.7 MB)
    p = probe3d(path, tmp_path)
    assert p["errors"] == [] and p["blocked"] == [] and p["network"] == []
    assert p["plots"] == 2 and p["drawn"] == 2
    assert all(caution_short() in t for t in p["titles"])
    assert all("[km]" in a and "rotating frame, CR3BP" in a for a in p["axes"])


def test_probe_sees_a_figure_whose_library_comes_from_the_network(tmp_path, halo):
    # the check itself can fail: plotly.js from a CDN is blocked, counted, and nothing draws
    frag = halo.to_plotly().to_html(full_html=False, include_plotlyjs="cdn")
    p = probe3d(page_with(tmp_path, [frag]), tmp_path)
    assert p["blocked"] and p["drawn"] == 0 and p["errors"]



def test_family_and_tube_figures_in_km_with_the_primaries_and_caution():
    import cr3bp
    em = cr3bp.system("earth-moon")
    fam = cr3bp.family(em, "lyapunov", point="L1", members=12)
    fig = fam.to_plotly(max_curves=5)
    curves = [t for t in fig.data if t.type == "scatter3d" and t.mode == "lines"]
    assert len(curves) == 5
    assert {t.name for t in fig.data if t.type == "surface"} == set(em.names)      # to scale
    assert "[km]" in fig.layout.scene.xaxis.title.text and caution_short() in fig.layout.title.text
    # the curve is the orbit in km: its x span is the member's x span times the length unit
    from cr3bp.plotting.orbits import trajectory
    m = fam.members[0]
    s = trajectory(m, 300)
    assert max(curves[0].x) == pytest.approx(s[:, 0].max() * em.length_km, rel=1e-9)
    tube = cr3bp.manifold(fam.members[-1], "unstable", points=8, until="time:5")
    fig = tube.to_plotly()
    assert sum(t.type == "scatter3d" and t.mode == "lines" for t in fig.data) == 8


def test_a_route_asks_to_be_stitched_first(halo):
    from cr3bp.display import Shown
    from cr3bp.errors import InputError
    from cr3bp.transfers.search import Route
    r = Route(nodes=("a", "b"), edges=(("a", "b", 0),), dv_total_mps=1.0, tof_days=1.0)
    assert isinstance(r, Shown)
    with pytest.raises(InputError, match="stitch_route"):
        r.to_plotly()


def test_interactive_false_leaves_the_report_without_plotly(tmp_path):
    from librate_cli.main import main
    from test_mission import SCENARIO
    assert "hill_regions = true\n" in SCENARIO
    (tmp_path / "s.toml").write_text(SCENARIO.replace("hill_regions = true\n", "hill_regions = true\ninteractive = false\n"))
    assert main(["run", str(tmp_path / "s.toml"), "--out", str(tmp_path / "out"), "--catalog",
                 str(tmp_path / "c.sqlite"), "--quiet"]) == 0
    text = (tmp_path / "out" / "report.html").read_text()
    assert "plotly" not in text.lower() and "<img" in text and len(text) < 3e6
