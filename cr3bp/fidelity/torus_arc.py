"""From an arc on a CR3BP torus to a continuous trajectory of the ephemeris model.

The arc is the trajectory on the torus from the phase ``(theta0, theta1)`` over a span
(:func:`cr3bp.tori.trajectory.sample`: re-started from the invariance circle every
stroboscopic time, so it stays on the torus however hyperbolic it is). It is carried into the
ephemeris model exactly as a periodic orbit is by :func:`cr3bp.fidelity.transition.transition`:
patch points equally spaced in time (``per_period`` per stroboscopic time), each turned into
km, km/s about the central body on J2000 equator axes with the instantaneous ephemeris anchoring
of :mod:`cr3bp.time.frames` (rotating time tau = epoch + tau TU), then multiple shooting to
position and velocity continuity at every interior patch point (:func:`transition.correct`;
Pavlak & Howell's formulation of the ephemeris transition, from memory). The result is a
:class:`~cr3bp.fidelity.transition.Transition` whose per-revolution rows are per stroboscopic
time of the span.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import InputError
from ..time import frames
from ..tori.trajectory import sample
from . import model as _model
from .offsets import path_and_timing_offsets
from .transition import TOLERANCE, Transition, _central_default, _cr3bp_to_inertial, _min_radius, correct

#: Dense samples of the arc between two patch points (the reference and the converged arc).
SAMPLES_PER_PATCH = 300
#: Longest span refined, in stroboscopic times.
MAX_PERIODS = 200


def transition_torus_arc(torus, epoch, span_tu: float, phase=(0.0, 0.0),
                         bodies=("sun", "earth", "moon"), *, central=None, srp=None,
                         per_period: int = 7, fix_first=False, free_times=True, tol=TOLERANCE,
                         max_iter=25, progress=None) -> Transition:
    """Carry the arc of ``torus`` from ``phase`` over ``span_tu`` into the ephemeris model at
    ``epoch`` and correct it to a continuous trajectory.

    Parameters
    ----------
    torus : cr3bp.tori.Torus   of a dimensional system with an ephemeris pair
    epoch : str or float       ISO text (Z = UTC) or TDB seconds since J2000: the date of the
                               arc's first state
    span_tu : float            length of the arc (TU), at most ``MAX_PERIODS`` stroboscopic times
    phase : (theta0, theta1)   torus phase of the first state (rad)
    bodies, central, srp, fix_first, free_times, tol, max_iter, progress
                               as :func:`cr3bp.fidelity.transition.transition`
    per_period : int           patch points per stroboscopic time (2..64; at least 2 in all)

    Returns
    -------
    Transition   ``revs`` counts the stroboscopic times the span touches; ``options`` adds
                 ``kind = "torus arc"``, ``span_tu``, ``phase_rad``, ``stroboscopic_time_tu``.

    Raises
    ------
    InputError   a bad span, phase or count; ConvergenceError (multiple shooting).

    Examples
    --------
    >>> tr = transition_torus_arc(torus, "2031-03-01T00:00:00Z", 4 * torus.stroboscopic_time)  # doctest: +SKIP

    A span beyond the limit is refused before any work (a stand-in torus is enough to show it):

    >>> from types import SimpleNamespace
    >>> transition_torus_arc(SimpleNamespace(system=None, stroboscopic_time=3.0), 0.0, -1.0)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: span -1.0 TU must be positive and at most 200 stroboscopic times (600 TU)

    References
    ----------
    Olikara & Scheeres, AAS 12-361, 2012 (the torus function); Golub & Van Loan, *Matrix
    Computations*, 4th ed., 2013, §5.6 (the minimum-norm Newton update of ``correct``).
    """
    system = torus.system
    T = float(torus.stroboscopic_time)
    try:
        span_tu = float(span_tu)
        per_period = int(per_period)
        th = tuple(float(p) for p in phase)
    except (TypeError, ValueError):
        raise InputError(f"span {span_tu!r}, phase {phase!r} and patch count {per_period!r} must be "
                         "numbers") from None
    if not (math.isfinite(span_tu) and 0 < span_tu <= MAX_PERIODS * T):
        raise InputError(f"span {span_tu!r} TU must be positive and at most {MAX_PERIODS} stroboscopic "
                         f"times ({MAX_PERIODS * T:.6g} TU)")
    if len(th) != 2 or not all(math.isfinite(p) for p in th):
        raise InputError(f"torus phase {phase!r} must be two finite angles (rad)")
    if not 2 <= per_period <= 64:
        raise InputError(f"patch points per stroboscopic time = {per_period} must be in 2..64")
    spec = frames.frame(system, epoch, anchor="ephemeris", axes="j2000-equator", center="secondary")
    central = (central or _central_default(system)).lower()
    m = max(2, int(math.ceil(span_tu / T * per_period)))
    t = np.linspace(0.0, span_tu, m + 1)
    stride = SAMPLES_PER_PATCH
    ts = np.linspace(0.0, span_tu, m * stride + 1)
    ref_rot = sample(torus, ts, th).states
    ref_km = _cr3bp_to_inertial(system, spec, ts, ref_rot, central)
    init_km = ref_km[::stride].copy()
    lu, vu = system.length_km, system.velocity_kms
    scale = np.array([lu, lu, lu, vu, vu, vu])
    X0 = init_km / scale
    margin = 0.02 * span_tu
    mdl = _model.build(system, spec.epoch_tdb_s, -margin, span_tu + margin, central, bodies, srp)
    X, tt, iters, hist = correct(mdl, X0, t, fix_first=fix_first, free_times=free_times, tol=tol,
                                 max_iter=max_iter, progress=progress)
    samp_t = np.concatenate([[tt[0]]] + [np.linspace(tt[k], tt[k + 1], stride + 1)[1:]
                                         for k in range(m)])
    samp = np.empty((samp_t.size, 6))
    samp[0] = X[0]
    for k in range(m):
        sel = np.arange(k * stride + 1, (k + 1) * stride + 1)
        samp[sel] = _model.propagate(mdl, X[k], tt[k], tt[k + 1], t_eval=samp_t[sel]).states
    samp_km = samp * scale
    if free_times:       # the design at the same epochs as the samples
        ref_km = _cr3bp_to_inertial(system, spec, samp_t, sample(torus, samp_t, th).states, central)
    ends, _ = _model.propagate_many(mdl, X[:-1], tt[:-1], tt[1:])
    gap = ends - X[1:]
    t_s = samp_t * system.time_s
    path, timing = path_and_timing_offsets(t_s, samp_km[:, :3], t_s, ref_km[:, :3], ref_km[:, 3:],
                                           window_s=0.5 * T * system.time_s)
    revs = int(math.ceil(span_tu / T - 1e-12))
    rows = []
    for r in range(revs):
        sel = (samp_t >= r * T) & (samp_t <= (r + 1) * T)
        if not sel.any():
            continue
        dr = np.linalg.norm(samp_km[sel, :3] - ref_km[sel, :3], axis=1)
        dv = np.linalg.norm(samp_km[sel, 3:] - ref_km[sel, 3:], axis=1) * 1000.0
        rows.append({"rev": r + 1, "max_path_offset_km": float(path[sel].max()),
                     "max_timing_offset_min": float(np.abs(timing[sel]).max() / 60.0),
                     "max_same_epoch_separation_km": float(dr.max()),
                     "max_same_epoch_velocity_diff_mps": float(dv.max()),
                     "min_radius_km": _min_radius(samp_km[sel, :3]),
                     "min_radius_cr3bp_km": _min_radius(ref_km[sel, :3])})
    return Transition(
        model=mdl, epoch_tdb_s=spec.epoch_tdb_s, revs=revs, per_rev=tuple(rows), t_tu=tt,
        patches=X, patches_km=X * scale, initial_km=init_km, sample_t_tu=samp_t, sample_km=samp_km,
        reference_km=ref_km, dv_total_mps=0.0, iterations=iters, residuals=tuple(hist),
        continuity_km=float(np.abs(gap[:, :3]).max() * lu),
        continuity_mps=float(np.abs(gap[:, 3:]).max() * vu * 1000.0),
        options={"kind": "torus arc", "central": central, "per_period": per_period,
                 "fix_first": fix_first, "free_times": free_times, "tolerance": tol,
                 "span_tu": span_tu, "phase_rad": list(th), "stroboscopic_time_tu": T,
                 "period_tu": T})


__all__ = ["transition_torus_arc"]
