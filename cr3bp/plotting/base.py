"""Shared plotting pieces: a figure with a caution caption, primaries to scale, the one
Lagrange-point marker, axes in km (LU on a secondary axis), legends and colour bars beside
the data, saving."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.patches import Circle  # noqa: E402
from matplotlib.ticker import FuncFormatter, MaxNLocator  # noqa: E402
from mpl_toolkits.axes_grid1 import make_axes_locatable

from ..io.atomic import save_figure  # noqa: E402
from ..cautions import CAUTION_SHORT  # noqa: E402
from ..cautions import caution_short
from ..equilibria import lagrange_points

PRIMARY_COLOURS = ("tab:blue", "0.45")
VIEWS = {"xy": (0, 1), "xz": (0, 2), "yz": (1, 2)}

#: The one marker of a Lagrange point, in every figure (:func:`draw_lagrange_points`).
LAGRANGE_COLOUR = "tab:purple"
LAGRANGE_STYLE = dict(marker="+", color=LAGRANGE_COLOUR, markersize=9, mew=1.6, linestyle="none", zorder=7)
LAGRANGE_GID = "lagrange-points"
#: gid of the legend or colour bar axes placed beside the data (tests look them up).
OUTSIDE_GID = "outside-data"


def new_figure(ncols=1, nrows=1, size=(7.0, 6.0), **kw):
    """A figure and its axes, sized for a caption line at the bottom.

    Parameters
    ----------
    ncols, nrows : int
        Grid of axes (default one).
    size : (float, float)
        Figure size in inches.
    **kw
        Passed to :func:`matplotlib.pyplot.subplots`.

    Returns
    -------
    fig : matplotlib Figure
    axes : matplotlib Axes, or a 2-D array of them when the grid has more than one

    Raises
    ------
    ValueError
        From matplotlib, for a grid size below one.

    Examples
    --------
    >>> from cr3bp.plotting.base import new_figure
    >>> fig, axes = new_figure(2, 1)
    >>> axes.shape, fig.get_size_inches().tolist()
    ((1, 2), [7.0, 6.0])

    References
    ----------
    .. [1] matplotlib documentation, :func:`matplotlib.pyplot.subplots`.
    """
    fig, axes = plt.subplots(nrows, ncols, figsize=size, squeeze=False, **kw)
    return fig, (axes[0, 0] if axes.size == 1 else axes)


def draw_primaries(ax, system, view="xy", labels=True, min_radius=0.004, front=1, box=None):
    """The two primaries as discs to scale (at least ``min_radius`` LU so they stay visible).
    In the y-z view (seen along x) both primaries project onto the origin: only the one in
    front is drawn (``front``: 1 the smaller primary, the default; 0 the larger;
    :func:`draw_smaller_primary`). With ``box`` (umin, umax, vmin, vmax) a primary wholly
    outside it is left out (and out of the legend).

    Parameters
    ----------
    ax : matplotlib Axes
    system : System
        Its ``positions`` (LU), ``radii`` (LU) and ``names`` are drawn.
    view : {"xy", "xz", "yz"}
    labels : bool
        Name each primary beside it.
    min_radius : float
        Smallest drawn radius, LU.
    front : {0, 1}
        The primary drawn in the y-z view.
    box : (umin, umax, vmin, vmax), optional
        Frame of the figure, LU.

    Returns
    -------
    ax : matplotlib Axes

    Raises
    ------
    KeyError
        An unknown ``view``.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.plotting.base import new_figure, draw_primaries
    >>> fig, ax = new_figure()
    >>> ax = draw_primaries(ax, system("earth-moon"))
    >>> sorted(p.get_gid() for p in ax.patches)
    ['primary-1', 'primary-2']

    References
    ----------
    .. [1] matplotlib documentation, :class:`matplotlib.patches.Circle`.
    """
    if view == "yz":
        return draw_smaller_primary(ax, system, min_radius=min_radius, labels=labels, k=front)
    i, j = VIEWS[view]
    r1, r2 = system.radii
    names = system.names
    for k, (x, r, name) in enumerate(zip(system.positions, (r1, r2), names)):
        centre = [0.0, 0.0, 0.0]
        centre[0] = x
        rr = max(r, min_radius)
        if box is not None and not (box[0] - rr <= centre[i] <= box[1] + rr and box[2] - rr <= centre[j] <= box[3] + rr):
            continue
        ax.add_patch(Circle((centre[i], centre[j]), rr, color=PRIMARY_COLOURS[k],
                            zorder=5, label=f"{name} (to scale)" if r > min_radius else f"{name}",
                            gid=f"primary-{k + 1}"))
        if labels:
            ax.annotate(name, (centre[i], centre[j]), textcoords="offset points", xytext=(4, 6),
                        fontsize=8, zorder=6)
    return ax


def draw_smaller_primary(ax, system, min_radius=0.0, labels=True, k=1):
    """The smaller primary (``k`` = 1; the larger with ``k`` = 0) in the y-z view, where it
    sits at (0, 0) in front of the other (to scale when its radius exceeds ``min_radius`` LU).

    Parameters
    ----------
    ax : matplotlib Axes
    system : System
    min_radius : float
        Smallest drawn radius, LU.
    labels : bool
        Name it (and the primary behind it).
    k : {0, 1}
        Which primary is in front.

    Returns
    -------
    ax : matplotlib Axes

    Raises
    ------
    IndexError
        ``k`` not 0 or 1.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.plotting.base import new_figure, draw_smaller_primary
    >>> fig, ax = new_figure()
    >>> [p.get_gid() for p in draw_smaller_primary(ax, system("earth-moon")).patches]
    ['primary-2']

    References
    ----------
    .. [1] matplotlib documentation, :class:`matplotlib.patches.Circle`.
    """
    r = system.radii[k]
    name = system.names[k]
    ax.add_patch(Circle((0.0, 0.0), max(r, min_radius), color=PRIMARY_COLOURS[k], zorder=5,
                        label=f"{name} (to scale)" if r > min_radius else name, gid=f"primary-{k + 1}"))
    if labels:
        ax.annotate(f"{name} ({system.names[1 - k]} behind, on the x axis)", (0.0, 0.0),
                    textcoords="offset points", xytext=(4, 6), fontsize=7, zorder=6)
    return ax


def draw_lagrange_points(ax, system, view="xy", points=None, labels=True, include_out_of_plane=None,
                         box=None):
    """Mark and label the Lagrange points of ``system`` on ``ax`` (coordinates in LU), with the
    one marker style of every figure (:data:`LAGRANGE_STYLE`).

    Parameters
    ----------
    points : list of LagrangePoint, optional
        Precomputed points (default: :func:`cr3bp.equilibria.lagrange_points`).
    include_out_of_plane : bool, optional
        Draw L4/L5 in views that do not contain them (projected); default only for "xy".
    box : (umin, umax, vmin, vmax), optional
        Only the points inside this frame. Points that project onto one spot share a label.
    ax : matplotlib Axes
    system : System
    view : {"xy", "xz", "yz"}
    labels : bool
        Name the points.

    Returns
    -------
    ax : matplotlib Axes

    Raises
    ------
    KeyError
        An unknown ``view``.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.plotting.base import new_figure, draw_lagrange_points
    >>> fig, ax = new_figure()
    >>> line = draw_lagrange_points(ax, system("earth-moon")).lines[0]
    >>> line.get_gid(), len(line.get_xdata())
    ('lagrange-points', 5)

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, ch. 4 (the five equilibrium points).
    """
    pts = points if points is not None else lagrange_points(system)
    i, j = VIEWS[view]
    if include_out_of_plane is None:
        include_out_of_plane = view == "xy"
    spots = {}
    for p in pts:
        if not include_out_of_plane and not p.collinear:
            continue
        u, v = float(p.position[i]), float(p.position[j])
        if box is not None and not (box[0] <= u <= box[1] and box[2] <= v <= box[3]):
            continue
        spots.setdefault((round(u, 12), round(v, 12)), []).append(p.name)
    xs = [u for u, _ in spots]
    ys = [v for _, v in spots]
    if labels:
        for (u, v), names in spots.items():
            ax.annotate(", ".join(names), (u, v), textcoords="offset points", xytext=(5, -11), fontsize=8,
                        color=LAGRANGE_COLOUR, zorder=7)
    ax.plot(xs, ys, label="Lagrange points", gid=LAGRANGE_GID, **LAGRANGE_STYLE)
    return ax


# ---- axes in km -------------------------------------------------------------------------------

class _ScaledLocator(MaxNLocator):
    """Ticks at round values of ``factor`` times the data (data in LU, ticks at round km)."""

    def __init__(self, factor, **kw):
        super().__init__(**kw)
        self.factor = float(factor)

    def tick_values(self, vmin, vmax):
        return np.asarray(super().tick_values(vmin * self.factor, vmax * self.factor)) / self.factor


def km_scale(system):
    """(km per axis unit, unit text): 10³ km below 10⁷ km per LU, else 10⁶ km.

    Parameters
    ----------
    system : System
        Its ``length_km`` (km per LU) picks the unit.

    Returns
    -------
    (float, str)

    Raises
    ------
    AttributeError
        A system without a length unit.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.plotting.base import km_scale
    >>> km_scale(system("earth-moon")), km_scale(system("sun-earth"))
    ((1000.0, '10³ km'), (1000000.0, '10⁶ km'))

    References
    ----------
    .. [1] Common practice: axis ticks at round multiples of a decimal unit.
    """
    return (1.0e3, "10³ km") if system.length_km < 1.0e7 else (1.0e6, "10⁶ km")


def _tick_text(v):
    t = f"{v:.6g}"
    return "0" if t in ("-0", "0") else t


def axis_labels(ax, system, view="xy", unit=None, secondary=True):
    """Axis labels of a rotating-frame view. Dimensional systems read in km (ticks at round
    10³ or 10⁶ km; the data stay in LU) with LU on a secondary x axis on top; nondimensional
    systems in LU.

    Parameters
    ----------
    ax : matplotlib Axes
    system : System
    view : {"xy", "xz", "yz"}
    unit : {None, "LU"}
        ``"LU"`` forces nondimensional labels.
    secondary : bool
        Add the LU axis on top (dimensional systems).

    Returns
    -------
    ax : matplotlib Axes

    Raises
    ------
    KeyError
        An unknown ``view``.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.plotting.base import new_figure, axis_labels
    >>> fig, ax = new_figure()
    >>> axis_labels(ax, system("earth-moon")).get_xlabel()
    'x [10³ km] (rotating frame, barycentric)'

    References
    ----------
    .. [1] matplotlib documentation, "Secondary Axis" example.
    """
    i, j = VIEWS[view]
    names = "xyz"
    if unit == "LU" or not getattr(system, "dimensional", False):
        ax.set_xlabel(f"{names[i]} [LU] (rotating frame, barycentric)")
        ax.set_ylabel(f"{names[j]} [LU]")
        return ax
    per, text = km_scale(system)
    f = system.length_km / per
    scaled_axis(ax.xaxis, f, f"{names[i]} [{text}] (rotating frame, barycentric)",
                f"{names[i]} [LU]" if secondary else None)
    scaled_axis(ax.yaxis, f, f"{names[j]} [{text}]")
    return ax


def scaled_axis(axis, factor, label, secondary_label=None):
    """Show a nondimensional data axis in a physical unit: ticks at round multiples of the unit
    (``factor`` units per data unit) labelled ``label``; with ``secondary_label`` an x axis also
    gets the data unit on top (:meth:`~matplotlib.axes.Axes.secondary_xaxis`, identity
    functions since the data are nondimensional).

    Parameters
    ----------
    axis : matplotlib XAxis or YAxis
    factor : float
        Physical units per data unit.
    label : str
    secondary_label : str, optional

    Returns
    -------
    axis : the same axis

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.plotting.base import new_figure, scaled_axis
    >>> fig, ax = new_figure()
    >>> ax.set_xlim(0.0, 1.0)
    (0.0, 1.0)
    >>> axis = scaled_axis(ax.xaxis, 384.4, "x [10³ km]")
    >>> axis.get_major_formatter()(0.5, 0), axis.get_label_text()
    ('192.2', 'x [10³ km]')

    References
    ----------
    .. [1] matplotlib documentation, :class:`matplotlib.ticker.MaxNLocator` and
       :meth:`matplotlib.axes.Axes.secondary_xaxis`.
    """
    ax = axis.axes
    axis.set_major_locator(_ScaledLocator(factor, nbins=6, steps=[1, 2, 2.5, 5, 10]))
    axis.set_major_formatter(FuncFormatter(lambda u, _, f=factor: _tick_text(u * f)))
    axis.set_label_text(label)
    if secondary_label and axis is ax.xaxis:
        sx = ax.secondary_xaxis("top", functions=(lambda u: u, lambda u: u))
        sx.set_xlabel(secondary_label, fontsize=7, labelpad=2)
        sx.tick_params(labelsize=6.5)
        sx.xaxis.set_major_locator(MaxNLocator(nbins=5))
        ax._librate_top_axis = True
    return axis


def title(ax, text, **kw):
    """Axes title clear of a secondary axis on top.

    Parameters
    ----------
    ax : matplotlib Axes
    text : str
    **kw
        Passed to :meth:`matplotlib.axes.Axes.set_title` (font size 9 unless given).

    Returns
    -------
    matplotlib Text

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.plotting.base import new_figure, title
    >>> fig, ax = new_figure()
    >>> title(ax, "x-y view").get_text()
    'x-y view'

    References
    ----------
    .. [1] matplotlib documentation, :meth:`matplotlib.axes.Axes.set_title`.
    """
    pad = 30 if getattr(ax, "_librate_top_axis", False) else 6
    kw.setdefault("fontsize", 9)
    return ax.set_title(text, pad=pad, **kw)


# ---- legends and colour bars beside the data --------------------------------------------------

def legend_beside(ax, handles=None, where="right", **kw):
    """A legend outside the data area: ``right`` of ``ax`` or ``above`` it. The figure's right
    margin is fitted to it when the figure is captioned (:func:`caption`).

    Parameters
    ----------
    ax : matplotlib Axes
    handles : list of artists, optional
        Default: the labelled artists of ``ax``.
    where : {"right", "above"}
    **kw
        Passed to :meth:`matplotlib.axes.Axes.legend`.

    Returns
    -------
    matplotlib Legend

    Raises
    ------
    ValueError
        ``where`` not "right" or "above".

    Examples
    --------
    >>> from cr3bp.plotting.base import new_figure, legend_beside
    >>> fig, ax = new_figure()
    >>> _ = ax.plot([0, 1], [0, 1], label="orbit")
    >>> leg = legend_beside(ax)
    >>> leg.get_gid(), [t.get_text() for t in leg.get_texts()]
    ('outside-data', ['orbit'])

    References
    ----------
    .. [1] matplotlib documentation, "Legend guide" (placing a legend outside the axes with
       ``bbox_to_anchor``).
    """
    kw.setdefault("fontsize", 7)
    kw.setdefault("framealpha", 0.9)
    if where == "right":
        kw.update(loc="upper left", bbox_to_anchor=(1.02, 1.0), borderaxespad=0.0)
    elif where == "above":
        kw.update(loc="lower left", bbox_to_anchor=(0.0, 1.02), borderaxespad=0.0, ncol=kw.get("ncol", 2))
    else:
        raise ValueError(where)
    leg = ax.legend(handles=handles, **kw) if handles is not None else ax.legend(**kw)
    leg.set_gid(OUTSIDE_GID)
    return leg


def colorbar_beside(ax, mappable, label, size="4%", pad=0.12):
    """A colour bar in its own axes to the right of ``ax`` (it follows the axes when the
    layout changes, so it never covers data).

    Parameters
    ----------
    ax : matplotlib Axes
    mappable : matplotlib ScalarMappable
        What the bar describes (a scatter or image).
    label : str
    size, pad : str or float
        Width of the bar and gap, as :meth:`~mpl_toolkits.axes_grid1.axes_divider.AxesDivider.append_axes` takes them.

    Returns
    -------
    matplotlib Colorbar

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.plotting.base import new_figure, colorbar_beside
    >>> fig, ax = new_figure()
    >>> cb = colorbar_beside(ax, ax.scatter([0, 1], [0, 1], c=[0.0, 1.0]), "Jacobi constant")
    >>> cb.ax.get_gid(), cb.ax.get_ylabel()
    ('outside-data', 'Jacobi constant')

    References
    ----------
    .. [1] matplotlib documentation, "Colorbar with AxesDivider" example.
    """
    cax = make_axes_locatable(ax).append_axes("right", size=size, pad=pad)
    cax.set_gid(OUTSIDE_GID)
    cb = ax.figure.colorbar(mappable, cax=cax, label=label)
    return cb


def _fit_margins(fig):
    """Shrink the subplots' area until legends beside the axes fit inside the figure (secant
    steps on the right margin: an equal-aspect axes moves by less than its slot)."""
    legends = [a.get_legend() for a in fig.axes if a.get_legend() is not None
               and a.get_legend().get_gid() == OUTSIDE_GID]
    if not legends:
        return
    w = fig.bbox.width
    prev = None
    for _ in range(6):
        fig.canvas.draw()
        right = fig.subplotpars.right
        x1 = max(leg.get_window_extent().x1 for leg in legends)
        over = x1 - 0.98 * w     # text at the saving dpi runs a little wider: 2 % slack
        if over <= 0 or right <= 0.3:
            return
        slope = w
        if prev is not None and prev[0] != right and (x1 - prev[1]) / (right - prev[0]) > 0.05 * w:
            slope = (x1 - prev[1]) / (right - prev[0])
        prev = (right, x1)
        fig.subplots_adjust(right=max(right - over / slope, 0.3))


def caption(fig, text="", model="cr3bp"):
    """Bottom caption: the given text, then the caution for ``model`` (always, once per figure).

    Parameters
    ----------
    fig : matplotlib Figure
    text : str
        Lines before the caution.
    model : str
        The model whose caution is added (:func:`cr3bp.cautions.caution_short`).

    Returns
    -------
    fig : matplotlib Figure

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.cautions import caution_short
    >>> from cr3bp.plotting.base import new_figure, caption
    >>> fig, ax = new_figure()
    >>> text = caption(fig, "L1 Lyapunov orbit").texts[0].get_text()
    >>> text.startswith("L1 Lyapunov orbit"), text.endswith(caution_short("cr3bp"))
    (True, True)

    References
    ----------
    .. [1] Common practice: a figure caption stating the model its numbers belong to.
    """
    body = (text + "\n" if text else "") + caution_short(model)
    fig.text(0.5, 0.005, body, ha="center", va="bottom", fontsize=6.5, wrap=True, color="0.25",
             gid="caption")
    fig.subplots_adjust(bottom=max(0.16, fig.subplotpars.bottom))
    _fit_margins(fig)
    return fig


def save(fig, path, text="", dpi=150, model="cr3bp"):
    """Caption ``fig`` with ``text`` and the caution for ``model``, save it atomically to
    ``path``, close it.

    Parameters
    ----------
    fig : matplotlib Figure
    path : str or path-like
        File written (format from the suffix).
    text : str
        Caption lines before the caution.
    dpi : int
    model : str
        The model whose caution is added.

    Returns
    -------
    path : the given ``path``

    Raises
    ------
    OSError
        The file cannot be written (nothing is left under ``path``).

    Examples
    --------
    >>> from cr3bp.plotting.base import new_figure, save
    >>> fig, ax = new_figure()
    >>> save(fig, "out/figure.png", text="demo")  # doctest: +SKIP
    'out/figure.png'

    References
    ----------
    .. [1] matplotlib documentation, :meth:`matplotlib.figure.Figure.savefig`.
    """
    caption(fig, text, model)
    save_figure(fig, path, dpi=dpi)
    plt.close(fig)
    return path
