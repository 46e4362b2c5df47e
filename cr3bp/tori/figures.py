"""Figure of a torus family: the members' invariance circles in the x-y and x-z views, and the
rotation and stroboscopic time against the amplitude."""

from __future__ import annotations

import numpy as np
from .circle import evaluate, resample


def plot_family(fam, title=None):
    from ..plotting.base import VIEWS, new_figure  # lazy: heavy library (matplotlib, via cr3bp.plotting.base)
    members = fam.members
    system = members[0].system
    dim = system.dimensional
    scale, unit = (system.length_km, "km") if dim else (1.0, "LU")
    fig, axes = new_figure(3, 1, size=(17.0, 5.4))
    cmap = __import__("matplotlib").colormaps["viridis"]
    for k, t in enumerate(members):
        dense = evaluate(t.circle, np.linspace(0, 2 * np.pi, 300))
        colour = cmap(k / max(1, len(members) - 1))
        for ax, view in zip(axes[0][:2], ("xy", "xz")):
            i, j = VIEWS[view]
            ax.plot(dense[:, i] * scale, dense[:, j] * scale, color=colour, lw=0.9)
    for ax, view in zip(axes[0][:2], ("xy", "xz")):
        ax.set_xlabel(f"{view[0]} ({unit}, rotating frame)")
        ax.set_ylabel(f"{view[1]} ({unit})")
        ax.tick_params(axis="x", labelrotation=20)
        ax.grid(alpha=0.3)
        ax.set_title(f"invariance circles, {view[0]}-{view[1]} view (colour: member order)",
                     fontsize=9)
    amp = np.array([t.amplitude_lu * scale for t in members])
    rot = np.array([t.rotation_deg for t in members])
    ax = axes[0][2]
    ax.plot(amp, rot, "o-", ms=3, color="tab:blue")
    ax.set_xlabel(f"amplitude ({unit}, RMS size of the invariance circle)")
    ax.set_ylabel("rotation (deg per stroboscopic time)", color="tab:blue")
    ax.grid(alpha=0.3)
    ax2 = ax.twinx()
    per = [t.stroboscopic_period_days if dim else t.stroboscopic_time for t in members]
    ax2.plot(amp, per, "s--", ms=3, color="tab:red")
    ax2.set_ylabel("stroboscopic time (" + ("d" if dim else "TU") + ")", color="tab:red")
    ax.set_title("rotation and stroboscopic time along the family", fontsize=9)
    t0 = members[0]
    fig.suptitle(title or (f"{system.name} {t0.family} {t0.point} torus family, "
                           f"{fam.hold} held, {len(members)} members"), fontsize=10)
    return fig


def interactive_figure(torus, name=None, n_circle=48, n_time=160, fig=None, colour="#1b9e77"):
    """A quasi-periodic torus (:class:`cr3bp.tori.Torus`): its surface, swept by the
    trajectories of ``n_circle`` points of its invariance circle over one stroboscopic period
    (``n_time`` steps; the surface closes on itself around the circle), and the invariance
    circle as a curve. ``fig``: add to an existing figure (plotly, offline).

    It lives with the tori, not in :mod:`cr3bp.plotting.interactive` (whose helpers it uses),
    so that the plotting package does not import the tori package back."""
    from ..integrate import propagate_batch          # lazy: heavy library (numba kernels, only when a torus is drawn)
    from ..plotting.interactive import _scale, add_curve, framed, new_figure, require_plotly  # lazy: heavy library (matplotlib, plotly)
    go = require_plotly()
    system = torus.system
    label = name or " ".join(w for w in (torus.family, torus.point, torus.branch) if w) or "torus"
    fig = fig or new_figure(system, f"{system.name}: {label} torus, C = {torus.jacobi:.6f}, stroboscopic "
                                    f"period {torus.stroboscopic_time:.6f} TU (CR3BP)")
    f, unit = _scale(system)
    n = n_circle + (1 - n_circle % 2)                       # odd, as the circle's nodes are
    rows = [resample(torus.circle, n)]
    for _ in range(n_time):               # one batch propagation of the whole circle per step
        rows.append(propagate_batch(system, rows[-1], torus.stroboscopic_time / n_time).states)
    grid = np.array(rows)[:, :, :3] * f
    grid = np.concatenate([grid, grid[:, :1]], axis=1)      # closed around the circle
    fig.add_trace(go.Surface(x=grid[:, :, 0], y=grid[:, :, 1], z=grid[:, :, 2], showscale=False, opacity=0.55,
                             colorscale=[[0, colour], [1, colour]], name=f"{label} torus surface",
                             showlegend=True, hoverinfo="name"))
    ring = evaluate(torus.circle, np.linspace(0.0, 2 * np.pi, 200))
    add_curve(fig, system, ring, f"{label}: invariance circle", colour="#202020", width=5)
    return framed(fig)
