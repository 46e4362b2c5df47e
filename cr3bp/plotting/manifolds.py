"""Figures of tubes, section maps, connections and periapsis maps.

Every function takes an Axes (or makes a figure) and returns it; save with
:func:`cr3bp.plotting.save` (caption with the caution).
"""

from __future__ import annotations

import numpy as np
from matplotlib.lines import Line2D
from matplotlib.patches import Patch
import matplotlib.pyplot as plt

from .base import (VIEWS, axis_labels, colorbar_beside, draw_lagrange_points, draw_primaries, km_scale,
                   legend_beside, new_figure, scaled_axis)
from ..energy import hill_region
from ..errors import NoSolutionError
from ..integrate import propagate

TUBE_COLOURS = {("unstable", "interior"): "tab:red", ("unstable", "exterior"): "tab:orange",
                ("stable", "interior"): "tab:green", ("stable", "exterior"): "tab:cyan"}
CYCLE = ("tab:red", "tab:green", "tab:blue", "tab:purple", "tab:orange", "tab:brown", "tab:pink")
FORBIDDEN = "0.85"


def tube_colour(tube, k=0):
    """The colour of a tube: fixed per (stability, branch), else the ``k``-th of the cycle.

    Parameters
    ----------
    tube : Tube
    k : int
        Index of the tube in the figure (used when its kind has no fixed colour).

    Returns
    -------
    str
        A matplotlib colour name.

    Raises
    ------
    None

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> from cr3bp.plotting.manifolds import tube_colour
    >>> tube_colour(SimpleNamespace(stability="stable", branch="interior"))
    'tab:green'

    References
    ----------
    .. [1] Common practice: unstable tubes in warm colours, stable tubes in cool ones.
    """
    return TUBE_COLOURS.get((tube.stability, tube.branch), CYCLE[k % len(CYCLE)])


def draw_forbidden(ax, system, jacobi_value, view="xy"):
    """Shade the forbidden region 2 Omega < C in the plane z = 0 (xy view) or y = 0 (xz view),
    with the zero-velocity curves, from :func:`cr3bp.energy.hill_region`.

    Parameters
    ----------
    ax : matplotlib Axes
        Its current limits (LU) frame the region.
    system : System
    jacobi_value : float
        The Jacobi constant C.
    view : str
        Only "xy" and "xz" are shaded; other views are left as they are.

    Returns
    -------
    ax : matplotlib Axes

    Raises
    ------
    InputError
        A Jacobi constant that is not finite.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.plotting.base import new_figure
    >>> from cr3bp.plotting.manifolds import draw_forbidden
    >>> fig, ax = new_figure()
    >>> ax.set_xlim(0.7, 1.2); ax.set_ylim(-0.25, 0.25)
    (0.7, 1.2)
    (-0.25, 0.25)
    >>> len(draw_forbidden(ax, system("earth-moon"), 3.18).collections) > 0
    True

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §4.3 (zero-velocity curves;
       from memory).
    """
    if view not in ("xy", "xz"):
        return ax
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    region = hill_region(system, jacobi_value, plane=view, extent=(x0, x1, y0, y1), resolution=301)
    f = region.field
    ax.contourf(region.u, region.v, f, levels=[f.min() - 1.0, 0.0], colors=[FORBIDDEN], zorder=0)
    for c in region.curves:
        ax.plot(c[:, 0], c[:, 1], color="0.3", lw=0.8, zorder=1)
    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    return ax


def plot_tubes(tubes, views=("xy", "xz"), n_samples=200, max_trajectories=80, axes=None,
               forbidden=True, orbit_colour="k"):
    """Tubes in projections of the rotating frame, with the forbidden region at the first
    tube's energy (xy: z = 0 slice; xz: y = 0 slice) and the primaries to scale.

    Parameters
    ----------
    tubes : sequence of Tube
    views : sequence of {"xy", "xz", "yz"}
    n_samples : int
        Samples per trajectory.
    max_trajectories : int
        At most about this many trajectories per tube.
    axes : matplotlib Axes or array of them, optional
        Drawn into when given (one per view).
    forbidden : bool
        Shade the forbidden region.
    orbit_colour : str

    Returns
    -------
    matplotlib Figure

    Raises
    ------
    KeyError
        An unknown view.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import manifolds
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> tube = manifolds.grow_tube(orbit, "unstable", "interior", 4, until="time:2d")
    >>> from cr3bp.plotting.manifolds import plot_tubes
    >>> fig = plot_tubes([tube], views=("xy",), n_samples=40)
    >>> fig.axes[0].get_legend().get_texts()[0].get_text()
    'lyapunov L1 C=3.181211 unstable interior (4 trajectories)'

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, ch. 4 (tubes, Poincaré cuts, connections).
    """
    tubes = list(tubes)
    if axes is None:
        fig, axs = new_figure(ncols=len(views), size=(6.0 * len(views), 5.6))
        axs = np.atleast_1d(axs).ravel()
    else:
        axs = np.atleast_1d(axes).ravel()
        fig = axs[0].figure
    cache = {}
    for ax, view in zip(axs, views):
        i, j = VIEWS[view]
        handles = []
        pts = []
        for k, tube in enumerate(tubes):
            col = tube_colour(tube, k)
            step = max(1, tube.n // max_trajectories)
            if k not in cache:
                cache[k] = tube.trajectories(n_samples, indices=range(0, tube.n, step))
            for t, s in cache[k]:
                ax.plot(s[:, i], s[:, j], color=col, lw=0.5, alpha=0.6, zorder=2)
                pts.append(s[:, [i, j]])
            handles.append(Line2D([], [], color=col, label=f"{tube.label} ({tube.n} trajectories)"))
            if tube.orbit is not None:
                te = np.linspace(0, tube.period, 400)
                arc = propagate(tube.system, tube.orbit.state, tube.period, t_eval=te)
                ax.plot(arc.states[:, i], arc.states[:, j], color=orbit_colour, lw=1.2, zorder=4)
        if any(t.orbit is not None for t in tubes):
            handles.append(Line2D([], [], color=orbit_colour, lw=1.2, label="periodic orbit"))
        system = tubes[0].system
        span = _fit(ax, np.vstack(pts) if pts else np.zeros((1, 2)))
        # in the y-z view both primaries project onto the origin: the smaller one is drawn
        x0, x1 = ax.get_xlim()
        y0, y1 = ax.get_ylim()
        draw_primaries(ax, system, view=view, min_radius=0.006 * span, box=(x0, x1, y0, y1))
        draw_lagrange_points(ax, system, view, box=(x0, x1, y0, y1))
        if forbidden:
            draw_forbidden(ax, system, tubes[0].jacobi, view)
            if view in ("xy", "xz"):
                handles.append(Patch(color=FORBIDDEN, label=f"forbidden region at C = {tubes[0].jacobi:.5f}"))
        axis_labels(ax, system, view)
        if ax is axs[min(len(views), len(axs)) - 1]:
            legend_beside(ax, handles + _point_handle(ax))
    return fig


def _point_handle(ax):
    return [h for h, lab in zip(*ax.get_legend_handles_labels()) if lab == "Lagrange points"][:1]


def _fit(ax, pts, margin=0.12):
    lo, hi = pts.min(axis=0), pts.max(axis=0)
    span = max(float(np.max(hi - lo)), 1e-3)
    mid = 0.5 * (lo + hi)
    half = 0.5 * span * (1 + 2 * margin)
    ax.set_xlim(mid[0] - half, mid[0] + half)
    ax.set_ylim(mid[1] - half, mid[1] + half)
    ax.set_aspect("equal", adjustable="box")
    return 2 * half


def plot_tubes_3d(tubes, n_samples=200, max_trajectories=60):
    """Tubes in 3-D (rotating frame, LU).

    Parameters
    ----------
    tubes : sequence of Tube
    n_samples : int
        Samples per trajectory.
    max_trajectories : int

    Returns
    -------
    matplotlib Figure

    Raises
    ------
    IndexError
        No tubes.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import manifolds
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> tube = manifolds.grow_tube(orbit, "unstable", "interior", 4, until="time:2d")
    >>> from cr3bp.plotting.manifolds import plot_tubes_3d
    >>> ax = plot_tubes_3d([tube], n_samples=40).axes[0]
    >>> ax.name, len(ax.lines)
    ('3d', 4)

    References
    ----------
    .. [1] matplotlib documentation, "The mplot3d Toolkit".
    """
    fig = plt.figure(figsize=(7.5, 6.5))
    ax = fig.add_subplot(111, projection="3d")
    handles = []
    for k, tube in enumerate(tubes):
        col = tube_colour(tube, k)
        step = max(1, tube.n // max_trajectories)
        for t, s in tube.trajectories(n_samples, indices=range(0, tube.n, step)):
            ax.plot(s[:, 0], s[:, 1], s[:, 2], color=col, lw=0.5, alpha=0.6)
        handles.append(Line2D([], [], color=col, label=tube.label))
    system = tubes[0].system
    for x, name in zip(system.positions, system.names):
        ax.scatter([x], [0], [0], color="k", s=12)
        ax.text(x, 0, 0, name, fontsize=7)
    if getattr(system, "dimensional", False):
        per, text = km_scale(system)
        for axis, name in ((ax.xaxis, "x"), (ax.yaxis, "y"), (ax.zaxis, "z")):
            scaled_axis(axis, system.length_km / per, f"{name} [{text}]")
    else:
        ax.set_xlabel("x [LU]")
        ax.set_ylabel("y [LU]")
        ax.set_zlabel("z [LU]")
    legend_beside(ax, handles)
    return fig


def plot_section_map(cuts, names=("y", "vy"), ax=None, connect_points=True, labels=None):
    """Cuts of several tubes on one section, each labelled; ``names`` the map coordinates: one
    pair (``("y", "vy")``) or several (``(("y", "vy"), ("z", "vz"))``: one panel each, e.g. both
    maps of a spatial tube). Dimensional systems read in 10³ km and m/s (LU, LU/TU on a
    secondary axis). Returns the (first) Axes.

    Parameters
    ----------
    cuts : sequence of Crossings
        Cuts on one section (:meth:`cr3bp.tubes.manifolds.Tube.section_cut`).
    names : pair of str, or sequence of pairs
        Map coordinates ("x", "y", "z", "vx", "vy", "vz", "t", ...).
    ax : matplotlib Axes, optional
        Drawn into when given (one pair only).
    connect_points : bool
        Join the points of a closed cut in phase order.
    labels : sequence of str, optional
        Legend labels (default: the cuts' own).

    Returns
    -------
    matplotlib Axes

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import manifolds
    >>> from cr3bp.plotting.manifolds import plot_section_map
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> tube = manifolds.grow_tube(orbit, "unstable", "interior", 4, until="section:x=1-mu")
    >>> ax = plot_section_map([tube.section_cut()])
    >>> ax.get_xlabel(), ax.get_ylabel()
    ('y [10³ km]', 'vy [m/s]')

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, ch. 4 (tubes, Poincaré cuts, connections).
    """
    pairs = [tuple(names)] if isinstance(names[0], str) else [tuple(p) for p in names]
    if ax is None:
        fig, axs = new_figure(len(pairs), 1, size=(6.2 * len(pairs) + 2.0, 6.0))
        axs = list(np.atleast_1d(axs).ravel())
    else:
        axs = [ax]
    title = cuts[0].section.label if cuts else ""
    system = cuts[0].system if cuts else None
    for a, pair in zip(axs, pairs):
        for k, cut in enumerate(cuts):
            if len(cut) == 0:
                continue
            pts = cut.polygon(pair) if cut.phase is not None else cut.coords(pair)
            lab = (labels[k] if labels else cut.label) or f"cut {k + 1}"
            col = CYCLE[k % len(CYCLE)]
            style = "-" if connect_points and cut.closed else ""
            a.plot(pts[:, 0], pts[:, 1], style + ".", color=col, ms=3, lw=0.8,
                   label=f"{lab} ({len(pts)} crossings)")
        _map_axis(a.xaxis, system, pair[0])
        _map_axis(a.yaxis, system, pair[1])
        a.set_title(f"Poincaré section {title}: ({pair[0]}, {pair[1]})", fontsize=9,
                    pad=30 if _dimensional(system) and pair[0] in _SCALES else 6)
        a.grid(alpha=0.3)
    legend_beside(axs[len(pairs) - 1] if len(axs) >= len(pairs) else axs[0])
    return axs[0]


_SCALES = {"x": "length", "y": "length", "z": "length", "r": "length", "radius": "length",
           "vx": "speed", "vy": "speed", "vz": "speed", "t": "time"}


def _dimensional(system):
    return system is not None and getattr(system, "dimensional", False)


def _map_axis(axis, system, name):
    """Label a map axis; lengths in 10³ km, speeds in m/s, times in days for dimensional systems
    (the data stay nondimensional; the nondimensional unit on a secondary axis)."""
    kind = _SCALES.get(name)
    if not _dimensional(system) or kind is None:
        axis.set_label_text(_unit_label(name))
        return
    if kind == "length":
        per, unit = km_scale(system)
        scaled_axis(axis, system.length_km / per, f"{name} [{unit}]", f"{name} [LU]")
    elif kind == "speed":
        scaled_axis(axis, system.velocity_kms * 1000.0, f"{name} [m/s]", f"{name} [LU/TU]")
    else:
        scaled_axis(axis, system.days(1.0), f"{name} [days]", f"{name} [TU]")


def _unit_label(name):
    units = {"x": "LU", "y": "LU", "z": "LU", "vx": "LU/TU", "vy": "LU/TU", "vz": "LU/TU", "t": "TU",
             "tof_days": "days", "altitude_km": "km", "r": "LU", "radius": "LU", "jacobi": "-"}
    return f"{name} [{units.get(name, '')}]"


def plot_connection(legs, tubes=(), view="xy", ax=None, n_samples=150):
    """Connection legs (black) over the tubes they were found in, with the patch points.

    Parameters
    ----------
    legs : sequence of Leg
        From :func:`cr3bp.tubes.connections.connect` (the best first).
    tubes : sequence of Tube
    view : {"xy", "xz", "yz"}
    ax : matplotlib Axes, optional
    n_samples : int
        Samples per tube trajectory.

    Returns
    -------
    matplotlib Axes

    Raises
    ------
    IndexError
        Neither legs nor tubes.

    Examples
    --------
    Finding a connection takes tens of seconds, so the example is not run:

    >>> from cr3bp import orbit
    >>> from cr3bp.tubes.connections import connect
    >>> from cr3bp.plotting.manifolds import plot_connection
    >>> lyap1 = orbit("earth-moon", "lyapunov L1 jacobi=3.15")         # doctest: +SKIP
    >>> lyap2 = orbit("earth-moon", "lyapunov L2 jacobi=3.15")         # doctest: +SKIP
    >>> legs, tu, ts = connect(lyap1, lyap2, "x=1-mu")            # doctest: +SKIP
    >>> ax = plot_connection(legs, (tu, ts))                       # doctest: +SKIP

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, ch. 4 (tubes, Poincaré cuts, connections).
    """
    if ax is None:
        fig, ax = new_figure(size=(8.0, 6.0))
    i, j = VIEWS[view]
    handles = []
    for k, tube in enumerate(tubes):
        col = tube_colour(tube, k)
        step = max(1, tube.n // 40)
        for t, s in tube.trajectories(n_samples, indices=range(0, tube.n, step)):
            ax.plot(s[:, i], s[:, j], color=col, lw=0.4, alpha=0.45)
        handles.append(Line2D([], [], color=col, label=tube.label))
    for k, leg in enumerate(legs):
        t, s = leg.trajectory()
        ax.plot(s[:, i], s[:, j], color="k" if k == 0 else "0.4", lw=1.6 if k == 0 else 0.9, zorder=5)
        for m in leg.maneuvers:
            ax.plot(m.position[i], m.position[j], "o", color="tab:red", ms=5, zorder=6)
        handles.append(Line2D([], [], color="k" if k == 0 else "0.4",
                              label=f"{leg.kind} {k + 1}: dv {leg.dv_mps:.3g} m/s, "
                                    f"tof {leg.tof_days:.2f} d"))
    handles.append(Line2D([], [], marker="o", ls="", color="tab:red", label="patch point / manoeuvre"))
    system = legs[0].system if legs else tubes[0].system
    span = _fit(ax, np.vstack([leg.trajectory(100)[1][:, [i, j]] for leg in legs]) if legs else
                np.array([[0.0, 0.0]]), margin=0.25)
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    draw_primaries(ax, system, view=view, min_radius=0.006 * span, box=(x0, x1, y0, y1))
    draw_lagrange_points(ax, system, view, box=(x0, x1, y0, y1))
    axis_labels(ax, system, view)
    legend_beside(ax, handles + _point_handle(ax))
    return ax


def plot_periapsis_map(pmap, target_km=None, ax=None):
    """Periapsis altitude against time of flight (and against departure phase on the orbit).

    Parameters
    ----------
    pmap : PeriapsisMap
        From :func:`cr3bp.tubes.parking.periapsis_map`.
    target_km : float, optional
        A target altitude drawn as a line, km.
    ax : matplotlib Axes, optional

    Returns
    -------
    matplotlib Axes

    Raises
    ------
    NoSolutionError
        No trajectory of the map reached a periapsis.

    Examples
    --------
    A periapsis map takes tens of seconds, so the example is not run:

    >>> from cr3bp import orbit
    >>> from cr3bp.tubes.parking import periapsis_map
    >>> from cr3bp.plotting.manifolds import plot_periapsis_map
    >>> nrho = orbit("earth-moon", "halo L2 south period=6.5626d")    # doctest: +SKIP
    >>> ax = plot_periapsis_map(periapsis_map(nrho, 0, "stable", "interior"), target_km=200.0)  # doctest: +SKIP
    >>> ax.get_yscale()                                               # doctest: +SKIP
    'symlog'

    References
    ----------
    .. [1] D. C. Davis and K. C. Howell, "Characterization of trajectories near the smaller
       primary in the restricted problem for applications", *Journal of Guidance, Control, and
       Dynamics* 35, 2012 (periapsis maps; from memory).
    """
    s = pmap.system
    ok = np.isfinite(pmap.altitude_km)
    if not ok.any():
        raise NoSolutionError(f"no trajectory of the {pmap.stability} {pmap.branch} manifold of {pmap.origin} "
                              f"reached a periapsis about {s.names[pmap.primary]}: the periapsis map is empty")
    if ax is None:
        fig, ax = new_figure(size=(8.0, 6.0))
    tof = np.abs(s.days(pmap.tof[ok]))
    sc = ax.scatter(tof, pmap.altitude_km[ok], c=pmap.phase[ok], cmap="viridis", s=12,
                    label=f"{pmap.stability} {pmap.branch} manifold of {pmap.origin}")
    colorbar_beside(ax, sc, "departure phase on the orbit [fraction of period]")
    if target_km is not None:
        ax.axhline(target_km, color="tab:red", lw=1.0, label=f"target altitude {target_km:g} km")
    ax.set_xlabel("time of flight from periapsis to the orbit [days]")
    ax.set_ylabel(f"periapsis altitude above {s.names[pmap.primary]} [km]")
    ax.set_yscale("symlog", linthresh=1000.0)
    legend_beside(ax, where="above", ncol=1)
    ax.grid(alpha=0.3)
    return ax
