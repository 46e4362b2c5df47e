"""A content key of a matplotlib figure, so that a rerun can reuse the files a figure gave
before instead of drawing it again.

Drawing is most of an unchanged scenario's rerun (text layout and rasterising, once to fit
the caption and once per format). A figure's files depend only on what its artists hold
(data, text, colours, styles, limits, positions), on the code that built and saved it, on
matplotlib's version and settings, and on the format and resolution. :func:`fingerprint`
hashes the first from the artists' public getters; :func:`code_key` hashes the rest that
does not change within a run (every source file of the package, matplotlib's version and
``rcParams``). Anything the hash cannot read exactly -- an artist type not in
:data:`KNOWN_ARTISTS`, or a value of a type it does not know -- makes the figure
unkeyed (``None``): it is then drawn, never reused. A stale figure would be a silent wrong
output, so the rule is: when in doubt, draw.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import numpy as np

__all__ = ["KNOWN_ARTISTS", "code_key", "fingerprint"]

#: Artist types whose look is fully given by the getters in :data:`_GETTERS` (and the
#: extras in :func:`_artist`). A figure holding any other artist is not keyed.
KNOWN_ARTISTS = frozenset({
    "Figure", "Axes", "Axes3D", "Line2D", "Line3D", "Text", "Annotation", "Spine", "XAxis",
    "YAxis", "ZAxis", "XTick", "YTick", "Legend", "LineCollection", "PathCollection",
    "PolyCollection", "QuadMesh", "Rectangle", "Polygon", "Circle", "Ellipse", "Wedge",
    "FancyBboxPatch", "FancyArrowPatch", "PathPatch", "AxesImage", "VPacker", "HPacker",
    "DrawingArea", "TextArea", "Line3DCollection", "Path3DCollection", "Poly3DCollection",
    "Patch3D", "Patch3DCollection", "Text3D", "_AxLine", "FillBetweenPolyCollection",
    "ContourSet", "QuadContourSet", "TriContourSet", "Colorbar", "Shadow", "OffsetBox",
    "AnchoredOffsetbox", "PaddedBox", "SecondaryAxis", "_ColorbarSpine",
})

#: Getters read from every artist that has them (no renderer needed, no side effect).
_GETTERS = (
    "get_text", "get_position", "get_fontsize", "get_fontweight", "get_fontfamily",
    "get_fontstyle", "get_color", "get_rotation", "get_horizontalalignment",
    "get_verticalalignment", "get_linespacing", "get_wrap", "get_xydata", "get_linestyle",
    "get_linewidth", "get_marker", "get_markersize", "get_markerfacecolor",
    "get_markeredgecolor", "get_markeredgewidth", "get_fillstyle", "get_drawstyle",
    "get_markevery", "get_dash_capstyle", "get_solid_capstyle", "get_alpha", "get_zorder",
    "get_visible", "get_label", "get_offsets", "get_paths", "get_facecolor", "get_edgecolor",
    "get_linewidths", "get_linestyles", "get_sizes", "get_array", "get_clim", "get_cmap",
    "get_extent", "get_interpolation", "get_xlim", "get_ylim", "get_zlim", "get_xscale",
    "get_yscale", "get_aspect", "get_adjustable", "get_anchor", "get_path", "get_xy",
    "get_width", "get_height", "get_angle", "get_hatch", "get_fill", "get_clip_on",
    "get_antialiased", "get_frame_on", "get_axis_on", "get_title", "get_box_aspect",
    "get_elev", "get_azim", "get_roll", "get_proj_type", "get_facecolors", "get_edgecolors",
)

#: Private attributes read where a type keeps its data there (3-D lines and scatters,
#: annotations, legends).
_ATTRIBUTES = ("_verts3d", "_offsets3d", "_segments3d", "xy", "xyann", "_loc", "_ncols",
               "_zdir", "_sort_zpos", "elev", "azim", "roll", "_location", "_orientation")

_code_key: str | None = None


class _Unkeyed(Exception):
    """A value or artist the fingerprint cannot read exactly."""


def code_key() -> str:
    """Hash of what a figure's files depend on besides its artists: every ``.py`` file of the
    :mod:`cr3bp` package (any code change redraws every figure), matplotlib's and numpy's
    versions and the ``rcParams`` in force. Computed once per process.

    Returns
    -------
    str
        64 hexadecimal digits.

    Raises
    ------
    None

    References
    ----------
    .. [1] NIST FIPS 180-4, *Secure Hash Standard*, 2015 (SHA-256).

    Examples
    --------
    >>> len(code_key())
    64
    """
    global _code_key
    if _code_key is None:
        import matplotlib  # lazy: heavy library
        h = hashlib.sha256()
        root = Path(__file__).resolve().parent.parent
        for p in sorted(root.rglob("*.py")):
            h.update(str(p.relative_to(root)).encode())
            h.update(p.read_bytes())
        h.update(f"{matplotlib.__version__}|{np.__version__}".encode())
        _code_key = h.hexdigest()
    import matplotlib  # lazy: heavy library
    h = hashlib.sha256(_code_key.encode())
    for k in sorted(matplotlib.rcParams.keys()):
        h.update(f"{k}={matplotlib.rcParams[k]!r};".encode())
    return h.hexdigest()


def fingerprint(fig, *extra) -> str | None:
    """The content key of ``fig`` (and of ``extra`` plain values, e.g. the caption, the format
    and the resolution), or None when the figure holds something the key cannot read.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        Before it is drawn or saved.
    *extra : str, float, int, tuple or None
        Further inputs of the files (caption text, format, dpi).

    Returns
    -------
    str or None
        64 hexadecimal digits, equal for two figures only if their artists hold the same
        data, text and style and the code and matplotlib settings are the same.

    Raises
    ------
    None

    References
    ----------
    .. [1] NIST FIPS 180-4, *Secure Hash Standard*, 2015 (SHA-256).
    .. [2] J. D. Hunter, "Matplotlib: A 2D graphics environment", *Computing in Science &
       Engineering* 9(3), 2007 (the artist tree the key walks).

    Examples
    --------
    >>> import matplotlib
    >>> matplotlib.use("Agg")
    >>> import matplotlib.pyplot as plt
    >>> def draw(y):
    ...     fig, ax = plt.subplots()
    ...     ax.plot([0, 1], [0, y])
    ...     return fig
    >>> a, b, c = draw(1.0), draw(1.0), draw(2.0)
    >>> fingerprint(a, "png") == fingerprint(b, "png") != fingerprint(c, "png")
    True
    >>> plt.close("all")
    """
    h = hashlib.sha256(code_key().encode())
    try:
        _feed(h, extra)
        _walk(h, fig, set())
    except _Unkeyed:
        return None
    return h.hexdigest()


def _walk(h, artist, seen):
    if id(artist) in seen:
        h.update(b"<seen>")
        return
    seen.add(id(artist))
    name = type(artist).__name__
    if name not in KNOWN_ARTISTS:
        raise _Unkeyed(name)
    h.update(name.encode())
    _artist(h, artist)
    children = artist.get_children()
    h.update(f"[{len(children)}".encode())
    for c in children:
        _walk(h, c, seen)
    h.update(b"]")


def _artist(h, a):
    settle = getattr(a, "_ensure_position_is_set", None)
    if settle is not None:               # a spine sets its default position lazily: settle it
        try:                             # (a colour bar's outline stores it, then refuses the
            settle()                     # transform: the position is what the key reads)
        except ValueError:
            pass
    for g in _GETTERS:
        f = getattr(a, g, None)
        if f is None or not callable(f):
            continue
        try:
            v = f()
        except Exception:               # a getter that needs arguments or a renderer
            continue
        h.update(g.encode())
        _feed(h, v)
    for attr in _ATTRIBUTES:
        if hasattr(a, attr):
            h.update(attr.encode())
            _feed(h, getattr(a, attr))
    t = getattr(a, "get_transform", None)
    if t is not None:                            # data, axes or figure coordinates
        try:
            m = t().get_affine().get_matrix()
        except Exception:
            m = None
        _feed(h, m)
    for f in getattr(a, "_functions", None) or ():   # a secondary axis: its conversion
        _callable(h, f)
    axis_of = getattr(a, "get_major_locator", None)
    if axis_of is not None:                      # an Axis: how its ticks are placed and labelled
        for obj in (a.get_major_locator(), a.get_minor_locator(), a.get_major_formatter(),
                    a.get_minor_formatter()):
            _ticker(h, obj)


def _ticker(h, obj):
    h.update(type(obj).__name__.encode())
    for k, v in sorted(vars(obj).items()):
        if k in ("axis",):
            continue
        h.update(k.encode())
        if callable(v):                          # a FuncFormatter's function
            _callable(h, v)
            continue
        try:
            _feed(h, v)
        except _Unkeyed:
            # e.g. the formatter's offset text, set at draw time from the (keyed) limits
            h.update(f"{k}:{type(v).__name__}".encode())


def _callable(h, f):
    """A function: its code is in :func:`code_key`; what it closes over and its defaults are
    data, keyed here (a value the key cannot read makes the figure unkeyed)."""
    if isinstance(f, np.ufunc):
        _feed(h, f.__name__)
        return
    code = getattr(f, "__code__", None)
    if code is None:
        raise _Unkeyed(type(f).__name__)
    _feed(h, (f.__module__, f.__qualname__, code.co_firstlineno))
    _feed(h, f.__defaults__)
    _feed(h, [c.cell_contents for c in (f.__closure__ or ())])


def _feed(h, v):
    if v is None or isinstance(v, (bool, int, float, str, np.floating, np.integer, np.bool_)):
        h.update(f"{type(v).__name__}:{v!r};".encode())
        return
    if isinstance(v, np.ma.MaskedArray):
        _feed(h, np.ma.getdata(v))
        _feed(h, np.ma.getmaskarray(v))
        return
    if isinstance(v, np.ndarray):
        if v.dtype == object:
            _feed(h, v.tolist())
            return
        a = np.ascontiguousarray(v)
        h.update(f"nd{a.dtype.str}{a.shape};".encode())
        h.update(a.tobytes())
        return
    if isinstance(v, (list, tuple)):
        h.update(f"({len(v)}".encode())
        for x in v:
            _feed(h, x)
        h.update(b")")
        return
    if isinstance(v, dict):
        _feed(h, sorted((str(k), x) for k, x in v.items()))
        return
    if callable(v) and (hasattr(v, "__code__") or isinstance(v, np.ufunc)):
        _callable(h, v)
        return
    kind = type(v).__name__
    if kind == "Path":
        _feed(h, (v.vertices, v.codes))
    elif kind in ("Bbox", "TransformedBbox"):
        _feed(h, tuple(float(x) for x in v.bounds))
    elif kind in ("ListedColormap", "LinearSegmentedColormap"):
        _feed(h, (v.name, v(np.linspace(0.0, 1.0, 256))))
    elif kind == "MarkerStyle":
        _feed(h, (v.get_marker() if isinstance(v.get_marker(), str) else repr(v.get_marker()),
                  v.get_fillstyle()))
    elif kind in ("Text", "Text3D"):
        _feed(h, (v.get_text(), v.get_position(), v.get_fontsize()))
    elif kind == "FontProperties":
        _feed(h, (v.get_family(), v.get_size(), v.get_weight(), v.get_style()))
    else:
        raise _Unkeyed(kind)
