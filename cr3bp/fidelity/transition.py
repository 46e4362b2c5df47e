"""From a CR3BP periodic orbit to a continuous trajectory of the ephemeris model.

Steps: (1) the orbit repeated N revolutions is sampled at ``per_rev`` patch points a
revolution, equally spaced in time; (2) each patch state goes to km, km/s about the
secondary on J2000 equator axes with the instantaneous ephemeris anchoring of
:mod:`cr3bp.time.frames` (rotating time tau = epoch + tau TU), then about the model's central
body; (3) multiple shooting (Pavlak & Howell's formulation of the ephemeris transition, from
memory) drives the position and velocity mismatch at every interior patch point to zero.

Newton's method with the minimum-norm update ``dX = -J^T (J J^T)^{-1} F`` (the update of
least 2-norm for an under-determined system; Golub & Van Loan, *Matrix Computations*, 4th
ed., 2013, section 5.6), with step halving on the residual norm. Unknowns: all patch states
(the first may be held fixed) and, optionally, the interior patch times; the epoch and the
first and last times are always held. Partials: ``dF_k/dx_k = Phi_k``,
``dF_k/dx_{k+1} = -I``, ``dF_k/dt_k = -Phi_k f(t_k, x_k)``,
``dF_k/dt_{k+1} = f(t_{k+1}, x_k(t_{k+1}))``.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .. import validate
from ..errors import InputError
from . import model as _model
from . import newton as _newton
from ..cautions import CAUTION
from ..integrate.propagate import propagate as cr3bp_propagate
from ..time import ephemeris, frames
from ..time.frames import _BODY
from .offsets import path_and_timing_offsets

#: Continuity tolerance (nondimensional, max component): 1e-9 LU and 1e-9 VU (Earth-Moon:
#: 0.4 m and 1 mm/s).
TOLERANCE = 1e-9


@dataclass(frozen=True)
class Transition:
    """A converged ephemeris trajectory and its gap to the CR3BP design.

    Parameters
    ----------
    t_tu : ndarray (M+1,)          patch times, TU from the epoch
    patches : ndarray (M+1, 6)     converged patch states, nondimensional inertial (LU, VU)
    patches_km : ndarray (M+1, 6)  the same in km, km/s about the central body, EME2000
    initial_km : ndarray (M+1, 6)  the CR3BP patch states converted (the first guess)
    sample_t_tu, sample_km : dense samples of the converged trajectory (km, km/s)
    reference_km : ndarray         the CR3BP orbit at the same epochs as the samples, same frame
    per_rev : tuple of dict        rev, max_path_offset_km (distance to the nearest point of the
                                   design's path, timing aside), max_timing_offset_min (largest
                                   |epoch - epoch of that nearest point|), the differences at
                                   equal epochs max_same_epoch_separation_km and
                                   max_same_epoch_velocity_diff_mps (timing and path mixed: NOT
                                   a maneuver), min_radius_km, min_radius_cr3bp_km
                                   (:mod:`cr3bp.fidelity.offsets`)
    dv_total_mps : float           maneuvers needed (0: continuous)
    iterations : int; residuals : tuple (max-norm of the mismatch, nondimensional)
    continuity_km, continuity_mps : final largest mismatch at a patch point

    Examples
    --------
    >>> tr = transition(nrho, "2031-03-01T00:00:00 TDB", revs=3)       # doctest: +SKIP

    References
    ----------
    Pavlak, T. A. & Howell, K. C., Acta Astronautica 81, 456 (2012) (from memory); Gómez, G.,
    Llibre, J., Martínez, R. & Simó, C., "Dynamics and Mission Design Near Libration Points",
    World Scientific (2001).
    """

    model: object
    epoch_tdb_s: float
    revs: int
    per_rev: tuple
    t_tu: np.ndarray
    patches: np.ndarray
    patches_km: np.ndarray
    initial_km: np.ndarray
    sample_t_tu: np.ndarray
    sample_km: np.ndarray
    reference_km: np.ndarray
    dv_total_mps: float
    iterations: int
    residuals: tuple
    continuity_km: float
    continuity_mps: float
    options: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        return {
            "model": self.model.to_dict(), "epoch_tdb_s": self.epoch_tdb_s, "revs": self.revs,
            "per_revolution": [dict(r) for r in self.per_rev],
            "dv_total_mps": self.dv_total_mps, "iterations": self.iterations,
            "residuals": list(self.residuals), "continuity_km": self.continuity_km,
            "continuity_mps": self.continuity_mps, "patch_t_tu": self.t_tu.tolist(),
            "patches_km": self.patches_km.tolist(), "options": dict(self.options),
            "caution": CAUTION,
        }


def _central_default(system) -> str:
    """The secondary's body (its system's main body; the Earth for the Earth-Moon barycentre)."""
    name = system.secondary.name if system.secondary is not None else ""
    body = _BODY.get(name, name)
    return "earth" if body == "emb" else body


def _cr3bp_to_inertial(system, spec, t_tu, states, central):
    """Rotating nondimensional states -> km, km/s about ``central`` (EME2000)."""
    tdb, km = frames.to_frame(spec, t_tu, states)
    sec = frames._BODY.get(system.secondary.name, system.secondary.name)
    if sec != central:
        km = km + np.asarray(ephemeris.state(sec, frames._epoch(tdb), central, "j2000-equator"))
    return km


def _residual(model, X, t):
    ends, _ = _model.propagate_many(model, X[:-1], t[:-1], t[1:])
    return (ends - X[1:]).ravel()


def correct(model, X0, t, *, fix_first=False, free_times=False, tol=TOLERANCE, max_iter=25,
            progress=None):
    """Multiple shooting to position and velocity continuity (see the module docstring).

    Returns
    -------
    (X (M+1, 6), t (M+1,), iterations, residual history)

    Raises
    ------
    ConvergenceError  no convergence within ``max_iter`` or the step halving fails.

    Parameters
    ----------
    model : Model
        The ephemeris model.
    X0 : numpy.ndarray, shape (M+1, 6)
        First-guess patch states, nondimensional inertial.
    t : numpy.ndarray, shape (M+1,)
        Patch times, TU from the epoch.
    fix_first : bool, optional
        Hold the first patch state.
    free_times : bool, optional
        Let the interior patch times move.
    tol : float, optional
        Largest accepted mismatch (nondimensional).
    max_iter : int, optional
        Newton iterations.
    progress : callable(iteration, mismatch), optional
        Called each iteration.

    Examples
    --------
    >>> X, t, it, hist = correct(model, X0, t0)      # doctest: +SKIP

    References
    ----------
    Pavlak, T. A. & Howell, K. C., Acta Astronautica 81, 456 (2012) (multiple shooting, from
    memory); Dennis & Schnabel, "Numerical Methods for Unconstrained Optimization and Nonlinear
    Equations", SIAM (1996), ch. 6.
    """
    X0 = np.array(X0, dtype=float)
    t0 = np.array(t, dtype=float)
    m = X0.shape[0] - 1
    ns = 6 * (m + 1)                    # state unknowns, then the interior times (free_times)
    cols = np.arange(ns + ((m - 1) if free_times else 0))
    if fix_first:
        cols = cols[6:]

    def unpack(z):
        full = np.concatenate([X0[0], z]) if fix_first else z
        tt = t0.copy()
        if free_times:
            tt[1:-1] = full[ns:]
        return full[:ns].reshape(m + 1, 6), tt

    n_cols = ns + ((m - 1) if free_times else 0)
    # the Jacobian's pattern (block-banded): Phi_k and -I on each row block, then the times
    kk = np.arange(m)[:, None, None]
    ii = np.arange(6)[None, :, None]
    jj = np.arange(6)[None, None, :]
    stm_rows, stm_cols = np.broadcast_to(6 * kk + ii, (m, 6, 6)), np.broadcast_to(6 * kk + jj, (m, 6, 6))
    eye_rows = (6 * np.arange(m)[:, None] + np.arange(6)[None, :])
    eye_cols = eye_rows + 6

    def constraints(z):
        from scipy import sparse  # lazy: heavy library (scipy)
        X, tt = unpack(z)
        ends, phis = _model.propagate_many(model, X[:-1], tt[:-1], tt[1:], stm=True)
        rows, cls, vals = [stm_rows.ravel(), eye_rows.ravel()], [stm_cols.ravel(), eye_cols.ravel()], \
            [np.asarray(phis, dtype=float).ravel(), -np.ones(6 * m)]
        if free_times:
            for k in range(m):
                if k >= 1:              # t_k is interior: dF_k/dt_k = -Phi_k f(t_k, x_k)
                    rows.append(eye_rows[k])
                    cls.append(np.full(6, ns + k - 1))
                    vals.append(-phis[k] @ model.acceleration(tt[k], X[k]))
                if k + 1 <= m - 1:      # dF_k/dt_{k+1} = f(t_{k+1}, end_k)
                    rows.append(eye_rows[k])
                    cls.append(np.full(6, ns + k))
                    vals.append(np.asarray(model.acceleration(tt[k + 1], ends[k]), dtype=float))
        # sparse: over a year of revolutions the dense Jacobian is tens of megabytes of zeros,
        # and the Newton step factors its banded normal matrix (cr3bp.fidelity.newton)
        J = sparse.csc_matrix((np.concatenate(vals), (np.concatenate(rows), np.concatenate(cls))),
                              shape=(6 * m, n_cols))
        return (ends - X[1:]).ravel(), J[:, cols].tocsr()

    z0 = np.concatenate([X0.ravel(), t0[1:-1] if free_times else []])[cols]
    z, it, hist = _newton.solve(
        constraints, z0, tol, max_iter, what="multiple shooting",
        residual=lambda z: _residual(model, *unpack(z)),
        admissible=(lambda z: bool(np.all(np.diff(unpack(z)[1]) > 0))) if free_times else None,
        progress=progress, shown=lambda z: unpack(z)[0])
    X, tt = unpack(z)
    return X, tt, it, hist


def transition(orbit, epoch, revs: int, bodies=("sun", "earth", "moon"), *, central=None,
               srp=None, per_rev: int = 7, fix_first=False, free_times=True, tol=TOLERANCE,
               max_iter=25, samples_per_rev: int = 2100, progress=None) -> Transition:
    """Carry a CR3BP periodic orbit into the ephemeris model at ``epoch`` and correct it.

    Parameters
    ----------
    orbit : PeriodicOrbit (of a dimensional system with an ephemeris pair)
    epoch : str or float          ISO text (Z = UTC) or TDB seconds since J2000
    revs : int                    revolutions (>= 1)
    bodies : sequence or str      point masses (the central body is its own term)
    central : str, optional       default: the secondary (Earth for Sun-Earth)
    srp : (area_to_mass_m2_kg, cr), optional
    per_rev : int                 patch points per revolution (>= 2)
    fix_first : bool              hold the first patch state
    free_times : bool             let the interior patch times move
    tol, max_iter : float, int
        Newton tolerance (nondimensional mismatch) and iterations.
    samples_per_rev : int
        Dense samples per revolution of the result.
    progress : callable(iteration, mismatch), optional
        Called each iteration.

    Returns
    -------
    Transition
        The converged trajectory and its gap to the CR3BP design.

    Raises
    ------
    InputError
        Bad options, a system without an ephemeris pair, epochs outside the ephemeris.
    ConvergenceError
        The multiple shooting does not converge.

    Examples
    --------
    >>> from cr3bp import orbit, system
    >>> nrho = orbit(system("earth-moon"), "halo L2 south resonance=9:2")   # doctest: +SKIP
    >>> tr = transition(nrho, "2031-03-01T00:00:00 TDB", revs=3)            # doctest: +SKIP
    >>> tr.dv_total_mps                                                     # doctest: +SKIP
    0.0

    References
    ----------
    Pavlak, T. A. & Howell, K. C., "Evolution of the out-of-plane amplitude for quasi-periodic
    trajectories in the Earth-Moon system", Acta Astronautica 81, 456 (2012) (multiple shooting
    into an ephemeris model, from memory); Gómez, G., Llibre, J., Martínez, R. & Simó, C.,
    "Dynamics and Mission Design Near Libration Points", World Scientific (2001).
    """
    system = orbit.system
    revs = validate.whole_number("revs", revs, 1, 200)
    per_rev = validate.whole_number("patch points per revolution (per_rev)", per_rev, 2, 64)
    spec = frames.frame(system, epoch, anchor="ephemeris", axes="j2000-equator", center="secondary")
    central = (central or _central_default(system)).lower()
    T = float(orbit.period)
    m = revs * per_rev
    t = np.linspace(0.0, revs * T, m + 1)
    # the CR3BP reference, densely sampled (patch times are among the samples)
    ns = samples_per_rev * revs
    ts = np.linspace(0.0, revs * T, ns + 1)
    # one period, repeated (propagating N periods would let an unstable orbit drift away)
    arc = cr3bp_propagate(system, orbit.state, T, t_eval=ts[:samples_per_rev], rtol=1e-13, atol=1e-13)
    ref_rot = np.vstack([np.tile(arc.states, (revs, 1)), arc.states[:1]])
    ref_km = _cr3bp_to_inertial(system, spec, ts, ref_rot, central)
    stride = samples_per_rev // per_rev if samples_per_rev % per_rev == 0 else None
    if stride is None:
        raise InputError(f"samples per revolution {samples_per_rev} must be a multiple of {per_rev}")
    init_km = ref_km[::stride].copy()
    lu, vu = system.length_km, system.velocity_kms
    X0 = init_km / np.array([lu, lu, lu, vu, vu, vu])
    margin = 0.02 * T
    mdl = _model.build(system, spec.epoch_tdb_s, -margin, revs * T + margin, central, bodies, srp)
    X, tt, iters, hist = correct(mdl, X0, t, fix_first=fix_first, free_times=free_times, tol=tol,
                                 max_iter=max_iter, progress=progress)
    scale = np.array([lu, lu, lu, vu, vu, vu])
    # dense samples of the converged trajectory, segment by segment
    samp = np.empty((ns + 1, 6))
    samp[0] = X[0]
    for k in range(m):
        sel = np.arange(k * stride + 1, (k + 1) * stride + 1)
        te = ts[sel] if not free_times else np.linspace(tt[k], tt[k + 1], stride + 1)[1:]
        samp[sel] = _model.propagate(mdl, X[k], tt[k], tt[k + 1], t_eval=te).states
    samp_t = ts if not free_times else np.concatenate(
        [[tt[0]]] + [np.linspace(tt[k], tt[k + 1], stride + 1)[1:] for k in range(m)])
    samp_km = samp * scale
    if free_times:
        # the design at the same epochs as the samples (the orbit is periodic: phase = t mod T)
        tau = np.mod(samp_t, T)
        order = np.argsort(tau, kind="stable")
        one = cr3bp_propagate(system, orbit.state, T, t_eval=np.clip(tau[order], 0.0, T), rtol=1e-13,
                              atol=1e-13).states
        rot = np.empty_like(one)
        rot[order] = one
        ref_km = _cr3bp_to_inertial(system, spec, samp_t, rot, central)
    ends, _ = _model.propagate_many(mdl, X[:-1], tt[:-1], tt[1:])
    gap = ends - X[1:]
    rows = []
    # the design's path: distance to its nearest point, and how far ahead or behind (timing)
    t_s = samp_t * system.time_s
    path, timing = path_and_timing_offsets(t_s, samp_km[:, :3], t_s, ref_km[:, :3], ref_km[:, 3:],
                                           window_s=0.5 * T * system.time_s)
    for r in range(revs):
        a, b = r * samples_per_rev, (r + 1) * samples_per_rev + 1
        dr = np.linalg.norm(samp_km[a:b, :3] - ref_km[a:b, :3], axis=1)
        dv = np.linalg.norm(samp_km[a:b, 3:] - ref_km[a:b, 3:], axis=1) * 1000.0
        rows.append({"rev": r + 1, "max_path_offset_km": float(path[a:b].max()),
                     "max_timing_offset_min": float(np.abs(timing[a:b]).max() / 60.0),
                     "max_same_epoch_separation_km": float(dr.max()),
                     "max_same_epoch_velocity_diff_mps": float(dv.max()),
                     "min_radius_km": _min_radius(samp_km[a:b, :3]),
                     "min_radius_cr3bp_km": _min_radius(ref_km[a:b, :3])})
    return Transition(
        model=mdl, epoch_tdb_s=spec.epoch_tdb_s, revs=revs, per_rev=tuple(rows), t_tu=tt,
        patches=X, patches_km=X * scale, initial_km=init_km, sample_t_tu=samp_t, sample_km=samp_km,
        reference_km=ref_km, dv_total_mps=0.0, iterations=iters, residuals=tuple(hist),
        continuity_km=float(np.abs(gap[:, :3]).max() * lu),
        continuity_mps=float(np.abs(gap[:, 3:]).max() * vu * 1000.0),
        options={"central": central, "per_rev": per_rev, "fix_first": fix_first,
                 "free_times": free_times, "tolerance": tol, "period_tu": T})


def _min_radius(r) -> float:
    """Least |r| of samples, refined by a parabola through the three samples around it."""
    d = np.linalg.norm(r, axis=1)
    i = int(np.argmin(d))
    if 0 < i < d.size - 1:
        y0, y1, y2 = d[i - 1], d[i], d[i + 1]
        den = y0 - 2 * y1 + y2
        if den > 0:
            return float(y1 - (y0 - y2) ** 2 / (8 * den))
    return float(d[i])
