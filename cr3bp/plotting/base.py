"""Shared plotting pieces: a figure with a caution caption, primaries to scale, saving."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
from matplotlib.patches import Circle  # noqa: E402

from ..atomic import save_figure  # noqa: E402
from ..cautions import CAUTION_SHORT  # noqa: E402

PRIMARY_COLOURS = ("tab:blue", "0.45")
VIEWS = {"xy": (0, 1), "xz": (0, 2), "yz": (1, 2)}


def new_figure(ncols=1, nrows=1, size=(7.0, 6.0), **kw):
    """A figure and its axes, sized for a caption line at the bottom."""
    fig, axes = plt.subplots(nrows, ncols, figsize=size, squeeze=False, **kw)
    return fig, (axes[0, 0] if axes.size == 1 else axes)


def draw_primaries(ax, system, view="xy", labels=True, min_radius=0.004):
    """The two primaries as discs to scale (at least ``min_radius`` LU so they stay visible)."""
    i, j = VIEWS[view]
    r1, r2 = system.radii
    names = system.names
    for k, (x, r, name) in enumerate(zip(system.positions, (r1, r2), names)):
        centre = [0.0, 0.0, 0.0]
        centre[0] = x
        ax.add_patch(Circle((centre[i], centre[j]), max(r, min_radius), color=PRIMARY_COLOURS[k],
                            zorder=5, label=f"{name} (to scale)" if r > min_radius else f"{name}"))
        if labels:
            ax.annotate(name, (centre[i], centre[j]), textcoords="offset points", xytext=(4, 6),
                        fontsize=8, zorder=6)
    return ax


def axis_labels(ax, system, view="xy", unit="LU"):
    i, j = VIEWS[view]
    names = "xyz"
    ax.set_xlabel(f"{names[i]} [{unit}] (rotating frame, barycentric)")
    ax.set_ylabel(f"{names[j]} [{unit}]")
    return ax


def caption(fig, text=""):
    """Bottom caption: the given text, then the caution (always)."""
    body = (text + "\n" if text else "") + CAUTION_SHORT
    fig.text(0.5, 0.005, body, ha="center", va="bottom", fontsize=6.5, wrap=True, color="0.25")
    fig.subplots_adjust(bottom=0.16)
    return fig


def save(fig, path, text="", dpi=150):
    """Caption ``fig`` with ``text`` and the caution, save it atomically to ``path``, close it."""
    caption(fig, text)
    save_figure(fig, path, dpi=dpi)
    plt.close(fig)
    return path
