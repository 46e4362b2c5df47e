"""Interactive 3-D figures (plotly): orbits, families, tubes and stitched routes in the rotating
frame of the CR3BP, for the HTML report and for notebooks.

plotly is an optional dependency (the ``[interactive]`` extra): it is imported here only, when a
figure is asked for; without it :func:`require_plotly` raises a one-line ImportError naming the
extra. The static PNG/SVG figures (:mod:`cr3bp.plotting`) stay the figures for papers.

Every figure carries the short caution in its title (inside the figure, so a copy of the figure
keeps it) and labels its axes with their unit: km when the system has dimensional units, else
the nondimensional length unit LU. The report embeds plotly.js once per page (offline: no
network, see :func:`report_html`).
"""

from __future__ import annotations

import numpy as np

from ..cautions import caution_short
from .orbits import trajectory

#: colours of the curves, in order (plotly's own default cycle is not relied on)
_COLOURS = ("#d95f02", "#1b9e77", "#7570b3", "#e7298a", "#66a61e", "#e6ab02", "#a6761d", "#666666")


def require_plotly():
    """The plotly.graph_objects module, or a one-line ImportError naming the extra to install.

    Returns
    -------
    module
        :mod:`plotly.graph_objects`.

    Raises
    ------
    ImportError
        plotly is not installed.

    Examples
    --------
    >>> from cr3bp.plotting.interactive import require_plotly
    >>> require_plotly().__name__
    'plotly.graph_objects'

    References
    ----------
    .. [1] plotly documentation, "Graph Objects in Python".
    """
    try:
        import plotly.graph_objects as go  # lazy: heavy library (plotly); a missing install is reported here
    except ImportError:
        raise ImportError("interactive 3-D figures need plotly: pip install 'librate[interactive]'") from None
    return go


def _scale(system):
    """(factor LU -> shown unit, unit name)."""
    return (system.length_km, "km") if system.dimensional else (1.0, "LU")


def new_figure(system, title: str):
    """An empty 3-D figure of ``system``: the primaries, axes labelled with their unit in the
    rotating frame of the CR3BP, equal aspect, and the caution under the title.

    Parameters
    ----------
    system : System
    title : str
        Plain text (escaped for HTML here).

    Returns
    -------
    plotly Figure

    Raises
    ------
    ImportError
        plotly is not installed.

    Examples
    --------
    >>> from cr3bp.cautions import caution_short
    >>> from cr3bp.systems import system
    >>> from cr3bp.plotting.interactive import new_figure
    >>> fig = new_figure(system("earth-moon"), "demo")
    >>> fig.layout.scene.xaxis.title.text, caution_short() in fig.layout.title.text
    ('x [km] (rotating frame, CR3BP)', True)

    References
    ----------
    .. [1] plotly documentation, "3D Surface Plots" and "3D Scatter Plots".
    """
    go = require_plotly()
    f, unit = _scale(system)
    fig = go.Figure()
    (x1, x2), names = system.positions, system.names
    radii = system.radii if system.dimensional else (0.0, 0.0)
    for x, name, r in zip((x1, x2), names, radii):
        if r > 0:                                   # the body to scale, as a sphere
            u, v = np.mgrid[0:2 * np.pi:24j, 0:np.pi:12j]
            fig.add_trace(go.Surface(x=f * (x + r * np.cos(u) * np.sin(v)), y=f * r * np.sin(u) * np.sin(v),
                                     z=f * r * np.cos(v), showscale=False, opacity=0.6, name=name,
                                     colorscale=[[0, "#8c8c8c"], [1, "#8c8c8c"]], hoverinfo="name"))
        fig.add_trace(go.Scatter3d(x=[f * x], y=[0.0], z=[0.0], mode="markers+text", text=[name],
                                   marker=dict(size=3, color="#404040"), name=name, showlegend=False))
    axis = "{} [{}] (rotating frame, CR3BP)"
    fig.update_layout(
        title=dict(text=f"{_esc(title)}<br><sup>{_esc(caution_short())}</sup>", font=dict(size=13)),
        scene=dict(xaxis_title=axis.format("x", unit), yaxis_title=axis.format("y", unit),
                   zaxis_title=axis.format("z", unit)),
        margin=dict(l=0, r=0, t=70, b=0), height=620, legend=dict(x=0.0, y=0.95))
    return fig


def _esc(text: str) -> str:
    return str(text).replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def add_curve(fig, system, states, name, colour=None, width=4, showlegend=True, group=None):
    """A trajectory (n, >=3) in LU, drawn in the figure's unit.

    Parameters
    ----------
    fig : plotly Figure
        From :func:`new_figure`.
    system : System
    states : (n, >=3) array
        Positions in LU (velocities ignored).
    name : str
        Legend entry.
    colour : str, optional
        Line colour (default: the next of the project's cycle).
    width : float
    showlegend : bool
    group : str, optional
        Legend group (default ``name``).

    Returns
    -------
    fig : the same figure

    Raises
    ------
    ImportError
        plotly is not installed.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.plotting.interactive import new_figure, add_curve
    >>> em = system("earth-moon")
    >>> fig = add_curve(new_figure(em, "demo"), em, [[0.8, 0, 0], [0.9, 0, 0]], "arc")
    >>> fig.data[-1].name, round(float(fig.data[-1].x[1]))
    ('arc', 345960)

    References
    ----------
    .. [1] plotly documentation, "3D Line Plots".
    """
    go = require_plotly()
    f, unit = _scale(system)
    s = np.asarray(states, dtype=float)[:, :3] * f
    fig.add_trace(go.Scatter3d(x=s[:, 0], y=s[:, 1], z=s[:, 2], mode="lines", name=name,
                               line=dict(width=width, color=colour or _COLOURS[len(fig.data) % len(_COLOURS)]),
                               legendgroup=group or name, showlegend=showlegend,
                               hovertemplate=f"{_esc(name)}<br>x %{{x:.6g}} {unit}<br>y %{{y:.6g}} {unit}"
                                             f"<br>z %{{z:.6g}} {unit}<extra></extra>"))
    return fig


def framed(fig):
    """Equal scale on the three axes (the largest span shown as 1) and a camera from below-left
    and above, far enough that the whole box is in view.

    Parameters
    ----------
    fig : plotly Figure

    Returns
    -------
    fig : the same figure

    Raises
    ------
    ValueError
        A figure without data.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.plotting.interactive import new_figure, add_curve, framed
    >>> em = system("earth-moon")
    >>> fig = framed(add_curve(new_figure(em, "demo"), em, [[0.8, 0, 0], [0.9, 0, 0.01]], "arc"))
    >>> fig.layout.scene.aspectmode, float(fig.layout.scene.aspectratio.x)
    ('manual', 1.0)

    References
    ----------
    .. [1] plotly documentation, "3D Axes" (``aspectmode``, ``aspectratio``) and "3D Camera
       Controls".
    """
    pts = [np.asarray(getattr(t, c), dtype=float).ravel() for t in fig.data for c in "xyz"]
    lo = [min(np.nanmin(pts[k]) for k in range(c, len(pts), 3)) for c in range(3)]
    hi = [max(np.nanmax(pts[k]) for k in range(c, len(pts), 3)) for c in range(3)]
    span = [max(h - l, 1e-9) for l, h in zip(lo, hi)]
    big = max(span)
    fig.update_layout(scene=dict(aspectmode="manual",
                                 aspectratio=dict(zip("xyz", (max(v / big, 0.05) for v in span))),
                                 camera=dict(eye=dict(x=-0.45, y=-1.0, z=0.6))))
    return fig


def _orbit_name(o):
    return " ".join(w for w in (o.family, o.point, o.branch) if w) or "periodic"


def orbit_figure(orbit, name=None, n=600, fig=None, colour=None):
    """One periodic orbit over one period (``fig``: add to an existing figure).

    Parameters
    ----------
    orbit : PeriodicOrbit
    name : str, optional
        Legend name (default: family, point, branch).
    n : int
        Samples over the period.
    fig : plotly Figure, optional
    colour : str, optional

    Returns
    -------
    plotly Figure

    Raises
    ------
    ImportError
        plotly is not installed.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> from cr3bp.plotting.interactive import orbit_figure
    >>> orbit_figure(orbit, n=50).data[-1].name
    'lyapunov L1 (C = 3.188281)'

    References
    ----------
    .. [1] plotly documentation, "3D Line Plots".
    """
    label = name or _orbit_name(orbit)
    fig = fig or new_figure(orbit.system, f"{orbit.system.name}: {label} orbit, C = {orbit.jacobi:.6f} (CR3BP)")
    return framed(add_curve(fig, orbit.system, trajectory(orbit, n), f"{label} (C = {orbit.jacobi:.6f})", colour))


def family_figure(family, max_curves=20, n=300):
    """Up to ``max_curves`` members, evenly picked along the family.

    Parameters
    ----------
    family : Family
    max_curves : int
    n : int
        Samples per member.

    Returns
    -------
    plotly Figure

    Raises
    ------
    ImportError
        plotly is not installed.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import continuation, families
    >>> fam = families.grow_family(system("earth-moon"), "lyapunov", "L1", stops=continuation.Stops(max_members=3))
    >>> from cr3bp.plotting.interactive import family_figure
    >>> fig = family_figure(fam, n=50)
    >>> sum(1 for d in fig.data if d.name.startswith("C = "))
    3

    References
    ----------
    .. [1] plotly documentation, "3D Line Plots".
    """
    m = family.members
    name = " ".join(w for w in (family.family, family.point, family.branch) if w)
    pick = np.unique(np.linspace(0, len(m) - 1, min(len(m), max_curves)).round().astype(int)) if m else []
    fig = new_figure(family.system, f"{family.system.name}: {name} family, {len(pick)} of {len(m)} members (CR3BP)")
    for k in pick:
        add_curve(fig, family.system, trajectory(m[k], n), f"C = {m[k].jacobi:.6f}", width=2)
    return framed(fig)


def tube_figure(tube, max_trajectories=40, n=200):
    """Up to ``max_trajectories`` of the tube's trajectories (one legend entry).

    Parameters
    ----------
    tube : Tube
        From :func:`cr3bp.tubes.manifolds.grow_tube`.
    max_trajectories : int
    n : int
        Samples per trajectory.

    Returns
    -------
    plotly Figure

    Raises
    ------
    ImportError
        plotly is not installed.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.tubes import manifolds
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 0.01)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> tube = manifolds.grow_tube(orbit, "unstable", "interior", 4, until="time:2d")
    >>> from cr3bp.plotting.interactive import tube_figure
    >>> fig = tube_figure(tube, n=20)
    >>> sum(1 for d in fig.data if d.name == tube.label)
    4

    References
    ----------
    .. [1] plotly documentation, "Legends" (``legendgroup``).
    """
    fig = new_figure(tube.system, f"{tube.label}: {tube.n} trajectories (CR3BP)")
    step = max(1, tube.n // max_trajectories)
    for k, (_, s) in enumerate(tube.trajectories(n, indices=range(0, tube.n, step))):
        add_curve(fig, tube.system, s, tube.label, colour="#7570b3", width=2, showlegend=(k == 0),
                  group="tube")
    return framed(fig)


def route_figure(stitched, orbits=(), title=None):
    """A stitched route (:class:`cr3bp.transfers.stitch.StitchedRoute`): its continuous
    trajectory, one colour per shooting segment group, its maneuvers as markers, and the
    ``orbits`` it joins (thin).

    Parameters
    ----------
    stitched : StitchedRoute
    orbits : sequence of PeriodicOrbit
        The orbits the route joins.
    title : str, optional
        Default: the route's nodes, dv and time of flight (CR3BP).

    Returns
    -------
    plotly Figure

    Raises
    ------
    ImportError
        plotly is not installed.

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import EXAMPLE_NODE_LIST, parse_nodes
    >>> from cr3bp.transfers.graph import build_graph
    >>> from cr3bp.transfers.search import best_routes
    >>> from cr3bp.transfers.stitch import stitch_route
    >>> from cr3bp.plotting.interactive import route_figure
    >>> em = system("earth-moon")
    >>> nodes = parse_nodes(EXAMPLE_NODE_LIST, em)
    >>> a, b = (n.id for n in nodes.nodes)
    >>> route = best_routes(build_graph(em, nodes, workers=1).graph, a, b)[0]
    >>> fig = route_figure(stitch_route(em, route, optimise=False))
    >>> [d.name for d in fig.data if d.name.startswith("route")]
    ['route a -> b']

    References
    ----------
    .. [1] plotly documentation, "3D Scatter Plots".
    """
    go = require_plotly()
    system = stitched.system
    path = " -> ".join(str(n) for n in stitched.nodes)
    fig = new_figure(system, title or f"route {path}: Δv {stitched.dv_total_mps:.6g} m/s, "
                                      f"{stitched.tof_days:.4f} d (CR3BP)")
    for k, o in enumerate(orbits):
        orbit_figure(o, fig=fig, colour="#999999")
    add_curve(fig, system, stitched.states, f"route {path}", colour="#d95f02")
    f, unit = _scale(system)
    if stitched.maneuvers:
        p = np.array([m["position_lu"] for m in stitched.maneuvers], dtype=float) * f
        text = [f"Δv {m['dv_mps']:.4g} m/s (CR3BP) at {m['t_days']:.4f} d" for m in stitched.maneuvers]
        fig.add_trace(go.Scatter3d(x=p[:, 0], y=p[:, 1], z=p[:, 2], mode="markers", name="maneuvers",
                                   marker=dict(size=4, symbol="diamond", color="#000000"), text=text,
                                   hovertemplate="%{text}<extra></extra>"))
    return framed(fig)


class ReportFigures:
    """The report's 3-D figures as HTML fragments, in page order: the first carries plotly.js
    inline (the page's one copy, about 4.7 MB for plotly 7), the later ones use it. Offline: no
    CDN, no MathJax, nothing fetched.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.plotting.interactive import ReportFigures, new_figure
    >>> figs, em = ReportFigures(), system("earth-moon")
    >>> first = figs.html(new_figure(em, "one"), "first figure")
    >>> second = figs.html(new_figure(em, "two"), "second figure")
    >>> len(first) > 1_000_000, len(second) < 100_000, figs.count
    (True, True, 2)

    References
    ----------
    .. [1] plotly documentation, :meth:`plotly.graph_objects.Figure.to_html`
       (``include_plotlyjs``, ``full_html``).
    """

    def __init__(self):
        self.count = 0

    def html(self, fig, caption: str) -> str:
        frag = fig.to_html(full_html=False, include_plotlyjs=(self.count == 0), include_mathjax=False,
                           config={"displaylogo": False, "responsive": True}, div_id=f"plot3d-{self.count}")
        self.count += 1
        return (f'<figure class="plot3d">{frag}<figcaption>{_esc(caption)}</figcaption></figure>')
