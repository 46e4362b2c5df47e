"""Low-energy (ballistic) lunar transfers with the Sun's pull, in the bicircular model.

A low-energy transfer leaves a circular parking orbit about the Earth with a trans-lunar
injection-like burn that sends the spacecraft out to about 1-1.5 million km, where the Sun's
tidal pull raises the perigee (apogee in the quadrants of the Sun-Earth rotating frame where
the Sun's tide adds angular momentum), and falls back to the Moon's vicinity three to four
months later, where a small burn inserts it into the target Earth-Moon periodic orbit
(Belbruno & Miller, "Sun-perturbed Earth-to-Moon transfers with ballistic capture", J. Guid.
Control Dyn. 16, 1993; Koon, Lo, Marsden & Ross, "Low energy transfer to the Moon", Celest.
Mech. Dyn. Astr. 81, 2001; Parker & Anderson, *Low-Energy Lunar Trajectory Design*, JPL
Deep Space Communications and Navigation Series, 2013, ch. 2-3 -- all from memory).

Model: the bicircular restricted four-body problem (:mod:`cr3bp.bicircular`; Boudad, Howell
& Davis, Adv. Space Res. 66, 2020, section 2). The target orbit is the CR3BP periodic orbit;
the insertion state is a point on it.

Method (backward from the target, as Parker & Anderson 2013, ch. 3, from memory)
--------------------------------------------------------------------------------
1. **Sweep.** Points on the target orbit (``SWEEP_PHASES`` insertion phases), small insertion
   burns taken off their velocity (``SWEEP_DV_MPS`` magnitudes in ``SWEEP_DIRECTIONS``
   directions), one batch per Sun phase (``SWEEP_SUN_PHASES`` over one synodic month, which
   covers every Sun-Earth-Moon geometry of the model, hence every launch date of a year):
   each state is propagated backward in compiled code (:func:`cr3bp.bicircular.propagate_batch`,
   no Python loop over trajectories) until it comes within ``SCREEN_RADIUS`` of the Earth,
   falls on the Moon, escapes, or runs out of time. Those that come back to the Earth inside
   the time-of-flight window are ranked by their osculating two-body perigee's miss of the
   parking radius and by their insertion burn.
2. **Correction.** The best ``CANDIDATES`` are corrected by sequential least squares (scipy's
   SLSQP; Kraft, DLR-FB 88-28, 1988) over the insertion phase, the insertion Δv vector and the
   Sun's phase at insertion: the perigee radius equals the parking radius (and the parking
   orbit's inclination a given one; with a launch date, the Sun's phase at departure equals
   the date's), the time of flight lies in the window, and the insertion Δv is least. The
   departure burn is tangential at the perigee (the parking orbit is the circle through the
   perigee in the plane of the arc; Vallado, *Fundamentals of Astrodynamics and
   Applications*, 4th ed., 2013, section 6.3): ``dv = |v_inertial| - sqrt(GM_E / r_p)``.
   The departure phase on the parking orbit follows from the perigee found.

The transfer is then re-propagated forward from the departure burn and must close on the
insertion point within ``CLOSURE_TOL_KM``.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import brentq, minimize

from .. import bicircular as bc
from ..constants import J2000_JD, SECONDS_PER_DAY
from ..errors import InputError, NoSolutionError, StateError
from ..integrate import impact, propagate as _cr3bp_propagate
from ..integrate.events import escape
from ..io.plain import plain as _plain
from ..time.scales import Epoch
from ..validate import finite_number

MODEL = "bicircular (Sun–Earth–Moon)"
RTOL = ATOL = 1e-12
#: Tolerances of the sweep (a screen; every reported transfer is recomputed at RTOL).
SWEEP_RTOL = SWEEP_ATOL = 1e-9
#: A backward trajectory is stopped when it comes this close to the Earth (LU, ~19 000 km in
#: Earth-Moon): near enough for its osculating two-body perigee to rank it.
SCREEN_RADIUS = 0.05
#: ... or this far from the barycentre (LU, ~2.7 million km: beyond the Sun-Earth L1/L2).
ESCAPE_RADIUS = 7.0
SWEEP_PHASES = 16
SWEEP_SUN_PHASES = 24
SWEEP_DV_MPS = (5.0, 15.0, 40.0)
SWEEP_DIRECTIONS = 14
CANDIDATES = 6
#: Time-of-flight window (days, departure burn to insertion burn): the published range of
#: ballistic lunar transfers (Parker & Anderson 2013, ch. 3, from memory: 70-130 days).
MIN_TOF_DAYS = 70.0
MAX_TOF_DAYS = 130.0
#: Constraint tolerance accepted after correction (perigee radius, LU; phase, inclination, rad).
CONSTRAINT_TOL = 1e-9
#: Tolerance of the forward re-propagation check (km, position at insertion).
CLOSURE_TOL_KM = 1.0
MAX_ITER = 40
#: A full Newton step is accepted while its residual stays below this (scaled units), even when
#: it exceeds the last one.
NONMONOTONE = 1e-2
#: Steps of the insertion-burn continuation (:func:`_shrink`).
SHRINK_STEPS = 80
#: SLSQP's stopping tolerance on the objective 100 |dv_insertion|^2 (LU/TU; 1e-10 ~ a 1e-5 LU/TU
#: ~ 1 cm/s change in the burn).
FTOL = 1e-10
#: The correction stops trying further candidates once one needs an insertion burn below this.
GOOD_ENOUGH_MPS = 1.0
#: An insertion burn this small counts as the optimum (its lower bound is 0; m/s): 5 cm/s is
#: below what a thruster delivers reliably and what navigation knows (common practice).
BALLISTIC_MPS = 0.05
#: Patch points: the transfer is stored as this many coasts joined without a burn (multiple
#: shooting). A single forward propagation over three to four months through a lunar
#: encounter magnifies the integrator's round-off a millionfold; each coast alone does not.
SEGMENTS = 8
_TWO_PI = 2.0 * math.pi


@dataclass(frozen=True)
class LowEnergyTransfer:
    """A designed low-energy transfer (all values in the bicircular model; t from the departure burn).

    Attributes
    ----------
    model : BicircularSystem   the model, its Sun phase at the departure burn (t = 0)
    orbit : the target PeriodicOrbit (CR3BP)
    altitude_km : parking-orbit altitude
    maneuvers : tuple of dicts in time order: ``name`` (departure, insertion), ``t`` (TU),
        ``position`` (LU, rotating, barycentric), ``dv_vector`` (LU/TU), ``state_before`` (6,)
    tof : TU from departure to insertion
    insertion_phase : fraction of the target orbit's period from its initial state
    perigee : dict (radius, speed_inertial, speed_circular, inclination_deg)
    max_distance_km : greatest distance from the Earth along the transfer
    patches : tuple of (t, state) -- the start of each coast (the first: just after the
        departure burn); the coasts join without a burn (see ``SEGMENTS``)
    optimised : bool (False: the corrector stopped short of its tolerance)
    details : dict (sweep and corrector diagnostics, timing, closure)

    Parameters
    ----------
    model, orbit, altitude_km, maneuvers, tof, insertion_phase, perigee, max_distance_km, patches, optimised, details
        The attributes above (built by :func:`design_low_energy`).

    Examples
    --------
    Designing a transfer takes minutes, so the example is not run:

    >>> from cr3bp import orbit
    >>> from cr3bp.transfers.low_energy import design_low_energy
    >>> nrho = orbit("earth-moon", "halo L2 south resonance=9:2")      # doctest: +SKIP
    >>> tr = design_low_energy(nrho, 200.0)                            # doctest: +SKIP
    >>> [m["name"] for m in tr.maneuvers], tr.path                    # doctest: +SKIP
    (['departure', 'insertion'], 'low-energy')

    References
    ----------
    .. [1] J. S. Parker and R. L. Anderson, *Low-Energy Lunar Trajectory Design*, Wiley, 2013,
       ch. 3; K. K. Boudad, K. C. Howell and D. C. Davis, *Advances in Space Research* 66, 2020
       (the bicircular model; both from memory).
    """

    model: object
    orbit: object
    altitude_km: float
    maneuvers: tuple
    tof: float
    insertion_phase: float
    perigee: dict
    max_distance_km: float
    patches: tuple = ()
    optimised: bool = True
    details: dict = field(default_factory=dict, compare=False)

    path = "low-energy"

    @property
    def system(self):
        return self.model.system

    @property
    def dv_mps(self) -> float:
        return float(sum(self.system.mps(np.linalg.norm(m["dv_vector"])) for m in self.maneuvers))

    @property
    def departure_dv_mps(self) -> float:
        return float(self.system.mps(np.linalg.norm(self.maneuvers[0]["dv_vector"])))

    @property
    def insertion_dv_mps(self) -> float:
        return float(self.system.mps(np.linalg.norm(self.maneuvers[-1]["dv_vector"])))

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
    def sun_phase_deg(self) -> float:
        """The Sun's angle from the Earth-Moon line (+x) at the departure burn, degrees."""
        return self.model.sun_phase_deg

    @property
    def departure_epoch(self) -> str | None:
        """The departure date (ISO 8601, UTC) when the design was made for a date."""
        return None if self.model.epoch_tdb_s is None else iso_utc(self.model.epoch_tdb_s)

    @property
    def insertion_epoch(self) -> str | None:
        if self.model.epoch_tdb_s is None:
            return None
        return iso_utc(self.model.epoch_tdb_s + self.tof_days * 86400.0)

    @property
    def departure_state(self) -> np.ndarray:
        m = self.maneuvers[0]
        s = np.array(m["state_before"], dtype=float)
        s[3:] += m["dv_vector"]
        return s

    def segments(self):
        """(t0, state at t0, duration) of each coast, in time order (the model is time
        dependent: propagate each with ``t0``)."""
        ts = [p[0] for p in self.patches] + [self.tof]
        return [(float(t), np.array(st, dtype=float), float(t1 - t))
                for (t, st), t1 in zip(self.patches, ts[1:])]

    def trajectory(self, n_per_segment: int = 500):
        """Times (TU, from departure) and rotating-frame states along the transfer."""
        ts, ss = [], []
        for t0, st, dt in self.segments():
            tt = np.linspace(t0, t0 + dt, n_per_segment)
            arc = bc.propagate(self.model, st, t0 + dt, rtol=RTOL, atol=ATOL, t_eval=tt, t0=t0)
            ts.append(arc.t)
            ss.append(arc.states)
        return np.concatenate(ts), np.concatenate(ss)

    def to_dict(self) -> dict:
        sysm = self.system
        man = []
        for m in self.maneuvers:
            man.append({"name": m["name"], "t_days": float(sysm.days(m["t"])),
                        "dv_mps": float(sysm.mps(np.linalg.norm(m["dv_vector"]))),
                        "position_km": [float(sysm.km(v)) for v in m["position"]],
                        "dv_vector_mps": [float(sysm.mps(v)) for v in m["dv_vector"]],
                        "model": MODEL})
        return {
            "path": self.path,
            "model": MODEL,
            "from": f"parking earth {self.altitude_km:g}km",
            "to": _describe(self.orbit),
            "maneuvers": man,
            "dv_mps": self.dv_mps,
            "departure_dv_mps": self.departure_dv_mps,
            "insertion_dv_mps": self.insertion_dv_mps,
            "c3_km2_s2": self.c3_km2_s2,
            "departure_speed_kms": self.departure_speed_kms,
            "tof_days": self.tof_days,
            "flyby_altitude_km": None,
            "max_distance_km": self.max_distance_km,
            "inclination_deg": self.inclination_deg,
            "inclination_reference": "the Moon's orbit plane (the model's x-y plane)",
            "sun_phase_deg": self.sun_phase_deg,
            "sun_phase_reference": "the Sun's angle from the Earth-Moon line at the departure burn "
                                   "(0: new moon, 180: full moon)",
            "departure_epoch_utc": self.departure_epoch,
            "insertion_epoch_utc": self.insertion_epoch,
            "insertion_phase": self.insertion_phase,
            "optimised": self.optimised,
            "departure_state": self.departure_state.tolist(),
            "patches": [{"t_days": float(sysm.days(t)), "state": np.asarray(st).tolist()} for t, st in self.patches],
            "position_frame": "Earth-Moon rotating frame, origin at the barycentre",
            "details": _plain(self.details),
        }


def _describe(orbit):
    """The target orbit in words (the orbit library's description when it has one)."""
    try:
        from ..tubes.manifolds import describe   # lazy: heavy (the manifold room), needed only for a label
        return describe(orbit)
    except Exception:  # noqa: BLE001 - a description is cosmetic
        return f"{orbit.family} {orbit.point} {orbit.branch}".strip()


def iso_utc(tdb_s: float) -> str:
    """ISO 8601 UTC text of TDB seconds since J2000 (to the second).

    Parameters
    ----------
    tdb_s : float

    Returns
    -------
    str

    Raises
    ------
    InputError
        A date the time scales cannot convert.

    Examples
    --------
    >>> from cr3bp.transfers.low_energy import iso_utc
    >>> iso_utc(0.0)
    '2000-01-01T11:58:56Z'

    References
    ----------
    .. [1] ISO 8601; IERS Conventions (2010), ch. 10 (TDB, TT and UTC; from memory).
    """
    day = math.floor(tdb_s / SECONDS_PER_DAY)
    ep = Epoch.from_jd(J2000_JD + day, (tdb_s - day * SECONDS_PER_DAY) / SECONDS_PER_DAY, "tdb")
    return ep.to_iso("utc", decimals=0)


# ---- geometry about the Earth ----------------------------------------------------------------

def _earth_relative(system, states):
    """Earth-relative positions and inertial velocities (rotating-frame components)."""
    s = np.atleast_2d(states)
    rel = s[:, :3] - np.array([-system.mu, 0.0, 0.0])
    vin = s[:, 3:6] + np.stack([-rel[:, 1], rel[:, 0], np.zeros(len(rel))], axis=1)
    return rel, vin


def osculating_perigee(system, states):
    """Radius (LU) and inclination (rad) of the two-body conic about the Earth through each state.

    Parameters
    ----------
    system : System
        The Earth-Moon system (the Earth is the larger primary).
    states : array (N, 6)
        Rotating-frame states, LU and LU/TU.

    Returns
    -------
    (ndarray (N,), ndarray (N,))
        Perigee radius (LU) and inclination (rad) to the Earth-Moon plane.

    Raises
    ------
    None

    Examples
    --------
    A circular orbit of 0.02 LU about the Earth has its perigee at 0.02 LU:

    >>> import math
    >>> from cr3bp.systems import system
    >>> from cr3bp.transfers.low_energy import osculating_perigee
    >>> em = system("earth-moon"); r = 0.02; vc = math.sqrt((1 - em.mu) / r)
    >>> rp, inc = osculating_perigee(em, [[-em.mu + r, 0, 0, 0, vc - r, 0]])
    >>> rp.round(9).tolist(), inc.round(9).tolist()
    ([0.02], [0.0])

    References
    ----------
    .. [1] R. R. Bate, D. D. Mueller and J. E. White, *Fundamentals of Astrodynamics*, Dover,
       1971, ch. 2 (orbital elements from a state; from memory).
    """
    rel, vin = _earth_relative(system, states)
    gm = 1.0 - system.mu
    h = np.cross(rel, vin)
    hn = np.linalg.norm(h, axis=1)
    r = np.linalg.norm(rel, axis=1)
    e = np.cross(vin, h) / gm - rel / r[:, None]
    rp = hn * hn / gm / (1.0 + np.linalg.norm(e, axis=1))
    return rp, np.arccos(np.clip(h[:, 2] / np.maximum(hn, 1e-300), -1.0, 1.0))


def perigee_summary(system, state):
    """The state at the departure burn seen from the Earth: radius, inertial and circular
    speeds, inclination, and the speed above circular.

    Parameters
    ----------
    system : System
    state : array (6,)
        Rotating-frame state, LU and LU/TU.

    Returns
    -------
    dict
        ``radius`` (LU), ``speed_inertial`` and ``speed_circular`` (LU/TU),
        ``inclination_deg``, ``dv`` (LU/TU).

    Raises
    ------
    None

    Examples
    --------
    >>> import math
    >>> from cr3bp.systems import system
    >>> from cr3bp.transfers.low_energy import perigee_summary
    >>> em = system("earth-moon"); r = 0.02; vc = math.sqrt((1 - em.mu) / r)
    >>> d = perigee_summary(em, [-em.mu + r, 0, 0, 0, vc - r, 0])
    >>> round(d["radius"], 9), round(d["dv"], 9), d["inclination_deg"]
    (0.02, 0.0, 0.0)

    References
    ----------
    .. [1] R. R. Bate, D. D. Mueller and J. E. White, *Fundamentals of Astrodynamics*, Dover,
       1971, ch. 1 (circular speed; from memory).
    """
    rel, vin = _earth_relative(system, state)
    rel, vin = rel[0], vin[0]
    r = float(np.linalg.norm(rel))
    speed = float(np.linalg.norm(vin))
    h = np.cross(rel, vin)
    inc = math.degrees(math.acos(max(-1.0, min(1.0, h[2] / np.linalg.norm(h)))))
    vc = math.sqrt((1.0 - system.mu) / r)
    return {"radius": r, "speed_inertial": speed, "speed_circular": vc, "inclination_deg": inc,
            "dv": speed - vc}


def _directions(n):
    """``n`` unit vectors spread over the sphere (a Fibonacci lattice)."""
    k = np.arange(n) + 0.5
    z = 1.0 - 2.0 * k / n
    phi = k * math.pi * (3.0 - math.sqrt(5.0))
    rho = np.sqrt(1.0 - z * z)
    return np.stack([rho * np.cos(phi), rho * np.sin(phi), z], axis=1)


class _OrbitPoints:
    def __init__(self, orbit, samples=128):
        self.orbit, self.T = orbit, float(orbit.period)
        self.n = samples
        self.t = np.linspace(0.0, self.T, samples + 1)
        self.s = _cr3bp_propagate(orbit.system, orbit.state, self.T, rtol=RTOL, atol=ATOL, t_eval=self.t).states

    def at(self, phase):
        t = (phase % 1.0) * self.T
        k = min(int(t / self.T * self.n), self.n - 1)
        dt = t - self.t[k]
        if dt == 0.0:
            return self.s[k].copy()
        return np.array(_cr3bp_propagate(self.orbit.system, self.s[k], dt, rtol=RTOL, atol=ATOL).final_state)

    def insertion(self, z):
        """The insertion state of the unknowns ``z`` (its phase ``z[0]``)."""
        return self.at(z[0])

    def sweep_grid(self, phases):
        """The sweep's insertion points: ``phases`` even phases and their states."""
        ph = np.arange(phases) / phases
        return ph, np.array([self.at(p) for p in ph])


# ---- the sweep (step 1) ----------------------------------------------------------------------

def sweep(model, orbit, r_park, *, max_tof, min_tof, sun_phases=None, phases=SWEEP_PHASES,
          dv_mps=SWEEP_DV_MPS, directions=SWEEP_DIRECTIONS, departure_phase=None, points=None):
    """Backward batch propagations from the target orbit, one batch per Sun phase.

    Returns a dict of arrays, one entry per trajectory that came back to the Earth inside the
    time-of-flight window: ``phase`` (insertion phase), ``dv`` (3, LU/TU), ``sun`` (Sun phase
    at insertion, rad), ``t`` (time of the screen stop, TU, negative), ``rp`` (osculating
    perigee radius, LU), ``score``; and ``count`` (trajectories propagated).

    Parameters
    ----------
    model : BicircularSystem
    orbit : PeriodicOrbit
        The target orbit.
    r_park : float
        Parking-orbit radius, LU.
    max_tof, min_tof : float
        The time-of-flight window, TU.
    sun_phases : array, optional
        Sun phases at insertion, rad (default: an even grid).
    phases, dv_mps, directions : int, sequence of float, int
        Insertion phases, Δv magnitudes (m/s) and directions of the backward kicks.
    departure_phase : float, optional
    points : object, optional
        The target's insertion points (default: the orbit's); its ``sweep_grid(phases)`` gives
        the labels (one phase per point, or a row of phases: a torus's two angles) and states
        swept (:mod:`cr3bp.tori.low_energy`).

    Returns
    -------
    dict

    Raises
    ------
    InputError
        ``model`` is not a BicircularSystem (failed trajectories are marked and left out,
        not raised).

    Examples
    --------
    A full sweep takes minutes, so the example is not run:

    >>> from cr3bp import orbit
    >>> from cr3bp.bicircular import bicircular_system
    >>> from cr3bp.transfers.low_energy import sweep
    >>> nrho = orbit("earth-moon", "halo L2 south resonance=9:2")                    # doctest: +SKIP
    >>> out = sweep(bicircular_system(), nrho, 0.0171, max_tof=30.0, min_tof=17.0)   # doctest: +SKIP
    >>> out["count"] > 0                                                             # doctest: +SKIP
    True

    References
    ----------
    .. [1] J. S. Parker and R. L. Anderson, *Low-Energy Lunar Trajectory Design*, Wiley, 2013,
       ch. 3 (backward propagation from the target orbit; from memory).
    """
    system = model.system
    pts = _OrbitPoints(orbit, max(phases, 16)) if points is None else points
    ph, base = pts.sweep_grid(phases)
    ph = np.asarray(ph, dtype=float)
    dirs = _directions(directions)
    mags = np.asarray(dv_mps, dtype=float) / (system.velocity_kms * 1e3)
    dvs = (mags[:, None, None] * dirs[None, :, :]).reshape(-1, 3)
    n_dv = len(dvs)
    n_base = len(base)
    states = np.repeat(base, n_dv, axis=0)
    states[:, 3:] -= np.tile(dvs, (n_base, 1))
    ph_all = np.repeat(ph, n_dv, axis=0)
    dv_all = np.tile(dvs, (n_base, 1))
    if sun_phases is None:
        sun_phases = np.arange(SWEEP_SUN_PHASES) * _TWO_PI / SWEEP_SUN_PHASES
    r_e, r_m = system.radii
    events = [impact(0, SCREEN_RADIUS), impact(1, r_m), escape(ESCAPE_RADIUS)]
    rows = []
    count = 0
    for th in np.atleast_1d(sun_phases):
        res = bc.propagate_batch(model.with_phase(float(th)), states, -max_tof, SWEEP_RTOL, SWEEP_ATOL,
                                 events, on_failure="mark", max_events=1)
        count += len(states)
        hit = np.array([len(k) > 0 and int(k[0]) == 0 for k in res.event_index])
        ok = hit & (res.t_final <= -min_tof * 0.9)
        if not ok.any():
            continue
        rp, _ = osculating_perigee(system, res.states[ok])
        for i, j in enumerate(np.nonzero(ok)[0]):
            rows.append((ph_all[j], dv_all[j], float(th), float(res.t_final[j]), float(rp[i])))
    if not rows:
        return {"count": count, "phase": np.empty(0), "dv": np.empty((0, 3)), "sun": np.empty(0),
                "t": np.empty(0), "rp": np.empty(0), "score": np.empty(0)}
    phase = np.array([r[0] for r in rows])
    dv = np.array([r[1] for r in rows])
    sun = np.array([r[2] for r in rows])
    t = np.array([r[3] for r in rows])
    rp = np.array([r[4] for r in rows])
    dvn = np.linalg.norm(dv, axis=1)
    # score: the insertion burn plus the perigee miss, both in LU/TU-ish units (a miss of
    # 0.01 LU, ~3800 km, weighs as ~10 m/s); with a launch date, the Sun-phase miss at departure
    score = dvn + np.abs(rp - r_park)
    if departure_phase is not None:
        miss = np.abs(np.angle(np.exp(1j * (sun + model.sun_rate * t - departure_phase))))
        score = score + 0.05 * miss
    return {"count": count, "phase": phase, "dv": dv, "sun": sun, "t": t, "rp": rp, "score": score}


# ---- the correction (step 2) -----------------------------------------------------------------

class _Problem:
    """The transfer as a function of z = [insertion phase, insertion dv (3), Sun phase at insertion]
    (a torus: one more unknown, its second angle, z[5]; ``points.insertion(z)`` reads them)."""

    def __init__(self, model, orbit, r_park, inclination, max_tof, min_tof, departure_phase, points=None):
        self.model, self.orbit = model, orbit
        self.system = model.system
        self.points = _OrbitPoints(orbit) if points is None else points
        self.r_park = r_park
        self.inc = inclination
        self.max_tof, self.min_tof = max_tof, min_tof
        self.dep_phase = departure_phase
        r_e, r_m = self.system.radii
        self.events = [impact(0, SCREEN_RADIUS), impact(1, r_m)]
        self.cache = {}
        self.evaluations = 0

    def evaluate(self, z):
        key = tuple(np.round(np.asarray(z, dtype=float), 15))
        if key not in self.cache:
            self.evaluations += 1
            if len(self.cache) > 4096:
                self.cache.clear()
            try:
                self.cache[key] = self._evaluate(np.asarray(z, dtype=float))
            except StateError:
                self.cache[key] = None
        return self.cache[key]

    def _evaluate(self, z):
        m = self.model.with_phase(float(z[4]))
        s_ins = self.points.insertion(z)
        s = s_ins.copy()
        s[3:] -= z[1:4]
        arc = bc.propagate(m, s, -self.max_tof * 1.1, rtol=RTOL, atol=ATOL, events=self.events)
        if arc.status != "impact" or not arc.events or arc.events[-1].event != 0:
            return None
        t1, s1 = float(arc.t[-1]), np.array(arc.states[-1])
        # the perigee: r.v changes sign (backward in time, from + to -) past the screen stop
        r_e = self.system.radii[0]
        ev = [impact(0, 0.2 * r_e)]
        span = 0.05
        seg = bc.propagate(m, s1, t1 - span, rtol=RTOL, atol=ATOL, events=ev, t0=t1,
                           t_eval=np.linspace(t1, t1 - span, 201))
        rel, _ = _earth_relative(self.system, seg.states)
        g = np.sum(rel * seg.states[:, 3:6], axis=1)
        idx = np.nonzero((g[:-1] > 0.0) & (g[1:] <= 0.0))[0]
        if idx.size == 0:
            return None
        j = int(idx[0])
        tj, sj = float(seg.t[j]), seg.states[j]

        def gap(t):
            if t == tj:
                st = sj
            else:
                st = bc.propagate(m, sj, t, rtol=RTOL, atol=ATOL, t0=tj).final_state
            rr, _ = _earth_relative(self.system, st)
            return float(rr[0] @ np.asarray(st)[3:6])

        try:
            tp = brentq(gap, float(seg.t[j + 1]), tj, xtol=1e-15, rtol=1e-14, maxiter=100)
        except StateError:
            return None
        sp = np.array(bc.propagate(m, sj, tp, rtol=RTOL, atol=ATOL, t0=tj).final_state) if tp != tj else np.array(sj)
        per = perigee_summary(self.system, sp)
        return {"t_p": tp, "s_p": sp, "perigee": per, "s_ins": s_ins, "dv_ins": z[1:4].copy(),
                "sun_ins": float(z[4])}

    def fun(self, z):
        e = self.evaluate(z)
        return 1.0 if e is None else float(z[1:4] @ z[1:4]) * 100.0

    def jac_fun(self, z):
        g = np.zeros(len(z))
        g[1:4] = 200.0 * z[1:4]
        return g

    def eq(self, z):
        e = self.evaluate(z)
        n = 1 + (self.inc is not None) + (self.dep_phase is not None)
        if e is None:
            return np.full(n, 1.0)
        out = [(e["perigee"]["radius"] - self.r_park) * 10.0]
        if self.inc is not None:
            out.append(math.radians(e["perigee"]["inclination_deg"]) - self.inc)
        if self.dep_phase is not None:
            out.append(float(np.angle(np.exp(1j * (z[4] + self.model.sun_rate * e["t_p"] - self.dep_phase)))))
        return np.array(out)

    def ineq(self, z):
        e = self.evaluate(z)
        if e is None:
            return np.array([-1.0, -1.0])
        tof = -e["t_p"]
        return np.array([tof - self.min_tof, self.max_tof - tof])

    def feasible(self, z):
        e = self.evaluate(z)
        return e is not None and np.all(np.abs(self.eq(z)) <= CONSTRAINT_TOL * 10.0) \
            and np.all(self.ineq(z) >= -1e-9)


def _newton(pb, z, iterations=25, tol=CONSTRAINT_TOL, eqfun=None, weights=(1.0, 10.0, 10.0, 10.0, 1.0)):
    """Differential correction of the equality constraints (perigee radius; inclination and the
    launch date's Sun phase when given) by least-norm Newton steps with a finite-difference
    Jacobian, halved while they do not reduce the residual. Returns z or None."""
    eqfun = pb.eq if eqfun is None else eqfun
    z = np.asarray(z, dtype=float).copy()
    if pb.evaluate(z) is None:
        return None
    f = eqfun(z)
    # step per variable of the finite differences (a torus's second angle as its first)
    scale = np.r_[[1e-3, 1e-4, 1e-4, 1e-4, 1e-3], [1e-3] * (z.size - 5)]
    for _ in range(iterations):
        if np.max(np.abs(f)) <= tol:
            return z
        J = np.empty((f.size, z.size))
        for j in range(z.size):
            zz = z.copy()
            h = scale[j] * 1e-4
            zz[j] += h
            if pb.evaluate(zz) is None:
                return None
            J[:, j] = (eqfun(zz) - f) / h
        # weights of the least-norm step: onto the parking orbit, moving the burn costs more than
        # moving the insertion point and the Sun's phase; in the continuation the reverse
        w = np.r_[np.asarray(weights, dtype=float), [weights[0]] * (z.size - 5)]
        step = -(np.linalg.pinv(J / w) @ f) / w
        lam = 1.0
        for _ in range(12):
            zn = z + lam * step
            if pb.evaluate(zn) is not None:
                fn = eqfun(zn)
                # a full step is taken even if it raises the residual a little (the perigee's
                # curvature in the unknowns is large; the next full step usually repairs it)
                if np.linalg.norm(fn) < np.linalg.norm(f) or (lam == 1.0 and np.linalg.norm(fn) < NONMONOTONE):
                    z, f = zn, fn
                    break
            lam *= 0.5
        else:
            return None
    return z if np.max(np.abs(f)) <= tol else None


def _shrink(pb, z):
    """Continuation of the insertion burn towards zero: its magnitude is asked to fall by a
    fraction (10 % to start; the fraction grows by half after a success up to 50 %, and halves
    after a failure down to 1/128) as one more equation of the differential corrector, which
    moves the insertion point, the Sun's phase and the burn's direction to hold the perigee.
    It stops at a burn below ``BALLISTIC_MPS``, or when even the smallest fall cannot be held.
    Returns (z, reached)."""
    dv = float(np.linalg.norm(z[1:4]))
    frac = 0.1
    for _ in range(SHRINK_STEPS):
        if pb.system.mps(dv) <= BALLISTIC_MPS:
            return z, True
        target = (1.0 - frac) * dv

        def eqs(q, target=target):
            return np.r_[pb.eq(q), (np.linalg.norm(q[1:4]) - target) * 10.0]

        zn = _newton(pb, z, iterations=10, eqfun=eqs, weights=(10.0, 1.0, 1.0, 1.0, 10.0))
        if zn is not None and pb.feasible(zn):
            z, dv, frac = zn, float(np.linalg.norm(zn[1:4])), min(0.5, frac * 1.5)
        elif frac <= 1.0 / 128.0:
            break
        else:
            frac /= 2.0
    return z, pb.system.mps(dv) <= BALLISTIC_MPS


def _correct(pb, z0):
    """The differential corrector onto the parking orbit, then the least insertion burn: the
    continuation :func:`_shrink`, and where it stalls above zero, SLSQP from there. Returns
    (z, optimised, iterations) or None."""
    z1 = _newton(pb, z0)
    if z1 is None or not pb.feasible(z1):
        return None
    z1, reached = _shrink(pb, z1)
    if reached:
        return z1, True, 0
    cons = [{"type": "eq", "fun": pb.eq}, {"type": "ineq", "fun": pb.ineq}]
    res = minimize(pb.fun, z1, jac=pb.jac_fun, method="SLSQP", constraints=cons,
                   options={"maxiter": MAX_ITER, "ftol": FTOL})
    z2 = np.asarray(res.x, dtype=float)
    if not pb.feasible(z2):
        z3 = _newton(pb, z2, iterations=8)   # SLSQP left the constraints a little: put it back
        z2 = z3 if z3 is not None and pb.feasible(z3) and pb.fun(z3) <= pb.fun(z1) else None
    if z2 is None or pb.fun(z2) > pb.fun(z1):
        return z1, False, int(res.nit)
    ballistic = pb.system.mps(float(np.linalg.norm(z2[1:4]))) <= BALLISTIC_MPS
    return z2, bool(res.success) or ballistic, int(res.nit)


def _patches(model, s_dep, pre_ins, tof, n=SEGMENTS):
    """Patch states at n equal steps of the time of flight, from the backward propagation of
    the state just before insertion (the first: the departure state itself); the greatest
    distance from the Earth (km); and the worst closure (km) of a forward re-propagation of
    each coast onto the next patch (the last: onto the state before insertion)."""
    tk = np.linspace(0.0, tof, n + 1)
    back = bc.propagate(model, pre_ins, 0.0, rtol=RTOL, atol=ATOL, t0=tof, t_eval=tk[::-1]).states[::-1]
    starts = [np.array(s_dep, dtype=float)] + [np.array(b) for b in back[1:-1]]
    ends = [np.array(b) for b in back[1:-1]] + [np.array(pre_ins, dtype=float)]
    dmax, worst = 0.0, 0.0
    for k in range(n):
        tt = np.linspace(tk[k], tk[k + 1], 400)
        arc = bc.propagate(model, starts[k], tk[k + 1], rtol=RTOL, atol=ATOL, t0=tk[k], t_eval=tt)
        rel, _ = _earth_relative(model.system, arc.states)
        dmax = max(dmax, float(np.max(np.linalg.norm(rel, axis=1))))
        worst = max(worst, float(np.linalg.norm(arc.states[-1][:3] - ends[k][:3])))
    patches = tuple((float(t), st) for t, st in zip(tk[:-1], starts))
    return patches, float(model.system.km(dmax)), float(model.system.km(worst))


def _candidates(pb, sw, score, candidates, progress, label="candidate", skip=0):
    """Correct the best ``candidates`` of the sweep by ``score`` (:func:`_correct`), after the
    ``skip`` best; stop at a burn under ``GOOD_ENOUGH_MPS``. Returns ((cost, z, evaluation,
    (optimised, iterations)) or None, list of what each try gave)."""
    system = pb.system
    order = np.argsort(score)[int(skip):]
    best, tried = None, []
    for k in order[: int(candidates)]:
        ph = np.atleast_1d(sw["phase"][k])         # (a torus: its two angles; the second goes last)
        z0 = np.concatenate([ph[:1], sw["dv"][k], [sw["sun"][k]], ph[1:]])
        if progress:
            progress(f"correcting {label} {int(skip) + len(tried) + 1} of "
                     f"{int(skip) + min(int(candidates), order.size)}...")
        out = _correct(pb, z0)
        if out is None:
            tried.append({"start_score": float(score[k]), "feasible": False})
            continue
        z, opt, nit = out
        e = pb.evaluate(z)
        cost = float(np.linalg.norm(z[1:4]))
        tried.append({"start_score": float(score[k]), "feasible": True, "iterations": nit,
                      "optimised": opt, "insertion_dv_mps": float(system.mps(cost))})
        if best is None or cost < best[0]:
            best = (cost, z, e, (opt, nit))
        if system.mps(best[0]) < GOOD_ENOUGH_MPS:
            break
    return best, tried


def design_low_energy(orbit, altitude_km, *, epoch=None, inclination_deg=None, max_tof_days=MAX_TOF_DAYS,
                      min_tof_days=MIN_TOF_DAYS, sun_phases=None, candidates=CANDIDATES, progress=None):
    """A low-energy transfer from a circular Earth parking orbit to ``orbit``, in the bicircular model.

    Parameters
    ----------
    orbit : PeriodicOrbit
        The target orbit, in the earth-moon system.
    altitude_km : float
        Parking-orbit altitude (100 km to 50 000 km).
    epoch : str or float, optional
        The launch date (ISO 8601 text, UTC unless it names its scale, or TDB seconds since
        J2000): the Sun's phase at the departure burn is the date's (from the ephemeris,
        :func:`cr3bp.bicircular.sun_phase_at`). Without it the Sun's phase is free: the
        sweep covers one synodic month of phases, i.e. every geometry a year of launch dates
        brings in this model.
    inclination_deg : float, optional
        Inclination of the parking orbit to the Moon's orbit plane (default: free).
    max_tof_days, min_tof_days : float
        Time-of-flight window, departure burn to insertion burn (default 70-130 d).
    sun_phases : array_like, optional
        Sun phases at insertion (rad) swept (default ``SWEEP_SUN_PHASES`` over a full turn).
    candidates : int
        Sweep candidates corrected (when none of them can be, the next as many).

    Returns
    -------
    LowEnergyTransfer

    Raises
    ------
    InputError
        Another system, an altitude or window out of range.
    NoSolutionError
        No trajectory of the sweep comes back to the Earth in the window, or none corrects.

    Examples
    --------
    Designing a transfer takes minutes, so the example is not run:

    >>> from cr3bp import orbit
    >>> from cr3bp.transfers.low_energy import design_low_energy
    >>> nrho = orbit("earth-moon", "halo L2 south resonance=9:2")      # doctest: +SKIP
    >>> tr = design_low_energy(nrho, 200.0)                            # doctest: +SKIP
    >>> tr.optimised, 70 < tr.tof_days <= 130                          # doctest: +SKIP
    (True, True)

    References
    ----------
    Belbruno & Miller 1993; Koon, Lo, Marsden & Ross 2001; Parker & Anderson 2013, ch. 3;
    Boudad, Howell & Davis 2020 (the model).
    """
    return _design(orbit, altitude_km, epoch=epoch, inclination_deg=inclination_deg, max_tof_days=max_tof_days,
                   min_tof_days=min_tof_days, sun_phases=sun_phases, candidates=candidates, progress=progress)


def check_inputs(system, altitude_km, *, epoch=None, inclination_deg=None, max_tof_days=MAX_TOF_DAYS,
                 min_tof_days=MIN_TOF_DAYS):
    """Everything :func:`design_low_energy` refuses, checked before any work.

    Parameters
    ----------
    system : System
        The Earth-Moon system.
    altitude_km, epoch, inclination_deg, max_tof_days, min_tof_days
        As :func:`design_low_energy`.

    Returns
    -------
    (float, float, float, float or None, BicircularSystem)
        Altitude (km), the time-of-flight window (d), the inclination (rad, None: free) and the
        model at the departure burn (the date's Sun phase when ``epoch`` is given).

    Raises
    ------
    InputError
        Another system, an altitude, window, inclination or date out of range.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.transfers.low_energy import check_inputs
    >>> check_inputs(system("earth-moon"), 200.0)[:4]
    (200.0, 70.0, 130.0, None)
    >>> check_inputs(system("earth-moon"), 200.0, inclination_deg=200.0)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: inclination 200 deg; allowed: 0 deg to 180 deg

    References
    ----------
    Common practice: a design's inputs checked before it starts.
    """
    if getattr(system, "name", "") != "earth-moon":
        raise InputError(f"low-energy transfers are designed in the earth-moon system; got '{system.name}'")
    alt = finite_number("altitude_km", altitude_km)
    if not 100.0 <= alt <= 50_000.0:
        raise InputError(f"parking altitude {alt:g} km; allowed: 100 km to 50000 km")
    tmax_d = finite_number("max_tof_days", max_tof_days)
    tmin_d = finite_number("min_tof_days", min_tof_days)
    if not 30.0 <= tmin_d < tmax_d <= 200.0:
        raise InputError(f"time-of-flight window {tmin_d:g}-{tmax_d:g} d; allowed: 30 d <= min < max <= 200 d")
    inc = None
    if inclination_deg is not None:
        inc_d = finite_number("inclination_deg", inclination_deg)
        if not 0.0 <= inc_d <= 180.0:
            raise InputError(f"inclination {inc_d:g} deg; allowed: 0 deg to 180 deg")
        inc = math.radians(inc_d)
    return alt, tmin_d, tmax_d, inc, bc.bicircular_system(system, epoch=epoch)


def _design(orbit, altitude_km, *, epoch=None, inclination_deg=None, max_tof_days=MAX_TOF_DAYS,
            min_tof_days=MIN_TOF_DAYS, sun_phases=None, candidates=CANDIDATES, progress=None, points=None):
    """:func:`design_low_energy` for any target whose insertion points ``points`` gives (None:
    the orbit's; a torus: :mod:`cr3bp.tori.low_energy`): the checks, the sweep, the correction."""
    system = orbit.system
    alt, tmin_d, tmax_d, inc, model = check_inputs(system, altitude_km, epoch=epoch, inclination_deg=inclination_deg,
                                                   max_tof_days=max_tof_days, min_tof_days=min_tof_days)
    dep_phase = model.sun_phase if epoch is not None else None
    r_park = (system.primary.radius_km + alt) / system.length_km
    max_tof, min_tof = tmax_d / system.days(1.0), tmin_d / system.days(1.0)
    t_start = time.perf_counter()
    if progress:
        progress("sweeping insertion points, burns and Sun phases (bicircular model, backward)...")
    if callable(points):      # (built only once the inputs are known good: a torus's takes a propagation)
        points = points()
    sw = sweep(model, orbit, r_park, max_tof=max_tof, min_tof=min_tof, sun_phases=sun_phases,
               departure_phase=dep_phase, points=points)
    t_sweep = time.perf_counter() - t_start
    if sw["score"].size == 0:
        raise NoSolutionError(f"no trajectory of the sweep ({sw['count']} propagated) comes back to the Earth "
                              f"within {tmin_d:g}-{tmax_d:g} d; widen the time-of-flight window")
    pb = _Problem(model, orbit, r_park, inc, max_tof, min_tof, dep_phase, points=points)
    best, tried = _candidates(pb, sw, sw["score"], candidates, progress)
    if best is None and sw["score"].size > int(candidates):
        # none of the best could be corrected (measured: a date's own design, whose Sun phase is
        # held, at 2027-03-20 with 6): as many again, the next best
        best, more = _candidates(pb, sw, sw["score"], candidates, progress, skip=candidates)
        tried += more
    if best is None:
        raise NoSolutionError(f"none of the {len(tried)} best sweep candidates could be corrected onto a "
                              f"{alt:g} km perigee within {tmin_d:g}-{tmax_d:g} d")
    _, z, e, res = best
    return _assemble(model, orbit, alt, pb, z, e, res, sw, tried, t_sweep, time.perf_counter() - t_start)


def _assemble(model, orbit, alt, pb, z, e, res, sw, tried, t_sweep, t_total):
    system = model.system
    t_p = float(e["t_p"])
    tof = -t_p
    theta_dep = float(z[4]) + model.sun_rate * t_p
    if model.epoch_tdb_s is None:
        dep_model = model.with_phase(theta_dep % _TWO_PI)
    else:
        # the date's own phase (the constraint holds it to CONSTRAINT_TOL)
        dep_model = model
    s_p = e["s_p"]
    per = e["perigee"]
    rel, vin = _earth_relative(system, s_p)
    rel, vin = rel[0], vin[0]
    vc = per["speed_circular"]
    u = vin / np.linalg.norm(vin)
    v_circ_in = vc * u
    # the parking-orbit state before the burn (same position, circular speed along the arc)
    before = np.array(s_p, dtype=float)
    before[3:] = v_circ_in - np.array([-rel[1], rel[0], 0.0])
    dv_dep = s_p[3:] - before[3:]
    s_ins = e["s_ins"]
    pre_ins = s_ins.copy()
    pre_ins[3:] -= e["dv_ins"]
    maneuvers = (
        {"name": "departure", "t": 0.0, "position": before[:3].copy(), "dv_vector": dv_dep, "state_before": before},
        {"name": "insertion", "t": tof, "position": s_ins[:3].copy(), "dv_vector": e["dv_ins"].copy(),
         "state_before": pre_ins},
    )
    patches, dmax, closure_km = _patches(dep_model, s_p, pre_ins, tof)
    details = {
        "sweep_trajectories": int(sw["count"]), "sweep_returns": int(sw["score"].size),
        "sweep_seconds": t_sweep, "seconds": t_total, "candidates": tried,
        "corrector_iterations": int(res[1]), "evaluations": int(pb.evaluations),
        "perigee_residual_km": float(system.km(abs(per["radius"] - pb.r_park))),
        "closure_km": closure_km, "closure_tol_km": CLOSURE_TOL_KM,
        "sun_phase_at_insertion_deg": math.degrees(theta_dep + model.sun_rate * tof) % 360.0,
        "model_source": model.source,
        "unknowns": [float(v) for v in z],
    }
    if closure_km > CLOSURE_TOL_KM:
        raise NoSolutionError(f"a coast of the transfer, re-propagated forward, misses its next patch point by "
                              f"{closure_km:.3g} km (tolerance {CLOSURE_TOL_KM} km)")
    return LowEnergyTransfer(model=dep_model, orbit=orbit, altitude_km=float(alt), maneuvers=maneuvers,
                             tof=tof, insertion_phase=float(z[0]) % 1.0, perigee=per,
                             max_distance_km=dmax, patches=patches, optimised=bool(res[0]), details=details)


def as_leg(tr: LowEnergyTransfer):
    """``tr`` as a :class:`cr3bp.transfers.leg.Leg` in shooting form, the transfer graph's
    low-energy parking leg: its coasts are the shooting segments (``SEGMENTS``), the departure
    and insertion burns its maneuvers, and ``details`` carry ``model = "bicircular"`` with the
    Sun's phase at the departure burn (``bicircular``, :func:`cr3bp.bicircular.model_record`), so
    that :meth:`cr3bp.transfers.leg.Leg.trajectory` and the stitcher propagate it in its own
    model, and the design's JSON (``low_energy``).

    Parameters
    ----------
    tr : LowEnergyTransfer
        A designed transfer (:func:`design_low_energy`).

    Returns
    -------
    Leg
        Solver "parking", kind "departure"; arrives when it ends.

    Raises
    ------
    None
        A designed transfer always has its patches and burns.

    Examples
    --------
    Skipped under doctest (the design takes about a minute):

    >>> from cr3bp import orbit
    >>> nrho = orbit("earth-moon", "halo L2 south resonance=9:2")   # doctest: +SKIP
    >>> leg = as_leg(design_low_energy(nrho, 200.0))                 # doctest: +SKIP
    >>> leg.details["model"], [m.where for m in leg.maneuvers]       # doctest: +SKIP
    ('bicircular', ['departure', 'arrival'])

    References
    ----------
    Parker & Anderson, *Low-Energy Lunar Trajectory Design*, 2013, ch. 3 (from memory); the
    shooting form: Betts, *Practical Methods for Optimal Control and Estimation Using Nonlinear
    Programming*, 2nd ed., 2010, ch. 4 (from memory).
    """
    from .leg import Leg, Maneuver   # lazy: the graph's leg type, only when a graph asks for one
    s = tr.system
    mans = []
    for k, m in enumerate(tr.maneuvers):
        mans.append(Maneuver(float(m["t"]), np.array(m["position"], dtype=float),
                             np.array(m["dv_vector"], dtype=float),
                             float(s.mps(np.linalg.norm(m["dv_vector"]))),
                             "departure" if k == 0 else "arrival", m["name"]))
    ins = tr.maneuvers[-1]
    pre = np.array(ins["state_before"], dtype=float)
    after = pre.copy()
    after[3:] += np.asarray(ins["dv_vector"], dtype=float)
    d = tr.to_dict()
    summary = {k: v for k, v in d.items() if k not in ("details", "patches")}
    summary["closure_km"] = tr.details.get("closure_km")
    details = {"model": "bicircular", "bicircular": bc.model_record(tr.model), "low_energy": _plain(summary)}
    _, states = tr.trajectory(200)
    alt = min(float(s.km(np.min(np.linalg.norm(states[:, :3] - np.array([s.positions[k], 0.0, 0.0]), axis=1))))
              - r for k, r in ((0, s.primary.radius_km), (1, s.secondary.radius_km)))
    return Leg(s, "", "", tuple(mans), float(tr.dv_mps), float(tr.tof), None, tuple(tr.segments()),
               "low-energy transfer (designed in the bicircular model: the Sun's pull raises the perigee)",
               kind="departure", min_altitude_km=alt, details=details, solver="parking",
               patch_times=np.array([p[0] for p in tr.patches], dtype=float),
               patch_states=np.array([np.asarray(p[1], dtype=float) for p in tr.patches]),
               departure_state=np.array(tr.maneuvers[0]["state_before"], dtype=float),
               arrival_state=after, final_state=pre, tof_days=float(tr.tof_days),
               tof_arrival_days=float(tr.tof_days))


#: Longest launch window searched (days): two years of launch dates.
MAX_WINDOW_DAYS = 731.0


@dataclass(frozen=True)
class LaunchWindow:
    """The best launch dates of a low-energy transfer in a window (what :func:`launch_window`
    returns; every value in the bicircular model).

    Attributes
    ----------
    start_tdb_s, end_tdb_s : float   the window, TDB seconds since J2000
    free : LowEnergyTransfer         the best transfer with the Sun's phase free (no date)
    transfers : tuple of LowEnergyTransfer   one per launch date designed, best first (least
        total Δv, then the earliest date)
    dates : tuple of dict            every date designed: ``departure_epoch_utc``, ``how``
        ("the free optimum's Sun phase recurs" or "window edge, nearest in Sun phase"),
        ``phase_miss_deg`` (its Sun phase against the free optimum's), ``ok`` and ``reason``

    Parameters
    ----------
    start_tdb_s, end_tdb_s, free, transfers, dates
        The attributes above (built by :func:`launch_window`).

    Examples
    --------
    A window takes several transfer designs (minutes), so the example is not run:

    >>> from cr3bp import orbit
    >>> from cr3bp.transfers.low_energy import launch_window
    >>> nrho = orbit("earth-moon", "halo L2 south resonance=9:2")                          # doctest: +SKIP
    >>> w = launch_window(nrho, 200.0, "2031-03-01T00:00:00Z", "2031-04-01T00:00:00Z")    # doctest: +SKIP
    >>> w.best is w.transfers[0]                                                          # doctest: +SKIP
    True

    References
    ----------
    .. [1] J. S. Parker and R. L. Anderson, *Low-Energy Lunar Trajectory Design*, Wiley, 2013,
       ch. 3; K. K. Boudad, K. C. Howell and D. C. Davis, *Advances in Space Research* 66, 2020
       (the bicircular model; both from memory).
    """

    start_tdb_s: float
    end_tdb_s: float
    free: object
    transfers: tuple
    dates: tuple

    @property
    def best(self):
        """The best transfer of the window (None: no date could be designed)."""
        return self.transfers[0] if self.transfers else None

    def to_dict(self) -> dict:
        return {"window_utc": [iso_utc(self.start_tdb_s), iso_utc(self.end_tdb_s)], "model": MODEL,
                "free_sun_phase_deg": self.free.sun_phase_deg, "free_dv_mps": self.free.dv_mps,
                "free_insertion_dv_mps": self.free.insertion_dv_mps, "dates": [dict(d) for d in self.dates],
                "launches": [t.to_dict() for t in self.transfers],
                "note": "in the bicircular model the Sun-Earth-Moon geometry repeats every synodic month, so the "
                        "dates on which the best Sun phase recurs give the same transfer; the ephemeris model "
                        "(librate refine) tells them apart"}


def _phase_dates(start, end, theta, system):
    """Dates in [start, end] (TDB s) at which the Sun's phase from the ephemeris equals ``theta``
    (daily samples, then Brent's method on each sign change of the wrapped difference)."""
    n = int(math.ceil((end - start) / SECONDS_PER_DAY)) + 1
    ts = np.linspace(start, end, max(n, 2))

    def g(t):
        return float(np.angle(np.exp(1j * (bc.sun_phase_at(float(t), system) - theta))))
    gs = np.array([g(t) for t in ts])
    out = []
    for k in range(len(ts) - 1):
        a, b = gs[k], gs[k + 1]
        if a == 0.0:
            out.append(float(ts[k]))
        elif a * b < 0.0 and abs(a - b) < math.pi:          # a crossing, not the wrap at +-pi
            out.append(float(brentq(g, ts[k], ts[k + 1], xtol=1e-3, rtol=1e-15)))
    if gs[-1] == 0.0:
        out.append(float(ts[-1]))
    return out, ts, gs


def launch_window(orbit, altitude_km, start, end, *, inclination_deg=None, max_tof_days=MAX_TOF_DAYS,
                  min_tof_days=MIN_TOF_DAYS, sun_phases=None, candidates=CANDIDATES, progress=None):
    """The best launch dates in a window for a low-energy transfer to ``orbit``.

    The Sun's phase is searched first with no date (:func:`design_low_energy`: every
    Sun-Earth-Moon geometry of the bicircular model); the dates of the window on which the
    ephemeris puts the Sun at that phase (:func:`cr3bp.bicircular.sun_phase_at`) are then each
    designed for their date, starting from that transfer. A window too short to hold such a
    date is designed at its two edges, each for its own date (:func:`design_low_energy` with
    ``epoch``), and the better edge reported.

    Parameters
    ----------
    orbit : PeriodicOrbit
        The target orbit, in the earth-moon system.
    altitude_km : float
        Parking-orbit altitude (100 km to 50 000 km).
    start, end : str or float
        The window (ISO 8601 text, UTC unless it names its scale, or TDB seconds since J2000);
        ``end`` after ``start``, at most ``MAX_WINDOW_DAYS`` later.
    inclination_deg, max_tof_days, min_tof_days, sun_phases, candidates, progress
        As :func:`design_low_energy`.

    Returns
    -------
    LaunchWindow

    Raises
    ------
    InputError
        A bad window (order, length, outside the ephemeris) or any input
        :func:`design_low_energy` refuses.
    NoSolutionError
        No transfer with a free Sun phase, or none for any date of the window.

    Examples
    --------
    Skipped under doctest (about two minutes):

    >>> from cr3bp import orbit
    >>> nrho = orbit("earth-moon", "halo L2 south resonance=9:2")                    # doctest: +SKIP
    >>> w = launch_window(nrho, 200.0, "2027-03-01T00:00:00Z", "2027-05-01T00:00:00Z")  # doctest: +SKIP
    >>> w.best.departure_epoch, round(w.best.insertion_dv_mps, 2)                    # doctest: +SKIP

    References
    ----------
    Parker & Anderson, *Low-Energy Lunar Trajectory Design*, 2013, ch. 3 (launch periods of
    ballistic lunar transfers, from memory); Brent, *Algorithms for Minimization without
    Derivatives*, 1973, ch. 4 (the root of the phase difference).
    """
    system = orbit.system
    t0, t1 = window_seconds(start, end, system)
    free = design_low_energy(orbit, altitude_km, inclination_deg=inclination_deg, max_tof_days=max_tof_days,
                             min_tof_days=min_tof_days, sun_phases=sun_phases, candidates=candidates,
                             progress=progress)
    theta = float(free.model.sun_phase)
    z_free = np.asarray(free.details["unknowns"], dtype=float)
    if progress:
        progress(f"best Sun phase at departure {free.sun_phase_deg:.2f} deg; finding the dates of the window "
                 "that bring it (ephemeris)...")
    dates, ts, gs = _phase_dates(t0, t1, theta, system)
    how = "the free optimum's Sun phase recurs"
    if not dates:
        dates = [t0, t1]
        how = "window edge, nearest in Sun phase"
    inc = None if inclination_deg is None else math.radians(float(inclination_deg))
    r_park = (system.primary.radius_km + float(altitude_km)) / system.length_km
    max_tof, min_tof = max_tof_days / system.days(1.0), min_tof_days / system.days(1.0)
    out, rows = [], []
    for k, t in enumerate(dates):
        model = bc.bicircular_system(system, epoch=t)
        row = {"departure_epoch_utc": iso_utc(t), "how": how,
               "phase_miss_deg": abs(math.degrees(float(np.angle(np.exp(1j * (model.sun_phase - theta))))))}
        if progress:
            progress(f"designing the launch of {row['departure_epoch_utc']} ({k + 1} of {len(dates)})...")
        t_start = time.perf_counter()
        try:
            if how == "window edge, nearest in Sun phase":
                # no date of the window brings the best phase: the date's own design
                tr = design_low_energy(orbit, altitude_km, epoch=t, inclination_deg=inclination_deg,
                                       max_tof_days=max_tof_days, min_tof_days=min_tof_days, sun_phases=sun_phases,
                                       candidates=candidates)
            else:
                # the date brings the undated optimum's phase (to the root's 1e-3 s): that transfer,
                # corrected onto the date's phase exactly
                pb = _Problem(model, orbit, r_park, inc, max_tof, min_tof, model.sun_phase)
                res = _correct(pb, z_free)
                if res is None:
                    raise NoSolutionError("the undated optimum could not be corrected onto this date's Sun phase")
                z, opt, nit = res
                tr = _assemble(model, orbit, float(altitude_km), pb, z, pb.evaluate(z), (opt, nit),
                               {"count": 0, "score": np.empty(0)}, [{"start": "the undated optimum"}],
                               0.0, time.perf_counter() - t_start)
        except NoSolutionError as e:
            rows.append(dict(row, ok=False, reason=str(e)))
            continue
        out.append(tr)
        rows.append(dict(row, ok=True, reason="", dv_mps=tr.dv_mps, departure_dv_mps=tr.departure_dv_mps,
                         insertion_dv_mps=tr.insertion_dv_mps, tof_days=tr.tof_days))
    if not out:
        raise NoSolutionError(f"no launch date of the window {iso_utc(t0)} to {iso_utc(t1)} could be designed: "
                              + "; ".join(f"{r['departure_epoch_utc']}: {r['reason']}" for r in rows))
    out.sort(key=lambda tr: (round(tr.dv_mps, 3), tr.model.epoch_tdb_s))
    return LaunchWindow(t0, t1, free, tuple(out), tuple(rows))


def window_seconds(start, end, system="earth-moon"):
    """The window ``start``/``end`` (ISO 8601 text or TDB seconds since J2000) as TDB seconds,
    checked: end after start, at most ``MAX_WINDOW_DAYS`` apart, both inside the ephemeris.

    Parameters
    ----------
    start, end : str or float
    system : System or str
        The Earth-Moon system.

    Returns
    -------
    (float, float)

    Raises
    ------
    InputError
        A bad date, an empty or reversed window, one too long, or dates outside the ephemeris.

    Examples
    --------
    >>> from cr3bp.transfers.low_energy import window_seconds
    >>> a, b = window_seconds("2027-03-01T00:00:00Z", "2027-04-01T00:00:00Z")
    >>> round((b - a) / 86400.0, 6)
    31.0

    References
    ----------
    ISO 8601 (the dates); common practice: a launch window checked before any design starts.
    """
    from ..time.frames import epoch_from_text   # lazy: the ephemeris, only for a dated window
    t0 = epoch_from_text(start) if isinstance(start, str) else finite_number("window start", start)
    t1 = epoch_from_text(end) if isinstance(end, str) else finite_number("window end", end)
    if not t1 > t0:
        raise InputError(f"launch window {start} to {end}: the end must come after the start")
    if (t1 - t0) / SECONDS_PER_DAY > MAX_WINDOW_DAYS:
        raise InputError(f"launch window {start} to {end} is {(t1 - t0) / SECONDS_PER_DAY:.0f} days long; "
                         f"allowed: at most {MAX_WINDOW_DAYS:g} days")
    for t in (t0, t1):
        bc.sun_phase_at(t, system)     # a date outside the ephemeris is refused here
    return float(t0), float(t1)
