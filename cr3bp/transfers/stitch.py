"""Stitching a route into one continuous trajectory by multiple shooting.

Each leg of the route brings its patch points (the start states of its shooting segments).
The unknowns are every segment's start state and one time scale per leg; the constraints are
position continuity at every segment boundary, velocity continuity where no maneuver is
declared, the route's start and end positions, and the junction of two legs held at the
node's position. A junction's arrival and departure impulses become one impulse there (so
the stitched Δv never exceeds the legs' sum: |a + b| <= |a| + |b|), and the time scales let
the legs trade time between them, the total not exceeding the route's.

Solution in three steps (multiple shooting with the maneuvers and segment times free: Pavlak
& Howell, "Strategy for optimal, long-duration trajectories in the Earth-Moon system",
AAS 11-515, 2011, and Betts, *Practical Methods for Optimal Control and Estimation Using
Nonlinear Programming*, 2nd ed., 2010, ch. 4 — both from memory):

1. minimum-norm Newton on the constraints (the least-squares step of an underdetermined
   system) from the legs' own patch points;
2. minimisation of the total Δv under those constraints by sequential quadratic programming
   (scipy's SLSQP; the |Δv| norm smoothed by ε² under the square root);
3. minimum-norm Newton again to polish continuity to ``POSITION_TOL_M`` and
   ``VELOCITY_TOL_MMPS`` (physical units, the same in every system).

The optimised answer is kept only if it is feasible and cheaper than step 1's; otherwise
step 1's is returned and the result says why. No feasible point → ConvergenceError.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..dynamics import acceleration, jacobi
from ..errors import ConvergenceError, InputError, NoSolutionError
from ..integrate import propagate, propagate_batch
from .leg import Leg, Maneuver

NEWTON_ITERATIONS = 25
# Tolerances in physical units, the same in every system (in LU they were 4 mm in Earth-Moon
# but 1.5 m in Sun-Earth, where months-long arcs integrated at rtol 1e-12 stall above that)
POSITION_TOL_M = 0.01         # Newton stops when every position mismatch is under 1 cm ...
VELOCITY_TOL_MMPS = 0.01      # ... and every velocity mismatch under 0.01 mm/s,
CONTINUITY_LIMIT_M = 10.0     # or, stalled at the integration's floor, under these limits
VELOCITY_LIMIT_MMPS = 1.0     # (the promise checked on the output: position jumps under 10 m)
STALL_ITERATIONS = 4          # no tenfold decrease over this many iterations: stalled
SMOOTHING = 1e-9          # LU/TU added in quadrature to each |Δv| for the optimiser
TIME_SCALE_BOUNDS = (0.5, 2.0)
SAMPLES_PER_SEGMENT = 40
JUNCTION_GAP = 1e-6       # LU (~0.4 km): legs farther apart at a node cannot be joined
RTOL = ATOL = 1e-12


@dataclass(frozen=True)
class StitchedRoute:
    """One continuous trajectory along a route, with its maneuver table (what :func:`stitch_route`
    returns; CR3BP, rotating frame).

    Parameters
    ----------
    system : System
    nodes : tuple of str
        The names of the nodes it passes, in order (a node met twice, around a phasing coast,
        appears twice).
    times_tu : ndarray (n,)
        Time since the route's start (a maneuver time appears twice: before and after the impulse).
    states : ndarray (n, 6)
        Rotating frame, LU and LU/TU.
    segment : ndarray (n,)
        Shooting segment of each sample.
    maneuvers : tuple of dict
        ``t_days``, ``node``, ``name``, ``trim``, ``position_lu``, ``position_km``,
        ``dv_vector_mps`` (rotating frame), ``dv_mps``, ``jacobi_before``, ``jacobi_after``,
        ``state_after_lu`` (the state just after the impulse).
    dv_total_mps, tof_days : float
        Of the stitched trajectory.
    legs_dv_total_mps, legs_tof_days : float
        The route's legs as computed separately.
    continuity_lu : float
        Largest position jump at any segment boundary.
    min_altitude_km : float
        Lowest altitude over either primary.
    constraints : dict
        Name -> ``{"value", "limit", "holds"}``.
    optimised : bool
        Step 2 ran to its end (see ``note``: whether it lowered the total, or why it did not run).
    note : str
    iterations : dict
        Newton and optimiser iterations, function evaluations.
    model : str
        The model of its states, Δv and times: "CR3BP", or "bicircular" for a route of one
        low-energy leg (:func:`bicircular_route`).
    model_record : dict
        For the bicircular model, what rebuilds it (:func:`cr3bp.bicircular.model_record`: the
        Sun's phase at the route's start and the launch date, if the design had one).

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import EXAMPLE_NODE_LIST, parse_nodes
    >>> from cr3bp.transfers.graph import build_graph
    >>> from cr3bp.transfers.search import best_routes
    >>> em = system("earth-moon")
    >>> nodes = parse_nodes(EXAMPLE_NODE_LIST, em)      # two fixed states, a and b
    >>> built = build_graph(em, nodes, workers=1)
    >>> a, b = (n.id for n in nodes.nodes)
    >>> route = best_routes(built.graph, a, b)[0]
    >>> from cr3bp.transfers.stitch import stitch_route
    >>> st = stitch_route(em, route, optimise=False)
    >>> st.nodes, st.continuity_lu < 1e-9
    (('a', 'b'), True)

    References
    ----------
    Betts, *Practical Methods for Optimal Control and Estimation Using Nonlinear Programming*,
    2nd ed., SIAM, 2010, ch. 4 (multiple shooting); Pavlak & Howell, "Strategy for optimal,
    long-duration trajectories in the Earth-Moon system", AAS 11-515, 2011 (both from memory).
    """

    system: object
    nodes: tuple
    times_tu: np.ndarray
    states: np.ndarray
    segment: np.ndarray
    maneuvers: tuple
    dv_total_mps: float
    tof_days: float
    legs_dv_total_mps: float
    legs_tof_days: float
    continuity_lu: float
    min_altitude_km: float
    constraints: dict
    optimised: bool
    note: str = ""
    iterations: dict = field(default_factory=dict)
    model: str = "CR3BP"
    model_record: dict = field(default_factory=dict)

    @property
    def times_days(self):
        return self.times_tu * self.system.time_days

    def to_plotly(self, orbits=()):
        """A rotatable 3-D plotly figure of the trajectory, its maneuvers and the ``orbits`` it
        joins (rotating frame, CR3BP, caution in the title); needs plotly."""
        from ..plotting.interactive import route_figure   # lazy: heavy library (plotly)
        return route_figure(self, orbits)

    def to_dict(self) -> dict:
        return {"nodes": list(self.nodes), "dv_total_mps": self.dv_total_mps, "tof_days": self.tof_days,
                "legs_dv_total_mps": self.legs_dv_total_mps, "legs_tof_days": self.legs_tof_days,
                "continuity_lu": self.continuity_lu, "continuity_m": self.continuity_lu * self.system.length_km * 1e3,
                "min_altitude_km": self.min_altitude_km, "maneuvers": list(self.maneuvers),
                "constraints": self.constraints, "optimised": self.optimised, "note": self.note,
                "iterations": self.iterations, "samples": int(len(self.times_tu)), "model": self.model,
                "model_record": self.model_record or None,
                "method": ("multiple shooting, minimum-norm Newton then SLSQP on total delta-v" if self.model == "CR3BP"
                           else "the low-energy leg as designed (bicircular model), nothing re-solved")}


class PhasingError(NoSolutionError):
    """Two legs of a route meet a node at different places (different phases of an orbit) and no
    phasing coast can be laid (the orbit's period is unknown).

    Parameters
    ----------
    *args
        The message, as for any exception.

    Examples
    --------
    >>> from cr3bp.transfers.stitch import PhasingError
    >>> from cr3bp.errors import NoSolutionError
    >>> issubclass(PhasingError, NoSolutionError)
    True

    References
    ----------
    Phasing along a periodic orbit between arrival and departure: Koon, Lo, Marsden & Ross,
    *Dynamical Systems, the Three-Body Problem and Space Mission Design*, 2011, ch. 7 (from memory).
    """


class _Problem:
    """The multiple-shooting problem of a chain of legs (see the module docstring)."""

    def __init__(self, system, legs):
        self.system = system
        self.legs = legs
        self.tau0, self.leg_of, x0 = [], [], []
        self.junction = {}            # boundary index k (between segment k and k+1) -> node position
        self.inner_burn = set()       # boundaries inside a leg where it declares a maneuver
        self.inner_name = {}          # such a boundary -> the burn's own name in its leg (e.g. flyby)
        self.start_burn = _has_burn(legs[0], 0.0)
        self.end_burn = _has_burn(legs[-1], legs[-1].tof)
        for i, leg in enumerate(legs):
            times = [float(t) for t in leg.patch_times] + [float(leg.tof)]
            for j, st in enumerate(leg.patch_states):
                self.tau0.append(times[j + 1] - times[j])
                self.leg_of.append(i)
                x0.append(st)
            inner = [(m.t, getattr(m, "name", "")) for m in leg.maneuvers if 0.0 < m.t < leg.tof]
            for tm, burn_name in inner:
                hit = [j for j in range(1, len(times) - 1) if abs(times[j] - tm) <= 1e-9 * max(1.0, tm)]
                if not hit:
                    raise InputError(f"leg {leg.origin or i}: a maneuver at t = {tm:.6g} TU is not "
                                     "at a patch point")
                k_in = len(self.tau0) - len(leg.patch_states) + hit[0] - 1
                self.inner_burn.add(k_in)
                if burn_name:
                    self.inner_name[k_in] = str(burn_name)
            if i + 1 < len(legs):
                gap = float(np.linalg.norm(np.array(leg.arrival_state[:3]) -
                                           np.array(legs[i + 1].departure_state[:3])))
                if gap > JUNCTION_GAP:
                    raise PhasingError(f"legs {i + 1} and {i + 2} meet {gap:.3g} LU apart at "
                                     f"'{leg.target}' (different phases of the orbit); "
                                     "stitching with phasing along an orbit is not available yet")
                self.junction[len(self.tau0) - 1] = (
                    np.array(leg.arrival_state[:3]),
                    _has_burn(leg, leg.tof) or _has_burn(legs[i + 1], 0.0))
        self.K, self.L = len(self.tau0), len(legs)
        self.tau0 = np.array(self.tau0)
        self.leg_of = np.array(self.leg_of)
        self.z0 = np.concatenate([np.ravel(x0), np.ones(self.L)])
        self.s_start = np.array(legs[0].departure_state)
        self.s_end = np.array(legs[-1].arrival_state)
        self._cache_key = None
        self.evaluations = 0
        # Without a burn at the route's end (a manifold arrival) the end state is held whole:
        # with the start and the continuity that is more equations than unknowns (one leg:
        # 6K + 3 > 6K + 1), solvable only as far as the legs themselves are consistent and
        # leaving the optimiser nothing to move. A trim impulse there (zero as laid; then the
        # start if needed) makes the problem square or better, and is reported as a maneuver.
        self.trim_end = self.trim_start = False
        if self.rows() > self.unknowns() and not self.end_burn:
            self.end_burn = self.trim_end = True
        if self.rows() > self.unknowns() and not self.start_burn:
            self.start_burn = self.trim_start = True

    def unknowns(self) -> int:
        return 6 * self.K + self.L

    def rows(self) -> int:
        """Number of constraint equations (see :meth:`constraints`)."""
        n = 3 + (0 if self.start_burn else 3) + (3 if self.end_burn else 6)
        for k in range(self.K - 1):
            burn = (k in self.junction and self.junction[k][1]) or k in self.inner_burn
            n += (3 if burn else 6) + (3 if k in self.junction else 0)
        return n

    # -- propagation of every segment with its STM, cached on z ------------------------
    def segments(self, z):
        key = z.tobytes()
        if key == self._cache_key:
            return self._cache
        X = z[:6 * self.K].reshape(self.K, 6)
        tau = self.tau0 * z[6 * self.K:][self.leg_of]
        # every segment with its STM in one compiled batch (no Python loop over segments), for
        # the Jacobian; the end states from a state-only batch, the propagation the output and
        # its continuity check use. With the STM the step control weighs 42 components, so the
        # state alone is less accurate: on a Sun-Earth LEO-to-halo leg the two end states
        # differed by 5-15 m, and Newton converged on the one the output did not follow
        # (measured; a 10 m continuity promise then failed).
        batch = propagate_batch(self.system, X, tau, rtol=RTOL, atol=ATOL, stm=True)
        ends = np.asarray(propagate_batch(self.system, X, tau, rtol=RTOL, atol=ATOL).states)
        stms = list(np.asarray(batch.stm))
        rates = np.array([acceleration(self.system.mu, e) for e in ends])
        self.evaluations += 1
        self._cache_key, self._cache = key, (X, tau, ends, stms, rates)
        return self._cache

    # -- constraints F(z) = 0 and their Jacobian ---------------------------------------
    def constraints(self, z):
        X, tau, E, P, R = self.segments(z)
        n = z.size
        rows, jac, kinds = [], [], []

        def add(value, parts, comps=slice(0, 3)):
            for r in range(value.size):
                row = np.zeros(n)
                for col, block in parts:
                    row[col] += block[r]
                jac.append(row)
            rows.extend(value)
            kinds.extend([0, 0, 0, 1, 1, 1][comps][:value.size])   # 0: position, 1: velocity

        K6 = 6 * self.K
        add(X[0, :3] - self.s_start[:3], [(slice(0, 3), np.eye(3))])
        if not self.start_burn:
            add(X[0, 3:] - self.s_start[3:], [(slice(3, 6), np.eye(3))], slice(3, 6))
        for k in range(self.K):
            dT = R[k] * self.tau0[k]                                 # d(end state)/d(scale)
            tcol = K6 + self.leg_of[k]
            last = k == self.K - 1
            if not last:
                nxt = slice(6 * (k + 1), 6 * (k + 2))
                burn = (k in self.junction and self.junction[k][1]) or k in self.inner_burn
                comps = slice(0, 3) if burn else slice(0, 6)
                m = 3 if burn else 6
                add(E[k, comps] - X[k + 1, comps],
                    [(slice(6 * k, 6 * k + 6), P[k][comps]), (slice(tcol, tcol + 1), dT[comps][:, None]),
                     (slice(6 * (k + 1), 6 * (k + 1) + m), -np.eye(6)[:m, :m])], comps)
                if k in self.junction:
                    add(X[k + 1, :3] - self.junction[k][0], [(slice(nxt.start, nxt.start + 3), np.eye(3))])
            else:
                comps = slice(0, 3) if self.end_burn else slice(0, 6)
                add(E[k, comps] - self.s_end[comps],
                    [(slice(6 * k, 6 * k + 6), P[k][comps]), (slice(tcol, tcol + 1), dT[comps][:, None])], comps)
        self.kinds = np.array(kinds)
        return np.array(rows), np.array(jac)

    def tolerances(self, pos_m=None, vel_mmps=None):
        """Per constraint row, a tolerance in LU or LU/TU from physical ones (default the
        Newton tolerances :data:`POSITION_TOL_M`, :data:`VELOCITY_TOL_MMPS`)."""
        s = self.system
        pos = (POSITION_TOL_M if pos_m is None else pos_m) / (s.length_km * 1e3)
        vel = (VELOCITY_TOL_MMPS if vel_mmps is None else vel_mmps) / (s.velocity_kms * 1e6)
        return np.where(self.kinds == 1, vel, pos)

    # -- the impulses and the total Δv ------------------------------------------------
    def burns(self, z):
        """[(boundary tag, Δv vector, d(Δv)/dz)] for every declared maneuver."""
        X, tau, E, P, R = self.segments(z)
        n = z.size
        K6 = 6 * self.K
        out = []
        if self.start_burn:
            J = np.zeros((3, n))
            J[:, 3:6] = np.eye(3)
            out.append((-1, X[0, 3:] - self.s_start[3:], J))
        bounds = sorted([(k, burn) for k, (pos, burn) in self.junction.items()] +
                        [(k, True) for k in self.inner_burn])
        for k, burn in bounds:
            if burn:
                J = np.zeros((3, n))
                J[:, 6 * (k + 1) + 3:6 * (k + 1) + 6] = np.eye(3)
                J[:, 6 * k:6 * k + 6] -= P[k][3:]
                J[:, K6 + self.leg_of[k]] -= R[k][3:] * self.tau0[k]
                out.append((k, X[k + 1, 3:] - E[k, 3:], J))
        if self.end_burn:
            k = self.K - 1
            J = np.zeros((3, n))
            J[:, 6 * k:6 * k + 6] = -P[k][3:]
            J[:, K6 + self.leg_of[k]] = -R[k][3:] * self.tau0[k]
            out.append((k, self.s_end[3:] - E[k, 3:], J))
        return out

    def cost(self, z):
        return float(sum(np.linalg.norm(dv) for _, dv, _ in self.burns(z)))

    def smooth_cost(self, z):
        f, g = 0.0, np.zeros(z.size)
        for _, dv, J in self.burns(z):
            m = math.sqrt(float(dv @ dv) + SMOOTHING ** 2)
            f += m
            g += (dv / m) @ J
        return f, g

    def total_time(self, z):
        return float(np.sum(self.tau0 * z[6 * self.K:][self.leg_of]))

    def time_gradient(self, z):
        g = np.zeros(z.size)
        for i in range(self.L):
            g[6 * self.K + i] = float(np.sum(self.tau0[self.leg_of == i]))
        return g


def _has_burn(leg, t) -> bool:
    return any(abs(m.t - t) <= 1e-12 * max(1.0, abs(t)) for m in leg.maneuvers)


def _newton(problem, z):
    """Minimum-norm Newton steps on F(z) = 0 (least-squares solution of J dz = -F)."""
    res = []
    best = None
    for it in range(1, NEWTON_ITERATIONS + 1):
        F, J = problem.constraints(z)
        res.append(float(np.max(np.abs(F))) if F.size else 0.0)
        if not F.size or np.all(np.abs(F) < problem.tolerances()):
            return z, it, res
        # months-long Sun-Earth arcs stall at metres (integration error amplified): accept the
        # best point once stalled if it is within the physical limits
        within = np.all(np.abs(F) < problem.tolerances(CONTINUITY_LIMIT_M, VELOCITY_LIMIT_MMPS))
        if within and (best is None or res[-1] < best[1]):
            best = (z.copy(), res[-1])
        if best is not None and it > STALL_ITERATIONS and min(res[-STALL_ITERATIONS:]) > 0.1 * res[-STALL_ITERATIONS - 1]:
            return best[0], it, res
        dz = np.linalg.lstsq(J, -F, rcond=None)[0]
        if not np.all(np.isfinite(dz)):
            break
        z = z + dz
        lo, hi = TIME_SCALE_BOUNDS
        z[6 * problem.K:] = np.clip(z[6 * problem.K:], lo, hi)
    F, _ = problem.constraints(z)
    s = problem.system
    pos = float(np.abs(F[problem.kinds == 0]).max(initial=0.0)) * s.length_km * 1e3
    vel = float(np.abs(F[problem.kinds == 1]).max(initial=0.0)) * s.velocity_kms * 1e6
    raise ConvergenceError(f"stitching: continuity not reached in {NEWTON_ITERATIONS} Newton iterations "
                           f"(largest mismatch {pos:.3g} m in position, {vel:.3g} mm/s in velocity; "
                           f"tolerances {POSITION_TOL_M:g} m, {VELOCITY_TOL_MMPS:g} mm/s)", len(res), res, z)


PHASING_SAMPLES = 4000    # samples of one period when looking for the departure phase
PHASING_PATCHES = 6       # shooting segments of a phasing coast


def phasing_coast(system, arriving: Leg, leaving: Leg, period_tu: float, patches: int = PHASING_PATCHES) -> Leg:
    """A coast along an orbit from where ``arriving`` ends to where ``leaving`` starts.

    Two legs may meet an orbit at different phases (e.g. a manifold arrival and a departure
    toward the next orbit). The coast propagates from the arrival state for the time ``tau`` in
    (0, 1.2 T] that brings it closest to the departure position (found on a dense sampling of
    the coast and refined by bounded scalar minimisation, scipy's ``minimize_scalar``), and
    declares impulses at both ends (zero at the start as laid) so that the multiple shooting,
    which holds junctions at the node's position, can close the remaining gap and then minimise
    their sum. This is the "stay" edge of the transfer graph, made concrete.

    Parameters
    ----------
    system : System
    arriving, leaving : cr3bp.transfers.leg.Leg
        In shooting form; the coast joins ``arriving.arrival_state`` to ``leaving.departure_state``.
    period_tu : float
        The orbit's period, TU.
    patches : int
        Shooting segments of the coast.

    Returns
    -------
    cr3bp.transfers.leg.Leg
        Solver "stay", kind "phasing", in shooting form.

    Raises
    ------
    PhasingError
        The period is unknown (zero or None).

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import EXAMPLE_NODE_LIST, parse_nodes
    >>> from cr3bp.transfers.graph import build_graph
    >>> from cr3bp.transfers.search import best_routes
    >>> em = system("earth-moon")
    >>> nodes = parse_nodes(EXAMPLE_NODE_LIST, em)      # two fixed states, a and b
    >>> built = build_graph(em, nodes, workers=1)
    >>> a, b = (n.id for n in nodes.nodes)
    >>> route = best_routes(built.graph, a, b)[0]
    >>> from cr3bp.transfers.stitch import phasing_coast
    >>> there, back = built.legs
    >>> coast = phasing_coast(em, there, back, 2.0)
    >>> coast.kind, coast.solver, len(coast.patch_states)
    ('phasing', 'stay', 6)

    References
    ----------
    Brent, *Algorithms for Minimization without Derivatives*, 1973, ch. 5 (the bounded scalar
    minimiser); Koon, Lo, Marsden & Ross, 2011, ch. 7 (coasting along an orbit between legs)
    (both from memory).
    """
    from scipy.optimize import minimize_scalar   # lazy: heavy library
    a = np.asarray(arriving.arrival_state, dtype=float)
    d = np.asarray(leaving.departure_state, dtype=float)
    if not (period_tu and period_tu > 0):
        raise PhasingError(f"legs meet '{arriving.target}' at different phases and its period "
                           "is unknown, so no phasing coast can be laid")
    horizon = 1.2 * float(period_tu)
    t = np.linspace(0.0, horizon, PHASING_SAMPLES)
    arc = propagate(system, a, horizon, rtol=RTOL, atol=ATOL, t_eval=t)
    n = arc.states.shape[0]
    dist = np.linalg.norm(arc.states[:, :3] - d[:3], axis=1)
    skip = max(1, int(0.01 * n))                  # not the trivial start
    k = skip + int(np.argmin(dist[skip:]))
    lo, hi = t[max(k - 1, 0)], t[min(k + 1, n - 1)]

    def gap(tau):
        return float(np.linalg.norm(propagate(system, a, tau, rtol=RTOL, atol=ATOL).final_state[:3] - d[:3]))
    tau = float(minimize_scalar(gap, bounds=(lo, hi), method="bounded", options={"xatol": 1e-10}).x)
    te = np.linspace(0.0, tau, patches + 1)
    path = propagate(system, a, tau, rtol=RTOL, atol=ATOL, t_eval=te)
    end = path.states[-1]
    dv = d[3:] - end[3:]
    name = arriving.target or (arriving.to_id or "")
    dv_mps = float(system.mps(np.linalg.norm(dv)))
    # impulses allowed at both ends (zero at the start as laid): with the junction
    # positions held at the node, a coast without them would be over-determined
    mans = (Maneuver(0.0, a[:3].copy(), np.zeros(3), 0.0, "departure"),
            Maneuver(tau, end[:3].copy(), dv, dv_mps, "arrival"))
    return Leg(system, name, leaving.origin or name, mans, dv_mps, tau, None, ((0.0, a, tau),),
               "phasing coast along the orbit", kind="phasing", min_altitude_km=float("inf"),
               details={"gap_lu": gap(tau)}, solver="stay", patch_times=te[:-1].copy(),
               patch_states=path.states[:-1].copy(), departure_state=a, arrival_state=d, final_state=end.copy(),
               from_id=arriving.to_id, to_id=leaving.from_id)


def with_phasing(system, legs: list, periods: dict | None) -> list:
    """``legs`` with a :func:`phasing_coast` wherever two consecutive legs meet an orbit node at
    different phases.

    Parameters
    ----------
    system : System
    legs : list of cr3bp.transfers.leg.Leg
        In shooting form, in route order.
    periods : dict or None
        Orbit node id -> period (TU); legs meeting elsewhere than at such a node are left as
        they are.

    Returns
    -------
    list of cr3bp.transfers.leg.Leg

    Raises
    ------
    PhasingError
        A period is zero.

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import EXAMPLE_NODE_LIST, parse_nodes
    >>> from cr3bp.transfers.graph import build_graph
    >>> from cr3bp.transfers.search import best_routes
    >>> em = system("earth-moon")
    >>> nodes = parse_nodes(EXAMPLE_NODE_LIST, em)      # two fixed states, a and b
    >>> built = build_graph(em, nodes, workers=1)
    >>> a, b = (n.id for n in nodes.nodes)
    >>> route = best_routes(built.graph, a, b)[0]
    >>> from cr3bp.transfers.stitch import with_phasing
    >>> len(with_phasing(em, list(route.legs), None))
    1

    References
    ----------
    See :func:`phasing_coast`.
    """
    out = [legs[0]]
    for nxt in legs[1:]:
        prev = out[-1]
        gap = float(np.linalg.norm(np.asarray(prev.arrival_state[:3]) - np.asarray(nxt.departure_state[:3])))
        if gap > JUNCTION_GAP and periods and prev.to_id in periods:
            out.append(phasing_coast(system, prev, nxt, periods[prev.to_id]))
        out.append(nxt)
    return out


def stitch_route(system, route, constraints=None, optimise=True, max_iterations=60,
                 periods: dict | None = None) -> StitchedRoute:
    """Stitch ``route`` into one continuous trajectory with re-minimised total Δv.

    Parameters
    ----------
    system : System
    route : Route, or list of cr3bp.transfers.leg.Leg (or of leg records)
        A :class:`cr3bp.transfers.search.Route`, or legs in shooting form; leg records are read
        with :meth:`cr3bp.transfers.leg.Leg.from_record`.
    constraints : cr3bp.transfers.search.Constraints, optional
        Reported as held or not.
    optimise : bool
        Step 2 (SLSQP) on or off.
    max_iterations : int
        SLSQP iterations.
    periods : dict, optional
        Orbit node id -> period (TU): where two legs meet an orbit at different phases, a coast
        along it is laid between them (:func:`phasing_coast`) instead of refusing the route.

    Returns
    -------
    StitchedRoute

    Raises
    ------
    InputError
        No legs, a leg without patch points, or a maneuver off the patch points.
    RecordError
        A leg record lacks a key or holds a bad value.
    PhasingError
        Legs meet an orbit at different phases and no period is known.
    ConvergenceError
        Continuity cannot be reached (carries iterations and residuals).

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import EXAMPLE_NODE_LIST, parse_nodes
    >>> from cr3bp.transfers.graph import build_graph
    >>> from cr3bp.transfers.search import best_routes
    >>> em = system("earth-moon")
    >>> nodes = parse_nodes(EXAMPLE_NODE_LIST, em)      # two fixed states, a and b
    >>> built = build_graph(em, nodes, workers=1)
    >>> a, b = (n.id for n in nodes.nodes)
    >>> route = best_routes(built.graph, a, b)[0]
    >>> from cr3bp.transfers.stitch import stitch_route
    >>> st = stitch_route(em, route)
    >>> st.dv_total_mps <= st.legs_dv_total_mps + 1e-6, st.continuity_lu < 1e-9
    (True, True)

    References
    ----------
    Betts, *Practical Methods for Optimal Control and Estimation Using Nonlinear Programming*,
    2nd ed., SIAM, 2010, ch. 4 (multiple shooting); Pavlak & Howell, "Strategy for optimal,
    long-duration trajectories in the Earth-Moon system", AAS 11-515, 2011 (both from memory). Kraft, "A software package for sequential quadratic programming",
    DFVLR-FB 88-28, 1988 (SLSQP).
    """
    legs = [leg if isinstance(leg, Leg) else Leg.from_record(leg, system) for leg in getattr(route, "legs", route)]
    if not legs:
        raise InputError("a route to stitch needs at least one leg")
    for leg in legs:
        if not leg.in_shooting_form:
            raise InputError(f"leg {leg.origin or leg.from_id} -> {leg.target or leg.to_id} carries no patch "
                             "points to stitch")
    if any(leg.model_of() is not None for leg in legs):
        if len(legs) != 1:
            raise PhasingError("a route that joins a low-energy leg (designed in the bicircular model) to further "
                               "legs is not stitched: the stitcher's multiple shooting is in the CR3BP; each leg "
                               "is reported on its own")
        return bicircular_route(system, legs[0], constraints)
    legs = with_phasing(system, legs, periods)
    p = _Problem(system, legs)
    T0 = p.total_time(p.z0)
    z1, it1, res1 = _newton(p, p.z0.copy())
    cost1 = p.cost(z1)
    z, note, optimised, it2 = z1, "", False, 0
    free = p.unknowns() - int(np.linalg.matrix_rank(p.constraints(z1)[1]))
    if not optimise:
        note = "not optimised (switched off): the continuity solution"
    elif free <= 0:
        note = (f"not optimised: the constraints ({p.rows()} equations on {p.unknowns()} unknowns) leave no "
                "free direction, so the total Δv is the continuity solution's")
    if optimise and free > 0:
        from scipy.optimize import minimize   # lazy: heavy library
        lo, hi = TIME_SCALE_BOUNDS
        bounds = [(None, None)] * (6 * p.K) + [(lo, hi)] * p.L
        cons = [{"type": "eq", "fun": lambda q: p.constraints(q)[0], "jac": lambda q: p.constraints(q)[1]},
                {"type": "ineq", "fun": lambda q: T0 - p.total_time(q), "jac": lambda q: -p.time_gradient(q)}]
        try:
            sol = minimize(p.smooth_cost, z1, jac=True, method="SLSQP", bounds=bounds, constraints=cons,
                           options={"maxiter": max_iterations, "ftol": 1e-12})
            it2 = int(sol.nit)
            z2, _, _ = _newton(p, np.array(sol.x))
            cost2 = p.cost(z2)
            if cost2 < cost1 and p.total_time(z2) <= T0 * (1 + 1e-12):
                z, optimised = z2, True
                note = f"optimised by SLSQP ({sol.message})"
            elif not sol.success:
                note = f"not optimised: SLSQP stopped ({sol.message}); the continuity solution is kept"
            else:
                note = f"optimised: SLSQP found no lower total ({sol.message}); the continuity solution is kept"
                optimised = True
        except (ConvergenceError, ValueError, np.linalg.LinAlgError) as e:
            note = f"not optimised: the optimisation step failed ({e}); the continuity solution is kept"
    if p.trim_end or p.trim_start:
        where = " and ".join(w for w, f in (("start", p.trim_start), ("end", p.trim_end)) if f)
        note += (f"; a trim impulse at the route's {where} (none declared there) keeps the problem from being "
                 "over-determined")
    return _result(system, p, z, legs, constraints, optimised, note,
                   {"newton": it1, "optimiser": it2, "evaluations": p.evaluations})


def _result(system, p, z, legs, constraints, optimised, note, iterations):
    F, _ = p.constraints(z)
    X, tau, E, _, _ = p.segments(z)
    starts = np.concatenate([[0.0], np.cumsum(tau)])
    times, states, seg = [], [], []
    cont = 0.0
    for k in range(p.K):
        te = np.linspace(0.0, tau[k], SAMPLES_PER_SEGMENT)
        arc = propagate(system, X[k], tau[k], rtol=RTOL, atol=ATOL, t_eval=te)
        times.append(starts[k] + arc.t)
        states.append(arc.states)
        seg.append(np.full(arc.t.size, k))
        if k + 1 < p.K:
            cont = max(cont, float(np.linalg.norm(arc.states[-1, :3] - X[k + 1, :3])))
    cont = max(cont, float(np.linalg.norm(X[0, :3] - p.s_start[:3])),
               float(np.linalg.norm(E[-1, :3] - p.s_end[:3])))
    if cont * system.length_km * 1e3 > CONTINUITY_LIMIT_M:
        raise ConvergenceError(f"stitched trajectory has a position jump of {cont * system.length_km * 1e3:.3g} m "
                               f"(limit {CONTINUITY_LIMIT_M:g} m)", 0, [cont], z)
    times, states, seg = np.concatenate(times), np.concatenate(states), np.concatenate(seg)
    names = [legs[0].origin] + [leg.target for leg in legs]
    boundary_node = {-1: names[0], p.K - 1: names[-1]}
    for k, i in zip(sorted(p.junction), range(1, len(names) - 1)):
        boundary_node[k] = names[i]
    man = []
    for k, dv, _ in p.burns(z):
        t = 0.0 if k == -1 else float(starts[k + 1])
        pos = X[0, :3] if k == -1 else E[k, :3]
        before = p.s_start if k == -1 else E[k]
        after = np.concatenate([before[:3], before[3:] + dv])
        trim = (k == -1 and p.trim_start) or (k == p.K - 1 and p.trim_end)
        man.append({"t_days": t * system.time_days, "node": boundary_node.get(k, "patch point"),
                    "name": p.inner_name.get(k) or maneuver_name(k, p.K, k in p.junction), "trim": bool(trim),
                    "position_lu": pos.tolist(), "position_km": (pos * system.length_km).tolist(),
                    "dv_vector_mps": [float(system.mps(v)) for v in dv], "dv_mps": float(system.mps(float(np.linalg.norm(dv)))),
                    "state_after_lu": after.tolist(),
                    "jacobi_before": float(jacobi(system.mu, before)),
                    "jacobi_after": float(jacobi(system.mu, after))})
    dv_total = float(sum(m["dv_mps"] for m in man))
    tof_days = float(starts[-1] * system.time_days)
    alt = math.inf
    for k in range(2):
        if system.radii[k] > 0:
            d = np.linalg.norm(states[:, :3] - np.array([system.positions[k], 0.0, 0.0]), axis=1).min()
            alt = min(alt, (d - system.radii[k]) * system.length_km)
    checks = {}
    if constraints is not None:
        for name, value in (("max_dv_mps", dv_total), ("max_tof_days", tof_days), ("min_altitude_km", alt),
                            ("max_legs", len(legs))):
            limit = getattr(constraints, name)
            if limit is not None:
                holds = value >= limit if name == "min_altitude_km" else value <= limit
                checks[name] = {"value": value, "limit": limit, "holds": bool(holds)}
    return StitchedRoute(system, tuple(names), times, states, seg, tuple(man), dv_total, tof_days,
                         float(sum(leg.dv_mps for leg in legs)), float(sum(leg.tof_days for leg in legs)),
                         cont, float(alt), checks, optimised, note, iterations)


def maneuver_name(k: int, n_segments: int, junction: bool) -> str:
    """What a burn of a stitched route is, by where it sits: ``departure`` (the route's start),
    ``insertion`` (its end), ``junction`` (where two legs meet at a node), ``correction`` (a
    patch point inside a leg). A burn a leg declares with its own name (a lunar-flyby
    departure's ``flyby``) keeps that name instead (the stitcher looks it up first).

    Parameters
    ----------
    k : int
        Boundary index (-1: the route's start; ``k``: after shooting segment ``k``).
    n_segments : int
        Shooting segments of the route.
    junction : bool
        The boundary is a node between two legs.

    Returns
    -------
    str

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.transfers.stitch import maneuver_name
    >>> [maneuver_name(k, 4, k == 1) for k in (-1, 0, 1, 3)]
    ['departure', 'correction', 'junction', 'insertion']

    References
    ----------
    Common practice (naming impulses by their place on a transfer).
    """
    if k == -1:
        return "departure"
    if k == n_segments - 1:
        return "insertion"
    return "junction" if junction else "correction"


def bicircular_route(system, leg: Leg, constraints=None) -> StitchedRoute:
    """A route of one low-energy leg (its details name the bicircular model,
    :meth:`cr3bp.transfers.leg.Leg.model_of`) as a :class:`StitchedRoute`: its shooting segments
    propagated in that model from their own start times, its departure and insertion burns the
    route's maneuvers. Nothing is re-solved: the leg is continuous in its model to its design's
    closure, which ``continuity_lu`` reports.

    Parameters
    ----------
    system : System
        The Earth-Moon system of the leg.
    leg : Leg
        A low-energy leg in shooting form (:func:`cr3bp.transfers.low_energy.as_leg`).
    constraints : cr3bp.transfers.search.Constraints, optional
        Reported as held or not.

    Returns
    -------
    StitchedRoute
        Its ``note`` names the model; every maneuver carries ``model = "bicircular"``.

    Raises
    ------
    InputError
        The leg is not a low-energy leg in shooting form.

    Examples
    --------
    >>> from cr3bp.transfers.stitch import bicircular_route                # doctest: +SKIP
    >>> st = bicircular_route(em, leg)                                      # doctest: +SKIP
    >>> [m["name"] for m in st.maneuvers]                                   # doctest: +SKIP
    ['departure', 'insertion']

    References
    ----------
    Boudad, Howell & Davis, Adv. Space Res. 66, 2020, section 2 (the model); Parker & Anderson,
    *Low-Energy Lunar Trajectory Design*, 2013, ch. 3 (both from memory).
    """
    from .. import bicircular   # lazy: the bicircular model, only for its legs
    model = leg.model_of()
    if model is None or not leg.in_shooting_form:
        raise InputError("bicircular_route takes one low-energy leg in shooting form")
    times, states, seg = [], [], []
    cont = 0.0
    segs = list(leg.segments)
    for k, (t0, s0, dur) in enumerate(segs):
        te = np.linspace(t0, t0 + dur, SAMPLES_PER_SEGMENT * 4)
        arc = bicircular.propagate(model, np.asarray(s0, dtype=float), t0 + dur, rtol=RTOL, atol=ATOL,
                                   t_eval=te, t0=t0)
        times.append(arc.t)
        states.append(arc.states)
        seg.append(np.full(arc.t.size, k))
        nxt = segs[k + 1][1] if k + 1 < len(segs) else leg.final_state
        cont = max(cont, float(np.linalg.norm(arc.states[-1, :3] - np.asarray(nxt, dtype=float)[:3])))
    times, states, seg = np.concatenate(times), np.concatenate(states), np.concatenate(seg)
    man = []
    for m in leg.maneuvers:
        before = np.asarray(leg.departure_state if m.where == "departure" else leg.final_state, dtype=float)
        after = np.concatenate([before[:3], before[3:] + m.dv])
        man.append({"t_days": float(m.t * system.time_days),
                    "node": leg.origin if m.where == "departure" else leg.target,
                    "name": "departure" if m.where == "departure" else "insertion", "trim": False,
                    "position_lu": before[:3].tolist(), "position_km": (before[:3] * system.length_km).tolist(),
                    "dv_vector_mps": [float(system.mps(v)) for v in m.dv], "dv_mps": float(m.dv_mps),
                    "state_after_lu": after.tolist(), "jacobi_before": float(jacobi(system.mu, before)),
                    "jacobi_after": float(jacobi(system.mu, after)), "model": "bicircular"})
    dv_total = float(sum(m["dv_mps"] for m in man))
    tof_days = float(leg.tof * system.time_days)
    alt = float(leg.min_altitude_km)
    checks = {}
    if constraints is not None:
        for name, value in (("max_dv_mps", dv_total), ("max_tof_days", tof_days), ("min_altitude_km", alt),
                            ("max_legs", 1)):
            limit = getattr(constraints, name)
            if limit is not None:
                holds = value >= limit if name == "min_altitude_km" else value <= limit
                checks[name] = {"value": value, "limit": limit, "holds": bool(holds)}
    note = ("one low-energy leg, designed in the bicircular model (Sun-Earth-Moon), not the CR3BP: its "
            "Δv and times are that model's; nothing re-solved (continuity: the design's closure)")
    return StitchedRoute(system, (leg.origin, leg.target), times, states, seg, tuple(man), dv_total, tof_days,
                         float(leg.dv_mps), float(leg.tof_days), cont, alt, checks, True, note,
                         {"newton": 0, "optimiser": 0, "evaluations": 0}, "bicircular",
                         dict(leg.details.get("bicircular", {})))
