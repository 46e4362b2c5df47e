"""What a reviewer sees in the figures: axes in km, legends and colour bars beside the data,
one Lagrange-point marker everywhere, the smaller primary in the y-z view, no empty x-z panel
for a planar family, signed stability indices numbered as the table, section maps in (z, vz),
no empty periapsis-map file, the caution once per figure and once per report."""

import json
import math

import numpy as np
import pytest

from cr3bp import system
from cr3bp.cautions import CAUTION, CAUTION_SHORT
from cr3bp.plotting import caption
from cr3bp.plotting.base import LAGRANGE_GID, LAGRANGE_STYLE
from librate_cli.main import main

from _independent_cr3bp import rhs
from _orbit_fixtures import halo_az, lyapunov

EM = system("earth-moon")
SE = system("sun-earth")


def _run(argv):
    try:
        return main(argv)
    except SystemExit as e:
        return e.code


def _data_axes(fig):
    """Axes that hold data: not colour bars, not secondary axes."""
    from matplotlib.axes import Axes
    out = []
    for a in fig.axes:
        if a.get_label() == "<colorbar>" or getattr(a, "_colorbar", None) is not None:
            continue
        if type(a).__name__ == "SecondaryAxis" or not isinstance(a, Axes):
            continue
        if a.get_gid() == "outside-data" or hasattr(a, "_colorbar_info"):
            continue
        out.append(a)
    return out


def _colorbar_axes(fig):
    return [a for a in fig.axes if a.get_label() == "<colorbar>" or getattr(a, "_colorbar", None) is not None
            or a.get_gid() == "outside-data"]


def _overlap(b1, b2, tol=1.0):
    return (min(b1.x1, b2.x1) - max(b1.x0, b2.x0) > tol) and (min(b1.y1, b2.y1) - max(b1.y0, b2.y0) > tol)


def _legends_clear_of_data(fig):
    fig.canvas.draw()
    legends = [a.get_legend() for a in fig.axes if a.get_legend() is not None] + list(fig.legends)
    assert legends, "no legend"
    W, H = fig.bbox.width, fig.bbox.height
    for leg in legends:
        lb = leg.get_window_extent()
        assert lb.x0 >= -1 and lb.x1 <= W + 1 and lb.y0 >= -1 and lb.y1 <= H + 1, "legend outside the figure"
        for a in _data_axes(fig):
            assert not _overlap(lb, a.get_window_extent()), f"legend over the data of {a.get_title()!r}"


@pytest.fixture(scope="module")
def halo():
    return halo_az(EM, "L1", 10000.0 / EM.length_km)


@pytest.fixture(scope="module")
def halo_tube(halo):
    from cr3bp.tubes.manifolds import grow_tube
    return grow_tube(halo, "unstable", "interior", 16, "section:x=1-mu")


# ---- axes in km --------------------------------------------------------------------------------

def test_orbit_axes_read_in_km_with_lu_on_top(halo):
    import matplotlib.pyplot as plt
    from cr3bp.plotting.orbits import plot_orbit
    fig = plot_orbit(halo)
    fig.canvas.draw()
    ax = fig.axes[0]
    assert "10³ km" in ax.get_xlabel() and "10³ km" in ax.get_ylabel()
    # a tick's label is its LU position times the length unit, in thousands of km
    for t in ax.get_xticklabels():
        if t.get_text():
            u = t.get_position()[0]
            assert float(t.get_text().replace("−", "-")) == pytest.approx(u * EM.length_km / 1000.0, abs=1e-6)
    assert any("[LU]" in a.get_xlabel() for a in ax.child_axes)
    plt.close(fig)


# ---- colour bar and legends beside the data ----------------------------------------------------

def test_family_colour_bar_does_not_cover_a_panel(halo):
    import matplotlib.pyplot as plt
    from cr3bp.plotting.orbits import plot_family, trajectory
    from cr3bp.orbits import continuation, families
    fam = families.grow_family(EM, "halo", "L1", "north", stops=continuation.Stops(max_members=6))
    trajs = [trajectory(m, 200) for m in fam.members]
    fig = plot_family(EM, trajs, [m.jacobi for m in fam.members], title="halo")
    caption(fig, "family")      # the caption re-lays the figure out, as saving does
    fig.canvas.draw()
    cbs = _colorbar_axes(fig)
    data = _data_axes(fig)
    assert len(cbs) == 1 and len(data) == 2
    for a in data:
        assert not _overlap(cbs[0].get_window_extent(), a.get_window_extent())
    plt.close(fig)


def test_planar_family_has_no_xz_panel():
    import matplotlib.pyplot as plt
    from cr3bp.plotting.orbits import plot_family, trajectory
    orbits = [lyapunov(EM, "L1", c) for c in (3.17, 3.15)]
    fig = plot_family(EM, [trajectory(o, 200) for o in orbits], [o.jacobi for o in orbits])
    data = _data_axes(fig)
    assert len(data) == 1 and data[0].get_xlabel().startswith("x") and data[0].get_ylabel().startswith("y")
    plt.close(fig)


@pytest.mark.parametrize("which", ["orbit", "tubes", "section", "stability", "hill", "views"])
def test_legends_stand_beside_the_data(which, halo, halo_tube):
    import matplotlib.pyplot as plt
    if which == "orbit":
        from cr3bp.plotting.orbits import plot_orbit
        fig = plot_orbit(halo)
    elif which == "tubes":
        from cr3bp.plotting.manifolds import plot_tubes
        fig = plot_tubes([halo_tube], views=("xy", "xz", "yz"), max_trajectories=4)
    elif which == "section":
        from cr3bp.plotting.manifolds import plot_section_map
        fig = plot_section_map([halo_tube.section_cut()], (("y", "vy"), ("z", "vz"))).figure
    elif which == "stability":
        from cr3bp.plotting.orbits import plot_stability
        fig = plot_stability([3.1, 3.0], [12.0, 13.0], [[5.0, -0.5], [8.0, 0.5]])
    elif which == "hill":
        from cr3bp.energy import hill_region
        from cr3bp.plotting.energy import plot_hill_region
        fig = plot_hill_region(hill_region(EM, 3.17, resolution=101, view="secondary")).figure
    else:
        from cr3bp.plotting.orbits import trajectory
        from cr3bp.plotting.trajectories import plot_views
        fig = plot_views(trajectory(halo, 200), EM)
    caption(fig, which)
    _legends_clear_of_data(fig)
    plt.close(fig)


# ---- one Lagrange-point marker, the smaller primary seen along x ---------------------------------

def test_one_lagrange_marker_in_every_figure(halo, halo_tube):
    import matplotlib.pyplot as plt
    from cr3bp.energy import hill_region
    from cr3bp.plotting.energy import plot_hill_region
    from cr3bp.plotting.manifolds import plot_tubes
    from cr3bp.plotting.orbits import plot_family, plot_orbit, trajectory
    from cr3bp.plotting.trajectories import plot_views
    figs = {"orbit": plot_orbit(halo), "hill": plot_hill_region(hill_region(EM, 3.17, resolution=101)).figure,
            "tubes": plot_tubes([halo_tube], views=("xy", "xz"), max_trajectories=4),
            "family": plot_family(EM, [trajectory(halo, 100)] * 2, [halo.jacobi, halo.jacobi + 1e-3]),
            "views": plot_views(trajectory(halo, 200), EM)}
    for name, fig in figs.items():
        marks = [ln for a in fig.axes for ln in a.get_lines() if ln.get_gid() == LAGRANGE_GID]
        assert marks, f"{name}: no Lagrange points marked"
        for ln in marks:
            got = (ln.get_marker(), ln.get_color(), ln.get_markersize(), ln.get_markeredgewidth())
            assert got == (LAGRANGE_STYLE["marker"], LAGRANGE_STYLE["color"], LAGRANGE_STYLE["markersize"],
                           LAGRANGE_STYLE["mew"]), name
        plt.close(fig)


def test_yz_view_draws_the_smaller_primary(halo):
    import matplotlib.pyplot as plt
    from cr3bp.plotting.orbits import plot_orbit
    fig = plot_orbit(halo)
    yz = [a for a in _data_axes(fig) if a.get_xlabel().startswith("y")][0]
    moons = [p for p in yz.patches if p.get_gid() == "primary-2"]
    assert len(moons) == 1 and tuple(moons[0].center) == (0.0, 0.0)
    assert moons[0].radius == pytest.approx(EM.radii[1])      # to scale: 1737 km in a ~40 000 km frame
    plt.close(fig)


# ---- Hill regions of sun-earth zoomed on L1/L2 ----------------------------------------------------

def test_sun_earth_hill_region_zooms_on_l1_l2(tmp_path):
    csv = tmp_path / "c.csv"
    assert _run(["zvc", "--system", "sun-earth", "--above", "L1", "--dv", "10m/s", "--curves", str(csv),
                 "--resolution", "101", "-q", "--format", "json", "--out", str(tmp_path / "z.json")]) == 0
    rows = [ln.split(",") for ln in csv.read_text().splitlines() if ln and ln[0].isdigit() or ln[:1] == "-"]
    x = np.array([float(r[1]) for r in rows if len(r) > 2])
    assert x.size and x.min() > 0.97 and x.max() < 1.03       # L1, L2 at 1 -+ 0.01 LU


# ---- stability figure: signed indices, numbered as the table ------------------------------------

def test_stability_figure_is_signed_and_marks_the_request():
    import matplotlib.pyplot as plt
    from cr3bp.plotting.orbits import plot_stability
    nu = [[5.0, -0.9], [3.0, -1.4], [1.5, 0.2]]
    fig = plot_stability([3.1, 3.05, 3.0], [12.0, 13.0, 14.0], nu, perilune=[3000.0, 4000.0, 5000.0],
                         marks=[("period", 14.2, "3:4 resonance"), ("perilune", 3249.0, "target")])
    ax_p, ax_t = _data_axes(fig)
    assert "perilune" in ax_p.get_xlabel() and "period" in ax_t.get_xlabel()
    lines = {ln.get_label(): ln for ln in ax_t.get_lines()}
    np.testing.assert_array_equal(lines["nu2"].get_ydata(), [-0.9, -1.4, 0.2])
    assert ax_t.get_yscale() == "symlog"
    assert any(t.get_text() == "3:4 resonance" for t in ax_t.texts)
    assert any(t.get_text() == "target" for t in ax_p.texts)
    leg = [t.get_text() for t in fig.axes[1].get_legend().get_texts()]
    assert leg[:2] == ["nu1 (larger |nu|)", "nu2"]
    plt.close(fig)


def test_resonance_mark_of_a_p_q_family_is_q_primary_revolutions():
    # Europa's orbital period 3.551181 d (from memory; Jupiter satellite tables): a 3:4 orbit
    # closes after 4 of them, 14.2047 d in the rotating frame. The system's time unit comes
    # from its tabulated GM and distance (data/systems.toml), 2.4e-4 longer: tolerance 5e-4.
    from librate_cli.commands.family import resonance_marks
    from cr3bp.orbits.request import spec_from_options
    je = system("jupiter-europa")
    marks = resonance_marks(je, spec_from_options("resonant", None, None, "3:4"), None)
    assert marks[0][0] == "period" and marks[0][1] == pytest.approx(4 * 3.551181, rel=5e-4)


def test_bifurcation_notes_number_the_index_as_the_table():
    """The note names the index (nu1 / nu2) that sits at +1 or -1 in the member's own indices,
    the numbering of the table's nu1, nu2 columns and of the plot's legend."""
    from cr3bp.orbits import continuation, families
    # the Earth-Moon L1 northern halos: after member 33 the index the continuation tracks as its
    # second crosses -1, while in the member's own numbering (the table's) it is nu1
    fam = families.grow_family(EM, "halo", "L1", "north", stops=continuation.Stops(max_members=42))
    assert any(b.kind == "-1" and b.which == 1 and b.to_dict()["stability_index"] == "nu1"
               for b in fam.bifurcations)
    for b in fam.bifurcations:
        if b.kind == "complex":
            continue
        level = 1.0 if b.kind == "+1" else -1.0
        nus = [complex(v).real for v in b.orbit.stability_indices]
        k = int(np.argmin([abs(v - level) for v in nus]))
        assert abs(nus[k] - level) < 1e-3
        assert f"nu{k + 1} " in b.note and b.to_dict()["stability_index"] == f"nu{k + 1}"


# ---- section maps in (z, vz) -----------------------------------------------------------------------

def test_z_vz_map_is_the_true_crossing_state(halo_tube):
    """(z, vz) of each crossing equals an independent scipy solve_ivp propagation of the same
    start state to the plane x = 1 - mu (its terminal event)."""
    from scipy.integrate import solve_ivp
    cut = halo_tube.section_cut()
    zv = cut.coords(("z", "vz"))
    assert len(cut) >= 8 and np.max(np.abs(zv[:, 0])) > 1e-3      # a spatial tube
    mu = EM.mu
    for i in range(0, len(cut), 3):
        k = int(cut.trajectory[i])
        ev = lambda t, y, mu: y[0] - (1.0 - mu)  # noqa: E731
        ev.terminal = True
        sol = solve_ivp(rhs, (0.0, 2 * math.pi), halo_tube.start_states[k], method="DOP853", rtol=1e-12,
                        atol=1e-12, args=(mu,), events=ev)
        ye = sol.y_events[0][0]
        assert sol.t_events[0][0] == pytest.approx(cut.t[i], abs=1e-8)
        np.testing.assert_allclose(zv[i], ye[[2, 5]], atol=1e-8)


def test_section_cli_offers_z_vz(tmp_path, halo):
    s = ",".join(repr(float(v)) for v in halo.state)
    tube = f"state={s} period={halo.period!r}TU unstable"
    out, png = tmp_path / "m.json", tmp_path / "m.png"
    assert _run(["section", "--system", "earth-moon", "--tube", tube, "--section", "x=1-mu", "--points", "12",
                 "--coords", "y,vy|z,vz", "--plot", str(png), "--format", "json", "--out", str(out), "-q"]) == 0
    d = json.loads(out.read_text())
    assert d["maps"] == [["y", "vy"], ["z", "vz"]]
    cut = d["cuts"][0]
    states = np.array(cut["states"])
    np.testing.assert_allclose(np.array(cut["maps"][1]["map"]), states[:, [2, 5]])
    assert png.stat().st_size > 10000
    # the default for a spatial tube on x = c: both maps
    assert _run(["section", "--system", "earth-moon", "--tube", tube, "--section", "x=1-mu", "--points", "12",
                 "--format", "json", "--out", str(out), "-q"]) == 0
    assert json.loads(out.read_text())["maps"] == [["y", "vy"], ["z", "vz"]]
    assert _run(["section", "--system", "earth-moon", "--tube", tube, "--section", "x=1-mu",
                 "--coords", "y,vy|z,speed", "-q"]) == 2


# ---- no empty periapsis map ------------------------------------------------------------------------

def test_no_periapsis_map_file_when_nothing_is_found(tmp_path):
    l1 = lyapunov(EM, "L1", 3.15)
    s = ",".join(repr(float(v)) for v in l1.state)
    m = tmp_path / "map.png"
    rc = _run(["connect", "--system", "earth-moon", "--from", "parking moon 100km",
               "--to", f"state={s} period={l1.period!r}TU", "--points", "6", "--time", "0.05",
               "--map", str(m), "-q"])
    assert rc == 3 and not m.exists()


def test_periapsis_plot_refuses_an_empty_map():
    from cr3bp.tubes.parking import periapsis_map
    from cr3bp.errors import NoSolutionError
    from cr3bp.plotting.manifolds import plot_periapsis_map
    pm = periapsis_map(lyapunov(EM, "L1", 3.15), "moon", "unstable", "interior", 4, t_max=0.05)
    assert not np.isfinite(pm.altitude_km).any()
    with pytest.raises(NoSolutionError):
        plot_periapsis_map(pm)


# ---- the caution once per figure and once per report -------------------------------------------

def test_caution_once_per_figure_and_once_per_report(tmp_path, halo):
    import matplotlib.pyplot as plt
    from cr3bp.scenario import page as report
    from cr3bp.plotting import save
    from cr3bp.plotting.orbits import plot_orbit
    fig = plot_orbit(halo)
    caption(fig, "a halo")
    assert sum(t.get_text().count(CAUTION_SHORT) for t in fig.texts) == 1
    plt.close(fig)
    png = tmp_path / "o.png"
    save(plot_orbit(halo), png, "a halo")
    page = report.document("t", [("one", report.figure(png, "first")), ("two", report.figure(png, "second"))])
    assert page.count(CAUTION) == 1
