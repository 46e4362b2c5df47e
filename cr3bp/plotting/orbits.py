"""Figures of periodic orbits and families: three views with the primaries to scale and the
Lagrange points marked; a family coloured by Jacobi constant; stability indices."""

from __future__ import annotations

import numpy as np
from matplotlib.ticker import FuncFormatter
from matplotlib.colors import Normalize
from matplotlib.lines import Line2D
from matplotlib.patches import Patch
import matplotlib.pyplot as plt

from .base import (VIEWS, axis_labels, colorbar_beside, draw_lagrange_points, draw_primaries,
                   legend_beside, new_figure, title as set_title)
from ..equilibria import lagrange_points
from ..integrate import propagate

_VIEW_ORDER = ("xy", "xz", "yz")


def _lagrange_points(system):
    return {p.name: np.asarray(p.position) for p in lagrange_points(system)}


def trajectory(orbit, n=1500):
    """States (n, 6) sampled evenly over one period of ``orbit``.

    Parameters
    ----------
    orbit : PeriodicOrbit
    n : int
        Number of samples (the first and last are the same state).

    Returns
    -------
    (n, 6) array
        LU and LU/TU, rotating frame.

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> s = trajectory(orbit, 100)
    >>> s.shape, bool(abs(s[-1] - s[0]).max() < 1e-8)
    ((100, 6), True)

    References
    ----------
    .. [1] Common practice: sample a periodic orbit by integrating it over one period.
    """
    t = np.linspace(0.0, orbit.period, n)
    return propagate(orbit.system, orbit.state, orbit.period, t_eval=t).states


def _frame(ax, system, view, arrays, pad=0.15, include=()):
    """Equal-aspect frame around ``arrays`` (and the points ``include``), primaries (in the y-z
    view the smaller one, in front of the larger) and the Lagrange points inside the frame."""
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
    draw_primaries(ax, system, view, min_radius=0.008 * span, box=box)
    draw_lagrange_points(ax, system, view, box=box)
    axis_labels(ax, system, view)
    ax.grid(alpha=0.3)
    return box


def planar(trajectories, tol=1e-9) -> bool:
    """Whether every trajectory stays in the plane z = 0 (|z| and |vz| below ``tol`` LU, LU/TU).

    Parameters
    ----------
    trajectories : sequence of (n, 6) arrays
    tol : float

    Returns
    -------
    bool

    Raises
    ------
    None

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.plotting.orbits import planar
    >>> flat = np.zeros((3, 6)); tilted = flat.copy(); tilted[1, 2] = 0.01
    >>> planar([flat]), planar([flat, tilted])
    (True, False)

    References
    ----------
    .. [1] Common practice: a planar family is drawn in the x-y view only.
    """
    return all(float(np.max(np.abs(np.asarray(s)[:, [2, 5]]))) < tol for s in trajectories)


def plot_orbit(orbit, states=None, title=None):
    """Figure with the x-y, x-z and y-z views of one orbit (LU, rotating frame).

    Parameters
    ----------
    orbit : PeriodicOrbit
    states : (n, 6) array, optional
        Samples of the orbit (default :func:`trajectory`).
    title : str, optional
        Figure title (default: system, name, period and Jacobi constant).

    Returns
    -------
    matplotlib Figure

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> fig = plot_orbit(orbit)
    >>> [ax.get_title() for ax in fig.axes[:3]]
    ['x-y view', 'x-z view', 'y-z view (seen along x)']

    References
    ----------
    .. [1] Common practice: three orthogonal projections in the rotating frame.
    """
    states = trajectory(orbit) if states is None else states
    fig, axes = new_figure(3, 1, size=(15.0, 5.6))
    for ax, view in zip(axes[0], _VIEW_ORDER):
        i, j = VIEWS[view]
        ax.plot(states[:, i], states[:, j], color="tab:orange", lw=1.2, label="orbit")
        ax.plot(states[0, i], states[0, j], "o", color="k", ms=3, label="initial state")
        own = _lagrange_points(orbit.system).get(orbit.point)
        _frame(ax, orbit.system, view, [states], include=[own] if own is not None else [])
        set_title(ax, f"{view[0]}-{view[1]} view" + (" (seen along x)" if view == "yz" else ""))
    legend_beside(axes[0][2], _unique_handles(axes[0]))
    fig.suptitle(title or _orbit_title(orbit), fontsize=10)
    return fig


def _unique_handles(axes):
    """Legend handles of several axes, one per label."""
    seen = {}
    for ax in axes:
        for h, lab in zip(*ax.get_legend_handles_labels()):
            seen.setdefault(lab, h)
    return [h for h in seen.values()]


def _orbit_title(o):
    name = " ".join(w for w in (o.family, o.point, o.branch) if w)
    per = f"{o.period_days:.4f} d" if o.system.dimensional else f"{o.period:.6f} TU"
    return f"{o.system.name} {name}: period {per}, Jacobi constant {o.jacobi:.6f}"


def plot_family(system, trajectories, jacobi, title="", max_curves=60):
    """Members coloured by Jacobi constant in the x-y and x-z views (only x-y for a planar
    family); the colour bar stands beside the last view.

    Parameters
    ----------
    system : System
    trajectories : sequence of (n, 6) arrays
        One sampled period per member.
    jacobi : sequence of float
        Jacobi constants of the members.
    title : str
    max_curves : int
        At most this many members are drawn, evenly picked.

    Returns
    -------
    matplotlib Figure

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import continuation, families
    >>> fam = families.grow_family(system("earth-moon"), "lyapunov", "L1", stops=continuation.Stops(max_members=3))
    >>> fig = plot_family(fam.system, [trajectory(m, 100) for m in fam.members], [m.jacobi for m in fam.members])
    >>> fig.axes[0].get_title(), fig.axes[-1].get_ylabel()
    ('x-y view (planar family: z = 0)', 'Jacobi constant (nondimensional)')

    References
    ----------
    .. [1] matplotlib documentation, :class:`matplotlib.colors.Normalize` and
       :func:`matplotlib.pyplot.colorbar`.
    """
    n = len(trajectories)
    pick = np.unique(np.linspace(0, n - 1, min(n, max_curves)).round().astype(int))
    views = ("xy",) if planar([trajectories[k] for k in pick]) else ("xy", "xz")
    fig, axes = new_figure(len(views), 1, size=(6.6 * len(views) + 1.2, 6.0))
    axes = np.atleast_1d(axes).ravel()
    norm = Normalize(min(jacobi), max(jacobi))
    cmap = plt.get_cmap("viridis")
    for ax, view in zip(axes, views):
        i, j = VIEWS[view]
        for k in pick:
            s = trajectories[k]
            ax.plot(s[:, i], s[:, j], color=cmap(norm(jacobi[k])), lw=0.7)
        _frame(ax, system, view, [trajectories[k] for k in pick])
        set_title(ax, f"{view[0]}-{view[1]} view" + (" (planar family: z = 0)" if len(views) == 1 else ""))
    sm = plt.cm.ScalarMappable(norm=norm, cmap=cmap)
    colorbar_beside(axes[-1], sm, "Jacobi constant (nondimensional)")
    fig.suptitle(title, fontsize=10)
    return fig


def plot_stability(jacobi, period, nu, period_unit="d", title="", bifurcations=(), perilune=None,
                   perilune_label="perilune radius [km]", marks=()):
    """Signed stability indices nu1 (larger |nu|) and nu2 of each member against the perilune
    radius (when given; else the Jacobi constant) and against the period, with the stability
    band -1 <= nu <= +1 shaded and the lines nu = +1 and nu = -1 drawn (symmetric-log scale:
    linear inside |nu| <= 1, logarithmic beyond).

    Parameters
    ----------
    nu : (n, 2) array
        Real parts of the indices in the members' numbering (nu1 the larger |nu|), as in the
        family table's nu1, nu2 columns.
    bifurcations : dicts with ``jacobi`` and ``_period_plot`` (and ``_perilune_plot``)
    marks : (panel, value, label) triples, panel "period" or "perilune": requested values (a
        resonance, a target) drawn as labelled dash-dot lines.
    jacobi, period : (n,) arrays
        Jacobi constants and periods of the members (period in ``period_unit``).
    period_unit : str
    title : str
    perilune : (n,) array, optional
        Perilune radii; the first panel uses them instead of the Jacobi constant.
    perilune_label : str

    Returns
    -------
    matplotlib Figure

    Raises
    ------
    None

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.plotting.orbits import plot_stability
    >>> fig = plot_stability([3.18, 3.17, 3.16], [11.8, 11.9, 12.0], np.array([[800.0, 1.0], [700.0, 1.0], [600.0, 1.0]]))
    >>> fig.axes[0].get_yscale(), fig.axes[1].get_xlabel()
    ('symlog', 'period [d]')

    References
    ----------
    .. [1] Common practice: the stability index nu = (lambda + 1/lambda) / 2 of each reciprocal
       eigenvalue pair of the monodromy matrix; K. C. Howell and E. T. Campbell,
       "Three-dimensional periodic solutions that bifurcate from halo families in the circular
       restricted three-body problem", 1999 (stability indices and bifurcations; from memory).
    """
    fig, axes = new_figure(2, 1, size=(13.5, 5.4))
    nu = np.asarray(nu, dtype=float)
    first = ((perilune, perilune_label, "_perilune_plot") if perilune is not None
             else (jacobi, "Jacobi constant (nondimensional)", "jacobi"))
    panels = (first, (period, f"period [{period_unit}]", "_period_plot"))
    for ax, (x, label, key) in zip(axes[0], panels):
        x = np.asarray(x, dtype=float)
        ax.axhspan(-1.0, 1.0, color="tab:green", alpha=0.08, lw=0)
        ax.plot(x, nu[:, 0], ".-", ms=2.5, lw=0.9, color="tab:blue", label="nu1 (larger |nu|)")
        ax.plot(x, nu[:, 1], ".-", ms=2.5, lw=0.9, color="tab:orange", label="nu2")
        for level in (1.0, -1.0):
            ax.axhline(level, color="k", lw=0.8, ls="--")
        for b in bifurcations:
            xv = b.get(key)
            if xv is not None:
                ax.axvline(xv, color="tab:red", lw=0.7, alpha=0.7)
        for where, xv, text in marks:
            if ("_" + where + "_plot") == key:
                ax.axvline(xv, color="tab:purple", lw=1.2, ls="-.")
                ax.annotate(text, (xv, 1.0), xycoords=("data", "axes fraction"), xytext=(3, -6),
                            textcoords="offset points", fontsize=7, color="tab:purple", rotation=90,
                            va="top", ha="left")
        ax.set_yscale("symlog", linthresh=1.0, linscale=1.0)
        ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
        ax.set_xlabel(label)
        ax.set_ylabel("stability index nu (real part, nondimensional)")
        ax.grid(alpha=0.3, which="both")
    handles = [Line2D([], [], color="tab:blue", marker=".", label="nu1 (larger |nu|)"),
               Line2D([], [], color="tab:orange", marker=".", label="nu2"),
               Line2D([], [], color="k", ls="--", lw=0.8, label="nu = +1 and nu = -1"),
               Patch(color="tab:green", alpha=0.2, label="stable band |nu| <= 1")]
    if bifurcations:
        handles.append(Line2D([], [], color="tab:red", lw=0.7, label="bifurcation"))
    if marks:
        handles.append(Line2D([], [], color="tab:purple", ls="-.", lw=1.2, label="requested value"))
    legend_beside(axes[0][1], handles)
    fig.suptitle(title, fontsize=10)
    return fig
