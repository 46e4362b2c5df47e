"""Figure of a torus family: the members' invariance circles in the x-y and x-z views, and the
rotation and stroboscopic time against the amplitude."""

from __future__ import annotations

import numpy as np
from .circle import evaluate, resample


def plot_family(fam, title=None):
    """Figure of a torus family: the members' invariance circles in the x-y and x-z views
    (colour: member order) and the rotation and stroboscopic time against the amplitude.

    Parameters
    ----------
    fam : cr3bp.tori.family.TorusFamily
        At least one member.
    title : str, optional
        The figure's title (default: system, family, point, held quantity, member count).

    Returns
    -------
    matplotlib.figure.Figure

    Raises
    ------
    IndexError
        The family has no members.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> from cr3bp.tori.torus import example_torus
    >>> t = example_torus(amplitude_lu=1e-3)                 # hand-made, not solved
    >>> from cr3bp.tori.family import TorusFamily
    >>> from cr3bp.tori.figures import plot_family
    >>> fig = plot_family(TorusFamily((t, t), "jacobi", "members"))
    >>> len(fig.axes)                       # two views, the rotation and its twin axis
    4

    References
    ----------
    Common practice (family diagrams as in Baresi, Olikara & Scheeres 2018).
    """
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


def interactive_figure(torus, name=None, n_circle=48, n_time=160, fig=None, colour="#1b9e77"):
    """A quasi-periodic torus (:class:`cr3bp.tori.Torus`): its surface, swept by the
    trajectories of ``n_circle`` points of its invariance circle over one stroboscopic period
    (``n_time`` steps; the surface closes on itself around the circle), and the invariance
    circle as a curve. ``fig``: add to an existing figure (plotly, offline).

    It lives with the tori, not in :mod:`cr3bp.plotting.interactive` (whose helpers it uses),
    so that the plotting package does not import the tori package back.

    Parameters
    ----------
    torus : cr3bp.tori.Torus
    name : str, optional
        Its label (default: family, point and branch).
    n_circle : int
        Trajectories sweeping the surface (made odd).
    n_time : int
        Time steps over one stroboscopic period.
    fig : plotly.graph_objects.Figure, optional
        Add to this figure.
    colour : str
        The surface's colour.

    Returns
    -------
    plotly.graph_objects.Figure

    Raises
    ------
    ImportError
        plotly is not installed.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> from cr3bp.tori.torus import example_torus
    >>> t = example_torus(amplitude_lu=1e-3)                 # hand-made, not solved
    >>> from cr3bp.tori.figures import interactive_figure
    >>> fig = interactive_figure(t, n_circle=5, n_time=4)
    >>> "torus surface" in " ".join(tr.name for tr in fig.data)
    True

    References
    ----------
    Common practice (a torus drawn by the trajectories of its invariance circle).
    """
    from ..integrate import propagate_batch          # lazy: heavy library (numba kernels, only when a torus is drawn)
    from ..plotting.interactive import _scale, add_curve, framed, new_figure, require_plotly  # lazy: heavy library (matplotlib, plotly)
    go = require_plotly()
    system = torus.system
    label = name or " ".join(w for w in (torus.family, torus.point, torus.branch) if w) or "torus"
    fig = fig or new_figure(system, f"{system.name}: {label} torus, C = {torus.jacobi:.6f}, stroboscopic "
                                    f"period {torus.stroboscopic_time:.6f} TU (CR3BP)")
    f, unit = _scale(system)
    n = n_circle + (1 - n_circle % 2)                       # odd, as the circle's nodes are
    rows = [resample(torus.circle, n)]
    for _ in range(n_time):               # one batch propagation of the whole circle per step
        rows.append(propagate_batch(system, rows[-1], torus.stroboscopic_time / n_time).states)
    grid = np.array(rows)[:, :, :3] * f
    grid = np.concatenate([grid, grid[:, :1]], axis=1)      # closed around the circle
    fig.add_trace(go.Surface(x=grid[:, :, 0], y=grid[:, :, 1], z=grid[:, :, 2], showscale=False, opacity=0.55,
                             colorscale=[[0, colour], [1, colour]], name=f"{label} torus surface",
                             showlegend=True, hoverinfo="name"))
    ring = evaluate(torus.circle, np.linspace(0.0, 2 * np.pi, 200))
    add_curve(fig, system, ring, f"{label}: invariance circle", colour="#202020", width=5)
    return framed(fig)


def html_page(torus, name=None, description="") -> str:
    """A standalone, offline HTML page of the torus's 3-D view (:func:`interactive_figure`), with
    the full caution and the model the numbers belong to written in the page above the figure.

    Parameters
    ----------
    torus : cr3bp.tori.Torus
        The torus to draw.
    name : str, optional
        Its label in the figure (default: family, point and branch).
    description : str, optional
        One line said under the page's heading (e.g. the request text).

    Returns
    -------
    str
        The page: plotly.js written into it once (about 4.7 MB), nothing fetched from a network.

    Raises
    ------
    ImportError
        plotly is not installed.

    Examples
    --------
    >>> from cr3bp.tori.figures import html_page
    >>> page = html_page(torus)          # doctest: +SKIP
    >>> "CAUTION" in page                # doctest: +SKIP
    True

    References
    ----------
    Offline interactive figures: plotly's ``Figure.to_html(include_plotlyjs=True)``
    (plotly documentation, "Interactive HTML Export in Python").
    """
    from html import escape  # lazy: only when a page is written

    from ..cautions import caution  # lazy: only when a page is written
    fig = interactive_figure(torus, name=name)
    body = fig.to_html(full_html=False, include_plotlyjs=True, include_mathjax=False,
                       config={"displaylogo": False, "responsive": True}, div_id="torus-3d")
    system = torus.system
    label = name or " ".join(w for w in (torus.family, torus.point, torus.branch) if w) or "torus"
    per = (f"{torus.stroboscopic_period_days:.6f} d" if system.dimensional
           else f"{torus.stroboscopic_time:.9f} TU")
    facts = (f"Jacobi constant {torus.jacobi:.12f}; stroboscopic period {per}; rotation "
             f"{torus.rotation_deg:.6f} deg per stroboscopic time; invariance error "
             f"{torus.invariance_error:.1e}. Distances, times and the surface belong to the circular "
             "restricted three-body model (rotating frame).")
    title = f"{system.name}: {label} torus (CR3BP)"
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<title>{escape(title)}</title></head><body style=\"font-family: sans-serif\">\n"
            f"<h1 style=\"font-size: 1.2em\">{escape(title)}</h1>\n"
            f"<p id=\"caution\" class=\"caution\" style=\"border: 2px solid #b00; padding: 0.5em\"><strong>"
            f"{escape(caution())}</strong></p>\n"
            + (f"<p>{escape(description)}</p>\n" if description else "")
            + f"<p>{escape(facts)}</p>\n{body}\n"
            f"<p class=\"caution\">{escape(caution())}</p>\n</body></html>\n")
