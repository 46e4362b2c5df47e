"""Hill-region figures: forbidden region shaded, zero-velocity curves, primaries, Lagrange points."""

from __future__ import annotations

from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from .base import axis_labels, draw_lagrange_points, draw_primaries, legend_beside, new_figure
from .base import title as _title

FORBIDDEN_COLOUR = "0.82"
ZVC_COLOUR = "tab:red"


def plot_hill_region(region, ax=None, km=True, points=None, title=True):
    """Draw a :class:`cr3bp.energy.HillRegion`: forbidden region shaded, zero-velocity curves,
    primaries to scale, Lagrange points, title with C and the open necks.

    Parameters
    ----------
    region : HillRegion
    ax : matplotlib Axes, optional
        Drawn into when given; otherwise a new figure is made.
    km : bool
        Axes in km with LU on a secondary axis (dimensional systems; the default), else LU.
    points : list of LagrangePoint, optional
        Precomputed points.
    title : bool
        Title the axes with :func:`hill_title`.

    Returns
    -------
    ax : matplotlib Axes

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.energy import hill_region
    >>> from cr3bp.plotting.energy import plot_hill_region
    >>> ax = plot_hill_region(hill_region(system("earth-moon"), 3.0, resolution=101))
    >>> ax.get_title()
    'earth-moon: Hill region, C = 3.000000 (z = 0); necks open: L1, L2, L3'

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §4.3 (zero-velocity curves;
       from memory).
    .. [2] matplotlib documentation, :meth:`matplotlib.axes.Axes.contourf`.
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
    draw_primaries(ax, system, view=view, min_radius=0.004 * (region.extent[1] - region.extent[0]) / 3.0,
                   box=region.extent)
    draw_lagrange_points(ax, system, view=view, points=points)
    ax.set_xlim(region.extent[0], region.extent[1])
    ax.set_ylim(region.extent[2], region.extent[3])
    ax.set_aspect("equal")
    axis_labels(ax, system, view=view, unit=None if km else "LU")
    handles, labels = ax.get_legend_handles_labels()
    extra = [Patch(color=FORBIDDEN_COLOUR, label="forbidden region (2Ω < C)"),
             Line2D([], [], color=ZVC_COLOUR, lw=1.0, label="zero-velocity curve (2Ω = C)")]
    # beside the axes, so it never hides the primaries or the necks
    legend_beside(ax, extra + handles)
    if title:
        _title(ax, hill_title(region))
    return ax


#: Below this mass ratio (sun-earth: 3.0e-6) the whole-system view shows the necks at L1 and L2
#: as a dot: Hill-region figures zoom on the smaller primary with L1 and L2 (common practice).
ZOOM_MU = 1.0e-4


def default_view(system, point=None) -> str:
    """The extent of a Hill-region figure: ``"secondary"`` (the smaller primary with L1 and L2)
    for a small mass ratio or an orbit about L1/L2 (``point``), else ``"system"``.

    Parameters
    ----------
    system : System
    point : str, optional
        The Lagrange point of the orbit drawn ("L1" .. "L5").

    Returns
    -------
    str

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.plotting.energy import default_view
    >>> default_view(system("earth-moon")), default_view(system("sun-earth")), default_view(system("earth-moon"), "L2")
    ('system', 'secondary', 'secondary')

    References
    ----------
    .. [1] Common practice: zoom on the smaller primary when the necks would be too small to see.
    """
    return "secondary" if system.mu < ZOOM_MU or point in ("L1", "L2") else "system"


def hill_title(region) -> str:
    """Title of a Hill-region figure: system, C, plane and which necks are open.

    Parameters
    ----------
    region : HillRegion

    Returns
    -------
    str

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.energy import hill_region
    >>> from cr3bp.plotting.energy import hill_title
    >>> hill_title(hill_region(system("earth-moon"), 3.5, resolution=51))
    'earth-moon: Hill region, C = 3.500000 (z = 0); all necks closed'

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, ch. 2 (necks of the Hill region).
    """
    opened = [n for n, v in region.necks.items() if v]
    necks = ("necks open: " + ", ".join(opened)) if opened else "all necks closed"
    plane = "z = 0" if region.plane == "xy" else "y = 0"
    return f"{region.system.name}: Hill region, C = {region.jacobi:.6f} ({plane}); {necks}"


__all__ = ["plot_hill_region", "draw_lagrange_points", "hill_title", "default_view"]
