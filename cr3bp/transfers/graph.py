"""Building the transfer graph from a node list: plan the legs, prune them by energy, compute
them as independent tasks (a process pool, or a dask.distributed cluster), cache every leg.

Plan. Every ordered pair of nodes (or only the pairs the node list names, with
``all_pairs = false``) is a candidate leg. A pair whose hint allows no maneuver is attempted
only where a ballistic arc can exist: equal Jacobi constants and, when the two nodes lie in
different realms, the neck between them open (``C < C_Li``; Koon, Lo, Marsden & Ross, 2011,
ch. 3, from memory). Pairs whose ends need a solver that is not on this build are listed as
pruned, with the reason.

Compute. A task is a plain dict (system, both nodes with their states, settings); the worker
function :func:`compute_leg` is a module-level function of that dict alone, so it pickles to a
``concurrent.futures.ProcessPoolExecutor`` or to a dask worker (run by
:mod:`cr3bp.transfers.tasks`), and the same task gives the same leg byte for byte wherever it
runs.

Cache. Each leg is stored in the catalogue under a key made of both nodes' ids, the settings
and the leg format; a rebuild reads every known leg and computes none of them. Legs that
failed (no convergence, impact, over the Δv cap) are cached too, with the reason, so they are
not retried either.
"""

from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass, field

import networkx as nx
import numpy as np

from . import search
from . import tasks as tasks_mod
from ..errors import InputError, LibrateError
from .nodes import BoundaryNode, OrbitNode, ParkingNode, node_state
from .leg import LEG_FORMAT
from ..vocabulary import TUBE_BRANCHES

#: Two Jacobi constants closer than this count as one energy (ballistic legs).
SAME_ENERGY = 1e-9
#: A leg declared ballistic ("maneuvers = none") is kept only under this total Δv, m/s.
BALLISTIC_DV_MPS = 0.01
#: Trajectories per manifold tube of a connection leg.
TUBE_POINTS = 80
#: Manifold trajectories searched for a periapsis at the parking altitude.
PARKING_POINTS = 40
#: Legs written to the catalogue per transaction.
CATALOG_BATCH = 64


@dataclass(frozen=True)
class BuildResult:
    """The graph and how it was made.

    Attributes
    ----------
    graph : networkx.MultiDiGraph   node ids as nodes; edges from :func:`cr3bp.transfers.search.add_leg`
    nodes : tuple of nodes
    legs : tuple of leg dicts (every attempted leg, ``status`` "ok" or "failed")
    computed, cached : int          legs computed in this run / read from the catalogue
    pruned : tuple of dicts         pairs not attempted, with the reason
    """

    graph: object
    nodes: tuple
    legs: tuple
    computed: int
    cached: int
    pruned: tuple = ()
    settings: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        return {"nodes": [dict(n.to_dict(), **_node_energy(self.graph, n.id)) for n in self.nodes],
                "legs": [leg_summary(leg) for leg in self.legs],
                "edges": self.graph.number_of_edges(), "computed": self.computed,
                "cached": self.cached, "pruned": list(self.pruned), "settings": self.settings}


def _node_energy(graph, nid):
    d = graph.nodes[nid]
    return {"jacobi": d.get("jacobi"), "x": d.get("x")}


def leg_summary(leg: dict) -> dict:
    keys = ("from", "to", "from_name", "to_name", "method", "status", "reason", "dv_mps", "tof_days",
            "tof_arrival_days", "arrival_distance_km", "min_altitude_km", "key")
    return {k: leg.get(k) for k in keys if k in leg}


def system_spec(system) -> dict:
    return {"name": system.name, "mu": float(system.mu), "length_km": float(system.length_km),
            "time_s": float(system.time_s)}


def system_from_spec(spec):
    from ..systems import from_mu, system
    try:
        s = system(spec["name"])
        if s.mu == spec["mu"]:
            return s
    except LibrateError:
        pass
    return from_mu(spec["mu"], spec["length_km"], spec["time_s"])


def leg_key(task: dict) -> str:
    """Catalogue key of a leg: both node ids, the settings, the system and the leg format."""
    body = {"from": task["from"]["id"], "to": task["to"]["id"], "settings": task["settings"],
            "system": task["system"], "format": LEG_FORMAT, "method": task["method"],
            "states": [task["from"].get("state_used"), task["to"].get("state_used")]}
    text = json.dumps(body, sort_keys=True, separators=(",", ":"))
    return f"leg/{task['from']['id']}->{task['to']['id']}/{hashlib.sha256(text.encode()).hexdigest()[:16]}"


def compute_leg(task: dict) -> dict:
    """Compute one leg from a plain task dict; never raises for a leg that cannot be made
    (it comes back with ``status = "failed"`` and the reason)."""
    from .targeting import targeted_leg
    system = system_from_spec(task["system"])
    st = task["settings"]
    base = {"from": task["from"]["id"], "to": task["to"]["id"], "from_name": task["from"]["name"],
            "to_name": task["to"]["name"], "key": task["key"], "method": task["method"]}
    try:
        if task["method"] == "manifold":
            leg = _manifold_leg(system, task)
        elif task["method"] == "parking":
            leg = _parking_leg(system, task)
        elif task["method"] in ("capture", "escape"):
            leg = _boundary_leg(system, task)
        else:
            leg = targeted_leg(system, task["from"]["state_used"], task["to"]["state_used"], st["tof_tu"],
                               st["patches"])
    except LibrateError as e:
        return dict(base, status="failed", reason=str(e), dv_mps=None, tof_days=None)
    leg.update(base)
    # legs that do not end on a periodic orbit arrive when they end
    leg.setdefault("tof_arrival_days", leg["tof_days"])
    leg.setdefault("arrival_distance_km", None)
    cap = st.get("max_patch_dv_mps")
    if st.get("maneuvers") == "none" and leg["dv_mps"] > BALLISTIC_DV_MPS:
        return dict(base, status="failed", dv_mps=leg["dv_mps"], tof_days=leg["tof_days"],
                    reason=f"declared ballistic but needs {leg['dv_mps']:.3f} m/s")
    if cap is not None and leg["dv_mps"] > cap:
        return dict(base, status="failed", dv_mps=leg["dv_mps"], tof_days=leg["tof_days"],
                    reason=f"needs {leg['dv_mps']:.1f} m/s, over the cap of {cap:.1f} m/s")
    leg["status"] = "ok"
    leg["reason"] = ""
    return leg


# ---- planning --------------------------------------------------------------------------

def energy_prune(system, c_from, c_to, r_from, r_to, maneuvers: str, point_from="", point_to="") -> str | None:
    """Why no leg is attempted (None: attempt it). Only ballistic pairs are pruned: different
    energies, or every way between their realms through a closed neck."""
    if maneuvers != "none":
        return None
    if abs(c_from - c_to) > SAME_ENERGY:
        return f"no maneuver allowed and the Jacobi constants differ ({c_from:.9f} vs {c_to:.9f})"
    from ..energy import necks, necks_between, realms_of
    opened = necks(system, c_from)
    ra, rb = realms_of(system, r_from, point_from), realms_of(system, r_to, point_to)
    if ra & rb:
        return None
    closed = set()
    for a in ra:
        for b in rb:
            need = necks_between(a, b)
            if all(opened[p] for p in need):
                return None
            closed.update(p for p in need if not opened[p])
    return f"no maneuver allowed and the {'/'.join(sorted(closed))} neck is closed at C = {c_from:.9f}"


def resolve_orbits(system, nodelist, catalog=None, progress=None) -> dict:
    """Orbit node id -> {"state", "period", "jacobi"} or {"error"}: each orbit request solved
    once by :func:`cr3bp.orbits.request.solve_request` (read from ``catalog`` when known)."""
    from ..errors import LibrateError
    from ..orbits.request import solve_request
    out = {}
    for n in nodelist.nodes:
        if isinstance(n, OrbitNode) and n.id not in out and n.is_torus:
            from ..tori import request as treq  # lazy: only for tori
            try:
                t = treq.solve(system, n.orbit, catalog=catalog)
                out[n.id] = {"state": np.asarray(t.circle[0], dtype=float), "period": float(t.stroboscopic_time),
                             "jacobi": float(t.jacobi), "family": t.family, "point": t.point,
                             "branch": t.branch, "torus": True, "circle": np.asarray(t.circle, dtype=float),
                             "rotation": float(t.rotation)}
            except LibrateError as e:
                out[n.id] = {"error": str(e)}
            if progress is not None:
                progress(n, out[n.id])
        elif isinstance(n, OrbitNode) and n.id not in out:
            try:
                o = solve_request(system, n.orbit, catalog=catalog)
                out[n.id] = {"state": np.asarray(o.state, dtype=float), "period": float(o.period),
                             "jacobi": float(o.jacobi), "monodromy": np.asarray(o.monodromy).tolist(),
                             "family": o.family, "point": o.point, "branch": o.branch}
            except LibrateError as e:
                out[n.id] = {"error": str(e)}
            if progress is not None:
                progress(n, out[n.id])
    return out


def _orbit_plain(o: dict) -> dict:
    return {k: (v.tolist() if isinstance(v, np.ndarray) else v) for k, v in o.items()}


def _orbit_from_plain(system, d: dict):
    from ..orbits import PeriodicOrbit
    return PeriodicOrbit(system, np.array(d["state"]), float(d["period"]), np.array(d["monodromy"]),
                         d.get("family", ""), d.get("point", ""), d.get("branch", ""), float(d["jacobi"]))


def _torus_from_plain(system, d: dict):
    """The torus of a torus node's plain data (its invariance circle, stroboscopic time and
    rotation; the geometry is not needed by its manifolds)."""
    from ..tori import Torus  # lazy: only for tori
    return Torus(system=system, circle=np.array(d["circle"], dtype=float), stroboscopic_time=float(d["period"]),
                 rotation=float(d["rotation"]), jacobi=float(d["jacobi"]), jacobi_spread=0.0,
                 invariance_error=0.0, family=d.get("family", ""), point=d.get("point", ""),
                 branch=d.get("branch", ""))


def _manifold_leg(system, task) -> dict:
    """The cheapest connection between two orbit nodes over the hinted sections
    (:func:`cr3bp.tubes.connections.connect`), as a leg record (:data:`cr3bp.transfers.leg.RECORD_KEYS`)."""
    from ..tubes.connections import connect
    st = task["settings"]
    ends = []
    for end in ("from", "to"):
        d = task[end]["orbit_data"]
        ends.append(_torus_from_plain(system, d) if d.get("torus") else _orbit_from_plain(system, d))
    a, b = ends
    torus_from, torus_to = (bool(task[e]["orbit_data"].get("torus")) for e in ("from", "to"))
    found, reasons = [], []
    for sec in st["sections"]:
        try:
            if torus_from or torus_to:
                from ..tori import connections as tc  # lazy: only for tori
                found += (tc.connect_torus_to_orbit(a, b, sec, n_points=st["tube_points"]) if torus_from else
                          tc.connect_orbit_to_torus(a, b, sec, n_points=st["tube_points"]))
                continue
            legs, _, _ = connect(a, b, sec, n_points=st["tube_points"])
            found += legs
        except LibrateError as e:
            reasons.append(f"{sec}: {e}")
    if not found:
        from ..errors import NoSolutionError
        raise NoSolutionError("no manifold connection: " + ("; ".join(reasons) or "the cuts do not meet"))
    best = min(found, key=lambda lg: (lg.dv_mps, lg.tof))
    return _with_arrival(best.record(st["patches"]), best)


def _with_arrival(plain: dict, leg) -> dict:
    """The plain leg dict with the time of flight to arrival of the
    :class:`cr3bp.transfers.leg.Leg` it came from (see :data:`cr3bp.transfers.leg.TOF_DEFINITIONS`)."""
    plain["tof_arrival_days"] = float(leg.tof_arrival_days)
    plain["arrival_distance_km"] = None if math.isnan(leg.arrival_distance_km) else float(leg.arrival_distance_km)
    return plain


def _periapsis_legs(orbit, body, altitude_km, stability, n_points) -> list:
    """Legs of :func:`cr3bp.tubes.parking.parking_legs` through the orbit's manifold and its first
    periapsis at ``altitude_km`` over ``body``: the interior branch, then the exterior one if
    the interior gives none. Raises NoSolutionError with both branches' reasons."""
    from ..tubes.parking import parking_legs
    from ..errors import NoSolutionError
    found, reasons = [], []
    for branch in TUBE_BRANCHES:
        try:
            found += parking_legs(orbit, body, altitude_km, stability=stability, branch=branch,
                                  n_points=n_points)
        except LibrateError as e:
            reasons.append(str(e))
        if found:
            return found
    raise NoSolutionError("; ".join(reasons))


def _parking_leg(system, task) -> dict:
    """The cheapest leg between a parking orbit and an orbit node through the orbit's manifold
    and its first periapsis at the parking altitude (:func:`cr3bp.tubes.parking.parking_legs`:
    stable manifold to arrive at the orbit, unstable to leave it; interior branch, then
    exterior), as a leg record (:data:`cr3bp.transfers.leg.RECORD_KEYS`)."""
    st = task["settings"]
    arrive = st["arrive"]                     # parking -> orbit
    orbit = _orbit_from_plain(system, task["to" if arrive else "from"]["orbit_data"])
    try:
        found = _periapsis_legs(orbit, st["body"], st["altitude_km"], "stable" if arrive else "unstable",
                                st["tube_points"])
    except LibrateError:
        # no manifold reaches the parking orbit (Earth-Moon orbits from low Earth orbit): a
        # direct departure optimised in the CR3BP (cr3bp.transfers.departure)
        if not (arrive and system.name == "earth-moon" and str(st["body"]).lower() == "earth"):
            raise
        from .departure import as_plain_leg, design_departure
        return as_plain_leg(design_departure(orbit, st["altitude_km"], path="direct"), st["patches"])
    best = min(found, key=lambda lg: (lg.dv_mps, lg.tof))
    return _with_arrival(best.record(st["patches"]), best)


def _boundary_leg(system, task) -> dict:
    """The fastest ballistic way from an orbit node to a capture or escape condition along the
    orbit's unstable manifold (interior branch, then exterior): for a capture, the first
    periapsis at the capture altitude about the body (:func:`cr3bp.tubes.parking.parking_legs`,
    its insertion impulse left out: a capture node asks for the arrival condition, not an
    orbit); for an escape, the first crossing of the escape distance from the body. Zero Δv."""
    from ..tubes.manifolds import Stop, grow_tube
    from ..tubes.sections import primary_index
    from .stitch import RTOL, ATOL
    st = task["settings"]
    orbit = _orbit_from_plain(system, task["from"]["orbit_data"])
    reasons = []
    if task["method"] == "capture":
        found = _periapsis_legs(orbit, st["body"], st["distance_km"], "unstable", st["tube_points"])
        best = min(found, key=lambda lg: lg.tof)
        leg = best.record(st["patches"])
        # the arrival condition itself: the state at periapsis before any insertion impulse
        leg["arrival_state"] = leg["final_state"]
        leg["maneuvers"] = [m for m in leg["maneuvers"] if m["where"] != "arrival"]
        leg["dv_mps"] = float(sum(m["dv_mps"] for m in leg["maneuvers"]))
        leg["method"], leg["kind"] = "capture", "capture"
        return leg
    p = primary_index(system, st["body"])
    radius = st["distance_km"] / system.length_km
    from ..errors import NoSolutionError
    for branch in TUBE_BRANCHES:
        tube = grow_tube(orbit, "unstable", branch, st["tube_points"],
                         until=Stop(t_max=4.0 * math.pi, escape_radius=radius, escape_center=p))
        hit = [i for i, s_ in enumerate(tube.status) if s_ == "escape"]
        if hit:
            i = min(hit, key=lambda k: tube.tof[k])
            tof = float(tube.tof[i])
            te = np.linspace(0.0, tof, st["patches"] + 1)
            from ..integrate import propagate
            arc = propagate(system, tube.start_states[i], tof, rtol=RTOL, atol=ATOL, t_eval=te)
            r = np.linalg.norm(arc.states[:, :3] - np.array([system.positions[p], 0, 0]), axis=1)
            return {"format": 1, "method": "escape", "how": f"unstable {branch} manifold to escape",
                    "kind": "escape", "dv_mps": 0.0, "tof_days": float(system.days(tof)), "tof_tu": tof,
                    "maneuvers": [], "departure_state": tube.start_states[i].tolist(),
                    "arrival_state": arc.states[-1].tolist(), "patch_times": te[:-1].tolist(),
                    "patch_states": arc.states[:-1].tolist(), "final_state": arc.states[-1].tolist(),
                    "min_altitude_km": float(r.min() * system.length_km - (system.primary, system.secondary)[p].radius_km),
                    "details": {"branch": branch, "escaped": len(hit), "of": int(tube.n)}}
        reasons.append(f"no trajectory of the unstable {branch} manifold of {describe_orbit(orbit)} gets "
                       f"{st['distance_km']:g} km from {system.names[p]} within {system.days(4 * math.pi):.0f} days")
    raise NoSolutionError("; ".join(reasons))


def describe_orbit(orbit) -> str:
    from ..tubes.manifolds import describe
    return describe(orbit)


def _state_of(system, node, orbits):
    if isinstance(node, OrbitNode):
        return orbits.get(node.id, {}).get("state")
    return node_state(system, node)


def plan(system, nodelist, tof_days=None, patches=None, orbits=None):
    """Tasks (plain dicts, in a fixed order) and the pruned pairs of a node list.

    ``orbits`` is :func:`resolve_orbits`'s result (computed here when not given). A leg to or
    from an orbit node departs or arrives at the orbit's reference state (its initial state)."""
    from ..dynamics import jacobi
    if not system.dimensional:
        raise InputError(f"system '{system.name}' has no dimensional units; the graph reports m/s and days")
    tof_days = nodelist.tof_days if tof_days is None else tof_days
    patches = nodelist.patches if patches is None else patches
    if orbits is None:
        orbits = resolve_orbits(system, nodelist)
    states = {n.id: _state_of(system, n, orbits) for n in nodelist.nodes}
    hints = {}
    for h in nodelist.hints:
        hints[(h.source, h.target)] = h
        if h.both_ways:
            hints.setdefault((h.target, h.source), h)
    if nodelist.all_pairs:
        pairs = [(a, b) for a in nodelist.nodes for b in nodelist.nodes if a is not b]
    else:
        byname = nodelist.by_name()
        pairs = [(byname[s], byname[t]) for (s, t) in hints]
    tasks, pruned = [], []
    for a, b in pairs:
        h = hints.get((a.name, b.name))
        why = None
        for n in (a, b):
            if why is not None:               # the first reason found stands
                break
            if isinstance(n, OrbitNode):
                if "error" in orbits.get(n.id, {}):
                    why = f"orbit node '{n.name}': {orbits[n.id]['error']}"
            elif isinstance(n, BoundaryNode):
                # a capture or escape condition is an end: reached from a periodic orbit along
                # its unstable manifold, never left
                if n is a:
                    why = f"{n.kind} node '{n.name}' is an end point: legs arrive at it, none leave"
                elif not isinstance(a, OrbitNode):
                    why = (f"{n.kind} node '{n.name}' is reached from periodic orbits (their unstable "
                           f"manifolds), not from the {a.kind} node '{a.name}'")
            elif isinstance(n, ParkingNode):
                # a leg from or to a parking orbit has a free phase: a manifold leg through
                # periapsis (cr3bp.tubes.parking) or a direct departure (cr3bp.transfers.departure),
                # between a parking orbit and a periodic orbit only
                other = b if n is a else a
                if not isinstance(other, OrbitNode):
                    why = (f"parking node '{n.name}' joins periodic orbits only (a manifold leg through "
                           f"periapsis, or a direct departure from an Earth parking orbit in Earth-Moon), "
                           f"not the {other.kind} node '{other.name}'")
        for n in (a, b):
            hinted = bool(h and h.sections)
            if why is None and isinstance(n, OrbitNode) and n.is_torus and (
                    isinstance(a, (ParkingNode, BoundaryNode)) or isinstance(b, (ParkingNode, BoundaryNode))
                    or (hinted and getattr(a, "is_torus", False) and getattr(b, "is_torus", False))):
                why = (f"torus node '{n.name}': of the legs through manifolds only section-hinted connections "
                       "between a torus and a periodic orbit are built; parking, capture and escape legs of tori "
                       "and torus-to-torus connections are not yet; a targeted leg departs or arrives at the "
                       "torus's reference state (phase 0, 0)")
        sa, sb = states[a.id], states[b.id]
        maneuvers = h.maneuvers if h else "ends"
        if why is None and not isinstance(b, BoundaryNode):   # a boundary has no state: the manifold decides
            why = energy_prune(system, float(jacobi(system.mu, sa)), float(jacobi(system.mu, sb)),
                               sa[:3], sb[:3], maneuvers, getattr(a, "point", ""), getattr(b, "point", ""))
        if why is not None:
            pruned.append({"from": a.name, "to": b.name, "reason": why})
            continue
        tof = h.tof_days if (h and h.tof_days is not None) else tof_days
        settings = {"tof_tu": float(tof / system.time_days), "patches": int(patches), "maneuvers": maneuvers,
                    "max_patch_dv_mps": h.max_patch_dv_mps if h else None}
        method = "targeted"
        if isinstance(b, BoundaryNode):
            method = b.kind                       # "capture" or "escape"
            settings = {"patches": int(patches), "maneuvers": maneuvers, "body": b.body,
                        "distance_km": b.distance_km, "max_patch_dv_mps": h.max_patch_dv_mps if h else None,
                        "tube_points": PARKING_POINTS}
        elif isinstance(a, ParkingNode) or isinstance(b, ParkingNode):
            method = "parking"
            park, orb = (a, b) if isinstance(a, ParkingNode) else (b, a)
            settings = {"patches": int(patches), "maneuvers": maneuvers, "body": park.body,
                        "altitude_km": park.altitude_km, "arrive": park is a,
                        "max_patch_dv_mps": h.max_patch_dv_mps if h else None, "tube_points": PARKING_POINTS}
        elif h and h.sections and isinstance(a, OrbitNode) and isinstance(b, OrbitNode):
            # manifold connection on the hinted section(s): unstable tube of a, stable of b
            method = "manifold"
            settings = {"patches": int(patches), "maneuvers": maneuvers, "sections": list(h.sections),
                        "max_patch_dv_mps": h.max_patch_dv_mps, "tube_points": TUBE_POINTS}
        task = {"system": system_spec(system), "method": method, "settings": settings,
                "from": dict(a.to_dict(), state_used=None if sa is None else sa.tolist()),
                "to": dict(b.to_dict(), state_used=None if sb is None else sb.tolist())}
        for end, n in (("from", a), ("to", b)):
            if method in ("manifold", "parking", "capture", "escape") and isinstance(n, OrbitNode):
                task[end]["orbit_data"] = _orbit_plain(orbits[n.id])
        task["key"] = leg_key(task)
        tasks.append(task)
    return tasks, pruned


# ---- running the tasks --------------------------------------------------------------------

def run_tasks(tasks, workers=None, scheduler=None, progress=None) -> list:
    """Results of :func:`compute_leg` over ``tasks``, in task order, run by
    :func:`cr3bp.transfers.tasks.run_tasks` (``scheduler``: a dask.distributed scheduler's
    address or a ``distributed.Client``; otherwise a process pool of ``workers`` processes,
    default the machine's cores; 1 runs in this process)."""
    return tasks_mod.run_tasks(compute_leg, tasks, workers, scheduler, progress)


def build_graph(system, nodelist, *, workers=None, scheduler=None, catalog=None, progress=None,
                tof_days=None, patches=None) -> BuildResult:
    """The transfer graph of ``nodelist``: plan, prune, compute (or read from ``catalog``).

    Parameters
    ----------
    system : System (dimensional)
    nodelist : cr3bp.transfers.nodes.NodeList
    workers : int, optional       process-pool size (default: all cores; 1: in this process)
    scheduler : str or distributed.Client, optional   run the legs on a dask cluster instead
    catalog : cr3bp.catalog.Catalog, optional          leg cache
    progress : callable(done, total, leg), optional
    tof_days, patches : override the node list's settings

    Returns
    -------
    BuildResult
    """
    from ..dynamics import jacobi
    orbits = resolve_orbits(system, nodelist, catalog)
    tasks, pruned = plan(system, nodelist, tof_days, patches, orbits)
    legs: list = [None] * len(tasks)
    todo = []
    for i, t in enumerate(tasks):
        known = catalog.get_leg(t["key"]) if catalog is not None else None
        if known is not None:
            # the cache is keyed by what the nodes are, not by what a node list calls them
            known["from_name"], known["to_name"] = t["from"]["name"], t["to"]["name"]
            legs[i] = known
        else:
            todo.append(i)
    cached = len(tasks) - len(todo)
    pending = []

    def flush():
        if catalog is not None and pending:
            catalog.put_legs([(leg["key"], system, leg) for leg in pending])
        pending.clear()

    def tick(done, total, leg):
        # legs reach the catalogue in batches as they complete, so an interrupted build
        # keeps what it computed
        pending.append(leg)
        if len(pending) >= CATALOG_BATCH:
            flush()
        if progress is not None:
            progress(done, total, leg)

    try:
        results = run_tasks([tasks[i] for i in todo], workers, scheduler, tick)
    finally:
        flush()
    for i, leg in zip(todo, results):
        legs[i] = leg
    graph = nx.MultiDiGraph(system=system.name)
    for n in nodelist.nodes:
        s = _state_of(system, n, orbits)
        graph.add_node(n.id, name=n.name, kind=n.kind, node=n.to_dict(),
                       jacobi=None if s is None else float(jacobi(system.mu, s)),
                       x=None if s is None else float(s[0]), y=None if s is None else float(s[1]),
                       period_days=orbits[n.id]["period"] * system.time_days
                       if "period" in orbits.get(n.id, {}) else None)
        if "period" in orbits.get(n.id, {}):
            # phasing along the orbit: a self-loop of one period, no Δv (the simple-path search
            # never takes it; it records how long one waits per revolution)
            search.add_leg(graph, n.id, n.id, 0.0, orbits[n.id]["period"] * system.time_days, key="stay",
                            kind="stay", leg={"from": n.id, "to": n.id, "method": "stay", "status": "ok",
                                              "dv_mps": 0.0, "period_tu": orbits[n.id]["period"]})
    for leg in legs:
        if leg["status"] == "ok":
            search.add_leg(graph, leg["from"], leg["to"], leg["dv_mps"], leg["tof_days"], key=leg["method"],
                            kind=leg["method"], min_altitude_km=leg["min_altitude_km"], leg=leg,
                            tof_arrival_days=leg.get("tof_arrival_days", leg["tof_days"]),
                            arrival_distance_km=leg.get("arrival_distance_km"))
    settings = {"tof_days": nodelist.tof_days if tof_days is None else tof_days,
                "patches": nodelist.patches if patches is None else patches}
    return BuildResult(graph, tuple(nodelist.nodes), tuple(legs), len(todo), cached, tuple(pruned), settings)


def leg_json(leg: dict) -> str:
    """Canonical JSON of a leg (sorted keys): two equal legs give equal text."""
    return json.dumps(leg, sort_keys=True, allow_nan=True)


def finite(v):
    return v if (isinstance(v, float) and math.isfinite(v)) else None
