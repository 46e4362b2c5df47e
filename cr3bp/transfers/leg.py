"""The leg of a transfer: one immutable type for every stage (connections, parking-orbit legs,
targeted legs, direct departures, phasing coasts, the transfer graph, route search, stitching,
the scenario run).

A :class:`Leg` says where it goes from and to, its impulsive manoeuvres (:class:`Maneuver`), its
total Δv and times of flight, and the ballistic arcs whose concatenation is its trajectory.
A leg the transfer graph uses is also in *shooting form*: cut into shooting segments (its patch
points, :meth:`Leg.with_patches`) and stamped with the graph's node ids and catalogue key.

The plain *leg record* (:meth:`Leg.record`, keys documented in :data:`RECORD_KEYS`) exists only
where a leg must be plain: the catalogue's stored JSON, the return value of a graph task (run in
a process pool or on a dask worker) and JSON output. :meth:`Leg.from_record` reads it back,
checked key by key.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field, replace

import numpy as np

from ..errors import RecordError, shown
from ..integrate import propagate
from ..io.plain import plain as _plain
from ..tubes.manifolds import ATOL, RTOL


#: What each time of flight of a leg measures (written into every leg's JSON).
TOF_DEFINITIONS = {
    "tof_days": "step-off time of flight: from the leg's start to the manifold's step-off point "
                "on the target orbit (includes the asymptotic approach)",
    "tof_arrival_days": "time of flight to arrival: from the leg's start until the trajectory first "
                        "comes within arrival_distance_km of the target orbit's path (nearest point "
                        "of the orbit); equal to tof_days when the leg ends on a parking orbit",
}


#: Version of the leg records (part of their catalogue key). 2: legs carry the time of flight
#: to arrival (``tof_arrival_days``, ``arrival_distance_km``). 3: lunar-flyby legs to tori start
#: from the base orbit's optimised flyby (cr3bp.tori.departure), and BLAS runs on one thread in
#: the flyby search, so legs stored before are designed again.
LEG_FORMAT = 3

#: The leg record: the JSON-ready form of a :class:`Leg` in shooting form (:meth:`Leg.record`),
#: which a graph task returns (:func:`cr3bp.transfers.graph.compute_leg`, in a pool or on a dask
#: worker) and the catalogue stores; :meth:`Leg.from_record` reads it back. Units: TU, LU, LU/TU
#: (rotating frame) unless the key names another. A failed attempt carries only ``from``, ``to``,
#: ``from_name``, ``to_name``, ``key``, ``method``, ``status``, ``reason``, ``dv_mps`` and
#: ``tof_days`` (the last two may be None). Records written before the targeted legs kept their
#: solver's values under ``details`` carry them at the top level; :meth:`Leg.from_record` moves
#: any key not listed here into ``details``.
RECORD_KEYS = {
    "format": "record version (1: from a Leg or a coast; LEG_FORMAT: targeted)",
    "method": "targeted | manifold | parking | capture | escape | stay",
    "how": "how it was computed, in words", "kind": "what sort of leg (transfer, arrival, phasing...)",
    "dv_mps": "total |Δv| over its maneuvers, m/s", "tof_tu": "time of flight, TU",
    "tof_days": "step-off time of flight, days (TOF_DEFINITIONS)",
    "tof_arrival_days": "time of flight to arrival, days (TOF_DEFINITIONS)",
    "arrival_distance_km": "distance that counts as arrived, km (None: not an orbit)",
    "maneuvers": "list of {t, position, dv_vector, dv_mps, where: departure | patch | arrival[, name]}",
    "departure_state": "the start node's state (before a departure burn)",
    "arrival_state": "the end node's state (after an arrival burn)",
    "patch_times": "start time of each shooting segment", "patch_states": "start state of each shooting segment",
    "final_state": "the trajectory's last state (before an arrival burn)",
    "min_altitude_km": "lowest altitude over either primary, km", "details": "method-specific values",
    "from": "start node id", "to": "end node id", "from_name": "start node's name", "to_name": "end node's name",
    "key": "catalogue key", "status": "ok | failed", "reason": "why it failed ('' if ok)",
}


#: Where a manoeuvre of a leg in shooting form sits.
MANEUVER_PLACES = ("departure", "patch", "arrival")
#: The values of a leg's ``status``.
STATUSES = ("ok", "failed")


@dataclass(frozen=True)
class Maneuver:
    """An impulsive manoeuvre of a leg.

    Parameters
    ----------
    t : float
        Time from the leg's start, TU.
    position : ndarray (3,)
        Where it is made, LU (rotating frame).
    dv : ndarray (3,)
        The Δv vector, LU/TU, rotating-frame components (the same vector in the inertial frame).
    dv_mps : float
        Its magnitude, m/s.
    where : {"", "departure", "patch", "arrival"}
        Where it sits on a leg in shooting form ("" before the leg is cut into patches).
    name : str
        The burn's own name where its method gives one (a direct departure's burns).

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.transfers.leg import Maneuver
    >>> m = Maneuver(0.0, np.zeros(3), np.array([0.0, 1e-3, 0.0]), 1.02, "departure")
    >>> m.record()["dv_vector"], m.record()["where"]
    ([0.0, 0.001, 0.0], 'departure')

    References
    ----------
    Impulsive manoeuvres patched onto ballistic arcs: Koon, Lo, Marsden & Ross, *Dynamical
    Systems, the Three-Body Problem and Space Mission Design*, 2011, ch. 4 and 7 (from memory).
    """

    t: float
    position: np.ndarray
    dv: np.ndarray
    dv_mps: float
    where: str = ""
    name: str = ""

    def to_dict(self, system=None) -> dict:
        d = {"t": self.t, "position": list(map(float, self.position)),
             "dv": list(map(float, self.dv)), "dv_mps": self.dv_mps}
        if system is not None and system.dimensional:
            d["t_days"] = system.days(self.t)
            d["dv_vector_mps"] = [float(system.mps(x)) for x in self.dv]
        return d

    def record(self) -> dict:
        """This manoeuvre as an entry of a leg record's ``maneuvers``."""
        d = {"t": float(self.t), "position": [float(v) for v in self.position],
             "dv_vector": [float(v) for v in self.dv], "dv_mps": float(self.dv_mps), "where": self.where}
        if self.name:
            d["name"] = self.name
        return d

    @classmethod
    def from_record(cls, d, where_in="maneuvers") -> "Maneuver":
        """The manoeuvre of a leg record's ``maneuvers`` entry (checked: RecordError naming the key)."""
        if not isinstance(d, dict):
            raise RecordError(f"leg record: {where_in}: an entry is {type(d).__name__}, not a table")
        return cls(_number(d, "t", where_in), _vector(d, "position", 3, where_in),
                   _vector(d, "dv_vector", 3, where_in), _number(d, "dv_mps", where_in),
                   _word(d, "where", MANEUVER_PLACES, where_in), str(d.get("name", "")))


@dataclass(frozen=True)
class Leg:
    """A computed leg of a transfer: where from, where to, its manoeuvres, Δv and time of flight.

    The one leg type of the library: connections and parking-orbit legs (:mod:`cr3bp.tubes`),
    targeted legs, direct departures and phasing coasts all return it; the transfer graph puts it
    on its edges, the route search returns it in :attr:`cr3bp.transfers.search.Route.legs` and the
    stitcher reads its shooting form. ``tof`` runs to the manifold's step-off point on the
    target orbit, which includes the asymptotic approach (months in Sun-Earth); ``tof_arrival``
    stops at the stated distance.

    Parameters
    ----------
    system : System
        The system it belongs to (None for a weights-only leg, :meth:`weights_only`).
    origin, target : str
        What the leg joins (orbit descriptions, "parking earth 200km"; in the transfer graph, the
        names the node list gave its nodes).
    maneuvers : tuple of Maneuver
    dv_mps : float
        Total ``|Δv|`` (sum over manoeuvres), m/s (None: a failed attempt that got no Δv).
    tof : float
        Time of flight, TU.
    patch_state : ndarray (6,) or None
        The state at the patch point / periapsis of a connection or parking-orbit leg.
    segments : tuple of (t0, state, duration)
        Ballistic arcs, forward in time, whose concatenation is the trajectory (:meth:`trajectory`).
    method : str
        How it was computed, in words (the record's ``how``).
    kind : str
        "heteroclinic", "homoclinic", "transfer", "arrival", "departure", "capture", "escape",
        "phasing" or "stay".
    min_altitude_km : float
        Lowest altitude over either primary along the leg.
    details : dict
        Method-specific values (residuals, phases, periapsis data...).
    tof_arrival : float
        Time of flight to arrival, TU: until the trajectory first comes within
        ``arrival_distance_km`` of the target orbit's path (NaN: equal to ``tof``).
    arrival_distance_km : float
        The distance that counts as arrived (NaN: not an orbit).
    solver : str
        Which computation of the transfer graph made it (the record's ``method``): targeted,
        manifold, parking, capture, escape, stay.
    format : int
        Record version (:data:`LEG_FORMAT` for targeted legs, else 1).
    patch_times, patch_states : ndarray (n,), ndarray (n, 6) or None
        The shooting form (:meth:`with_patches`): start time and state of each shooting segment.
    departure_state, arrival_state : ndarray (6,) or None
        The end nodes' states (before a first burn, after a last one).
    final_state : ndarray (6,) or None
        The trajectory's last state (before an arrival burn).
    from_id, to_id : str or None
        The transfer graph's node ids (None: not on a graph).
    key : str or None
        Catalogue key (None: not from a graph task).
    status, reason : str
        "ok", or "failed" with the reason (a failed attempt carries no trajectory).
    tof_days, tof_arrival_days : float or None
        ``tof`` and ``tof_arrival`` in days (None: computed from the system; NaN without
        dimensional units).
    solution : str
        How its Δv was found: "patch" (the construction's own impulses: a manifold patch, a
        periapsis burn), "first guess" (a targeted leg, not optimised) or "optimised"
        (:mod:`cr3bp.transfers.optimise`).
    optimised : bool
        ``solution == "optimised"``.
    start : dict
        For an optimised leg, what the optimiser started from (``solution``, ``dv_mps``,
        ``tof_days``, ``method``).

    Examples
    --------
    >>> from cr3bp.transfers.leg import Leg
    >>> record = {"from": "a", "to": "b", "from_name": "A", "to_name": "B", "key": "leg/a->b/0",
    ...           "method": "targeted", "status": "failed", "reason": "no convergence",
    ...           "dv_mps": None, "tof_days": None}
    >>> leg = Leg.from_record(record)
    >>> leg.ok, leg.reason, leg.record() == record
    (False, 'no convergence', True)

    References
    ----------
    Legs patched from manifold arcs: Koon, Lo, Marsden & Ross, *Dynamical Systems, the Three-Body
    Problem and Space Mission Design*, 2011, ch. 7 (from memory). The shooting form (patch points
    of a multiple-shooting problem): Betts, *Practical Methods for Optimal Control and Estimation
    Using Nonlinear Programming*, 2nd ed., 2010, ch. 4 (from memory).
    """

    system: object
    origin: str
    target: str
    maneuvers: tuple
    dv_mps: float
    tof: float
    patch_state: np.ndarray
    segments: tuple
    method: str
    kind: str = "transfer"
    min_altitude_km: float = math.inf
    details: dict = field(default_factory=dict, compare=False)
    tof_arrival: float = math.nan
    arrival_distance_km: float = math.nan
    solver: str = ""
    format: int = 1
    patch_times: np.ndarray = field(default=None, compare=False, repr=False)
    patch_states: np.ndarray = field(default=None, compare=False, repr=False)
    departure_state: np.ndarray = field(default=None, compare=False, repr=False)
    arrival_state: np.ndarray = field(default=None, compare=False, repr=False)
    final_state: np.ndarray = field(default=None, compare=False, repr=False)
    from_id: str | None = None
    to_id: str | None = None
    key: str | None = None
    status: str = "ok"
    reason: str = ""
    tof_days: float | None = None
    tof_arrival_days: float | None = None
    optimised: bool = False
    solution: str = "patch"
    start: dict = field(default_factory=dict, compare=False)

    def __post_init__(self):
        if self.status == "ok":
            dimensional = self.system is not None and self.system.dimensional
            if self.tof_days is None:
                object.__setattr__(self, "tof_days",
                                   float(self.system.days(self.tof)) if dimensional else float("nan"))
            if self.tof_arrival_days is None:
                t = self.tof if math.isnan(self.tof_arrival) else self.tof_arrival
                object.__setattr__(self, "tof_arrival_days",
                                   float(self.system.days(t)) if dimensional else float("nan"))

    @property
    def ok(self) -> bool:
        """True for a computed leg, False for a failed attempt (see ``reason``)."""
        return self.status == "ok"

    @classmethod
    def weights_only(cls, origin, target, dv_mps: float, tof_days: float, *, kind: str = "",
                     min_altitude_km: float = math.inf, tof_arrival_days=None,
                     arrival_distance_km=None) -> "Leg":
        """A leg known only by its weights (no system, no trajectory): what
        :func:`cr3bp.transfers.search.add_leg` puts on an edge given numbers alone."""
        return cls(None, str(origin), str(target), (), float(dv_mps), math.nan, None, (), "given weights",
                   kind=kind, min_altitude_km=float(min_altitude_km),
                   arrival_distance_km=math.nan if arrival_distance_km is None else float(arrival_distance_km),
                   tof_days=float(tof_days),
                   tof_arrival_days=float(tof_days if tof_arrival_days is None else tof_arrival_days))

    def trajectory(self, n_per_segment: int = 400):
        """``(t, states)`` of the whole leg (segments re-propagated and joined; a low-energy
        leg, ``details["model"] == "bicircular"``, in its bicircular model from each segment's
        own start time)."""
        ts, ss = [], []
        model = self.model_of()
        for t0, s0, dur in self.segments:
            if dur == 0:
                continue
            te = np.linspace(0.0, dur, int(n_per_segment))
            if model is None:
                arc = propagate(self.system, s0, dur, t_eval=te, rtol=RTOL, atol=ATOL)
                ts.append(t0 + arc.t)
            else:
                from .. import bicircular   # lazy: the bicircular model, only for its legs
                arc = bicircular.propagate(model, s0, t0 + dur, t_eval=t0 + te, rtol=RTOL, atol=ATOL, t0=t0)
                ts.append(arc.t)
            ss.append(arc.states)
        if not ts:
            return np.zeros(0), np.zeros((0, 6))
        return np.concatenate(ts), np.vstack(ss)

    def model_of(self):
        """The dynamical model of the leg's arcs: None for the CR3BP of ``system``, or the
        :class:`cr3bp.bicircular.BicircularSystem` of a low-energy leg (its ``details`` hold
        ``model = "bicircular"`` and the Sun's phase at the leg's start)."""
        if self.details.get("model") != "bicircular" or self.system is None:
            return None
        from .. import bicircular   # lazy: the bicircular model, only for its legs
        return bicircular.model_from_record(self.system, self.details.get("bicircular", {}))

    def to_dict(self) -> dict:
        s = self.system
        return {
            "from": self.origin, "to": self.target, "kind": self.kind, "method": self.method,
            "dv_mps": self.dv_mps, "tof": self.tof,
            "tof_days": self.tof_days if s.dimensional else None,
            "tof_arrival_days": self.tof_arrival_days if s.dimensional else None,
            "arrival_distance_km": None if math.isnan(self.arrival_distance_km) else self.arrival_distance_km,
            "tof_definitions": TOF_DEFINITIONS,
            "maneuvers": [m.to_dict(s) for m in self.maneuvers],
            "patch_state": None if self.patch_state is None else list(map(float, self.patch_state)),
            "min_altitude_km": None if math.isinf(self.min_altitude_km) else self.min_altitude_km,
            "segments": [{"t0": float(t0), "state": list(map(float, s0)), "duration": float(d)}
                         for t0, s0, d in self.segments],
            "details": _plain(self.details),
            "solution": self.solution, "optimised": self.optimised,
            "start": _plain(self.start) if self.start else None,
        }

    @property
    def in_shooting_form(self) -> bool:
        """The leg carries its patch points (see :meth:`with_patches`)."""
        return self.patch_states is not None

    def with_patches(self, patches: int = 4) -> "Leg":
        """This leg in shooting form: each ballistic segment cut into ``patches`` shooting
        segments (so every maneuver falls on a patch point), each maneuver told where it sits,
        the departure and arrival states where its arcs begin and end (before a first burn,
        after a last one). A leg already in shooting form is returned as it is."""
        if self.in_shooting_form:
            return self
        system = self.system
        times, states = [], []
        end = None
        for t0, s0, dur in self.segments:
            if dur <= 0:
                continue
            te = np.linspace(0.0, float(dur), patches + 1)
            arc = propagate(system, np.asarray(s0, dtype=float), float(dur), rtol=RTOL, atol=ATOL, t_eval=te)
            times += list(float(t0) + te[:-1])
            states += [st.tolist() for st in arc.states[:-1]]
            end = arc.states[-1]
        mans = tuple(replace(m, where="patch" if 0.0 < m.t < self.tof else
                             ("departure" if m.t == 0.0 else "arrival")) for m in self.maneuvers)
        start = np.array(states[0])
        finish = np.array(end)
        for m in self.maneuvers:          # the nodes' states: before a first burn, after a last one
            if m.t == 0.0:
                start[3:] -= np.asarray(m.dv)
            elif m.t >= self.tof:
                finish[3:] += np.asarray(m.dv)
        return replace(self, maneuvers=mans, solver=self.solver or (
                           "parking" if self.kind in ("arrival", "departure") else "manifold"),
                       patch_times=np.array(times, dtype=float), patch_states=np.array(states, dtype=float),
                       departure_state=start, arrival_state=finish, final_state=np.array(end, dtype=float))

    def on_graph(self, from_id, to_id, from_name, to_name, key=None) -> "Leg":
        """This leg stamped with the transfer graph's node ids and names (and catalogue key)."""
        return replace(self, from_id=from_id, to_id=to_id, origin=from_name, target=to_name, key=key)

    def record(self, patches: int = 4) -> dict:
        """This leg as a leg record (:data:`RECORD_KEYS`), the plain form a graph task returns,
        the catalogue stores and JSON output carries. A leg not yet in shooting form is first
        cut into ``patches`` shooting segments per ballistic segment (:meth:`with_patches`);
        ``Leg.from_record(leg.record()).record() == leg.record()``."""
        if self.status != "ok":
            return {"from": self.from_id, "to": self.to_id, "from_name": self.origin, "to_name": self.target,
                    "key": self.key, "method": self.solver, "status": self.status, "reason": self.reason,
                    "dv_mps": self.dv_mps, "tof_days": self.tof_days}
        if not self.in_shooting_form and self.segments:
            return self.with_patches(patches).record()
        d = {"format": int(self.format), "method": self.solver, "how": self.method, "kind": self.kind,
             "dv_mps": float(self.dv_mps), "tof_days": _float(self.tof_days), "tof_tu": float(self.tof),
             "tof_arrival_days": _float(self.tof_arrival_days),
             "arrival_distance_km": None if math.isnan(self.arrival_distance_km) else float(self.arrival_distance_km),
             "maneuvers": [m.record() for m in self.maneuvers]}
        if self.in_shooting_form:
            d.update({"departure_state": _list(self.departure_state), "arrival_state": _list(self.arrival_state),
                      "patch_times": _list(self.patch_times), "patch_states": _list(self.patch_states),
                      "final_state": _list(self.final_state)})
        d.update({"min_altitude_km": float(self.min_altitude_km), "details": _json_details(self.details)})
        if self.from_id is not None:
            d.update({"from": self.from_id, "to": self.to_id, "from_name": self.origin, "to_name": self.target})
        if self.key is not None:
            d["key"] = self.key
        d.update({"status": self.status, "reason": self.reason})
        return d

    @classmethod
    def from_record(cls, d, system=None) -> "Leg":
        """The leg of a leg record (:data:`RECORD_KEYS`), every key checked.

        Parameters
        ----------
        d : dict
            A leg record, as :meth:`record` writes it (or as the catalogue stored it).
        system : System, optional
            The system the leg belongs to (needed to re-propagate it, :meth:`trajectory`).

        Returns
        -------
        Leg
            In shooting form; its ballistic ``segments`` are the shooting segments.

        Raises
        ------
        RecordError
            A key is missing or holds a value of the wrong kind (the message names the key).
        """
        if not isinstance(d, dict):
            raise RecordError(f"leg record: expected a table of keys, got {type(d).__name__}")
        status = _word(d, "status", STATUSES) if "status" in d else "ok"
        names = {"from_id": _text(d, "from", optional=True), "to_id": _text(d, "to", optional=True),
                 "origin": _text(d, "from_name", optional=True) or "",
                 "target": _text(d, "to_name", optional=True) or "",
                 "key": _text(d, "key", optional=True)}
        if status != "ok":
            return cls(system, names["origin"], names["target"], (), _number(d, "dv_mps", optional=True),
                       math.nan, None, (), "", solver=_text(d, "method", optional=True) or "",
                       from_id=names["from_id"], to_id=names["to_id"], key=names["key"], status=status,
                       reason=_text(d, "reason"), tof_days=_number(d, "tof_days", optional=True))
        tof = _number(d, "tof_tu")
        times = _vector(d, "patch_times", None)
        states = _matrix(d, "patch_states", len(times))
        if not len(times):
            raise RecordError("leg record: 'patch_times' is empty; a leg has at least one shooting segment")
        ends = list(times[1:]) + [tof]
        segs = tuple((float(t), s, float(e - t)) for t, s, e in zip(times, states, ends))
        mans = d.get("maneuvers")
        if not isinstance(mans, list):
            raise RecordError("leg record: 'maneuvers' is missing or not a list")
        details = d.get("details", {})
        if not isinstance(details, dict):
            raise RecordError("leg record: 'details' is not a table")
        extra = {k: v for k, v in d.items() if k not in RECORD_KEYS}
        distance = _number(d, "arrival_distance_km", optional=True)
        arrival = _number(d, "tof_arrival_days", optional=True)
        fmt = d.get("format", 1)
        if not isinstance(fmt, int) or isinstance(fmt, bool):
            raise RecordError(f"leg record: 'format' = {fmt!r} is not a whole number")
        return cls(system, names["origin"], names["target"], tuple(Maneuver.from_record(m) for m in mans),
                   _number(d, "dv_mps"), tof, None, segs, _text(d, "how", optional=True) or "",
                   kind=_text(d, "kind", optional=True) or "transfer",
                   min_altitude_km=_number(d, "min_altitude_km"), details={**details, **extra},
                   arrival_distance_km=math.nan if distance is None else distance,
                   solver=_text(d, "method"), format=fmt, patch_times=times, patch_states=states,
                   departure_state=_vector(d, "departure_state", 6), arrival_state=_vector(d, "arrival_state", 6),
                   final_state=_vector(d, "final_state", 6), from_id=names["from_id"], to_id=names["to_id"],
                   key=names["key"], status=status, reason=_text(d, "reason", optional=True) or "",
                   tof_days=_number(d, "tof_days"),
                   tof_arrival_days=_number(d, "tof_days") if arrival is None else arrival)

    def summary(self) -> dict:
        """The leg's row of a graph's leg list: ids, names, method, status and its numbers."""
        keys = ("from", "to", "from_name", "to_name", "method", "status", "reason", "dv_mps", "tof_days",
                "tof_arrival_days", "arrival_distance_km", "min_altitude_km", "key")
        rec = self.record()
        return {k: rec.get(k) for k in keys if k in rec}


def _mps(system, dv):
    return float(system.mps(dv)) if system.dimensional else float(dv)


def _json_details(d):
    return json.loads(json.dumps(d, default=lambda o: o.tolist() if hasattr(o, "tolist") else str(o)))


def _float(v):
    return None if v is None else float(v)


def _list(a):
    return np.asarray(a, dtype=float).tolist()


def _where(where_in):
    return f"leg record: {where_in}: " if where_in else "leg record: "


def _number(d, key, where_in="", optional=False):
    v = d.get(key)
    if v is None:
        if optional:
            return None
        raise RecordError(f"{_where(where_in)}'{key}' is missing")
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        raise RecordError(f"{_where(where_in)}'{key}' = {shown(repr(v))} is not a number")
    return float(v)


def _text(d, key, where_in="", optional=False):
    v = d.get(key)
    if v is None:
        if optional:
            return None
        raise RecordError(f"{_where(where_in)}'{key}' is missing")
    if not isinstance(v, str):
        raise RecordError(f"{_where(where_in)}'{key}' = {shown(repr(v))} is not text")
    return v


def _word(d, key, allowed, where_in=""):
    v = _text(d, key, where_in)
    if v not in allowed:
        raise RecordError(f"{_where(where_in)}'{key}' = {shown(repr(v))}; allowed: {', '.join(allowed)}")
    return v


def _vector(d, key, n, where_in=""):
    v = d.get(key)
    if v is None:
        raise RecordError(f"{_where(where_in)}'{key}' is missing")
    try:
        a = np.asarray(v, dtype=float)
    except (TypeError, ValueError):
        raise RecordError(f"{_where(where_in)}'{key}' is not a list of numbers") from None
    if a.ndim != 1 or (n is not None and a.size != n) or any(isinstance(x, bool) for x in v):
        raise RecordError(f"{_where(where_in)}'{key}' must be a list of {n or 'any number of'} numbers")
    return a


def _matrix(d, key, rows):
    v = d.get(key)
    if v is None:
        raise RecordError(f"leg record: '{key}' is missing")
    try:
        a = np.asarray(v, dtype=float)
    except (TypeError, ValueError):
        raise RecordError(f"leg record: '{key}' is not a list of states") from None
    if a.shape != (rows, 6):
        raise RecordError(f"leg record: '{key}' must hold {rows} states of 6 numbers (one per patch time), "
                          f"not an array of shape {a.shape}")
    return a
