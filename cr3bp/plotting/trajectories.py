"""Trajectories in the rotating frame: three orthogonal views with the primaries to scale."""

from __future__ import annotations

import numpy as np

from matplotlib.patches import Circle

from .base import PRIMARY_COLOURS, VIEWS, axis_labels, draw_primaries, new_figure

TRAJECTORY_COLOUR = "tab:orange"


def plot_views(states, system, title="", label="trajectory", size=(13.0, 5.2)):
    """A figure with the x-y, x-z and y-z projections of ``states`` (n, 6) in LU.

    Each view shows the primaries to scale (:func:`~cr3bp.plotting.base.draw_primaries`),
    the start (circle) and end (cross) of the trajectory and a legend; axes are in LU of the
    barycentric rotating frame. The views are zoomed on the trajectory and the primary
    nearest to it. In the y-z view (seen along x) only that nearest primary is drawn,
    since both sit at y = z = 0. Returns the Figure (save it with
    :func:`cr3bp.plotting.save`).
    """
    s = np.asarray(states, dtype=float)
    fig, axes = new_figure(ncols=3, size=size)
    axes = np.ravel(axes)
    xs = system.positions
    near = int(np.argmin([np.min(np.abs(s[:, 0] - x)) for x in xs]))
    for ax, view in zip(axes, ("xy", "xz", "yz")):
        i, j = VIEWS[view]
        if view != "yz":
            draw_primaries(ax, system, view=view)
        else:
            r = max(system.radii[near], 0.004)
            ax.add_patch(Circle((0.0, 0.0), r, color=PRIMARY_COLOURS[near], zorder=5,
                                label=f"{system.names[near]} (along x)"))
        pi = np.append(s[:, i], xs[near] if i == 0 else 0.0)
        pj = np.append(s[:, j], 0.0)
        span = max(np.ptp(pi), np.ptp(pj), 1e-3)
        ci, cj = 0.5 * (pi.max() + pi.min()), 0.5 * (pj.max() + pj.min())
        ax.set_xlim(ci - 0.6 * span, ci + 0.6 * span)
        ax.set_ylim(cj - 0.6 * span, cj + 0.6 * span)
        ax.plot(s[:, i], s[:, j], color=TRAJECTORY_COLOUR, lw=1.0, label=label)
        ax.plot(s[0, i], s[0, j], "o", color="tab:green", ms=5, label="start", zorder=7)
        ax.plot(s[-1, i], s[-1, j], "x", color="tab:red", ms=7, mew=2, label="end", zorder=7)
        axis_labels(ax, system, view=view)
        ax.set_aspect("equal", adjustable="box")
        ax.grid(True, lw=0.3, alpha=0.5)
        ax.set_title(f"{view[0]}-{view[1]} view", fontsize=9)
    axes[0].legend(loc="best", fontsize=7)
    if title:
        fig.suptitle(title, fontsize=10)
    fig.tight_layout(rect=(0.0, 0.1, 1.0, 0.95))
    return fig
