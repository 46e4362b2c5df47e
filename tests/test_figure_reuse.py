"""A rerun reuses the files of figures whose content has not changed (the key is
cr3bp.plotting.fingerprint), and redraws every figure whose content did change: the key sees
each kind of change a figure can carry, is the same for the same figure built twice, and
gives up (draw, never reuse) on an artist it does not know."""

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402
from matplotlib.artist import Artist  # noqa: E402

from cr3bp.scenario import outputs  # noqa: E402
from cr3bp.plotting.fingerprint import fingerprint  # noqa: E402
from cr3bp.plotting.orbits import plot_family  # noqa: E402
from cr3bp.systems import system  # noqa: E402
from librate_cli.main import main  # noqa: E402


def build(y_last=1.0, colour="C0", label="range (km)", style="-", xmax=2.0, scale=384400.0,
          text="perilune", cmap="viridis"):
    fig, ax = plt.subplots()
    ax.plot([0.0, 1.0, 2.0], [0.0, 0.5, y_last], color=colour, ls=style, label="a")
    sc = ax.scatter([0.1, 0.2], [0.3, 0.4], c=[1.0, 2.0], cmap=cmap)
    fig.colorbar(sc, ax=ax, label="Jacobi constant")
    ax.set_xlim(0.0, xmax)
    ax.set_ylabel(label)
    ax.annotate(text, (1.0, 0.5))
    ax.legend()
    ax.secondary_xaxis("top", functions=(lambda x: x * scale, lambda x: x / scale))
    return fig


def key(**kw):
    fig = build(**kw)
    k = fingerprint(fig, "caption", ("png",), 130)
    plt.close(fig)
    return k


def test_the_same_figure_built_twice_has_the_same_key():
    assert key() is not None and key() == key()


@pytest.mark.parametrize("change", [
    {"y_last": 1.0 + 1e-12}, {"colour": "C1"}, {"label": "range (m)"}, {"style": "--"},
    {"xmax": 2.5}, {"scale": 149597870.7}, {"text": "perigee"}, {"cmap": "plasma"},
])
def test_every_kind_of_change_changes_the_key(change):
    assert key(**change) != key()


def test_the_caption_format_and_resolution_are_part_of_the_key():
    fig = build()
    base = fingerprint(fig, "caption", ("png",), 130)
    assert fingerprint(fig, "caption.", ("png",), 130) != base
    assert fingerprint(fig, "caption", ("png", "svg"), 130) != base
    assert fingerprint(fig, "caption", ("png",), 200) != base
    plt.close(fig)


def test_an_unknown_artist_makes_the_figure_unkeyed():
    class Sticker(Artist):
        def draw(self, renderer):
            pass
    fig = build()
    fig.axes[0].add_artist(Sticker())
    assert fingerprint(fig, "caption") is None
    plt.close(fig)


def test_the_key_does_not_change_the_figure():
    # found at implementation: a colour bar's outline sets its position lazily, so the first
    # key of a family figure differed from the second and a rerun redrew it
    rng = np.random.default_rng(1)
    trajs = [np.column_stack([rng.uniform(0.8, 0.9, 40), rng.uniform(-0.1, 0.1, 40), np.zeros((40, 4))])
             for _ in range(4)]
    fig = plot_family(system("earth-moon"), trajs, [3.10, 3.11, 3.12, 3.13], title="t")
    assert fingerprint(fig) is not None and fingerprint(fig) == fingerprint(fig)
    plt.close(fig)


SCENARIO = """
[mission]
name = "Figure reuse"
issued = "2026-12-01T00:00:00"

[system]
name = "earth-moon"
epoch = "2031-03-01T00:00:00Z"

[orbits.gate]
family = "lyapunov"
point = "L1"
jacobi = {jacobi}

[plots]
orbits = true
hill_regions = true
formats = ["png", "svg"]
"""


def _run(tmp_path, name, jacobi, catalog, monkeypatch):
    drawn = []
    real = outputs.save_figure
    monkeypatch.setattr(outputs, "save_figure", lambda fig, path, **kw: (drawn.append(path.name),
                                                                         real(fig, path, **kw)))
    s = tmp_path / f"{name}.toml"
    s.write_text(SCENARIO.format(jacobi=jacobi))
    out = tmp_path / name
    assert main(["run", str(s), "--out", str(out), "--catalog", catalog, "--quiet"]) == 0
    monkeypatch.undo()
    figures = {p.name: p.read_bytes() for p in sorted(out.iterdir()) if p.suffix in (".png", ".svg")}
    return drawn, figures


def test_a_rerun_reuses_unchanged_figures_and_redraws_changed_ones(tmp_path, monkeypatch):
    catalog = str(tmp_path / "catalog.sqlite")
    drawn1, first = _run(tmp_path, "first", 3.17, catalog, monkeypatch)
    assert sorted(drawn1) == sorted(first) and len(first) == 4        # 2 figures x 2 formats
    drawn2, second = _run(tmp_path, "second", 3.17, catalog, monkeypatch)
    assert drawn2 == [] and second == first                            # nothing drawn, same bytes
    drawn3, third = _run(tmp_path, "third", 3.16, catalog, monkeypatch)
    assert sorted(drawn3) == sorted(third)                              # another orbit: redrawn
    assert all(third[n] != first[n] for n in first if n.endswith(".png"))
