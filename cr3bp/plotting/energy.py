"""Hill-region figures: forbidden region shaded, zero-velocity curves, primaries, Lagrange points."""

from __future__ import annotations

from matplotlib.lines import Line2D
from matplotlib.patches import Patch
from matplotlib.ticker import FuncFormatter

from .base import VIEWS, axis_labels, draw_primaries, new_figure

FORBIDDEN_COLOUR = "0.82"
ZVC_COLOUR = "tab:red"
POINT_COLOUR = "tab:purple"


def draw_lagrange_points(ax, system, view="xy", points=None, labels=True, include_out_of_plane=None,
                         **marker):
    """Mark and label the Lagrange points of ``system`` on ``ax`` (coordinates in LU).

    Parameters
    ----------
    points : list of LagrangePoint, optional
        Precomputed points (default: :func:`cr3bp.equilibria.lagrange_points`).
    include_out_of_plane : bool, optional
        Draw L4/L5 in views that do not contain them (projected); default only for "xy".
    """
    from ..equilibria import lagrange_points
    pts = points if points is not None else lagrange_points(system)
    i, j = VIEWS[view]
    if include_out_of_plane is None:
        include_out_of_plane = view == "xy"
    style = dict(marker="+", color=POINT_COLOUR, markersize=9, mew=1.6, linestyle="none", zorder=7)
    style.update(marker)
    xs, ys = [], []
    for p in pts:
        if not include_out_of_plane and not p.collinear:
            continue
        xs.append(p.position[i])
        ys.append(p.position[j])
        if labels:
            ax.annotate(p.name, (p.position[i], p.position[j]), textcoords="offset points",
                        xytext=(5, -11), fontsize=8, color=POINT_COLOUR, zorder=7)
    ax.plot(xs, ys, label="Lagrange points", **style)
    return ax


def _km_axes(ax, system, view):
    """Secondary axes in km (top and right), for a dimensional system."""
    if not system.dimensional:
        return ax
    L = system.length_km
    i, j = VIEWS[view]
    sx = ax.secondary_xaxis("top", functions=(lambda u: u * L, lambda k: k / L))
    sy = ax.secondary_yaxis("right", functions=(lambda u: u * L, lambda k: k / L))
    thousands = FuncFormatter(lambda k, _: format(k / 1000.0, ",.6g"))
    sx.set_xlabel(f"{'xyz'[i]} [1000 km]", fontsize=8)
    sy.set_ylabel(f"{'xyz'[j]} [1000 km]", fontsize=8)
    for s, axis in ((sx, sx.xaxis), (sy, sy.yaxis)):
        axis.set_major_formatter(thousands)
        s.tick_params(labelsize=7)
    return ax


def plot_hill_region(region, ax=None, km=False, points=None, title=True):
    """Draw a :class:`cr3bp.energy.HillRegion`: forbidden region shaded, zero-velocity curves,
    primaries to scale, Lagrange points, title with C and the open necks.

    Parameters
    ----------
    region : HillRegion
    ax : matplotlib Axes, optional
        Drawn into when given; otherwise a new figure is made.
    km : bool
        Add secondary axes in km (dimensional systems only).
    points : list of LagrangePoint, optional
        Precomputed points.

    Returns
    -------
    ax : matplotlib Axes
    """
    if ax is None:
        _, ax = new_figure(size=(9.5, 6.5))
    system = region.system
    view = region.plane
    field = region.field
    ax.contourf(region.u, region.v, field, levels=[field.min() - 1.0, 0.0], colors=[FORBIDDEN_COLOUR],
                zorder=1)
    for c in region.curves:
        ax.plot(c[:, 0], c[:, 1], color=ZVC_COLOUR, lw=1.0, zorder=3)
    draw_primaries(ax, system, view=view, min_radius=0.004 * (region.extent[1] - region.extent[0]) / 3.0)
    draw_lagrange_points(ax, system, view=view, points=points)
    ax.set_xlim(region.extent[0], region.extent[1])
    ax.set_ylim(region.extent[2], region.extent[3])
    ax.set_aspect("equal")
    axis_labels(ax, system, view=view)
    if km:
        _km_axes(ax, system, view)
    handles, labels = ax.get_legend_handles_labels()
    extra = [Patch(color=FORBIDDEN_COLOUR, label="forbidden region (2Ω < C)"),
             Line2D([], [], color=ZVC_COLOUR, lw=1.0, label="zero-velocity curve (2Ω = C)")]
    # beside the axes, so it never hides the primaries or the necks
    ax.legend(handles=extra + handles, loc="upper left", bbox_to_anchor=(1.02, 1.0), fontsize=7,
              framealpha=0.9)
    if title:
        ax.set_title(hill_title(region), fontsize=9, pad=30 if (km and system.dimensional) else 6)
    return ax


def hill_title(region) -> str:
    opened = [n for n, v in region.necks.items() if v]
    necks = ("necks open: " + ", ".join(opened)) if opened else "all necks closed"
    plane = "z = 0" if region.plane == "xy" else "y = 0"
    return f"{region.system.name}: Hill region, C = {region.jacobi:.6f} ({plane}); {necks}"


__all__ = ["plot_hill_region", "draw_lagrange_points", "hill_title"]
