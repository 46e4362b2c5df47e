"""Figures of tubes, section maps, connections and periapsis maps: drawn, labelled, saved."""

import numpy as np
import pytest

from cr3bp import system
from cr3bp.cautions import CAUTION_SHORT
from cr3bp.tubes.connections import connect
from cr3bp.tubes.parking import periapsis_map
from cr3bp.tubes.manifolds import grow_tube
from cr3bp.plotting import caption, save
from cr3bp.plotting.manifolds import (plot_connection, plot_periapsis_map, plot_section_map,
                                      plot_tubes, plot_tubes_3d)

from _orbit_fixtures import lyapunov

EM = system("earth-moon")


@pytest.fixture(scope="module")
def tubes():
    a, b = lyapunov(EM, "L1", 3.15), lyapunov(EM, "L2", 3.15)
    return (grow_tube(a, "unstable", "interior", 12, "section:x=1-mu"),
            grow_tube(b, "stable", "interior", 12, "section:x=1-mu"))


def _legend_texts(ax):
    return [t.get_text() for t in ax.get_legend().get_texts()]


def test_tube_projection_figure(tubes, tmp_path):
    fig = plot_tubes(tubes, views=("xy", "xz"), max_trajectories=6)
    ax = fig.axes[0]
    texts = _legend_texts(fig.axes[1])      # one legend, beside the last view
    assert any("unstable interior" in t for t in texts) and any("forbidden region" in t for t in texts)
    assert "[10³ km]" in ax.get_xlabel() and "[10³ km]" in ax.get_ylabel()
    caption(fig, "tubes")
    assert any(CAUTION_SHORT in t.get_text() for t in fig.texts)
    save(fig, tmp_path / "t.png", "")
    assert (tmp_path / "t.png").stat().st_size > 5000


def test_tube_3d(tubes, tmp_path):
    fig = plot_tubes_3d(tubes, max_trajectories=4)
    save(fig, tmp_path / "t3.png", "3-D")
    assert (tmp_path / "t3.png").exists()


def test_section_map(tubes, tmp_path):
    cuts = [t.section_cut() for t in tubes]
    ax = plot_section_map(cuts, ("y", "vy"))
    assert len(_legend_texts(ax)) == 2 and ax.get_xlabel() == "y [10³ km]" and ax.get_ylabel() == "vy [m/s]"
    save(ax.figure, tmp_path / "m.svg", "map")
    assert (tmp_path / "m.svg").read_text().count("<svg") == 1


def test_connection_over_tubes(tubes, tmp_path):
    legs, tu, ts = connect(tubes[0].orbit, tubes[1].orbit, "x=1-mu", 24, max_candidates=1)
    ax = plot_connection(legs, [tu, ts])
    assert any("heteroclinic 1" in t for t in _legend_texts(ax))
    save(ax.figure, tmp_path / "c.png", "connection")
    assert (tmp_path / "c.png").exists()


def test_periapsis_map_plot(tubes, tmp_path):
    pm = periapsis_map(tubes[0].orbit, "moon", "unstable", "interior", 8, t_max=3.0)
    assert np.isfinite(pm.altitude_km).any()
    ax = plot_periapsis_map(pm, target_km=100.0)
    assert "[km]" in ax.get_ylabel() and "[days]" in ax.get_xlabel()
    assert any("target altitude" in t for t in _legend_texts(ax))
    save(ax.figure, tmp_path / "p.png", "periapsis map")
    assert (tmp_path / "p.png").exists()
