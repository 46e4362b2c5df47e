"""Figure of a torus family: the members' invariance circles in the x-y and x-z views, and the
rotation and stroboscopic time against the amplitude."""

from __future__ import annotations

import numpy as np
from .circle import evaluate


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
