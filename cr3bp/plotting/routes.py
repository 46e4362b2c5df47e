"""Route figures: the transfer corridor (a stitched route over its legs and the zero-velocity
curves), the Pareto front of Δv against time of flight, and the graph as a schematic."""

from __future__ import annotations

import math

import numpy as np

from .base import (VIEWS, axis_labels, draw_lagrange_points, draw_primaries, km_scale, legend_beside,
                   new_figure, scaled_axis)
from .base import title as set_title
from ..dynamics import jacobi
from ..energy import hill_region
from ..equilibria import lagrange_point
from ..errors import LibrateError
from ..systems import system as _system

LEG_COLOURS = ("tab:red", "tab:green", "tab:purple", "tab:orange", "tab:brown", "tab:pink", "tab:cyan")
ZVC_STYLE = dict(lw=0.8, ls="--", zorder=2)
ARC_RAD = 0.12


def plot_corridor(stitched, legs=(), tubes=(), ax=None, view="xy", margin=0.25, resolution=301,
                  neck_context=True):
    """The stitched trajectory coloured by leg, over the legs as computed separately (thin
    grey), any manifold tubes given (each an (N, M, 6) array of trajectories or a list of
    (M, 6) arrays, drawn faint), and the zero-velocity curves at each leg's Jacobi constant.

    Parameters
    ----------
    stitched : cr3bp.transfers.stitch.StitchedRoute
    legs : sequence of cr3bp.transfers.leg.Leg (optional; their patch points are drawn as dots)
    tubes : sequence of arrays (optional)
    ax : matplotlib Axes, optional
    view : {"xy", "xz", "yz"}
        Zero-velocity curves are drawn in the x-y view only.
    margin : float
        Fraction of the route's extent added around it.
    resolution : int
        Grid points per side of the Hill-region grid.
    neck_context : bool
        Widen the x-y view to the L1 and L2 necks when the route passes near the smaller primary.

    Returns
    -------
    matplotlib Axes

    Raises
    ------
    InputError
        A bad ``resolution`` (from :func:`cr3bp.energy.hill_region`).

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import EXAMPLE_NODE_LIST, parse_nodes
    >>> from cr3bp.transfers.graph import build_graph
    >>> from cr3bp.transfers.search import best_routes
    >>> em = system("earth-moon")
    >>> nodes = parse_nodes(EXAMPLE_NODE_LIST, em)
    >>> a, b = (n.id for n in nodes.nodes)
    >>> built = build_graph(em, nodes, workers=1)
    >>> routes = best_routes(built.graph, a, b)
    >>> from cr3bp.transfers.stitch import stitch_route
    >>> from cr3bp.plotting.routes import plot_corridor
    >>> ax = plot_corridor(stitch_route(em, routes[0], optimise=False), resolution=101)
    >>> ax.get_title().splitlines()[0]
    'Transfer corridor: a → b'

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, ch. 2 and 4 (zero-velocity curves bounding a
       transfer's corridor).
    """
    system = stitched.system
    if ax is None:
        _, ax = new_figure(size=(10.5, 6.8))
    i, j = VIEWS[view]
    s = stitched.states
    lo = s[:, [i, j]].min(axis=0)
    hi = s[:, [i, j]].max(axis=0)
    pad = margin * max(float(np.max(hi - lo)), 0.05)
    extent = [lo[0] - pad, hi[0] + pad, lo[1] - pad, hi[1] + pad]
    if view == "xy" and neck_context:
        # widen to the L1 and L2 necks when the route passes near the smaller primary
        x1, x2 = lagrange_point(system, "L1").position[0], lagrange_point(system, "L2").position[0]
        if hi[0] > x1 - (x2 - x1):
            h = 0.6 * (x2 - x1)
            extent = [min(extent[0], x1 - 0.1 * h), max(extent[1], x2 + 0.1 * h),
                      min(extent[2], -h), max(extent[3], h)]
    extent = tuple(extent)
    for n, tube in enumerate(tubes):
        for traj in tube:
            traj = np.asarray(traj)
            ax.plot(traj[:, i], traj[:, j], color="0.75", lw=0.4, zorder=1,
                    label="manifold tube" if n == 0 and traj is tube[0] else None)
    if view == "xy":
        leg_seg = _segment_legs(stitched, legs)
        energies = []
        for k in sorted(set(leg_seg.values())):
            segs = [q for q, lg in leg_seg.items() if lg == k]
            c = float(np.median(jacobi(system.mu, s[np.isin(stitched.segment, segs)])))
            if all(abs(c - e) > 1e-6 for e in energies):
                energies.append(c)
                region = hill_region(system, c, "xy", extent=extent, resolution=resolution)
                col = LEG_COLOURS[k % len(LEG_COLOURS)]
                if not region.curves:
                    ax.plot([], [], color=col, label=f"C = {c:.5f}: no zero-velocity curve in this view", **ZVC_STYLE)
                for m, curve in enumerate(region.curves):
                    ax.plot(curve[:, 0], curve[:, 1], color=col, label=f"zero-velocity curve, C = {c:.5f}"
                            if m == 0 else None, **ZVC_STYLE)
    for k, leg in enumerate(legs):
        ps = np.asarray(leg.patch_states if leg.patch_states is not None else [])
        if ps.size:
            ax.plot(ps[:, i], ps[:, j], "o", ms=3, color="0.4", zorder=4,
                    label="patch points of the legs as computed" if k == 0 else None)
    leg_seg = _segment_legs(stitched, legs)
    for q in np.unique(stitched.segment):
        m = stitched.segment == q
        k = leg_seg.get(int(q), 0)
        first = min(qq for qq, kk in leg_seg.items() if kk == k) if leg_seg else 0
        ax.plot(s[m, i], s[m, j], color=LEG_COLOURS[k % len(LEG_COLOURS)], lw=1.4, zorder=5,
                label=f"leg {k + 1} (stitched)" if int(q) == first else None)
    for n, man in enumerate(stitched.maneuvers):
        p = man["position_lu"]
        ax.plot(p[i], p[j], "^", color="k", ms=7, zorder=6, label="maneuver" if n == 0 else None)
        # below-right of the marker: a primary's name sits above-right of it (a departure or an
        # insertion burn is often at a primary)
        ax.annotate(f"{man['dv_mps']:.1f} m/s", (p[i], p[j]), textcoords="offset points", xytext=(5, -5),
                    va="top", fontsize=7, zorder=7)
    draw_primaries(ax, system, view, box=extent)
    draw_lagrange_points(ax, system, view)
    ax.set_xlim(extent[0], extent[1])
    ax.set_ylim(extent[2], extent[3])
    ax.set_aspect("equal")
    axis_labels(ax, system, view)
    set_title(ax, f"Transfer corridor: {' → '.join(stitched.nodes)}\n"
                  f"Δv {stitched.dv_total_mps:.1f} m/s, time of flight {stitched.tof_days:.2f} d "
                  f"({getattr(stitched, 'model', 'CR3BP')})")
    legend_beside(ax)
    return ax


def _segment_legs(stitched, legs):
    """Shooting segment index -> leg index (patch counts of the legs, in order)."""
    if not legs:
        return {int(q): 0 for q in np.unique(stitched.segment)}
    out, q = {}, 0
    for k, leg in enumerate(legs):
        for _ in (leg.patch_states if leg.patch_states is not None else [None]):
            out[q] = k
            q += 1
    return out


def plot_pareto(routes, front=(), chosen=None, ax=None):
    """Δv against time of flight of ranked ``routes`` (grey), the Pareto ``front`` (line) and
    the ``chosen`` route (highlighted).

    Parameters
    ----------
    routes : sequence of Route
    front : sequence of Route
        The Pareto front (drawn as a line, sorted by time of flight).
    chosen : Route, optional
    ax : matplotlib Axes, optional

    Returns
    -------
    matplotlib Axes

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import EXAMPLE_NODE_LIST, parse_nodes
    >>> from cr3bp.transfers.graph import build_graph
    >>> from cr3bp.transfers.search import best_routes
    >>> em = system("earth-moon")
    >>> nodes = parse_nodes(EXAMPLE_NODE_LIST, em)
    >>> a, b = (n.id for n in nodes.nodes)
    >>> built = build_graph(em, nodes, workers=1)
    >>> routes = best_routes(built.graph, a, b)
    >>> from cr3bp.plotting.routes import plot_pareto
    >>> ax = plot_pareto(routes, front=routes[:1], chosen=routes[0])
    >>> len(ax.lines)
    3

    References
    ----------
    .. [1] K. Deb, *Multi-Objective Optimization using Evolutionary Algorithms*, Wiley, 2001,
       ch. 2 (Pareto optimality; from memory).
    """
    if ax is None:
        _, ax = new_figure(size=(9.0, 5.2))
    if routes:
        ax.plot([r.tof_days for r in routes], [r.dv_total_mps for r in routes], "o", color="0.6", ms=5,
                label="ranked routes")
    if front:
        f = sorted(front, key=lambda r: r.tof_days)
        ax.plot([r.tof_days for r in f], [r.dv_total_mps for r in f], "-s", color="tab:blue", ms=5,
                label="Pareto front (no route better on both)")
    if chosen is not None:
        ax.plot([chosen.tof_days], [chosen.dv_total_mps], "*", color="tab:red", ms=15, zorder=5,
                label=f"chosen: {chosen.dv_total_mps:.1f} m/s, {chosen.tof_days:.2f} d")
    ax.set_xlabel("time of flight to the step-off point on the final orbit [days] (CR3BP)")
    ax.set_ylabel("total Δv [m/s] (sum over the legs, before stitching)")
    ax.set_title("Δv against time of flight of the routes found (CR3BP)", fontsize=9)
    ax.grid(alpha=0.3)
    legend_beside(ax)
    return ax


def _graph_x_axis(ax, graph):
    """x of the nodes' states in km (ticks at round 10³ or 10⁶ km, LU on top) when the graph's
    system is a tabulated dimensional one; in LU otherwise."""
    try:
        sysm = _system(graph.graph.get("system", ""))
    except (LibrateError, KeyError, TypeError):
        sysm = None
    if sysm is None or not getattr(sysm, "dimensional", False):
        ax.set_xlabel("x of the node's state [LU] (rotating frame, barycentric)")
        return
    per, text = km_scale(sysm)
    scaled_axis(ax.xaxis, sysm.length_km / per, f"x of the node's state [{text}] (rotating frame, barycentric)",
                "x [LU]")


def plot_graph(graph, ax=None, route=None, max_labels=60):
    """The graph as a schematic: each node at (x of its state, its Jacobi constant); nodes
    without a known state in a row below; edges as arrows labelled "Δv m/s, TOF d"; the edges
    of ``route`` (a :class:`cr3bp.transfers.search.Route`) drawn thick.

    Parameters
    ----------
    graph : networkx.MultiDiGraph
        The transfer graph (:func:`cr3bp.transfers.graph.build_graph`).
    ax : matplotlib Axes, optional
    route : Route, optional
    max_labels : int
        At most this many edges are labelled (the route's always).

    Returns
    -------
    matplotlib Axes

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import EXAMPLE_NODE_LIST, parse_nodes
    >>> from cr3bp.transfers.graph import build_graph
    >>> from cr3bp.transfers.search import best_routes
    >>> em = system("earth-moon")
    >>> nodes = parse_nodes(EXAMPLE_NODE_LIST, em)
    >>> a, b = (n.id for n in nodes.nodes)
    >>> built = build_graph(em, nodes, workers=1)
    >>> routes = best_routes(built.graph, a, b)
    >>> from cr3bp.plotting.routes import plot_graph
    >>> ax = plot_graph(built.graph, route=routes[0])
    >>> ax.get_title(), ax.get_ylabel()
    ('Transfer graph: 2 nodes, 2 legs', 'Jacobi constant C (nondimensional)')

    References
    ----------
    .. [1] networkx documentation, :class:`networkx.MultiDiGraph`; matplotlib documentation,
       "Annotations" (arrows with ``connectionstyle``).
    """
    if ax is None:
        _, ax = new_figure(size=(9.5, 6.0))
    known = [n for n, d in graph.nodes(data=True) if d.get("jacobi") is not None]
    unknown = [n for n in graph.nodes if n not in known]
    pos = {n: (graph.nodes[n]["x"], graph.nodes[n]["jacobi"]) for n in known}
    if known:
        xs = [p[0] for p in pos.values()]
        cs = [p[1] for p in pos.values()]
        span = max(max(cs) - min(cs), 1e-3)
        base = min(cs) - 0.25 * span
        xw = max(max(xs) - min(xs), 1e-3)
    else:
        base, span, xs, xw = 0.0, 1.0, [0.0], 1.0
    for k, n in enumerate(unknown):
        pos[n] = (min(xs) + k * xw / max(len(unknown), 1), base)
    # spread nodes that sit on top of each other
    seen = {}
    for n in list(pos):
        key = (round(pos[n][0], 4), round(pos[n][1], 6))
        c = seen.get(key, 0)
        seen[key] = c + 1
        if c:
            pos[n] = (pos[n][0] + 0.02 * xw * c, pos[n][1] + 0.02 * span * c)
    on_route = set(route.edges) if route is not None else set()
    allx = [p[0] for p in pos.values()] or [0.0]
    ally = [p[1] for p in pos.values()] or [0.0]
    xspan = max(max(allx) - min(allx), 1e-6)
    yspan = max(max(ally) - min(ally), 1e-9)
    labels = 0
    for u, v, k, d in graph.edges(keys=True, data=True):
        if u == v:
            continue
        (x0, y0), (x1, y1) = pos[u], pos[v]
        thick = (u, v, k) in on_route
        ax.annotate("", (x1, y1), (x0, y0), arrowprops=dict(
            arrowstyle="-|>", color="tab:red" if thick else "0.55", lw=2.0 if thick else 0.7,
            shrinkA=6, shrinkB=6, connectionstyle=f"arc3,rad={ARC_RAD}"), zorder=2)
        if labels < max_labels or thick:
            labels += 1
            # label at the middle of the arc3 curve (control point offset rad * (dy, -dx) in
            # display space; the axes' spans stand in for it)
            sx, sy = xspan, yspan
            dxn, dyn = (x1 - x0) / sx, (y1 - y0) / sy
            xm = 0.5 * (x0 + x1) + 0.5 * ARC_RAD * dyn * sx
            ym = 0.5 * (y0 + y1) - 0.5 * ARC_RAD * dxn * sy
            ax.text(xm, ym, f"{d['dv_mps']:.0f} m/s, {d['tof_days']:.1f} d", fontsize=6, ha="center",
                    color="tab:red" if thick else "0.3", zorder=3,
                    bbox=dict(boxstyle="round,pad=0.1", fc="white", ec="none", alpha=0.7))
    for n, (x, y) in pos.items():
        d = graph.nodes[n]
        ax.plot(x, y, "o", ms=9, color="tab:blue" if n in known else "0.7", zorder=4)
        ax.annotate(d.get("name", str(n)), (x, y), textcoords="offset points", xytext=(6, 6), fontsize=8, zorder=5)
    if known:
        ax.set_ylim(base - 0.15 * span, max(p[1] for p in pos.values()) + 0.2 * span)
    _graph_x_axis(ax, graph)
    ax.set_ylabel("Jacobi constant C (nondimensional)")
    title = f"Transfer graph: {graph.number_of_nodes()} nodes, {graph.number_of_edges()} legs"
    if unknown:
        title += f" ({len(unknown)} node(s) of unknown energy on the bottom row)"
    if labels >= max_labels:
        title += f"; first {max_labels} legs labelled"
    ax.set_title(title, fontsize=9)
    ax.plot([], [], "-", color="0.55", label="leg (Δv, time of flight)")
    if route is not None:
        ax.plot([], [], "-", color="tab:red", lw=2, label="chosen route")
    legend_beside(ax)
    ax.grid(alpha=0.2)
    if not math.isfinite(base):
        ax.set_ylim(-1, 1)
    return ax
