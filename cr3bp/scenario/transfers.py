"""Transfers of a mission run: the scenario's transfers become node lists for the transfer
graph (:mod:`cr3bp.transfers.graph`), whose best route is stitched (:mod:`cr3bp.transfers.stitch`) and
drawn, and whose stitched trajectory the exports sample."""

from __future__ import annotations

import dataclasses


from ..errors import InputError, NoSolutionError
from .outputs import csv_text, json_text, save_figures, say
from ..vocabulary import ORBIT_TARGETS

TARGET_KEYS = ORBIT_TARGETS


def orbit_text(entry: dict) -> str:
    """The orbit request text of a scenario orbit (the grammar of :mod:`cr3bp.orbits.request`)."""
    words = [entry["family"]]
    if entry.get("resonant"):
        words.append(entry["resonant"])
    words += [w for w in (entry.get("point"), entry.get("branch")) if w]
    for k in TARGET_KEYS:
        if k in entry:
            words.append(f"{k}={entry[k]}")
    return " ".join(words)


def _toml_str(v: str) -> str:
    return '"' + str(v).replace("\\", "\\\\").replace('"', '\\"') + '"'


def node_list_text(plan, transfer: dict) -> str:
    """A node list (TOML, the format of :mod:`cr3bp.transfers.nodes`) for one scenario transfer."""
    names = [transfer["from"], *transfer.get("via", []), transfer["to"]]
    lines = ["[settings]", "all_pairs = true", ""]
    seen = set()
    for n in names:
        if n in seen:
            continue
        seen.add(n)
        lines.append("[[node]]")
        if n.startswith("parking "):
            parts = n.split()
            if len(parts) != 3:
                raise InputError(f"'{n}' must read 'parking BODY ALTITUDE', e.g. 'parking earth 200km'")
            lines += [f"name = {_toml_str(n)}", 'kind = "parking"', f"body = {_toml_str(parts[1])}",
                      f"altitude = {_toml_str(parts[2])}"]
        else:
            lines += [f"name = {_toml_str(n)}", 'kind = "orbit"',
                      f"orbit = {_toml_str(orbit_text(plan.data['orbits'][n]))}"]
        lines.append("")
    return "\n".join(lines)


def design_transfers(plan, orbits, out, *, catalog=None, workers=None, scheduler=None, progress=None,
                     reduced=False):
    """Build, search and stitch every scenario transfer; write its tables and figures.

    Returns ``(routes, stitched, figures)``: per transfer name, a summary dict for the report and
    the :class:`cr3bp.transfers.stitch.StitchedRoute`; the figures written (name -> path and caption).
    """
    from .. import units
    from ..io.atomic import write_text
    from ..transfers.graph import build_graph
    from ..transfers.search import Constraints, best_routes, pareto_routes
    from ..transfers.nodes import find_node, parse_nodes
    from ..transfers.stitch import stitch_route, trajectory_rows
    system = plan.system
    routes, stitched = {}, {}
    figures = {}
    for i, t in enumerate(plan.data.get("transfers", [])):
        name = t["name"]
        say(progress, f"transfer '{name}': building the transfer graph")
        nodelist = parse_nodes(node_list_text(plan, t), system, file=f"{plan.path} [transfers {i}]")
        nodes = nodelist.nodes

        def tick(done, total, leg, _n=name):
            if done == total or done % 5 == 0:
                say(progress, f"transfer '{_n}': leg {done} of {total}")
        built = build_graph(system, nodelist, workers=workers, scheduler=scheduler, catalog=catalog, progress=tick)
        src, dst = find_node(nodes, t["from"]), find_node(nodes, t["to"])
        through = tuple(find_node(nodes, v).id for v in t.get("via", []))
        dv = system.mps(units.velocity(t["max_dv"], system)) if "max_dv" in t else None
        tof = system.days(units.time(t["max_tof"], system)) if "max_tof" in t else None
        c = Constraints(max_dv_mps=dv, max_tof_days=tof, through=through)
        label = {n.id: n.name for n in nodes}
        try:
            ranked = best_routes(built.graph, src.id, dst.id, c, "dv", int(t.get("best", 3)))
        except NoSolutionError as e:
            msg = str(e)
            for nid, nm in label.items():
                msg = msg.replace(f"'{nid}'", f"'{nm}'")
            why = sorted({p["reason"] for p in built.pruned})
            raise NoSolutionError(f"transfer '{name}': {msg}" + (f" (not attempted: {'; '.join(why)})" if why else "")) from None
        front = pareto_routes(built.graph, src.id, dst.id, c)
        say(progress, f"transfer '{name}': stitching the best route by multiple shooting")
        periods = {u: d["leg"]["period_tu"] for u, v, k, d in built.graph.edges(keys=True, data=True)
                   if u == v and k == "stay" and "period_tu" in d.get("leg", {})}
        st = stitch_route(system, ranked[0], c, periods=periods)
        stitched[name] = st

        def rd(r):
            d = r.to_dict()
            for leg in d["legs"]:
                leg["from"], leg["to"] = label.get(leg["from"], leg["from"]), label.get(leg["to"], leg["to"])
            d["nodes"] = [label.get(n, n) for n in d["nodes"]]
            return d
        routes[name] = {"best": rd(ranked[0]), "ranked": [rd(r) for r in ranked],
                        "pareto": [rd(r) for r in front], "stitched": st.to_dict(),
                        "maneuvers": list(st.maneuvers),
                        "note": (f"stitched (CR3BP): Δv {st.dv_total_mps:.2f} m/s (legs alone {st.legs_dv_total_mps:.2f} m/s), "
                                 f"time of flight {st.tof_days:.3f} d to the step-off point on the final orbit "
                                 "(coasts included), largest position jump "
                                 f"{st.continuity_lu * system.length_km * 1e3:.2e} m; {st.note}")}
        routes[name]["labels"] = {str(k): v for k, v in label.items()}
        write_route_tables(plan, name, routes[name], out)
        headers, rows = trajectory_rows(st)
        write_text(out.path(f"route-{name}-trajectory.csv"), csv_text(headers, rows, [f"stitched transfer {name}"]))
        figures.update(_figures(plan, t, orbits, ranked, front, st, out))
    return routes, stitched, figures


DV_DESIGN_NOTE = "the CR3BP design, rotating frame, fixed units (the route's dv_mps and dv_vector_mps too)"


def write_route_tables(plan, name, summary, out, exported=()):
    """``route-NAME.json`` and ``route-NAME-maneuvers.csv``: the stitched route's maneuvers with
    their design (CR3BP) Δv and, per export of this transfer (``exported``: dicts with ``file``
    and ``maneuvers``, the rows of :func:`cr3bp.io.export.maneuver_table`), the Δv measured on the
    exported trajectory, side by side and labelled, with a warning line where they differ by
    more than 1 %. Written after the design and again once the exports exist."""
    from ..io.atomic import write_text
    from ..io.export import dv_differs
    label = summary.get("labels", {})
    mans = [dict(m, dv_design_mps=m["dv_mps"]) for m in summary["maneuvers"]]
    models = {"dv_design_mps": DV_DESIGN_NOTE}
    warnings = []
    for e in exported:
        rows = e["maneuvers"]
        if len(rows) != len(mans):
            continue
        key = f"dv_exported_mps[{e['file']}]"
        models[key] = (f"the velocity jump of the exported trajectory in {e['file']} ({e['anchor']} anchoring, "
                       f"{e['frame']}, centre {e['center']})")
        for m, r in zip(mans, rows):
            m[key] = r["dv_exported_mps"]
            if dv_differs(r):
                warnings.append(f"WARNING: transfer '{name}', maneuver at {m['t_days']:.4f} d "
                                f"({label.get(m['node'], m['node'])}): design (CR3BP) {m['dv_design_mps']:.1f} m/s, "
                                f"exported in {e['file']} {r['dv_exported_mps']:.1f} m/s "
                                f"({r['dv_change_percent']:+.1f}%): budget with the model you will fly")
    summary["maneuvers_labelled"] = mans
    summary["dv_models"] = models
    summary["dv_warnings"] = warnings
    body = {k: v for k, v in summary.items() if k not in ("labels", "maneuvers_labelled")}
    body["maneuvers"] = mans
    write_text(out.path(f"route-{name}.json"), json_text({"caution": plan_caution(), "transfer": name, **body}))
    keys = [k for k in models if k != "dv_design_mps"]
    write_text(out.path(f"route-{name}-maneuvers.csv"), csv_text(
        ["t_days", "node", "x_km", "y_km", "z_km", "dv_x_mps", "dv_y_mps", "dv_z_mps", "dv_design_mps"] + keys,
        [[m["t_days"], label.get(m["node"], m["node"]), *m["position_km"], *m["dv_vector_mps"], m["dv_design_mps"],
          *(m[k] for k in keys)] for m in mans],
        [f"maneuvers of transfer {name}; Δv vectors in the rotating frame"]
        + [f"{k}: {v}" for k, v in models.items()] + warnings))


def plan_caution():
    from ..cautions import CAUTION
    return CAUTION


def _figures(plan, transfer, orbits, ranked, front, st, out):
    from ..plotting.routes import plot_corridor, plot_pareto
    name = transfer["name"]
    formats = plan.data.get("plots", {}).get("formats", ["png"])
    if not plan.data.get("plots", {}).get("corridors", True):
        return {}
    figures = {}
    legs = [d["leg"] for d in ranked[0].legs]
    from ..tubes.manifolds import corridor_tubes
    ax = plot_corridor(st, legs, tubes=corridor_tubes(route_orbits(transfer, orbits)))
    figures[f"corridor-{name}"] = save_figures(
        ax.figure, out, f"corridor-{name}", formats,
        f"{plan.name}: transfer '{name}', the best route stitched by multiple shooting over the "
        "zero-velocity curves of its legs; triangles: maneuvers.")
    ax = plot_pareto(ranked, front, ranked[0])
    figures[f"pareto-{name}"] = save_figures(
        ax.figure, out, f"pareto-{name}", formats,
        f"{plan.name}: transfer '{name}', total Δv against time of flight of the ranked routes and the Pareto set.")
    return figures


def route_orbits(transfer: dict, orbits: dict) -> list:
    """The solved orbits a scenario transfer starts from, passes through or ends on."""
    return [orbits[n] for n in (transfer["from"], *transfer.get("via", []), transfer["to"]) if n in orbits]


def transfer_trajectory(plan, st, spec, ts, step_s, ex, model):
    """The stitched transfer sampled on the export's clock, with its maneuvers."""
    from ..io import export
    from ..transfers.stitch import to_export
    base = to_export(st, spec, ex["object"].upper())
    span = float(st.times_tu[-1] - st.times_tu[0])
    grid = export.epoch_grid(spec, ts, span, step_s)
    from types import SimpleNamespace
    pieces = [SimpleNamespace(t=seg.t_tu, states=seg.states) for seg in base.segments]
    segs, _ = export.sample_legs(plan.system, pieces, grid, join_tol=1e-8)
    m = dict(model)
    m.update(base.model)
    return dataclasses.replace(base, segments=segs, time_system=ts, model=m)
