"""The sections of a mission run's HTML report (built with :mod:`cr3bp.scenario.page`)."""

from __future__ import annotations

import numpy as np

from . import page as R
from ..orbits.request import describe_places


def _system_section(plan) -> str:
    s = plan.system
    d = s.to_dict()
    pairs = [("system", s.name), ("mass ratio mu", s.mu), ("epoch of rotating time 0", plan.epoch)]
    if s.dimensional:
        pairs += [("length unit [km]", s.length_km), ("time unit [d]", s.time_days),
                  ("velocity unit [km/s]", s.velocity_kms), ("larger primary", d["primary"]),
                  ("smaller primary", d["secondary"]), ("constants", s.source)]
    return R.kv_table(pairs)


def places_note(d) -> str:
    """A sentence when the orbit's target is met at more than one place along its family
    (``target_matches`` of :meth:`PeriodicOrbit.to_dict`), else "".

    Parameters
    ----------
    d : dict
        :meth:`PeriodicOrbit.to_dict` of the orbit.

    Returns
    -------
    str
        The sentence, or "".

    Raises
    ------
    KeyError
        ``target_matches`` without its keys.

    Examples
    --------
    >>> places_note({})
    ''

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    places = describe_places(d)
    if not places:
        return ""
    tm = d["target_matches"]
    where = "; ".join(f"{i}: {text}" for i, text in enumerate(places, 1))
    return (f"The target ({tm['quantity']}) is met at {tm['count']} places along the family, "
            f"counted from its start ({where}); this is place {tm['occurrence']}. The scenario "
            "key 'occurrence' chooses another.")


def _orbit_section(name, orbit, checks, figures, views=None) -> str:
    d = orbit.to_dict()
    nu = [float(np.real(v)) for v in orbit.stability_indices]
    amp = d.get("amplitude_km") or {}
    close = d.get("closest_approach_km") or {}
    pairs = [("family", f"{orbit.family} {orbit.point} {orbit.branch}".strip()),
             ("initial state [LU, LU/TU]", ", ".join(f"{v:.12f}" for v in orbit.state)),
             ("period [d]", orbit.period_days), ("Jacobi constant", orbit.jacobi),
             ("stability indices", nu), ("periodicity error", orbit.periodicity_error)]
    pairs += [(f"amplitude {k} [km]", v) for k, v in amp.items()]
    pairs += [(f"closest approach to {k} [km, from centre]", v) for k, v in close.items()]
    html = R.kv_table(pairs)
    note = places_note(d)
    if note:
        html += f"<p>{R.esc(note)}</p>"
    if checks:
        html += "<h3>Constraints</h3>" + R.table(
            ["check", "required", "actual", "margin", "result"],
            [R.check_row({"name": f"{c.description} [{c.unit}]" if c.unit else c.description,
                          "required": c.required, "actual": c.actual, "margin": c.margin,
                          "passed": c.passed}) for c in checks])
    for key in (f"orbit-{name}", f"hill-{name}", f"family-{name}", f"eclipses-{name}"):
        if key in figures:
            html += R.figure(figures[key]["path"], figures[key]["caption"])
    if views is not None:
        from ..plotting.interactive import orbit_figure  # lazy: heavy library (matplotlib, via cr3bp.plotting.interactive)
        html += views.html(orbit_figure(orbit, name=name),
                           f"Orbit '{name}' in 3-D over one period (drag to rotate, scroll to zoom): rotating "
                           "frame of the CR3BP, primaries to scale.")
    return html


def _routes_section(routes, figures, views=None, stitched=None, orbits=None) -> str:
    html = ""
    for name, r in routes.items():
        html += f"<h3>{R.esc(name)}</h3>"
        best = r.get("best") or {}
        legs = best.get("legs", [])
        html += R.table(["leg", "from", "to", "Δv [m/s]", "time of flight to arrival [d] ¹",
                         "to the step-off point [d] ²"],
                        [(str(i + 1), R.esc(l["from"]), R.esc(l["to"]), R.fmt(l["dv_mps"]),
                          R.fmt(l.get("tof_arrival_days", l["tof_days"])), R.fmt(l["tof_days"]))
                         for i, l in enumerate(legs)] +
                        [("total", "", "", R.fmt(best.get("dv_total_mps")),
                          R.fmt(best.get("tof_arrival_days", best.get("tof_days"))), R.fmt(best.get("tof_days")))],
                        left=3)
        html += f"<p>{R.esc(tof_definition_note(legs))}</p>"
        dep = departure_rows(r.get("departure"))
        if dep:
            html += ("<h4>Departure from the parking orbit</h4><p>The route's first leg as designed in the "
                     "CR3BP (before the route is stitched; the stitched maneuvers are in the table below).</p>"
                     + R.kv_table(dep))
        back = return_rows(r.get("return"))
        if back:
            html += ("<h4>Return to the parking orbit</h4><p>The route's last leg as designed in the "
                     "CR3BP (before the route is stitched; the stitched maneuvers are in the table below).</p>"
                     + R.kv_table(back))
        if r.get("maneuvers"):
            mans = r.get("maneuvers_labelled") or [dict(m, dv_design_mps=m["dv_mps"]) for m in r["maneuvers"]]
            keys = [k for k in (r.get("dv_models") or {}) if k.startswith("dv_exported_mps[")]
            html += ("<p>Maneuvers of the stitched trajectory. Design: the CR3BP, fixed units. Exported: the "
                     "velocity jump measured on the exported trajectory in the file named (its anchoring "
                     "rescales speeds, so it can differ from the design).</p>") + R.table(
                ["time since start [d]", "node", "maneuver", "Δv, design (CR3BP) [m/s]"]
                + [f"Δv, exported ({R.esc(k[len('dv_exported_mps['):-1])}) [m/s]" for k in keys]
                + ["Δv vector (rotating, CR3BP) [m/s]"],
                [(R.fmt(m["t_days"]), R.esc(m.get("node", "")), R.esc(m.get("name", "")), R.fmt(m["dv_design_mps"]), *(R.fmt(m[k]) for k in keys),
                  R.fmt(m["dv_vector_mps"])) for m in mans], left=0)
            for w in r.get("dv_warnings") or []:
                html += f"<p><strong>{R.esc(w)}</strong></p>"
        if r.get("note"):
            html += f"<p>{R.esc(r['note'])}</p>"
        if r.get("eclipses"):
            html += _route_eclipses(r["eclipses"])
        for key in (f"departure-{name}", f"return-{name}", f"corridor-{name}", f"pareto-{name}"):
            if key in figures:
                html += R.figure(figures[key]["path"], figures[key]["caption"])
        if views is not None and (stitched or {}).get(name) is not None:
            from ..plotting.interactive import route_figure  # lazy: heavy library (matplotlib, via cr3bp.plotting.interactive)
            st = stitched[name]
            from .tori import is_torus  # lazy: only for tori
            joined = [orbits[n] for n in st.nodes if n in (orbits or {})]
            fig3 = route_figure(st, [o for o in joined if not is_torus(o)],
                                title=f"transfer '{name}': the best route stitched "
                                      f"(Δv {st.dv_total_mps:.6g} m/s, {st.tof_days:.4f} d, CR3BP)")
            for t in (o for o in joined if is_torus(o)):
                from ..tori.figures import interactive_figure  # lazy: heavy library (plotly), only for tori
                interactive_figure(t, fig=fig3, n_circle=24, n_time=80, colour="#999999")
            html += views.html(fig3,
                               f"Transfer '{name}' in 3-D: the stitched trajectory (orange), its maneuvers "
                               "(diamonds) and the orbits it joins (grey); rotating frame of the CR3BP.")
    return html


def departure_rows(d) -> list:
    """(label, value) rows of the departure that starts a route, each label naming its model
    and unit; [] for None (the route does not start with a departure from a parking orbit).

    Parameters
    ----------
    d : dict or None
        The departure leg's ``details["departure"]``
        (:meth:`cr3bp.transfers.departure.Departure.to_dict`; a scenario route's ``departure``).

    Returns
    -------
    list of (str, object)

    Raises
    ------
    KeyError
        A departure without its keys.

    Examples
    --------
    >>> departure_rows(None)
    []

    References
    ----------
    C3 = v^2 - 2 mu / r: Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed.,
    2013, §2.6; tangential departure burn: ibid. §6.3 (both from memory).
    """
    if not d:
        return []
    burns = {m["name"]: m for m in d["maneuvers"]}
    rows = [("path", d["path"]), ("from", f"{d['from']} (circular)"), ("to", d["to"]),
            ("departure burn Δv [m/s] (CR3BP)", d["departure_dv_mps"]),
            ("C3 [km²/s²] (v² − 2μ/r about the Earth after the burn, from the CR3BP state)", d["c3_km2_s2"]),
            ("Earth-relative speed after the burn [km/s] (CR3BP, inertial axes)", d["departure_speed_kms"]),
            ("inclination of the parking orbit [deg] (to the Moon's orbit plane; the CR3BP has no Earth "
             "equator)", d["inclination_deg"])]
    if d.get("inclination_equator_deg") is not None:
        rows += [("departure date (UTC)", d["departure_epoch"]),
                 ("inclination of the parking orbit to the Earth's mean equator of J2000 [deg] (the CR3BP "
                  "design placed by the Moon's DE421 ephemeris at that date)", d["inclination_equator_deg"])]
        if d.get("launch_latitude_deg") is not None:
            rows.append(("launch-site latitude [deg] (the inclination to the equator held at least this)",
                         d["launch_latitude_deg"]))
    if "flyby" in burns:
        rows += [("flyby burn Δv [m/s] (CR3BP)", burns["flyby"]["dv_mps"]),
                 ("flyby altitude over the Moon's mean radius [km] (CR3BP)", d["flyby_altitude_km"]),
                 ("flyby time after departure [d] (CR3BP)", burns["flyby"]["t_days"])]
    rows += [("insertion burn Δv [m/s] (CR3BP)", burns["insertion"]["dv_mps"]),
             ("total Δv [m/s] (CR3BP)", d["dv_mps"]),
             ("time of flight, departure to insertion [d] (CR3BP)", d["tof_days"]),
             ("optimised", "yes" if d["optimised"] else "no: feasible, the optimiser stopped before proving it least")]
    return rows


def return_rows(d) -> list:
    """(label, value) rows of the return that ends a route, each label naming its model and
    unit; [] for None (the route does not end with a return to a parking orbit).

    Parameters
    ----------
    d : dict or None
        The return leg's ``details["return"]``
        (:meth:`cr3bp.transfers.returns.Return.to_dict`; a scenario route's ``return``).

    Returns
    -------
    list of (str, object)

    Raises
    ------
    KeyError
        A return without its keys.

    Examples
    --------
    >>> return_rows(None)
    []

    References
    ----------
    C3 = v^2 - 2 mu / r: Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed.,
    2013, §2.6; tangential burn at perigee: ibid. §6.3 (both from memory).
    """
    if not d:
        return []
    burns = {m["name"]: m for m in d["maneuvers"]}
    rows = [("path", d["path"]), ("from", d["from"]), ("to", f"{d['to']} (circular)"),
            ("burn leaving the orbit Δv [m/s] (CR3BP)", d["departure_dv_mps"])]
    if "flyby" in burns:
        rows += [("flyby burn Δv [m/s] (CR3BP)", burns["flyby"]["dv_mps"]),
                 ("flyby altitude over the Moon's mean radius [km] (CR3BP)", d["flyby_altitude_km"]),
                 ("flyby time after leaving the orbit [d] (CR3BP)", burns["flyby"]["t_days"])]
    rows += [("perigee burn onto the parking orbit Δv [m/s] (CR3BP)", d["insertion_dv_mps"]),
             ("Earth-relative speed at perigee before the burn [km/s] (CR3BP, inertial axes)",
              d["arrival_speed_kms"]),
             ("C3 on arrival [km²/s²] (v² − 2μ/r about the Earth at perigee, CR3BP)", d["c3_km2_s2"]),
             ("perigee altitude [km] (CR3BP, over the Earth's mean radius)", d["perigee_altitude_km"]),
             ("inclination of the parking orbit [deg] (to the Moon's orbit plane; the CR3BP has no Earth "
              "equator)", d["inclination_deg"]),
             ("total Δv [m/s] (CR3BP)", d["dv_mps"]),
             ("time of flight, leaving the orbit to the perigee burn [d] (CR3BP)", d["tof_days"]),
             ("optimised", "yes" if d["optimised"] else "no: feasible, the optimiser stopped before proving it least")]
    return rows


def _route_eclipses(e) -> str:
    """The eclipse section of a route (:func:`cr3bp.operations.along.route_section`)."""
    if e.get("not_computed"):
        return f"<h4>Eclipses along the route</h4><p>Not computed: {R.esc(e['not_computed'])}</p>"
    html = (f"<h4>Eclipses and Earth angles along the route</h4><p>{R.esc(e['model'])}; from "
            f"{R.esc(e['epoch_utc'])} (the scenario's epoch) over {R.fmt(e['span_days'])} d, searched every "
            f"{R.fmt(e['step_s'])} s. A penumbra pass includes its umbra.</p>")
    if e["passes"]:
        html += R.table(["leg", "body", "kind", "start (UTC)", "end (UTC)", "duration [min]", "depth"],
                        [(str(p["leg"]), p["body"], p["kind"], p["start_utc"], p["end_utc"], R.fmt(p["duration_min"]),
                          R.fmt(p["depth"])) for p in e["passes"]], left=4)
    else:
        html += "<p>No shadow pass of the Earth or the Moon along the route.</p>"
    a = e["angles"]
    html += R.kv_table([
        ("Sun-Earth-spacecraft angle [deg]", f"{a['sun_earth_spacecraft_deg']['min']:.1f} .. "
                                             f"{a['sun_earth_spacecraft_deg']['max']:.1f}"),
        ("Moon-Earth-spacecraft angle [deg]", f"{a['moon_earth_spacecraft_deg']['min']:.1f} .. "
                                              f"{a['moon_earth_spacecraft_deg']['max']:.1f}"),
        ("range to the Earth [km]", f"{a['range_to_earth_km']['min']:,.0f} .. {a['range_to_earth_km']['max']:,.0f}")])
    return html


def tof_definition_note(legs) -> str:
    """The footnotes of the route table: what each time of flight measures (CR3BP times).

    Parameters
    ----------
    legs : list of dict
        The route table's legs (``arrival_distance_km``).

    Returns
    -------
    str
        The footnotes.

    Raises
    ------
    TypeError
        Legs that are not tables.

    Examples
    --------
    >>> "CR3BP" in tof_definition_note([{"arrival_distance_km": 100.0}])
    True

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    dists = sorted({l["arrival_distance_km"] for l in legs if l.get("arrival_distance_km") is not None})
    within = " or ".join(f"{d:g} km" for d in dists) or "the stated distance"
    return ("Times of flight in the CR3BP model. ¹ Time of flight to arrival: from the leg's start until its "
            f"trajectory first comes within {within} of the target orbit's path (nearest point of the orbit); "
            "for a leg ending on a parking orbit, its whole time. The total runs from departure until the "
            "route first comes within that distance of its final orbit (earlier legs counted whole). "
            "² To the manifold's step-off point on the target orbit, which includes the slow asymptotic "
            "approach; the scenario's max_tof caps this longer time.")


def _exports_section(exports) -> str:
    return R.table(["file", "object", "format", "frame", "centre", "time system", "anchoring"],
                   [(R.esc(e["file"]), R.esc(e["object"]), e["format"], e["frame"], e["center"],
                     e["time_system"], e["anchor"]) for e in exports])


def write_report(plan, orbits, checks, routes, exports, figures, out, stitched=None):
    """The report. Each orbit, and each route of ``stitched`` (route name -> StitchedRoute),
    also gets an interactive 3-D figure (plotly.js once, inline; no network) unless the
    scenario's ``[plots]`` sets ``interactive = false``.

    Parameters
    ----------
    plan : Plan
        The checked scenario.
    orbits, checks, routes, exports, figures : dict
        What the run computed and wrote.
    out : Outputs
        Where the report goes.
    stitched : dict, optional
        Route name -> StitchedRoute.

    Returns
    -------
    pathlib.Path
        The report.

    Raises
    ------
    OutputError
        The report cannot be written.

    Examples
    --------
    >>> report = write_report(plan, orbits, checks, routes, exports, figures, out)   # doctest: +SKIP

    References
    ----------
    WHATWG, "HTML Living Standard", https://html.spec.whatwg.org/ (tables, ``img`` with data URLs).; Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    views = None
    if plan.data.get("plots", {}).get("interactive", True):
        from ..plotting.interactive import ReportFigures  # lazy: heavy library (matplotlib, via cr3bp.plotting.interactive)
        views = ReportFigures()
    sections = [("System and units", _system_section(plan))]
    desc = plan.data["mission"].get("description")
    if desc:
        sections.insert(0, ("Mission", f"<p>{R.esc(desc)}</p><p>Scenario file: {R.esc(plan.path.name)} "
                                       f"(sha256 {plan.sha256[:16]}…)</p>"))
    from .tori import is_torus, section as torus_section  # lazy: only for tori
    for name, orbit in orbits.items():
        if is_torus(orbit):
            sections.append((f"Torus '{name}'", torus_section(name, orbit, checks.get(name), figures, views)))
            continue
        sections.append((f"Orbit '{name}'", _orbit_section(name, orbit, checks.get(name), figures, views)))
    if routes:
        sections.append(("Transfers: Δv and time-of-flight budget", _routes_section(routes, figures, views, stitched, orbits)))
    if exports:
        sections.append(("Exports written", _exports_section(exports)))
    path = out.path("report.html")
    R.write(path, f"{plan.name}: preliminary design report", sections)
    return path
