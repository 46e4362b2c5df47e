"""Departures from a circular parking orbit about the Earth to an Earth–Moon periodic orbit.

Paths (impulsive, all in the circular restricted three-body model, CR3BP); only ``direct`` is
finished, ``lunar-flyby`` is refused until its first guesses are (see :func:`design_departure`):

``direct``
    departure burn on the parking orbit, one coast, insertion burn onto the target orbit.
``lunar-flyby``
    departure burn, a coast to a close lunar periapsis (the flyby, at or above a minimum
    altitude, powered when a burn there lowers the total), a second coast, insertion burn.

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

First guesses come from two-body arcs about the Earth (Lambert's problem,
:mod:`cr3bp.transfers.lambert`, Izzo 2015): for each insertion phase on a grid and each time
of flight on a grid, the arc from a perigee opposite the insertion point (170 degrees of
transfer angle) gives the arrival velocity; the insertion Δv of the guess is the target
orbit's velocity minus that arrival velocity (rotating frame). The best few guesses by
their two-body cost are optimised, and the cheapest result is kept. The flyby path's guesses
are built in the CR3BP itself (see :func:`_flyby_guesses`).

Inclination: the CR3BP has no Earth equator; the inclination reported and constrained is
that of the parking orbit to the Moon's orbit plane (the model's x-y plane). The Earth's
equator is inclined 18.3-28.6 degrees to that plane over the 18.6-year nodal cycle (common
practice), so the inclination to the equator depends on the date, which this model does not
carry.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import brentq, minimize

from .. import validate
from ..errors import ConvergenceError, InputError, NoSolutionError, StateError
from ..integrate import impact, propagate
from ..io.plain import plain as _plain
from ..tubes.manifolds import describe
from .lambert import lambert
from .leg import Leg, Maneuver

PATHS = ("direct",)
#: Paths whose design is unfinished: the code is here (first guesses, two-coast shooting) but
#: its first guesses do not reach the powered-flyby basin yet, so it is refused (see
#: :func:`design_departure`).
UNFINISHED_PATHS = ("lunar-flyby",)
RTOL = ATOL = 1e-12
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
#: Insertion phases tried by the flyby path's first guess.
FLYBY_GUESS_PHASES = 12
#: Flyby guesses made feasible before ranking.
FLYBY_GUESSES_REPAIRED = 24
#: Transfer angle of the first-guess Lambert arcs (degrees; 180 leaves the plane undefined).
GUESS_ANGLE_DEG = 170.0
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
            "departure_state": self.departure_state.tolist(),
            "position_frame": "Earth-Moon rotating frame, origin at the barycentre",
            "details": _plain(self.details),
        }


def _describe(orbit):
    try:
            return describe(orbit)
    except Exception:  # noqa: BLE001 - a description is cosmetic
        return f"{orbit.family} {orbit.point} {orbit.branch}".strip()


# ---- geometry about a primary ------------------------------------------------------------

def _relative(system, state, primary):
    c = np.array([system.positions[primary], 0.0, 0.0])
    rel = np.asarray(state[:3], dtype=float) - c
    v = np.asarray(state[3:6], dtype=float)
    return rel, v + np.array([-rel[1], rel[0], 0.0])


def _perigee_summary(system, state):
    rel, vin = _relative(system, state, 0)
    r = float(np.linalg.norm(rel))
    speed = float(np.linalg.norm(vin))
    h = np.cross(rel, vin)
    inc = math.degrees(math.acos(max(-1.0, min(1.0, h[2] / np.linalg.norm(h)))))
    vc = math.sqrt((1.0 - system.mu) / r)
    return {"radius": r, "speed_inertial": speed, "speed_circular": vc, "inclination_deg": inc,
            "dv": speed - vc}


class _Periapsis:
    """Backward propagation to the first close periapsis about a primary."""

    def __init__(self, system, primary, within, stop_radius):
        self.system = system
        self.p = primary
        self.c = np.array([system.positions[primary], 0.0, 0.0])
        self.within = within
        r1, r2 = system.radii
        self.events = [impact(0, stop_radius[0]), impact(1, stop_radius[1])]

    def g(self, s):
        rel = s[..., :3] - self.c
        return np.sum(rel * s[..., 3:6], axis=-1)

    def find(self, state, t_max):
        """(t <= 0, state) at the first periapsis backward in time within ``t_max``, or None."""
        try:
            return self._find(state, t_max)
        except StateError:   # a trial state inside a primary
            return None

    def _find(self, state, t_max):
        arc = propagate(self.system, state, -t_max, rtol=RTOL, atol=ATOL, events=self.events)
        if arc.status not in ("time", "impact"):
            return None
        g = self.g(arc.states)
        d = np.linalg.norm(arc.states[:, :3] - self.c, axis=1)
        # backward in time, a periapsis is g going from + (later) to - (earlier)
        idx = np.nonzero((g[:-1] > 0.0) & (g[1:] <= 0.0) & (np.minimum(d[:-1], d[1:]) < self.within))[0]
        if idx.size == 0:
            return None
        j = int(idx[0])
        t_j, s_j = float(arc.t[j]), arc.states[j]
        dt_lo = float(arc.t[j + 1]) - t_j

        def gap(dt):
            if dt == 0.0:
                return float(self.g(s_j))
            return float(self.g(propagate(self.system, s_j, dt, rtol=RTOL, atol=ATOL).final_state))

        try:
            dt = brentq(gap, dt_lo, 0.0, xtol=1e-15, rtol=1e-14, maxiter=100)
            s = propagate(self.system, s_j, dt, rtol=RTOL, atol=ATOL).final_state if dt != 0.0 else s_j
        except StateError:
            # the periapsis lies below the surface (a trial point of the search): the nearer
            # sample is enough to tell the optimiser it is far too low
            jj = j if d[j] < d[j + 1] else j + 1
            return float(arc.t[jj]), np.array(arc.states[jj])
        return t_j + dt, np.array(s)


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


# ---- the transfer as a function of the unknowns -----------------------------------------

class _Problem:
    def __init__(self, orbit, altitude_km, inclination_deg, path, min_flyby_km, max_tof):
        s = orbit.system
        self.system, self.orbit, self.path = s, orbit, path
        self.points = _OrbitPoints(orbit)
        self.r_park = (s.primary.radius_km + altitude_km) / s.length_km
        self.inc = None if inclination_deg is None else math.radians(inclination_deg)
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

    def evaluate_partial(self, z):
        """(t, state) at the lunar periapsis of the post-flyby coast (backward from the
        insertion point), or None."""
        s = self.points.at(z[0])
        s[3:] -= z[1:4]
        return self.moon.find(s, self.max_tof)

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
            out.append(math.radians(e["perigee"]["inclination_deg"]) - self.inc)
        return np.array(out)

    def ineq(self, z):
        e = self.evaluate(z)
        if e is None or e["flyby"] is None:
            return np.array([-1.0])
        c = np.array([self.system.positions[1], 0.0, 0.0])
        return np.array([(np.linalg.norm(e["flyby"][1][:3] - c) - self.r_fb) * 10.0])


# ---- first guesses -------------------------------------------------------------------------

def _plane_normal(u, inc):
    """A unit normal perpendicular to ``u`` whose inclination to z is closest to ``inc`` (rad;
    None: the normal closest to +z)."""
    z = np.array([0.0, 0.0, 1.0])
    a = z - (z @ u) * u
    if np.linalg.norm(a) < 1e-9:
        a = np.array([1.0, 0.0, 0.0]) - u[0] * u
    a /= np.linalg.norm(a)
    if inc is None:
        return a
    b = np.cross(u, a)
    phis = np.linspace(0.0, math.pi, 721)
    ns = np.cos(phis)[:, None] * a + np.sin(phis)[:, None] * b
    k = int(np.argmin(np.abs(np.arccos(np.clip(ns[:, 2], -1, 1)) - inc)))
    return ns[k]


def _lambert_arrival(system, r_park, target_pos, tof, inc):
    """Two-body (Earth) arc from a perigee 170 degrees before ``target_pos``: (dv at perigee
    in the two-body sense, arrival velocity relative to the Earth, inertial components)."""
    gm = 1.0 - system.mu
    rel = np.asarray(target_pos, dtype=float) - np.array([system.positions[0], 0.0, 0.0])
    u = rel / np.linalg.norm(rel)
    n = _plane_normal(u, inc)
    e2 = np.cross(n, u)
    th = math.radians(GUESS_ANGLE_DEG)
    r0 = r_park * (math.cos(th) * u - math.sin(th) * e2)
    v1, v2 = lambert(r0, rel, tof, gm, prograde=n[2] >= 0.0)
    return float(np.linalg.norm(v1) - math.sqrt(gm / r_park)), v2, rel


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
                dv1, v2, rel = _lambert_arrival(s, pb.r_park, st[:3], tof, pb.inc)
            except (InputError, NoSolutionError):
                continue
            v_rot = v2 - np.array([-rel[1], rel[0], 0.0])
            dv_ins = st[3:] - v_rot
            rows.append((dv1 + float(np.linalg.norm(dv_ins)), ph, dv_ins))
    rows.sort(key=lambda r: r[0])
    return rows


def _flyby_guesses(pb: _Problem):
    """Guesses for the flyby path, built backward from the orbit in two steps.

    1. From each insertion phase on a grid, the insertion Δv (least norm, Newton's method)
       that brings the backward coast's lunar periapsis down to the minimum flyby altitude
       (near the orbit's own perilune passage a small Δv does it).
    2. At that periapsis, trial arrival velocities from the Earth (the post-flyby direction
       turned about the radius by a grid of angles, at speeds of a hyperbola with 0.7-1.1
       km/s of excess speed over the Moon, common practice for Earth-Moon transfers) are
       propagated backward to the Earth; the flyby Δv is their difference with the
       post-flyby velocity. Each guess is scored by its cost plus its perigee miss."""
    s = pb.system
    vk = s.velocity_kms
    moon = np.array([s.positions[1], 0.0, 0.0])
    rows = []
    phases = FLYBY_GUESS_PHASES
    for k in range(phases):
        ph = k / phases
        z = _newton(pb, np.array([ph, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0]), _moon_residual, (1, 2, 3))
        if z is None:
            continue
        e = pb.evaluate_partial(z)
        t_f, s_f = e
        rel = s_f[:3] - moon
        r = float(np.linalg.norm(rel))
        v_post = s_f[3:].copy()
        u = rel / r
        a = v_post - (v_post @ u) * u
        a /= np.linalg.norm(a)
        b = np.cross(u, a)
        for vinf in (0.7, 0.9, 1.1):
            speed = math.sqrt((vinf / vk) ** 2 + 2.0 * s.mu / r)
            for ang in np.radians(np.arange(0.0, 360.0, 30.0)):
                v_pre = speed * (math.cos(ang) * a + math.sin(ang) * b)
                zz = z.copy()
                zz[4:7] = v_post - v_pre
                full = pb.evaluate(zz)
                if full is None:
                    continue
                miss = abs(full["perigee"]["radius"] - pb.r_park)
                rows.append((full["cost"] + 10.0 * miss, ph, zz))
    rows.sort(key=lambda r: r[0])
    # 3. the most promising made feasible by the flyby Δv alone (Newton's method, least norm;
    #    the post-flyby coast is left as it is), ranked by their true cost
    out = []
    for _, ph, zz in rows[:FLYBY_GUESSES_REPAIRED]:
        z1 = _newton(pb, zz, lambda p, q: None if p.evaluate(q) is None else p.eq(q), (4, 5, 6),
                     tol=CONSTRAINT_TOL, max_step=0.05, iterations=40)
        if z1 is not None:
            out.append((pb.evaluate(z1)["cost"], ph, z1[1:]))
    out.sort(key=lambda r: r[0])
    return out


def _moon_residual(pb, z):
    hit = pb.evaluate_partial(z)
    if hit is None:
        return None
    r = np.linalg.norm(hit[1][:3] - np.array([pb.system.positions[1], 0.0, 0.0]))
    return np.array([(r - pb.r_fb) * 10.0])


def _newton(pb, z, resid, idx, tol=1e-8, max_step=0.05, iterations=30):
    """Least-norm Newton steps on ``resid(pb, z)`` over the unknowns ``idx`` (finite
    differences): a point near ``z`` where the residual is below ``tol``, or None."""
    z = np.array(z, dtype=float)
    idx = list(idx)
    for _ in range(iterations):
        c = resid(pb, z)
        if c is None:
            return None
        if np.all(np.abs(c) < tol):
            return z
        J = np.empty((c.size, len(idx)))
        for j, i in enumerate(idx):
            zp = z.copy()
            zp[i] += 1e-7
            cp = resid(pb, zp)
            if cp is None:
                return None
            J[:, j] = (cp - c) / 1e-7
        step = -np.linalg.pinv(J) @ c
        n = np.linalg.norm(step)
        if n > max_step:
            step *= max_step / n
        z[idx] += step
    c = resid(pb, z)
    return z if c is not None and np.all(np.abs(c) < tol) else None


class _FlybyShooting:
    """The flyby path as two coasts joined at the lunar periapsis (multiple shooting): the
    unknowns are the periapsis position (Moon-relative), the velocities there before and
    after the flyby burn, the insertion phase and the post-flyby coast time. The backward
    coast from the periapsis must reach the parking orbit, the forward one the insertion
    point; both coasts have their periapsis at the flyby point. Splitting the transfer there
    keeps the constraint sensitivities moderate (one coast each)."""

    def __init__(self, pb: _Problem):
        self.pb = pb
        s = pb.system
        self.moon = np.array([s.positions[1], 0.0, 0.0])
        self.cache = {}

    def unpack(self, x):
        return x[0:3], x[3:6], x[6:9], x[9], x[10]

    def evaluate(self, x):
        key = tuple(np.round(np.asarray(x, dtype=float), 15))
        if key in self.cache:
            return self.cache[key]
        out = self._evaluate(np.asarray(x, dtype=float))
        if len(self.cache) > 4096:
            self.cache.clear()
        self.cache[key] = out
        return out

    def _evaluate(self, x):
        pb = self.pb
        p, v_pre, v_post, ph, t2 = self.unpack(x)
        if not (0.0 < t2 < pb.max_tof):
            return None
        orb = pb.points.at(ph)
        start = np.concatenate([self.moon + p, v_post])
        try:
            arc = propagate(pb.system, start, t2, rtol=RTOL, atol=ATOL, events=pb.moon.events)
        except StateError:
            return None
        if arc.status != "time":
            return None
        end = np.array(arc.final_state)
        hit = pb.earth.find(np.concatenate([self.moon + p, v_pre]), pb.max_tof - t2)
        if hit is None:
            return None
        t_p, s_p = hit
        per = _perigee_summary(pb.system, s_p)
        dv_fb = v_post - v_pre
        dv_ins = orb[3:] - end[3:]
        cost = per["dv"] + float(np.linalg.norm(dv_fb)) + float(np.linalg.norm(dv_ins))
        return {"cost": cost, "perigee": per, "s_p": s_p, "t_p": t_p - t2, "s_ins": orb,
                "flyby": (-t2, start.copy(), dv_fb), "end": end, "dv_ins": dv_ins}

    def fun(self, x):
        e = self.evaluate(x)
        return 10.0 if e is None else e["cost"]

    def eq(self, x):
        pb = self.pb
        e = self.evaluate(x)
        n = 6 if pb.inc is None else 7
        if e is None:
            return np.ones(n)
        p, v_pre, v_post, _, _ = self.unpack(x)
        out = list((e["end"][:3] - e["s_ins"][:3]) * 10.0)
        out.append((e["perigee"]["radius"] - pb.r_park) * 10.0)
        out.append(float(p @ v_pre) * 10.0)
        out.append(float(p @ v_post) * 10.0)
        if pb.inc is not None:
            out.append(math.radians(e["perigee"]["inclination_deg"]) - pb.inc)
        return np.array(out)

    def ineq(self, x):
        p = x[0:3]
        return np.array([(np.linalg.norm(p) - self.pb.r_fb) * 10.0])

    def start(self, z):
        e = self.pb.evaluate(z)
        if e is None or e["flyby"] is None:
            return None
        t_f, s_f, dv_fb = e["flyby"]
        return np.concatenate([s_f[:3] - self.moon, s_f[3:] - dv_fb, s_f[3:], [z[0] % 1.0, -t_f]])


def _optimise_flyby(pb: _Problem, z0):
    """SLSQP on the two-coast form from the one-coast guess ``z0``: (result, evaluation)."""
    ms = _FlybyShooting(pb)
    x0 = ms.start(z0)
    if x0 is None:
        return None, None
    res = minimize(ms.fun, x0, method="SLSQP",
                   constraints=[{"type": "eq", "fun": ms.eq}, {"type": "ineq", "fun": ms.ineq}],
                   options={"maxiter": MAX_ITER, "ftol": 1e-12})
    e = ms.evaluate(res.x)
    ok = e is not None and np.all(np.abs(ms.eq(res.x)) < CONSTRAINT_TOL * 100.0) and \
        ms.ineq(res.x)[0] > -CONSTRAINT_TOL * 100.0
    return res, (e if ok else None)


# ---- design --------------------------------------------------------------------------------

def design_departure(orbit, altitude_km: float = 200.0, *, path: str = "direct",
                     inclination_deg: float | None = None, min_flyby_altitude_km: float = 100.0,
                     max_tof_days: float = 150.0, guesses: int = GUESSES_OPTIMISED,
                     _allow_unfinished: bool = False) -> Departure:
    """The least-Δv departure found from a circular parking orbit about the Earth to ``orbit``.

    Parameters
    ----------
    orbit : PeriodicOrbit
        Target orbit of the Earth–Moon system.
    altitude_km : float
        Parking-orbit altitude.
    path : "direct"
        ("lunar-flyby" is refused: its design is unfinished. The code below -- guesses built
        backward from the orbit through a low lunar periapsis, then two-coast multiple
        shooting -- converges only to flybys that the optimiser raises out of the flyby
        region; better first guesses are the missing piece.)
    inclination_deg : float, optional
        Inclination of the parking orbit to the Moon's orbit plane (free when None).
    min_flyby_altitude_km : float
        Least altitude of the lunar periapsis (flyby path).
    max_tof_days : float
        Longest time of flight, departure to insertion.
    guesses : int
        First guesses optimised.

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
    max_tof_days = validate.number_in("maximum time of flight (d)", max_tof_days, 1.0, 400.0)
    if path == "lunar-flyby":
        min_flyby_altitude_km = validate.number_in("minimum flyby altitude (km)", min_flyby_altitude_km,
                                                   0.0, 20_000.0, open_lo=True)
    t_start = time.perf_counter()
    pb = _Problem(orbit, altitude_km, inclination_deg, path,
                  min_flyby_altitude_km if path == "lunar-flyby" else None, max_tof_days / system.days(1.0))
    rows = _direct_guesses(pb) if path == "direct" else _flyby_guesses(pb)
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
    if path == "lunar-flyby":
        cons.append({"type": "ineq", "fun": pb.ineq})
    best, tried = None, []
    for cost0, ph, dv in chosen:
        z0 = np.concatenate([[ph], dv])
        if path == "lunar-flyby":
            res, e = _optimise_flyby(pb, z0)
            tried.append({"phase": ph, "guess_cost_mps": float(system.mps(cost0)),
                          "result_mps": None if e is None else float(system.mps(e["cost"])),
                          "feasible": e is not None, "iterations": None if res is None else int(res.nit),
                          "message": "no start" if res is None else str(res.message)})
            if e is not None and (best is None or e["cost"] < best[1]["cost"]):
                res.x = np.concatenate([[res.x[9]], e["dv_ins"]])
                best = (res, e, ph)
            continue
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
