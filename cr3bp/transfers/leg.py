"""The leg of a transfer: one immutable type for every stage (connections, parking-orbit legs,
targeted legs, the transfer graph, route search, stitching, the scenario run).

A :class:`Leg` says where it goes from and to, its impulsive manoeuvres (:class:`Maneuver`), its
total Δv and times of flight, and the ballistic arcs whose concatenation is its trajectory.
Connections and parking-orbit legs (:mod:`cr3bp.tubes`) return it. The transfer graph, the
catalogue and the stitcher still pass the leg as its JSON-ready *leg record*
(:meth:`Leg.record`, keys documented in :data:`RECORD_KEYS`), which targeted legs and phasing
coasts produce directly.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field

import numpy as np

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
#: to arrival (``tof_arrival_days``, ``arrival_distance_km``).
LEG_FORMAT = 2

#: The leg record: the JSON-ready dict the transfer graph computes (in a pool or on a dask
#: worker), caches in the catalogue, puts on its edges and hands to the stitcher. Made by
#: :func:`cr3bp.transfers.targeting.targeted_leg`, :meth:`Leg.record` (connections and
#: parking-orbit legs), :func:`cr3bp.transfers.graph.compute_leg` (which adds the graph keys)
#: and :func:`cr3bp.transfers.stitch.phasing_coast`. Units: TU, LU, LU/TU (rotating frame)
#: unless the key names another.
RECORD_KEYS = {
    "format": "record version (1: from a Leg or a coast; LEG_FORMAT: targeted)",
    "method": "targeted | manifold | parking | capture | escape | stay",
    "how": "how it was computed, in words", "kind": "what sort of leg (transfer, arrival, phasing...)",
    "dv_mps": "total |Δv| over its maneuvers, m/s", "tof_tu": "time of flight, TU",
    "tof_days": "step-off time of flight, days (TOF_DEFINITIONS)",
    "tof_arrival_days": "time of flight to arrival, days (TOF_DEFINITIONS)",
    "arrival_distance_km": "distance that counts as arrived, km (None: not an orbit)",
    "maneuvers": "list of {t, position, dv_vector, dv_mps, where: departure | patch | arrival}",
    "departure_state": "the start node's state (before a departure burn)",
    "arrival_state": "the end node's state (after an arrival burn)",
    "patch_times": "start time of each shooting segment", "patch_states": "start state of each shooting segment",
    "final_state": "the trajectory's last state (before an arrival burn)",
    "min_altitude_km": "lowest altitude over either primary, km", "details": "method-specific values",
    "from": "start node id", "to": "end node id", "from_name": "start node's name", "to_name": "end node's name",
    "key": "catalogue key", "status": "ok | failed", "reason": "why it failed ('' if ok)",
}


@dataclass(frozen=True)
class Maneuver:
    """An impulsive manoeuvre: time from the leg's start (TU), position (3,) and Δv vector
    (3,, rotating-frame components, nondimensional; the same vector in the inertial frame)."""

    t: float
    position: np.ndarray
    dv: np.ndarray
    dv_mps: float

    def to_dict(self, system=None) -> dict:
        d = {"t": self.t, "position": list(map(float, self.position)),
             "dv": list(map(float, self.dv)), "dv_mps": self.dv_mps}
        if system is not None and system.dimensional:
            d["t_days"] = system.days(self.t)
            d["dv_vector_mps"] = [float(system.mps(x)) for x in self.dv]
        return d


@dataclass(frozen=True)
class Leg:
    """A computed leg of a transfer: where from, where to, its manoeuvres, Δv and time of flight.

    Attributes
    ----------
    system : System
    origin, target : str           what the leg joins (orbit descriptions, "parking earth 200km")
    maneuvers : tuple of Maneuver
    dv_mps : float                 total ``|Δv|`` (sum over manoeuvres), m/s
    tof : float                    time of flight, TU (``tof_days`` the same in days)
    patch_state : ndarray (6,)     the state at the patch point / periapsis
    segments : tuple of (t0, state, duration)  ballistic arcs, forward in time, whose
                                   concatenation is the trajectory (see :meth:`trajectory`)
    method : str                   how it was computed
    kind : str                     "heteroclinic", "homoclinic", "transfer", "arrival", "departure"
    min_altitude_km : float        lowest altitude over either primary along the leg
    details : dict                 method-specific values (residuals, phases, periapsis data...)
    tof_arrival : float            time of flight to arrival, TU: from the leg's start until its
                                   trajectory first comes within ``arrival_distance_km`` of the
                                   target orbit's path (:func:`arrival_time`); equal to ``tof``
                                   for a leg that ends on a parking orbit
    arrival_distance_km : float    the distance that counts as arrived (NaN: not an orbit)
    solution : str                 how its Δv was found: "patch" (the construction's own
                                   impulses: a manifold patch, a periapsis burn), "first guess"
                                   (a targeted leg, not optimised) or "optimised"
                                   (:mod:`cr3bp.transfers.optimise`)
    optimised : bool               ``solution == "optimised"``
    start : dict                   for an optimised leg, what the optimiser started from
                                   (``solution``, ``dv_mps``, ``tof_days``, ``method``)

    ``tof`` runs to the manifold's step-off point on the target orbit, which includes the
    asymptotic approach (months in Sun-Earth); ``tof_arrival`` stops at the stated distance.
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
    optimised: bool = False
    solution: str = "patch"
    start: dict = field(default_factory=dict, compare=False)

    @property
    def tof_days(self) -> float:
        return float(self.system.days(self.tof)) if self.system.dimensional else float("nan")

    @property
    def tof_arrival_days(self) -> float:
        t = self.tof if math.isnan(self.tof_arrival) else self.tof_arrival
        return float(self.system.days(t)) if self.system.dimensional else float("nan")

    def trajectory(self, n_per_segment: int = 400):
        """``(t, states)`` of the whole leg (segments re-propagated and joined)."""
        ts, ss = [], []
        for t0, s0, dur in self.segments:
            if dur == 0:
                continue
            te = np.linspace(0.0, dur, int(n_per_segment))
            arc = propagate(self.system, s0, dur, t_eval=te, rtol=RTOL, atol=ATOL)
            ts.append(t0 + arc.t)
            ss.append(arc.states)
        if not ts:
            return np.zeros(0), np.zeros((0, 6))
        return np.concatenate(ts), np.vstack(ss)

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
            "patch_state": list(map(float, self.patch_state)),
            "min_altitude_km": None if math.isinf(self.min_altitude_km) else self.min_altitude_km,
            "segments": [{"t0": float(t0), "state": list(map(float, s0)), "duration": float(d)}
                         for t0, s0, d in self.segments],
            "details": _plain(self.details),
            "solution": self.solution, "optimised": self.optimised,
            "start": _plain(self.start) if self.start else None,
        }

    def record(self, patches: int = 4) -> dict:
        """This leg as a leg record (:data:`RECORD_KEYS`), the form the transfer graph, the
        catalogue and the stitcher use: each ballistic segment cut into ``patches`` shooting
        segments (so every maneuver falls on a patch point), the departure and arrival states
        where its arcs begin and end (before a first burn, after a last one)."""
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
        mans = [{"t": float(m.t), "position": list(map(float, m.position)), "dv_vector": list(map(float, m.dv)),
                 "dv_mps": float(m.dv_mps), "where": "patch" if 0.0 < m.t < self.tof else
                 ("departure" if m.t == 0.0 else "arrival")} for m in self.maneuvers]
        start = np.array(states[0])
        finish = np.array(end)
        for m in self.maneuvers:          # the nodes' states: before a first burn, after a last one
            if m.t == 0.0:
                start[3:] -= np.asarray(m.dv)
            elif m.t >= self.tof:
                finish[3:] += np.asarray(m.dv)
        return {"format": 1, "method": "parking" if self.kind in ("arrival", "departure") else "manifold",
                "how": self.method, "kind": self.kind,
                "dv_mps": float(self.dv_mps), "tof_days": float(system.days(self.tof)), "tof_tu": float(self.tof),
                "maneuvers": mans, "departure_state": start.tolist(), "arrival_state": finish.tolist(),
                "patch_times": times, "patch_states": states, "final_state": end.tolist(),
                "min_altitude_km": float(self.min_altitude_km), "details": _json_details(self.details)}


def _mps(system, dv):
    return float(system.mps(dv)) if system.dimensional else float(dv)


def _json_details(d):
    return json.loads(json.dumps(d, default=lambda o: o.tolist() if hasattr(o, "tolist") else str(o)))
