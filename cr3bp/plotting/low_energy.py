"""Figure of a low-energy transfer (:mod:`cr3bp.transfers.low_energy`): left, the transfer and
the target orbit in the rotating Earth-Moon frame (x-y view); right, the same transfer in the
Sun-Earth rotating frame (Earth at the origin, the Sun fixed on the -x axis), where the
apogee's quadrant shows why the Sun raised the perigee. Both in the bicircular model."""

from __future__ import annotations

import math

import numpy as np
from matplotlib.patches import Circle

from ..integrate import propagate
from .base import axis_labels, draw_lagrange_points, draw_primaries, legend_beside, new_figure, title

MARKERS = {"departure": ("o", "tab:green"), "insertion": ("s", "tab:red")}


def sun_earth_rotating(model, t, states):
    """Earth-centred positions in the Sun-Earth rotating frame, LU: rotated so that the Sun
    (at the angle ``theta(t)`` of the bicircular model from the Earth-Moon line) lies on -x.
    ``t`` in TU, ``states`` (N, >=3) in the Earth-Moon rotating frame.

    Parameters
    ----------
    model : BicircularSystem
        From :func:`cr3bp.bicircular.bicircular_system`.
    t : float or (N,) array
        Times, TU.
    states : (N, >=3) array
        Earth-Moon rotating states, LU.

    Returns
    -------
    (N, 3) array
        Earth-centred positions in the Sun-Earth rotating frame, LU (Sun on -x).

    Raises
    ------
    None

    Examples
    --------
    The Earth stays at the origin; at Sun phase 0 (new moon) the Moon lies towards the Sun, on -x:

    >>> from cr3bp.bicircular import bicircular_system
    >>> from cr3bp.plotting.low_energy import sun_earth_rotating
    >>> m = bicircular_system("earth-moon", sun_phase=0.0)
    >>> mu = m.system.mu
    >>> (sun_earth_rotating(m, 0.0, [[-mu, 0, 0], [1 - mu, 0, 0]]).round(9) + 0.0).tolist()
    [[0.0, 0.0, 0.0], [-1.0, 0.0, 0.0]]

    References
    ----------
    .. [1] C. Simo, G. Gomez, A. Jorba and J. Masdemont, "The bicircular model near the
       triangular libration points of the RTBP", 1995 (the Sun's angle in the Earth-Moon
       rotating frame; from memory; see :mod:`cr3bp.bicircular`).
    """
    s = np.atleast_2d(states)
    rel = s[:, :3] - np.array([-model.system.mu, 0.0, 0.0])
    a = math.pi - np.asarray(model.sun_angle(t), dtype=float)
    c, sn = np.cos(a), np.sin(a)
    return np.stack([c * rel[:, 0] - sn * rel[:, 1], sn * rel[:, 0] + c * rel[:, 1], rel[:, 2]], axis=1)


#: Stroboscopic periods of a target torus drawn from the insertion point.
TORUS_PERIODS = 4


def plot_low_energy(tr, n_per_segment=500):
    """Two panels of the transfer ``tr`` (a LowEnergyTransfer); returns the figure.

    Parameters
    ----------
    tr : LowEnergyTransfer
        From :func:`cr3bp.transfers.low_energy.design_low_energy` (or, to a torus,
        :func:`cr3bp.tori.low_energy.design_torus_low_energy`: the torus is drawn as its
        trajectory from the insertion point over ``TORUS_PERIODS`` stroboscopic periods).
    n_per_segment : int
        Samples per segment of the transfer.

    Returns
    -------
    matplotlib Figure
        Not captioned: the caller captions it with the bicircular model's caution.

    Raises
    ------
    None

    Examples
    --------
    Designing a low-energy transfer takes minutes, so the example is not run:

    >>> from cr3bp import orbit
    >>> from cr3bp.transfers.low_energy import design_low_energy
    >>> from cr3bp.plotting.low_energy import plot_low_energy
    >>> nrho = orbit("earth-moon", "halo L2 south period=6.5626d")   # doctest: +SKIP
    >>> fig = plot_low_energy(design_low_energy(nrho, 200.0))        # doctest: +SKIP
    >>> fig.axes[1].get_title()                                      # doctest: +SKIP
    'Sun-Earth rotating frame'

    References
    ----------
    .. [1] matplotlib documentation, :meth:`matplotlib.axes.Axes.inset_axes`.
    """
    model = tr.model
    system = model.system
    t, states = tr.trajectory(n_per_segment)
    target, label = tr.orbit, "target orbit"
    if hasattr(target, "circle"):
        # a torus: its trajectory from the insertion point over TORUS_PERIODS stroboscopic times (CR3BP)
        ins = tr.maneuvers[-1]
        s0 = np.asarray(ins["state_before"], dtype=float) + np.r_[0.0, 0.0, 0.0, ins["dv_vector"]]
        T, n = TORUS_PERIODS * float(target.stroboscopic_time), 400 * TORUS_PERIODS
        label = f"target torus ({TORUS_PERIODS} stroboscopic periods from the insertion, CR3BP)"
    else:
        s0, T, n = tr.orbit.state, float(tr.orbit.period), 400
    orb = propagate(system, s0, T, t_eval=np.linspace(0.0, T, n)).states
    fig, axes = new_figure(2, 1, size=(14.0, 7.4))
    fig.subplots_adjust(wspace=0.32, bottom=0.24)
    # left: Earth-Moon rotating frame
    ax = axes[0, 0] if axes.ndim == 2 else axes[0]
    ax.plot(states[:, 0], states[:, 1], color="tab:blue", lw=1.0, label="low-energy transfer")
    ax.plot(orb[:, 0], orb[:, 1], color="0.3", lw=1.2 if n == 400 else 0.6, label=label)
    for m in tr.maneuvers:
        mk, col = MARKERS.get(m["name"], ("x", "k"))
        dv = system.mps(np.linalg.norm(m["dv_vector"]))
        ax.plot(m["position"][0], m["position"][1], mk, color=col, ms=6, zorder=8,
                label=f"{m['name']} {dv:.2f} m/s (bicircular)")
    draw_primaries(ax, system, view="xy", min_radius=0.02)
    draw_lagrange_points(ax, system, view="xy")
    ax.set_aspect("equal", adjustable="datalim")
    axis_labels(ax, system, view="xy")
    title(ax, "Earth-Moon rotating frame (x-y view; inset: x-z view near the Moon)")
    leg = ax.legend(loc="upper left", bbox_to_anchor=(0.0, -0.11), ncol=3, fontsize=7, framealpha=0.9)
    leg.set_gid("outside-data")
    # inset: the arrival and the target orbit, x-z view, at the orbit's own scale
    ins = ax.inset_axes([0.66, 0.02, 0.33, 0.33])
    span = 1.3 * max(float(np.ptp(orb[:, 0])), float(np.ptp(orb[:, 2])))
    cx, cz = 0.5 * (orb[:, 0].min() + orb[:, 0].max()), 0.5 * (orb[:, 2].min() + orb[:, 2].max())
    ins.plot(states[:, 0], states[:, 2], color="tab:blue", lw=0.8)
    ins.plot(orb[:, 0], orb[:, 2], color="0.3", lw=1.0)
    m = tr.maneuvers[-1]
    ins.plot(m["position"][0], m["position"][2], "s", color="tab:red", ms=5, zorder=8)
    ins.add_patch(Circle((1.0 - system.mu, 0.0), system.radii[1], color="0.45", zorder=5))
    ins.set_xlim(cx - span / 2, cx + span / 2)
    ins.set_ylim(cz - span / 2, cz + span / 2)
    ins.set_aspect("equal", adjustable="box")
    ins.set_xticks([])
    ins.set_yticks([])
    ins.set_title(f"x-z, {system.km(span):,.0f} km across", fontsize=6.5)
    # right: Sun-Earth rotating frame, Earth at the origin, Sun to the left
    bx = axes[0, 1] if axes.ndim == 2 else axes[1]
    se = sun_earth_rotating(model, t, states)
    f = system.length_km / 1e6
    moon = sun_earth_rotating(model, t, np.tile([1.0 - system.mu, 0.0, 0.0], (len(t), 1)))
    bx.plot(moon[:, 0] * f, moon[:, 1] * f, color="0.6", lw=0.8, label="the Moon")
    bx.plot(se[:, 0] * f, se[:, 1] * f, color="tab:blue", lw=1.0, label="low-energy transfer")
    k = int(np.argmax(np.linalg.norm(se[:, :2], axis=1)))
    bx.plot(se[k, 0] * f, se[k, 1] * f, "^", color="tab:purple", ms=7, zorder=8,
            label=f"apogee {tr.max_distance_km / 1e6:.2f} million km")
    for m in tr.maneuvers:
        mk, col = MARKERS.get(m["name"], ("x", "k"))
        p = sun_earth_rotating(model, m["t"], np.asarray(m["position"])[None, :])[0]
        bx.plot(p[0] * f, p[1] * f, mk, color=col, ms=6, zorder=8, label=m["name"])
    bx.add_patch(Circle((0.0, 0.0), system.primary.radius_km * 4 / 1e6, color="tab:blue", zorder=6, label="Earth (x4)"))
    lim = 1.1 * max(float(np.max(np.abs(se[:, :2]))) * f, 0.5)
    bx.axhline(0.0, color="0.85", lw=0.6, zorder=0)
    bx.axvline(0.0, color="0.85", lw=0.6, zorder=0)
    bx.annotate("to the Sun", xy=(-lim * 0.98, 0.0), xytext=(-lim * 0.75, -lim * 0.9), fontsize=8,
                arrowprops=dict(arrowstyle="->", color="orange"), color="darkorange")
    bx.set_xlim(-lim, lim)
    bx.set_ylim(-lim, lim)
    bx.set_aspect("equal", adjustable="box")
    bx.set_xlabel("x [million km] (Sun-Earth rotating frame, Earth at the origin, Sun on -x)")
    bx.set_ylabel("y [million km]")
    title(bx, "Sun-Earth rotating frame")
    legend_beside(bx)
    return fig
