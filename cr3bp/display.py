"""How the main result objects show themselves in a notebook or a Python prompt.

:class:`Shown` is mixed into :class:`~cr3bp.orbits.orbit.PeriodicOrbit`,
:class:`~cr3bp.orbits.continuation.Family`, :class:`~cr3bp.tubes.manifolds.Tube` and
:class:`~cr3bp.transfers.search.Route`. It gives each

- ``repr(obj)``: one line (what it is and its main numbers, with the model they belong to);
- ``obj._repr_html_()``: a small table (Jupyter shows it) ending with the caution;
- ``obj.plot(ax=None)``: a drawing on the matplotlib Axes ``ax`` (a new figure when None),
  returning the Axes (Axes in, Axes out);
- ``obj.to_plotly()``: a rotatable 3-D plotly figure (orbits, families, tubes; see
  :mod:`cr3bp.plotting.interactive`), plotly imported then only;
- ``obj.to_dataframe()`` where the result is a table (a family's members, a tube's
  trajectories, a route's legs): a pandas DataFrame, when pandas is installed (it is optional).

The rows of each kind are built here, from the object's own ``to_dict()`` values, so the
classes only name this mixin. Nothing here is imported at ``import cr3bp``; matplotlib is
imported by ``plot`` only.
"""

from __future__ import annotations

import html
import math

from .cautions import caution_short
from .errors import InputError


def _fmt(v, digits=6):
    if v is None:
        return "-"
    if isinstance(v, float):
        if not math.isfinite(v):
            return "-" if math.isnan(v) else ("inf" if v > 0 else "-inf")
        return f"{v:.{digits}g}"
    return str(v)


def _days(system, tu):
    return f"{_fmt(tu)} TU" + (f" = {system.days(tu):.4f} d" if system.dimensional else "")


# ---- per kind: (one line, table rows, plot) --------------------------------------------

def _orbit_rows(o):
    nu = [complex(v).real for v in o.stability_indices]
    name = " ".join(w for w in (o.family, o.point, o.branch) if w) or "periodic"
    a = o.amplitude_km if o.system.dimensional else None
    rows = [("system", o.system.name), ("orbit", name),
            ("period (CR3BP)", _days(o.system, float(o.period))),
            ("Jacobi constant", f"{o.jacobi:.10f}"),
            ("stability indices", f"{nu[0]:.6g}, {nu[1]:.6g} ({'stable' if o.stable else 'unstable'})"),
            ("periodicity error", f"{o.periodicity_error:.2e} (nondimensional)")]
    if a is not None:
        rows.append(("amplitudes (CR3BP)", ", ".join(f"A{k} {_fmt(v)} km" for k, v in a.items())))
    line = (f"{o.system.name} {name} orbit: period {_days(o.system, float(o.period))}, "
            f"C = {o.jacobi:.6f}, {'stable' if o.stable else 'unstable'} (CR3BP)")
    return line, rows


def _family_rows(f):
    m = f.members
    name = " ".join(w for w in (f.family, f.point, f.branch) if w)
    rows = [("system", f.system.name), ("family", name), ("members", len(m))]
    if m:
        jac = [x.jacobi for x in m]
        per = [float(x.period) for x in m]
        rows += [("Jacobi constant", f"{min(jac):.6f} .. {max(jac):.6f}"),
                 ("period (CR3BP)", f"{_days(f.system, min(per))} .. {_days(f.system, max(per))}")]
    rows += [("bifurcations", len(f.bifurcations)), ("stopped because", f.stop_reason)]
    line = f"{f.system.name} {name} family: {len(m)} members, {len(f.bifurcations)} bifurcations (CR3BP)"
    return line, rows


def _tube_rows(t):
    counts = {k: sum(1 for s in t.status if s == k) for k in sorted(set(t.status))}
    step = f"{t.step_km:.3f} km" if math.isfinite(t.step_km) else f"{t.step:.3e} LU"
    tof = [abs(float(v)) for v in t.tof]
    rows = [("system", t.system.name), ("tube", t.label), ("trajectories", t.n), ("step-off", step),
            ("Jacobi constant", f"{t.jacobi:.10f}"), ("unstable eigenvalue", _fmt(float(t.eigenvalue))),
            ("ended by", ", ".join(f"{k} {v}" for k, v in counts.items()))]
    if tof:
        rows.append(("time of flight (CR3BP)", f"{_days(t.system, min(tof))} .. {_days(t.system, max(tof))}"))
    line = f"{t.label}: {t.n} trajectories, C = {t.jacobi:.6f} (CR3BP)"
    return line, rows


def _route_rows(r):
    path = " -> ".join(str(n) for n in r.nodes)
    rows = [("route", path), ("legs", r.n_legs), ("total dv (CR3BP)", f"{r.dv_total_mps:.6g} m/s"),
            ("time of flight (CR3BP)", f"{r.tof_days:.4f} d to the step-off point"),
            ("to arrival (CR3BP)", f"{r.tof_arrival_days:.4f} d")]
    if math.isfinite(r.min_altitude_km):
        rows.append(("lowest altitude", f"{r.min_altitude_km:.1f} km"))
    line = f"route {path}: {r.n_legs} legs, dv {r.dv_total_mps:.6g} m/s, {r.tof_days:.4f} d (CR3BP)"
    return line, rows


_ROWS = {"PeriodicOrbit": _orbit_rows, "Family": _family_rows, "Tube": _tube_rows, "Route": _route_rows}


def _new_axes(ax, projection=None):
    if ax is not None:
        return ax
    import matplotlib.pyplot as plt  # lazy: heavy library (matplotlib)
    fig = plt.figure(figsize=(6.4, 5.2))
    return fig.add_subplot(1, 1, 1)


def _caption(ax, model="cr3bp"):
    """The caution under the figure, once per figure (several plots may share one)."""
    from .plotting.base import caption  # lazy: heavy library (matplotlib, via cr3bp.plotting.base)
    if not any(t.get_gid() == "caption" for t in ax.figure.texts):
        caption(ax.figure, "", model=model)


_VIEWS = {"xy": (0, 1), "xz": (0, 2), "yz": (1, 2)}


def _check_view(view):
    if view not in _VIEWS:
        raise InputError(f"view {view!r} is not allowed; allowed: xy, xz, yz")
    return _VIEWS[view]


def _short_title(ax, text):
    ax.set_title(text, fontsize=8, wrap=True)


def _plot_orbit(o, ax=None, view="xy", n=600):
    """The orbit in one view of the rotating frame, framed about it (the project's framing:
    primaries to scale, Lagrange points inside the frame)."""
    from .plotting.orbits import _frame, trajectory  # lazy: heavy library (matplotlib, via cr3bp.plotting.orbits)
    i, j = _check_view(view)
    ax = _new_axes(ax)
    s = trajectory(o, n)
    ax.plot(s[:, i], s[:, j], lw=1.4, color="tab:orange", label="orbit")
    ax.plot(s[0, i], s[0, j], "o", color="k", ms=3, label="initial state")
    _frame(ax, o.system, view, [s])
    name = " ".join(w for w in (o.family, o.point, o.branch) if w) or "periodic"
    _short_title(ax, f"{o.system.name} {name} orbit, C = {o.jacobi:.6f} (CR3BP, rotating frame)")
    return ax


def _plot_family(f, ax=None, view="xy", max_curves=30, n=400):
    """Up to ``max_curves`` members in one view, coloured by Jacobi constant."""
    import numpy as np  # lazy: start-up: keeps cr3bp.display free of numpy
    from matplotlib import cm, colors  # lazy: heavy library (matplotlib)

    from .plotting.orbits import _frame, trajectory  # lazy: heavy library (matplotlib, via cr3bp.plotting.orbits)
    i, j = _check_view(view)
    ax = _new_axes(ax)
    m = f.members
    if not m:
        return ax
    pick = np.unique(np.linspace(0, len(m) - 1, min(len(m), max_curves)).round().astype(int))
    jac = [m[k].jacobi for k in pick]
    norm = colors.Normalize(min(jac), max(jac) if max(jac) > min(jac) else min(jac) + 1e-9)
    curves = []
    for k in pick:
        s = trajectory(m[k], n)
        curves.append(s)
        ax.plot(s[:, i], s[:, j], lw=0.8, color=cm.viridis(norm(m[k].jacobi)))
    _frame(ax, f.system, view, curves)
    from .plotting.base import colorbar_beside  # lazy: heavy library (matplotlib, via cr3bp.plotting.base)
    colorbar_beside(ax, cm.ScalarMappable(norm=norm, cmap="viridis"), "Jacobi constant")
    name = " ".join(w for w in (f.family, f.point, f.branch) if w)
    _short_title(ax, f"{f.system.name} {name} family, {len(pick)} of {len(m)} members (CR3BP, rotating frame)")
    return ax


def _plot_tube(t, ax=None, view="xy"):
    from .plotting.manifolds import plot_tubes  # lazy: heavy library (matplotlib, via cr3bp.plotting.manifolds)
    _check_view(view)
    ax = _new_axes(ax)
    plot_tubes([t], views=(view,), axes=[ax])
    return ax


def _plot_route(r, ax=None):
    """The route's profile: cumulative Δv against cumulative time of flight, one step per leg."""
    ax = _new_axes(ax)
    t, dv = [0.0], [0.0]
    for d in r.edge_data:
        t.append(t[-1] + float(d.get("tof_days", 0.0)))
        dv.append(dv[-1] + float(d.get("dv_mps", 0.0)))
    ax.step(t, dv, where="post", marker="o")
    for k, node in enumerate(r.nodes):
        if k < len(t):
            ax.annotate(str(node), (t[k], dv[k]), textcoords="offset points", xytext=(4, 4), fontsize=8)
    ax.set_xlabel("time of flight [d] (CR3BP, to each leg's step-off point)")
    ax.set_ylabel("cumulative dv [m/s] (CR3BP)")
    _short_title(ax, _route_rows(r)[0])
    ax.grid(alpha=0.3)
    return ax


_PLOTS = {"PeriodicOrbit": _plot_orbit, "Family": _plot_family, "Tube": _plot_tube, "Route": _plot_route}


def _kind(obj):
    for c in type(obj).__mro__:
        if c.__name__ in _ROWS:
            return c.__name__
    raise TypeError(f"{type(obj).__name__} has no display")


class Shown:
    """Notebook display for a result object (see the module notes): a one-line ``repr``, a
    small HTML table with the caution (``_repr_html_``), ``plot(ax=None)`` returning the
    matplotlib Axes, ``to_plotly()`` for orbits, families and tubes, ``to_dataframe()``
    (pandas optional) and ``to_dict()``.

    The periodic orbit, family, tube and route results inherit it.

    Examples
    --------
    >>> from cr3bp.orbits.orbit import PeriodicOrbit
    >>> issubclass(PeriodicOrbit, Shown)
    True

    References
    ----------
    .. [1] IPython documentation, "Rich display" (the ``_repr_html_`` protocol notebooks use);
       matplotlib's "Axes in, Axes out" convention for plotting functions (common practice).
    """

    __slots__ = ()

    def __repr__(self):
        try:
            line, _ = _ROWS[_kind(self)](self)
        except Exception as e:           # a half-built object still shows something
            line = f"(not shown: {type(e).__name__})"
        return f"<{type(self).__name__} {line}>"

    def _repr_html_(self):
        _, rows = _ROWS[_kind(self)](self)
        body = "".join(f"<tr><th style='text-align:left'>{html.escape(str(k))}</th>"
                       f"<td style='text-align:left'>{html.escape(_fmt(v))}</td></tr>" for k, v in rows)
        return (f"<table><caption style='text-align:left'><b>{html.escape(type(self).__name__)}</b></caption>"
                f"{body}<tr><td colspan='2' style='text-align:left;font-size:smaller'>"
                f"{html.escape(caution_short())}</td></tr></table>")

    def plot(self, ax=None, **options):
        """Draw on ``ax`` (a new figure when None) and return the Axes.

        Orbits, families and tubes accept ``view="xy"`` (or ``"xz"``, ``"yz"``): the
        rotating frame, primaries to scale. A route draws its cumulative Δv against time.
        """
        ax = _PLOTS[_kind(self)](self, ax, **options)
        _caption(ax)
        return ax

    def to_plotly(self, **options):
        """A rotatable 3-D plotly figure in the rotating frame (km when the system has units),
        the primaries drawn, the caution in its title; needs plotly. Orbits, families and tubes
        only: a route's continuous trajectory comes from
        :func:`cr3bp.transfers.stitch.stitch_route`, whose result has its own ``to_plotly()``.
        """
        from .plotting import interactive as ia  # lazy: heavy library (matplotlib, via cr3bp.plotting.interactive)
        kind = _kind(self)
        if kind == "Route":
            raise InputError("a Route holds its legs' patch points, not a continuous trajectory: stitch it "
                            "(cr3bp.transfers.stitch.stitch_route) and call the result's to_plotly()")
        return {"PeriodicOrbit": ia.orbit_figure, "Family": ia.family_figure,
                "Tube": ia.tube_figure}[kind](self, **options)

    def to_dataframe(self):
        """The result's table as a pandas DataFrame (pandas is optional: ImportError without it).

        A family: one row per member; a tube: one per trajectory; a route: one per leg; an
        orbit: one row.
        """
        import pandas as pd  # lazy: heavy library (pandas)
        kind = _kind(self)
        d = self.to_dict()
        if kind == "Family":
            rows = d["members"]
        elif kind == "Tube":
            rows = d["trajectories"]
        elif kind == "Route":
            rows = d["legs"]
        else:
            rows = [d]
        return pd.DataFrame(rows)
