"""Tori in a scenario: an ``[orbits.NAME]`` table with a ``torus`` request instead of a
periodic orbit's ``family`` and target.

The torus is the one :func:`cr3bp.tori.request.solve` returns for the request (the same call
``librate torus --request`` makes, so the numbers agree); its row in ``orbits.csv`` reads the
stroboscopic period as the period, the invariance error as the periodicity error and the first
point of the invariance circle as the state. Checks, figures and exports read the torus:

* altitudes over the primaries from the torus's closest approaches (least distance over the
  whole torus surface, :func:`cr3bp.tori.torus.build`), less the body's mean radius;
* the stability index from the eigenvalues of the discretised stroboscopic map
  (:mod:`cr3bp.tori.stability`);
* the line of sight on the sampled surface (every phase of the torus);
* the angles at the Earth on the trajectory on the torus from ``torus_phase_deg`` at the
  epoch over :data:`ANGLE_SPAN_DAYS` (the torus never repeats, so a span is named);
* eclipse checks on the trajectory on the torus from ``torus_phase_deg`` at the epoch over
  a year (:func:`.checks.eclipse_check`, the trajectory ``librate shadow --torus
  --torus-phase`` follows); ``max_period`` is refused (a torus has two frequencies);
* exports sample the trajectory on the torus from ``torus_phase_deg``
  (:func:`cr3bp.tori.trajectory.sample`).
"""

from __future__ import annotations

import math

import numpy as np

from .. import units
from ..errors import InputError
from ..io import export
from ..tori import request as treq
from ..tori import surface
from ..tori.trajectory import sample
from . import page as R
from .checks import ANGLE_CHECKS, ECLIPSE_CHECKS, _result, angle_at_earth_deg, eclipse_check, occultation_clearance_km
from .schema import CHECKS_NOT_FOR_TORI, NOT_FOR_TORI, torus_entry_problems as entry_problems  # noqa: F401

#: Span of the trajectory on the torus that the angle checks sample (from the epoch).
ANGLE_SPAN_DAYS = 365.25
#: Surface samples (trajectories of circle points x times over one stroboscopic time).
SURFACE_SAMPLES = 200


def is_torus(obj) -> bool:
    """True for a :class:`cr3bp.tori.Torus` (the scenario's orbits map holds both kinds).

    Parameters
    ----------
    obj : object
        A torus or a periodic orbit.

    Returns
    -------
    bool
        True when ``obj`` has an invariance circle and a stroboscopic time.

    Raises
    ------
    None

    Examples
    --------
    >>> is_torus(object())
    False

    References
    ----------
    None: duck typing of this project's two orbit kinds (common practice).
    """
    return getattr(obj, "circle", None) is not None and hasattr(obj, "stroboscopic_time")


def spec_for(system, entry: dict):
    """The parsed torus request, every value checked before any work (InputError otherwise).

    Parameters
    ----------
    system : System or None
        The scenario's system; None checks the request's words only (no values against a
        system).
    entry : dict
        The ``[orbits.NAME]`` table; its ``torus`` holds the request.

    Returns
    -------
    TorusSpec
        The parsed request (:func:`cr3bp.tori.request.parse`).

    Raises
    ------
    InputError
        A bad request, a value out of range for ``system``, or a quasi-halo torus about an
        orbit that is not a halo orbit.

    Examples
    --------
    >>> spec_for(None, {"torus": "lissajous L2 ay=800000km az=500000km"}).point
    'L2'
    >>> spec_for(None, {"torus": "nonsense"})
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: unknown torus family 'nonsense'; allowed: lissajous, quasi-halo

    References
    ----------
    Gómez, G. & Mondelo, J. M., "The dynamics around the collinear equilibrium points of the
    RTBP", Physica D 157 (2001); Olikara, Z. P. & Scheeres, D. J., "Numerical method for
    computing quasi-periodic orbits and their stability in the restricted three-body problem",
    AAS 12-361 (2012).
    """
    return treq.parse(entry["torus"]) if system is None else treq.checked(system, entry["torus"])


def solve(system, spec, catalog=None):
    """The torus of a checked request (:func:`cr3bp.tori.request.solve`).

    Parameters
    ----------
    system : System
        The scenario's system.
    spec : TorusSpec
        From :func:`spec_for`.
    catalog : optional
        The orbit catalogue (for the orbit a quasi-halo torus is about).

    Returns
    -------
    cr3bp.tori.Torus
        The same torus ``librate torus --request`` gives.

    Raises
    ------
    InputError, ConvergenceError
        As :func:`cr3bp.tori.request.solve`.

    Examples
    --------
    >>> torus = solve(system, spec_for(system, entry))        # doctest: +SKIP

    References
    ----------
    Gómez, G. & Mondelo, J. M., "The dynamics around the collinear equilibrium points of the
    RTBP", Physica D 157 (2001); Olikara, Z. P. & Scheeres, D. J., "Numerical method for
    computing quasi-periodic orbits and their stability in the restricted three-body problem",
    AAS 12-361 (2012).
    """
    return treq.solve(system, spec, catalog=catalog)


def phase_rad(entry: dict) -> tuple[float, float]:
    """The torus phase ``torus_phase_deg`` of a table, in radians (0, 0 when absent).

    Parameters
    ----------
    entry : dict
        The ``[orbits.NAME]`` table (its ``torus_phase_deg`` already checked by
        :func:`entry_problems`).

    Returns
    -------
    tuple of float
        ``(theta0, theta1)``, rad.

    Raises
    ------
    TypeError, ValueError
        A phase that is not two numbers (found earlier by :func:`entry_problems`).

    Examples
    --------
    >>> phase_rad({"torus_phase_deg": [0.0, 90.0]})
    (0.0, 1.5707963267948966)
    >>> phase_rad({})
    (0.0, 0.0)

    References
    ----------
    None: degrees to radians (common practice).
    """
    ph = entry.get("torus_phase_deg") or [0.0, 0.0]
    return math.radians(float(ph[0])), math.radians(float(ph[1]))


def surface_states(torus, reduced=False) -> np.ndarray:
    """Samples of the whole torus surface, (M + 1, N, 6).

    Parameters
    ----------
    torus : cr3bp.tori.Torus
        The torus.
    reduced : bool, optional
        Half the samples (:data:`SURFACE_SAMPLES` // 2), for a quick run.

    Returns
    -------
    numpy.ndarray, shape (M + 1, N, 6)
        Rotating, nondimensional states: the trajectories of the N circle points at M + 1
        times over one stroboscopic time (:func:`cr3bp.tori.surface`).

    Raises
    ------
    None
        Integration errors of :func:`cr3bp.tori.surface` propagate.

    Examples
    --------
    >>> surface_states(torus).shape[-1]                       # doctest: +SKIP
    6

    References
    ----------
    Gómez, G. & Mondelo, J. M., "The dynamics around the collinear equilibrium points of the
    RTBP", Physica D 157 (2001); Olikara, Z. P. & Scheeres, D. J., "Numerical method for
    computing quasi-periodic orbits and their stability in the restricted three-body problem",
    AAS 12-361 (2012).
    """
    return surface(torus.system, torus.circle, torus.stroboscopic_time,
                   SURFACE_SAMPLES // 2 if reduced else SURFACE_SAMPLES)


def half_extents_lu(torus) -> dict:
    """ax, ay (half the x and y extents) and az (largest |z|) over the torus (the periodic
    orbits' amplitude convention, :data:`cr3bp.vocabulary.TARGET_HELP`).

    Parameters
    ----------
    torus : cr3bp.tori.Torus
        The torus (only its ``extent_lu`` is read).

    Returns
    -------
    dict
        ``{"x": ax, "y": ay, "z": az}``, LU.

    Raises
    ------
    KeyError
        An extent without the x, y or z range.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> t = SimpleNamespace(extent_lu={"x": (0.8, 0.9), "y": (-0.2, 0.2), "z": (-0.1, 0.05)})
    >>> {k: round(v, 9) for k, v in half_extents_lu(t).items()}
    {'x': 0.05, 'y': 0.2, 'z': 0.1}

    References
    ----------
    None: this project's amplitude convention of the periodic orbits (common practice).
    """
    e = torus.extent_lu
    return {"x": (e["x"][1] - e["x"][0]) / 2, "y": (e["y"][1] - e["y"][0]) / 2,
            "z": max(abs(e["z"][0]), abs(e["z"][1]))}


def orbit_row(name, torus) -> list:
    """The torus's row of ``orbits.csv`` (the columns of :data:`cr3bp.scenario.run.ORBIT_COLUMNS`).

    Parameters
    ----------
    name : str
        The orbit's name in the scenario.
    torus : cr3bp.tori.Torus
        The torus (of a dimensional system: lengths are given in km).

    Returns
    -------
    list
        Name, family, point, branch, stroboscopic period (d, as the period), Jacobi constant,
        stability index (first column; the second is None), invariance error (as the
        periodicity error), amplitudes x, y, z (km), closest approaches (km, from the centres) and the
        first point of the invariance circle (rotating, nondimensional).

    Raises
    ------
    None

    Examples
    --------
    >>> row = orbit_row("relay", torus)                       # doctest: +SKIP

    References
    ----------
    Gómez, G. & Mondelo, J. M., "The dynamics around the collinear equilibrium points of the
    RTBP", Physica D 157 (2001); Olikara, Z. P. & Scheeres, D. J., "Numerical method for
    computing quasi-periodic orbits and their stability in the restricted three-body problem",
    AAS 12-361 (2012).
    """
    s = torus.system
    amp = half_extents_lu(torus)
    st = torus.stability or {}
    return [name, torus.family, torus.point, torus.branch, float(torus.stroboscopic_period_days),
            float(torus.jacobi), st.get("stability_index"), None, float(torus.invariance_error),
            *(s.km(amp[k]) for k in "xyz"), *(s.km(d) for d in torus.closest_approach_lu)] \
        + [float(v) for v in torus.circle[0]]


def run_checks(torus, checks: dict, surface, epoch, phase, reduced=False):
    """The scenario's checks on a torus (module notes); ``surface`` from :func:`surface_states`.

    Parameters
    ----------
    torus : cr3bp.tori.Torus
        The torus.
    checks : dict
        The table's ``checks`` (key -> required value, in the scenario's units).
    surface : numpy.ndarray, shape (M + 1, N, 6)
        The sampled surface.
    epoch : str or float
        The scenario's epoch (for the angles at the Earth).
    phase : tuple of float
        The torus phase at the epoch, rad (:func:`phase_rad`).
    reduced : bool, optional
        Fewer samples on the trajectory for the angle checks (1000 instead of 4000).

    Returns
    -------
    list
        One check result per check (description, required, actual, unit, margin, passed).

    Raises
    ------
    InputError
        A check refused for tori (:data:`CHECKS_NOT_FOR_TORI`), an unknown check, or a bad
        value.

    Examples
    --------
    >>> res = run_checks(torus, {"max_stability_index": 50}, surf, epoch, (0.0, 0.0))  # doctest: +SKIP

    References
    ----------
    Gómez, G. & Mondelo, J. M., "The dynamics around the collinear equilibrium points of the
    RTBP", Physica D 157 (2001); Olikara, Z. P. & Scheeres, D. J., "Numerical method for
    computing quasi-periodic orbits and their stability in the restricted three-body problem",
    AAS 12-361 (2012).
    """
    system = torus.system
    names = system.names
    out = []
    for key, value in checks.items():
        if key in CHECKS_NOT_FOR_TORI:
            raise InputError(f"check '{key}': {CHECKS_NOT_FOR_TORI[key]}")
        if key in ("min_altitude_smaller", "min_altitude_larger"):
            which = 1 if key.endswith("smaller") else 0
            body = (system.primary, system.secondary)[which]
            req = units.parse(value, "length").si()
            act = system.km(torus.closest_approach_lu[which]) - body.radius_km
            out.append(_result(key, f"least altitude over {names[which]} over the whole torus", req,
                               act, "km", True))
        elif key == "max_stability_index":
            act = float((torus.stability or {}).get("stability_index", math.nan))
            out.append(_result(key, "stability index of the torus (largest multiplier of its "
                                    "discretised stroboscopic map)", float(value), act, "", False))
        elif key in ANGLE_CHECKS:
            body = ANGLE_CHECKS[key]
            span = ANGLE_SPAN_DAYS / system.time_days
            t = np.linspace(0.0, span, 1000 if reduced else 4000)
            states = sample(torus, t, phase).states
            act = float(angle_at_earth_deg(system, t, states, epoch, body).min())
            out.append(_result(key, f"least {body.capitalize()}-Earth-spacecraft angle (vertex at the "
                                    f"Earth) on the torus from phase ({math.degrees(phase[0]):g}, "
                                    f"{math.degrees(phase[1]):g}) deg over {ANGLE_SPAN_DAYS:g} d from "
                                    "the epoch", float(value), act, "deg", True))
        elif key in ECLIPSE_CHECKS:
            out.append(eclipse_check(torus, key, value, epoch, 0.0, tuple(math.degrees(p) for p in phase)))
        elif key == "line_of_sight_to_larger":
            if not value:
                continue
            act = float(occultation_clearance_km(system, surface.reshape(-1, 6)).min())
            out.append(_result(key, f"line of sight to {names[0]} clears {names[1]} by (whole torus)",
                               0.0, act, "km", True))
        else:
            raise InputError(f"unknown check '{key}'")
    return out


def export_trajectory(plan, torus, entry, ex, spec, ts, step_s, model, name):
    """The scenario export of a torus: the trajectory on it from ``torus_phase_deg``.

    Parameters
    ----------
    plan : scenario plan
        The checked scenario (its ``system``).
    torus : cr3bp.tori.Torus
        The torus.
    entry : dict
        The ``[orbits.NAME]`` table (its ``torus`` and ``torus_phase_deg``).
    ex : dict
        The export table (its ``span``).
    spec : FrameSpec
        The export's frame.
    ts : str
        The export's time scale.
    step_s : float
        The sample step, s.
    model : dict
        The model lines of the file header (updated in place with the torus's).
    name : str
        The orbit's name (the object name of the file, upper case).

    Returns
    -------
    cr3bp.io.export.Trajectory
        One segment, sampled on the torus from the table's phase.

    Raises
    ------
    InputError
        A bad span or step (:func:`cr3bp.io.export.parse_span`,
        :func:`cr3bp.io.export.epoch_grid`).

    Examples
    --------
    >>> tr = export_trajectory(plan, torus, entry, ex, spec, "UTC", 600.0, {}, "relay")  # doctest: +SKIP

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems (2023) (the exported files); Gómez, G. & Mondelo, J. M., "The dynamics around the collinear equilibrium points of the
    RTBP", Physica D 157 (2001); Olikara, Z. P. & Scheeres, D. J., "Numerical method for
    computing quasi-periodic orbits and their stability in the restricted three-body problem",
    AAS 12-361 (2012).
    """
    system = plan.system
    T = torus.stroboscopic_time
    span_tu = export.parse_span(ex["span"], system, T)
    grid = export.epoch_grid(spec, ts, span_tu, step_s)
    phase = phase_rad(entry)
    seg = sample(torus, grid, phase)
    model.update({"torus": entry["torus"],
                  "stroboscopic time": f"{T!r} TU = {system.days(T):.9f} d",
                  "rotation": f"{torus.rotation!r} rad per stroboscopic time",
                  "jacobi": repr(float(torus.jacobi)),
                  "torus phase (deg)": ", ".join(f"{math.degrees(p):g}" for p in phase),
                  "sampling": "re-started from the invariance circle every stroboscopic time "
                              f"(joins within the invariance error {torus.invariance_error:.1e})"})
    return export.Trajectory(spec, (seg,), ts, (), name.upper(), "NONE", model)


def figure(plan, name, torus, surface):
    """The scenario's figure of a torus: its sampled surface (:func:`cr3bp.plotting.tori.plot_torus`).

    Parameters
    ----------
    plan : scenario plan
        The checked scenario (not read; the signature of the figure hooks).
    name : str
        The orbit's name (not read).
    torus : cr3bp.tori.Torus
        The torus.
    surface : numpy.ndarray, shape (M + 1, N, 6)
        From :func:`surface_states`.

    Returns
    -------
    matplotlib.figure.Figure
        The figure.

    Raises
    ------
    ImportError
        Without matplotlib.

    Examples
    --------
    >>> fig = figure(plan, "relay", torus, surface_states(torus))  # doctest: +SKIP

    References
    ----------
    Hunter, J. D., "Matplotlib: A 2D Graphics Environment", Computing in Science &
    Engineering 9(3) (2007).
    """
    from ..plotting.tori import plot_torus      # lazy: matplotlib
    return plot_torus(torus, grid=surface)


def section(name, torus, checks, figures, views=None) -> str:
    """The report section of a torus.

    Parameters
    ----------
    name : str
        The orbit's name.
    torus : cr3bp.tori.Torus
        The torus.
    checks : list
        From :func:`run_checks` (may be empty).
    figures : dict
        The scenario's figures by key (``orbit-NAME``, ``hill-NAME``: ``path`` and ``caption``).
    views : optional
        The report's interactive views; None leaves out the 3-D figure.

    Returns
    -------
    str
        HTML: the torus's table (CR3BP model quantities with units), its constraints and its
        figures.

    Raises
    ------
    None

    Examples
    --------
    >>> html = section("relay", torus, [], {})                # doctest: +SKIP

    References
    ----------
    Gómez, G. & Mondelo, J. M., "The dynamics around the collinear equilibrium points of the
    RTBP", Physica D 157 (2001); Olikara, Z. P. & Scheeres, D. J., "Numerical method for
    computing quasi-periodic orbits and their stability in the restricted three-body problem",
    AAS 12-361 (2012).
    """
    d = torus.to_dict()
    st = torus.stability or {}
    amp = half_extents_lu(torus)
    s = torus.system
    pairs = [("kind", f"quasi-periodic torus ({torus.family}"
                      + (f" about the {d['around'].get('family', '')} {d['around'].get('point', '')}"
                         f" {d['around'].get('branch', '')} orbit".rstrip() if d.get("around") else "")
                      + ")"),
             ("model", "circular restricted three-body problem (CR3BP)"),
             ("stroboscopic period [d]", torus.stroboscopic_period_days),
             ("rotation per stroboscopic period [deg]", torus.rotation_deg),
             ("frequency periods [d]", list(torus.frequency_periods_days)),
             ("Jacobi constant", torus.jacobi), ("Jacobi spread over the circle", torus.jacobi_spread),
             ("invariance error (nondimensional)", torus.invariance_error),
             ("points on the invariance circle", torus.n_circle_points),
             ("amplitude (RMS of the circle) [km]", s.km(torus.amplitude_lu)),
             ("stability", f"{st.get('kind', '')}, largest multiplier modulus "
                           f"{st.get('largest_modulus', math.nan):.6g}"),
             ("stability index", st.get("stability_index"))]
    pairs += [(f"amplitude {k} [km]", s.km(v)) for k, v in amp.items()]
    pairs += [(f"extent {k} [km]", [s.km(a) for a in v]) for k, v in torus.extent_lu.items()]
    pairs += [(f"closest approach to {n} [km, from centre]", s.km(v))
              for n, v in zip(s.names, torus.closest_approach_lu)]
    html = R.kv_table(pairs)
    html += ("<p>Distances and times of the CR3BP model. Amplitudes: half the x and y extents and "
             "the largest |z| over the torus surface.</p>")
    if checks:
        html += "<h3>Constraints</h3>" + R.table(
            ["check", "required", "actual", "margin", "result"],
            [R.check_row({"name": f"{c.description} [{c.unit}]" if c.unit else c.description,
                          "required": c.required, "actual": c.actual, "margin": c.margin,
                          "passed": c.passed}) for c in checks])
    for key in (f"orbit-{name}", f"hill-{name}"):
        if key in figures:
            html += R.figure(figures[key]["path"], figures[key]["caption"])
    if views is not None:
        try:
            from ..tori.figures import interactive_figure   # lazy: heavy library (matplotlib, plotly)
        except ImportError:
            interactive_figure = None
        if interactive_figure is not None:
            html += views.html(interactive_figure(torus, name=name),
                               f"Torus '{name}' in 3-D (drag to rotate, scroll to zoom): trajectories of "
                               "its invariance circle's points over one stroboscopic period; rotating "
                               "frame of the CR3BP, primaries to scale.")
    return html


__all__ = ["is_torus", "entry_problems", "spec_for", "solve", "orbit_row", "run_checks",
           "export_trajectory", "section"]
