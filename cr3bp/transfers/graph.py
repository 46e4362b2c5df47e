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
runs. A task returns its leg as the plain leg record (:meth:`cr3bp.transfers.leg.Leg.record`),
the form the catalogue stores: every leg of a build, computed here, in a pool, on a cluster or
read from the catalogue, becomes a :class:`cr3bp.transfers.leg.Leg` through the one
:meth:`cr3bp.transfers.leg.Leg.from_record`, so none can differ by the way it travelled (and
no worker pickles a System).

Cache. Each leg is stored in the catalogue under a key made of both nodes' ids, the settings
and the leg format; a rebuild reads every known leg and computes none of them. Legs that
failed (no convergence, impact, over the Δv cap) are cached too, with the reason, so they are
not retried either.
"""

from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass, field, replace

import networkx as nx
import numpy as np

from . import search
from . import tasks as tasks_mod
from ..dynamics import jacobi
from ..energy import necks, necks_between, realms_of
from ..errors import InputError, LibrateError, NoSolutionError
from ..integrate import propagate
from ..orbits import PeriodicOrbit
from ..orbits.request import family_key, parse_request, solve_request
from ..systems import from_mu, system as named_system
from ..tubes.connections import connect
from ..tubes.manifolds import Stop, describe, grow_tube
from ..tubes.parking import parking_legs
from ..tubes.sections import primary_index
from ..vocabulary import CR3BP_DEPARTURE_PATHS, TUBE_BRANCHES
from .departure import as_leg, design_departure
from .leg import LEG_FORMAT, Leg
from .nodes import BoundaryNode, OrbitNode, ParkingNode, node_state
from .stitch import ATOL, RTOL
from .targeting import targeted_leg

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
    """The transfer graph and how it was made (what :func:`build_graph` returns).

    Parameters
    ----------
    graph : networkx.MultiDiGraph
        Node ids as nodes; edges from :func:`cr3bp.transfers.search.add_leg`, each carrying its
        :class:`cr3bp.transfers.leg.Leg`.
    nodes : tuple
        The node list's nodes.
    legs : tuple of cr3bp.transfers.leg.Leg
        Every attempted leg, ``status`` "ok" or "failed".
    computed, cached : int
        Legs computed in this run / read from the catalogue.
    pruned : tuple of dict
        Pairs not attempted, with the reason.
    settings : dict
        The time of flight and patch count used.

    Examples
    --------
    >>> import networkx as nx
    >>> from cr3bp.transfers.graph import BuildResult
    >>> BuildResult(nx.MultiDiGraph(), (), (), 0, 0).to_dict()["edges"]
    0

    References
    ----------
    Dijkstra, "A note on two problems in connexion with graphs", *Numerische Mathematik* 1,
    269-271, 1959 (the graph the route search runs on).
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


def leg_summary(leg: Leg) -> dict:
    """The leg's row of a graph's leg list (:meth:`cr3bp.transfers.leg.Leg.summary`).

    Parameters
    ----------
    leg : cr3bp.transfers.leg.Leg

    Returns
    -------
    dict
        Ids, names, method, status, reason, Δv (m/s), times of flight (days), arrival distance
        and lowest altitude (km), catalogue key; a failed attempt has fewer keys.

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.transfers.graph import leg_summary
    >>> from cr3bp.transfers.leg import Leg
    >>> leg = Leg.from_record({"from": "a", "to": "b", "from_name": "A", "to_name": "B", "key": "k",
    ...                        "method": "targeted", "status": "failed", "reason": "no convergence",
    ...                        "dv_mps": None, "tof_days": None})
    >>> leg_summary(leg)["status"]
    'failed'

    References
    ----------
    Common practice (a tabular summary of graph edges).
    """
    return leg.summary()


def system_spec(system) -> dict:
    """The plain description of a system a graph task carries (name, mu, length and time units).

    Parameters
    ----------
    system : System

    Returns
    -------
    dict
        ``name``, ``mu``, ``length_km``, ``time_s``.

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.graph import system_spec
    >>> sorted(system_spec(system("earth-moon")))
    ['length_km', 'mu', 'name', 'time_s']

    References
    ----------
    Tasks as plain data so they pickle to worker processes: Python documentation,
    ``concurrent.futures.ProcessPoolExecutor`` (common practice).
    """
    return {"name": system.name, "mu": float(system.mu), "length_km": float(system.length_km),
            "time_s": float(system.time_s)}


def system_from_spec(spec):
    """The system of a task's :func:`system_spec`: the tabulated system of that name when its mu
    matches, else one built from the numbers.

    Parameters
    ----------
    spec : dict
        As :func:`system_spec` writes it.

    Returns
    -------
    System

    Raises
    ------
    InputError
        The numbers do not make a system (mu outside (0, 0.5]).

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.graph import system_from_spec, system_spec
    >>> system_from_spec(system_spec(system("earth-moon"))).name
    'earth-moon'

    References
    ----------
    Common practice (see :func:`system_spec`).
    """
    try:
        s = named_system(spec["name"])
        if s.mu == spec["mu"]:
            return s
    except LibrateError:
        pass
    return from_mu(spec["mu"], spec["length_km"], spec["time_s"])


def leg_key(task: dict) -> str:
    """Catalogue key of a leg: both node ids, the settings, the system and the leg format.

    Parameters
    ----------
    task : dict
        A task of :func:`plan` (its ``from``, ``to``, ``settings``, ``system``, ``method``).

    Returns
    -------
    str
        ``leg/FROM->TO/HASH`` (SHA-256 of the canonical JSON of what makes the leg, 16 hex digits).

    Raises
    ------
    KeyError
        The task lacks one of those keys (a task of :func:`plan` has them all).

    Examples
    --------
    >>> from cr3bp.transfers.graph import leg_key
    >>> task = {"from": {"id": "a"}, "to": {"id": "b"}, "settings": {}, "system": {}, "method": "targeted"}
    >>> leg_key(task).startswith("leg/a->b/"), leg_key(task) == leg_key(dict(task))
    (True, True)

    References
    ----------
    Content-addressed caching (a key hashed from everything the result depends on): common
    practice.
    """
    body = {"from": task["from"]["id"], "to": task["to"]["id"], "settings": task["settings"],
            "system": task["system"], "format": LEG_FORMAT, "method": task["method"],
            "states": [task["from"].get("state_used"), task["to"].get("state_used")]}
    text = json.dumps(body, sort_keys=True, separators=(",", ":"))
    return f"leg/{task['from']['id']}->{task['to']['id']}/{hashlib.sha256(text.encode()).hexdigest()[:16]}"


def compute_leg(task: dict) -> dict:
    """Compute one leg from a plain task dict (the worker function of the graph's tasks).

    Never raises for a leg that cannot be made: it comes back with ``status = "failed"`` and the
    reason. Returns the leg record (:meth:`cr3bp.transfers.leg.Leg.record`): a task's result
    crosses a process boundary and goes into the catalogue as it is, and every path (this
    process, a pool, a dask worker, the catalogue) turns it into a
    :class:`cr3bp.transfers.leg.Leg` through the one :meth:`cr3bp.transfers.leg.Leg.from_record`.

    Parameters
    ----------
    task : dict
        A task of :func:`plan`.

    Returns
    -------
    dict
        The leg record, stamped with both node ids and names and the catalogue key.

    Raises
    ------
    KeyError
        A malformed task (tasks of :func:`plan` are well formed).

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import EXAMPLE_NODE_LIST, parse_nodes
    >>> em = system("earth-moon")
    >>> nodes = parse_nodes(EXAMPLE_NODE_LIST, em)      # two fixed states, a and b
    >>> from cr3bp.transfers.graph import compute_leg, plan
    >>> tasks, pruned = plan(em, nodes)
    >>> record = compute_leg(tasks[0])
    >>> record["status"], record["method"], len(record["patch_states"])
    ('ok', 'targeted', 2)

    References
    ----------
    Targeted legs: :mod:`cr3bp.transfers.targeting`; manifold legs: Koon, Lo, Marsden & Ross, *Dynamical Systems, the Three-Body Problem and Space Mission
    Design*, 2011, ch. 3 (realms, necks) and ch. 7 (legs patched from manifolds) (from memory).
    """
    system = system_from_spec(task["system"])
    st = task["settings"]
    ends = (task["from"]["id"], task["to"]["id"], task["from"]["name"], task["to"]["name"], task["key"])

    def failed(reason, dv_mps=None, tof_days=None):
        return Leg(system, "", "", (), dv_mps, math.nan, None, (), "", solver=task["method"], status="failed",
                   reason=reason, tof_days=tof_days).on_graph(*ends).record()
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
        return failed(str(e))
    leg = replace(leg, solver=task["method"]).on_graph(*ends)
    cap = st.get("max_patch_dv_mps")
    if st.get("maneuvers") == "none" and leg.dv_mps > BALLISTIC_DV_MPS:
        return failed(f"declared ballistic but needs {leg.dv_mps:.3f} m/s", leg.dv_mps, leg.tof_days)
    if cap is not None and leg.dv_mps > cap:
        return failed(f"needs {leg.dv_mps:.1f} m/s, over the cap of {cap:.1f} m/s", leg.dv_mps, leg.tof_days)
    return leg.record()


# ---- planning --------------------------------------------------------------------------

def energy_prune(system, c_from, c_to, r_from, r_to, maneuvers: str, point_from="", point_to="") -> str | None:
    """Why no leg is attempted between two states (None: attempt it). Only ballistic pairs are
    pruned: different energies, or every way between their realms through a closed neck.

    Parameters
    ----------
    system : System
    c_from, c_to : float
        Jacobi constants of the two ends.
    r_from, r_to : array_like (3,)
        Their positions (the realm each lies in).
    maneuvers : {"ends", "none"}
        "none": a ballistic leg is asked for.
    point_from, point_to : str
        The Lagrange point an orbit node circles ("" otherwise; an orbit about a point touches
        the realms on both sides of its neck).

    Returns
    -------
    str or None

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.graph import energy_prune
    >>> em = system("earth-moon")
    >>> energy_prune(em, 3.10, 3.10, [0.8, 0, 0], [0.9, 0, 0], "ends") is None
    True
    >>> energy_prune(em, 3.10, 3.12, [0.8, 0, 0], [0.9, 0, 0], "none")
    'no maneuver allowed and the Jacobi constants differ (3.100000000 vs 3.120000000)'

    References
    ----------
    Koon, Lo, Marsden & Ross, *Dynamical Systems, the Three-Body Problem and Space Mission
    Design*, 2011, ch. 3 (realms, necks) and ch. 7 (legs patched from manifolds) (from memory).
    """
    if maneuvers != "none":
        return None
    if abs(c_from - c_to) > SAME_ENERGY:
        return f"no maneuver allowed and the Jacobi constants differ ({c_from:.9f} vs {c_to:.9f})"
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


def resolve_orbits(system, nodelist, catalog=None, progress=None, *, workers=None, scheduler=None,
                   executor=None) -> dict:
    """Orbit node id -> its solved orbit: each orbit request of ``nodelist`` solved once by
    :func:`cr3bp.orbits.request.solve_request` (read from ``catalog`` when known).

    Without a catalogue, each family is grown once for all the requests on it; with ``workers``
    above 1 or a ``scheduler`` the families (and the tori) are independent tasks spread over a
    process pool or a dask cluster (one task per family, :func:`solve_orbit_group`), each grown
    exactly as here, so the orbits are the same bit for bit. With a catalogue the orbits are
    solved here (the catalogue is written by this process alone).

    Parameters
    ----------
    system : System
    nodelist : cr3bp.transfers.nodes.NodeList
    catalog : cr3bp.catalog.Catalog, optional
    progress : callable(node, result), optional
    workers : int, optional
        Process-pool size for the families (default: here).
    scheduler : str or distributed.Client, optional
        A dask.distributed scheduler's address, ``"local:N"`` or a client instead.
    executor : concurrent.futures.ProcessPoolExecutor, optional
        A pool already started (:func:`cr3bp.transfers.tasks.start_pool`), left running.

    Returns
    -------
    dict
        Node id -> ``{"state", "period", "jacobi", "monodromy", "family", "point", "branch"}``,
        or ``{"error"}`` (the reason the orbit could not be solved).

    Raises
    ------
    None
        An orbit that cannot be solved is reported in the result.

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import EXAMPLE_NODE_LIST, parse_nodes
    >>> em = system("earth-moon")
    >>> nodes = parse_nodes(EXAMPLE_NODE_LIST, em)      # two fixed states, a and b
    >>> from cr3bp.transfers.graph import resolve_orbits
    >>> resolve_orbits(em, nodes)           # no orbit nodes: nothing to solve
    {}

    References
    ----------
    Periodic orbits by differential correction and continuation: see :mod:`cr3bp.orbits`.
    """
    wanted, seen = [], set()
    for n in nodelist.nodes:
        if isinstance(n, OrbitNode) and n.id not in seen:
            seen.add(n.id)
            wanted.append(n)
    parallel = scheduler is not None or (workers is not None and workers > 1)
    if catalog is None and parallel and wanted:
        groups = orbit_groups(wanted)
        spec = system_spec(system)
        tasks = [{"system": spec, "requests": [(n.id, n.orbit, bool(n.is_torus)) for n in g]} for g in groups]
        solved = {}
        for part in tasks_mod.run_tasks(solve_orbit_group, tasks, workers, scheduler, executor=executor):
            solved.update(part)
        out = {}
        for n in wanted:
            out[n.id] = solved[n.id]
            if progress is not None:
                progress(n, out[n.id])
        return out
    out = {}
    grown = {} if catalog is None else None     # each family grown once in a build without a catalogue
    for n in wanted:
        out[n.id] = _solve_node(system, n.id, n.orbit, n.is_torus, catalog, grown)
        if progress is not None:
            progress(n, out[n.id])
    return out


def _solve_node(system, nid, text, is_torus, catalog=None, grown=None) -> dict:
    """One orbit node's plain result (or ``{"error"}``)."""
    if is_torus:
        from ..tori import request as treq  # lazy: only for tori
        try:
            t = treq.solve(system, text, catalog=catalog)
        except LibrateError as e:
            return {"error": str(e)}
        return {"state": np.asarray(t.circle[0], dtype=float), "period": float(t.stroboscopic_time),
                "jacobi": float(t.jacobi), "family": t.family, "point": t.point,
                "branch": t.branch, "torus": True, "circle": np.asarray(t.circle, dtype=float),
                "rotation": float(t.rotation), "stability": dict(t.stability),
                # the orbit it was grown from: the start of a lunar-flyby departure to it
                "around": {k: t.around[k] for k in ("state", "period") if k in (t.around or {})}}
    try:
        o = solve_request(system, text, catalog=catalog, grown=grown)
    except LibrateError as e:
        return {"error": str(e)}
    return {"state": np.asarray(o.state, dtype=float), "period": float(o.period),
            "jacobi": float(o.jacobi), "monodromy": np.asarray(o.monodromy).tolist(),
            "family": o.family, "point": o.point, "branch": o.branch}


def orbit_groups(nodes) -> list:
    """Orbit nodes grouped so that each group is one independent task: the requests on one
    family together (it is grown once for them), each torus alone; groups in the order of their
    first node.

    Parameters
    ----------
    nodes : sequence of cr3bp.transfers.nodes.OrbitNode

    Returns
    -------
    list of list of OrbitNode

    Raises
    ------
    None
        A request that does not parse is a group of its own (its task reports the error).

    Examples
    --------
    >>> from types import SimpleNamespace as N
    >>> from cr3bp.transfers.graph import orbit_groups
    >>> nodes = [N(id=i, orbit=o, is_torus=False) for i, o in
    ...          enumerate(["lyapunov L1 jacobi=3.1", "halo L2 south jacobi=3.05", "lyapunov L1 jacobi=3.15"])]
    >>> [[n.id for n in g] for g in orbit_groups(nodes)]
    [[0, 2], [1]]

    References
    ----------
    None: how this project groups its work (common practice).
    """
    keyed = {}
    for n in nodes:
        key = ("node", n.id)
        if not n.is_torus:
            try:
                spec = parse_request(n.orbit)
                key = (*family_key(spec), spec.resonance)
            except LibrateError:
                pass
        keyed.setdefault(key, []).append(n)
    return list(keyed.values())


def solve_orbit_group(task: dict) -> dict:
    """The orbits of one group of :func:`orbit_groups` (the worker function of a graph's orbits):
    node id -> the plain result of :func:`resolve_orbits`, its family grown once for the group.

    Parameters
    ----------
    task : dict
        ``system`` (:func:`system_spec`) and ``requests``: ``(node id, request text, is torus)``.

    Returns
    -------
    dict
        Node id -> ``{"state", "period", ...}`` or ``{"error"}``.

    Raises
    ------
    None
        An orbit that cannot be solved is reported in the result.

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.graph import solve_orbit_group, system_spec
    >>> solve_orbit_group({"system": system_spec(system("earth-moon")),
    ...                    "requests": [("o", "lyapunov L1 colour=red", False)]})
    {'o': {'error': "unknown target 'colour'; allowed: period, jacobi, ax, ay, az, x, perilune, resonance"}}

    References
    ----------
    Periodic orbits by differential correction and continuation: see :mod:`cr3bp.orbits`.
    """
    system = system_from_spec(task["system"])
    grown = {}
    return {nid: _solve_node(system, nid, text, is_torus, None, grown) for nid, text, is_torus in task["requests"]}


def _orbit_plain(o: dict) -> dict:
    return {k: (v.tolist() if isinstance(v, np.ndarray) else v) for k, v in o.items()}


def _orbit_from_plain(system, d: dict):
    return PeriodicOrbit(system, np.array(d["state"]), float(d["period"]), np.array(d["monodromy"]),
                         d.get("family", ""), d.get("point", ""), d.get("branch", ""), float(d["jacobi"]))


def _torus_from_plain(system, d: dict):
    """The torus of a torus node's plain data (its invariance circle, stroboscopic time and
    rotation, the state and period of the orbit it was grown from; the geometry is not needed by
    its manifolds)."""
    from ..tori import Torus  # lazy: only for tori
    return Torus(system=system, circle=np.array(d["circle"], dtype=float), stroboscopic_time=float(d["period"]),
                 rotation=float(d["rotation"]), jacobi=float(d["jacobi"]), jacobi_spread=0.0,
                 invariance_error=0.0, family=d.get("family", ""), point=d.get("point", ""),
                 branch=d.get("branch", ""), around=dict(d.get("around") or {}))


def _manifold_leg(system, task) -> Leg:
    """The cheapest connection between two orbit nodes over the hinted sections
    (:func:`cr3bp.tubes.connections.connect`), in shooting form."""
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
            if torus_from and torus_to:
                from ..tori import connections as tc  # lazy: only for tori
                found += tc.connect_torus_to_torus(a, b, sec, n_points=st["tube_points"])
                continue
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
        raise NoSolutionError("no manifold connection: " + ("; ".join(reasons) or "the cuts do not meet"))
    best = min(found, key=lambda lg: (lg.dv_mps, lg.tof))
    return best.with_patches(st["patches"])


def _is_torus(obj) -> bool:
    """A quasi-periodic torus (cr3bp.tori.Torus) rather than a periodic orbit."""
    return type(obj).__name__ == "Torus"


def _periapsis_legs(orbit, body, altitude_km, stability, n_points) -> list:
    """Legs of :func:`cr3bp.tubes.parking.parking_legs` (a torus:
    :func:`cr3bp.tori.parking.torus_parking_legs`) through the orbit's manifold and its first
    periapsis at ``altitude_km`` over ``body``: the interior branch, then the exterior one if
    the interior gives none. Raises NoSolutionError with both branches' reasons."""
    found, reasons = [], []
    legs_of = parking_legs
    if _is_torus(orbit):
        from ..tori.parking import torus_parking_legs as legs_of  # lazy: only for tori
    for branch in TUBE_BRANCHES:
        try:
            found += legs_of(orbit, body, altitude_km, stability=stability, branch=branch,
                             n_points=n_points)
        except LibrateError as e:
            reasons.append(str(e))
        if found:
            return found
    raise NoSolutionError("; ".join(reasons))


def _parking_leg(system, task) -> Leg:
    """The cheapest leg between a parking orbit and an orbit node through the orbit's manifold
    and its first periapsis at the parking altitude (:func:`cr3bp.tubes.parking.parking_legs`:
    stable manifold to arrive at the orbit, unstable to leave it; interior branch, then
    exterior), in shooting form."""
    st = task["settings"]
    arrive = st["arrive"]                     # parking -> orbit
    data = task["to" if arrive else "from"]["orbit_data"]
    earth = system.name == "earth-moon" and str(st["body"]).lower() == "earth"
    if data.get("torus") and not earth:
        # a torus and any other parking orbit: through its manifold's periapsis (cr3bp.tori.parking)
        found = _periapsis_legs(_torus_from_plain(system, data), st["body"], st["altitude_km"],
                                "stable" if arrive else "unstable", st["tube_points"])
        return min(found, key=lambda lg: (lg.dv_mps, lg.tof)).with_patches(st["patches"])
    if data.get("torus"):
        # a torus and an Earth parking orbit in Earth-Moon: the departure (direct or lunar-flyby)
        # with the insertion point free over both torus angles (cr3bp.tori.departure), or the
        # return, its time-reverse (cr3bp.transfers.returns)
        torus = _torus_from_plain(system, data)
        if not arrive:
            return _return_leg(torus, st)
        if st.get("path") == "low-energy":
            return _low_energy_leg(torus, st)
        from ..tori.departure import design_torus_departure  # lazy: only for tori
        dep = design_torus_departure(torus, st["altitude_km"], path=st.get("path") or "direct",
                                     inclination_deg=st.get("inclination_deg"))
        return as_leg(dep, st["patches"])
    orbit = _orbit_from_plain(system, data)
    departs = arrive and earth
    if st.get("path") == "low-energy":
        return _low_energy_leg(orbit, st)
    if st.get("path") is not None:
        # a departure path asked for: that design, no manifold search
        if not departs:
            raise NoSolutionError(f"departure path '{st['path']}' leaves an Earth parking orbit in the "
                                  "Earth-Moon system for a periodic orbit; this leg is not such a departure")
        return _direct_departure_leg(orbit, st)
    if not manifold_may_reach(orbit, st["body"], st["altitude_km"]):
        # no manifold of this orbit comes down to the parking orbit: no periapsis search (it
        # cannot succeed); a departure goes straight to the direct design, a return has none
        # and a return to an Earth parking orbit is the direct departure's time-reverse
        if departs:
            return _direct_departure_leg(orbit, st)
        if earth:
            return _return_leg(orbit, st)
        raise NoSolutionError(
            f"no unstable manifold of an Earth-Moon orbit about {orbit.point} comes below about "
            f"{MANIFOLD_EARTH_FLOOR_KM:.0f} km over the Earth (parking orbit at {st['altitude_km']:g} km)")
    try:
        found = _periapsis_legs(orbit, st["body"], st["altitude_km"], "stable" if arrive else "unstable",
                                st["tube_points"])
    except LibrateError:
        # no manifold reaches the parking orbit: a direct departure optimised in the CR3BP
        # (cr3bp.transfers.departure), or its time-reverse to return (cr3bp.transfers.returns)
        if departs:
            return _direct_departure_leg(orbit, st)
        if earth and not arrive:
            return _return_leg(orbit, st)
        raise
    best = min(found, key=lambda lg: (lg.dv_mps, lg.tof))
    return best.with_patches(st["patches"])


def _earth_departure(system, node) -> bool:
    """Whether the parking node ``node`` is about the Earth in the Earth-Moon system (a direct
    departure from it can be designed)."""
    return system.name == "earth-moon" and str(node.body).lower() == "earth"


def _torus_manifold_refusal(system, node, a, b, orbits) -> str | None:
    """Why the leg ``a -> b`` with the torus node ``node`` at one end is not attempted (None:
    attempt it). Captures, escapes and parking legs (other than the departures from and returns
    to an Earth parking orbit in Earth-Moon) run along the torus's stable or unstable manifold
    (:mod:`cr3bp.tori.parking`, :func:`_boundary_leg`): a torus that is not hyperbolic has none."""
    boundary = isinstance(a, BoundaryNode) or isinstance(b, BoundaryNode)
    park = next((n for n in (a, b) if isinstance(n, ParkingNode)), None)
    if not boundary and (park is None or _earth_departure(system, park)):
        return None
    from ..tori.parking import not_hyperbolic  # lazy: only for tori
    why = not_hyperbolic(orbits.get(node.id, {}).get("stability"),
                         "capture or escape" if boundary else "parking orbit through a periapsis")
    return None if why is None else f"torus node '{node.name}' is {why}"


def _direct_departure_leg(orbit, st) -> Leg:
    """The departure (:func:`cr3bp.transfers.departure.design_departure`) from the parking orbit
    of the task settings ``st`` (its altitude and, when given, its inclination to the Moon's
    orbit plane) to ``orbit`` by the path ``st["path"]`` (direct when not given), as a leg."""
    site = st.get("launch_latitude_deg")
    dep = design_departure(orbit, st["altitude_km"], path=st.get("path") or "direct",
                           inclination_deg=st.get("inclination_deg"),
                           epoch=None if site is None else st["launch_tdb_s"], launch_latitude_deg=site)
    return as_leg(dep, st["patches"])


def _return_leg(target, st) -> Leg:
    """The direct return (:func:`cr3bp.transfers.returns.design_return`, the time-reverse of a
    departure) from ``target`` (an orbit or a torus) to the Earth parking orbit of the task
    settings ``st``, as a leg (kind "arrival")."""
    from .returns import as_leg as return_leg, design_return   # lazy: only for returns to the Earth
    return return_leg(design_return(target, st["altitude_km"], inclination_deg=st.get("inclination_deg")),
                      st["patches"])


def _low_energy_leg(orbit, st) -> Leg:
    """The low-energy transfer (:func:`cr3bp.transfers.low_energy.design_low_energy`, the
    bicircular model) from the parking orbit of the task settings ``st`` (its altitude, its
    inclination when given, the launch date when given) to ``orbit``, as a leg whose details
    name its model. A torus (``orbit.circle``): :func:`cr3bp.tori.low_energy.design_torus_low_energy`,
    the insertion point free over both torus angles."""
    from .low_energy import as_leg as low_energy_leg, design_low_energy   # lazy: the bicircular design, only for its legs
    design = design_low_energy
    if hasattr(orbit, "circle"):
        from ..tori.low_energy import design_torus_low_energy as design  # lazy: only for tori
    tr = design(orbit, st["altitude_km"], epoch=st.get("launch_tdb_s"), inclination_deg=st.get("inclination_deg"))
    return low_energy_leg(tr)


#: A floor under the first periapsis altitude over the Earth (km) of the stable manifolds of
#: Earth-Moon halo orbits about L1 and L2 (the near-rectilinear ones included), both branches,
#: 40 trajectories each, within 27.3 days (the search's own limits). Measured in this project
#: (December 2026): the lowest over L1 halos of Az 3000-50000 km and periods 8-10 d and L2
#: halos of Az 3000-50000 km, the 9:2 and 4:1 NRHOs and periods 7.5-8.5 d was 82 510 km (L1,
#: Az 50000 km, exterior branch); most L2 NRHOs pass no periapsis at all. Re-measured for two
#: orbits by tests/test_graph_departures.py. Lyapunov orbits are not covered: at C = 3.1 an L1
#: Lyapunov orbit's stable manifold comes down to 62 000 km, and lower at lower C.
MANIFOLD_EARTH_FLOOR_KM = 80_000.0
#: A parking orbit below this fraction of the floor is taken as out of the manifolds' reach.
FLOOR_MARGIN = 0.5
#: Families the floor was measured for.
FLOOR_FAMILIES = ("halo",)


def manifold_may_reach(orbit, body, altitude_km) -> bool:
    """Whether a manifold of ``orbit`` may come down to a parking orbit at ``altitude_km`` over
    ``body`` (False: the periapsis search of :func:`cr3bp.tubes.parking.parking_legs` cannot
    succeed, so it is not run).

    The Jacobi constant does not decide it: the tangential burn at periapsis changes the
    energy, and at any radius a trajectory of the orbit's Jacobi constant exists (the speed
    there follows from C = 2 Omega - v^2). What decides it is where the manifold's trajectories
    pass: those of the Earth-Moon orbits about L1 and L2 leave or reach the orbit through the
    neck about L1 or L2 with a small rotating-frame velocity, so nearly the frame's own motion
    inertially, and keep an angular momentum about the Earth that holds their first perigee far
    out (MANIFOLD_EARTH_FLOOR_KM, measured). A parking orbit about the Earth far below that
    floor is out of their reach. Every other case (the Moon, other families, other systems, a
    high parking orbit) keeps the search.

    Parameters
    ----------
    orbit : PeriodicOrbit
        The orbit whose stable or unstable manifold would carry the leg.
    body : str
        The primary the parking orbit circles.
    altitude_km : float
        The parking orbit's altitude, km.

    Returns
    -------
    bool
        False only for an Earth-Moon halo about L1 or L2 and an Earth parking orbit below
        ``FLOOR_MARGIN * MANIFOLD_EARTH_FLOOR_KM``.

    Raises
    ------
    None

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> halo = SimpleNamespace(system=SimpleNamespace(name="earth-moon"), family="halo", point="L2")
    >>> manifold_may_reach(halo, "earth", 200.0), manifold_may_reach(halo, "moon", 100.0)
    (False, True)

    References
    ----------
    Koon, W. S., Lo, M. W., Marsden, J. E. & Ross, S. D., *Dynamical Systems, the Three-Body
    Problem and Space Mission Design*, 2011, ch. 4 and 9 (manifold tubes through the necks about
    L1 and L2; from memory). The floor is this project's measurement (above).
    """
    s = orbit.system
    if s.name != "earth-moon" or str(body).lower() != "earth":
        return True
    if str(orbit.family).lower() not in FLOOR_FAMILIES or str(orbit.point).upper() not in ("L1", "L2"):
        return True
    return not altitude_km < FLOOR_MARGIN * MANIFOLD_EARTH_FLOOR_KM


def _boundary_leg(system, task) -> Leg:
    """The fastest ballistic way from an orbit node to a capture or escape condition along the
    orbit's unstable manifold (interior branch, then exterior): for a capture, the first
    periapsis at the capture altitude about the body (:func:`cr3bp.tubes.parking.parking_legs`,
    its insertion impulse left out: a capture node asks for the arrival condition, not an
    orbit); for an escape, the first crossing of the escape distance from the body. Zero Δv.
    A torus node's legs run along the torus's unstable manifold the same way
    (:func:`cr3bp.tori.parking.torus_parking_legs`, :func:`cr3bp.tori.manifolds.grow_tube`)."""
    st = task["settings"]
    data = task["from"]["orbit_data"]
    orbit = _torus_from_plain(system, data) if data.get("torus") else _orbit_from_plain(system, data)
    reasons = []
    if task["method"] == "capture":
        found = _periapsis_legs(orbit, st["body"], st["distance_km"], "unstable", st["tube_points"])
        best = min(found, key=lambda lg: lg.tof)
        leg = best.with_patches(st["patches"])
        # the arrival condition itself: the state at periapsis before any insertion impulse
        mans = tuple(m for m in leg.maneuvers if m.where != "arrival")
        return replace(leg, arrival_state=leg.final_state.copy(), maneuvers=mans,
                       dv_mps=float(sum(float(m.dv_mps) for m in mans)), solver="capture", kind="capture",
                       tof_arrival_days=leg.tof_days, arrival_distance_km=math.nan)
    p = primary_index(system, st["body"])
    radius = st["distance_km"] / system.length_km
    grow = grow_tube
    if _is_torus(orbit):
        from ..tori.manifolds import grow_tube as grow  # lazy: only for tori
    for branch in TUBE_BRANCHES:
        tube = grow(orbit, "unstable", branch, st["tube_points"],
                    until=Stop(t_max=4.0 * math.pi, escape_radius=radius, escape_center=p))
        hit = [i for i, s_ in enumerate(tube.status) if s_ == "escape"]
        if hit:
            i = min(hit, key=lambda k: tube.tof[k])
            tof = float(tube.tof[i])
            te = np.linspace(0.0, tof, st["patches"] + 1)
            arc = propagate(system, tube.start_states[i], tof, rtol=RTOL, atol=ATOL, t_eval=te)
            r = np.linalg.norm(arc.states[:, :3] - np.array([system.positions[p], 0, 0]), axis=1)
            start = np.array(tube.start_states[i], dtype=float)
            details = {"branch": branch, "escaped": len(hit), "of": int(tube.n)}
            if _is_torus(orbit):
                details.update(_torus_phases(orbit, tube, i))
            return Leg(system, "", "", (), 0.0, tof, None, ((0.0, start, tof),),
                       f"unstable {branch} manifold to escape", kind="escape",
                       min_altitude_km=float(r.min() * system.length_km
                                             - (system.primary, system.secondary)[p].radius_km),
                       details=details, solver="escape",
                       patch_times=te[:-1].copy(), patch_states=arc.states[:-1].copy(), departure_state=start,
                       arrival_state=arc.states[-1].copy(), final_state=arc.states[-1].copy())
        reasons.append(f"no trajectory of the unstable {branch} manifold of {tube.origin} gets "
                       f"{st['distance_km']:g} km from {system.names[p]} within {system.days(4 * math.pi):.0f} days")
    raise NoSolutionError("; ".join(reasons))


def _torus_phases(torus, tube, i) -> dict:
    """The departure phases of the torus tube's trajectory ``i``, as the torus parking legs give
    theirs (:func:`cr3bp.tori.parking.torus_parking_legs`)."""
    T = torus.stroboscopic_time
    tau = float(tube.t_orbit[i])
    phi = float(tube.circle_phase[i]) - torus.rotation * tau / T
    return {"torus_tau": tau, "torus_circle_angle": phi,
            "torus_phase_deg": [math.degrees(2 * math.pi * tau / T) % 360.0,
                                math.degrees(float(tube.circle_phase[i])) % 360.0],
            "torus_state": [float(v) for v in tube.orbit_states[i]], "step_off_km": float(tube.step_km)}


def describe_orbit(orbit) -> str:
    """The short description of a periodic orbit used in reasons and labels.

    Parameters
    ----------
    orbit : cr3bp.orbits.orbit.PeriodicOrbit

    Returns
    -------
    str

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp import orbit
    >>> from cr3bp.transfers.graph import describe_orbit
    >>> describe_orbit(orbit("earth-moon", "lyapunov L1 jacobi=3.15"))  # doctest: +SKIP
    'lyapunov L1 ...'

    References
    ----------
    Orbit family names from the trade: Koon, Lo, Marsden & Ross, 2011, ch. 2 and 4 (from memory).
    """
    return describe(orbit)


def _state_of(system, node, orbits):
    if isinstance(node, OrbitNode):
        return orbits.get(node.id, {}).get("state")
    return node_state(system, node)


def plan(system, nodelist, tof_days=None, patches=None, orbits=None):
    """Tasks (plain dicts, in a fixed order) and the pruned pairs of a node list.

    A leg to or from an orbit node departs or arrives at the orbit's reference state (its
    initial state). Every ordered pair (or the hinted pairs, ``all_pairs = false``) is a
    candidate; :func:`energy_prune` and the node kinds decide which are attempted.

    Parameters
    ----------
    system : System (dimensional)
    nodelist : cr3bp.transfers.nodes.NodeList
    tof_days : float, optional
        Time of flight of targeted legs (default: the node list's).
    patches : int, optional
        Shooting segments per leg (default: the node list's).
    orbits : dict, optional
        :func:`resolve_orbits`'s result (computed here when not given).

    Returns
    -------
    tasks : list of dict
        Each with ``system``, ``method``, ``settings``, ``from``, ``to`` and ``key``.
    pruned : list of dict
        ``from``, ``to`` (names) and ``reason``.

    Raises
    ------
    InputError
        The system has no dimensional units.

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import EXAMPLE_NODE_LIST, parse_nodes
    >>> em = system("earth-moon")
    >>> nodes = parse_nodes(EXAMPLE_NODE_LIST, em)      # two fixed states, a and b
    >>> from cr3bp.transfers.graph import plan
    >>> tasks, pruned = plan(em, nodes)
    >>> [(t["from"]["name"], t["to"]["name"], t["method"]) for t in tasks], pruned
    ([('a', 'b', 'targeted'), ('b', 'a', 'targeted')], [])

    References
    ----------
    Koon, Lo, Marsden & Ross, *Dynamical Systems, the Three-Body Problem and Space Mission
    Design*, 2011, ch. 3 (realms, necks) and ch. 7 (legs patched from manifolds) (from memory).
    """
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
            if why is None and isinstance(n, OrbitNode) and n.is_torus:
                why = _torus_manifold_refusal(system, n, a, b, orbits)
        low_energy = bool(h and h.path == "low-energy")
        if why is None and low_energy and not isinstance(a, ParkingNode):
            # (the other direction of a both-ways hint: a low-energy leg only departs)
            why = (f"a low-energy leg leaves an Earth parking orbit; the return {a.name} -> {b.name} "
                   "is not designed")
        # the departure path asked for: the edge's ('direct', 'lunar-flyby'), else the node's
        # (a scenario's 'path'); None: the graph's choice
        asked = (h.path if h and h.path in CR3BP_DEPARTURE_PATHS else getattr(a, "path", None)) \
            if isinstance(a, ParkingNode) else None
        if why is None and asked not in (None, "direct", "lunar-flyby") and getattr(b, "is_torus", False):
            why = (f"torus node '{b.name}': a '{asked}' departure to a torus is not designed (a direct "
                   "departure to a torus is)")
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
                        "inclination_deg": park.inclination_deg,
                        "max_patch_dv_mps": h.max_patch_dv_mps if h else None, "tube_points": PARKING_POINTS}
            if low_energy:       # (only then: the keys of the other parking legs stay as they were)
                settings.update(path="low-energy", launch_tdb_s=h.launch_tdb_s)
            elif asked is not None and park is a:        # a departure path asked for (edge or scenario)
                settings["path"] = asked
                if getattr(park, "launch_latitude_deg", None) is not None:    # dated, from a launch site
                    settings.update(launch_latitude_deg=park.launch_latitude_deg, launch_tdb_s=park.launch_tdb_s)
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

def run_tasks(tasks, workers=None, scheduler=None, progress=None, executor=None) -> list:
    """Results of :func:`compute_leg` over ``tasks``, in task order, run by
    :func:`cr3bp.transfers.tasks.run_tasks`.

    Parameters
    ----------
    tasks : list of dict
        Tasks of :func:`plan`.
    workers : int, optional
        Process-pool size (default: the machine's cores; 1 runs in this process).
    scheduler : str or distributed.Client, optional
        A dask.distributed scheduler's address or client (instead of the pool).
    progress : callable(done, total, record), optional
    executor : concurrent.futures.ProcessPoolExecutor, optional
        A pool already started (:func:`cr3bp.transfers.tasks.start_pool`), left running.

    Returns
    -------
    list of dict
        The leg records, in task order (computed longest first: :func:`leg_cost`).

    Raises
    ------
    InputError
        ``workers`` below 1, or ``scheduler`` given without dask.distributed installed.

    Examples
    --------
    >>> from cr3bp.transfers.graph import run_tasks
    >>> run_tasks([], workers=1)
    []

    References
    ----------
    Independent tasks farmed to worker processes: Python documentation,
    ``concurrent.futures``; Rocklin, "Dask: parallel computation with blocked algorithms and task
    scheduling", Proc. SciPy 2015.
    """
    return tasks_mod.run_tasks(compute_leg, tasks, workers, scheduler, progress, executor=executor,
                               cost=[leg_cost(t) for t in tasks])


#: Estimated processor seconds of a leg by its method, on one thread (the 42-node graph of
#: ``benchmarks/bench_graph.py``, 2026-12-03: parking legs 2.2 s on average, up to 21 s;
#: a targeted arc 1.5 ms; manifold, capture and escape legs grow a tube of each end). Only the
#: order matters: the legs are dealt longest first (:func:`cr3bp.transfers.tasks.deal`).
LEG_COST_S = {"parking": 2.2, "manifold": 0.5, "capture": 0.5, "escape": 0.5, "targeted": 0.0015}


def leg_cost(task: dict) -> float:
    """A leg task's estimated processor seconds (:data:`LEG_COST_S` by its method), by which
    :func:`run_tasks` deals the legs longest first; it changes where a leg runs, not its result.

    Parameters
    ----------
    task : dict
        A task of :func:`plan`.

    Returns
    -------
    float
        Estimated seconds (an unknown method counts as a targeted arc).

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.transfers.graph import leg_cost
    >>> leg_cost({"method": "parking"}) > leg_cost({"method": "targeted"})
    True

    References
    ----------
    Graham, R. L., "Bounds on multiprocessing timing anomalies", SIAM Journal on Applied
    Mathematics 17(2), 416-429 (1969) (longest-processing-time-first list scheduling; from
    memory).
    """
    return LEG_COST_S.get(task.get("method"), LEG_COST_S["targeted"])


def build_graph(system, nodelist, *, workers=None, scheduler=None, catalog=None, progress=None,
                tof_days=None, patches=None) -> BuildResult:
    """The transfer graph of ``nodelist``: plan, prune, compute (or read from ``catalog``).

    Parameters
    ----------
    system : System (dimensional)
    nodelist : cr3bp.transfers.nodes.NodeList
    workers : int, optional
        Process-pool size (default: all cores; 1: in this process).
    scheduler : str or distributed.Client, optional
        Run the legs on a dask cluster instead.
    catalog : cr3bp.catalog.Catalog, optional
        Leg cache: known legs are read, new ones written as they complete.
    progress : callable(done, total, leg), optional
        Told of each leg (a :class:`cr3bp.transfers.leg.Leg`) as it completes.
    tof_days, patches : optional
        Override the node list's settings.

    Returns
    -------
    BuildResult
        Every leg a :class:`cr3bp.transfers.leg.Leg`; every edge carries one.

    Raises
    ------
    InputError
        The system has no dimensional units, or bad ``workers`` / ``scheduler``.
    RecordError
        A leg stored in the catalogue is damaged (the message names the key).

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import EXAMPLE_NODE_LIST, parse_nodes
    >>> em = system("earth-moon")
    >>> nodes = parse_nodes(EXAMPLE_NODE_LIST, em)      # two fixed states, a and b
    >>> from cr3bp.transfers.graph import build_graph
    >>> built = build_graph(em, nodes, workers=1)
    >>> built.computed, built.graph.number_of_edges(), [leg.status for leg in built.legs]
    (2, 2, ['ok', 'ok'])

    References
    ----------
    Koon, Lo, Marsden & Ross, *Dynamical Systems, the Three-Body Problem and Space Mission
    Design*, 2011, ch. 3 (realms, necks) and ch. 7 (legs patched from manifolds) (from memory). Dijkstra, "A note on two problems in connexion with graphs", *Numerische Mathematik* 1,
    269-271, 1959 (the graph the route search runs on).
    """
    if scheduler is None:
        workers = tasks_mod.pool_size(workers)
    with _shared_runner(workers, scheduler) as shared:
        return _build(system, nodelist, workers, shared, catalog, progress, tof_days, patches)


#: Families (orbit groups) from which a graph's orbits go to a pool (started for them, kept for
#: the legs) rather than being solved in the client: a family takes about 0.15 s on one thread
#: and a pool worker about 1.1 s to start (the 42-node graph, 2026-12-03/04, see
#: docs/guide/scale-out.rst), so with 2 workers the pool wins from about 16 families.
POOL_ORBIT_GROUPS = 16


class _shared_runner:
    """One pool (``workers`` above 1, started when a stage first has two tasks or more) or one
    dask client (a scheduler's text) for the whole build, its orbits and then its legs, so that
    the workers start once; closed at the end (a pool stopped at once on an error or Ctrl-C)."""

    def __init__(self, workers, scheduler):
        self.workers, self.scheduler = workers, scheduler
        self.ex = self.client = self.cluster = None

    def __enter__(self):
        if isinstance(self.scheduler, str):
            self.client, self.cluster = tasks_mod.dask_client(self.scheduler.strip(), self.workers)
            self.scheduler = self.client
        return self

    def executor(self, n):
        """The pool for ``n`` tasks (None: none needed, or a scheduler)."""
        if self.ex is None and self.scheduler is None and self.workers > 1 and n > 1:
            self.ex = tasks_mod.start_pool(self.workers)
        return self.ex

    def __exit__(self, kind, value, tb):
        if self.ex is not None:
            if kind is None:
                self.ex.shutdown(wait=True)
            else:
                tasks_mod.stop_pool(self.ex)
        if self.client is not None:
            tasks_mod.close_dask(self.client, self.cluster)
        return False


def _build(system, nodelist, workers, shared, catalog, progress, tof_days, patches):
    scheduler = shared.scheduler
    orbit_nodes = list({n.id: n for n in nodelist.nodes if isinstance(n, OrbitNode)}.values())
    if catalog is not None or not orbit_nodes:
        orbits = resolve_orbits(system, nodelist, catalog)
    elif scheduler is not None:          # a cluster's workers: one task per family
        orbits = resolve_orbits(system, nodelist, workers=workers, scheduler=scheduler)
    elif len(orbit_groups(orbit_nodes)) >= POOL_ORBIT_GROUPS:
        # a pool, started for the orbits (enough families to outweigh its start-up) and kept for the legs
        orbits = resolve_orbits(system, nodelist, workers=workers, executor=shared.executor(len(orbit_nodes)))
    else:
        # a pool: started for the legs (only when there are two or more), the orbits solved here
        orbits = resolve_orbits(system, nodelist)
    tasks, pruned = plan(system, nodelist, tof_days, patches, orbits)
    legs: list = [None] * len(tasks)
    todo = []
    for i, t in enumerate(tasks):
        known = catalog.get_leg(t["key"], system) if catalog is not None else None
        if known is not None:
            # the cache is keyed by what the nodes are, not by what a node list calls them
            legs[i] = replace(known, origin=t["from"]["name"], target=t["to"]["name"])
        else:
            todo.append(i)
    cached = len(tasks) - len(todo)
    pending = []

    def flush():
        if catalog is not None and pending:
            catalog.put_legs([(leg.key, system, leg) for leg in pending])
        pending.clear()

    def tick(done, total, record):
        # legs reach the catalogue in batches as they complete, so an interrupted build
        # keeps what it computed
        leg = Leg.from_record(record, system)
        pending.append(leg)
        if len(pending) >= CATALOG_BATCH:
            flush()
        if progress is not None:
            progress(done, total, leg)

    try:
        results = run_tasks([tasks[i] for i in todo], workers, scheduler, tick, executor=shared.executor(len(todo)))
    finally:
        flush()
    for i, record in zip(todo, results):
        legs[i] = Leg.from_record(record, system)
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
            period = orbits[n.id]["period"]
            stay = Leg(system, n.name, n.name, (), 0.0, period, None, (), "one revolution along the orbit",
                       kind="stay", solver="stay", from_id=n.id, to_id=n.id, details={"period_tu": period},
                       tof_days=period * system.time_days)
            search.add_leg(graph, n.id, n.id, 0.0, stay.tof_days, key="stay", kind="stay", leg=stay)
    for leg in legs:
        if leg.ok:
            search.add_leg(graph, leg.from_id, leg.to_id, leg.dv_mps, leg.tof_days, key=leg.solver,
                           kind=leg.solver, min_altitude_km=leg.min_altitude_km, leg=leg,
                           tof_arrival_days=leg.tof_arrival_days,
                           arrival_distance_km=None if math.isnan(leg.arrival_distance_km) else leg.arrival_distance_km)
    settings = {"tof_days": nodelist.tof_days if tof_days is None else tof_days,
                "patches": nodelist.patches if patches is None else patches}
    return BuildResult(graph, tuple(nodelist.nodes), tuple(legs), len(todo), cached, tuple(pruned), settings)


def leg_json(leg: Leg) -> str:
    """Canonical JSON of a leg's record (sorted keys): two equal legs give equal text.

    Parameters
    ----------
    leg : cr3bp.transfers.leg.Leg or dict
        A leg (or a leg record).

    Returns
    -------
    str

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.transfers.graph import leg_json
    >>> from cr3bp.transfers.leg import Leg
    >>> rec = {"from": "a", "to": "b", "from_name": "A", "to_name": "B", "key": "k", "method": "targeted",
    ...        "status": "failed", "reason": "no convergence", "dv_mps": None, "tof_days": None}
    >>> leg_json(Leg.from_record(rec)) == leg_json(rec)
    True

    References
    ----------
    JSON: ECMA-404 / RFC 8259 (open standard).
    """
    return json.dumps(leg.record() if isinstance(leg, Leg) else leg, sort_keys=True, allow_nan=True)


def finite(v):
    """``v`` when it is a finite float, else None (for JSON output).

    Parameters
    ----------
    v : object

    Returns
    -------
    float or None

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.transfers.graph import finite
    >>> finite(2.5), finite(float("inf")), finite("x")
    (2.5, None, None)

    References
    ----------
    JSON has no infinities or NaN: RFC 8259, section 6 (open standard).
    """
    return v if (isinstance(v, float) and math.isfinite(v)) else None
