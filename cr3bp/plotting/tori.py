"""Figures of invariant tori: the torus in the x-y, x-z and y-z views (trajectories of circle
points over one stroboscopic time, the invariance circle on top) and the invariance circle
with its image under the stroboscopic map."""

from __future__ import annotations

import numpy as np

from .base import VIEWS, new_figure
from .orbits import _frame, _lagrange_points
from ..tori import surface
from ..tori.circle import evaluate

_VIEW_ORDER = ("xy", "xz", "yz")


def plot_torus(torus, grid=None, title=None, curves=24):
    """Figure: three views of the torus surface and the invariance circle (LU / km offsets).

    Parameters
    ----------
    torus : Torus
        From :func:`cr3bp.tori.torus_around` (or a family member).
    grid : (m, n, 6) array, optional
        The surface (:func:`cr3bp.tori.surface`); computed when None.
    title : str, optional
        Figure title (default: system, name, stroboscopic time, rotation, Jacobi constant).
    curves : int
        About how many trajectories of circle points are drawn.

    Returns
    -------
    matplotlib Figure

    Raises
    ------
    None

    Examples
    --------
    Computing a torus takes tens of seconds, so the example is not run:

    >>> from cr3bp import orbit
    >>> from cr3bp.tori import torus_around
    >>> from cr3bp.plotting.tori import plot_torus
    >>> lyap = orbit("earth-moon", "lyapunov L1 jacobi=3.15")     # doctest: +SKIP
    >>> fig = plot_torus(torus_around(lyap, 1e-3))              # doctest: +SKIP
    >>> len(fig.axes)                                           # doctest: +SKIP
    4

    References
    ----------
    .. [1] Z. P. Olikara and D. J. Scheeres, "Numerical methods for computing quasi-periodic
       orbits and their stability in the restricted three-body problem", 2012 (the invariance
       circle and the stroboscopic map; from memory).
    """
    if grid is None:
        grid = surface(torus.system, torus.circle, torus.stroboscopic_time, 256)
    u = torus.circle
    dense = evaluate(u, np.linspace(0, 2 * np.pi, 400))
    fig, axes = new_figure(4, 1, size=(20.0, 5.6))
    step = max(1, grid.shape[1] // curves)
    own = _lagrange_points(torus.system).get(torus.point)
    for ax, view in zip(axes[0][:3], _VIEW_ORDER):
        i, j = VIEWS[view]
        for k in range(0, grid.shape[1], step):
            ax.plot(grid[:, k, i], grid[:, k, j], color="tab:orange", lw=0.5, alpha=0.6)
        ax.plot(dense[:, i], dense[:, j], color="k", lw=1.2, label="invariance circle")
        _frame(ax, torus.system, view, [grid.reshape(-1, 6)],
               include=[own] if own is not None else [])
        ax.set_title(f"{view[0]}-{view[1]} view" + (" (primaries on the line y = z = 0, not drawn)"
                                                      if view == "yz" else ""), fontsize=9)
    axes[0][0].legend(loc="upper right", fontsize=7)
    _circle_panel(axes[0][3], torus, grid, dense)
    fig.suptitle((title or _title(torus)) + "; red +: Lagrange points", fontsize=10)
    return fig


def _circle_panel(ax, torus, grid, dense):
    """The circle in its own plane (the two main directions of its positions), offsets from its
    centre, with the images phi_T(u_j) of the nodes."""
    u = torus.circle
    c = u[:, :3].mean(axis=0)
    _, _, vt = np.linalg.svd(u[:, :3] - c)
    basis = vt[:2]
    scale, unit = (torus.system.length_km, "km") if torus.system.dimensional else (1.0, "LU")
    p = (dense[:, :3] - c) @ basis.T * scale
    nodes = (u[:, :3] - c) @ basis.T * scale
    image = (grid[-1, :, :3] - c) @ basis.T * scale
    ax.plot(p[:, 0], p[:, 1], color="k", lw=1.0, label="invariance circle")
    ax.plot(nodes[:, 0], nodes[:, 1], "o", ms=3, color="tab:blue", label="nodes u(theta_j)")
    ax.plot(image[:, 0], image[:, 1], "x", ms=5, color="tab:red",
            label=f"images after T (turned by {torus.rotation_deg:.2f} deg)")
    ax.set_aspect("equal", adjustable="datalim")
    ax.grid(alpha=0.3)
    ax.set_xlabel(f"main direction 1 ({unit}, from the circle's centre)")
    ax.set_ylabel(f"main direction 2 ({unit})")
    ax.set_title("invariance circle and its stroboscopic image", fontsize=9)
    ax.legend(loc="upper right", fontsize=7)


def _title(t):
    name = " ".join(w for w in (t.family, t.point, t.branch) if w)
    T = (f"{t.stroboscopic_period_days:.4f} d" if t.system.dimensional
         else f"{t.stroboscopic_time:.6f} TU")
    return (f"{t.system.name} {name} torus: stroboscopic time {T}, rotation {t.rotation_deg:.3f} deg, "
            f"Jacobi constant {t.jacobi:.6f}")
