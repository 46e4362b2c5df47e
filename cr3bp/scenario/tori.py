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
* eclipse checks and ``max_period`` are refused for tori (a torus has two frequencies and the
  shadow placement is built for periodic orbits);
* exports sample the trajectory on the torus from ``torus_phase_deg``
  (:func:`cr3bp.tori.trajectory.sample`).
"""

from __future__ import annotations

import math

import numpy as np

from .. import units
from ..errors import InputError
from ..io import export
from ..orbits.request import parse_request
from ..orbits.targets import make_target
from ..tori import request as treq
from ..tori import surface
from ..tori.trajectory import sample
from . import page as R
from .checks import ANGLE_CHECKS, _result, angle_at_earth_deg, occultation_clearance_km
from .schema import CHECKS_NOT_FOR_TORI, NOT_FOR_TORI, torus_entry_problems as entry_problems  # noqa: F401

#: Span of the trajectory on the torus that the angle checks sample (from the epoch).
ANGLE_SPAN_DAYS = 365.25
#: Surface samples (trajectories of circle points x times over one stroboscopic time).
SURFACE_SAMPLES = 200


def is_torus(obj) -> bool:
    """True for a :class:`cr3bp.tori.Torus` (the scenario's orbits map holds both kinds)."""
    return getattr(obj, "circle", None) is not None and hasattr(obj, "stroboscopic_time")


def spec_for(system, entry: dict):
    """The parsed torus request, every value checked before any work (InputError otherwise)."""
    spec = treq.parse(entry["torus"])
    if system is not None:
        treq.values(system, spec)
        if spec.around:
            ospec = parse_request(spec.around)
            if ospec.family != "halo":
                raise InputError(f"a quasi-halo torus is about a halo orbit (or NRHO); "
                                 f"'{spec.around}' is a {ospec.family} orbit")
            make_target(system, ospec.key, ospec.value)
    return spec


def solve(system, spec, catalog=None):
    """The torus of a checked request (:func:`cr3bp.tori.request.solve`)."""
    return treq.solve(system, spec, catalog=catalog)


def phase_rad(entry: dict) -> tuple[float, float]:
    ph = entry.get("torus_phase_deg") or [0.0, 0.0]
    return math.radians(float(ph[0])), math.radians(float(ph[1]))


def surface_states(torus, reduced=False) -> np.ndarray:
    """Samples of the whole torus surface, (M + 1, N, 6)."""
    return surface(torus.system, torus.circle, torus.stroboscopic_time,
                   SURFACE_SAMPLES // 2 if reduced else SURFACE_SAMPLES)


def half_extents_lu(torus) -> dict:
    """ax, ay (half the x and y extents) and az (largest |z|) over the torus (the periodic
    orbits' amplitude convention, :data:`cr3bp.vocabulary.TARGET_HELP`)."""
    e = torus.extent_lu
    return {"x": (e["x"][1] - e["x"][0]) / 2, "y": (e["y"][1] - e["y"][0]) / 2,
            "z": max(abs(e["z"][0]), abs(e["z"][1]))}


def orbit_row(name, torus) -> list:
    """The torus's row of ``orbits.csv`` (the columns of :data:`cr3bp.scenario.run.ORBIT_COLUMNS`)."""
    s = torus.system
    amp = half_extents_lu(torus)
    st = torus.stability or {}
    return [name, torus.family, torus.point, torus.branch, float(torus.stroboscopic_period_days),
            float(torus.jacobi), st.get("stability_index"), None, float(torus.invariance_error),
            *(s.km(amp[k]) for k in "xyz"), *(s.km(d) for d in torus.closest_approach_lu)] \
        + [float(v) for v in torus.circle[0]]


def run_checks(torus, checks: dict, surface, epoch, phase, reduced=False):
    """The scenario's checks on a torus (module notes); ``surface`` from :func:`surface_states`."""
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
    """The scenario export of a torus: the trajectory on it from ``torus_phase_deg``."""
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
    from ..plotting.tori import plot_torus      # lazy: matplotlib
    return plot_torus(torus, grid=surface)


def section(name, torus, checks, figures, views=None) -> str:
    """The report section of a torus."""
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
