"""Optimised orbit-to-orbit transfers: the least total Δv between two periodic orbits of one
system with two or three impulses, by direct optimisation in the CR3BP.

Problem
-------
Unknowns (the vector ``z``): the departure phase ``tau_a`` on the departure orbit and the
arrival phase ``tau_b`` on the arrival orbit (fractions of each period), the state at the start
of each of ``n`` shooting segments and each segment's duration. Impulses: at departure (the
first segment's velocity minus the orbit's at ``tau_a``), at insertion (the orbit's velocity at
``tau_b`` minus the last segment's end velocity) and, with three impulses, at one segment
boundary (the mid-course impulse, at a time the optimiser chooses through the durations).

Constraints (equalities): the first segment starts at the orbit's position at ``tau_a``, every
segment ends where the next starts (all six components; position only where the mid-course
impulse acts), the last ends at the arrival orbit's position at ``tau_b``. Inequality: the
total time of flight at most the cap. Objective: the sum of the impulses' magnitudes
(each norm smoothed as ``sqrt(|dv|^2 + eps^2)`` so its gradient exists at zero).

This is direct transcription by multiple shooting (Betts, *Practical Methods for Optimal
Control and Estimation Using Nonlinear Programming*, 2nd ed., 2010, §4.4 and §4.6; for the
CR3BP: Pavlak, *Trajectory Design and Orbit Maintenance Strategies in Multi-Body Dynamical
Regimes*, PhD thesis, Purdue University, 2013, ch. 3). Every gradient is analytic: the
defects' derivatives are the segments' state transition matrices (compiled DOP853 with the
variational equations, tolerance 1e-12), the derivatives with respect to durations and phases
are the vector field. The nonlinear programme is solved by sequential least squares
quadratic programming (scipy's SLSQP; Kraft, "A software package for sequential quadratic
programming", DLR-FB 88-28, 1988).

Starts
------
The optimiser starts from what the tool already has: a manifold patch (a
:class:`cr3bp.transfers.leg.Leg` from :func:`cr3bp.tubes.connections.connect`: its unstable
and stable arcs become the segments, its patch impulse the mid-course impulse) or, if there is
none, the cheapest two-impulse targeted leg over a sweep of departure and arrival phases and
times of flight (:func:`sweep_start`, each leg by :func:`cr3bp.transfers.targeting.solve_departure`).
The result never costs more than its start: when the optimiser fails or finds nothing cheaper,
the start itself is returned, marked as such (``solution`` = "patch" or "first guess").

Optimality check
----------------
Lawden's primer vector (Lawden, *Optimal Trajectories for Space Navigation*, 1963, ch. 3):
along an optimal impulsive transfer the primer ``p(t)`` equals the unit Δv direction at each
impulse and ``|p| <= 1`` on every coast. Between two impulses ``[p, p']`` obeys the
variational equations (in the rotating frame, with the same STM), so ``p`` on a coast follows
from its two end values; :func:`primer_check` samples ``|p|`` along each coast.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import minimize

from ..dynamics import acceleration, jacobi
from ..errors import ConvergenceError, InputError, NoSolutionError, StateError
from ..validate import positive_number
from ..integrate import propagate
from ..io.plain import plain as _plain
from ..threads import serial
from .leg import Leg, Maneuver

RTOL = ATOL = 1e-12
#: Longest shooting segment, TU (about 2.2 days in Earth-Moon): short enough that the halo
#: orbits' instability (a factor of ~1500 per period) stays well conditioned in each STM.
SEGMENT_TU = 0.5
#: Fewest and most shooting segments of a transfer.
MIN_SEGMENTS, MAX_SEGMENTS = 4, 40
#: Shortest segment allowed, TU.
MIN_SEGMENT_TU = 1e-3
#: Smoothing of the impulse norms, LU/TU (~1 mm/s in Earth-Moon).
SMOOTH = 1e-6
#: Largest defect (position LU, velocity LU/TU) accepted in an optimised transfer; 1e-9 LU is
#: about 0.4 m in Earth-Moon.
DEFECT_TOL = 1e-9
#: An accepted transfer's defects are then polished to this (Newton steps on the defects alone):
#: a coast's instability multiplies a segment's defect on the way to the next burn (about 1.4e5
#: over the 21-day coast between the L1 and L2 quasi-halo tori, measured), and a defect of
#: 1e-9 LU there left a coast 12 m to 350 m short of its burn when re-propagated whole.
POLISH_TOL = 1e-12
#: SLSQP iterations in all, per restarted round, and the objective tolerance (the objective
#: is the total Δv divided by the start's); a round that gains less than STALL of the cost
#: ends the search.
MAX_ITERATIONS = 1500
ROUND = 100
FTOL = 1e-10
STALL = 1e-4
#: ... or less than this, m/s (LU/TU scaled alike without units): near-zero transfers (a
#: heteroclinic approached as the time of flight grows) creep on without it.
STALL_MPS = 1e-3
#: An impulse below this (m/s) counts as none in the primer check.
NEGLIGIBLE_MPS = 0.05
#: The primer check passes while ``|p|`` on the coasts stays below 1 + this.
PRIMER_SLACK = 1e-3
#: A bound or the TOF cap counts as active within this fraction of its value.
ACTIVE_FRACTION = 1e-6
#: Phases (each orbit) and times of flight (fractions of the cap) of the sweep start.
SWEEP_PHASES = 8
SWEEP_TOF_FRACTIONS = (0.15, 0.3, 0.5, 0.8)
#: Default cap on the time of flight: this many times the start's, and at least this many
#: periods of the longer orbit.
DEFAULT_TOF_FACTOR = 1.5
DEFAULT_TOF_PERIODS = 2.0
SOLUTIONS = ("optimised", "patch", "first guess")
IMPULSES = (2, 3)


# ---- the two orbits as functions of phase ----------------------------------------------------

class _OrbitPoints:
    """A periodic orbit's state at a phase (fraction of its period) and its derivative."""

    SAMPLES = 64

    def __init__(self, orbit):
        self.orbit = orbit
        self.system = orbit.system
        self.period = float(orbit.period)
        te = np.linspace(0.0, self.period, self.SAMPLES + 1)
        arc = propagate(self.system, orbit.state, self.period, rtol=RTOL, atol=ATOL, t_eval=te)
        self.samples = arc.states
        self.cache = {}

    def at(self, phase):
        """(state (6,), d state / d phase (6,)) at ``phase`` (any real; taken modulo 1)."""
        ph = float(phase) % 1.0
        hit = self.cache.get(ph)
        if hit is not None:
            return hit
        k = min(int(ph * self.SAMPLES), self.SAMPLES - 1)
        dt = (ph - k / self.SAMPLES) * self.period
        s = self.samples[k] if dt == 0.0 else propagate(self.system, self.samples[k], dt, rtol=RTOL,
                                                           atol=ATOL).final_state
        out = (np.array(s), self.period * acceleration(self.system.mu, s))
        if len(self.cache) > 4096:
            self.cache.clear()
        self.cache[ph] = out
        return out

    dim = 1

    def point(self, phase):
        """(state (6,), d state / d phase (6, 1)); ``phase``: a number or a sequence of one."""
        s, d = self.at(np.ravel(phase)[0])
        return s, d[:, None]

    def reduce(self, phase) -> float:
        """The phase taken modulo 1 (the value reported)."""
        return float(np.ravel(phase)[0]) % 1.0

    def origin(self, phase):
        """(a state, a time TU): propagating the state over the time reaches the point at ``phase``."""
        return self.orbit.state, self.reduce(phase) * self.period


class _TorusPoints:
    """A quasi-periodic torus's state at a phase pair ``(s, q)`` and its derivatives:
    ``W(s, q) = phi_{sT}(u(2 pi q))``, ``s`` the fraction of the stroboscopic time ``T`` and
    ``q`` the circle angle in turns (the torus function of Olikara & Scheeres, AAS 12-361, 2012,
    §II). ``dW/ds = T f(W)``, ``dW/dq = 2 pi Phi(sT, 0) u'(2 pi q)``; ``s`` is brought into
    [0, 1) by ``W(s + k, q) = W(s, q + k rho / 2 pi)``."""

    dim = 2

    def __init__(self, torus):
        from ..tori import circle        # lazy: import cycle (tori imports transfers for its legs)
        self.orbit = torus
        self.system = torus.system
        self.period = float(torus.stroboscopic_time)
        self.turn = float(torus.rotation) / (2 * math.pi)
        self.circle = circle
        self.du = circle.derivative(torus.circle)
        self.cache = {}

    def reduce(self, phase):
        s, q = (float(v) for v in np.ravel(phase)[:2])
        k = math.floor(s)
        return (s - k, (q + k * self.turn) % 1.0)

    def origin(self, phase):
        s, q = self.reduce(phase)
        return self.circle.evaluate(self.orbit.circle, [2 * math.pi * q])[0], s * self.period

    def point(self, phase):
        key = self.reduce(phase)
        hit = self.cache.get(key)
        if hit is not None:
            return hit
        s, q = key
        u = self.circle.evaluate(self.orbit.circle, [2 * math.pi * q])[0]
        du = self.circle.evaluate(self.du, [2 * math.pi * q])[0] * 2 * math.pi
        if s > 0.0:
            arc = propagate(self.system, u, s * self.period, stm=True, rtol=RTOL, atol=ATOL)
            w, dq = np.array(arc.final_state), arc.stm @ du
        else:
            w, dq = np.array(u), du
        out = (w, np.column_stack([self.period * acceleration(self.system.mu, w), dq]))
        if len(self.cache) > 4096:
            self.cache.clear()
        self.cache[key] = out
        return out


def _points(end):
    """A periodic orbit's or a torus's states as functions of phase."""
    return _TorusPoints(end) if hasattr(end, "stroboscopic_time") else _OrbitPoints(end)


def _phase(value):
    """A phase as plain data: a float (orbit) or a list of two floats (torus: s, q)."""
    v = np.ravel(np.asarray(value, dtype=float))
    return float(v[0]) if v.size == 1 else [float(x) for x in v]


# ---- the start ---------------------------------------------------------------------------------

@dataclass(frozen=True)
class Start:
    """Where the optimiser starts: a transfer the tool already has.

    Attributes
    ----------
    solution : "patch" (a manifold patch) or "first guess" (a two-impulse targeted leg)
    dv_mps : float                the start's own total Δv (CR3BP)
    phase_from, phase_to : float  departure / arrival phase (fractions of each period; at a
                                  torus the pair ``(s, q)``: fraction of the stroboscopic time,
                                  circle angle in turns)
    arcs : tuple of (state (6,), duration TU)  ballistic arcs in time order, an impulse
                                  between consecutive arcs
    method : str                  how the start was made, in words

    Parameters
    ----------
    solution : str
        "patch" or "first guess".
    dv_mps : float
        The start's own total Δv, m/s (CR3BP).
    phase_from, phase_to : float
        Departure and arrival phases, fractions of each orbit's period.
    arcs : tuple of (ndarray (6,), float)
        Ballistic arcs (initial state, duration TU) in time order.
    method : str
        How the start was made, in words.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.transfers.optimise import Start
    >>> s = Start("first guess", 812.5, 0.25, 0.5, ((np.zeros(6), 1.5), (np.ones(6), 0.5)), "by hand")
    >>> s.tof
    2.0

    References
    ----------
    Common practice (the start of a direct transcription: Betts 2010, §4.4).
    """

    solution: str
    dv_mps: float
    phase_from: float
    phase_to: float
    arcs: tuple
    method: str

    @property
    def tof(self) -> float:
        return float(sum(d for _, d in self.arcs))

    def to_dict(self, system) -> dict:
        return {"solution": self.solution, "dv_mps": float(self.dv_mps), "tof_days": float(system.days(self.tof)),
                "phase_from": _phase(self.phase_from), "phase_to": _phase(self.phase_to), "method": self.method}


def start_from_leg(leg: Leg) -> Start:
    """A manifold patch (:func:`cr3bp.tubes.connections.connect`) as a :class:`Start`: the
    unstable arc from the step-off point, the patch impulse, the stable arc to the arrival
    orbit.

    Parameters
    ----------
    leg : cr3bp.transfers.leg.Leg
        An orbit-to-orbit manifold patch; its ``details`` carry ``phase_from`` and ``phase_to``.

    Returns
    -------
    Start
        ``solution`` = "patch", the leg's ballistic arcs in time order.

    Raises
    ------
    InputError
        The leg carries no departure/arrival phases (it is not an orbit-to-orbit patch).

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.tubes.connections import connect                      # doctest: +SKIP
    >>> leg = connect(em, orbit_a, orbit_b)[0]                              # doctest: +SKIP
    >>> start_from_leg(leg).solution                                        # doctest: +SKIP
    'patch'
    >>> from types import SimpleNamespace
    >>> from cr3bp.transfers.optimise import start_from_leg
    >>> start_from_leg(SimpleNamespace(details={}))
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: the start leg carries no departure/arrival phases (only orbit-to-orbit manifold patches do)

    References
    ----------
    Common practice (a patched invariant-manifold transfer as an optimiser's start).
    """
    d = leg.details
    if "phase_from" not in d or "phase_to" not in d:
        raise InputError("the start leg carries no departure/arrival phases (only orbit-to-orbit "
                         "manifold patches do)")
    arcs = tuple((np.array(s, dtype=float), float(dur)) for _, s, dur in leg.segments if dur > 0)
    how = f"manifold patch: {leg.method}"
    if "torus_phase_from" in d:          # a torus-to-torus patch: (s, q) at each torus
        ph = tuple(d["torus_phase_from"]), tuple(d["torus_phase_to"])
        if d.get("match") == "state":
            how = f"heteroclinic patch: {leg.method}, positions and velocities matched on {d.get('section')}"
    else:
        ph = float(d["phase_from"]), float(d["phase_to"])
    return Start("patch", float(leg.dv_mps), *ph, arcs, how)


def start_from_record(system, record: dict) -> Start:
    """A leg record of the transfer graph between two orbit nodes (a two-impulse targeted leg
    from one orbit's reference state to the other's, :func:`cr3bp.transfers.targeting.targeted_leg`)
    as a :class:`Start` at phases 0 and 0.

    Parameters
    ----------
    system : System
        The system of the graph (unused beyond the signature; kept for symmetry).
    record : dict
        A leg record (``Leg.record()``) with ``method`` = "targeted", ``patch_states``,
        ``dv_mps`` and ``tof_tu``.

    Returns
    -------
    Start
        ``solution`` = "first guess", one arc from the first patch state.

    Raises
    ------
    InputError
        The record is not a two-impulse targeted leg.

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.optimise import start_from_record
    >>> em = system("earth-moon")
    >>> rec = {"method": "targeted", "patch_states": [[0.8, 0, 0, 0, 0.1, 0]], "dv_mps": 640.0,
    ...        "tof_tu": 2.5}
    >>> s = start_from_record(em, rec)
    >>> s.solution, s.dv_mps, s.tof
    ('first guess', 640.0, 2.5)
    >>> start_from_record(em, {"method": "manifold"})
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: a leg of method 'manifold' is not a two-impulse targeted leg

    References
    ----------
    Common practice.
    """
    if record.get("method") != "targeted" or not record.get("patch_states"):
        raise InputError(f"a leg of method {record.get('method')!r} is not a two-impulse targeted leg")
    s0 = np.array(record["patch_states"][0], dtype=float)
    return Start("first guess", float(record["dv_mps"]), 0.0, 0.0, ((s0, float(record["tof_tu"])),),
                 "two-impulse targeted leg of the transfer graph (orbits' reference states)")


def two_impulse(system, pa: _OrbitPoints, pb: _OrbitPoints, phase_from, phase_to, tof):
    """The two-impulse targeted leg between the orbits at the given phases (a :class:`Start`),
    or None where targeting fails.

    Parameters
    ----------
    system : System
    pa, pb : _OrbitPoints
        The departure and arrival orbits as functions of phase.
    phase_from, phase_to : float
        Departure and arrival phases, fractions of each period.
    tof : float
        Time of flight, TU.

    Returns
    -------
    Start or None
        ``solution`` = "first guess", one arc; None where single shooting does not converge.

    Raises
    ------
    InputError
        From the targeting, for a non-positive time of flight.

    Examples
    --------
    >>> from cr3bp.transfers.optimise import two_impulse, _OrbitPoints     # doctest: +SKIP
    >>> two_impulse(em, _OrbitPoints(a), _OrbitPoints(b), 0.0, 0.5, 3.0).dv_mps   # doctest: +SKIP
    >>> from cr3bp.transfers.optimise import SWEEP_PHASES
    >>> SWEEP_PHASES                              # phases per orbit in the sweep that calls it
    8

    References
    ----------
    Single shooting on the departure velocity (Lambert-type targeting): common practice.
    """
    from .targeting import solve_departure   # lazy: only the sweep needs it
    sa, _ = pa.at(phase_from)
    sb, _ = pb.at(phase_to)
    try:
        v0, _, _ = solve_departure(system, sa[:3], sa[3:], sb[:3], float(tof))
    except ConvergenceError:
        return None
    start = np.concatenate([sa[:3], v0])
    end = propagate(system, start, float(tof), rtol=RTOL, atol=ATOL).final_state
    dv = np.linalg.norm(v0 - sa[3:]) + np.linalg.norm(sb[3:] - end[3:])
    return Start("first guess", float(system.mps(dv)), float(phase_from) % 1.0, float(phase_to) % 1.0,
                 ((start, float(tof)),), "two-impulse targeted leg (single shooting on the departure velocity)")


def sweep_starts(orbit_a, orbit_b, max_tof, phases=SWEEP_PHASES, tof_fractions=SWEEP_TOF_FRACTIONS,
                 _points=None) -> list:
    """The cheapest two-impulse targeted leg for each time of flight (fractions of ``max_tof``,
    TU) over a grid of departure and arrival phases; cheapest first.

    Parameters
    ----------
    orbit_a, orbit_b : PeriodicOrbit
        Departure and arrival orbits (same system).
    max_tof : float
        Cap on the time of flight, TU.
    phases : int
        Phases per orbit (``phases`` x ``phases`` pairs).
    tof_fractions : tuple of float
        Times of flight as fractions of ``max_tof``.

    Returns
    -------
    list of Start
        One per time of flight that converged somewhere, cheapest first.

    Examples
    --------
    >>> starts = sweep_starts(orbit_a, orbit_b, 6.0, phases=4)        # doctest: +SKIP
    >>> from cr3bp.transfers.optimise import SWEEP_TOF_FRACTIONS
    >>> SWEEP_TOF_FRACTIONS
    (0.15, 0.3, 0.5, 0.8)

    References
    ----------
    Common practice (a grid search for a first guess).

    Raises
    ------
    NoSolutionError
        No targeted leg of the grid converged.
    """
    system = orbit_a.system
    pa, pb = _points or (_OrbitPoints(orbit_a), _OrbitPoints(orbit_b))
    best = {}
    for fa in np.arange(phases) / phases:
        for fb in np.arange(phases) / phases:
            for f in tof_fractions:
                s = two_impulse(system, pa, pb, fa, fb, f * max_tof)
                if s is not None and (f not in best or s.dv_mps < best[f].dv_mps):
                    best[f] = s
    if not best:
        raise NoSolutionError(f"no two-impulse leg of the {phases}x{phases} phase sweep converged")
    return sorted(best.values(), key=lambda s: s.dv_mps)


def sweep_start(orbit_a, orbit_b, max_tof, **kw) -> Start:
    """The cheapest leg of :func:`sweep_starts`.

    Parameters
    ----------
    orbit_a, orbit_b : PeriodicOrbit
        Departure and arrival orbits (same system).
    max_tof : float
        Cap on the time of flight, TU.
    **kw
        Passed to :func:`sweep_starts` (``phases``, ``tof_fractions``).

    Returns
    -------
    Start
        The cheapest two-impulse leg of the sweep.

    Raises
    ------
    NoSolutionError
        No targeted leg of the grid converged.

    Examples
    --------
    >>> sweep_start(orbit_a, orbit_b, 6.0).solution                    # doctest: +SKIP
    'first guess'
    >>> from cr3bp.transfers.optimise import sweep_start
    >>> callable(sweep_start)
    True

    References
    ----------
    Common practice (a grid search for a first guess).
    """
    return sweep_starts(orbit_a, orbit_b, max_tof, **kw)[0]


# ---- the nonlinear programme --------------------------------------------------------------------

class _Problem:
    """Variables ``z = [tau_a, tau_b, X_1..X_n (6 each), dt_1..dt_n]``; ``mid``: index of the
    segment boundary where the mid-course impulse acts (between segment ``mid - 1`` and
    ``mid``, 0-based), or None."""

    def __init__(self, pa, pb, n, mid, max_tof, scale):
        self.pa, self.pb = pa, pb
        self.system = pa.system
        self.n, self.mid, self.max_tof, self.scale = n, mid, float(max_tof), float(scale)
        self.ka, self.kb = pa.dim, pb.dim          # phases per end: 1 at an orbit, 2 at a torus
        self.k = self.ka + self.kb
        self.nz = self.k + 7 * n
        self._key = None
        self.evaluations = 0
        unit = 1.0 / self.system.mps(1.0) if self.system.dimensional else 1e-3
        self.stall_floor = STALL_MPS * unit / self.scale

    def unpack(self, z):
        n, k = self.n, self.k
        return z[:self.ka], z[self.ka:k], z[k:k + 6 * n].reshape(n, 6), z[k + 6 * n:]

    def pack(self, ta, tb, xs, dts):
        return np.concatenate([np.ravel(ta), np.ravel(tb), np.ravel(xs), dts])

    def evaluate(self, z):
        key = z.tobytes()
        if key == self._key:
            return self._val
        ta, tb, xs, dts = self.unpack(z)
        # one call per segment (at most MAX_SEGMENTS): the batch integrator's thread start-up
        # costs more than these few short arcs on a loaded two-core machine (measured)
        ys, stms = np.empty((self.n, 6)), np.empty((self.n, 6, 6))
        for i in range(self.n):
            try:
                arc = propagate(self.system, xs[i], float(dts[i]), stm=True, rtol=RTOL, atol=ATOL)
            except StateError as e:          # a trial node inside a primary
                raise _Infeasible(f"shooting segment {i + 1} starts inside a body: {e}", self.evaluations, [], z)
            if arc.status != "time" or not np.all(np.isfinite(arc.final_state)):
                raise _Infeasible(f"shooting segment {i + 1} failed to propagate ({arc.status})",
                                  self.evaluations, [], z)
            ys[i], stms[i] = arc.final_state, arc.stm
        fy = np.array([acceleration(self.system.mu, y) for y in ys])
        xa, fa = self.pa.point(ta)
        xb, fb = self.pb.point(tb)
        self.evaluations += 1
        self._key, self._val = key, (xs, dts, ys, stms, fy, xa, fa, xb, fb)
        return self._val

    # impulses: list of (dv (3,), [(index into z, d dv / d z (3,)) ...]) built on demand
    def impulses(self, z):
        xs, dts, ys, phi, fy, xa, fa, xb, fb = self.evaluate(z)
        n = self.n
        out = []
        dv0 = xs[0, 3:] - xa[3:]
        out.append(("departure", dv0, 0))
        if self.mid is not None:
            m = self.mid
            out.append(("mid-course", xs[m, 3:] - ys[m - 1, 3:], m))
        out.append(("insertion", xb[3:] - ys[n - 1, 3:], n))
        return out

    def fun(self, z):
        return sum(math.sqrt(float(dv @ dv) + SMOOTH * SMOOTH) for _, dv, _ in self.impulses(z)) / self.scale

    def jac(self, z):
        xs, dts, ys, phi, fy, xa, fa, xb, fb = self.evaluate(z)
        n = self.n
        g = np.zeros(self.nz)
        ka, kk = self.ka, self.k
        ix = lambda i: kk + 6 * i
        it = lambda i: kk + 6 * n + i
        for name, dv, k in self.impulses(z):
            u = dv / math.sqrt(float(dv @ dv) + SMOOTH * SMOOTH)
            if name == "departure":
                g[ix(0) + 3:ix(0) + 6] += u
                g[:ka] -= u @ fa[3:]
            elif name == "insertion":
                g[ka:kk] += u @ fb[3:]
                g[ix(n - 1):ix(n - 1) + 6] -= u @ phi[n - 1][3:, :]
                g[it(n - 1)] -= u @ fy[n - 1][3:]
            else:
                g[ix(k) + 3:ix(k) + 6] += u
                g[ix(k - 1):ix(k - 1) + 6] -= u @ phi[k - 1][3:, :]
                g[it(k - 1)] -= u @ fy[k - 1][3:]
        return g / self.scale

    def _rows(self, i):
        return slice(0, 3) if (self.mid is not None and i + 1 == self.mid) else slice(0, 6)

    def eq(self, z):
        xs, dts, ys, phi, fy, xa, fa, xb, fb = self.evaluate(z)
        c = [xs[0, :3] - xa[:3]]
        for i in range(self.n - 1):
            c.append((ys[i] - xs[i + 1])[self._rows(i)])
        c.append(ys[-1, :3] - xb[:3])
        return np.concatenate(c)

    def eq_jac(self, z):
        xs, dts, ys, phi, fy, xa, fa, xb, fb = self.evaluate(z)
        n = self.n
        rows = [3] + [self._rows(i).stop for i in range(n - 1)] + [3]
        J = np.zeros((sum(rows), self.nz))
        ka, kk = self.ka, self.k
        ix = lambda i: kk + 6 * i
        it = lambda i: kk + 6 * n + i
        J[0:3, ix(0):ix(0) + 3] = np.eye(3)
        J[0:3, :ka] = -fa[:3]
        r = 3
        for i in range(n - 1):
            k = rows[i + 1]
            J[r:r + k, ix(i):ix(i) + 6] = phi[i][:k]
            J[r:r + k, it(i)] = fy[i][:k]
            J[r:r + k, ix(i + 1):ix(i + 1) + k] -= np.eye(k)
            r += k
        J[r:r + 3, ix(n - 1):ix(n - 1) + 6] = phi[n - 1][:3]
        J[r:r + 3, it(n - 1)] = fy[n - 1][:3]
        J[r:r + 3, ka:kk] = -fb[:3]
        return J

    def ineq(self, z):
        return np.array([self.max_tof - float(np.sum(self.unpack(z)[3]))])

    def ineq_jac(self, z):
        J = np.zeros((1, self.nz))
        J[0, self.k + 6 * self.n:] = -1.0
        return J

    def bounds(self):
        return ([(None, None)] * (self.k + 6 * self.n)) + [(MIN_SEGMENT_TU, self.max_tof)] * self.n


class _Infeasible(ConvergenceError):
    """A point of the unknowns whose segments cannot be flown (a node inside a primary, an arc
    into one)."""


#: The scaled objective and each defect reported at such a point to SLSQP, whose line search
#: then steps back (measured: the L1 -> L2 Lyapunov transfer at C = 3.15 put a trial node 978 km
#: from the Earth's centre, and the whole optimisation ended in a StateError).
INFEASIBLE_VALUE = 1e6


def _guarded(pbm, z0):
    """SLSQP's functions of ``pbm`` with infeasible points answered by ``INFEASIBLE_VALUE`` (the
    objective and every defect) and zero derivatives instead of an exception."""
    m = pbm.eq(z0).size

    def guard(f, bad):
        def g(z):
            try:
                return f(z)
            except _Infeasible:
                return bad()
        return g
    fun = guard(pbm.fun, lambda: INFEASIBLE_VALUE)
    jac = guard(pbm.jac, lambda: np.zeros(pbm.nz))
    eq = guard(pbm.eq, lambda: np.full(m, INFEASIBLE_VALUE))
    eq_jac = guard(pbm.eq_jac, lambda: np.zeros((m, pbm.nz)))
    return fun, jac, eq, eq_jac


def _feasible(pbm, z):
    try:
        pbm.evaluate(z)
    except _Infeasible:
        return False
    return True


def _segment_counts(durations, n_total):
    """Split ``n_total`` segments over arcs of the given durations (at least one each)."""
    d = np.asarray(durations, dtype=float)
    counts = np.maximum(1, np.round(n_total * d / d.sum()).astype(int))
    while counts.sum() > n_total and counts.max() > 1:
        counts[np.argmax(counts)] -= 1
    return counts


def _initial_guess(pb: _Problem, start: Start, counts, tof_scale):
    """Segment states and durations sampled along the start's arcs (durations scaled by
    ``tof_scale`` <= 1 when the start is longer than the cap)."""
    system = pb.system
    xs, dts = [], []
    for (s0, dur), k in zip(start.arcs, counts):
        te = np.linspace(0.0, dur, k + 1)
        arc = propagate(system, s0, dur, rtol=RTOL, atol=ATOL, t_eval=te)
        xs += list(arc.states[:-1])
        dts += [dur / k * tof_scale] * k
    return pb.pack(start.phase_from, start.phase_to, np.array(xs), np.array(dts))


# ---- the result --------------------------------------------------------------------------------

@dataclass(frozen=True)
class OrbitTransfer:
    """An impulsive transfer between two periodic orbits (CR3BP; times from the departure burn).

    Attributes
    ----------
    system, orbit_from, orbit_to : System and the two PeriodicOrbits
    origin, target : str           the two orbits in words
    solution : "optimised", "patch" or "first guess" (the start returned unchanged)
    maneuvers : tuple of dicts     ``name`` (departure, mid-course, insertion), ``t`` (TU),
                                   ``position`` (LU), ``dv_vector`` (LU/TU, rotating-frame
                                   components), ``state_before`` (6,)
    tof : float                    TU, departure burn to insertion burn
    phase_from, phase_to : float   departure / arrival phase (fractions of each period from the
                                   orbit's initial state; at a torus end the pair ``(s, q)``:
                                   fraction of the stroboscopic time from the invariance circle,
                                   circle angle in turns)
    start : Start
    max_tof : float                the cap on the time of flight, TU
    impulses : int                 impulses allowed (2 or 3)
    iterations : int               SLSQP iterations
    active_bounds : tuple of str   bounds the optimum sits on ("max_tof", "min_segment")
    primer : dict                  the primer-vector check (:func:`primer_check`)
    details : dict                 defects, closure, timing, the optimiser's message

    Parameters
    ----------
    system, orbit_from, orbit_to, origin, target, solution, maneuvers, tof, phase_from, phase_to, start, max_tof, impulses, iterations, active_bounds, primer, details
        As the attributes above; made by :func:`optimise_transfer`, not by hand.

    Examples
    --------
    >>> tr = optimise_transfer(orbit_a, orbit_b, impulses=3)           # doctest: +SKIP
    >>> tr.solution, round(tr.dv_mps, 1), round(tr.tof_days, 2)        # doctest: +SKIP
    >>> from cr3bp.transfers.optimise import SOLUTIONS
    >>> SOLUTIONS
    ('optimised', 'patch', 'first guess')

    References
    ----------
    Betts 2010, §4.4-4.6 (multiple shooting); Lawden 1963, ch. 3 (primer vector).
    """

    system: object
    orbit_from: object
    orbit_to: object
    origin: str
    target: str
    solution: str
    maneuvers: tuple
    tof: float
    phase_from: float
    phase_to: float
    start: Start
    max_tof: float
    impulses: int
    iterations: int = 0
    active_bounds: tuple = ()
    primer: dict = field(default_factory=dict, compare=False)
    details: dict = field(default_factory=dict, compare=False)

    @property
    def optimised(self) -> bool:
        return self.solution == "optimised"

    @property
    def dv_mps(self) -> float:
        return float(sum(self.system.mps(np.linalg.norm(m["dv_vector"])) for m in self.maneuvers))

    @property
    def tof_days(self) -> float:
        return float(self.system.days(self.tof))

    def coasts(self):
        """(t0, state just after the burn at t0, duration) of each coast, in time order."""
        out = []
        for a, b in zip(self.maneuvers[:-1], self.maneuvers[1:]):
            s = np.array(a["state_before"], dtype=float)
            s[3:] += a["dv_vector"]
            out.append((float(a["t"]), s, float(b["t"] - a["t"])))
        return out

    def trajectory(self, n_per_coast: int = 600):
        """Times (TU) and rotating-frame states along the transfer, sampled per coast."""
        ts, ss = [], []
        for t0, s, dt in self.coasts():
            tt = np.linspace(0.0, dt, n_per_coast)
            arc = propagate(self.system, s, dt, rtol=RTOL, atol=ATOL, t_eval=tt)
            ts.append(t0 + arc.t)
            ss.append(arc.states)
        return np.concatenate(ts), np.concatenate(ss)

    def to_dict(self) -> dict:
        s = self.system
        man = [{"name": m["name"], "t_days": float(s.days(m["t"])),
                "dv_mps": float(s.mps(np.linalg.norm(m["dv_vector"]))),
                "position_km": [float(s.km(v)) for v in m["position"]],
                "dv_vector_mps": [float(s.mps(v)) for v in m["dv_vector"]]} for m in self.maneuvers]
        return {
            "model": "cr3bp", "from": self.origin, "to": self.target,
            "solution": self.solution, "optimised": self.optimised,
            "maneuvers": man, "dv_mps": self.dv_mps, "tof_days": self.tof_days,
            "start_dv_mps": float(self.start.dv_mps),
            "start": dict(self.start.to_dict(s), flown_dv_mps=self.details.get("start_flown_dv_mps"),
                          gap_km=self.details.get("start_gap_km")),
            "improvement_mps": float(self.start.dv_mps - self.dv_mps),
            "iterations": int(self.iterations), "active_bounds": list(self.active_bounds),
            "max_tof_days": float(s.days(self.max_tof)), "impulses_allowed": int(self.impulses),
            "phase_from": _phase(self.phase_from), "phase_to": _phase(self.phase_to),
            "primer": _plain(self.primer),
            "position_frame": "rotating frame of the primaries, origin at the barycentre (CR3BP)",
            "details": _plain(self.details),
        }

    def leg(self) -> Leg:
        """This transfer as a :class:`cr3bp.transfers.leg.Leg` (``solution``, ``optimised``
        and ``start`` set)."""
        s = self.system
        mans = tuple(Maneuver(float(m["t"]), np.asarray(m["position"], dtype=float),
                              np.asarray(m["dv_vector"], dtype=float),
                              float(s.mps(np.linalg.norm(m["dv_vector"])))) for m in self.maneuvers)
        segs = tuple(self.coasts())
        mid = [m for m in self.maneuvers if m["name"] == "mid-course"]
        patch = np.array(mid[0]["state_before"] if mid else self.maneuvers[-1]["state_before"], dtype=float)
        return Leg(s, self.origin, self.target, mans, self.dv_mps, self.tof, patch, segs,
                   f"{self.solution} {len(self.maneuvers)}-impulse transfer (multiple shooting, SLSQP)"
                   if self.optimised else self.start.method,
                   "transfer", _min_altitude_km(s, self), dict(self.to_dict()["details"]),
                   self.tof, math.nan, optimised=self.optimised, solution=self.solution,
                   start=self.start.to_dict(s))


def _min_altitude_km(system, tr: OrbitTransfer) -> float:
    if not system.dimensional:
        return math.inf
    _, st = tr.trajectory(400)
    best = math.inf
    for k in range(2):
        r = system.radii[k]
        if r > 0:
            d = np.linalg.norm(st[:, :3] - np.array([system.positions[k], 0.0, 0.0]), axis=1).min()
            best = min(best, float(system.km(d - r)))
    return best


def _from_start(system, oa, ob, origin, target, start: Start, pa, pb, max_tof, impulses, why, details):
    """The start itself as a result (the optimiser could not improve on it)."""
    sa, _ = pa.point(start.phase_from)
    sb, _ = pb.point(start.phase_to)
    mans, t = [], 0.0
    names = ["departure"] + ["mid-course"] * (len(start.arcs) - 1) + ["insertion"]
    prev_end = sa
    for k, (s0, dur) in enumerate(start.arcs):
        before = np.array(prev_end, dtype=float)
        mans.append({"name": names[k], "t": t, "position": np.array(s0[:3]),
                     "dv_vector": np.asarray(s0[3:]) - before[3:], "state_before": np.concatenate([s0[:3], before[3:]])})
        prev_end = propagate(system, s0, dur, rtol=RTOL, atol=ATOL).final_state
        t += dur
    mans.append({"name": "insertion", "t": t, "position": np.array(prev_end[:3]),
                 "dv_vector": sb[3:] - prev_end[3:], "state_before": np.array(prev_end)})
    d = dict(details, not_optimised=why)
    return OrbitTransfer(system, oa, ob, origin, target, start.solution, tuple(mans), t, pa.reduce(start.phase_from),
                         pb.reduce(start.phase_to), start, max_tof, impulses, details.get("iterations", 0), (), {}, d)


def describe(orbit) -> str:
    """The orbit in words, as the manifold tools write it (:func:`cr3bp.tubes.manifolds.describe`).

    Parameters
    ----------
    orbit : PeriodicOrbit

    Returns
    -------
    str
        A one-line description (family, point, branch, period).

    Raises
    ------
    AttributeError
        ``orbit`` is not a periodic orbit.

    Examples
    --------
    >>> from cr3bp.transfers.optimise import describe
    >>> describe(orbit)                                              # doctest: +SKIP
    >>> describe(None)
    Traceback (most recent call last):
    ...
    AttributeError: ...

    References
    ----------
    Common practice.
    """
    if hasattr(orbit, "stroboscopic_time"):
        from ..tori.manifolds import describe as _t   # lazy: import cycle (tori imports transfers.leg)
        return _t(orbit)
    from ..tubes.manifolds import describe as _d   # lazy: import cycle (tubes imports transfers.leg)
    return _d(orbit)


def optimise_transfer(orbit_from, orbit_to, start: Start | None = None, *, impulses: int = 3,
                      max_tof: float | None = None, segments: int | None = None,
                      progress=None) -> OrbitTransfer:
    """The least-Δv transfer from ``orbit_from`` to ``orbit_to`` with ``impulses`` impulses.

    Parameters
    ----------
    orbit_from, orbit_to : PeriodicOrbit or Torus (same system)
                                   a quasi-periodic torus (:mod:`cr3bp.tori`) at an end adds
                                   its two angles to the unknowns (:class:`_TorusPoints`)
    start : Start, optional        where to begin (:func:`start_from_leg`, :func:`sweep_start`);
                                   default: the phase sweep (two periodic orbits only)
    impulses : {2, 3}              departure and insertion, plus a mid-course impulse with 3
    max_tof : float, optional      cap on the time of flight, TU (default: 1.5 times the start's,
                                   and at least two periods of the longer orbit)
    segments : int, optional       shooting segments (default: one per ``SEGMENT_TU``, 4..40)
    progress : callable(str), optional

    Returns
    -------
    OrbitTransfer
        Never more expensive than ``start``: if the optimiser fails or finds nothing cheaper,
        the start comes back (``solution`` = its own, ``details["not_optimised"]`` says why).

    Raises
    ------
    InputError
        Orbits of different systems, an impulse count other than 2 or 3, a bad cap.
    NoSolutionError
        No start given and the sweep found none.

    Examples
    --------
    >>> tr = optimise_transfer(orbit_a, orbit_b, impulses=3, max_tof=8.0)   # doctest: +SKIP
    >>> tr.primer["satisfied"]                                              # doctest: +SKIP
    True
    >>> from types import SimpleNamespace
    >>> from cr3bp import system
    >>> from cr3bp.transfers.optimise import optimise_transfer
    >>> orbit = SimpleNamespace(system=system("earth-moon"))
    >>> optimise_transfer(orbit, orbit, impulses=4)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: impulses = 4; allowed: 2 or 3

    References
    ----------
    Betts 2010, §4.4-4.6; Pavlak 2013, ch. 3; Kraft 1988 (SLSQP); Lawden 1963 (primer vector).
    """
    system = orbit_from.system
    if orbit_to.system is not system and orbit_to.system.mu != system.mu:
        raise InputError("the two orbits belong to different systems")
    if impulses not in IMPULSES:
        raise InputError(f"impulses = {impulses!r}; allowed: 2 or 3")
    t_clock = time.perf_counter()
    pa, pb = _points(orbit_from), _points(orbit_to)
    if start is None and (pa.dim > 1 or pb.dim > 1):
        raise InputError("a transfer with a torus at either end starts from a manifold patch "
                         "(cr3bp.tori.connections.connect_torus_to_torus); the phase sweep joins "
                         "periodic orbits only")
    floor = DEFAULT_TOF_PERIODS * max(pa.period, pb.period)
    if max_tof is not None:
        max_tof = positive_number("max_tof (TU)", max_tof)
    if start is None:
        cap = max_tof if max_tof is not None else floor
        if progress:
            progress(f"sweeping {SWEEP_PHASES}x{SWEEP_PHASES} phase pairs for two-impulse starts...")
        starts = sweep_starts(orbit_from, orbit_to, cap, _points=(pa, pb))
        results = [optimise_transfer(orbit_from, orbit_to, s, impulses=impulses, max_tof=cap, segments=segments,
                                     progress=progress) for s in starts]
        # the cheapest; within a centimetre per second, the one from the cheaper start
        best = min(results, key=lambda r: (round(r.dv_mps, 2), r.start.dv_mps))
        best.details["sweep_starts_dv_mps"] = [float(s.dv_mps) for s in starts]
        best.details["sweep_results_dv_mps"] = [float(r.dv_mps) for r in results]
        best.details["seconds"] = time.perf_counter() - t_clock
        return best
    if max_tof is None:
        max_tof = max(DEFAULT_TOF_FACTOR * start.tof, floor)
    origin, target = describe(orbit_from), describe(orbit_to)
    start_fits = start.tof <= max_tof * (1 + 1e-12)
    scale = max(start.dv_mps / system.mps(1.0), 1e-4) if system.dimensional else 1.0   # objective ~1 at the start
    tof0 = min(start.tof, max_tof)
    n = segments or int(np.clip(math.ceil(tof0 / SEGMENT_TU), MIN_SEGMENTS, MAX_SEGMENTS))
    if impulses == 3 and len(start.arcs) == 1:        # mid-course impulse starts at zero, mid-way
        s0, d0 = start.arcs[0]
        half = propagate(system, s0, d0 / 2, rtol=RTOL, atol=ATOL).final_state
        arcs = ((s0, d0 / 2), (half, d0 / 2))
        start_used = Start(start.solution, start.dv_mps, start.phase_from, start.phase_to, arcs, start.method)
    else:
        start_used = start
    counts = _segment_counts([d for _, d in start_used.arcs], n)
    n = int(counts.sum())
    mid = int(counts[0]) if (impulses == 3 and len(start_used.arcs) >= 2) else None
    pbm = _Problem(pa, pb, n, mid, max_tof, scale)
    z0 = _initial_guess(pbm, start_used, counts, min(1.0, max_tof / start.tof))
    details = {"segments": n, "start_tof_days": float(system.days(start.tof)) if system.dimensional else None}
    if progress:
        progress(f"optimising: {n} shooting segments, {pbm.nz} variables, {impulses} impulses...")
    try:
        z, iterations, message, converged = _solve(pbm, z0)
        defect = float(np.max(np.abs(pbm.eq(z))))
    except ConvergenceError as e:
        z, defect, iterations, message, converged = None, math.inf, 0, str(e), False
    details.update({"iterations": iterations, "optimiser_message": message, "converged": converged,
                    "defect_max": defect, "evaluations": pbm.evaluations})
    # the start flown as it is: from the departure orbit at its phase to the arrival orbit at
    # its phase (a patch also pays for stepping off and onto the orbits, which its own Δv leaves out)
    flown = _from_start(system, orbit_from, orbit_to, origin, target, start, pa, pb, max_tof, impulses, "", {})
    details["start_flown_dv_mps"] = flown.dv_mps
    details["start_gap_km"] = closure_km(flown)
    result = None
    if z is not None and defect <= DEFECT_TOL:
        z = _polish(pbm, z, tol=POLISH_TOL, or_else=z)
        details["defect_max"] = float(np.max(np.abs(pbm.eq(z))))
        result = _build(system, orbit_from, orbit_to, origin, target, pbm, z, start, max_tof, impulses,
                        iterations, details)
    elif z is not None:
        # polish: the optimiser stopped on its objective with the defects not yet closed
        z2 = _polish(pbm, z)
        if z2 is not None:
            z2 = _polish(pbm, z2, tol=POLISH_TOL, or_else=z2)
            details["defect_max"] = float(np.max(np.abs(pbm.eq(z2))))
            result = _build(system, orbit_from, orbit_to, origin, target, pbm, z2, start, max_tof, impulses,
                            iterations, details)
    limit = max(flown.dv_mps, start.dv_mps)
    if result is None or iterations == 0 or (start_fits and result.dv_mps >= limit):
        why = ("the optimiser did not close its defects: " + message) if result is None else \
            ("the optimiser made no iteration" if iterations == 0 else
             f"the optimiser's {result.dv_mps:.3f} m/s is not below the start's {limit:.3f} m/s")
        result = _from_start(system, orbit_from, orbit_to, origin, target, start, pa, pb, max_tof, impulses,
                             why, details)
    result.details["seconds"] = time.perf_counter() - t_clock
    result.details["closure_km"] = closure_km(result)
    result.primer.update(primer_check(result))
    return result


def _solve(pbm: _Problem, z0):
    """SLSQP in rounds of ``ROUND`` iterations, each restarted from the last point (a fresh
    quasi-Newton Hessian: measured to converge where one long run creeps), until it converges,
    stalls (a round gains less than ``STALL`` of the cost with the defects closed) or has used
    ``MAX_ITERATIONS``. Returns (z, iterations, message, converged)."""
    z, total, f_prev = z0, 0, pbm.fun(z0)
    message, converged = "", False
    fun, jac, eq, eq_jac = _guarded(pbm, z0)
    cons = [{"type": "eq", "fun": eq, "jac": eq_jac},
            {"type": "ineq", "fun": pbm.ineq, "jac": pbm.ineq_jac}]
    with serial(numba_threads=False):     # SLSQP's small dense algebra on one BLAS thread
        while total < MAX_ITERATIONS:
            res = minimize(fun, z, jac=jac, method="SLSQP", bounds=pbm.bounds(), constraints=cons,
                           options={"maxiter": min(ROUND, MAX_ITERATIONS - total), "ftol": FTOL})
            total += int(res.nit)
            if not np.all(np.isfinite(res.x)):
                message = "the optimiser left the finite numbers"
                break
            if not _feasible(pbm, res.x):
                message = "the optimiser ended a round inside a body; the round before kept"
                break
            z, message = res.x, str(res.message)
            closed = float(np.max(np.abs(pbm.eq(z)))) <= DEFECT_TOL * 1e3
            if res.status == 0:
                converged = True
                break
            if res.status != 9:               # 9: iteration limit of the round
                break
            if closed and f_prev - res.fun < max(STALL * abs(res.fun), pbm.stall_floor):
                message = (f"stalled: the last round of {ROUND} iterations gained less than {STALL:g} of the "
                           f"cost or {STALL_MPS:g} m/s")
                break
            f_prev = res.fun
    return z, total, message, converged


def _polish(pbm: _Problem, z, iterations=20, tol=DEFECT_TOL, or_else=None):
    """Minimum-norm Newton steps on the defects alone (the objective held by staying close):
    the point with every defect within ``tol``, else ``or_else``."""
    z = z.copy()
    try:
        for _ in range(iterations):
            c = pbm.eq(z)
            if np.max(np.abs(c)) <= tol:
                return z
            J = pbm.eq_jac(z)
            z = z - np.linalg.lstsq(J, c, rcond=None)[0]
        return z if np.max(np.abs(pbm.eq(z))) <= tol else or_else
    except _Infeasible:
        return or_else


def _build(system, oa, ob, origin, target, pbm: _Problem, z, start, max_tof, impulses, iterations, details):
    xs, dts, ys, phi, fy, xa, fa, xb, fb = pbm.evaluate(z)
    ta, tb = pbm.pa.reduce(z[:pbm.ka]), pbm.pb.reduce(z[pbm.ka:pbm.k])
    n = pbm.n
    t_nodes = np.concatenate([[0.0], np.cumsum(dts)])
    mans = [{"name": "departure", "t": 0.0, "position": xa[:3].copy(), "dv_vector": xs[0, 3:] - xa[3:],
             "state_before": np.concatenate([xs[0, :3], xa[3:]])}]
    if pbm.mid is not None:
        m = pbm.mid
        mans.append({"name": "mid-course", "t": float(t_nodes[m]), "position": xs[m, :3].copy(),
                     "dv_vector": xs[m, 3:] - ys[m - 1, 3:], "state_before": np.concatenate([xs[m, :3], ys[m - 1, 3:]])})
    mans.append({"name": "insertion", "t": float(t_nodes[n]), "position": ys[n - 1, :3].copy(),
                 "dv_vector": xb[3:] - ys[n - 1, 3:], "state_before": ys[n - 1].copy()})
    active = []
    tof = float(t_nodes[n])
    if tof >= max_tof * (1 - ACTIVE_FRACTION) - 1e-12:
        active.append("max_tof")
    if np.any(dts <= MIN_SEGMENT_TU * (1 + ACTIVE_FRACTION)):
        active.append("min_segment")
    d = dict(details, jacobi_from=float(jacobi(system.mu, xa)), jacobi_to=float(jacobi(system.mu, xb)))
    return OrbitTransfer(system, oa, ob, origin, target, "optimised", tuple(mans), tof, ta, tb, start,
                         float(max_tof), impulses, iterations, tuple(active), {}, d)


# ---- checks -------------------------------------------------------------------------------------

def closure_km(tr: OrbitTransfer, propagator=None) -> float:
    """Largest position miss (km, or LU for a system without units) when each coast is
    propagated forward from the state after its burn to the next burn, and at the end against
    the arrival orbit at ``phase_to``. ``propagator(system, state, dt) -> final state``
    (default: librate's integrator at 1e-12).

    Parameters
    ----------
    tr : OrbitTransfer
    propagator : callable(system, state, dt) -> ndarray (6,), optional
        An outside propagator for the check (default: librate's at 1e-12).

    Returns
    -------
    float
        The largest position miss, km (LU for a system without units), CR3BP.

    Raises
    ------
    AttributeError
        ``tr`` is not an :class:`OrbitTransfer`.

    Examples
    --------
    >>> closure_km(optimise_transfer(orbit_a, orbit_b)) < 1e-3          # doctest: +SKIP
    True
    >>> from cr3bp.transfers.optimise import closure_km
    >>> closure_km(None)
    Traceback (most recent call last):
    ...
    AttributeError: ...

    References
    ----------
    Common practice (re-propagating each coast to check the transcription).
    """
    s = tr.system
    worst = 0.0
    coasts = tr.coasts()
    for (t0, st, dt), nxt in zip(coasts, tr.maneuvers[1:]):
        end = propagate(s, st, dt, rtol=RTOL, atol=ATOL).final_state if propagator is None else \
            np.asarray(propagator(s, st, dt))
        worst = max(worst, float(np.linalg.norm(end[:3] - np.asarray(nxt["position"]))))
    pts = _points(tr.orbit_to)
    sb = pts.point(tr.phase_to)[0] if propagator is None else np.asarray(propagator(s, *pts.origin(tr.phase_to)))
    worst = max(worst, float(np.linalg.norm(sb[:3] - np.asarray(tr.maneuvers[-1]["position"]))))
    return float(s.km(worst)) if s.dimensional else worst


def primer_check(tr: OrbitTransfer, samples: int = 200) -> dict:
    """Lawden's primer vector along the transfer (Lawden 1963, ch. 3).

    Impulses below ``NEGLIGIBLE_MPS`` are dropped (a ballistic stretch). On each coast between
    two kept impulses at ``t_i``, ``t_j`` with unit directions ``u_i``, ``u_j``: ``p(t_i) = u_i``,
    ``p'(t_i) = B^-1 (u_j - A u_i)`` with ``A``, ``B`` the position blocks of ``Phi(t_j, t_i)``,
    then ``[p, p'](t) = Phi(t, t_i) [p, p'](t_i)``.

    Parameters
    ----------
    tr : OrbitTransfer
    samples : int
        Samples of ``|p|`` per coast.

    Returns
    -------
    dict : ``max_norm_on_coasts``, ``norm_at_impulses`` (1 by construction where an impulse is
    kept), ``primer_rate_jump`` (|p'| jump at a mid-course impulse: zero for an optimal
    interior impulse time), ``satisfied`` (``|p| <= 1 + PRIMER_SLACK`` on every coast), ``note``.

    Raises
    ------
    AttributeError
        ``tr`` is not an :class:`OrbitTransfer`.

    Examples
    --------
    >>> primer_check(tr)["satisfied"]                                    # doctest: +SKIP
    True
    >>> from cr3bp.transfers.optimise import PRIMER_SLACK
    >>> PRIMER_SLACK
    0.001

    References
    ----------
    Lawden, *Optimal Trajectories for Space Navigation*, 1963, ch. 3.
    """
    s = tr.system
    mags = [float(s.mps(np.linalg.norm(m["dv_vector"]))) if s.dimensional else float(np.linalg.norm(m["dv_vector"]))
            for m in tr.maneuvers]
    kept = [k for k, v in enumerate(mags) if v > NEGLIGIBLE_MPS]
    if len(kept) < 2:
        return {"max_norm_on_coasts": None, "norm_at_impulses": [1.0] * len(kept), "primer_rate_jump": None,
                "satisfied": True, "kept_impulses": [tr.maneuvers[k]["name"] for k in kept],
                "note": "fewer than two impulses above the threshold: nothing to check"}
    coasts = tr.coasts()
    # the states along the whole transfer, burns applied, with the STM over each sample step
    worst, rates = 0.0, []
    for a, b in zip(kept[:-1], kept[1:]):
        ma, mb = tr.maneuvers[a], tr.maneuvers[b]
        ua = ma["dv_vector"] / np.linalg.norm(ma["dv_vector"])
        ub = mb["dv_vector"] / np.linalg.norm(mb["dv_vector"])
        # propagate from just after impulse a to impulse b through the coasts between them
        t0, t1 = ma["t"], mb["t"]
        grid = np.linspace(t0, t1, samples + 1)
        phis, states = [np.eye(6)], []
        for (c0, st, dt) in coasts:
            if c0 + dt <= t0 + 1e-14 or c0 >= t1 - 1e-14:
                continue
            local = grid[(grid >= c0 - 1e-14) & (grid <= c0 + dt + 1e-14)] - c0
            local = np.unique(np.concatenate([[0.0], local, [dt]]))
            arc = propagate(s, st, dt, rtol=RTOL, atol=ATOL, t_eval=local)
            for x0, h in zip(arc.states[:-1], np.diff(arc.t)):
                phis.append(propagate(s, x0, float(h), stm=True, rtol=RTOL, atol=ATOL).stm @ phis[-1])
            states.append(arc.states)
        Phi = phis[-1]
        A, B = Phi[:3, :3], Phi[:3, 3:]
        pdot0 = np.linalg.solve(B, ub - A @ ua)
        y0 = np.concatenate([ua, pdot0])
        norms = np.array([np.linalg.norm((P @ y0)[:3]) for P in phis])
        worst = max(worst, float(norms.max()))
        rates.append((np.asarray(pdot0), np.asarray((Phi @ y0)[3:])))
    jump = None
    if len(rates) == 2:
        jump = float(np.linalg.norm(rates[1][0] - rates[0][1]))
    return {"max_norm_on_coasts": worst, "norm_at_impulses": [1.0] * len(kept), "primer_rate_jump": jump,
            "satisfied": bool(worst <= 1.0 + PRIMER_SLACK), "kept_impulses": [tr.maneuvers[k]["name"] for k in kept],
            "note": f"impulses below {NEGLIGIBLE_MPS} m/s dropped; |p| sampled at {samples} points per coast"}
