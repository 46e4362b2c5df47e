"""Figures of periodic orbits and families: three views with the primaries to scale and the
Lagrange points marked; a family coloured by Jacobi constant; stability indices."""

from __future__ import annotations

import numpy as np

from .base import VIEWS, axis_labels, draw_primaries, new_figure

_VIEW_ORDER = ("xy", "xz", "yz")


def _lagrange_points(system):
    from ..equilibria import lagrange_points
    return {p.name: np.asarray(p.position) for p in lagrange_points(system)}


def trajectory(orbit, n=1500):
    """States (n, 6) sampled evenly over one period of ``orbit``."""
    from ..integrate import propagate
    t = np.linspace(0.0, orbit.period, n)
    return propagate(orbit.system, orbit.state, orbit.period, t_eval=t).states


def _mark_points(ax, system, view, box):
    """Lagrange points inside the frame; points that project onto the same spot share a label."""
    i, j = VIEWS[view]
    spots = {}
    for name, p in _lagrange_points(system).items():
        if box[0] <= p[i] <= box[1] and box[2] <= p[j] <= box[3]:
            spots.setdefault((round(p[i], 12), round(p[j], 12)), []).append(name)
    for (u, v), names in spots.items():
        ax.plot(u, v, marker="+", color="tab:red", ms=7, zorder=6)
        ax.annotate(", ".join(names), (u, v), textcoords="offset points", xytext=(3, -10), fontsize=7,
                    color="tab:red")


def _frame(ax, system, view, arrays, pad=0.15, include=()):
    """Equal-aspect frame around ``arrays`` (and the points ``include``), primaries and Lagrange
    points drawn."""
    i, j = VIEWS[view]
    pts = np.vstack([a[:, :3] for a in arrays] + [np.atleast_2d(p) for p in include])
    lo_i, hi_i = pts[:, i].min(), pts[:, i].max()
    lo_j, hi_j = pts[:, j].min(), pts[:, j].max()
    span = max(hi_i - lo_i, hi_j - lo_j, 1e-3) * (1 + 2 * pad)
    ci, cj = 0.5 * (lo_i + hi_i), 0.5 * (lo_j + hi_j)
    box = (ci - span / 2, ci + span / 2, cj - span / 2, cj + span / 2)
    ax.set_xlim(box[0], box[1])
    ax.set_ylim(box[2], box[3])
    ax.set_aspect("equal")
    if view != "yz":   # in the y-z view both primaries project onto the origin, behind the orbit
        draw_primaries(ax, system, view, min_radius=0.0)
    _mark_points(ax, system, view, box)
    axis_labels(ax, system, view)
    ax.grid(alpha=0.3)
    return box


def plot_orbit(orbit, states=None, title=None):
    """Figure with the x-y, x-z and y-z views of one orbit (LU, rotating frame)."""
    states = trajectory(orbit) if states is None else states
    fig, axes = new_figure(3, 1, size=(15.0, 5.6))
    for ax, view in zip(axes[0], _VIEW_ORDER):
        i, j = VIEWS[view]
        ax.plot(states[:, i], states[:, j], color="tab:orange", lw=1.2, label="orbit")
        ax.plot(states[0, i], states[0, j], "o", color="k", ms=3, label="initial state")
        own = _lagrange_points(orbit.system).get(orbit.point)
        _frame(ax, orbit.system, view, [states], include=[own] if own is not None else [])
        ax.set_title(f"{view[0]}-{view[1]} view" + (" (primaries on the line y = z = 0, not drawn)"
                                                      if view == "yz" else ""), fontsize=9)
    axes[0][0].legend(loc="upper right", fontsize=7)
    fig.suptitle((title or _orbit_title(orbit)) + "; red +: Lagrange points", fontsize=10)
    return fig


def _orbit_title(o):
    name = " ".join(w for w in (o.family, o.point, o.branch) if w)
    per = f"{o.period_days:.4f} d" if o.system.dimensional else f"{o.period:.6f} TU"
    return f"{o.system.name} {name}: period {per}, Jacobi constant {o.jacobi:.6f}"


def plot_family(system, trajectories, jacobi, title="", max_curves=60):
    """Members coloured by Jacobi constant in the x-y and x-z views (LU)."""
    import matplotlib.pyplot as plt
    from matplotlib.colors import Normalize
    fig, axes = new_figure(2, 1, size=(12.0, 6.0))
    n = len(trajectories)
    pick = np.unique(np.linspace(0, n - 1, min(n, max_curves)).round().astype(int))
    norm = Normalize(min(jacobi), max(jacobi))
    cmap = plt.get_cmap("viridis")
    for ax, view in zip(axes[0], ("xy", "xz")):
        i, j = VIEWS[view]
        for k in pick:
            s = trajectories[k]
            ax.plot(s[:, i], s[:, j], color=cmap(norm(jacobi[k])), lw=0.7)
        _frame(ax, system, view, [trajectories[k] for k in pick])
        ax.set_title(f"{view[0]}-{view[1]} view", fontsize=9)
    sm = plt.cm.ScalarMappable(norm=norm, cmap=cmap)
    fig.colorbar(sm, ax=axes[0].tolist(), label="Jacobi constant (nondimensional)", shrink=0.8)
    fig.suptitle(title, fontsize=10)
    return fig


def plot_stability(jacobi, period, nu, period_unit="d", title="", bifurcations=()):
    """Stability indices against the Jacobi constant and against the period (log scale of |nu|)."""
    fig, axes = new_figure(2, 1, size=(12.0, 5.0))
    nu = np.asarray(nu, dtype=float)
    for ax, x, label in ((axes[0][0], jacobi, "Jacobi constant (nondimensional)"),
                         (axes[0][1], period, f"period [{period_unit}]")):
        ax.plot(x, np.abs(nu[:, 0]), ".-", ms=2, lw=0.8, label="|nu1| (larger)")
        ax.plot(x, np.abs(nu[:, 1]), ".-", ms=2, lw=0.8, label="|nu2|")
        ax.axhline(1.0, color="k", lw=0.8, ls="--", label="|nu| = 1 (stability boundary)")
        for b in bifurcations:
            xv = b["jacobi"] if x is jacobi else b.get("_period_plot")
            if xv is not None:
                ax.axvline(xv, color="tab:red", lw=0.6, alpha=0.6)
        ax.set_yscale("log")
        ax.set_xlabel(label)
        ax.set_ylabel("|stability index| (nondimensional)")
        ax.grid(alpha=0.3, which="both")
    axes[0][0].legend(fontsize=7)
    fig.suptitle(title + ("; red lines: bifurcations" if bifurcations else ""), fontsize=10)
    return fig
