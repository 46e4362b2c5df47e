"""Legs through tubes: heteroclinic/homoclinic connections, orbit-to-orbit transfers, legs
between a parking orbit about a primary and a periodic orbit, and transit classification.

Methods
-------
* Connections at one energy (Koon, Lo, Marsden & Ross, *Dynamical Systems, the Three-Body
  Problem and Space Mission Design*, 2011, ch. 3 and §4.5; Gómez et al., *Nonlinearity* 17,
  2004, §4): the unstable tube of one orbit and the stable tube of another are cut by a common
  section; where the cuts cross (planar: curves in the plane of the in-section position and
  velocity; spatial: curves whose in-section positions cross) a candidate is taken and refined
  by two-segment multiple shooting: the departure phases on both orbits are the unknowns, the
  segments are the forward unstable and backward stable trajectories to the section, and
  Newton's method (finite-difference Jacobian) zeroes their mismatch there. The Δv at the
  patch point is what is left: zero to tolerance for a planar heteroclinic connection, the
  velocity mismatch after position matching for a spatial one.
* Transfers at different energies: positions matched on the section, the phase pair chosen
  to minimise the patch Δv (planar: a one-parameter family, Brent's method along it).
* Parking orbit to periodic orbit (or back): among the stable (arrival) or unstable
  (departure) trajectories, those whose first periapsis about a primary is at a target
  altitude, refined in the departure phase by Brent's method. The manoeuvre is tangential at
  periapsis::

      dv = | v + omega x (r - r_p) | - sqrt(GM_p / |r - r_p|)

  (v the rotating-frame velocity, omega = z-hat in nondimensional units, GM_p = 1 - mu or mu:
  the inertial speed relative to the primary minus the circular speed at that radius; Vallado,
  *Fundamentals of Astrodynamics and Applications*, 4th ed., 2013, §6.3, for the tangential
  burn and §3.7 for the rotating-frame velocity transformation).
* Transit classification (Conley, "Low energy transit orbits in the restricted three-body
  problem", SIAM J. Appl. Math. 16, 1968; Koon et al. 2011, §3.3): at the energy of the tube,
  states on a section inside the tube's closed cut pass through the neck, those outside do not.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from ..errors import ConvergenceError, InputError, NoSolutionError
from ..integrate import propagate
from ..integrate.events import COORDS
from .manifolds import RTOL, ATOL, Stop, _globalise, grow_tube, manifold_starts
from .sections import Crossings, Section, apsides, apsis, primary_index

#: Patch tolerance of the refinement (nondimensional, on the matched coordinates).
PATCH_TOL = 1e-10
MAX_ITER = 25


# ---- the leg ------------------------------------------------------------------------------

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
        }


def _plain(d):
    if isinstance(d, dict):
        return {k: _plain(v) for k, v in d.items()}
    if isinstance(d, (list, tuple)):
        return [_plain(v) for v in d]
    if isinstance(d, np.ndarray):
        return d.tolist()
    if isinstance(d, np.generic):
        return d.item()
    return d


def _mps(system, dv):
    return float(system.mps(dv)) if system.dimensional else float(dv)


# ---- arrival at an orbit: the time to come within a stated distance of its path -------------

#: Distance from the target orbit's path at which a leg counts as arrived, km (a design choice
#: of librate, not a standard): 1 000 km in Earth-Moon, 10 000 km in Sun-Earth; elsewhere 1 % of
#: the smaller primary's Hill radius LU (mu/3)^(1/3) (:func:`arrival_distance_km`).
ARRIVAL_DISTANCE_KM = {"earth-moon": 1000.0, "sun-earth": 10000.0}
#: Points per period on the target orbit's path (nearest point refined on the polyline).
ORBIT_PATH_SAMPLES = 20000
#: Samples per ballistic segment when looking for the first approach (then Brent's method).
ARRIVAL_SCAN_SAMPLES = 4000
TOF_DEFINITIONS = {
    "tof_days": "step-off time of flight: from the leg's start to the manifold's step-off point "
                "on the target orbit (includes the asymptotic approach)",
    "tof_arrival_days": "time of flight to arrival: from the leg's start until the trajectory first "
                        "comes within arrival_distance_km of the target orbit's path (nearest point "
                        "of the orbit); equal to tof_days when the leg ends on a parking orbit",
}


def arrival_distance_km(system) -> float:
    """The default arrival distance of ``system`` (:data:`ARRIVAL_DISTANCE_KM`), km; in a system
    without units, the same 1 % of the Hill radius in LU."""
    if system.name in ARRIVAL_DISTANCE_KM:
        return ARRIVAL_DISTANCE_KM[system.name]
    hill = (system.mu / 3.0) ** (1.0 / 3.0)
    return 0.01 * hill * (system.length_km if system.dimensional else 1.0)


_PATHS: dict = {}


def orbit_path(orbit, n: int = ORBIT_PATH_SAMPLES) -> np.ndarray:
    """Positions (n, 3), LU, evenly in time over one period of ``orbit`` (the closed path).
    The last few paths are kept (every candidate leg to one orbit reuses its path)."""
    key = (float(orbit.system.mu), float(orbit.period), np.asarray(orbit.state, dtype=float).tobytes(), int(n))
    if key not in _PATHS:
        te = np.linspace(0.0, orbit.period, int(n) + 1)
        arc = propagate(orbit.system, orbit.state, orbit.period, t_eval=te, rtol=RTOL, atol=ATOL)
        if len(_PATHS) >= 8:
            _PATHS.pop(next(iter(_PATHS)))
        _PATHS[key] = arc.states[:-1, :3].copy()
        _PATHS[key].flags.writeable = False
    return _PATHS[key]


def distance_to_path(path, points) -> np.ndarray:
    """Distance (LU) from each point (K, 3) to the closed polyline through ``path`` (n, 3): the
    nearest vertex (k-d tree), then the nearest point of the two segments meeting there."""
    from scipy.spatial import cKDTree
    pts = np.atleast_2d(np.asarray(points, dtype=float))
    n = len(path)
    _, i = cKDTree(path).query(pts)
    best = np.linalg.norm(pts - path[i], axis=1)
    for j in (i - 1, i):
        a, b = path[j % n], path[(j + 1) % n]
        ab = b - a
        u = np.clip(np.einsum("ij,ij->i", pts - a, ab) / np.maximum(np.einsum("ij,ij->i", ab, ab), 1e-300),
                    0.0, 1.0)
        best = np.minimum(best, np.linalg.norm(pts - (a + u[:, None] * ab), axis=1))
    return best


def arrival_time(system, segments, orbit, distance_km=None, path=None):
    """When a leg's trajectory first comes within ``distance_km`` (default
    :func:`arrival_distance_km`) of the path of ``orbit``.

    ``segments``: the leg's ballistic arcs ``(t0, state, duration)`` forward in time (as
    :class:`Leg` holds them). Each is sampled at :data:`ARRIVAL_SCAN_SAMPLES` points, the first
    sample inside the distance is bracketed with the one before it and the crossing found by
    Brent's method on the re-propagated state (Brent, *Algorithms for Minimization without
    Derivatives*, 1973, ch. 4, as scipy's ``brentq``).

    Returns
    -------
    (t, distance_km) : TU from the leg's start; the leg's full duration when it never comes that
    close (it then ends on the orbit at its step-off point).
    """
    d_km = arrival_distance_km(system) if distance_km is None else float(distance_km)
    if not (math.isfinite(d_km) and d_km > 0):
        raise InputError(f"arrival distance {distance_km!r} km must be a positive number")
    lu = d_km / system.length_km if system.dimensional else d_km
    path = orbit_path(orbit) if path is None else path
    end = 0.0
    for t0, s0, dur in segments:
        if dur <= 0:
            continue
        end = max(end, float(t0) + float(dur))
        te = np.linspace(0.0, float(dur), ARRIVAL_SCAN_SAMPLES)
        arc = propagate(system, s0, float(dur), t_eval=te, rtol=RTOL, atol=ATOL)
        d = distance_to_path(path, arc.states[:, :3])
        inside = np.nonzero(d <= lu)[0]
        if inside.size == 0:
            continue
        k = int(inside[0])
        if k == 0:
            return float(t0), d_km
        sa, h = arc.states[k - 1], float(te[k] - te[k - 1])

        def gap(dt):
            if dt == 0.0:
                return float(d[k - 1] - lu)
            st = propagate(system, sa, dt, rtol=RTOL, atol=ATOL).states[-1]
            return float(distance_to_path(path, st[:3])[0] - lu)
        dt = brentq(gap, 0.0, h, xtol=1e-12 * max(1.0, h), rtol=1e-14, maxiter=100)
        return float(t0) + float(te[k - 1]) + dt, d_km
    return end, d_km


# ---- one manifold trajectory as a function of its departure time ---------------------------

class _Branch:
    """A tube's trajectories as a function of departure time on the orbit (for refinement)."""

    def __init__(self, tube, stop=None):
        if tube.orbit is None:
            raise InputError("refinement needs a tube grown from a periodic orbit")
        self.tube = tube
        self.orbit = tube.orbit
        self.sign = tube.time_sign
        self.stop = stop or tube.stop
        self.cache = {}

    def at(self, stop):
        """The same branch cut by another stop (e.g. the plane moved)."""
        return _Branch(self.tube, stop)

    def end(self, t_orbit):
        """(start state, signed tof, end state, status) of the trajectory departing at t_orbit."""
        key = float(t_orbit) % self.orbit.period
        if key in self.cache:
            return self.cache[key]
        tb = self.tube
        _, _, _, starts, _, _, _ = manifold_starts(
            self.orbit, tb.stability, tb.branch, step_km=_step_arg(tb), times=np.array([key]))
        tof, ends, status = _globalise(tb.system, starts, self.stop, self.sign)
        out = (starts[0], float(tof[0]), ends[0], status[0])
        self.cache[key] = out
        return out


def _step_arg(tube):
    return tube.step_km if math.isfinite(tube.step_km) else f"{tube.step}LU"


def match_names(section: Section, planar: bool, same_energy: bool):
    """Coordinates matched at the patch: the in-section position coordinates, plus (planar, one
    energy) the in-section velocity coordinate."""
    if section.kind != "plane" or section.coordinate > 2:
        raise InputError("connections need a position hyperplane section such as x=1-mu or y=0")
    k = section.coordinate
    pos = [c for c in (0, 1, 2) if c != k and not (planar and c == 2)]
    names = ["xyz"[c] for c in pos]
    if planar and same_energy:
        names.append("v" + names[0])
    return tuple(names)


def _is_planar(tube):
    return bool(np.all(np.abs(tube.start_states[:, [2, 5]]) < 1e-12))


# ---- candidates on a common section ---------------------------------------------------------

def _polylines(cut: Crossings, names):
    """Pieces of the cut polyline between consecutive (cyclic) phases that both crossed (one
    crossing per trajectory: a tube's cut at its ``count``-th crossing, else the first)."""
    first = cut.one_each()
    order = np.argsort(first.phase)
    pts = first.coords(names)[order]
    ph = first.phase[order]
    idx = first.trajectory[order]
    n = cut.n_trajectories
    segs = []
    m = len(ph)
    for a in range(m):
        b = (a + 1) % m
        if m < 2 or (b == 0 and m < n):
            continue
        if (idx[b] - idx[a]) % n != 1:
            continue
        segs.append((pts[a], pts[b], ph[a], ph[b]))
    return segs


def _seg_intersect(p1, p2, q1, q2):
    d1, d2 = p2 - p1, q2 - q1
    den = d1[0] * d2[1] - d1[1] * d2[0]
    if den == 0:
        return None
    w = q1 - p1
    s = (w[0] * d2[1] - w[1] * d2[0]) / den
    u = (w[0] * d1[1] - w[1] * d1[0]) / den
    if 0 <= s <= 1 and 0 <= u <= 1:
        return s, u
    return None


def cut_intersections(cut_a: Crossings, cut_b: Crossings, names=("y", "vy")):
    """Crossings of two cut polylines in the 2-D map ``names``: list of (phase_a, phase_b,
    point). Phases are interpolated along the crossing segments."""
    sa, sb = _polylines(cut_a, names), _polylines(cut_b, names)
    out = []
    for p1, p2, pa1, pa2 in sa:
        for q1, q2, pb1, pb2 in sb:
            r = _seg_intersect(p1, p2, q1, q2)
            if r is None:
                continue
            s, u = r
            fa = pa1 + s * ((pa2 - pa1) % 1.0)
            fb = pb1 + u * ((pb2 - pb1) % 1.0)
            out.append((fa % 1.0, fb % 1.0, p1 + s * (p2 - p1)))
    return out


# ---- refinement -------------------------------------------------------------------------------

def _coords(state, names):
    return np.array([state[COORDS[n]] for n in names])


def _refine_pair(ba: _Branch, bb: _Branch, ta, tb, names, tol=PATCH_TOL):
    """Newton on (ta, tb) so that the named coordinates of the two trajectories' section states
    agree. Returns ta, tb, end_a, end_b, residual history."""
    Ta, Tb = ba.orbit.period, bb.orbit.period
    h = 1e-7
    res = []
    x = np.array([ta, tb], dtype=float)
    for it in range(MAX_ITER):
        ea, eb = ba.end(x[0]), bb.end(x[1])
        if ea[3] != "section" or eb[3] != "section":
            raise ConvergenceError("a refined trajectory no longer reaches the section",
                                   it, res, x)
        f = _coords(ea[2], names) - _coords(eb[2], names)
        res.append(float(np.linalg.norm(f)))
        if res[-1] < tol:
            return x[0], x[1], ea, eb, res
        da = (_coords(ba.end(x[0] + h * Ta)[2], names) - _coords(ea[2], names)) / (h * Ta)
        db = (_coords(bb.end(x[1] + h * Tb)[2], names) - _coords(eb[2], names)) / (h * Tb)
        J = np.column_stack([da, -db])
        step = np.linalg.lstsq(J, -f, rcond=None)[0]
        # limit the step to a tenth of a period
        lim = 0.1 * np.array([Ta, Tb])
        scale = np.max(np.abs(step) / lim)
        if scale > 1:
            step /= scale
        x = x + step
    raise ConvergenceError(f"patch refinement did not converge in {MAX_ITER} iterations "
                           f"(residual {res[-1]:.3e})", MAX_ITER, res, x)


def _leg_from_patch(system, ea, eb, ta, tb, tube_a, tube_b, kind, method, details):
    sa, tofa, pa, _ = ea
    sb, tofb, pb, _ = eb
    dv = pb[3:6] - pa[3:6]
    dvn = float(np.linalg.norm(dv))
    man = Maneuver(float(tofa), pa[:3].copy(), dv, _mps(system, dvn))
    segs = ((0.0, sa, float(tofa)), (float(tofa), pb, float(-tofb)))
    tof = float(tofa - tofb)
    alt = _min_altitude(system, segs)
    d = dict(details)
    d.update({"phase_from": (ta / tube_a.period) % 1.0, "phase_to": (tb / tube_b.period) % 1.0,
              "t_orbit_from": ta, "t_orbit_to": tb, "patch_dv": dvn,
              "position_mismatch": float(np.linalg.norm(pb[:3] - pa[:3])),
              "step_km": tube_a.step_km, "jacobi_from": tube_a.jacobi, "jacobi_to": tube_b.jacobi})
    t_arr, d_arr = arrival_time(system, segs, tube_b.orbit) if tube_b.orbit is not None else (tof, math.nan)
    return Leg(system, tube_a.origin, tube_b.origin, (man,) if dvn > 0 else (man,), man.dv_mps,
               tof, pa.copy(), segs, method, kind, alt, d, t_arr, d_arr)


def _min_altitude(system, segs, n=400):
    if not system.dimensional:
        return math.inf
    best = math.inf
    for _, s0, dur in segs:
        if dur == 0:
            continue
        arc = propagate(system, s0, dur, t_eval=np.linspace(0, dur, n), rtol=RTOL, atol=ATOL)
        for p, body in enumerate((system.primary, system.secondary)):
            c = system.positions[p]
            r = np.linalg.norm(arc.states[:, :3] - np.array([c, 0, 0]), axis=1)
            best = min(best, float(system.km(r.min())) - body.radius_km)
    return best


def _minimise_over_plane(ba, bb, ta, tb, names, tol, section, stop, width=0.02):
    """Spatial patches: positions matched on the plane s[k] = c, then c moved (windows of
    +/- ``width`` LU, re-centred up to three times) to minimise |dv| (Brent's bounded method;
    each value re-solved by Newton from the last solution). Returns the best solution, the plane value and the dv on the
    plane first given."""
    import dataclasses
    from .sections import hyperplane
    c0 = section.value
    first = {}
    state = {"ta": ta, "tb": tb, "best": None}

    def dv_at(c):
        sec = hyperplane(section.coordinate, c, section.direction, label=section.label)
        st = dataclasses.replace(stop, section=sec)
        try:
            a, b, ea, eb, res = _refine_pair(ba.at(st), bb.at(st), state["ta"], state["tb"], names, tol)
        except ConvergenceError:
            return 1e3
        state["ta"], state["tb"] = a, b
        dv = float(np.linalg.norm(eb[2][3:6] - ea[2][3:6]))
        if state["best"] is None or dv < state["best"][0]:
            state["best"] = (dv, a, b, ea, eb, res, c)
        first.setdefault("dv", dv)
        return dv

    dv_at(c0)
    centre = c0
    for _ in range(3):  # re-centre while the minimum sits on the window's edge
        r = minimize_scalar(dv_at, bounds=(centre - width, centre + width), method="bounded",
                            options={"xatol": 1e-7})
        if min(r.x - centre + width, centre + width - r.x) > 0.02 * width:
            break
        centre = r.x
    if state["best"] is None:
        raise NoSolutionError("no position-matched patch near the given plane")
    dv, a, b, ea, eb, res, c = state["best"]
    return a, b, ea, eb, res, c, first["dv"]


def connect_tubes(tube_u, tube_s, names=None, max_candidates=5, tol=PATCH_TOL, minimise=True):
    """Connections between an unstable tube and a stable tube cut by the same section.

    Same energy: heteroclinic (or homoclinic, when both tubes belong to one orbit) connections,
    refined to zero mismatch on ``names`` (planar: in-section position and velocity; spatial:
    in-section position, leaving a velocity mismatch reported as the patch Δv, which is then
    minimised by moving the patch plane within 0.02 LU when ``minimise``). Different
    energies: :func:`transfer_tubes`.

    Returns
    -------
    list of Leg, ascending in Δv, then time of flight.

    Raises
    ------
    NoSolutionError
        The cuts do not cross (the message gives the nearest approach on the map).
    """
    if tube_u.stability != "unstable" or tube_s.stability != "stable":
        raise InputError("connect an unstable tube (departure) to a stable tube (arrival)")
    if tube_u.stop.section is None or tube_s.stop.section is None or \
            tube_u.stop.section.to_dict() != tube_s.stop.section.to_dict():
        raise InputError("both tubes must be grown to the same section")
    system = tube_u.system
    planar = _is_planar(tube_u) and _is_planar(tube_s)
    same = abs(tube_u.jacobi - tube_s.jacobi) < 1e-9
    if not same:
        return transfer_tubes(tube_u, tube_s, max_candidates=max_candidates)
    section = tube_u.stop.section
    names = names or match_names(section, planar, True)
    search = names if planar else names[:2]
    ca, cb = tube_u.section_cut(), tube_s.section_cut()
    if len(ca) < 2 or len(cb) < 2:
        raise NoSolutionError(f"the tubes reach the section {section.label} with {len(ca)} and "
                              f"{len(cb)} trajectories; grow more points, allow more time, pick another "
                              f"section or the other branch (now {tube_u.branch} and {tube_s.branch})")
    cands = cut_intersections(ca, cb, search)
    if not cands:
        gap = _nearest_gap(ca, cb, search)
        raise NoSolutionError(f"the cuts of the two tubes on {section.label} do not cross "
                              f"(nearest approach {gap:.3e} in {'/'.join(search)}, nondimensional)")
    zero = 1e-7  # patch dv (LU/TU) below which the patch is a true connection (0.1 mm/s Earth-Moon)
    homo = (tube_u.orbit is not None and tube_s.orbit is not None
            and abs(tube_u.period - tube_s.period) < 1e-9
            and np.allclose(tube_u.orbit.state, tube_s.orbit.state, atol=1e-9))
    kind = "homoclinic" if homo else "heteroclinic"
    ba, bb = _Branch(tube_u), _Branch(tube_s)
    legs, failures = [], []
    for fa, fb, _ in cands[: max(1, int(max_candidates))]:
        try:
            ta, tb, ea, eb, res = _refine_pair(ba, bb, fa * tube_u.period, fb * tube_s.period,
                                               names, tol)
        except ConvergenceError as e:
            failures.append(str(e))
            continue
        if any(_same_phases(ta, tb, g, tube_u.period, tube_s.period) for g in legs):
            continue  # the same connection reached from another candidate crossing
        dvn = float(np.linalg.norm(eb[2][3:6] - ea[2][3:6]))
        method = ("two-segment multiple shooting on the section, Newton in the departure phases "
                  "(matched: " + ", ".join(names) + ")")
        extra = {"residuals": res, "matched": list(names), "candidates": len(cands)}
        if not planar and minimise and dvn >= zero:
            try:
                ta, tb, ea, eb, res, value, dv0 = _minimise_over_plane(ba, bb, ta, tb, names, tol,
                                                                       section, tube_u.stop)
                method += "; patch plane moved to minimise |dv| (Brent's method)"
                extra.update({"residuals": res, "patch_plane_value": value,
                              "dv_mps_on_given_plane": _mps(system, dv0)})
                dvn = float(np.linalg.norm(eb[2][3:6] - ea[2][3:6]))
            except (ConvergenceError, NoSolutionError) as e:
                extra["minimisation"] = f"skipped: {e}"
        legs.append(_leg_from_patch(system, ea, eb, ta, tb, tube_u, tube_s,
                                    kind if dvn < zero else "transfer", method, extra))
    if not legs:
        raise ConvergenceError("no candidate connection converged: " + "; ".join(failures[:3]),
                               0, [])
    legs.sort(key=lambda g: (round(g.dv_mps, 6), g.tof))
    return legs


def _same_phases(ta, tb, leg, Ta, Tb, tol=1e-7):
    """Whether refined departure times (ta, tb) give the same connection as ``leg`` (phases
    equal to ``tol``, cyclically)."""
    def close(f, g):
        d = abs((f - g) % 1.0)
        return min(d, 1.0 - d) < tol
    return (close((ta / Ta) % 1.0, leg.details["phase_from"])
            and close((tb / Tb) % 1.0, leg.details["phase_to"]))


def _nearest_gap(ca, cb, names):
    a, b = ca.coords(names), cb.coords(names)
    d = np.linalg.norm(a[:, None, :] - b[None, :, :], axis=2)
    return float(d.min())


def transfer_tubes(tube_u, tube_s, max_candidates=5):
    """Transfers between tubes at different energies through one manoeuvre on their common
    section (planar tubes): positions matched, phases chosen to minimise |Δv| (Brent's method
    along the one-parameter family of position matches)."""
    system = tube_u.system
    section = tube_u.stop.section
    planar = _is_planar(tube_u) and _is_planar(tube_s)
    if not planar:
        names = match_names(section, False, False)
        return _spatial_transfer(tube_u, tube_s, names, max_candidates)
    (pname,) = match_names(section, True, False)
    ca, cb = tube_u.section_cut().one_each(), tube_s.section_cut().one_each()
    if len(ca) < 2 or len(cb) < 2:
        raise NoSolutionError(f"the tubes reach {section.label} with {len(ca)} and {len(cb)} "
                              "trajectories; nothing to patch")
    ya = ca.coords([pname])[:, 0]
    segs_b = _polylines(tube_s.section_cut(), (pname, "v" + pname))
    # for every departure sample: the arrival points with the same position coordinate
    best = []
    for i in range(len(ca)):
        for q1, q2, pb1, pb2 in segs_b:
            lo, hi = sorted((q1[0], q2[0]))
            if not lo <= ya[i] <= hi or q1[0] == q2[0]:
                continue
            u = (ya[i] - q1[0]) / (q2[0] - q1[0])
            fb = (pb1 + u * ((pb2 - pb1) % 1.0)) % 1.0
            vb = q1[1] + u * (q2[1] - q1[1])
            dv = abs(vb - ca.states[i, COORDS["v" + pname]])
            best.append((dv, ca.phase[i], fb))
    if not best:
        raise NoSolutionError(f"the tubes' cuts on {section.label} share no {pname} range; no "
                              "position match exists there")
    # per departure sample its cheapest match; the local minima of that along the cut (cyclic
    # in phase) are the candidates, cheapest first
    per = {}
    for dv0, fa, fb in best:
        if fa not in per or dv0 < per[fa][0]:
            per[fa] = (dv0, fa, fb)
    ph = sorted(per)
    vals = [per[f][0] for f in ph]
    m = len(ph)
    minima = [per[ph[k]] for k in range(m)
              if m < 3 or (vals[k] <= vals[k - 1] and vals[k] <= vals[(k + 1) % m])]
    minima.sort()
    ba, bb = _Branch(tube_u), _Branch(tube_s)
    legs = []
    seen = []
    for dv0, fa, fb in minima + sorted(best):
        if any(abs(fa - s) < 0.02 for s in seen):
            continue
        seen.append(fa)
        try:
            leg = _min_dv_transfer(system, ba, bb, fa, fb, pname, tube_u, tube_s)
        except (ConvergenceError, NoSolutionError):
            continue
        if any(abs(leg.details["phase_from"] - g.details["phase_from"]) < 1e-6 for g in legs):
            continue  # the same local minimum reached from another start
        legs.append(leg)
        if len(legs) >= max_candidates:
            break
    if not legs:
        raise NoSolutionError("no position-matched transfer could be refined on " + section.label)
    legs.sort(key=lambda g: (g.dv_mps, g.tof))
    return legs


def _solve_b(bb, tb, target, pname, Tb):
    """Newton/secant on the arrival phase so its section position equals ``target``."""
    h = 1e-7 * Tb
    for _ in range(MAX_ITER):
        eb = bb.end(tb)
        if eb[3] != "section":
            raise ConvergenceError("arrival trajectory left the section", 0, [])
        f = eb[2][COORDS[pname]] - target
        if abs(f) < PATCH_TOL:
            return tb, eb
        d = (bb.end(tb + h)[2][COORDS[pname]] - eb[2][COORDS[pname]]) / h
        step = -f / d
        step = max(-0.05 * Tb, min(0.05 * Tb, step))
        tb += step
    raise ConvergenceError("arrival phase did not converge", MAX_ITER, [])


def _min_dv_transfer(system, ba, bb, fa, fb, pname, tube_u, tube_s):
    Ta, Tb = tube_u.period, tube_s.period
    state = {"tb": fb * Tb}

    def dv_of(ta):
        ea = ba.end(ta)
        if ea[3] != "section":
            return 1e3
        try:
            tb, eb = _solve_b(bb, state["tb"], ea[2][COORDS[pname]], pname, Tb)
        except ConvergenceError:
            return 1e3
        state["tb"] = tb
        state["last"] = (ta, tb, ea, eb)
        return float(np.linalg.norm(eb[2][3:6] - ea[2][3:6]))

    width = 0.02 * Ta
    centre = fa * Ta
    for _ in range(4):  # re-centre the window while the minimum sits on its edge
        lo, hi = centre - width, centre + width
        r = minimize_scalar(dv_of, bounds=(lo, hi), method="bounded", options={"xatol": 1e-9 * Ta})
        if min(r.x - lo, hi - r.x) > 0.02 * width:
            break
        centre = r.x
    dv = dv_of(r.x)
    if dv >= 1e3:
        raise NoSolutionError("transfer refinement left the section")
    ta, tb, ea, eb = state["last"]
    return _leg_from_patch(system, ea, eb, ta, tb, tube_u, tube_s, "transfer",
                           f"position ({pname}) matched on the section by Newton in the arrival "
                           "phase; departure phase by Brent's bounded minimisation of |dv|",
                           {"matched": [pname]})


def _spatial_transfer(tube_u, tube_s, names, max_candidates):
    ca, cb = tube_u.section_cut(), tube_s.section_cut()
    cands = cut_intersections(ca, cb, names)
    if not cands:
        raise NoSolutionError(f"the tubes' cuts do not cross in {'/'.join(names)} on "
                              f"{tube_u.stop.section.label} (nearest {_nearest_gap(ca, cb, names):.3e})")
    ba, bb = _Branch(tube_u), _Branch(tube_s)
    legs = []
    for fa, fb, _ in cands[:max_candidates]:
        try:
            ta, tb, ea, eb, res = _refine_pair(ba, bb, fa * tube_u.period, fb * tube_s.period, names)
        except ConvergenceError:
            continue
        legs.append(_leg_from_patch(tube_u.system, ea, eb, ta, tb, tube_u, tube_s, "transfer",
                                    "positions matched on the section by Newton in both phases",
                                    {"residuals": res, "matched": list(names)}))
    if not legs:
        raise NoSolutionError("no spatial transfer candidate converged")
    legs.sort(key=lambda g: (g.dv_mps, g.tof))
    return legs


def connect(orbit_a, orbit_b, section, n_points=200, *, step_km=None, t_max=2 * math.pi,
            count=1, branch_a="interior", branch_b="interior", max_candidates=5, progress=None):
    """Connect ``orbit_a`` (departure, unstable tube) to ``orbit_b`` (arrival, stable tube) on
    ``section`` (a Section or text such as ``"x=1-mu"``). Returns (legs, tube_u, tube_s).

    Raises
    ------
    NoSolutionError
        The energies are below that of the necks that must be open (``necks`` gives it), or
        the cuts do not meet.
    """
    from .sections import parse_section
    sec = section if isinstance(section, Section) else parse_section(section, orbit_a.system)
    stop = Stop(sec, count, float(t_max))
    tu = grow_tube(orbit_a, "unstable", branch_a, n_points, stop, step_km=step_km, progress=progress)
    ts = grow_tube(orbit_b, "stable", branch_b, n_points, stop, step_km=step_km, progress=progress)
    return connect_tubes(tu, ts, max_candidates=max_candidates), tu, ts


# ---- parking orbit <-> periodic orbit ----------------------------------------------------------

def inertial_velocity(system, state, primary):
    """Velocity relative to a primary in the inertial frame whose axes coincide with the
    rotating ones at that instant: v + omega x (r - r_p), omega = z-hat (nondimensional)."""
    c = system.positions[primary]
    rel = np.asarray(state[:3], dtype=float) - np.array([c, 0.0, 0.0])
    v = np.asarray(state[3:6], dtype=float)
    return rel, v + np.array([-rel[1], rel[0], 0.0])


def periapsis_summary(system, state, primary) -> dict:
    """Radius, altitude, inertial and circular speeds, tangential Δv and inclination of a
    periapsis state about ``primary`` (formulas in the module docstring)."""
    rel, vin = inertial_velocity(system, state, primary)
    gm = 1.0 - system.mu if primary == 0 else system.mu
    r = float(np.linalg.norm(rel))
    speed = float(np.linalg.norm(vin))
    vc = math.sqrt(gm / r)
    h = np.cross(rel, vin)
    inc = math.degrees(math.acos(max(-1.0, min(1.0, h[2] / np.linalg.norm(h)))))
    body = (system.primary, system.secondary)[primary]
    out = {"radius": r, "speed_inertial": speed, "speed_circular": vc, "dv": speed - vc,
           "inclination_deg": inc, "flight_path_cos": float(rel @ vin / (r * speed))}
    if system.dimensional:
        out.update({"altitude_km": system.km(r) - body.radius_km,
                    "speed_inertial_kms": system.mps(speed) / 1e3,
                    "speed_circular_kms": system.mps(vc) / 1e3,
                    "dv_mps": system.mps(speed - vc)})
    return out


@dataclass(frozen=True)
class PeriapsisMap:
    """First periapsis about a primary of each trajectory of a half-manifold."""

    system: object
    primary: int
    stability: str
    branch: str
    t_orbit: np.ndarray
    phase: np.ndarray
    altitude_km: np.ndarray    # NaN where no periapsis within the time limit
    tof: np.ndarray            # signed TU from the manifold start to the periapsis
    states: np.ndarray
    origin: str = ""
    within: float = math.inf   # only periapses closer than this (LU) count
    passage: int = 1           # which close periapsis (1 = nearest the orbit in time)

    def to_dict(self) -> dict:
        return {"primary": self.system.names[self.primary], "stability": self.stability,
                "branch": self.branch, "origin": self.origin, "phase": self.phase.tolist(),
                "passage": self.passage,
                "altitude_km": [None if not np.isfinite(a) else float(a) for a in self.altitude_km],
                "tof_days": [None if not np.isfinite(t) else float(self.system.days(abs(t)))
                             for t in self.tof]}


def periapsis_map(orbit, primary, stability="stable", branch="interior", n_points=60, *,
                  t_max=2 * math.pi, step_km=None, times=None, within=None, passage=1,
                  progress=None) -> PeriapsisMap:
    """Altitude of the first close periapsis about ``primary`` of each trajectory of a
    half-manifold (backward in time for the stable manifold: the periapsis the arriving
    trajectory leaves from).

    Apsides about the primary also occur while the trajectory still winds along the orbit;
    only those closer to the primary than ``within`` (LU; default half the orbit's least
    distance from the primary) count. ``passage`` = n maps the n-th such periapsis (a
    trajectory may pass the primary more than once between the parking orbit and the orbit).
    """
    system = orbit.system
    system.require_dimensional("a periapsis altitude")
    p = primary_index(system, primary)
    ts, ostates, _, starts, _, _, _ = manifold_starts(orbit, stability, branch, n_points, "time",
                                                      step_km, None, times)
    c = np.array([system.positions[p], 0.0, 0.0])
    if within is None:
        within = 0.5 * float(np.min(np.linalg.norm(ostates[:, :3] - c, axis=1)))
    sign = 1.0 if stability == "unstable" else -1.0
    sec = apsis(system, p, "periapsis")
    cr = apsides(system, starts, sec, sign * t_max, passage, guard=False, progress=progress,
                 within=within).nth(passage)
    n = len(ts)
    alt = np.full(n, np.nan)
    tof = np.full(n, np.nan)
    st = np.full((n, 6), np.nan)
    body = (system.primary, system.secondary)[p]
    for k, i in enumerate(cr.trajectory):
        r = np.linalg.norm(cr.states[k, :3] - c)
        alt[i] = system.km(r) - body.radius_km
        tof[i] = cr.t[k]
        st[i] = cr.states[k]
    pm = PeriapsisMap(system, p, stability, branch, ts, ts / orbit.period, alt, tof, st,
                      _describe(orbit), within, passage)
    return pm


def _describe(orbit):
    from .manifolds import describe
    return describe(orbit)


def parking_legs(orbit, primary, altitude_km, *, stability="stable", branch="interior",
                 n_points=60, t_max=2 * math.pi, step_km=None, max_legs=4, pmap=None,
                 progress=None):
    """Legs between a circular parking orbit at ``altitude_km`` about ``primary`` and ``orbit``.

    ``stability="stable"``: arrival at the orbit (departure burn at periapsis from the parking
    orbit); ``"unstable"``: departure from the orbit (insertion burn into the parking orbit).
    Each crossing of the target altitude by the periapsis map is refined in the departure
    phase by Brent's method to the altitude within 1 m.

    Raises
    ------
    NoSolutionError
        No trajectory's periapsis reaches the altitude (the message gives the lowest found).
    """
    system = orbit.system
    p = primary_index(system, primary)
    if not (math.isfinite(altitude_km) and altitude_km >= 0):
        raise InputError(f"parking altitude {altitude_km!r} km must be a non-negative number")
    pm = pmap or periapsis_map(orbit, p, stability, branch, n_points, t_max=t_max,
                               step_km=step_km, progress=progress)
    alt = pm.altitude_km
    n = len(alt)
    ok = np.isfinite(alt)
    if not ok.any():
        raise NoSolutionError(f"no trajectory of the {stability} {branch} manifold passes a "
                              f"periapsis about {system.names[p]} within {system.days(t_max):.1f} "
                              "days; try the other branch or a longer time limit")
    brackets = []
    for i in range(n):
        j = (i + 1) % n
        if ok[i] and ok[j] and (alt[i] - altitude_km) * (alt[j] - altitude_km) <= 0:
            brackets.append((i, j))
    if not brackets:
        lo, hi = float(np.nanmin(alt)), float(np.nanmax(alt))
        near = lo if lo > altitude_km else hi
        raise NoSolutionError(
            f"no periapsis of the {stability} {branch} manifold of {pm.origin} reaches "
            f"{altitude_km:g} km above {system.names[p]}: the periapses found span "
            f"{lo:.1f}..{hi:.1f} km (nearest feasible altitude {near:.1f} km)")
    sign = 1.0 if stability == "unstable" else -1.0
    sec = apsis(system, p, "periapsis")
    T = orbit.period
    within = pm.within

    def solve(t):
        _, _, _, starts, _, _, _ = manifold_starts(orbit, stability, branch, step_km=step_km,
                                                   times=np.array([t % T]))
        cr = apsides(system, starts, sec, sign * t_max, pm.passage, guard=False,
                     within=within).nth(pm.passage)
        if len(cr) == 0:
            return None
        return starts[0], cr

    def f(t):
        out = solve(t)
        if out is None:
            return np.nan
        cr = out[1]
        r = np.linalg.norm(cr.states[0, :3] - np.array([system.positions[p], 0, 0]))
        return system.km(r) - (system.primary, system.secondary)[p].radius_km - altitude_km

    legs = []
    for i, j in brackets[: max(1, max_legs)]:
        ta = pm.t_orbit[i]
        tb = pm.t_orbit[j] if j > i else pm.t_orbit[j] + T
        try:
            t = brentq(f, ta, tb, xtol=1e-12 * T, rtol=1e-14, maxiter=60)
        except ValueError:
            continue
        start, cr = solve(t)
        legs.append(_parking_leg(system, orbit, p, altitude_km, stability, branch, t, start, cr,
                                 step_km))
    if not legs:
        raise ConvergenceError("periapsis altitude refinement failed in every bracket", 0, [])
    legs.sort(key=lambda g: (g.dv_mps, g.tof))
    return legs


def _parking_leg(system, orbit, p, altitude_km, stability, branch, t_orbit, start, cr, step_km):
    ps = cr.states[0]
    tp = float(cr.t[0])
    info = periapsis_summary(system, ps, p)
    rel, vin = inertial_velocity(system, ps, p)
    unit = vin / np.linalg.norm(vin)
    dvn = info["dv"]
    name = system.names[p]
    parking = f"parking {name} {altitude_km:g}km"
    orbit_name = _describe(orbit)
    if stability == "stable":
        # leave the parking orbit at periapsis (speed up), coast to the orbit
        man = Maneuver(0.0, ps[:3].copy(), dvn * unit, _mps(system, abs(dvn)))
        segs = ((0.0, ps.copy(), float(-tp)),)
        origin, target, kind = parking, orbit_name, "arrival"
    else:
        man = Maneuver(float(tp), ps[:3].copy(), -dvn * unit, _mps(system, abs(dvn)))
        segs = ((0.0, start.copy(), float(tp)),)
        origin, target, kind = orbit_name, parking, "departure"
    details = {"periapsis": info, "t_orbit": t_orbit, "phase": (t_orbit / orbit.period) % 1.0,
               "primary": name, "target_altitude_km": altitude_km, "stability": stability,
               "branch": branch, "jacobi": orbit.jacobi,
               "tof_note": "time from periapsis to the manifold's step-off point on the orbit"}
    if stability == "stable":
        t_arr, d_arr = arrival_time(system, segs, orbit)
    else:
        t_arr, d_arr = abs(tp), math.nan
    return Leg(system, origin, target, (man,), man.dv_mps, abs(tp), ps.copy(), segs,
               "first periapsis of the manifold about the primary, departure phase refined by "
               "Brent's method to the target altitude; tangential burn at periapsis",
               kind, float(info.get("altitude_km", math.inf)), details, t_arr, d_arr)


# ---- transit classification -----------------------------------------------------------------

def transit(cut: Crossings, states, names=("y", "vy")) -> np.ndarray:
    """True for each state (K, 6) on the cut's section, at the tube's energy, that lies inside
    the tube's closed cut in the map ``names`` (a transit orbit, Conley 1968), False outside.

    Raises
    ------
    InputError
        The cut is not closed (some tube trajectories did not reach the section).
    """
    if not cut.closed:
        raise InputError("the tube's cut is not a closed curve (not every trajectory reached the "
                         "section); grow it to a section nearer the orbit")
    s = np.atleast_2d(np.asarray(states, dtype=float))
    from .sections import map_coordinate
    pts = np.column_stack([map_coordinate(cut.system, cut.section, s, np.zeros(len(s)), n)
                           for n in names])
    return cut.contains(pts, names)


def necks_open(system, jacobi_value, points=("L1", "L2")):
    """Raise NoSolutionError unless the energy is above that of each named Lagrange point
    (C below C(Li)), so the necks at those points are open (Koon et al. 2011, §2.4)."""
    from .manifolds import _lagrange_jacobi
    for pt in points:
        c = _lagrange_jacobi(system, pt)
        if not jacobi_value < c:
            raise NoSolutionError(
                f"Jacobi constant {jacobi_value:.6f} is not below C({pt}) = {c:.6f}: the {pt} neck "
                f"is closed; the nearest feasible value is just below {c:.6f}")
