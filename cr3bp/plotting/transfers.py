"""Figure of an optimised orbit-to-orbit transfer (:mod:`cr3bp.transfers.optimise`): the start
the optimiser was given (dashed) and the transfer it returned (solid), with both orbits, in the
rotating frame, two views (x-y and x-z), the impulses marked and named."""

from __future__ import annotations

import numpy as np

from .base import axis_labels, draw_lagrange_points, draw_primaries, legend_beside, new_figure, title

#: Margin around the orbits and transfers, a fraction of their largest extent.
MARGIN = 0.08
MARKERS = {"departure": ("o", "tab:green"), "mid-course": ("D", "tab:orange"), "insertion": ("s", "tab:red")}


def _start_states(tr, n=500):
    from ..integrate import propagate   # lazy: keeps the plotting import light
    out = []
    for s0, dur in tr.start.arcs:
        out.append(propagate(tr.system, s0, dur, t_eval=np.linspace(0.0, dur, n)).states)
        out.append(np.full((1, 6), np.nan))          # break the line at an impulse
    return np.concatenate(out)


def _box(states, i, j, margin=MARGIN):
    """(umin, umax, vmin, vmax) around ``states`` in axes ``i``, ``j``, widened by ``margin`` of
    the larger extent (equal spans: equal aspect)."""
    u, v = states[:, i], states[:, j]
    span = max(float(np.ptp(u)), float(np.ptp(v)), 1e-6) * (1.0 + 2.0 * margin)
    cu, cv = 0.5 * (u.min() + u.max()), 0.5 * (v.min() + v.max())
    return cu - span / 2, cu + span / 2, cv - span / 2, cv + span / 2


#: Stroboscopic times of a torus trajectory drawn at a torus end.
TORUS_SPANS = 4


def plot_orbit_transfer(tr, n_per_coast=600):
    """Two panels (x-y, x-z) of the transfer ``tr`` and its start; returns the figure. Between
    two tori each is drawn as its trajectory through the burn's point over ``TORUS_SPANS``
    stroboscopic times.

    Parameters
    ----------
    tr : OrbitTransfer
        From :func:`cr3bp.transfers.optimise.optimise_transfer`.
    n_per_coast : int
        Samples per coast arc.

    Returns
    -------
    matplotlib Figure

    Raises
    ------
    None

    Examples
    --------
    An optimised transfer takes tens of seconds, so the example is not run:

    >>> from cr3bp import orbit
    >>> from cr3bp.transfers.optimise import optimise_transfer
    >>> from cr3bp.plotting.transfers import plot_orbit_transfer
    >>> a = orbit("earth-moon", "lyapunov L1 jacobi=3.15")    # doctest: +SKIP
    >>> b = orbit("earth-moon", "lyapunov L2 jacobi=3.15")    # doctest: +SKIP
    >>> fig = plot_orbit_transfer(optimise_transfer(a, b))   # doctest: +SKIP
    >>> [ax.get_title() for ax in fig.axes[:2]]              # doctest: +SKIP
    ['x-y view', 'x-z view']

    References
    ----------
    .. [1] matplotlib documentation, :meth:`matplotlib.axes.Axes.set_aspect`.
    """
    from ..integrate import propagate   # lazy: keeps the plotting import light
    system = tr.system
    _, states = tr.trajectory(n_per_coast)
    start = _start_states(tr)
    orbits = []
    torus = hasattr(tr.orbit_from, "stroboscopic_time")
    for o, ph in ((tr.orbit_from, tr.phase_from), (tr.orbit_to, tr.phase_to)):
        if torus:       # a torus: its trajectory through the burn's point over TORUS_SPANS stroboscopic times
            from ..transfers.optimise import _points   # lazy: keeps the plotting import light
            x0 = _points(o).point(ph)[0]
            T = TORUS_SPANS * float(o.stroboscopic_time)
            orbits.append(propagate(system, x0, T, t_eval=np.linspace(0.0, T, 600 * TORUS_SPANS)).states)
        else:
            T = float(o.period)
            orbits.append(propagate(system, o.state, T, t_eval=np.linspace(0.0, T, 600)).states)
    what = "torus (its trajectory through the burn)" if torus else "orbit"
    fig, axes = new_figure(2, 1, size=(13.0, 6.0))
    axes = axes.ravel()
    for ax, view in zip(axes, ("xy", "xz")):
        i, j = {"xy": (0, 1), "xz": (0, 2)}[view]
        ax.plot(orbits[0][:, i], orbits[0][:, j], color="0.2", lw=1.3 - 0.6 * torus, label=f"departure {what}")
        ax.plot(orbits[1][:, i], orbits[1][:, j], color="0.6", lw=1.3 - 0.6 * torus, label=f"arrival {what}")
        ax.plot(start[:, i], start[:, j], color="tab:purple", lw=1.0, ls="--",
                label=f"start ({tr.start.solution}) {tr.start.dv_mps:.1f} m/s (CR3BP)")
        ax.plot(states[:, i], states[:, j], color="tab:blue", lw=1.4,
                label=f"{tr.solution} {tr.dv_mps:.1f} m/s (CR3BP)")
        for m in tr.maneuvers:
            mk, col = MARKERS.get(m["name"], ("x", "k"))
            dv = system.mps(np.linalg.norm(m["dv_vector"]))
            ax.plot(m["position"][i], m["position"][j], mk, color=col, ms=6, zorder=8,
                    label=f"{m['name']} {dv:.1f} m/s at {system.days(m['t']):.2f} d (CR3BP)")
        box = _box(np.vstack([orbits[0], orbits[1], states, start[np.isfinite(start[:, 0])]]), i, j)
        draw_primaries(ax, system, view=view, box=box, min_radius=0.0)
        if view == "xy":
            draw_lagrange_points(ax, system, view=view)
        ax.set_xlim(box[0], box[1])
        ax.set_ylim(box[2], box[3])
        ax.set_aspect("equal", adjustable="box")
        axis_labels(ax, system, view=view)
        title(ax, f"{view[0]}-{view[1]} view")
    legend_beside(axes[-1])
    return fig
