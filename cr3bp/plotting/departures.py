"""Figure of a departure from a parking orbit (:mod:`cr3bp.transfers.departure`): the transfer
and the target orbit in the rotating Earth–Moon frame, in two views (x-y and x-z), the burns
marked and named; below them the same two views zoomed on the target orbit, so the insertion
(and the last part of the transfer coming in) can be seen at the orbit's own scale."""

from __future__ import annotations

import numpy as np
from matplotlib.lines import Line2D

from .base import axis_labels, draw_lagrange_points, draw_primaries, legend_beside, new_figure, title
from ..integrate import propagate

MARKERS = {"departure": ("o", "tab:green"), "flyby": ("D", "tab:orange"), "insertion": ("s", "tab:red")}
#: Margin around the target orbit in the zoomed panels, as a fraction of its largest extent.
ZOOM_MARGIN = 0.25


def zoom_box(orbit_states, view, margin=ZOOM_MARGIN):
    """(umin, umax, vmin, vmax) of the target orbit in ``view`` ("xy" or "xz"), widened by
    ``margin`` of the orbit's largest extent (both axes get the same span: equal aspect).

    Parameters
    ----------
    orbit_states : (n, 6) array
        States along the orbit, LU and LU/TU.
    view : {"xy", "xz"}
    margin : float
        Fraction of the largest extent added on each side.

    Returns
    -------
    (float, float, float, float)
        (umin, umax, vmin, vmax), LU.

    Raises
    ------
    KeyError
        ``view`` not "xy" or "xz".

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.plotting.departures import zoom_box
    >>> states = np.zeros((3, 6)); states[:, 0] = [1.0, 1.2, 1.1]
    >>> [round(float(v), 3) for v in zoom_box(states, "xy", margin=0.5)]
    [0.9, 1.3, -0.2, 0.2]

    References
    ----------
    .. [1] Common practice: a zoomed panel framed on the object with a margin, at equal aspect.
    """
    i, j = {"xy": (0, 1), "xz": (0, 2)}[view]
    u, v = orbit_states[:, i], orbit_states[:, j]
    # (NaN rows separate arcs of a torus)
    span = max(float(np.nanmax(u) - np.nanmin(u)), float(np.nanmax(v) - np.nanmin(v)), 1e-6) * (1.0 + 2.0 * margin)
    cu, cv = 0.5 * (np.nanmin(u) + np.nanmax(u)), 0.5 * (np.nanmin(v) + np.nanmax(v))
    return cu - span / 2, cu + span / 2, cv - span / 2, cv + span / 2


def plot_departure(dep, n_per_segment=800, summary=False):
    """Four panels of ``dep``: x-y and x-z of the whole transfer (top), and the same views
    zoomed on the target orbit (bottom); with ``summary``, a box of the departure's numbers
    (:func:`summary_lines`). Returns the figure.

    Parameters
    ----------
    dep : Departure
        From :func:`cr3bp.transfers.departure.design_departure`.
    n_per_segment : int
        Samples per transfer segment.
    summary : bool, optional
        Draw the box of the departure's numbers, each naming its model.

    Returns
    -------
    matplotlib Figure
        Not captioned: the caller captions and saves it (:func:`cr3bp.plotting.base.save`).

    Raises
    ------
    None

    Examples
    --------
    A departure takes tens of seconds to design, so the example is not run:

    >>> from cr3bp import orbit
    >>> from cr3bp.transfers.departure import design_departure
    >>> from cr3bp.plotting.departures import plot_departure
    >>> dep = design_departure(orbit("earth-moon", "halo L2 south period=6.5626d"), 200.0)  # doctest: +SKIP
    >>> len(plot_departure(dep).axes)  # doctest: +SKIP
    4

    References
    ----------
    .. [1] matplotlib documentation, :func:`matplotlib.pyplot.subplots` and
       :meth:`matplotlib.axes.Axes.set_aspect`.
    """
    _, states = dep.trajectory(n_per_segment)
    back = hasattr(dep, "perigee_altitude_km")     # a return (cr3bp.transfers.returns.Return)
    d = dep.to_dict() if summary else {}
    return _draw(dep.system, dep.orbit, states, dep.maneuvers, dep.path,
                 (return_lines(d) if back else summary_lines(d)) if summary else None, back=back)


def plot_departure_leg(leg, orbit, n_per_segment=800):
    """The figure of :func:`plot_departure` for a departure leg of a transfer graph or route
    (:func:`cr3bp.transfers.departure.as_leg`: ``leg.kind == "departure"``) arriving on
    ``orbit``, with the box of the departure's numbers.

    Parameters
    ----------
    leg : cr3bp.transfers.leg.Leg
        A departure leg (its ``details["departure"]`` holds the design's numbers).
    orbit : PeriodicOrbit
        The orbit it inserts into.
    n_per_segment : int
        Samples per coast.

    Returns
    -------
    matplotlib.figure.Figure

    Raises
    ------
    KeyError
        A leg that is not a departure.

    Examples
    --------
    Skipped under doctest (the departure's optimisation takes tens of seconds):

    >>> from cr3bp import orbit
    >>> from cr3bp.transfers.departure import as_leg, design_departure
    >>> nrho = orbit("earth-moon", "halo L2 south resonance=9:2")     # doctest: +SKIP
    >>> fig = plot_departure_leg(as_leg(design_departure(nrho)), nrho)  # doctest: +SKIP

    References
    ----------
    Tangential departure from a circular parking orbit: Vallado, *Fundamentals of
    Astrodynamics and Applications*, 4th ed., 2013, §6.3 (from memory).
    """
    back = "return" in leg.details
    d = leg.details["return" if back else "departure"]
    system = leg.system
    states = np.concatenate([propagate(system, s0, dt, t_eval=np.linspace(0.0, dt, n_per_segment)).states
                             for _, s0, dt in leg.segments])
    mans = [{"name": m.name, "dv_vector": m.dv, "position": m.position} for m in leg.maneuvers]
    return _draw(system, orbit, states, mans, d["path"], return_lines(d) if back else summary_lines(d), back=back)


def summary_lines(d):
    """Lines of a departure's numbers, each naming its model: the departure burn, C3, the
    Earth-relative speed after the burn, the parking orbit's inclination, the flyby (if any),
    the insertion burn, the total and the time of flight.

    Parameters
    ----------
    d : dict
        A departure's :meth:`~cr3bp.transfers.departure.Departure.to_dict`.

    Returns
    -------
    list of str

    Raises
    ------
    KeyError
        A dict without a departure's keys.

    Examples
    --------
    >>> d = {"path": "direct", "from": "parking earth 200km", "departure_dv_mps": 3138.4,
    ...      "c3_km2_s2": -1.92, "departure_speed_kms": 10.93, "inclination_deg": 5.0,
    ...      "flyby_altitude_km": None, "dv_mps": 3971.8, "tof_days": 5.25,
    ...      "maneuvers": [{"name": "departure", "dv_mps": 3138.4}, {"name": "insertion", "dv_mps": 833.4}]}
    >>> summary_lines(d)[1]
    'departure burn 3138.4 m/s (CR3BP)'

    References
    ----------
    C3 = v^2 - 2 mu / r, twice the two-body energy: Vallado, *Fundamentals of Astrodynamics and
    Applications*, 4th ed., 2013, §2.6 (from memory).
    """
    burns = {m["name"]: m["dv_mps"] for m in d["maneuvers"]}
    lines = [f"{d['path']} departure from {d['from']}",
             f"departure burn {d['departure_dv_mps']:.1f} m/s (CR3BP)",
             f"C3 {d['c3_km2_s2']:.2f} km²/s² (CR3BP, two-body about the Earth)",
             f"Earth-relative speed {d['departure_speed_kms']:.3f} km/s (CR3BP)",
             f"inclination {d['inclination_deg']:.2f}° to the Moon's orbit plane (CR3BP)"]
    if d.get("inclination_equator_deg") is not None:
        lines.append(f"{d['inclination_equator_deg']:.2f}° to the Earth's equator on {d['departure_epoch'][:10]} "
                     "(DE421 Moon)")
    if d.get("flyby_altitude_km") is not None:
        lines.append(f"flyby burn {burns.get('flyby', 0.0):.1f} m/s at {d['flyby_altitude_km']:.0f} km "
                     "over the Moon (CR3BP)")
    lines += [f"insertion burn {burns['insertion']:.1f} m/s (CR3BP)",
              f"total {d['dv_mps']:.1f} m/s in {d['tof_days']:.2f} d (CR3BP)"]
    return lines


def return_lines(d):
    """Lines of a return's numbers, each naming its model: the burn that leaves the orbit, the
    flyby (if any), the perigee burn onto the parking orbit, the speed and C3 on arrival, the
    parking orbit's inclination, the total and the time of flight.

    Parameters
    ----------
    d : dict
        A return's :meth:`~cr3bp.transfers.returns.Return.to_dict` (``kind == "return"``).

    Returns
    -------
    list of str

    Raises
    ------
    KeyError
        A dict without a return's keys.

    Examples
    --------
    >>> d = {"path": "direct", "from": "halo L2 south C=3.046494", "to": "parking earth 200km",
    ...      "departure_dv_mps": 833.4, "insertion_dv_mps": 3138.4, "arrival_speed_kms": 10.93,
    ...      "c3_km2_s2": -1.92, "inclination_deg": 10.7, "flyby_altitude_km": None,
    ...      "dv_mps": 3971.8, "tof_days": 5.25,
    ...      "maneuvers": [{"name": "departure", "dv_mps": 833.4}, {"name": "insertion", "dv_mps": 3138.4}]}
    >>> return_lines(d)[2]
    'perigee burn onto parking earth 200km 3138.4 m/s (CR3BP)'

    References
    ----------
    C3 = v^2 - 2 mu / r: Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed.,
    2013, §2.6; tangential burn at perigee: ibid. §6.3 (both from memory).
    """
    burns = {m["name"]: m["dv_mps"] for m in d["maneuvers"]}
    lines = [f"{d['path']} return from {d['from']}",
             f"burn leaving the orbit {d['departure_dv_mps']:.1f} m/s (CR3BP)"]
    if d.get("flyby_altitude_km") is not None:
        lines.append(f"flyby burn {burns.get('flyby', 0.0):.1f} m/s at {d['flyby_altitude_km']:.0f} km "
                     "over the Moon (CR3BP)")
    lines += [f"perigee burn onto {d['to']} {d['insertion_dv_mps']:.1f} m/s (CR3BP)",
              f"Earth-relative speed at perigee {d['arrival_speed_kms']:.3f} km/s (CR3BP)",
              f"C3 on arrival {d['c3_km2_s2']:.2f} km²/s² (CR3BP, two-body about the Earth)",
              f"inclination {d['inclination_deg']:.2f}° to the Moon's orbit plane (CR3BP)",
              f"total {d['dv_mps']:.1f} m/s in {d['tof_days']:.2f} d (CR3BP)"]
    return lines


def _draw(system, orbit, states, maneuvers, path, summary, back=False):
    if hasattr(orbit, "stroboscopic_time"):
        # a torus: trajectories from eight points of its invariance circle over one
        # stroboscopic time each (longer arcs of an unstable torus drift off it), NaN between
        T = float(orbit.stroboscopic_time)
        circle = orbit.circle[:: max(1, len(orbit.circle) // 8)]
        gap = np.full((1, 6), np.nan)
        orb = np.concatenate([np.vstack([propagate(system, s0, T, t_eval=np.linspace(0.0, T, 300)).states[:, :6],
                                         gap]) for s0 in circle])
        target = "torus left (arcs on it)" if back else "target torus (arcs on it)"
    else:
        T = float(orbit.period)
        orb = propagate(system, orbit.state, T, t_eval=np.linspace(0.0, T, 600)).states
        target = getattr(orbit, "label", None) or ("orbit left" if back else "target orbit")
    fig, axes = new_figure(2, 2, size=(12.0, 11.0))
    fig.subplots_adjust(hspace=0.38, wspace=0.25)
    for row, zoom in ((0, False), (1, True)):
        for col, view in enumerate(("xy", "xz")):
            ax = axes[row, col]
            i, j = {"xy": (0, 1), "xz": (0, 2)}[view]
            box = zoom_box(orb, view) if zoom else None
            ax.plot(orb[:, i], orb[:, j], color="0.35", lw=1.0, label=target)
            ax.plot(states[:, i], states[:, j], color="tab:blue", lw=1.2,
                    label=f"{path} {'return' if back else 'transfer'}")
            for m in maneuvers:
                mk, col_ = MARKERS.get(m["name"], ("x", "k"))
                dv = system.mps(np.linalg.norm(m["dv_vector"]))
                ax.plot(m["position"][i], m["position"][j], mk, color=col_, ms=7 if zoom else 6, zorder=8,
                        label=f"{m['name']} {dv:.0f} m/s (CR3BP)")
            draw_primaries(ax, system, view=view, box=box, min_radius=0.004 if not zoom else 0.0)
            if view == "xy" and not zoom:
                draw_lagrange_points(ax, system, view=view)
            if zoom:
                ax.set_xlim(box[0], box[1])
                ax.set_ylim(box[2], box[3])
                ax.set_aspect("equal", adjustable="box")
            else:
                ax.set_aspect("equal", adjustable="datalim")
            axis_labels(ax, system, view=view)
            title(ax, f"{view[0]}-{view[1]} view" + (f", zoomed on the {target.split(' (')[0]}" if zoom else ""))
    legend_beside(axes[0, 1])
    if summary:
        fig.subplots_adjust(right=0.7)
        # beside the lower panels, as a legend of text-only entries (the caption fits the margin to it)
        legend_beside(axes[1, 1], handles=[Line2D([], [], linestyle="none", label=s) for s in summary],
                      handlelength=0, handletextpad=0, fontsize=7.5,
                      title="the return's numbers" if back else "the departure's numbers",
                      title_fontsize=8)
    return fig
