"""Trajectories in the rotating frame: three orthogonal views with the primaries to scale."""

from __future__ import annotations

import numpy as np

from .base import VIEWS, axis_labels, draw_lagrange_points, draw_primaries, legend_beside, new_figure
from .base import title as set_title

TRAJECTORY_COLOUR = "tab:orange"


def plot_views(states, system, title="", label="trajectory", size=(13.0, 5.2)):
    """A figure with the x-y, x-z and y-z projections of ``states`` (n, 6) in LU.

    Each view shows the primaries to scale (:func:`~cr3bp.plotting.base.draw_primaries`),
    the start (circle) and end (cross) of the trajectory and a legend; axes are in LU of the
    barycentric rotating frame. The views are zoomed on the trajectory and the primary
    nearest to it. In the y-z view (seen along x) only that nearest primary is drawn,
    since both sit at y = z = 0. Returns the Figure (save it with
    :func:`cr3bp.plotting.save`).

    Parameters
    ----------
    states : (n, 6) array
        Rotating-frame states, LU and LU/TU.
    system : System
    title : str
        Figure title.
    label : str
        Legend entry of the trajectory.
    size : (float, float)
        Figure size, inches.

    Returns
    -------
    matplotlib Figure

    Raises
    ------
    None

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.systems import system
    >>> from cr3bp.plotting.trajectories import plot_views
    >>> states = np.zeros((50, 6)); states[:, 0] = np.linspace(0.8, 0.9, 50); states[:, 2] = 0.01
    >>> fig = plot_views(states, system("earth-moon"), label="demo arc")
    >>> [ax.get_title() for ax in fig.axes[:3]]
    ['x-y view', 'x-z view', 'y-z view (seen along x)']

    References
    ----------
    .. [1] Common practice: three orthogonal projections of a trajectory in the rotating frame.
    .. [2] matplotlib documentation, :meth:`matplotlib.axes.Axes.set_aspect`.
    """
    s = np.asarray(states, dtype=float)
    fig, axes = new_figure(ncols=3, size=size)
    axes = np.ravel(axes)
    xs = system.positions
    near = int(np.argmin([np.min(np.abs(s[:, 0] - x)) for x in xs]))
    for ax, view in zip(axes, ("xy", "xz", "yz")):
        i, j = VIEWS[view]
        draw_primaries(ax, system, view=view, front=near)
        pi = np.append(s[:, i], xs[near] if i == 0 else 0.0)
        pj = np.append(s[:, j], 0.0)
        span = max(np.ptp(pi), np.ptp(pj), 1e-3)
        ci, cj = 0.5 * (pi.max() + pi.min()), 0.5 * (pj.max() + pj.min())
        ax.set_xlim(ci - 0.6 * span, ci + 0.6 * span)
        ax.set_ylim(cj - 0.6 * span, cj + 0.6 * span)
        ax.plot(s[:, i], s[:, j], color=TRAJECTORY_COLOUR, lw=1.0, label=label)
        ax.plot(s[0, i], s[0, j], "o", color="tab:green", ms=5, label="start", zorder=7)
        ax.plot(s[-1, i], s[-1, j], "x", color="tab:red", ms=7, mew=2, label="end", zorder=7)
        x0, x1 = ax.get_xlim()
        y0, y1 = ax.get_ylim()
        draw_lagrange_points(ax, system, view, box=(x0, x1, y0, y1))
        axis_labels(ax, system, view=view)
        ax.set_aspect("equal", adjustable="box")
        ax.grid(True, lw=0.3, alpha=0.5)
        set_title(ax, f"{view[0]}-{view[1]} view" + (" (seen along x)" if view == "yz" else ""))
    seen = {}
    for ax in axes:
        for h, lab in zip(*ax.get_legend_handles_labels()):
            seen.setdefault(lab, h)
    legend_beside(axes[-1], list(seen.values()))
    if title:
        fig.suptitle(title, fontsize=10)
    fig.subplots_adjust(left=0.06, right=0.84, top=0.86, wspace=0.3)
    return fig
