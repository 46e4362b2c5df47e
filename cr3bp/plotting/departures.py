"""Figure of a departure from a parking orbit (:mod:`cr3bp.transfers.departure`): the transfer
and the target orbit in the rotating Earth–Moon frame, in two views (x-y and x-z), the burns
marked and named."""

from __future__ import annotations

import numpy as np

from .base import axis_labels, draw_lagrange_points, draw_primaries, legend_beside, new_figure, title

MARKERS = {"departure": ("o", "tab:green"), "flyby": ("D", "tab:orange"), "insertion": ("s", "tab:red")}


def plot_departure(dep, n_per_segment=800):
    """Two panels (x-y, x-z) of ``dep``; returns the figure."""
    system = dep.system
    _, states = dep.trajectory(n_per_segment)
    from ..integrate import propagate
    T = float(dep.orbit.period)
    orb = propagate(system, dep.orbit.state, T, t_eval=np.linspace(0.0, T, 600)).states
    fig, axes = new_figure(2, 1, size=(12.0, 5.6))
    for ax, view in zip(axes.ravel(), ("xy", "xz")):
        i, j = {"xy": (0, 1), "xz": (0, 2)}[view]
        ax.plot(orb[:, i], orb[:, j], color="0.35", lw=1.0, label="target orbit")
        ax.plot(states[:, i], states[:, j], color="tab:blue", lw=1.2, label=f"{dep.path} transfer")
        for m in dep.maneuvers:
            mk, col = MARKERS.get(m["name"], ("x", "k"))
            dv = system.mps(np.linalg.norm(m["dv_vector"]))
            ax.plot(m["position"][i], m["position"][j], mk, color=col, ms=6, zorder=8,
                    label=f"{m['name']} {dv:.0f} m/s (CR3BP)")
        draw_primaries(ax, system, view=view)
        if view == "xy":
            draw_lagrange_points(ax, system, view=view)
        ax.set_aspect("equal", adjustable="datalim")
        axis_labels(ax, system, view=view)
        title(ax, f"{view[0]}-{view[1]} view")
    legend_beside(axes.ravel()[1])
    return fig
