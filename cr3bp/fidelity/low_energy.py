"""A low-energy route (designed in the bicircular model) carried into the ephemeris model,
from the Earth parking circle to an insertion on the target orbit at its first arrival.

Why not the route as designed: the bicircular design does not insert where it first reaches the
target orbit; it shadows the orbit for several revolutions (perilunes thousands of km from the
orbit's) before its ballistic insertion. In the ephemeris model those revolutions amplify every
difference of the real Moon from the model's circular one, and multiple shooting that keeps
them stalls (measured: 8-23 % of the way from circular bodies to the ephemeris). So the
trajectory is cut at the route's **first arrival**: the first local minimum of the distance
from the route to the target orbit's path that lies within :data:`ARRIVAL_KM` of it, with the
route's velocity within :data:`ARRIVAL_MPS` of the orbit's there. There the insertion burn puts the spacecraft on the target orbit's point nearest
the route (the CR3BP state converted to the ephemeris model, as every refine converts).

Maneuvers (named): ``departure`` from the parking circle (position held on the circle of the
parking radius about the real Earth, the burn measured from the circular velocity there);
``correction``, :data:`CORRECTION_LEADS_DAYS` before insertion (a trajectory correction
maneuver: it retargets the lunar approach to the real Moon); ``insertion`` onto the target
orbit's converted state. Patch points: every :data:`NEAR_EARTH_STEP_DAYS` over the first
:data:`NEAR_EARTH_DAYS` (fast near the Earth), then one per ``patch_days`` up to the correction,
and :data:`ARRIVAL_PATCH_DAYS` after it.

Solution by continuation in the bodies (natural-parameter continuation: Allgower & Georg,
*Introduction to Numerical Continuation Methods*, SIAM, 2003, ch. 1): the Sun's and the Moon's
positions are ``(1 - s)`` times the bicircular model's circles (on the circular anchoring of
:mod:`cr3bp.time.frames`) plus ``s`` times DE421; the route converted on the circular anchoring
is the first guess at ``s = 0`` and the insertion target moves with ``s`` from the circular to
the ephemeris conversion. Each step is the minimum-norm Newton of :mod:`.route` (step halving,
:mod:`.newton`); a failed step is retried at 0.4 of its length. The answer is the continuity
solution: its Δv are not minimised (scipy's SLSQP over its ~850 unknowns did not finish 100
iterations in 14 minutes of our loaded 2-core host, so it is not run).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from ..errors import ConvergenceError, InputError
from ..integrate.propagate import propagate as cr3bp_propagate
from ..systems import body
from ..time import ephemeris, frames
from . import model as _model
from .offsets import path_and_timing_offsets
from .route import RouteTransition, _newton, _Problem
from .transition import TOLERANCE, _cr3bp_to_inertial

#: The first arrival: the first local minimum of the route's distance to the target orbit's path
#: within this distance (km) of it, with the velocity there within ARRIVAL_MPS of the orbit's
#: (our rule: a lunar flyby also passes near the orbit's path, at the wrong velocity).
ARRIVAL_KM = 10_000.0
ARRIVAL_MPS = 100.0
#: The correction maneuver is this long before the insertion (days): each lead is tried and the
#: converged solution of least total Δv kept. Newton ends at the ephemeris-model solution
#: nearest its first guess, and which one that is depends on the design's last digits: with one
#: lead of 10 days, two designs equal to 1e-6 m/s refined to 3 521 and 4 234 m/s; the least of
#: the three leads gave 3 444 and 3 420 m/s (measured 2026-12-04).
CORRECTION_LEADS_DAYS = (10.0, 20.0, 30.0)
#: Patch spacing near the Earth (days) and how long it lasts (days from departure).
NEAR_EARTH_STEP_DAYS = 0.1
NEAR_EARTH_DAYS = 2.0
#: Patch spacing between the correction and the insertion (days).
ARRIVAL_PATCH_DAYS = 0.5
#: The target orbit is sampled this long before the design's insertion to find its point
#: nearest the first arrival (days; longer than the period of any Earth-Moon halo or NRHO).
ORBIT_SEARCH_DAYS = 30.0
#: Continuation: first step, growth after a success, retry factor after a failure, least step.
STEP0, GROW, SHRINK, MIN_STEP = 0.1, 1.5, 0.4, 1e-3
#: Newton iterations per continuation step.
STEP_ITER = 12


def first_arrival(system, times_tu, states, orbit_state):
    """The route's first arrival at the target orbit.

    Parameters
    ----------
    system : System
        The Earth-Moon system.
    times_tu, states : numpy.ndarray
        The route's rotating samples (TU, LU and LU/TU).
    orbit_state : numpy.ndarray, shape (6,)
        A state on the target orbit (the design's state after insertion).

    Returns
    -------
    (int, numpy.ndarray, float)
        The sample index of the first arrival, the target orbit's state nearest it (rotating),
        and the distance between them (km).

    Raises
    ------
    InputError
        A route that never passes within :data:`ARRIVAL_KM` and :data:`ARRIVAL_MPS` of the orbit.

    Examples
    --------
    >>> k, target, miss_km = first_arrival(em, t, x, ins_state)     # doctest: +SKIP

    References
    ----------
    Parker, J. S. & Anderson, R. L., *Low-Energy Lunar Trajectory Design*, Wiley (2013), ch. 3
    (the arrival of a ballistic lunar transfer at its target orbit, from memory).
    """
    t = np.asarray(times_tu, dtype=float)
    x = np.asarray(states, dtype=float)
    span = ORBIT_SEARCH_DAYS / system.time_days
    ts = np.linspace(0.0, -span, 6001)
    orb = cr3bp_propagate(system, np.asarray(orbit_state, dtype=float), -span, t_eval=ts,
                          rtol=1e-12, atol=1e-12).states
    from scipy.spatial import cKDTree  # lazy: heavy library (scipy)
    d, j = cKDTree(orb[:, :3]).query(x[:, :3])
    d_km = d * system.length_km
    dv_mps = np.linalg.norm(orb[j, 3:] - x[:, 3:], axis=1) * system.velocity_kms * 1000.0
    for k in range(1, t.size - 1):
        if (d[k] <= d[k - 1] and d[k] < d[k + 1] and t[k] < t[k + 1] and d_km[k] <= ARRIVAL_KM
                and dv_mps[k] <= ARRIVAL_MPS):
            break
    else:
        raise InputError(f"the low-energy route never passes within {ARRIVAL_KM:g} km and {ARRIVAL_MPS:g} m/s "
                         "of its target orbit before its insertion")
    return int(k), orb[j[k]].copy(), float(d_km[k])


def transition_low_energy(system, times_tu, states, maneuvers, epoch, sun_phase_rad, bodies=("sun", "earth", "moon"), *,
                          central="earth", srp=None, patch_days=1.0, tol=TOLERANCE,
                          max_iter=STEP_ITER, progress=None, leads_days=CORRECTION_LEADS_DAYS) -> RouteTransition:
    """Carry a low-energy route into the ephemeris model, ending on the target orbit (module docstring).

    Parameters
    ----------
    system : System
        The Earth-Moon system (dimensional).
    times_tu, states, maneuvers
        The route as :func:`cr3bp.fidelity.route.read_route` returns it (departure and insertion).
    epoch : str or float
        The launch date (route time 0).
    sun_phase_rad : float
        The Sun's phase of the design at departure (its bicircular model).
    bodies : sequence of str
        Point masses; the Sun and the Moon must be among them.
    central : str
        The central body (the Earth).
    srp : (float, float), optional
        Cannonball radiation pressure, as :func:`cr3bp.fidelity.model.build`.
    patch_days : float
        Patch spacing from two days after departure to the correction.
    tol : float
        Continuity tolerance (nondimensional).
    max_iter : int
        Newton iterations per continuation step.
    progress : callable(stage, iteration, mismatch), optional
        Called each Newton iteration.
    leads_days : sequence of float
        Leads of the correction before the insertion (days) to try, each solved in full; the
        converged one of least total Δv is returned (default :data:`CORRECTION_LEADS_DAYS`).

    Returns
    -------
    RouteTransition
        Its maneuvers are ``departure``, ``correction`` and ``insertion``; ``options`` holds the
        arrival (``arrival``: time, miss of the design's route from the orbit there), the lead
        kept (``correction_lead_days``) and every lead's total (``correction_leads_tried``:
        m/s, or the reason it gave none).

    Raises
    ------
    InputError
        A route without a departure and an insertion, bodies without the Sun and the Moon.
    ConvergenceError
        The continuation stalls at every lead (the message gives how far the last got).

    Examples
    --------
    >>> rt = transition_low_energy(em, t, x, man, "2027-03-08T19:07:07Z", 6.1986)   # doctest: +SKIP
    >>> [m["kind"] for m in rt.maneuvers]                                          # doctest: +SKIP
    ['departure', 'correction', 'insertion']
    >>> from cr3bp import system
    >>> transition_low_energy(system("earth-moon"), [0.0, 1.0], [[0.5, 0, 0, 0, 0, 0]] * 2, [], 0.0, 0.0)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: a low-energy route has a departure and an insertion (got [])

    References
    ----------
    Pavlak, T. A. & Howell, K. C., Acta Astronautica 81, 456 (2012) (multiple shooting into an
    ephemeris model, from memory); Allgower, E. L. & Georg, K., *Introduction to Numerical
    Continuation Methods*, SIAM (2003), ch. 1.
    """
    if central != "earth":
        raise InputError(f"a low-energy route is refined about the Earth (central 'earth', not '{central}')")
    if not {"sun", "moon"} <= set(bodies):
        raise InputError("a low-energy route needs the Sun and the Moon among the bodies (its design has both)")
    t = np.asarray(times_tu, dtype=float)
    x = np.asarray(states, dtype=float)
    names = [str(m.get("name", m.get("kind", ""))) for m in maneuvers]
    if names[:1] != ["departure"] or names[-1:] != ["insertion"]:
        raise InputError(f"a low-energy route has a departure and an insertion (got {names})")
    leads = tuple(float(v) for v in leads_days)
    if not leads or not all(math.isfinite(v) and v > 0.0 for v in leads):
        raise InputError(f"correction leads {leads_days!r} must be positive numbers of days")
    best, tried, failure = None, {}, None
    for lead in leads:
        def step_progress(stage, it, mismatch, lead=lead):
            if progress:
                progress(f"correction lead {lead:g} d, {stage}", it, mismatch)
        try:
            tr = _one_lead(system, t, x, maneuvers, epoch, sun_phase_rad, bodies, srp, patch_days, tol,
                           max_iter, step_progress if progress else None, lead)
        except (ConvergenceError, InputError) as e:
            tried[f"{lead:g}"] = str(e)
            failure = e
            continue
        tried[f"{lead:g}"] = round(tr.dv_total_mps, 3)
        if best is None or tr.dv_total_mps < best.dv_total_mps:
            best = tr
    if best is None:
        raise failure
    kept = best.options["correction_lead_days"]
    totals = ", ".join(f"{k} d: {v:.1f} m/s" if isinstance(v, float) else f"{k} d: none" for k, v in tried.items())
    return replace(best, note=f"{best.note}; correction {kept:g} d before insertion, the least total of the "
                              f"leads tried ({totals})",
                   options={**best.options, "correction_leads_tried": tried})


def _one_lead(system, t, x, maneuvers, epoch, sun_phase_rad, bodies, srp, patch_days, tol, max_iter, progress,
              lead_days):
    """:func:`transition_low_energy` with the correction ``lead_days`` before the insertion."""
    from ..bicircular import bicircular_system   # lazy: the bicircular model, only for a low-energy route
    dep, ins = maneuvers[0], maneuvers[-1]
    lu, vu = system.length_km, system.velocity_kms
    scale = np.array([lu, lu, lu, vu, vu, vu])
    vu_mps = vu * 1000.0
    ins_state = np.array(ins.get("state_after_lu") or x[-1], dtype=float)
    if "state_after_lu" not in ins:
        ins_state[3:] += np.asarray(ins["dv_vector_mps"], dtype=float) / vu_mps
    k_arr, target, miss_km = first_arrival(system, t, x, ins_state)
    t, x = t[:k_arr + 1], x[:k_arr + 1]
    t_ins = float(t[-1])
    idx = np.flatnonzero(np.concatenate([[True], np.diff(t) > 1e-12]))
    tt = t[idx]
    t_cor = t_ins - lead_days / system.time_days
    near = NEAR_EARTH_DAYS / system.time_days
    if not near < t_cor:
        raise InputError("the low-energy route arrives too soon after departure for a correction maneuver")
    kc = int(np.argmin(np.abs(tt - t_cor)))
    want1 = np.concatenate([np.arange(0.0, near, NEAR_EARTH_STEP_DAYS / system.time_days),
                            np.linspace(near, tt[kc], max(2, math.ceil((tt[kc] - near) * system.time_days
                                                                        / patch_days)) + 1)])
    want2 = np.linspace(tt[kc], t_ins, max(2, math.ceil((t_ins - tt[kc]) * system.time_days
                                                       / ARRIVAL_PATCH_DAYS)) + 1)
    s1 = np.unique(np.clip(np.searchsorted(tt, want1), 0, kc))
    s2 = np.unique(np.clip(np.searchsorted(tt, want2), kc, tt.size - 1))
    pt = np.concatenate([tt[s1], tt[s2]])
    ps = np.vstack([x[idx[s1]], x[idx[s2]]])
    arc_of = np.concatenate([np.zeros(s1.size, dtype=int), np.ones(s2.size, dtype=int)])
    spec = frames.frame(system, epoch, anchor="ephemeris", axes="j2000-equator", center="secondary")
    circ = frames.frame(system, spec.epoch_tdb_s, anchor="circular", axes="j2000-equator", center="primary")
    init_c = frames.to_frame(circ, pt, ps)[1]
    X0 = init_c / scale
    # the parking circle: the design's departure point on the circle of its radius about the Earth
    r_park = float(np.linalg.norm(np.asarray(dep["position_lu"]) - np.array([-system.mu, 0.0, 0.0])) * lu)
    r_park = round(r_park - body("earth").radius_km, 3) + body("earth").radius_km
    r0 = init_c[0, :3] / np.linalg.norm(init_c[0, :3]) * r_park
    u = np.cross(np.cross(r0, init_c[0, 3:]), r0)
    u /= np.linalg.norm(u)
    pre = np.concatenate([r0, u * math.sqrt(body("earth").gm_km3_s2 / r_park)]) / scale
    X0[0, :3] = r0 / lu
    end_c = frames.to_frame(circ, np.array([t_ins]), target[None])[1][0] / scale
    end_e = _cr3bp_to_inertial(system, spec, np.array([t_ins]), target[None], "earth")[0] / scale
    bc = bicircular_system(system.name, sun_phase=float(sun_phase_rad))
    fitted = [b for b in _model.parse_bodies(bodies) if b != "earth"]

    def circular(tq):
        tq = np.atleast_1d(np.asarray(tq, dtype=float))
        out = []
        for b in fitted:
            q = np.zeros((tq.size, 6))
            if b == "moon":
                q[:, 0] = 1.0 - system.mu
            elif b == "sun":
                th = bc.sun_angle(tq)
                q[:, 0], q[:, 1] = bc.sun_distance * np.cos(th), bc.sun_distance * np.sin(th)
            else:             # a planet has no circle in the design: its ephemeris position throughout
                out.append(real_one(b, tq))
                continue
            out.append(frames.to_frame(circ, tq, q)[1][:, :3] / lu)
        return np.stack(out)

    def real_one(b, tq):
        ep = frames._epoch(spec.epoch_tdb_s + np.asarray(tq) * system.time_s)
        return np.asarray(ephemeris.position(b, ep, "earth", "j2000-equator")) / lu

    def real(tq):
        return np.stack([real_one(b, tq) for b in fitted])

    lo, hi = -0.02 * t_ins, t_ins * 1.02

    def problem(s, free_times=False):
        mdl = _model.build(system, spec.epoch_tdb_s, lo, hi, "earth", bodies, srp,
                           sample=lambda tq: (1.0 - s) * circular(tq) + s * real(tq))
        end = (1.0 - s) * end_c + s * end_e
        return mdl, _Problem(mdl, pt, arc_of, X0[0], pre, end, end, True, (), free_times)

    z = X0.ravel().copy()
    s, step, s_ok, hist, steps = 0.0, STEP0, 0.0, [], 0
    while True:
        mdl, p = problem(s)
        try:
            z_new, it, h = _newton(p, z, tol, max_iter, progress, f"continuation s={s:.4f}")
        except ConvergenceError:
            if s == 0.0:
                raise
            step *= SHRINK
            if step < MIN_STEP:
                raise ConvergenceError(
                    f"low-energy route: the continuation from the bicircular model's circles to the ephemeris "
                    f"stalled at s = {s_ok:.4f} (0: circles, 1: ephemeris)", iterations=steps,
                    residuals=hist) from None
            s = s_ok + step
            continue
        z, hist, steps = z_new, hist + list(h), steps + it
        if s >= 1.0:
            break
        s_ok, step = s, min(step * GROW, 0.25)
        s = min(1.0, s + step)
    iters = {"continuation": steps}
    optimised, note = False, ("continuity solution (not optimised: SLSQP over the ~850 unknowns did not finish "
                              "100 iterations in 14 minutes on our host)")
    return _result(system, spec, mdl, p, z, t, x, idx, arc_of, kc, dep, ins, t_ins, target, miss_km, iters,
                   hist, optimised, note, tol, patch_days, X0 * scale, lead_days)


def _result(system, spec, mdl, p, z, t, x, idx, arc_of, kc, dep, ins, t_ins, target, miss_km, iters, hist,
            optimised, note, tol, patch_days, initial_km, lead_days):
    """The :class:`RouteTransition` of a converged low-energy refine (samples, offsets, maneuvers)."""
    lu, vu = system.length_km, system.velocity_kms
    scale = np.array([lu, lu, lu, vu, vu, vu])
    vu_mps = vu * 1000.0
    X = z[:6 * p.P].reshape(-1, 6)
    pt = p.times(z)
    ends, _ = _model.propagate_many(mdl, X[p.seg], pt[p.seg], pt[p.seg + 1])
    gap = ends - X[p.seg + 1]
    jpos = np.abs(X[p.jump, :3] - X[p.jump + 1, :3])
    cont_km = float(max(np.abs(gap[:, :3]).max(), jpos.max(initial=0.0), np.abs(X[0, :3] - p.start[:3]).max(),
                        np.abs(X[-1, :3] - p.end[:3]).max()) * lu)
    cont_mps = float(np.abs(gap[:, 3:]).max() * vu_mps)
    if max(cont_km / lu, cont_mps / vu_mps) >= tol * 10:
        raise ConvergenceError(f"low-energy refine left a mismatch of {cont_km * 1000:.3g} m / {cont_mps:.3g} m/s",
                               iterations=sum(iters.values()), residuals=hist)
    # dense samples at the route's own times, mapped onto the (moved) arcs
    st_design = t[idx]
    samp_arc = (np.arange(idx.size) > kc).astype(int)
    T0, T1 = p.T0, p.junctions(z)
    st = T1[samp_arc] + (st_design - T0[samp_arc]) / (T0[samp_arc + 1] - T0[samp_arc]) * (
        T1[samp_arc + 1] - T1[samp_arc])
    samp = np.empty((st.size, 6))
    eps = 1e-9 * max(1.0, t_ins)
    for k in p.seg:
        sel = np.flatnonzero((samp_arc == arc_of[k]) & (st >= pt[k] - eps) & (st <= pt[k + 1] + eps))
        if sel.size:
            samp[sel] = _model.propagate(mdl, X[k], pt[k], pt[k + 1], t_eval=np.clip(st[sel], pt[k], pt[k + 1])).states
    samp_km = samp * scale
    ref_km = _cr3bp_to_inertial(system, spec, st_design, x[idx], "earth")
    arcs = []
    for j, (a, b) in enumerate(((0.0, T1[1]), (T1[1], T1[2]))):
        m = samp_arc == j
        path, timing = path_and_timing_offsets(st[m] * system.time_s, samp_km[m, :3],
                                               st_design[m] * system.time_s, ref_km[m, :3], ref_km[m, 3:])
        arcs.append({"arc": j + 1, "t_start_days": float(a * system.time_days), "t_end_days": float(b * system.time_days),
                     "patches": int(np.sum(arc_of == j)), "max_path_offset_km": float(path.max()),
                     "max_timing_offset_min": float(np.abs(timing).max() / 60.0),
                     "max_same_epoch_separation_km": float(np.linalg.norm(samp_km[m, :3] - ref_km[m, :3], axis=1).max()),
                     "max_same_epoch_velocity_diff_mps": float(
                         np.linalg.norm(samp_km[m, 3:] - ref_km[m, 3:], axis=1).max() * 1000)})
    rows = []
    design = {"departure": (0.0, dep["node"], float(dep["dv_mps"])),
              "correction": (float(p.T0[1]), "", 0.0),
              "insertion": (float(ins["t_days"]) / system.time_days, ins["node"], float(ins["dv_mps"]))}
    for (kind, k, dv, _), name in zip(p.burns(z), ("departure", "correction", "insertion")):
        before = {"departure": p.start_pre, "correction": X[k], "insertion": X[-1]}[name]
        after = {"departure": X[0], "correction": X[k + 1] if kind == "interior" else None,
                 "insertion": p.end_post}[name]
        te = float(pt[k + 1] if kind == "interior" else pt[k])
        tm, node, mag = design[name]
        rows.append({"t_days": te * system.time_days, "t_tu": te, "t_cr3bp_days": tm * system.time_days,
                     "node": node or name, "kind": name, "dv_cr3bp_mps": mag,
                     "dv_mps": float(np.linalg.norm(dv) * vu_mps), "dv_vector_kms": (dv * vu).tolist(),
                     "position_km": (X[k, :3] * lu).tolist(), "state_before_km": (before * scale).tolist(),
                     "state_after_km": (after * scale).tolist()})
    F, _ = p.constraints(z)
    arrival = {"t_days": t_ins * system.time_days, "design_insertion_t_days": float(ins["t_days"]),
               "design_miss_km": miss_km, "target_rotating": target.tolist(),
               "target_km": (p.end_post * scale).tolist(),
               "rule": "first local minimum of the route's distance to the target orbit's path within "
                       f"{ARRIVAL_KM:g} km and {ARRIVAL_MPS:g} m/s of it"}
    return RouteTransition(
        model=mdl, epoch_tdb_s=spec.epoch_tdb_s, t_tu=pt, patches=X, patches_km=X * scale,
        initial_km=initial_km, arc_of=arc_of, arcs=tuple(arcs), maneuvers=tuple(rows),
        dv_total_cr3bp_mps=float(dep["dv_mps"]) + float(ins["dv_mps"]),
        dv_total_mps=float(sum(r["dv_mps"] for r in rows)), continuity_km=cont_km, continuity_mps=cont_mps,
        sample_t_tu=st, sample_km=samp_km, reference_km=ref_km, sample_arc=samp_arc, iterations=iters,
        residuals=tuple(hist), optimised=optimised, note=note,
        options={"central": "earth", "patch_days": float(patch_days), "hold_end": True, "tolerance": tol,
                 "final_max_constraint": float(np.abs(F).max()), "low_energy": True, "arrival": arrival,
                 "correction_lead_days": float(lead_days), "parking_radius_km": float(np.linalg.norm(X[0, :3]) * lu)})
