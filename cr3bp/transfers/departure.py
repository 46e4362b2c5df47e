"""Departures from a circular parking orbit about the Earth to an Earth–Moon periodic orbit.

Paths (impulsive, all in the circular restricted three-body model, CR3BP):

``direct``
    departure burn on the parking orbit, one coast, insertion burn onto the target orbit.
``lunar-flyby``
    departure burn, a coast to a close lunar periapsis (the flyby, at or above a minimum
    altitude, with a burn there), a second coast, insertion burn.

Method
------
The transfer is designed backward from the target orbit. The unknowns are the insertion
point (the phase ``tau`` along the orbit, a fraction of its period), the insertion Δv vector
and, for the flyby, the Δv vector at lunar periapsis. The state just before insertion is
propagated backward (compiled DOP853 integrator, tolerance 1e-12) to the lunar periapsis
(flyby path), where the flyby Δv is taken off, and on to the first close periapsis about
the Earth. The departure burn is tangential at that perigee (the perigee is where a
tangential burn from a circular orbit joins the arc; Vallado, *Fundamentals of
Astrodynamics and Applications*, 4th ed., 2013, §6.3), so the parking orbit is the circle
through the perigee in the plane of the arc::

    dv_departure = |v + omega x (r - r_E)| - sqrt(GM_E / |r - r_E|)

Constraints: perigee radius = Earth radius + parking altitude; optionally the inclination
of the arc's plane at perigee; flyby altitude >= the minimum. The departure phase on the
parking orbit, the time of flight and the insertion point are all free: they follow from
the unknowns. The total Δv is minimised by sequential least squares (scipy's SLSQP; Kraft,
"A software package for sequential quadratic programming", DLR-FB 88-28, 1988), the
constraints being satisfied to ``CONSTRAINT_TOL``.

The flyby path is solved as two coasts joined at the lunar periapsis (multiple shooting,
:class:`_FlybyShooting`): the periapsis position, the velocities there before and after the
flyby burn, the insertion phase and both coast times are the unknowns; the backward coast must
end at a perigee at the parking radius, the forward one at the insertion point, both velocities
are perpendicular to the radius at the periapsis, and its altitude is at least the minimum.
Every derivative is analytic (the coasts' state transition matrices and the vector field).
Its first guesses come from a scan of periapsis states at the minimum altitude
(:func:`_flyby_guesses`, the backward half in one batch propagation): those that came from
near the Earth, given a tangential burn and followed forward, pass close to the target orbit;
each is made feasible by least-norm Newton steps, then optimised by rounds of SLSQP, each
round's end made feasible again, with the time of flight bounded (``max_tof_days``, by default
``FLYBY_MAX_TOF_DAYS``: the cost keeps falling slowly with longer flights, so the optimum lies on
that bound). The search ends when the first-order (Karush-Kuhn-Tucker) conditions hold at the
cheapest feasible point to ``FLYBY_KKT_TOL`` (``optimised`` True; ``bounds_hit`` names the
active bounds, ``max-tof`` and/or ``min-flyby-altitude``), or a round gains less than
``FLYBY_STALL_MPS`` or the iterations run out (``optimised`` False: feasible, not proven a
local minimum).

First guesses of the direct path come from two-body arcs about the Earth (Lambert's problem,
:mod:`cr3bp.transfers.lambert`, Izzo 2015): for each insertion phase on a grid and each time
of flight on a grid, the arc from a perigee opposite the insertion point (170 degrees of
transfer angle) gives the arrival velocity; the insertion Δv of the guess is the target
orbit's velocity minus that arrival velocity (rotating frame). The best few guesses by
their two-body cost are optimised, and the cheapest result is kept.

Inclination: the CR3BP has no Earth equator; the inclination reported and constrained is
that of the parking orbit to the Moon's orbit plane (the model's x-y plane). The Earth's
equator is inclined 18.3-28.6 degrees to that plane over the 18.6-year nodal cycle (common
practice), and it turns in the rotating frame once a month, so the inclination to the equator
depends on the date. Given the departure date (``epoch``), the equator's pole is placed on the
rotating axes by the Moon's DE421 ephemeris at that instant
(:func:`cr3bp.transfers.departure_common.equator_pole`): the inclination to the mean equator of
J2000 is reported, and may be held (``equator_inclination_deg``) or bounded below by a launch
site's latitude (``launch_latitude_deg``: designed free, and again with the inclination at the
bound only if the free design lies below it). The design itself stays the CR3BP's: the date
only orients it.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import minimize

from .. import validate
from ..vocabulary import CR3BP_DEPARTURE_PATHS
from ..errors import ConvergenceError, InputError, NoSolutionError, StateError
from ..dynamics import acceleration
from ..integrate import impact, propagate, propagate_batch
from ..io.plain import plain as _plain
from ..threads import serial
from ..tubes.manifolds import describe
from .departure_common import ATOL, GUESS_ANGLE_DEG, RTOL  # noqa: F401 - re-exported
from .departure_common import Periapsis as _Periapsis
from .departure_common import lambert_arrival as _lambert_arrival
from .departure_common import equator_pole, inclination_to
from .departure_common import newton as _newton
from .departure_common import perigee_summary as _perigee_summary
from .departure_common import plane_normal as _plane_normal  # noqa: F401 - old name
from .departure_common import relative as _relative
from .leg import Leg, Maneuver

PATHS = CR3BP_DEPARTURE_PATHS
#: Paths whose design is unfinished (refused by :func:`design_departure`).
UNFINISHED_PATHS = ()
#: Constraint tolerance accepted after optimisation: perigee radius (LU; 1e-9 LU ~ 0.4 m in
#: Earth–Moon) and inclination (rad).
CONSTRAINT_TOL = 1e-9
#: A periapsis about the Earth counts only closer than this (LU, ~77 000 km in Earth–Moon).
EARTH_WITHIN = 0.2
#: The same on the flyby path, where the backward coast from the Moon is steered by the flyby
#: Δv and its first perigee, however high, is what the constraint pulls down (LU).
FLYBY_EARTH_WITHIN = 0.9
#: A lunar periapsis counts as the flyby only closer than this (LU, ~19 000 km in Earth–Moon).
MOON_WITHIN = 0.05
#: Samples of the target orbit kept for starting propagations to an insertion phase.
ORBIT_SAMPLES = 64
#: Insertion phases and times of flight (days) tried by the two-body first guess.
GUESS_PHASES = 36
GUESS_TOF_DAYS = (3.0, 3.5, 4.0, 4.5, 5.0, 6.0)
#: First guesses optimised (the cheapest by their two-body cost, distinct phases).
GUESSES_OPTIMISED = 4
#: The flyby path's first guesses (see :func:`_flyby_guesses`): periapsis latitudes and the
#: step of longitudes and velocity directions (degrees), hyperbolic excess speeds (km/s), how
#: far back the arrival from the Earth is followed (days) and how close to the Earth it must
#: pass (LU, ~23 000 km), the tangential speed factors of the flyby burn, the window of the
#: post-flyby coast (days), the target orbit's samples, the weight of Δv against miss distance
#: (km per m/s), and the integration tolerance of the scan.
FLYBY_LATITUDES_DEG = (-75.0, -60.0, -45.0, -30.0, -15.0, 0.0, 15.0, 30.0, 45.0, 60.0, 75.0)
FLYBY_GRID_DEG = 30.0
FLYBY_VINF_KMS = (0.8, 0.95)
FLYBY_BACK_DAYS = 6.0
FLYBY_SCAN_PERIGEE = 0.06
FLYBY_SPEED_FACTORS = (0.875, 0.9, 0.925, 0.95, 0.975, 1.0)
FLYBY_FORWARD_DAYS = (1.5, 9.0)
FLYBY_ORBIT_SAMPLES = 400
FLYBY_SAMPLES_PER_DAY = 24
FLYBY_MISS_KM_PER_MPS = 5.0
SCAN_TOL = 1e-10
#: Flyby guesses optimised (the best by their score).
FLYBY_GUESSES_OPTIMISED = 3
#: SLSQP iterations on the flyby path in all, per round (each round's end made feasible by
#: Newton steps; the cheapest feasible point is kept), and the least gain of a round (m/s) that
#: lets the search go on.
FLYBY_MAX_ITER = 240
FLYBY_ROUND = 30
FLYBY_STALL_MPS = 1.0
#: SLSQP's tolerance on the total Δv (LU/TU; 1e-9 is about 1 mm/s in Earth-Moon).
FLYBY_FTOL = 1e-9
#: Tolerance of the re-propagation check on every returned transfer (km, position at insertion).
CLOSURE_TOL_KM = 1.0
MAX_ITER = 200


@dataclass(frozen=True)
class Departure:
    """A designed departure from an Earth parking orbit to an Earth-Moon periodic orbit (all values
    CR3BP; time from the departure burn). Made by :func:`design_departure`.

    Parameters
    ----------
    system, orbit : System, PeriodicOrbit
        The Earth-Moon system and the target orbit.
    path : {"direct", "lunar-flyby"}
    altitude_km : float
        Parking-orbit altitude.
    maneuvers : tuple of dict
        In time order: ``name`` (departure, flyby, insertion), ``t`` (TU), ``position`` (LU,
        rotating, barycentric), ``dv_vector`` (LU/TU, rotating-frame components),
        ``state_before`` (6,).
    tof : float
        TU from departure to insertion.
    insertion_phase : float
        Fraction of the target orbit's period from its initial state.
    perigee : dict
        Departure perigee: radius, speed_inertial, speed_circular, inclination_deg.
    flyby_altitude_km : float or None
    optimised : bool
        False: the optimiser stopped without meeting its tolerance.
    details : dict
        Iterations, constraint residuals, first-guess cost, timing.

    Examples
    --------
    Skipped under doctest (the optimisation takes tens of seconds):

    >>> from cr3bp import orbit
    >>> from cr3bp.transfers.departure import design_departure
    >>> nrho = orbit("earth-moon", "halo L2 south period=6.5626d")  # doctest: +SKIP
    >>> dep = design_departure(nrho, 200.0)                          # doctest: +SKIP
    >>> dep.maneuvers[0]["name"], dep.optimised                      # doctest: +SKIP
    ('departure', True)

    References
    ----------
    Izzo, "Revisiting Lambert's problem", *Celestial Mechanics and Dynamical Astronomy* 121,
    2015 (first guess); Kraft, "A software package for sequential quadratic programming",
    DFVLR-FB 88-28, 1988 (SLSQP); Vallado, *Fundamentals of Astrodynamics and Applications*,
    4th ed., 2013, §6.3 (tangential departure burn).
    """

    system: object
    orbit: object
    path: str
    altitude_km: float
    maneuvers: tuple
    tof: float
    insertion_phase: float
    perigee: dict
    flyby_altitude_km: float | None = None
    optimised: bool = True
    details: dict = field(default_factory=dict, compare=False)

    # ---- derived values (dimensional at the edge) --------------------------------------
    @property
    def dv_mps(self) -> float:
        return float(sum(self.system.mps(np.linalg.norm(m["dv_vector"])) for m in self.maneuvers))

    @property
    def departure_dv_mps(self) -> float:
        return float(self.system.mps(np.linalg.norm(self.maneuvers[0]["dv_vector"])))

    @property
    def tof_days(self) -> float:
        return float(self.system.days(self.tof))

    @property
    def departure_speed_kms(self) -> float:
        """Earth-relative inertial speed just after the departure burn."""
        return float(self.system.mps(self.perigee["speed_inertial"]) / 1e3)

    @property
    def c3_km2_s2(self) -> float:
        """Two-body energy about the Earth after departure, v^2 - 2 GM_E / r (km^2/s^2)."""
        vk = self.system.velocity_kms
        v = self.perigee["speed_inertial"]
        return float((v * v - 2.0 * (1.0 - self.system.mu) / self.perigee["radius"]) * vk * vk)

    @property
    def inclination_deg(self) -> float:
        return float(self.perigee["inclination_deg"])

    @property
    def departure_state(self) -> np.ndarray:
        """Rotating-frame state just after the departure burn (t = 0)."""
        m = self.maneuvers[0]
        s = np.array(m["state_before"], dtype=float)
        s[3:] += m["dv_vector"]
        return s

    def segments(self):
        """(t0, state just after the burn at t0, duration) of each coast, in time order."""
        out = []
        for a, b in zip(self.maneuvers[:-1], self.maneuvers[1:]):
            s = np.array(a["state_before"], dtype=float)
            s[3:] += a["dv_vector"]
            out.append((float(a["t"]), s, float(b["t"] - a["t"])))
        return out

    def trajectory(self, n_per_segment: int = 600):
        """Times (TU) and rotating-frame states along the transfer, sampled per coast."""
        ts, ss = [], []
        for t0, s, dt in self.segments():
            tt = np.linspace(0.0, dt, n_per_segment)
            arc = propagate(self.system, s, dt, rtol=RTOL, atol=ATOL, t_eval=tt)
            ts.append(t0 + arc.t)
            ss.append(arc.states)
        return np.concatenate(ts), np.concatenate(ss)

    def to_dict(self) -> dict:
        sysm = self.system
        man = []
        for m in self.maneuvers:
            man.append({"name": m["name"], "t_days": float(sysm.days(m["t"])),
                        "dv_mps": float(sysm.mps(np.linalg.norm(m["dv_vector"]))),
                        "position_km": [float(sysm.km(v)) for v in m["position"]],
                        "dv_vector_mps": [float(sysm.mps(v)) for v in m["dv_vector"]]})
        return {
            "path": self.path,
            "model": "cr3bp",
            "from": f"parking earth {self.altitude_km:g}km",
            "to": _describe(self.orbit),
            "maneuvers": man,
            "dv_mps": self.dv_mps,
            "departure_dv_mps": self.departure_dv_mps,
            "c3_km2_s2": self.c3_km2_s2,
            "departure_speed_kms": self.departure_speed_kms,
            "tof_days": self.tof_days,
            "flyby_altitude_km": self.flyby_altitude_km,
            "inclination_deg": self.inclination_deg,
            "inclination_reference": "the Moon's orbit plane (the model's x-y plane)",
            "insertion_phase": self.insertion_phase,
            "optimised": self.optimised,
            "bounds_hit": list(self.details.get("bounds_hit") or []),
            "departure_state": self.departure_state.tolist(),
            "position_frame": "Earth-Moon rotating frame, origin at the barycentre",
            "details": _plain(self.details),
            **self._dated_dict(),
        }

    def _dated_dict(self) -> dict:
        """The dated departure's keys (its epoch and the inclination to the Earth's equator), or {}."""
        d = self.details.get("dated")
        if not d:
            return {}
        from .low_energy import iso_utc  # lazy: the time scales, only for a dated departure
        return {"departure_epoch": iso_utc(d["epoch_tdb_s"]),
                "inclination_equator_deg": d["inclination_equator_deg"],
                "inclination_equator_reference": d["equator_reference"],
                "launch_latitude_deg": d["launch_latitude_deg"]}


def _describe(orbit):
    try:
            return describe(orbit)
    except Exception:  # noqa: BLE001 - a description is cosmetic
        return f"{orbit.family} {orbit.point} {orbit.branch}".strip()


# ---- the target orbit (geometry about a primary: cr3bp.transfers.departure_common) --------

class _OrbitPoints:
    """States of the target orbit at any phase (propagated from the nearest stored sample)."""

    def __init__(self, orbit):
        self.orbit = orbit
        self.T = float(orbit.period)
        tt = np.linspace(0.0, self.T, ORBIT_SAMPLES + 1)
        arc = propagate(orbit.system, orbit.state, self.T, rtol=RTOL, atol=ATOL, t_eval=tt)
        self.t, self.s = tt, arc.states

    def at(self, phase):
        t = (phase % 1.0) * self.T
        k = min(int(t / self.T * ORBIT_SAMPLES), ORBIT_SAMPLES - 1)
        dt = t - self.t[k]
        if dt == 0.0:
            return self.s[k].copy()
        return np.array(propagate(self.orbit.system, self.s[k], dt, rtol=RTOL, atol=ATOL).final_state)

    #: Insertion phases of the target (one: the fraction of the period; a torus has two).
    nphase = 1

    def grid(self, n):
        """(phases (n, 1), states (n, 6)) at ``n`` evenly spaced phases (the flyby scan's samples)."""
        ph = np.linspace(0.0, 1.0, n, endpoint=False)
        return ph[:, None], np.array([self.at(q) for q in ph])

    def partials(self, phases):
        """(state, d state / d phase (6, 1)) at ``phases`` = [phase]: along the flow, T f(state)."""
        st = self.at(phases[0])
        return st, (self.T * acceleration(self.orbit.system.mu, st))[:, None]


# ---- the transfer as a function of the unknowns -----------------------------------------

class _Problem:
    def __init__(self, orbit, altitude_km, inclination_deg, path, min_flyby_km, max_tof, points=None, pole=None):
        s = orbit.system
        self.system, self.orbit, self.path = s, orbit, path
        self.points = _OrbitPoints(orbit) if points is None else points
        self.r_park = (s.primary.radius_km + altitude_km) / s.length_km
        self.inc = None if inclination_deg is None else math.radians(inclination_deg)
        # the pole the inclination is held to: None, the model's z (the Moon's orbit plane);
        # else a unit vector on the rotating axes (the Earth's equator pole of a dated departure)
        self.pole = None if pole is None else np.asarray(pole, dtype=float)
        self.r_fb = None if min_flyby_km is None else (s.secondary.radius_km + min_flyby_km) / s.length_km
        self.max_tof = max_tof
        r_e, r_m = s.radii
        # the Earth as a point mass below its surface (a perigee below the target is still
        # found, so the constraint stays smooth); the Moon's surface is a real stop
        self.earth = _Periapsis(s, 0, EARTH_WITHIN if path == "direct" else FLYBY_EARTH_WITHIN,
                                (0.2 * r_e, r_m))
        self.moon = _Periapsis(s, 1, MOON_WITHIN, (0.2 * r_e, 0.999 * r_m))
        self.cache = {}
        self.evaluations = 0

    def nvar(self):
        return 4 if self.path == "direct" else 7

    def evaluate(self, z):
        key = tuple(np.round(np.asarray(z, dtype=float), 15))
        if key in self.cache:
            return self.cache[key]
        self.evaluations += 1
        out = self._evaluate(np.asarray(z, dtype=float))
        if len(self.cache) > 4096:
            self.cache.clear()
        self.cache[key] = out
        return out

    def _evaluate(self, z):
        s_ins = self.points.at(z[0])
        dv_ins = z[1:4]
        s = s_ins.copy()
        s[3:] -= dv_ins
        t_left = self.max_tof
        flyby = None
        if self.path == "lunar-flyby":
            hit = self.moon.find(s, t_left)
            if hit is None:
                return None
            t_f, s_f = hit
            dv_fb = z[4:7]
            flyby = (t_f, s_f.copy(), dv_fb)
            s = s_f.copy()
            s[3:] -= dv_fb
            t_left = self.max_tof + t_f
            if t_left <= 0:
                return None
        hit = self.earth.find(s, t_left)
        if hit is None:
            return None
        t_p, s_p = hit
        t_p_total = t_p + (flyby[0] if flyby else 0.0)
        per = _perigee_summary(self.system, s_p)
        cost = per["dv"] + float(np.linalg.norm(dv_ins))
        if flyby:
            cost += float(np.linalg.norm(flyby[2]))
        return {"cost": cost, "perigee": per, "s_p": s_p, "t_p": t_p_total, "s_ins": s_ins,
                "flyby": flyby}

    # scipy callbacks (None -> a large penalty that pushes the optimiser back)
    def fun(self, z):
        e = self.evaluate(z)
        return 10.0 if e is None else e["cost"]

    def eq(self, z):
        e = self.evaluate(z)
        n = 1 if self.inc is None else 2
        if e is None:
            return np.full(n, 1.0)
        out = [(e["perigee"]["radius"] - self.r_park) * 10.0]
        if self.inc is not None:
            out.append(_incl(self.system, e["s_p"], self.pole) - self.inc)
        return np.array(out)

    def ineq(self, z):
        e = self.evaluate(z)
        if e is None or e["flyby"] is None:
            return np.array([-1.0])
        c = np.array([self.system.positions[1], 0.0, 0.0])
        return np.array([(np.linalg.norm(e["flyby"][1][:3] - c) - self.r_fb) * 10.0])


# ---- first guesses -------------------------------------------------------------------------

def _direct_guesses(pb: _Problem):
    s = pb.system
    rows = []
    for k in range(GUESS_PHASES):
        ph = k / GUESS_PHASES
        st = pb.points.at(ph)
        for d in GUESS_TOF_DAYS:
            tof = d / s.days(1.0)
            if tof > pb.max_tof:
                continue
            try:
                dv1, v2, rel = _lambert_arrival(s, pb.r_park, st[:3], tof, pb.inc, pb.pole)
            except (InputError, NoSolutionError):
                continue
            v_rot = v2 - np.array([-rel[1], rel[0], 0.0])
            dv_ins = st[3:] - v_rot
            rows.append((dv1 + float(np.linalg.norm(dv_ins)), ph, dv_ins))
    rows.sort(key=lambda r: r[0])
    return rows


def _perilune_state(pb, lat, lon, psi, vinf_kms):
    """Rotating-frame state at a lunar periapsis at the least flyby radius: the point at
    latitude ``lat`` and longitude ``lon`` (rad, Moon-centred, rotating axes), the Moon-relative
    inertial velocity perpendicular to the radius, at angle ``psi`` from the local east, with
    the speed of a hyperbola of excess speed ``vinf_kms`` there."""
    s = pb.system
    u = np.array([math.cos(lat) * math.cos(lon), math.cos(lat) * math.sin(lon), math.sin(lat)])
    east = np.cross([0.0, 0.0, 1.0], u)
    east /= np.linalg.norm(east)
    north = np.cross(u, east)
    speed = math.sqrt((vinf_kms / s.velocity_kms) ** 2 + 2.0 * s.mu / pb.r_fb)
    rel = pb.r_fb * u
    v_in = speed * (math.cos(psi) * east + math.sin(psi) * north)
    return np.concatenate([np.array([s.positions[1], 0.0, 0.0]) + rel,
                           v_in - np.array([-rel[1], rel[0], 0.0])])


def _perilune_states(pb, lat, lon, psi, vinf_kms):
    """:func:`_perilune_state` for arrays of latitudes, longitudes, angles and speeds (N, 6)."""
    s = pb.system
    u = np.stack([np.cos(lat) * np.cos(lon), np.cos(lat) * np.sin(lon), np.sin(lat)], axis=1)
    east = np.stack([-u[:, 1], u[:, 0], np.zeros_like(lat)], axis=1)
    east /= np.linalg.norm(east, axis=1)[:, None]
    north = np.cross(u, east)
    speed = np.sqrt((np.asarray(vinf_kms) / s.velocity_kms) ** 2 + 2.0 * s.mu / pb.r_fb)
    rel = pb.r_fb * u
    v_in = speed[:, None] * (np.cos(psi)[:, None] * east + np.sin(psi)[:, None] * north)
    w = np.stack([-rel[:, 1], rel[:, 0], np.zeros_like(lat)], axis=1)
    return np.hstack([np.array([s.positions[1], 0.0, 0.0]) + rel, v_in - w])


def _with_speed_factor(pb, state, factor):
    """``state`` with its Moon-relative inertial velocity scaled by ``factor`` (a tangential
    burn at the periapsis)."""
    rel = state[:3] - np.array([pb.system.positions[1], 0.0, 0.0])
    w = np.array([-rel[1], rel[0], 0.0])
    out = np.array(state, dtype=float)
    out[3:] = (state[3:] + w) * factor - w
    return out


def _flyby_guesses(pb: _Problem):
    """First guesses of the flyby path, built outward from the flyby in the CR3BP itself.

    1. Periapsis states at the least flyby radius on a grid of points on the Moon (latitude,
       longitude), directions of the velocity perpendicular to the radius, and hyperbolic
       excess speeds (FLYBY_VINF_KMS, common practice for Earth-Moon transfers) are
       propagated backward, all at once (:func:`cr3bp.integrate.propagate_batch`); those that
       come closer than FLYBY_SCAN_PERIGEE to the Earth within FLYBY_BACK_DAYS (a terminal
       event) came from near a low Earth orbit.
    2. Each of those is propagated forward after a tangential burn at the periapsis (a grid
       of speed factors FLYBY_SPEED_FACTORS, slowing down being what an insertion far from the
       Moon needs), sampled FLYBY_SAMPLES_PER_DAY times a day from the dense output; its
       closest sample to the target orbit (FLYBY_ORBIT_SAMPLES samples, nearest by a k-d tree)
       between FLYBY_FORWARD_DAYS gives the insertion point, the post-flyby coast time and the
       insertion Δv of the guess.
    3. Guesses are ranked by their miss distance plus FLYBY_MISS_KM_PER_MPS km per m/s of
       their flyby and insertion Δv.

    Returns rows ``(score, x0)``, ``x0`` the start of :class:`_FlybyShooting` (its backward
    coast time that of the arrival within FLYBY_SCAN_PERIGEE of the Earth)."""
    from scipy.spatial import cKDTree   # lazy: heavy library, only the flyby scan needs it
    s = pb.system
    moon = np.array([s.positions[1], 0.0, 0.0])
    day = 1.0 / s.days(1.0)
    r_m = s.radii[1]
    lat, lon, psi, vinf = (np.ravel(a) for a in np.meshgrid(
        np.radians(FLYBY_LATITUDES_DEG), np.radians(np.arange(0.0, 360.0, FLYBY_GRID_DEG)),
        np.radians(np.arange(0.0, 360.0, FLYBY_GRID_DEG)), np.asarray(FLYBY_VINF_KMS, dtype=float), indexing="ij"))
    peri = _perilune_states(pb, lat, lon, psi, vinf)
    back = propagate_batch(s, peri, -FLYBY_BACK_DAYS * day, rtol=SCAN_TOL, atol=SCAN_TOL,
                           events=[impact(0, FLYBY_SCAN_PERIGEE), impact(1, 0.999 * r_m)],
                           max_events=1, on_failure="mark")
    near = [k for k in range(len(peri)) if back.status[k] == "impact" and back.event_index[k].size
            and int(back.event_index[k][0]) == 0]
    if not near:
        return []
    t_back = -back.t_final[near]
    kept = peri[near]
    posts = np.array([_with_speed_factor(pb, st, f) for st in kept for f in FLYBY_SPEED_FACTORS])
    owner = np.repeat(np.arange(len(kept)), len(FLYBY_SPEED_FACTORS))
    t_lo, t_hi = FLYBY_FORWARD_DAYS
    tf = np.linspace(0.0, t_hi * day, int(FLYBY_SAMPLES_PER_DAY * t_hi) + 1)
    first = int(np.searchsorted(tf, t_lo * day))
    n = len(posts)
    # one call each with samples from the dense output (a batch has no dense output, and
    # restarting it at every sample costs more than these calls)
    samples = np.full((len(tf), n, 6), np.nan)
    stops = [impact(0, s.radii[0]), impact(1, 0.999 * r_m)]
    for q in range(n):
        try:
            arc = propagate(s, posts[q], tf[-1], rtol=SCAN_TOL, atol=SCAN_TOL, t_eval=tf, events=stops)
        except (StateError, ConvergenceError):
            continue
        m = min(len(arc.t), len(tf))         # an impact ends the samples early
        samples[:m, q] = arc.states[:m]
    ph, orb = pb.points.grid(FLYBY_ORBIT_SAMPLES)
    tree = cKDTree(orb[:, :3])
    win = samples[first:]                                   # (m, n, 6)
    pos = np.where(np.isfinite(win[..., 0]), 0.0, np.inf)   # a trajectory stopped: no samples
    dist, j = tree.query(np.nan_to_num(win[..., :3], nan=1e3).reshape(-1, 3))
    dist = dist.reshape(win.shape[:2]) + pos
    j = j.reshape(win.shape[:2])
    rows = []
    for q in range(n):
        i = int(np.argmin(dist[:, q]))
        if not np.isfinite(dist[i, q]):
            continue
        st, post, o = kept[owner[q]], posts[q], orb[j[i, q]]
        dv = float(np.linalg.norm(post[3:] - st[3:]) + np.linalg.norm(win[i, q, 3:] - o[3:]))
        score = float(s.km(dist[i, q])) + FLYBY_MISS_KM_PER_MPS * float(s.mps(dv))
        x0 = np.concatenate([st[:3] - moon, st[3:], post[3:], [ph[j[i, q], 0], float(tf[first + i]),
                                                              float(t_back[owner[q]])], ph[j[i, q], 1:]])
        rows.append((score, x0))
    rows.sort(key=lambda r: r[0])
    return rows


#: Smoothing of the flyby burn's norm in the objective, LU/TU (~1 mm/s): its gradient exists at
#: an unpowered flyby.
FLYBY_SMOOTH = 1e-6
#: Default bound on the time of flight, departure to insertion (days): the direct path, and the
#: flyby path, whose cost keeps falling slowly (a few m/s a day, measured to the 9:2 NRHO) with
#: longer flights, so that its optimum lies on this bound.
MAX_TOF_DAYS = 150.0
FLYBY_MAX_TOF_DAYS = 10.0
#: First-order optimality of the flyby programme (:func:`_flyby_first_order`): relative
#: tolerance on the KKT remainder, how close to its bound an inequality counts as active (LU
#: for the flyby radius, 1e-7 is 38 m; TU for the time of flight, 1e-5 is 3.8 s), and the
#: names of the two inequalities in the result.
FLYBY_KKT_TOL = 1e-3
FLYBY_ACTIVE_TOL = (1e-7, 1e-5)
FLYBY_BOUND_NAMES = ("min-flyby-altitude", "max-tof")
#: Variable scales of the flyby programme (SLSQP works on x / scale): periapsis position (LU),
#: velocities (LU/TU), insertion phase, coast times (TU).
FLYBY_SCALES = np.array([1e-3] * 3 + [1.0] * 6 + [0.1, 1.0, 1.0])


def _w(rel):
    """The rotating frame's velocity term omega x r (z axis, unit rate)."""
    return np.array([-rel[1], rel[0], 0.0])


def _incl(system, s_p, pole=None):
    return inclination_to(system, s_p, _Z if pole is None else pole)


_Z = np.array([0.0, 0.0, 1.0])


class _FlybyShooting:
    """The flyby path as two coasts joined at the lunar periapsis (multiple shooting), each
    with its state transition matrix, so that every derivative is analytic.

    Unknowns ``x = [p (3), v_pre (3), v_post (3), phase, t2, t1]``: the periapsis position
    (Moon-relative), the velocities there before and after the flyby burn, the insertion phase
    on the target orbit, the post-flyby coast time and the pre-flyby coast time. The backward
    coast (``t1``) from the periapsis ends at the departure perigee: its radius is the parking
    radius and its radial velocity zero (a perigee, where the tangential departure burn joins
    the arc); the forward coast (``t2``) ends at the insertion point; both velocities at the
    flyby are perpendicular to the radius; its altitude is at least the minimum; ``t1 + t2`` at
    most the cap. Objective: departure + flyby + insertion Δv.

    A target with more than one insertion phase (a torus: ``pb.points.nphase`` 2) appends the
    further phases to ``x`` (index 12 on); ``pb.points.partials`` gives the insertion state's
    derivatives with respect to all of them.

    The derivatives (Betts 2010, §4.4; Pavlak 2013, ch. 3): the end states' by the STMs and
    the vector field, the perigee functions' by the chain rule through them."""

    def __init__(self, pb: _Problem):
        self.pb = pb
        s = pb.system
        self.moon = np.array([s.positions[1], 0.0, 0.0])
        self.earth = np.array([s.positions[0], 0.0, 0.0])
        self.mu = s.mu
        self.gm = 1.0 - s.mu
        r_e, r_m = s.radii
        # the Earth as a point mass below its surface while optimising (the constraint stays
        # smooth); the Moon's surface is a real stop
        self.stops = [impact(0, 0.2 * r_e), impact(1, 0.999 * r_m)]
        self.cache = {}
        self.evaluations = 0
        k = int(getattr(pb.points, "nphase", 1))
        self.n = 11 + k
        self.phase_index = [9] + list(range(12, self.n))
        self.scales = np.concatenate([FLYBY_SCALES, np.full(k - 1, FLYBY_SCALES[9])])

    def unpack(self, x):
        return x[0:3], x[3:6], x[6:9], x[9], x[10], x[11]

    def phases(self, x):
        """The insertion phases of ``x`` (the orbit's one, or a torus's two)."""
        return np.asarray(x, dtype=float)[self.phase_index]

    def evaluate(self, x):
        x = np.asarray(x, dtype=float)
        key = x.tobytes()
        if key in self.cache:
            return self.cache[key]
        self.evaluations += 1
        try:
            out = self._evaluate(x)
        except (StateError, ConvergenceError):
            out = None
        if len(self.cache) > 512:
            self.cache.clear()
        self.cache[key] = out
        return out

    def _evaluate(self, x):
        pb, s = self.pb, self.pb.system
        p, v_pre, v_post, ph, t2, t1 = self.unpack(x)
        if not (t1 > 0.0 and t2 > 0.0):
            return None
        r0 = self.moon + p
        a = propagate(s, np.concatenate([r0, v_pre]), -t1, stm=True, rtol=RTOL, atol=ATOL, events=self.stops)
        b = propagate(s, np.concatenate([r0, v_post]), t2, stm=True, rtol=RTOL, atol=ATOL, events=self.stops)
        if a.status != "time" or b.status != "time":
            return None
        s_p, end = np.array(a.final_state), np.array(b.final_state)
        orb, d_orb = pb.points.partials(self.phases(x))
        per = _perigee_summary(s, s_p)
        dv_fb = v_post - v_pre
        dv_ins = orb[3:] - end[3:]
        cost = per["dv"] + float(np.linalg.norm(dv_fb)) + float(np.linalg.norm(dv_ins))
        return {"cost": cost, "perigee": per, "s_p": s_p, "t_p": -t1 - t2, "s_ins": orb,
                "flyby": (-t2, np.concatenate([r0, v_post]), dv_fb), "end": end, "dv_ins": dv_ins,
                "phi1": np.array(a.stm), "phi2": np.array(b.stm), "f_p": acceleration(self.mu, s_p),
                "f_end": acceleration(self.mu, end), "d_orb": d_orb}

    # derivatives of the two end states with respect to x (6 x n each)
    def _d_states(self, e):
        dsp = np.zeros((6, self.n))
        dsp[:, 0:3] = e["phi1"][:, :3]
        dsp[:, 3:6] = e["phi1"][:, 3:]
        dsp[:, 11] = -e["f_p"]
        dend = np.zeros((6, self.n))
        dend[:, 0:3] = e["phi2"][:, :3]
        dend[:, 6:9] = e["phi2"][:, 3:]
        dend[:, 10] = e["f_end"]
        return dsp, dend

    def _perigee_grads(self, s_p):
        """Gradients with respect to the perigee state of its radius, rel . v, departure Δv."""
        rel = s_p[:3] - self.earth
        v = s_p[3:]
        vin = v + _w(rel)
        r = float(np.linalg.norm(rel))
        sp = float(np.linalg.norm(vin))
        u = vin / sp
        g_r = np.concatenate([rel / r, np.zeros(3)])
        g_rv = np.concatenate([v, rel])
        g_dv = np.concatenate([np.array([u[1], -u[0], 0.0]) + 0.5 * math.sqrt(self.gm) * r ** -2.5 * rel, u])
        return g_r, g_rv, g_dv

    def fun(self, x):
        e = self.evaluate(x)
        if e is None:
            return 10.0
        dv_fb = e["flyby"][2]
        return e["perigee"]["dv"] + math.sqrt(float(dv_fb @ dv_fb) + FLYBY_SMOOTH ** 2) + \
            float(np.linalg.norm(e["dv_ins"]))

    def jac(self, x):
        e = self.evaluate(x)
        if e is None:
            return np.zeros(self.n)
        dsp, dend = self._d_states(e)
        _, _, g_dv = self._perigee_grads(e["s_p"])
        g = g_dv @ dsp
        dv_fb = e["flyby"][2]
        u = dv_fb / math.sqrt(float(dv_fb @ dv_fb) + FLYBY_SMOOTH ** 2)
        g[6:9] += u
        g[3:6] -= u
        w = e["dv_ins"] / np.linalg.norm(e["dv_ins"])
        g += -(w @ dend[3:])
        g[self.phase_index] += w @ e["d_orb"][3:]
        return g

    def neq(self):
        return 7 if self.pb.inc is None else 8

    def eq(self, x):
        pb = self.pb
        e = self.evaluate(x)
        if e is None:
            return np.ones(self.neq())
        p, v_pre, v_post, _, _, _ = self.unpack(x)
        rel = e["s_p"][:3] - self.earth
        out = list(e["end"][:3] - e["s_ins"][:3])
        out.append(e["perigee"]["radius"] - pb.r_park)
        out.append(float(rel @ e["s_p"][3:]))
        out.append(float(p @ v_pre))
        out.append(float(p @ v_post))
        if pb.inc is not None:
            out.append(_incl(pb.system, e["s_p"], pb.pole) - pb.inc)
        return np.array(out)

    def eq_jac(self, x):
        e = self.evaluate(x)
        J = np.zeros((self.neq(), self.n))
        if e is None:
            return J
        p, v_pre, v_post, _, _, _ = self.unpack(x)
        dsp, dend = self._d_states(e)
        J[0:3] = dend[:3]
        J[0:3, self.phase_index] -= e["d_orb"][:3]
        g_r, g_rv, _ = self._perigee_grads(e["s_p"])
        J[3] = g_r @ dsp
        J[4] = g_rv @ dsp
        J[5, 0:3], J[5, 3:6] = v_pre, p
        J[6, 0:3], J[6, 6:9] = v_post, p
        if self.pb.inc is not None:
            g = np.empty(6)
            for k in range(6):          # the inclination of the perigee state: central differences
                d = np.zeros(6)
                d[k] = 1e-7
                g[k] = (_incl(self.pb.system, e["s_p"] + d, self.pb.pole)
                        - _incl(self.pb.system, e["s_p"] - d, self.pb.pole)) / 2e-7
            J[7] = g @ dsp
        return J

    def ineq(self, x):
        p, _, _, _, t2, t1 = self.unpack(x)
        return np.array([float(np.linalg.norm(p)) - self.pb.r_fb, self.pb.max_tof - t1 - t2])

    def ineq_jac(self, x):
        p = x[0:3]
        J = np.zeros((2, self.n))
        J[0, 0:3] = p / np.linalg.norm(p)
        J[1, 10] = J[1, 11] = -1.0
        return J

    def feasible(self, x, tol):
        return self.evaluate(x) is not None and bool(np.all(np.abs(self.eq(x)) < tol)) and \
            bool(np.all(self.ineq(x) > -tol))

    def newton(self, x, tol=CONSTRAINT_TOL, iterations=40, max_step=0.05):
        """Least-norm Newton steps on the equalities (and each broken bound, the flyby radius or the
        time of flight, held at it), in the scaled variables: a feasible point near ``x``, or None."""
        x = np.array(x, dtype=float)
        for _ in range(iterations):
            if self.evaluate(x) is None:
                return None
            c, J = self.eq(x), self.eq_jac(x)
            g = self.ineq(x)
            # a bound broken (the flyby below the least radius, the flight longer than the
            # bound): held at it, as one more equality
            low = [k for k in range(2) if g[k] < 0.0]
            if low:
                c = np.concatenate([c, g[low]])
                J = np.vstack([J, self.ineq_jac(x)[low]])
            if np.all(np.abs(c) < tol) and g[1] >= 0.0:
                return x
            Js = J * self.scales
            step = -np.linalg.lstsq(Js, c, rcond=None)[0]
            n = float(np.linalg.norm(step))
            if n > max_step:
                step *= max_step / n
            x = x + step * self.scales
        return x if self.feasible(x, tol) else None


def _optimise_flyby(pb: _Problem, x0, ms=None):
    """From the guess ``x0`` of :func:`_flyby_guesses`: the backward coast time set to the
    guess's perigee, least-norm Newton steps to a feasible transfer, then rounds of SLSQP on the
    total Δv (analytic gradients; scaled variables, each constraint row divided by its gradient's
    norm at the round's start), each round's end made feasible again by Newton, until the
    first-order conditions hold at the cheapest feasible point (:func:`_flyby_first_order`), a
    round gains less than FLYBY_STALL_MPS, or FLYBY_MAX_ITER iterations are spent.
    Returns (a summary dict or None, evaluation of the cheapest feasible point or None, that
    point, the first-order check there or None). The summary holds the iterations, the reason
    it stopped and the feasible start's cost (``start_cost``, LU/TU): the point returned never
    costs more than that start."""
    ms = ms or _FlybyShooting(pb)
    x0 = np.array(x0, dtype=float)
    hit = pb.earth.find(np.concatenate([ms.moon + x0[0:3], x0[3:6]]), pb.max_tof - x0[10])
    if hit is None:
        return None, None, None, None
    x0[11] = -hit[0]
    x = ms.newton(x0)
    if x is None or not _surface_clear(pb, ms, x):
        return None, None, None, None
    sc = ms.scales
    stall = FLYBY_STALL_MPS / pb.system.mps(1.0)
    cost = start_cost = ms.evaluate(x)["cost"]
    used, message = 0, "iteration limit"
    kkt = _flyby_first_order(ms, x)
    with serial(numba_threads=False):     # SLSQP's small dense algebra on one BLAS thread
        while used < FLYBY_MAX_ITER and not kkt["holds"]:
            w = 1.0 / np.maximum(np.linalg.norm(ms.eq_jac(x) * sc, axis=1), 1e-12)
            fs = 1.0 / max(float(np.linalg.norm(ms.jac(x) * sc)), 1e-12)
            cons = [{"type": "eq", "fun": lambda y: w * ms.eq(y * sc),
                     "jac": lambda y: w[:, None] * ms.eq_jac(y * sc) * sc},
                    {"type": "ineq", "fun": lambda y: ms.ineq(y * sc), "jac": lambda y: ms.ineq_jac(y * sc) * sc}]
            res = minimize(lambda y: fs * ms.fun(y * sc), x / sc, jac=lambda y: fs * ms.jac(y * sc) * sc,
                           method="SLSQP", constraints=cons,
                           options={"maxiter": min(FLYBY_ROUND, FLYBY_MAX_ITER - used), "ftol": FLYBY_FTOL})
            used += int(res.nit)
            x2 = ms.newton(res.x * sc) if np.all(np.isfinite(res.x)) else None
            if x2 is None or not _surface_clear(pb, ms, x2):
                message = "the last round ended where Newton steps found no feasible transfer"
                break
            c2 = ms.evaluate(x2)["cost"]
            gain = cost - c2
            if c2 < cost:
                x, cost = x2, c2
                kkt = _flyby_first_order(ms, x)
            if kkt["holds"]:
                break
            if res.status == 0:
                message = "SLSQP converged, but the first-order conditions do not hold to their tolerance"
                break
            if gain < stall:
                message = (f"stalled: the last round of {FLYBY_ROUND} iterations gained less than "
                           f"{FLYBY_STALL_MPS:g} m/s")
                break
    if kkt["holds"]:
        message = (f"first-order (KKT) conditions hold (relative remainder {kkt['relative_residual']:.1e}, "
                   f"tolerance {FLYBY_KKT_TOL:g})")
    return {"iterations": used, "message": message, "start_cost": start_cost}, ms.evaluate(x), x, kkt


def _flyby_first_order(ms, x) -> dict:
    """The Karush-Kuhn-Tucker (first-order) conditions of the flyby programme at ``x``.

    In SLSQP's scaled variables (``x / ms.scales``): the inequalities within
    ``FLYBY_ACTIVE_TOL`` of their bound are active; the multipliers of the equalities and the
    active inequalities are the least-squares solution of ``grad f = A^T lambda``; the
    conditions hold when the remainder ``|grad f - A^T lambda|`` is at most ``FLYBY_KKT_TOL``
    times ``|grad f|`` and every active inequality's multiplier is at least ``-FLYBY_KKT_TOL``
    times ``|grad f|`` (``g(x) >= 0`` constraints pull with non-negative multipliers).
    Nocedal & Wright, *Numerical Optimization*, 2nd ed., 2006, Theorem 12.1.

    Returns a dict: ``holds``, ``relative_residual``, ``bounds_hit`` (names of the active
    inequalities: ``min-flyby-altitude``, ``max-tof``), ``multipliers_active``."""
    sc = ms.scales
    g = ms.jac(x) * sc
    g_ineq = ms.ineq(x)
    active = [k for k in range(2) if g_ineq[k] <= FLYBY_ACTIVE_TOL[k]]
    A = np.vstack([ms.eq_jac(x) * sc] + [ms.ineq_jac(x)[k:k + 1] * sc for k in active])
    lam = np.linalg.lstsq(A.T, g, rcond=None)[0]
    gn = max(float(np.linalg.norm(g)), 1e-300)
    rel = float(np.linalg.norm(g - A.T @ lam)) / gn
    mu_act = lam[A.shape[0] - len(active):] / gn
    holds = rel <= FLYBY_KKT_TOL and bool(np.all(mu_act >= -FLYBY_KKT_TOL))
    return {"holds": bool(holds), "relative_residual": rel, "tolerance": FLYBY_KKT_TOL,
            "bounds_hit": [FLYBY_BOUND_NAMES[k] for k in active],
            "multipliers_active": [float(v) for v in mu_act]}


def _surface_clear(pb, ms, x):
    """The backward coast of ``x`` stays above the Earth's surface (the optimiser's Earth is a
    point mass)."""
    p, v_pre, _, _, _, t1 = ms.unpack(x)
    arc = propagate(pb.system, np.concatenate([ms.moon + p, v_pre]), -t1, rtol=RTOL, atol=ATOL,
                    events=[impact(0, pb.system.radii[0])])
    return arc.status == "time"


# ---- design --------------------------------------------------------------------------------

def design_departure(orbit, altitude_km: float = 200.0, *, path: str = "direct",
                     inclination_deg: float | None = None, min_flyby_altitude_km: float = 100.0,
                     max_tof_days: float | None = None, guesses: int | None = None,
                     epoch=None, equator_inclination_deg: float | None = None,
                     launch_latitude_deg: float | None = None,
                     _allow_unfinished: bool = False) -> Departure:
    """The least-Δv departure found from a circular parking orbit about the Earth to ``orbit``.

    Parameters
    ----------
    orbit : PeriodicOrbit
        Target orbit of the Earth–Moon system.
    altitude_km : float
        Parking-orbit altitude.
    path : "direct" or "lunar-flyby"
    inclination_deg : float, optional
        Inclination of the parking orbit to the Moon's orbit plane (free when None).
    min_flyby_altitude_km : float
        Least altitude of the lunar periapsis (flyby path).
    max_tof_days : float, optional
        Longest time of flight, departure to insertion (default ``MAX_TOF_DAYS``, or
        ``FLYBY_MAX_TOF_DAYS`` on the flyby path, where the cost keeps falling slowly with
        longer flights; the result's ``details["bounds_hit"]`` says whether the bound is active).
    guesses : int, optional
        First guesses optimised (default GUESSES_OPTIMISED, or FLYBY_GUESSES_OPTIMISED).
    epoch : str or float, optional
        The departure date (ISO 8601 text, ``Z`` = UTC, or TDB seconds since J2000). It places
        the Earth's equator in the rotating frame (the Moon's DE421 ephemeris at that instant,
        :func:`cr3bp.transfers.departure_common.equator_pole`): the result then reports the
        parking orbit's inclination to the equator (``inclination_equator_deg``).
    equator_inclination_deg : float, optional
        Hold the parking orbit's inclination to the Earth's mean equator of J2000 (needs
        ``epoch``; not with ``inclination_deg``).
    launch_latitude_deg : float, optional
        A launch site's latitude: the parking orbit's inclination to the equator is held at least
        its absolute value (a site reaches no lower inclination without a plane change, common
        practice). Designed free first; if the free design's inclination is lower, designed
        again with the inclination at the bound (``bounds_hit`` then names ``launch-latitude``).
        Needs ``epoch``; not with the other inclinations.

    Returns
    -------
    Departure

    Raises
    ------
    InputError, NoSolutionError

    Examples
    --------
    Skipped under doctest (the optimisation takes tens of seconds):

    >>> from cr3bp import orbit
    >>> from cr3bp.transfers.departure import design_departure
    >>> nrho = orbit("earth-moon", "halo L2 south period=6.5626d")  # doctest: +SKIP
    >>> dep = design_departure(nrho, 200.0)                          # doctest: +SKIP
    >>> dep.path, dep.dv_mps > 3000.0                                # doctest: +SKIP
    ('direct', True)

    References
    ----------
    Izzo, "Revisiting Lambert's problem", 2015 (first guess); Kraft, DLR-FB 88-28, 1988
    (SLSQP); Vallado 2013, §6.3 (tangential departure burn).
    """
    system = orbit.system
    system.require_dimensional("a departure from a parking orbit")
    names = [n.lower() for n in system.names]
    if names[0] != "earth" or names[1] != "moon":
        raise InputError(f"departures from a parking orbit need the earth-moon system, not {system.name}")
    if path in UNFINISHED_PATHS and not _allow_unfinished:
        raise InputError(f"path '{path}' is not available yet (its design is unfinished); allowed: "
                         f"{', '.join(PATHS)}")
    if path not in PATHS + UNFINISHED_PATHS:
        raise InputError(f"path '{path}'; allowed: {', '.join(PATHS)}")
    altitude_km = validate.number_in("parking altitude (km)", altitude_km, 100.0, 50_000.0)
    if inclination_deg is not None:
        inclination_deg = validate.number_in("inclination (deg)", inclination_deg, 0.0, 180.0)
    epoch_tdb_s, pole = dating(system, epoch, inclination_deg, equator_inclination_deg, launch_latitude_deg)
    if equator_inclination_deg is not None:
        equator_inclination_deg = validate.number_in("inclination to the equator (deg)", equator_inclination_deg,
                                                     0.0, 180.0)
    if launch_latitude_deg is not None:
        launch_latitude_deg = validate.number_in("launch-site latitude (deg)", launch_latitude_deg, -90.0, 90.0)
    if max_tof_days is None:
        max_tof_days = FLYBY_MAX_TOF_DAYS if path == "lunar-flyby" else MAX_TOF_DAYS
    max_tof_days = validate.number_in("maximum time of flight (d)", max_tof_days, 1.0, 400.0)
    if path == "lunar-flyby":
        min_flyby_altitude_km = validate.number_in("minimum flyby altitude (km)", min_flyby_altitude_km,
                                                   0.0, 20_000.0, open_lo=True)
    kw = dict(path=path, min_flyby_altitude_km=min_flyby_altitude_km,
              max_tof_days=max_tof_days, guesses=guesses, _allow_unfinished=_allow_unfinished)
    if pole is not None:
        # a dated departure: designed as asked (free, or the equator inclination held), then
        # against a launch site's latitude the bound applied only where the free design is below it
        if equator_inclination_deg is not None:
            dep = _design(orbit, altitude_km, equator_inclination_deg, pole, **kw)
        else:               # free, or held to the Moon's orbit plane
            dep = _design(orbit, altitude_km, inclination_deg, None, **kw)
        lat = None if launch_latitude_deg is None else abs(float(launch_latitude_deg))
        if lat is not None and math.degrees(inclination_to(system, dep.departure_state, pole)) < lat - 1e-6:
            dep = _design(orbit, altitude_km, lat, pole, **kw)
            dep.details["bounds_hit"] = list(dep.details.get("bounds_hit") or []) + ["launch-latitude"]
        inc_eq = math.degrees(inclination_to(system, dep.departure_state, pole))
        dep.details["dated"] = {"epoch_tdb_s": float(epoch_tdb_s),
                                "inclination_equator_deg": inc_eq,
                                "launch_latitude_deg": launch_latitude_deg,
                                "equator_reference": "the Earth's mean equator of J2000 (EME2000), placed in the "
                                                     "rotating frame by the Moon's DE421 ephemeris at the epoch"}
        return dep
    return _design(orbit, altitude_km, inclination_deg, None, **kw)


def dating(system, epoch, inclination_deg, equator_inclination_deg, launch_latitude_deg):
    """The departure date and the Earth's equator pole on its rotating axes, every refusal of
    the dated options of :func:`design_departure` first.

    Parameters
    ----------
    system : System
        Earth–Moon, dimensional.
    epoch : str, float or None
        ISO 8601 text (``Z`` = UTC) or TDB seconds since J2000.
    inclination_deg, equator_inclination_deg, launch_latitude_deg : float or None
        At most one given; the last two need ``epoch``.

    Returns
    -------
    (float, numpy.ndarray) or (None, None)
        TDB seconds since J2000 and the unit pole (:func:`equator_pole`); (None, None) undated.

    Raises
    ------
    InputError
        An option that needs ``epoch`` without it, two plane conditions, a date the ephemeris
        does not cover or text that is not a date.

    Examples
    --------
    >>> from cr3bp import system
    >>> dating(system("earth-moon"), None, None, None, None)
    (None, None)
    >>> dating(system("earth-moon"), None, None, None, 28.5)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: launch_latitude_deg 28.5: needs the departure epoch (epoch=...): the Earth's equator turns in the Earth-Moon rotating frame once a month

    References
    ----------
    Common practice (a launch site reaches no inclination below its latitude without a plane
    change).
    """
    if epoch is None:
        for name, v in (("equator_inclination_deg", equator_inclination_deg),
                        ("launch_latitude_deg", launch_latitude_deg)):
            if v is not None:
                raise InputError(f"{name} {v}: needs the departure epoch (epoch=...): the Earth's equator "
                                 "turns in the Earth-Moon rotating frame once a month")
        return None, None
    given = [n for n, v in (("inclination_deg", inclination_deg), ("equator_inclination_deg", equator_inclination_deg),
                            ("launch_latitude_deg", launch_latitude_deg)) if v is not None]
    if len(given) > 1:
        raise InputError(f"{' and '.join(given)}: each holds the parking orbit's plane; give at most one")
    if isinstance(epoch, str):
        from ..time.frames import epoch_from_text  # lazy: the time scales, only for a dated departure
        epoch_tdb_s = epoch_from_text(epoch)
    else:
        epoch_tdb_s = validate.number_in("epoch (TDB s since J2000)", epoch, -1e10, 1e10)
    return epoch_tdb_s, equator_pole(system, epoch_tdb_s)


def _design(orbit, altitude_km, inclination_deg, pole, *, path, min_flyby_altitude_km, max_tof_days,
            guesses, _allow_unfinished):
    """The design of :func:`design_departure` on checked inputs, the inclination held to
    ``pole`` (None: the model's z axis)."""
    system = orbit.system
    if path == "lunar-flyby":
        return design_flyby(orbit, altitude_km, inclination_deg=inclination_deg,
                            min_flyby_altitude_km=min_flyby_altitude_km, max_tof_days=max_tof_days, guesses=guesses,
                            pole=pole)
    t_start = time.perf_counter()
    pb = _Problem(orbit, altitude_km, inclination_deg, path, None, max_tof_days / system.days(1.0), pole=pole)
    guesses = GUESSES_OPTIMISED if guesses is None else guesses
    rows = _direct_guesses(pb)
    if not rows:
        raise NoSolutionError("no two-body first guess: no Lambert arc reaches the orbit within "
                              f"{max_tof_days:g} days")
    chosen, seen = [], []
    for r in rows:
        if all(min(abs(r[1] - p), 1 - abs(r[1] - p)) > 1.5 / GUESS_PHASES for p in seen):
            chosen.append(r)
            seen.append(r[1])
        if len(chosen) >= guesses:
            break
    cons = [{"type": "eq", "fun": pb.eq}]
    best, tried = None, []
    for cost0, ph, dv in chosen:
        z0 = np.concatenate([[ph], dv])
        z0 = _repair(pb, z0)
        if z0 is None:
            tried.append({"phase": ph, "guess_cost_mps": system.mps(cost0), "result": "no perigee"})
            continue
        res = minimize(pb.fun, z0, method="SLSQP", constraints=cons,
                       options={"maxiter": MAX_ITER, "ftol": 1e-12})
        e = pb.evaluate(res.x)
        ok = e is not None and np.all(np.abs(pb.eq(res.x)) < CONSTRAINT_TOL * 10.0) and \
            (path == "direct" or pb.ineq(res.x)[0] > -CONSTRAINT_TOL * 10.0)
        if e is not None and not ok:
            z1 = _repair(pb, res.x)
            if z1 is not None:
                e = pb.evaluate(z1)
                res.x = z1
                ok = np.all(np.abs(pb.eq(z1)) < CONSTRAINT_TOL * 10.0) and \
                    (path == "direct" or pb.ineq(z1)[0] > -CONSTRAINT_TOL * 10.0)
        tried.append({"phase": ph, "guess_cost_mps": float(system.mps(cost0)),
                      "result_mps": None if e is None else float(system.mps(e["cost"])),
                      "feasible": bool(ok), "iterations": int(res.nit), "message": str(res.message)})
        if ok and (best is None or e["cost"] < best[1]["cost"]):
            best = (res, e, ph)
    if best is None:
        raise NoSolutionError(f"no {path} departure met the constraints (parking altitude "
                              f"{altitude_km:g} km) from {len(chosen)} first guess(es)")
    res, e, _ = best
    z = res.x
    resid = np.abs(pb.eq(z)).tolist() if path == "direct" else [
        abs(e["perigee"]["radius"] - pb.r_park) * 10.0]
    return _build(pb, z, e, bool(res.success), {
        "evaluations": pb.evaluations, "seconds": time.perf_counter() - t_start,
        "constraint_residuals": resid, "guesses": tried,
        "method": "backward shooting from the insertion point, SLSQP over insertion phase and "
                  "impulses; first guess from two-body Lambert arcs"})


def design_flyby(target, altitude_km: float = 200.0, *, points=None, inclination_deg: float | None = None,
                 min_flyby_altitude_km: float = 100.0, max_tof_days: float | None = None,
                 guesses: int | None = None, starts=(), scan: bool | None = None, pole=None) -> Departure:
    """The least-Δv lunar-flyby departure found from a circular Earth parking orbit to ``target``:
    two coasts joined at the lunar periapsis, optimised until the first-order conditions hold
    (module notes, "The flyby path").

    The first guesses are ``starts`` (shooting unknowns, e.g. a neighbouring target's optimised
    flyby continued to this one) and/or the scan of lunar periapsis states (:func:`_flyby_guesses`);
    each is made feasible and optimised, and the cheapest feasible result is kept (of equal costs
    the first, in the order: starts, then scan).

    Parameters
    ----------
    target : PeriodicOrbit or cr3bp.tori.Torus
        Target of the Earth–Moon system (the result's ``orbit``).
    altitude_km : float
        Parking-orbit altitude (100 to 50 000 km).
    points : object, optional
        The target's states at its insertion phases: ``nphase`` (phases per point), ``at``,
        ``grid(n)`` and ``partials(phases)`` as :class:`cr3bp.tori.departure.TorusPoints` has
        them. Default: the periodic orbit's (one phase, a fraction of the period).
    inclination_deg : float, optional
        Inclination of the parking orbit to the Moon's orbit plane (free when None).
    min_flyby_altitude_km : float
        Least altitude of the lunar periapsis (above 0 to 20 000 km).
    max_tof_days : float, optional
        Longest time of flight, departure to insertion (1 to 400 d; default
        ``FLYBY_MAX_TOF_DAYS``).
    guesses : int, optional
        Scan guesses optimised (default ``FLYBY_GUESSES_OPTIMISED``).
    starts : sequence of array_like, optional
        Shooting unknowns ``[p (3), v_pre (3), v_post (3), phase, t2, t1, further phases]``
        (:class:`_FlybyShooting`), as a flyby departure's ``details["shooting_unknowns"]``.
    scan : bool, optional
        Run the scan: always (True), never (False), or only when no start gives a feasible
        transfer (None, the default).
    pole : array_like, shape (3,), optional
        The unit pole ``inclination_deg`` is measured from, on the rotating axes (default the
        model's z axis; a dated departure's equator pole, :func:`design_departure`).

    Returns
    -------
    Departure
        Path ``"lunar-flyby"``; ``details["shooting_unknowns"]`` the optimised unknowns,
        ``details["guesses"]`` every start tried (``origin``: ``start k`` or ``scan``); all
        values CR3BP.

    Raises
    ------
    InputError
        Not the Earth–Moon system, a value out of range, or a start of the wrong length.
    NoSolutionError
        No start met the constraints.
    ConvergenceError
        The design does not close when propagated forward.

    Examples
    --------
    Skipped under doctest (the optimisation takes seconds):

    >>> from cr3bp import orbit
    >>> nrho = orbit("earth-moon", "halo L2 south resonance=9:2")          # doctest: +SKIP
    >>> d = design_flyby(nrho, 200.0)                                      # doctest: +SKIP
    >>> d.optimised, [m["name"] for m in d.maneuvers]                      # doctest: +SKIP
    (True, ['departure', 'flyby', 'insertion'])

    Refused before any work:

    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import example_torus
    >>> from cr3bp.transfers.departure import design_flyby
    >>> design_flyby(example_torus(), 200.0, max_tof_days=0.5)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: maximum time of flight (d) '0.5' is outside the allowed range [1, 400]

    References
    ----------
    Kraft, DLR-FB 88-28, 1988 (SLSQP); Nocedal & Wright, *Numerical Optimization*, 2nd ed., 2006,
    Theorem 12.1 (first-order conditions); Vallado 2013, §6.3 (tangential departure burn); Betts,
    *Practical Methods for Optimal Control and Estimation Using Nonlinear Programming*, 2nd ed.,
    2010, §4.4 (multiple shooting).
    """
    system = target.system
    system.require_dimensional("a departure from a parking orbit")
    names = [n.lower() for n in system.names]
    if names[0] != "earth" or names[1] != "moon":
        raise InputError(f"departures from a parking orbit need the earth-moon system, not {system.name}")
    altitude_km = validate.number_in("parking altitude (km)", altitude_km, 100.0, 50_000.0)
    if inclination_deg is not None:
        inclination_deg = validate.number_in("inclination (deg)", inclination_deg, 0.0, 180.0)
    max_tof_days = validate.number_in("maximum time of flight (d)",
                                      FLYBY_MAX_TOF_DAYS if max_tof_days is None else max_tof_days, 1.0, 400.0)
    min_flyby_altitude_km = validate.number_in("minimum flyby altitude (km)", min_flyby_altitude_km,
                                               0.0, 20_000.0, open_lo=True)
    t_start = time.perf_counter()
    pb = _Problem(target, altitude_km, inclination_deg, "lunar-flyby", min_flyby_altitude_km,
                  max_tof_days / system.days(1.0), points=points, pole=pole)
    # the whole search on one BLAS thread (its small dense algebra gains nothing from more, and a
    # threaded BLAS may round differently): the same numbers whatever the thread count
    with serial(numba_threads=False):
        return _design_flyby(pb, FLYBY_GUESSES_OPTIMISED if guesses is None else int(guesses), t_start,
                             starts=list(starts), scan=scan)


def _design_flyby(pb: _Problem, guesses: int, t_start: float, starts=(), scan=None) -> Departure:
    """The lunar-flyby path: each of ``starts`` (shooting unknowns, tried in order) and, when
    ``scan`` says so, the best ``guesses`` of :func:`_flyby_guesses`, each made feasible and
    optimised (:func:`_optimise_flyby`); the cheapest feasible one is built (the first of equal
    costs, so the order of the starts decides a tie)."""
    system = pb.system
    ms = _FlybyShooting(pb)
    best, tried = None, []

    def attempt(x0, origin, score=None):
        nonlocal best
        res, e, x, kkt = _optimise_flyby(pb, x0, ms)
        tried.append({"origin": origin, "score": score, "feasible": e is not None,
                      "start_mps": None if res is None else float(system.mps(res["start_cost"])),
                      "result_mps": None if e is None else float(system.mps(e["cost"])),
                      "iterations": None if res is None else res["iterations"],
                      "first_order": kkt, "message": "no feasible start" if res is None else res["message"]})
        if e is not None and (best is None or e["cost"] < best[1]["cost"]):
            best = (x, e, kkt)

    for k, x0 in enumerate(starts):
        x0 = np.asarray(x0, dtype=float)
        if x0.shape != (ms.n,):
            raise InputError(f"flyby start {k} has {x0.size} unknowns; this target needs {ms.n}")
        attempt(x0, f"start {k}")
    rows, t_scan = [], 0.0
    if scan or (scan is None and best is None):
        t_scan = time.perf_counter()
        rows = _flyby_guesses(pb)
        t_scan = time.perf_counter() - t_scan
        for score, x0 in rows[:max(1, guesses)]:
            attempt(x0, "scan", score)
    if best is None:
        raise NoSolutionError(f"no lunar-flyby departure met the constraints (parking altitude "
                              f"{system.km(pb.r_park) - system.primary.radius_km:g} km, flyby at least "
                              f"{system.km(pb.r_fb) - system.secondary.radius_km:g} km) from {len(tried)} "
                              f"start(s) ({len(starts)} given, {len(rows)} from the scan)")
    x, e, kkt = best
    z = np.concatenate([[x[9] % 1.0], e["dv_ins"]])
    return _build(pb, z, e, kkt["holds"], {
        "evaluations": ms.evaluations, "seconds": time.perf_counter() - t_start, "scan_seconds": t_scan,
        "constraint_residuals": np.abs(ms.eq(x)).tolist(), "guesses": tried,
        "insertion_phases": [float(p % 1.0) for p in ms.phases(x)],
        "shooting_unknowns": [float(v) for v in x],
        "max_tof_days": float(system.days(pb.max_tof)), "bounds_hit": list(kkt["bounds_hit"]),
        "first_order": kkt,
        "method": "two coasts joined at the lunar periapsis (multiple shooting, gradients from the "
                  "coasts' state transition matrices): least-norm Newton to a feasible transfer, then "
                  "SLSQP on the total delta-v until the first-order (KKT) conditions hold; first guesses "
                  + ("given (continued from a neighbouring target's optimised flyby)" if len(starts) else "")
                  + (" and " if len(starts) and rows else "")
                  + ("from a batch scan of periapsis states at the least flyby altitude, propagated back "
                     "to the Earth and forward to the orbit" if rows else "")})


def _repair(pb: _Problem, z):
    """Newton steps on the equality constraints alone, the insertion phase held: a feasible
    point near ``z``, or None. Gives SLSQP a feasible start and polishes its end."""
    return _newton(pb, z, lambda p, zz: None if p.evaluate(zz) is None else p.eq(zz),
                   range(1, len(z)), tol=CONSTRAINT_TOL, max_step=0.2)


def _build(pb: _Problem, z, e, success, details):
    s = pb.system
    tof = -e["t_p"]
    per = e["perigee"]
    s_p = e["s_p"]
    rel, vin = _relative(s, s_p, 0)
    # departure burn: from the circular velocity (same plane, same sense) to the arc's
    vc_dir = vin / np.linalg.norm(vin)
    s_before = s_p.copy()
    v_circ_in = per["speed_circular"] * vc_dir
    s_before[3:] = v_circ_in - np.array([-rel[1], rel[0], 0.0])
    man = [{"name": "departure", "t": 0.0, "position": s_p[:3].copy(),
            "dv_vector": s_p[3:] - s_before[3:], "state_before": s_before}]
    flyby_alt = None
    if e["flyby"] is not None:
        t_f, s_f, dv_fb = e["flyby"]
        sb = s_f.copy()
        sb[3:] -= dv_fb
        man.append({"name": "flyby", "t": tof + t_f, "position": s_f[:3].copy(),
                    "dv_vector": np.array(dv_fb, dtype=float), "state_before": sb})
        c = np.array([s.positions[1], 0.0, 0.0])
        flyby_alt = float(s.km(np.linalg.norm(s_f[:3] - c)) - s.secondary.radius_km)
    sb = e["s_ins"].copy()
    sb[3:] -= z[1:4]
    man.append({"name": "insertion", "t": tof, "position": e["s_ins"][:3].copy(),
                "dv_vector": np.array(z[1:4], dtype=float), "state_before": sb})
    dep = Departure(s, pb.orbit, pb.path, float(s.km(pb.r_park) - s.primary.radius_km), tuple(man), float(tof),
                    float(z[0] % 1.0), per, flyby_alt, success, details)
    # the design's own closure: forward from the departure over each coast
    miss = closure_km(dep)
    dep.details["closure_km"] = miss
    if miss > CLOSURE_TOL_KM:
        raise ConvergenceError(f"the {pb.path} departure misses its insertion point by {miss:.3g} km "
                               f"when propagated forward (tolerance {CLOSURE_TOL_KM:g} km)", 0, [miss], z)
    return dep


def closure_km(dep: Departure, propagator=None) -> float:
    """Largest position miss (km) at the end of each coast of ``dep`` when propagated forward from
    its start.

    Parameters
    ----------
    dep : Departure
    propagator : callable(system, state, dt) -> final state, optional
        Default: librate's integrator at 1e-12 (a test passes an independent one).

    Returns
    -------
    float
        km.

    Raises
    ------
    ConvergenceError
        The integrator fails on a coast.

    Examples
    --------
    Skipped under doctest (the departure's optimisation takes tens of seconds):

    >>> from cr3bp import orbit
    >>> from cr3bp.transfers.departure import design_departure
    >>> nrho = orbit("earth-moon", "halo L2 south period=6.5626d")  # doctest: +SKIP
    >>> dep = design_departure(nrho, 200.0)                          # doctest: +SKIP
    >>> from cr3bp.transfers.departure import closure_km
    >>> closure_km(dep) < 1.0                                        # doctest: +SKIP
    True

    References
    ----------
    Hairer, Nørsett & Wanner, *Solving Ordinary Differential Equations I*, 2nd ed., 1993,
    section II.5 (the DOP853 integrator; from memory).
    """
    s = dep.system
    worst = 0.0
    segs = dep.segments()
    for (t0, st, dt), nxt in zip(segs, dep.maneuvers[1:]):
        if propagator is None:
            end = propagate(s, st, dt, rtol=RTOL, atol=ATOL).final_state
        else:
            end = propagator(s, st, dt)
        worst = max(worst, float(s.km(np.linalg.norm(np.asarray(end)[:3] - nxt["position"]))))
    return worst


def as_leg(dep: Departure, patches: int = 4) -> Leg:
    """``dep`` as a :class:`cr3bp.transfers.leg.Leg` in shooting form, the transfer graph's
    parking leg: each coast cut into ``patches`` shooting segments, the burns as maneuvers
    (``where``: departure, patch, arrival; ``name``: the burn's name), the departure state on
    the parking orbit before the burn and the orbit's state after insertion.

    Parameters
    ----------
    dep : Departure
        A designed departure (:func:`design_departure`).
    patches : int
        Shooting segments per coast.

    Returns
    -------
    Leg
        Solver "parking", kind "departure"; arrives when it ends (``tof_arrival_days`` equals
        ``tof_days``, no arrival distance).

    Raises
    ------
    None
        A designed departure always has its coasts and burns.

    Examples
    --------
    Skipped under doctest (the departure's optimisation takes tens of seconds):

    >>> from cr3bp import orbit
    >>> from cr3bp.transfers.departure import design_departure
    >>> nrho = orbit("earth-moon", "halo L2 south period=6.5626d")  # doctest: +SKIP
    >>> dep = design_departure(nrho, 200.0)                          # doctest: +SKIP
    >>> from cr3bp.transfers.departure import as_leg
    >>> leg = as_leg(dep, patches=4)                                 # doctest: +SKIP
    >>> leg.solver, leg.kind, [m.where for m in leg.maneuvers]       # doctest: +SKIP
    ('parking', 'departure', ['departure', 'arrival'])

    References
    ----------
    Tangential departure from a circular parking orbit: Vallado, *Fundamentals of Astrodynamics
    and Applications*, 4th ed., 2013, §6.3; the shooting form: Betts, *Practical Methods for
    Optimal Control and Estimation Using Nonlinear Programming*, 2nd ed., 2010, ch. 4 (both from
    memory).
    """
    s = dep.system
    times, states, end = [], [], None
    for t0, st, dt in dep.segments():
        te = np.linspace(0.0, dt, patches + 1)
        arc = propagate(s, st, dt, rtol=RTOL, atol=ATOL, t_eval=te)
        times += list(float(t0) + te[:-1])
        states += [x.tolist() for x in arc.states[:-1]]
        end = np.array(arc.states[-1])
    mans = []
    for k, m in enumerate(dep.maneuvers):
        where = "departure" if k == 0 else ("arrival" if k == len(dep.maneuvers) - 1 else "patch")
        mans.append(Maneuver(float(m["t"]), np.array([float(v) for v in m["position"]]),
                             np.array([float(v) for v in m["dv_vector"]]),
                             float(s.mps(np.linalg.norm(m["dv_vector"]))), where, m["name"]))
    finish = end.copy()
    finish[3:] += dep.maneuvers[-1]["dv_vector"]
    return Leg(s, "", "", tuple(mans), float(dep.dv_mps), float(dep.tof), None, tuple(dep.segments()),
               f"{dep.path} departure (optimised in the CR3BP)", kind="departure",
               min_altitude_km=float(s.km(dep.perigee["radius"]) - s.primary.radius_km),
               details=_plain({"departure": {k: v for k, v in dep.to_dict().items() if k != "details"}}),
               solver="parking", patch_times=np.array(times, dtype=float), patch_states=np.array(states, dtype=float),
               departure_state=np.array([float(v) for v in dep.maneuvers[0]["state_before"]]),
               arrival_state=finish, final_state=end, tof_days=float(dep.tof_days),
               tof_arrival_days=float(dep.tof_days))
