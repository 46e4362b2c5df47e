"""From a stitched CR3BP route to an ephemeris-model trajectory with its maneuvers re-optimised.

The route (a :class:`cr3bp.transfers.stitch.StitchedRoute`, or its ``trajectory.csv`` and ``route.json``)
is cut at its interior maneuvers into maneuver-free arcs. Each arc gets patch points (at least
``min_patches`` segments, one more for every ``patch_days`` of flight), taken from the route's
own samples, converted to km, km/s about the central body on J2000 equator axes with the
instantaneous ephemeris anchoring of :mod:`cr3bp.time.frames` (as :mod:`.transition` does).

Unknowns: every patch state (inertial, nondimensional); an arc's last state is the state just
before its maneuver, the next arc's first state the state just after. The start and end
times are held; the interior maneuver times may move (``free_times``), each patch point
keeping its fraction of its arc. Constraints (multiple shooting in the ephemeris model: Pavlak &
Howell, AAS 11-515, 2011, from memory):

* position and velocity continuity between consecutive patch points of an arc;
* position continuity across every declared interior maneuver (the velocity jump is free and
  is that maneuver's Δv); a maneuver at a route node (a junction of two legs) also keeps the
  node's position, a fixed point of the rotating frame converted at the maneuver's (moving)
  time, as :mod:`cr3bp.transfers.stitch` holds it;
* the start position held (and the start velocity too, if the route declares no departure
  maneuver; otherwise the departure Δv is measured from the converted CR3BP pre-burn state);
* the end position held (``hold_end``), with an arrival Δv measured to the converted CR3BP
  post-burn state if the route declares one.

Solution as :mod:`cr3bp.transfers.stitch` does it in the CR3BP: (1) minimum-norm Newton
(``dX = -J^T (J J^T)^{-1} F``; Golub & Van Loan, *Matrix Computations*, 4th ed., 2013,
section 5.6) from the converted route; (2) scipy's SLSQP minimising the summed |Δv| (smoothed
by ε² under the square root) under the continuity constraints; (3) Newton again to polish.
Step 2's answer is kept only if it is feasible and cheaper than step 1's.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
import csv
import json

import numpy as np
from scipy.optimize import minimize

from .. import validate
from ..errors import ConvergenceError, InputError
from . import model as _model
from .newton import solve as _solve
from .transition import TOLERANCE, _central_default, _cr3bp_to_inertial
from ..cautions import CAUTION
from ..time import frames
from .offsets import path_and_timing_offsets

#: One more patch segment per this many days of flight on an arc.
PATCH_DAYS = 1.0
#: Smoothing of |Δv| for the optimiser, VU (as cr3bp.transfers.stitch.SMOOTHING).
SMOOTHING = 1e-9
_TIME_EPS = 1e-9


@dataclass(frozen=True)
class RouteTransition:
    """A stitched route carried into the ephemeris model.

    Parameters
    ----------
    t_tu : ndarray (P,)            patch times, TU from the epoch (a maneuver time twice)
    patches : ndarray (P, 6)       converged patch states, nondimensional inertial
    patches_km : ndarray (P, 6)    the same, km and km/s about the central body, EME2000
    initial_km : ndarray (P, 6)    the CR3BP patch states converted (the first guess)
    arc_of : ndarray (P,)          arc index of each patch point
    arcs : tuple of dict           arc, t_start_days, t_end_days, patches,
                                   max_path_offset_km and max_timing_offset_min (to the
                                   nearest point of the CR3BP route's path, and how far ahead
                                   or behind it), max_same_epoch_separation_km and
                                   max_same_epoch_velocity_diff_mps (at equal epochs: timing
                                   and path mixed, NOT maneuvers)
    maneuvers : tuple of dict      t_days, node, kind (departure/interior/arrival),
                                   dv_cr3bp_mps, dv_mps, dv_vector_kms (EME2000), position_km,
                                   state_before_km, state_after_km (km, km/s about the central body)
    dv_total_cr3bp_mps, dv_total_mps : float
    continuity_km, continuity_mps : largest position / velocity mismatch at a patch point
                                   (velocity: patch points without a declared maneuver)
    sample_t_tu, sample_km, reference_km, sample_arc : dense samples of the ephemeris
                                   trajectory and of the CR3BP route at the same epochs
    iterations : dict; residuals : tuple; optimised : bool; note : str

    Examples
    --------
    >>> rt = transition_route(em, t, x, maneuvers, "2031-03-01T00:00:00 TDB")   # doctest: +SKIP

    References
    ----------
    Pavlak, T. A. & Howell, K. C., "Evolution of the out-of-plane amplitude for quasi-periodic
    trajectories in the Earth-Moon system", Acta Astronautica 81, 456 (2012) (multiple shooting
    into an ephemeris model, from memory).
    """

    model: object
    epoch_tdb_s: float
    t_tu: np.ndarray
    patches: np.ndarray
    patches_km: np.ndarray
    initial_km: np.ndarray
    arc_of: np.ndarray
    arcs: tuple
    maneuvers: tuple
    dv_total_cr3bp_mps: float
    dv_total_mps: float
    continuity_km: float
    continuity_mps: float
    sample_t_tu: np.ndarray
    sample_km: np.ndarray
    reference_km: np.ndarray
    sample_arc: np.ndarray
    iterations: dict
    residuals: tuple
    optimised: bool
    note: str = ""
    options: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        return {
            "model": self.model.to_dict(), "epoch_tdb_s": self.epoch_tdb_s,
            "arcs": [dict(a) for a in self.arcs], "maneuvers": [dict(m) for m in self.maneuvers],
            "dv_total_cr3bp_mps": self.dv_total_cr3bp_mps, "dv_total_mps": self.dv_total_mps,
            "continuity_km": self.continuity_km, "continuity_mps": self.continuity_mps,
            "iterations": dict(self.iterations), "residuals": list(self.residuals),
            "optimised": self.optimised, "note": self.note, "patch_t_tu": self.t_tu.tolist(),
            "patch_arc": self.arc_of.tolist(), "patches_km": self.patches_km.tolist(),
            "options": dict(self.options), "caution": CAUTION,
        }


class _Problem:
    """Constraints and Δv of the patch states ``z`` (flattened (P, 6)); see the module docstring."""

    def __init__(self, model, t, arc_of, start, start_pre, end, end_post, hold_end, held=(), free_times=False):
        self.model, self.t, self.arc_of = model, t, arc_of
        self.held = tuple(held)                    # (patch index, fn(T) -> inertial position, velocity)
        # junction times T_0 .. T_J (arc j spans T_j .. T_j+1); patch i at its fraction of its arc
        J = int(arc_of.max()) + 1
        self.T0 = np.array([t[arc_of == j][0] for j in range(J)] + [t[-1]])
        d = self.T0[arc_of + 1] - self.T0[arc_of]
        self.frac = (t - self.T0[arc_of]) / d
        self.nT = (J - 1) if free_times else 0     # interior junction times free (start, end held)
        self.P = t.size
        same = arc_of[:-1] == arc_of[1:]
        self.seg = np.flatnonzero(same)            # segment k: patch k -> k + 1, within an arc
        self.jump = np.flatnonzero(~same)          # interior maneuver between patch k and k + 1
        self.start, self.start_pre = start, start_pre
        self.end, self.end_post, self.hold_end = end, end_post, hold_end
        self._cache = (None, None)

    def _prop(self, z):
        key, val = self._cache
        if key is not None and np.array_equal(key, z):
            return val
        X = z[:6 * self.P].reshape(self.P, 6)
        k = self.seg
        t = self.times(z)
        ends, phis = _model.propagate_many(self.model, X[k], t[k], t[k + 1], stm=True)
        self._cache = (z.copy(), (ends, phis))
        return ends, phis

    def junctions(self, z):
        T = self.T0.copy()
        if self.nT:
            T[1:-1] = z[6 * self.P:]
        return T

    def times(self, z):
        """Patch times of ``z`` (each patch at its fixed fraction of its arc)."""
        T = self.junctions(z)
        a = self.arc_of
        return T[a] + self.frac * (T[a + 1] - T[a])

    def _time_cols(self, i, n):
        """d t_i / d z (row of length n)."""
        g = np.zeros(n)
        if self.nT:
            j = self.arc_of[i]
            if 1 <= j <= self.nT:
                g[6 * self.P + j - 1] += 1.0 - self.frac[i]
            if 1 <= j + 1 <= self.nT:
                g[6 * self.P + j] += self.frac[i]
        return g

    def constraints(self, z):
        """F(z) and its Jacobian."""
        X = z[:6 * self.P].reshape(self.P, 6)
        ends, phis = self._prop(z)
        n = z.size
        N = 6 * self.P
        t = self.times(z)
        rows, jac = [], []
        for i, k in enumerate(self.seg):
            rows.append(ends[i] - X[k + 1])
            J = np.zeros((6, n))
            J[:, 6 * k:6 * k + 6] = phis[i]
            J[:, 6 * k + 6:6 * k + 12] -= np.eye(6)
            if self.nT:      # dF/dt_k = -Phi f(t_k, x_k), dF/dt_k+1 = f(t_k+1, end_k)
                J += np.outer(-phis[i] @ self.model.acceleration(t[k], X[k]), self._time_cols(k, n))
                J += np.outer(self.model.acceleration(t[k + 1], ends[i]), self._time_cols(k + 1, n))
            jac.append(J)
        for k in self.jump:
            rows.append(X[k, :3] - X[k + 1, :3])
            J = np.zeros((3, n))
            J[:, 6 * k:6 * k + 3] = np.eye(3)
            J[:, 6 * k + 6:6 * k + 9] = -np.eye(3)
            jac.append(J)
        for k, fn in self.held:      # the node co-rotates: its inertial place depends on the time
            pos, vel = fn(t[k])
            rows.append(X[k, :3] - pos)
            J = np.zeros((3, n))
            J[:, 6 * k:6 * k + 3] = np.eye(3)
            if self.nT:
                J -= np.outer(vel, self._time_cols(k, n))
            jac.append(J)
        c = 3 if self.start_pre is not None else 6
        rows.append(X[0, :c] - self.start[:c])
        J = np.zeros((c, n))
        J[:, :c] = np.eye(c)
        jac.append(J)
        if self.hold_end:
            rows.append(X[-1, :3] - self.end[:3])
            J = np.zeros((3, n))
            J[:, N - 6:N - 3] = np.eye(3)
            jac.append(J)
        return np.concatenate(rows), np.vstack(jac)

    def burns(self, z):
        """[(kind, patch index, Δv vector, d(Δv)/dz)] for every declared maneuver."""
        X = z[:6 * self.P].reshape(self.P, 6)
        n = z.size
        N = 6 * self.P
        out = []
        if self.start_pre is not None:
            J = np.zeros((3, n))
            J[:, 3:6] = np.eye(3)
            out.append(("departure", 0, X[0, 3:] - self.start_pre[3:], J))
        for k in self.jump:
            J = np.zeros((3, n))
            J[:, 6 * k + 9:6 * k + 12] = np.eye(3)
            J[:, 6 * k + 3:6 * k + 6] = -np.eye(3)
            out.append(("interior", int(k), X[k + 1, 3:] - X[k, 3:], J))
        if self.end_post is not None:
            J = np.zeros((3, n))
            J[:, N - 3:N] = -np.eye(3)
            out.append(("arrival", self.P - 1, self.end_post[3:] - X[-1, 3:], J))
        return out

    def cost(self, z):
        return float(sum(np.linalg.norm(dv) for _, _, dv, _ in self.burns(z)))

    def smooth_cost(self, z):
        f, g = 0.0, np.zeros(z.size)
        for _, _, dv, J in self.burns(z):
            m = math.sqrt(float(dv @ dv) + SMOOTHING ** 2)
            f += m
            g += (dv / m) @ J
        return f, g


def _newton(p, z, tol, max_iter, progress=None, stage="Newton"):
    """Minimum-norm Newton with step halving on the residual norm (:mod:`.newton`)."""
    report = None if progress is None else (lambda it, err: progress(stage, it, err))
    return _solve(p.constraints, z, tol, max_iter, what="route multiple shooting",
                  admissible=(lambda zn: not np.any(np.diff(p.junctions(zn)) <= 0)) if p.nT else None,
                  progress=report)


def _check_route(system, times_tu, states, maneuvers):
    t = np.asarray(times_tu, dtype=float).ravel()
    s = np.asarray(states, dtype=float)
    if s.ndim != 2 or s.shape[1] != 6 or s.shape[0] != t.size or t.size < 2:
        raise InputError(f"a route needs n >= 2 times and n x 6 states (got {t.size} times, states "
                         f"{s.shape})")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(s))):
        raise InputError("the route's times and states must be finite numbers")
    if np.any(np.diff(t) < 0) or t[-1] <= t[0]:
        raise InputError("the route's times must not decrease and must span a positive time")
    man = []
    for m in maneuvers:
        try:
            tm = float(m["t_days"]) / system.time_days
            dv = np.asarray(m["dv_vector_mps"], dtype=float).reshape(3)
        except (KeyError, TypeError, ValueError):
            raise InputError("each maneuver needs t_days and a 3-vector dv_vector_mps") from None
        if not (math.isfinite(tm) and np.all(np.isfinite(dv))):
            raise InputError(f"maneuver at t_days = {m.get('t_days')!r} has non-finite values")
        man.append((tm, dv, str(m.get("node", "")), float(m.get("dv_mps", np.linalg.norm(dv)))))
    return t, s, sorted(man, key=lambda x: x[0])


def transition_route(system, times_tu, states, maneuvers, epoch, bodies=("sun", "earth", "moon"), *,
                     central=None, srp=None, patch_days: float = PATCH_DAYS, min_patches: int = 2,
                     hold_end: bool = True, optimise: bool = True, free_times: bool = True, tol: float = TOLERANCE,
                     max_iter: int = 25, slsqp_iter: int = 200, progress=None, anchor: str = "ephemeris",
                     sample=None) -> RouteTransition:
    """Carry a stitched CR3BP route into the ephemeris model at ``epoch`` (module docstring).

    Parameters
    ----------
    system : System (dimensional, with an ephemeris pair)
    times_tu, states : the route's rotating samples (TU from its start; LU, LU/TU); a
                       maneuver time appears twice, before and after the impulse
    maneuvers : sequence of dict   ``t_days``, ``dv_vector_mps`` (rotating), ``node``, ``dv_mps``
    epoch : str or float           ISO text (Z = UTC) or TDB seconds since J2000, at route time 0
    bodies, central, srp           as :func:`cr3bp.fidelity.transition.transition`
    patch_days : float             one more patch segment per this flight time on an arc
    min_patches : int              least patch segments on an arc (>= 1)
    hold_end : bool                hold the end position
    free_times : bool              let the interior maneuver times move (start and end held)
    optimise : bool                step 2 (SLSQP on the total Δv) on or off
    progress : callable(stage, iteration, mismatch), optional
    anchor, sample : the frame anchoring of the conversion and the body sampler of
                     :func:`cr3bp.fidelity.model.build` (``"circular"`` with the idealised
                     circular motion gives back the CR3BP: the consistency check)

    Raises
    ------
    InputError        bad route, maneuvers not on the route, bad model options.
    ConvergenceError  step 1 or the final polish does not reach ``tol``.

    Returns
    -------
    RouteTransition
        The converged route and its gap to the CR3BP design.

    Examples
    --------
    >>> t, x, man = read_route("out/route")                                       # doctest: +SKIP
    >>> rt = transition_route(em, t, x, man, "2031-03-01T00:00:00 TDB")          # doctest: +SKIP

    References
    ----------
    Pavlak, T. A. & Howell, K. C., Acta Astronautica 81, 456 (2012) (multiple shooting into an
    ephemeris model, from memory); Kraft, D., "A software package for sequential quadratic
    programming", DFVLR-FB 88-28 (1988) (SLSQP).
    """
    system.require_dimensional("an ephemeris model")
    t, s, man = _check_route(system, times_tu, states, maneuvers)
    patch_days = validate.positive_number("patch spacing (d)", patch_days)
    min_patches = validate.whole_number("least patch segments per arc", min_patches, 1, 64)
    t0, t1 = float(t[0]), float(t[-1])
    eps = _TIME_EPS * max(1.0, abs(t1))
    start_burn = end_burn = None
    cuts = []                                   # sample index of the pre-burn state of each interior burn
    for tm, dv, node, mag in man:
        if abs(tm - t0) <= eps:
            start_burn = (tm, dv, node, mag)
        elif abs(tm - t1) <= eps:
            end_burn = (tm, dv, node, mag)
        else:
            hit = np.flatnonzero((np.abs(t[:-1] - tm) <= eps) & (np.abs(t[1:] - tm) <= eps))
            if hit.size == 0:
                raise InputError(f"maneuver at t = {tm * system.time_days:.6g} d is not at a doubled "
                                 "sample time of the route (before and after the impulse)")
            cuts.append((int(hit[0]), (tm, dv, node, mag)))
    bounds = [0] + [c + 1 for c, _ in cuts] + [t.size]
    spec = frames.frame(system, epoch, anchor=anchor, axes="j2000-equator", center="secondary")
    central = (central or _central_default(system)).lower()
    lu, vu = system.length_km, system.velocity_kms
    scale = np.array([lu, lu, lu, vu, vu, vu])
    # patch points: per arc, route samples nearest to equal time steps
    pt, ps, pa, samp_idx, samp_arc = [], [], [], [], []
    arc_rows = []
    for j in range(len(bounds) - 1):
        idx = np.arange(bounds[j], bounds[j + 1])
        ta = t[idx]
        keep = np.concatenate([[True], np.diff(ta) > eps])    # drop doubled segment boundaries
        idx, ta = idx[keep], ta[keep]
        if idx.size < 2:
            raise InputError(f"arc {j + 1} of the route has fewer than two distinct samples")
        dur_days = (ta[-1] - ta[0]) * system.time_days
        nseg = max(int(min_patches), int(math.ceil(dur_days / float(patch_days) - 1e-9)))
        want = np.linspace(ta[0], ta[-1], nseg + 1)
        sel = np.unique(np.searchsorted(ta, want).clip(0, ta.size - 1))
        sel = np.unique(np.concatenate([[0], sel, [ta.size - 1]]))
        pt.append(ta[sel])
        ps.append(s[idx[sel]])
        pa.append(np.full(sel.size, j))
        samp_idx.append(idx)
        samp_arc.append(np.full(idx.size, j))
        arc_rows.append({"arc": j + 1, "t_start_days": float(ta[0] * system.time_days),
                         "t_end_days": float(ta[-1] * system.time_days), "patches": int(sel.size)})
    pt, ps, arc_of = np.concatenate(pt), np.vstack(ps), np.concatenate(pa)
    init_km = _cr3bp_to_inertial(system, spec, pt, ps, central)
    X0 = init_km / scale
    vu_mps = vu * 1000.0

    def converted(time, state):
        return _cr3bp_to_inertial(system, spec, np.array([time]), np.atleast_2d(state), central)[0] / scale

    start_pre = end_post = None
    if start_burn is not None:
        pre = s[0].copy()
        pre[3:] -= start_burn[1] / vu_mps
        start_pre = converted(t0, pre)
    if end_burn is not None:
        post = s[-1].copy()
        post[3:] += end_burn[1] / vu_mps
        end_post = converted(t1, post)
    span = t1 - t0
    margin = 0.02 * span
    mdl = _model.build(system, spec.epoch_tdb_s, t0 - margin, t1 + margin, central, bodies, srp, sample=sample)
    # an interior maneuver at a route node (not at a mere patch point of a leg) keeps the
    # node's position, as cr3bp.transfers.stitch holds a junction at its node
    jumps = np.flatnonzero(arc_of[:-1] != arc_of[1:])
    def node_at(rot_pos):
        def fn(time):
            q = converted(float(time), np.concatenate([rot_pos, np.zeros(3)]))
            return q[:3], q[3:]
        return fn

    held = [(int(k), node_at(s[i, :3].copy())) for k, (i, c) in zip(jumps, cuts)
            if c[2] and c[2] != "patch point"]
    p = _Problem(mdl, pt, arc_of, X0[0], start_pre, X0[-1], end_post, hold_end, held, free_times)
    zinit = np.concatenate([X0.ravel(), p.T0[1:-1] if p.nT else np.zeros(0)])
    z1, it1, hist1 = _newton(p, zinit, tol, max_iter, progress, "Newton")
    z, optimised, note, iters = z1, False, "", {"newton": it1}
    hist = list(hist1)
    if optimise and (start_pre is not None or end_post is not None or p.jump.size):
        cost1 = p.cost(z1)
        cons = {"type": "eq", "fun": lambda v: p.constraints(v)[0], "jac": lambda v: p.constraints(v)[1]}
        bounds = [(None, None)] * (6 * p.P)
        d = np.diff(p.T0)
        bounds += [(p.T0[j] - 0.4 * d[j - 1], p.T0[j] + 0.4 * d[j]) for j in range(1, p.nT + 1)]
        sol = minimize(p.smooth_cost, z1, jac=True, method="SLSQP", constraints=[cons], bounds=bounds,
                       options={"maxiter": int(slsqp_iter), "ftol": 1e-14})
        iters["slsqp"] = int(sol.nit)
        try:
            z2, it3, hist3 = _newton(p, np.asarray(sol.x, dtype=float), tol, max_iter, progress, "polish")
            iters["polish"] = it3
            if p.cost(z2) < cost1:
                z, optimised, hist = z2, True, hist + hist3
                note = f"SLSQP: {sol.message}"
            else:
                note = f"SLSQP gave no improvement ({sol.message}); continuity solution kept"
        except ConvergenceError as e:
            note = f"SLSQP answer could not be polished ({e}); continuity solution kept"
    X = z[:6 * p.P].reshape(-1, 6)
    pt = p.times(z)
    F, _ = p.constraints(z)
    # continuity (position everywhere, velocity at patch points without a maneuver)
    ends, _ = _model.propagate_many(mdl, X[p.seg], pt[p.seg], pt[p.seg + 1])
    gap = ends - X[p.seg + 1]
    jpos = np.abs(X[p.jump, :3] - X[p.jump + 1, :3]) if p.jump.size else np.zeros((0, 3))
    hpos = [np.abs(X[k, :3] - fn(pt[k])[0]).max() for k, fn in held]
    cont_km = float(max(np.abs(gap[:, :3]).max(initial=0.0), jpos.max(initial=0.0), max(hpos, default=0.0),
                        np.abs(X[0, :3] - X0[0, :3]).max(),
                        np.abs(X[-1, :3] - X0[-1, :3]).max() if hold_end else 0.0) * lu)
    cont_mps = float(np.abs(gap[:, 3:]).max(initial=0.0) * vu_mps)
    if max(cont_km / lu, cont_mps / vu_mps) >= tol * 10:
        raise ConvergenceError(f"route transition left a mismatch of {cont_km * 1000:.3g} m / {cont_mps:.3g} m/s",
                               iterations=sum(iters.values()), residuals=hist)
    # dense samples: the route's own sample times, arc by arc
    samp_idx = np.concatenate(samp_idx)
    samp_arc = np.concatenate(samp_arc)
    st_cr3bp = t[samp_idx]
    T0, T1 = p.T0, p.junctions(z)          # sample times mapped to the (moved) arcs
    st = T1[samp_arc] + (st_cr3bp - T0[samp_arc]) / (T0[samp_arc + 1] - T0[samp_arc]) * (
        T1[samp_arc + 1] - T1[samp_arc])
    samp = np.empty((st.size, 6))
    for k in range(pt.size):
        if k < pt.size - 1 and arc_of[k] == arc_of[k + 1]:
            sel = np.flatnonzero((samp_arc == arc_of[k]) & (st >= pt[k] - eps) & (st <= pt[k + 1] + eps))
            arc = _model.propagate(mdl, X[k], pt[k], pt[k + 1], t_eval=np.clip(st[sel], pt[k], pt[k + 1]))
            samp[sel] = arc.states
    samp_km = samp * scale
    ref_km = _cr3bp_to_inertial(system, spec, st_cr3bp, s[samp_idx], central)
    for row in arc_rows:
        m = samp_arc == row["arc"] - 1
        path, timing = path_and_timing_offsets(st[m] * system.time_s, samp_km[m, :3], st_cr3bp[m] * system.time_s,
                                               ref_km[m, :3], ref_km[m, 3:])
        row["max_path_offset_km"] = float(path.max())
        row["max_timing_offset_min"] = float(np.abs(timing).max() / 60.0)
        row["max_same_epoch_separation_km"] = float(np.linalg.norm(samp_km[m, :3] - ref_km[m, :3], axis=1).max())
        row["max_same_epoch_velocity_diff_mps"] = float(
            np.linalg.norm(samp_km[m, 3:] - ref_km[m, 3:], axis=1).max() * 1000)
    # maneuver table: CR3BP magnitudes beside the ephemeris ones
    cr_list = ([start_burn] if start_burn else []) + [c for _, c in cuts] + ([end_burn] if end_burn else [])
    rows = []
    for (kind, k, dv, _), (tm, _dvr, node, mag) in zip(p.burns(z), cr_list):
        before = {"departure": start_pre, "interior": X[k], "arrival": X[-1]}[kind]
        after = {"departure": X[0], "interior": X[k + 1] if kind == "interior" else None,
                 "arrival": end_post}[kind]
        te = float(pt[k + 1] if kind == "interior" else pt[k])
        rows.append({"t_days": te * system.time_days, "t_tu": te, "t_cr3bp_days": float(tm * system.time_days),
                     "node": node, "kind": kind,
                     "dv_cr3bp_mps": mag, "dv_mps": float(np.linalg.norm(dv) * vu_mps),
                     "dv_vector_kms": (dv * vu).tolist(), "position_km": (X[k, :3] * lu).tolist(),
                     "state_before_km": (before * scale).tolist(), "state_after_km": (after * scale).tolist()})
    return RouteTransition(
        model=mdl, epoch_tdb_s=spec.epoch_tdb_s, t_tu=pt, patches=X, patches_km=X * scale,
        initial_km=init_km, arc_of=arc_of, arcs=tuple(arc_rows), maneuvers=tuple(rows),
        dv_total_cr3bp_mps=float(sum(c[3] for c in cr_list)),
        dv_total_mps=float(sum(r["dv_mps"] for r in rows)), continuity_km=cont_km, continuity_mps=cont_mps,
        sample_t_tu=st, sample_km=samp_km, reference_km=ref_km, sample_arc=samp_arc, iterations=iters,
        residuals=tuple(hist), optimised=optimised, note=note,
        options={"central": central, "patch_days": float(patch_days), "min_patches": int(min_patches),
                 "hold_end": bool(hold_end), "held_nodes": [c[2] for _, c in cuts if c[2] and c[2] != "patch point"],
                 "tolerance": tol, "final_max_constraint": float(np.abs(F).max())})


def read_route(path, system=None):
    """A ``librate route --out`` folder (or a file in it) -> (times_tu, states, maneuvers).

    Reads ``trajectory.csv`` (columns ``t_tu``, ``x_lu`` ... ``vz_vu``) and the maneuvers of
    ``route.json`` (key ``stitched``); with ``system``, the route's system (key ``system``:
    ``name``, ``mu``) must be the same.

    Parameters
    ----------
    path : str or pathlib.Path
        The folder, or a file in it.
    system : System, optional
        The system the route must belong to.

    Returns
    -------
    times_tu : numpy.ndarray
        Rotating times, TU.
    states : numpy.ndarray, shape (N, 6)
        Rotating states.
    maneuvers : list of dict
        The stitched route's maneuvers.

    Raises
    ------
    InputError
        Missing or malformed files, or a route of another system.

    Examples
    --------
    >>> t, x, man = read_route("out/route")          # doctest: +SKIP
    >>> read_route("no-such-folder")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: --route 'no-such-folder': no trajectory.csv in . (write one with librate route --out DIR)

    References
    ----------
    RFC 4180, "Common Format and MIME Type for Comma-Separated Values (CSV) Files" (2005);
    RFC 8259, "The JavaScript Object Notation (JSON) Data Interchange Format" (2017).
    """
    p = Path(path)
    d = p if p.is_dir() else p.parent
    tj, rj = d / "trajectory.csv", d / "route.json"
    for f in (tj, rj):
        if not f.is_file():
            raise InputError(f"--route '{path}': no {f.name} in {d} (write one with librate route --out DIR)")
    try:
        body = json.loads(rj.read_text())
        maneuvers = body["stitched"]["maneuvers"]
    except (ValueError, KeyError, TypeError):
        raise InputError(f"{rj} is not a route file (no stitched.maneuvers)") from None
    if system is not None and isinstance(body.get("system"), dict):
        name, mu = body["system"].get("name"), body["system"].get("mu")
        if name != system.name or (mu is not None and abs(float(mu) - system.mu) > 1e-12 * max(1.0, system.mu)):
            raise InputError(f"--route '{path}' was designed in system '{name}' (mu = {mu}), not in "
                             f"'{system.name}' (mu = {system.mu}); give --system {name}")
    lines = [ln for ln in tj.read_text().splitlines() if ln and not ln.startswith("#")]
    reader = csv.reader(lines)
    try:
        head = next(reader)
        cols = [head.index(c) for c in ("t_tu", "x_lu", "y_lu", "z_lu", "vx_vu", "vy_vu", "vz_vu")]
        data = np.array([[float(r[c]) for c in cols] for r in reader])
    except (StopIteration, ValueError, IndexError):
        raise InputError(f"{tj} lacks the columns t_tu, x_lu ... vz_vu or has a non-number") from None
    if data.ndim != 2 or data.shape[0] < 2:
        raise InputError(f"{tj} has fewer than two samples")
    return data[:, 0], data[:, 1:], maneuvers


#: A low-energy route's Sun phase at departure and the ephemeris's at the refine date may differ
#: by this much (degrees; a third of a day of the synodic month is 4 degrees).
LAUNCH_PHASE_TOL_DEG = 0.5


def route_launch(path, epoch, system) -> dict | None:
    """For a route folder whose stitched route is a low-energy leg (``stitched.model`` is
    "bicircular"): check that ``epoch`` is its launch date, and return the model record.

    A dated design must be refined at its own date (to the second); an undated one at a date on
    which the ephemeris puts the Sun at the design's phase (within ``LAUNCH_PHASE_TOL_DEG``).

    Parameters
    ----------
    path : str or pathlib.Path
        The folder ``librate route --out`` wrote, or a file in it.
    epoch : str or float
        The refine date (ISO 8601 text or TDB seconds since J2000).
    system : System
        The Earth-Moon system.

    Returns
    -------
    dict or None
        The model record (:func:`cr3bp.bicircular.model_record`), None for a CR3BP route.

    Raises
    ------
    InputError
        ``epoch`` is not the low-energy route's launch date (the message names both).

    Examples
    --------
    >>> route_launch("no-such-folder", "2027-03-01T00:00:00Z", None) is None
    True

    References
    ----------
    Parker & Anderson, *Low-Energy Lunar Trajectory Design*, 2013, ch. 3 (a ballistic lunar
    transfer belongs to its launch date, from memory).
    """
    p = Path(path)
    rj = (p if p.is_dir() else p.parent) / "route.json"
    try:
        st = json.loads(rj.read_text()).get("stitched") or {}
    except (OSError, ValueError, AttributeError):
        return None
    if not isinstance(st, dict) or st.get("model") != "bicircular":
        return None
    from ..bicircular import sun_phase_at   # lazy: the ephemeris's Sun phase, only for a low-energy route
    from ..transfers.low_energy import iso_utc   # lazy: dates in words, only for a low-energy route
    rec = st.get("model_record") or {}
    t = frames.epoch_from_text(epoch) if isinstance(epoch, str) else float(epoch)
    if rec.get("epoch_tdb_s") is not None:
        if abs(float(rec["epoch_tdb_s"]) - t) > 1.0:
            raise InputError(f"--epoch {epoch}: this low-energy route was designed for launch on "
                             f"{iso_utc(float(rec['epoch_tdb_s']))} (UTC); give that date")
        return rec
    want = math.degrees(float(rec.get("sun_phase_rad", math.nan))) % 360.0
    got = math.degrees(sun_phase_at(t, system)) % 360.0
    miss = abs((got - want + 180.0) % 360.0 - 180.0)
    if not miss <= LAUNCH_PHASE_TOL_DEG:
        raise InputError(f"--epoch {epoch}: the ephemeris puts the Sun at {got:.2f} deg from the Earth-Moon line, "
                         f"but this low-energy route was designed with it at {want:.2f} deg (at most "
                         f"{LAUNCH_PHASE_TOL_DEG:g} deg apart); find launch dates with librate connect --path "
                         "low-energy --window START/END")
    return rec
