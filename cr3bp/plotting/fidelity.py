"""Plots of a transition to the ephemeris model: the CR3BP design and the ephemeris trajectory
together, in the rotating frame (instantaneous ephemeris anchoring, nondimensional) and on
inertial J2000 equator axes about the central body (km)."""

from __future__ import annotations

import numpy as np

from .base import legend_beside, new_figure
from ..time import ephemeris, frames


def rotating_states(transition, states_km, t_tu):
    """km, km/s about the central body -> nondimensional rotating states (ephemeris anchoring).

    Parameters
    ----------
    transition : Transition
        From :func:`cr3bp.fidelity.transition.transition` (its model and epoch are used).
    states_km : (n, 6) array
        Positions (km) and velocities (km/s) about the model's central body, J2000 equator axes.
    t_tu : (n,) array
        Times from the epoch, TU.

    Returns
    -------
    (n, 6) array
        Rotating, pulsating states, LU and LU/TU.

    Raises
    ------
    None

    Examples
    --------
    Building a transition takes tens of seconds, so the example is not run:

    >>> from cr3bp import orbit, system
    >>> from cr3bp.fidelity.transition import transition
    >>> from cr3bp.plotting.fidelity import rotating_states
    >>> nrho = orbit(system("earth-moon"), "halo L2 south resonance=9:2")      # doctest: +SKIP
    >>> tr = transition(nrho, "2031-03-01T00:00:00 TDB", revs=3)               # doctest: +SKIP
    >>> rotating_states(tr, tr.sample_km, tr.sample_t_tu).shape[1]              # doctest: +SKIP
    6

    References
    ----------
    .. [1] D. J. Scheeres, "The restricted Hill four-body problem with applications to the
       Earth-Moon-Sun system", *Celestial Mechanics and Dynamical Astronomy* 70, 1998 (the
       instantaneous rotating, pulsating frame; from memory). Common practice in ephemeris
       transitions.
    """
    mdl = transition.model
    s = mdl.system
    spec = frames.frame(s, transition.epoch_tdb_s, anchor="ephemeris", axes="j2000-equator",
                        center="secondary")
    tdb = transition.epoch_tdb_s + np.asarray(t_tu) * s.time_s
    sec = frames._BODY.get(s.secondary.name, s.secondary.name)
    km = np.asarray(states_km, dtype=float)
    if sec != mdl.central:
        km = km - np.asarray(ephemeris.state(sec, frames._epoch(tdb), mdl.central, "j2000-equator"))
    return frames.from_frame(spec, tdb, km)[1]


def transition_figure(transition, title=""):
    """Figure with two panels: rotating x-z (LU) and inertial x-y (km). Returns the Figure.

    The design is labelled by its model: "bicircular design" for a low-energy route
    (:mod:`cr3bp.fidelity.low_energy`), "CR3BP design" otherwise.

    Parameters
    ----------
    transition : Transition
        From :func:`cr3bp.fidelity.transition.transition`.
    title : str
        Figure title.

    Returns
    -------
    matplotlib Figure
        Not captioned: the caller captions it with the ephemeris model's caution.

    Raises
    ------
    None

    Examples
    --------
    Building a transition takes tens of seconds, so the example is not run:

    >>> from cr3bp import orbit, system
    >>> from cr3bp.fidelity.transition import transition
    >>> from cr3bp.plotting.fidelity import transition_figure
    >>> nrho = orbit(system("earth-moon"), "halo L2 south resonance=9:2")      # doctest: +SKIP
    >>> tr = transition(nrho, "2031-03-01T00:00:00 TDB", revs=3)               # doctest: +SKIP
    >>> [ax.get_title() for ax in transition_figure(tr).axes[:2]]              # doctest: +SKIP
    ['rotating frame (ephemeris anchoring)', 'inertial axes']

    References
    ----------
    .. [1] matplotlib documentation, :func:`matplotlib.pyplot.subplots`.
    """
    fig, axes = new_figure(ncols=2, size=(12.0, 5.8))
    ax1, ax2 = np.ravel(axes)
    design = "bicircular design" if dict(getattr(transition, "options", {}) or {}).get("low_energy") else "CR3BP design"
    s = transition.model.system
    ref_rot = rotating_states(transition, transition.reference_km, transition.sample_t_tu)
    eph_rot = rotating_states(transition, transition.sample_km, transition.sample_t_tu)
    ax1.plot(ref_rot[:, 0], ref_rot[:, 2], color="tab:blue", lw=1.0, ls="--", zorder=3, label=design)
    ax1.plot(eph_rot[:, 0], eph_rot[:, 2], color="tab:red", lw=0.6, label="ephemeris model")
    ax1.plot([1.0 - s.mu], [0.0], "o", color="0.4", ms=4, label=s.names[1])
    ax1.set_xlabel("x (LU, rotating, pulsating)")
    ax1.set_ylabel("z (LU)")
    ax1.set_title("rotating frame (ephemeris anchoring)")
    ax1.set_aspect("equal", adjustable="datalim")
    ref, eph = transition.reference_km, transition.sample_km
    ax2.plot(ref[:, 0], ref[:, 1], color="tab:blue", lw=1.0, label=design)
    ax2.plot(eph[:, 0], eph[:, 1], color="tab:red", lw=0.6, label="ephemeris model")
    ax2.plot([0.0], [0.0], "o", color="0.4", ms=4, label=transition.model.central.title())
    ax2.set_xlabel(f"x (km, J2000 equator, about the {transition.model.central.title()})")
    ax2.set_ylabel("y (km)")
    ax2.set_title("inertial axes")
    ax2.set_aspect("equal", adjustable="datalim")
    # one legend for both panels, beside the data (the primary's marker differs per panel)
    h1, l1 = ax1.get_legend_handles_labels()
    h2, l2 = ax2.get_legend_handles_labels()
    legend_beside(ax2, h2 + [h for h, lab in zip(h1[2:], l1[2:]) if lab.lower() not in {x.lower() for x in l2}])
    if title:
        fig.suptitle(title)
    return fig
