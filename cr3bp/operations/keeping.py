"""Station-keeping budget: a Monte Carlo of orbit maintenance about an ephemeris-model reference.

Reference. The CR3BP orbit carried into the ephemeris model over the span and a few
revolutions beyond it (:func:`cr3bp.fidelity.transition.transition`, the trajectory
``librate refine --orbit`` computes): a continuous, ballistic multi-revolution baseline.

Control (x-axis crossing control, after Davis, Guzzetti et al., "Orbit maintenance and
navigation of human spacecraft at cislunar near rectilinear halo orbits", AAS 17-269, 2017,
and Guzzetti, Zimovan, Howell & Davis, "Stationkeeping analysis for spacecraft in lunar near
rectilinear halo orbits", AAS 17-395, 2017; both from memory; the crossing condition is the
one of Howell & Pernicka's libration-point station-keeping, J. Guidance 16(1), 1993, from
memory). Once a revolution, where the reference crosses the rotating x-z plane far from the
smaller primary (apolune for the near-rectilinear halos), or at a chosen interval, the
maneuver is the least Δv that, to first order, gives back the reference's rotating-frame
x velocity at the ``target_revs``-th crossing of that plane near the smaller primary
downstream (perilune for the near-rectilinear halos). With ``hold_phase`` the crossing epoch
is held too (two conditions), so the spacecraft keeps the reference's timing (its eclipse
phasing) instead of drifting along the orbit.

First order: with ``Phi`` the reference's state transition matrix from the maneuver epoch
``t_m`` to the crossing ``t_c``, ``y`` the rotating y (the crossing condition ``y = 0``) and
``q`` the rotating x velocity, a deviation ``dx(t_m)`` changes the crossing epoch by
``dt_c = -(dy/dx Phi dx) / y'`` and the crossing's x velocity by
``dq = (dq/dx - q'/y' dy/dx) Phi dx`` (the crossing-time partials of Howell & Pernicka 1993,
from memory). The maneuver ``dv`` solves ``B dv = -g(dx_nav)`` with ``B`` the velocity
columns of those rows, least norm (``dv = -B^T (B B^T)^-1 g``). The rows are computed once on
the reference; each trial uses them with its NAVIGATED deviation ``dx_nav = x_true + e_nav -
x_ref(t_m)``, executes ``dv`` with execution errors, and propagates its TRUE state in the
ephemeris model to the next maneuver. A planned Δv under ``min_burn_mps`` is skipped.

Floquet-mode control (``policy="floquet"``; after Simó, Gómez, Llibre & Martínez, "Station
keeping of a quasiperiodic halo orbit using invariant manifolds", Proc. 2nd International
Symposium on Spacecraft Flight Dynamics, ESA SP-255, 1986, and Howell & Gordon, "Orbit
determination error analysis and a station-keeping strategy for Sun-Earth L1 libration point
orbits", J. Astronautical Sciences 42(2), 1994; both from memory). At the same maneuver slots,
the state transition matrix of the reference from the maneuver over ``target_revs``
revolutions, ``Phi(t_m + N T, t_m)``, gives the unstable mode (its eigenvalue of largest
modulus) and its left eigenvector ``w`` (``w Phi = lambda w``, unit norm): ``w dx`` is the
deviation's component along the unstable mode, the one that grows by ``lambda`` over those
revolutions. The maneuver is the least Δv that cancels it (one row ``w``, the same least-norm
solve as the crossing control): the stable and centre components are left to the dynamics. No
crossing and no epoch are held. The published scheme takes the monodromy of a periodic
(N = 1); the ephemeris reference is not periodic, and for the weakly unstable 9:2 NRHO
(multiplier about 1.4 a revolution, close to the four of modulus 1) the one-revolution mode
changes from revolution to revolution so much that cancelling it each revolution lets the
deviation grow about threefold a revolution (measured); over N = 4 revolutions (the default)
the mode is well separated and the control holds (measured, tests/test_keeping_floquet.py).

Errors (1-σ, each axis of the J2000 equator frame, Gaussian): navigation position and
velocity; execution ``dv_exec = dv + s_p |dv| n_1 + s_f n_2`` (proportional, magnitude and
pointing together, and fixed; common practice). The true state starts on the reference plus
one navigation error (a navigated insertion). Every trial draws its numbers from its own
``numpy.random.Generator`` seeded by ``SeedSequence(seed, spawn_key=(trial,))``, so a trial
gives the same result alone, in a batch, in this process or in a pool worker.

Units inside: the model's LU, TU, VU, inertial about the central body. Everything a budget
reports is in the ephemeris model (point masses, optional cannonball radiation pressure).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from concurrent.futures import as_completed

import numpy as np

from .. import validate
from ..errors import InputError, NoSolutionError
from ..integrate.modes import MODE_EPHEMERIS
from ..cautions import caution
from ..integrate.events import table
from ..time import frames, ephemeris
from ..transfers import tasks

#: Continuity tolerance of the reference (nondimensional): tighter than the transition's
#: default 1e-9 so that the reference's own seams (Earth-Moon: 4 mm, 10 um/s) stay far below
#: any burn a trial plans.
REFERENCE_TOL = 1e-11
#: Integration tolerance of the trials (relative and absolute, nondimensional).
TRIAL_RTOL = 1e-11
#: A trial whose true position is farther than this from the reference at a maneuver point
#: (km) has left the orbit: it is counted as lost and not controlled further.
LOST_KM = 20000.0
#: Default revolutions from a maneuver to its target crossing.
TARGET_REVS = 4
#: No maneuver before this fraction of a period (the first comes a revolution after the start).
FIRST_MANEUVER = 0.25
#: Largest number of reference revolutions (the transition's limit).
MAX_REVS = 200
#: Step of the finite differences along the reference for the crossing rates (TU).
RATE_STEP_TU = 1e-4
#: Chunks of trials per pool worker.
CHUNKS_PER_WORKER = 2
#: Days in the year the budgets are scaled to (Julian year).
YEAR_DAYS = 365.25

MODEL_TEXT = ("ephemeris point-mass model (DE421 positions; cr3bp.fidelity), x-axis crossing "
              "control about the refined reference (Davis et al. 2017, AAS 17-269)")
#: Station-keeping policies: the control each one is, for the model line of a budget.
POLICIES = {"crossing": "x-axis crossing control about the refined reference (Davis et al. 2017, AAS 17-269)",
            "floquet": "Floquet-mode control about the refined reference: the unstable mode's component "
                       "cancelled (Simo et al. 1986, ESA SP-255; Howell & Gordon 1994)"}


@dataclass(frozen=True)
class Errors:
    """Error model, 1-σ per axis: navigation (km, m/s) and execution (fraction, m/s).

    Parameters
    ----------
    nav_position_km, nav_velocity_mps : float
        Navigation errors, 1-σ per axis of the J2000 equator axes.
    burn_proportional : float
        Execution error proportional to the burn (fraction, at most 1).
    burn_fixed_mps : float
        Execution error independent of the burn, m/s.

    Raises
    ------
    InputError
        A negative or non-finite value, or a proportional error over 100 %.

    Examples
    --------
    >>> Errors(1.0, 0.01, 0.01, 0.001).scaled(2).nav_position_km
    2.0

    References
    ----------
    Gómez, G., Llibre, J., Martínez, R. & Simó, C., "Dynamics and Mission Design Near Libration
    Points", vol. I, World Scientific (2001) (error models of libration-point station keeping,
    common practice).
    """

    nav_position_km: float = 0.0
    nav_velocity_mps: float = 0.0
    burn_proportional: float = 0.0
    burn_fixed_mps: float = 0.0

    def __post_init__(self):
        for name in ("nav_position_km", "nav_velocity_mps", "burn_fixed_mps"):
            validate.number_value(f"error {name}", getattr(self, name), 0.0)
        validate.number_value("error burn_proportional (fraction, 1 = 100 %)", self.burn_proportional, 0.0, 1.0)

    def scaled(self, k: float) -> "Errors":
        return Errors(*(k * v for v in (self.nav_position_km, self.nav_velocity_mps,
                                         self.burn_proportional, self.burn_fixed_mps)))

    def to_dict(self) -> dict:
        return {"nav_position_km": self.nav_position_km, "nav_velocity_mps": self.nav_velocity_mps,
                "burn_proportional": self.burn_proportional, "burn_fixed_mps": self.burn_fixed_mps,
                "sigma": "1-sigma per axis (J2000 equator), Gaussian"}


@dataclass(frozen=True)
class Reference:
    """What every trial shares: the model, the maneuver slots and their first-order rows.

    Parameters
    ----------
    model : Model
        Ephemeris model (:mod:`cr3bp.fidelity.model`).
    epoch_tdb_s : float
        Model time 0, TDB seconds since J2000.
    span_tu : float
        The span maintained, TU.
    t_man : numpy.ndarray, shape (K,)
        Maneuver epochs, TU from the epoch.
    x_man : numpy.ndarray, shape (K, 6)
        Reference states there (nondimensional, inertial).
    t_cross : numpy.ndarray, shape (K,)
        Each maneuver's target crossing, TU.
    rows : numpy.ndarray, shape (K, m, 6)
        d(condition)/d(state at t_man); m = 1 (x velocity) or 2 (and the epoch).
    x0 : numpy.ndarray, shape (6,)
        Reference state at t = 0.
    period_tu : float
        The CR3BP orbit's period.
    revs : int
        Reference revolutions.
    hold_phase : bool
        Whether the crossing epoch is held too.
    target_revs : int
        Revolutions from a maneuver to its target crossing.
    interval_tu : float or None
        Maneuver interval, or None for once a revolution.
    info : dict
        The transition's figures (iterations, continuity, ...).

    Examples
    --------
    >>> ref = reference(orbit, "2031-03-01T00:00:00 TDB", 30.0 / orbit.system.time_days)  # doctest: +SKIP

    References
    ----------
    Howell, K. C. & Pernicka, H. J., "Station-keeping method for libration point trajectories",
    Journal of Guidance, Control, and Dynamics 16(1), 151 (1993) (from memory).
    """

    model: object
    epoch_tdb_s: float
    span_tu: float
    t_man: np.ndarray
    x_man: np.ndarray
    t_cross: np.ndarray
    rows: np.ndarray
    x0: np.ndarray
    period_tu: float
    revs: int
    hold_phase: bool
    target_revs: int
    interval_tu: float | None
    info: dict = field(default_factory=dict)
    policy: str = "crossing"

    @property
    def model_text(self) -> str:
        """The model and the control, in words."""
        return ("ephemeris point-mass model (DE421 positions; cr3bp.fidelity), " + POLICIES[self.policy])

    @property
    def system(self):
        return self.model.system

    def to_dict(self) -> dict:
        s = self.system
        return {"model": self.model.to_dict(), "epoch_tdb_s": self.epoch_tdb_s,
                "span_days": self.span_tu * s.time_days, "revolutions": self.revs,
                "period_days": self.period_tu * s.time_days, "target_revs": self.target_revs,
                "hold_phase": self.hold_phase, "policy": self.policy,
                "interval_days": None if self.interval_tu is None else self.interval_tu * s.time_days,
                "maneuver_days": (self.t_man * s.time_days).tolist(),
                "target_crossing_days": (self.t_cross * s.time_days).tolist(), "transition": dict(self.info)}


# ---- the rotating frame of the reference ----------------------------------------------------

def _frame(model, epoch_tdb_s):
    s = model.system
    spec = frames.frame(s, float(epoch_tdb_s), anchor="ephemeris", axes="j2000-equator", center="secondary")
    sec = frames._BODY.get(s.secondary.name, s.secondary.name)
    return spec, sec


def _rotating(model, frame, t_tu, X):
    """Nondimensional inertial states about the central body -> rotating states (the project's
    ephemeris-anchored, pulsating frame, :func:`cr3bp.time.frames.from_frame`)."""
    spec, sec = frame
    s = model.system
    t = np.atleast_1d(np.asarray(t_tu, dtype=float))
    tdb = spec.epoch_tdb_s + t * s.time_s
    km = np.atleast_2d(X) * _scale(s)
    if sec != model.central:
        km = km - np.asarray(ephemeris.state(sec, frames._epoch(tdb), model.central, "j2000-equator"))
    return frames.from_frame(spec, tdb, km)[1]


def _scale(s):
    lu, vu = s.length_km, s.velocity_kms
    return np.array([lu, lu, lu, vu, vu, vu])


def _state_at(model, patches, t_patch, t):
    """Reference states at times ``t`` (TU), each propagated from the patch point before it."""
    from ..fidelity import model as fm  # lazy: heavy library (numba, via cr3bp.fidelity.model)
    t = np.atleast_1d(np.asarray(t, dtype=float))
    k = np.clip(np.searchsorted(t_patch, t, side="right") - 1, 0, len(t_patch) - 2)
    out = np.empty((t.size, 6))
    same = t == t_patch[k]
    out[same] = patches[k[same]]
    go = ~same
    if go.any():
        out[go] = fm.propagate_many(model, patches[k[go]], t_patch[k[go]], t[go], rtol=1e-13, atol=1e-13)[0]
    return out


def _crossings(model, frame, tr):
    """Epochs (TU) where the reference crosses the rotating x-z plane, refined by Newton's
    method on y(t) (y' = the rotating y velocity), and the distance to the secondary there."""
    rot = _rotating(model, frame, tr.sample_t_tu, tr.sample_km / _scale(model.system))
    y = rot[:, 1]
    i = np.nonzero((y[:-1] * y[1:] < 0.0) | ((y[1:] == 0.0) & (y[:-1] != 0.0)))[0]
    t = tr.sample_t_tu[i] - y[i] * (tr.sample_t_tu[i + 1] - tr.sample_t_tu[i]) / (y[i + 1] - y[i])
    for _ in range(4):
        r = _rotating(model, frame, t, _state_at(model, tr.patches, tr.t_tu, t))
        t = t - r[:, 1] / r[:, 4]
    r = _rotating(model, frame, t, _state_at(model, tr.patches, tr.t_tu, t))
    mu = model.system.mu
    dist = np.linalg.norm(r[:, :3] - np.array([1.0 - mu, 0.0, 0.0]), axis=1)
    return t, dist, np.abs(r[:, 1]).max() if t.size else 0.0


def _condition_rows(model, frame, t_c, x_c, hold_phase):
    """d(condition at the crossing)/d(state at the crossing), (K, m, 6) for K crossings at once:
    the rotating x velocity with the crossing-time term, and (hold_phase) the crossing epoch.
    Central differences of the (affine, fixed-epoch) map to the rotating frame, and of the
    reference's rotating x velocity along it over :data:`RATE_STEP_TU`; every crossing's states
    go through the frame and the propagator together (one call each, not one per crossing)."""
    from ..fidelity import model as fm  # lazy: heavy library (numba, via cr3bp.fidelity.model)
    t_c = np.atleast_1d(np.asarray(t_c, dtype=float))
    x_c = np.atleast_2d(np.asarray(x_c, dtype=float))
    k, n = t_c.size, 6
    h = 1e-6
    e = np.eye(n) * h
    states = np.concatenate([x_c[:, None, :] + e[None], x_c[:, None, :] - e[None], x_c[:, None, :]], axis=1)
    r = _rotating(model, frame, np.repeat(t_c, 2 * n + 1), states.reshape(-1, n)).reshape(k, 2 * n + 1, n)
    grad_y = (r[:, :n, 1] - r[:, n:2 * n, 1]) / (2 * h)       # d y / dx at fixed epoch, (K, 6)
    grad_q = (r[:, :n, 3] - r[:, n:2 * n, 3]) / (2 * h)       # d q / dx
    ydot = r[:, 2 * n, 4]
    dt = RATE_STEP_TU
    ends, _ = fm.propagate_many(model, np.concatenate([x_c, x_c]), np.concatenate([t_c, t_c]),
                                np.concatenate([t_c + dt, t_c - dt]), rtol=1e-13, atol=1e-13)
    rr = _rotating(model, frame, np.concatenate([t_c + dt, t_c - dt]), ends)
    qdot = (rr[:k, 3] - rr[k:, 3]) / (2 * dt)
    rows = [grad_q - (qdot / ydot)[:, None] * grad_y]
    if hold_phase:
        rows.append(-grad_y / ydot[:, None])
    return np.stack(rows, axis=1)


def reference(orbit, epoch, span_tu: float, *, bodies=("sun", "earth", "moon"), srp=None,
              target_revs: int = TARGET_REVS, interval_tu: float | None = None, hold_phase: bool = False,
              policy: str = "crossing", progress=None) -> Reference:
    """The ephemeris-model reference over the span and the first-order rows of every maneuver.

    Parameters
    ----------
    orbit : PeriodicOrbit
        Of a dimensional system with an ephemeris pair.
    epoch : str or float
        ISO text (Z = UTC) or TDB seconds since J2000.
    span_tu : float
        Span maintained (TU).
    bodies, srp
        The force model (:func:`cr3bp.fidelity.model.build`).
    target_revs : int, optional
        Revolutions from a maneuver to its target crossing (1..10).
    interval_tu : float, optional
        Maneuvers every interval instead of once a revolution.
    hold_phase : bool, optional
        Hold the crossing epoch too (crossing control only).
    policy : {"crossing", "floquet"}, optional
        The control (module notes): x-axis crossing control (default) or Floquet-mode control.
    progress : callable(str), optional
        One line per step.

    Returns
    -------
    Reference
        The reference trajectory, maneuver slots and rows.

    Raises
    ------
    InputError
        A span beyond the transition's 200 revolutions, bad options.
    NoSolutionError
        The reference does not cross the rotating x-z plane twice a revolution.
    ConvergenceError
        The transition does not converge.

    Examples
    --------
    >>> from cr3bp import orbit, system
    >>> nrho = orbit(system("earth-moon"), "halo L2 south resonance=9:2")    # doctest: +SKIP
    >>> ref = reference(nrho, "2031-03-01T00:00:00 TDB", 30 / nrho.system.time_days)  # doctest: +SKIP
    >>> ref.t_man.size                                                       # doctest: +SKIP
    4

    References
    ----------
    Howell, K. C. & Pernicka, H. J., "Station-keeping method for libration point trajectories",
    Journal of Guidance, Control, and Dynamics 16(1), 151 (1993); Davis, D. C. et al., "Orbit
    maintenance and navigation of human spacecraft at cislunar near rectilinear halo orbits",
    AAS 17-269 (2017) (both from memory).
    """
    from ..fidelity import model as fm  # lazy: heavy library (numba, via cr3bp.fidelity.model)
    from ..fidelity.transition import transition  # lazy: heavy library (numba, via cr3bp.fidelity.transition)
    T = float(orbit.period)
    if policy not in POLICIES:
        raise InputError(f"station-keeping policy '{policy}': allowed {', '.join(POLICIES)}")
    if policy == "floquet" and hold_phase:
        raise InputError("hold_phase goes with the crossing policy; the Floquet-mode control holds no epoch")
    span_tu = validate.positive_number("span (TU)", span_tu)
    target_revs = validate.whole_number("target revolutions", target_revs, 1, 10)
    if interval_tu is not None:
        days = orbit.system.time_days
        validate.number_value("maneuver interval (d, from 5 % of the period to the span)",
                              validate.finite_number("maneuver interval (TU)", interval_tu) * days,
                              0.05 * T * days, span_tu * days)
    revs = int(math.ceil(span_tu / T - 1e-9)) + target_revs + 2
    if revs > MAX_REVS:
        s = orbit.system
        raise InputError(f"span {span_tu * s.time_days:.6g} d needs {revs} reference revolutions of "
                         f"{T * s.time_days:.4g} d; at most {MAX_REVS} (shorten the span)")
    if progress:
        progress(f"reference: {revs} revolutions in the ephemeris model (multiple shooting)...")
    tr = transition(orbit, epoch, revs, bodies, srp=srp, tol=REFERENCE_TOL, max_iter=40)
    model = tr.model
    frame = _frame(model, tr.epoch_tdb_s)
    t_x, dist, _ = _crossings(model, frame, tr)
    if t_x.size < 2 * revs - 2 or t_x.size > 2 * revs + 2:
        raise NoSolutionError(f"the reference crosses the rotating x-z plane {t_x.size} times in {revs} "
                              "revolutions; the x-axis crossing control needs two crossings a revolution")
    near_parity = 0 if dist[0::2].mean() < dist[1::2].mean() else 1
    is_near = (np.arange(t_x.size) % 2) == near_parity
    near, far = t_x[is_near], t_x[~is_near]
    if interval_tu is None:
        t_man = far[(far >= FIRST_MANEUVER * T) & (far <= span_tu * (1 + 1e-12))]
    else:
        t_man = interval_tu * np.arange(1, int(math.floor(span_tu / interval_tu * (1 + 1e-12))) + 1)
    if t_man.size == 0:
        raise InputError(f"no maneuver falls in the span of {span_tu * orbit.system.time_days:.6g} d; "
                         "lengthen it")
    idx = np.searchsorted(near, t_man, side="right") + target_revs - 1
    if idx.max() >= near.size:
        raise NoSolutionError("a target crossing lies beyond the reference; lower the target revolutions")
    t_c = near[idx]
    if progress:
        progress(f"reference: {t_man.size} maneuver points, sensitivities to their target crossings...")
    x_man = _state_at(model, tr.patches, tr.t_tu, t_man)
    if policy == "floquet":
        rows = floquet_rows(model, x_man, t_man, target_revs * T)
    else:
        x_c, phis = fm.propagate_many(model, x_man, t_man, t_c, stm=True, rtol=1e-13, atol=1e-13)
        rows = np.einsum("kmi,kij->kmj", _condition_rows(model, frame, t_c, x_c, hold_phase), phis)
    info = {"iterations": tr.iterations, "continuity_km": tr.continuity_km,
            "continuity_mps": tr.continuity_mps, "patch_points": int(tr.t_tu.size),
            "max_path_offset_km": max(r["max_path_offset_km"] for r in tr.per_rev),
            "central": model.central, "bodies": list(model.bodies), "ephemeris": model.ephemeris}
    return Reference(model, tr.epoch_tdb_s, float(span_tu), t_man, x_man, t_c, rows, tr.patches[0].copy(),
                     T, revs, bool(hold_phase), target_revs, interval_tu, info, policy)


def floquet_rows(model, x_man, t_man, span_tu: float) -> np.ndarray:
    """The unstable mode's left eigenvector of the reference's map over ``span_tu`` from each
    maneuver, (K, 1, 6).

    Parameters
    ----------
    model : Model
        The ephemeris model.
    x_man : numpy.ndarray, shape (K, 6)
        Reference states at the maneuvers (nondimensional, inertial).
    t_man : numpy.ndarray, shape (K,)
        Maneuver epochs, TU.
    span_tu : float
        The span of the transition matrix: whole revolutions of the CR3BP orbit.

    Returns
    -------
    numpy.ndarray, shape (K, 1, 6)
        Unit rows ``w`` with ``w Phi(t_m + span, t_m) = lambda w``, ``lambda`` the eigenvalue
        of largest modulus (real and over 1).

    Raises
    ------
    NoSolutionError
        An orbit without a real unstable mode (``|lambda| <= 1`` or a complex pair): nothing
        for Floquet-mode control to cancel.

    Examples
    --------
    >>> rows = floquet_rows(ref.model, ref.x_man, ref.t_man, 4 * ref.period_tu)   # doctest: +SKIP

    References
    ----------
    Howell, K. C. & Gordon, S. C., "Orbit determination error analysis and a station-keeping
    strategy for Sun-Earth L1 libration point orbits", Journal of the Astronautical Sciences
    42(2), 207 (1994); Simó, C., Gómez, G., Llibre, J. & Martínez, R., "Station keeping of a
    quasiperiodic halo orbit using invariant manifolds", ESA SP-255 (1986) (both from memory).
    """
    from ..fidelity import model as fm  # lazy: heavy library (numba, via cr3bp.fidelity.model)
    t_man = np.atleast_1d(np.asarray(t_man, dtype=float))
    _, phis = fm.propagate_many(model, np.atleast_2d(x_man), t_man, t_man + float(span_tu), stm=True,
                                rtol=1e-13, atol=1e-13)
    rows = np.empty((t_man.size, 1, 6))
    for k, phi in enumerate(phis):
        lam, w = np.linalg.eig(phi.T)             # left eigenvectors of phi
        j = int(np.argmax(np.abs(lam)))
        if abs(lam[j]) <= 1.0 + 1e-6 or abs(lam[j].imag) > 1e-9 * abs(lam[j]):
            raise NoSolutionError(f"the reference's map has no real unstable mode at maneuver "
                                  f"{k + 1} (largest multiplier {complex(lam[j]):.4g}); use the crossing policy")
        v = np.real(w[:, j])
        v = v / np.linalg.norm(v)
        rows[k, 0] = v if v[np.argmax(np.abs(v))] > 0 else -v     # a fixed sign: the same row each run
    return rows


# ---- the trials ----------------------------------------------------------------------------

def trial_rng(seed: int, trial: int):
    """The trial's own random generator (the same wherever the trial runs).

    Parameters
    ----------
    seed : int
        The run's seed.
    trial : int
        The trial's index.

    Returns
    -------
    numpy.random.Generator
        Seeded from ``SeedSequence(seed, spawn_key=(trial,))``.

    Raises
    ------
    TypeError
        Non-integer seed or trial.

    Examples
    --------
    >>> float(trial_rng(1, 5).standard_normal()) == float(trial_rng(1, 5).standard_normal())
    True

    References
    ----------
    NumPy documentation, "Parallel random number generation" (SeedSequence spawning); O'Neill,
    M. E., "PCG: A family of simple fast space-efficient statistically good algorithms for random
    number generation", Harvey Mudd College HMC-CS-2014-0905 (2014).
    """
    return np.random.default_rng(np.random.SeedSequence(int(seed), spawn_key=(int(trial),)))


def _draws(seed, trials, k):
    """Standard normal draws of each trial: (n, 6 + 12 K): the insertion's navigation error,
    then per maneuver navigation (6) and execution (proportional 3, fixed 3)."""
    return np.array([trial_rng(seed, i).standard_normal(6 + 12 * k) for i in trials]).reshape(len(trials), -1)


def _propagate(model, X, t0, t1, alive):
    """True states of the live trials from t0 to t1 (compiled, in parallel); a failed
    propagation (impact, step limit) marks its trial lost."""
    from ..fidelity import model as fm  # lazy: heavy library (numba, via cr3bp.fidelity.model)
    from ..fidelity.segments import integrate_segments  # lazy: heavy library (numba, via cr3bp.fidelity.segments)
    rows = np.nonzero(alive)[0]
    if rows.size == 0 or t1 <= t0:
        return X
    y0 = np.ascontiguousarray(X[rows])
    out_y = np.empty_like(y0)
    status = np.zeros(rows.size, dtype=np.int64)
    out_t = np.empty(rows.size)
    integrate_segments(MODE_EPHEMERIS, model.params, y0, np.full(rows.size, float(t0)), np.full(rows.size, float(t1)),
                       TRIAL_RTOL, TRIAL_RTOL, math.inf, int(fm.dop853.DEFAULT_MAX_STEPS), table(()),
                       out_y, status, out_t)
    X = X.copy()
    X[rows] = out_y
    alive[rows[status < 0]] = False
    return X


def simulate(ref: Reference, errors: Errors, trials, seed: int, min_burn_mps: float = 0.0) -> dict:
    """Run the trials ``trials`` (indices) together; arrays per trial (see :class:`Budget`).

    Parameters
    ----------
    ref : Reference
        From :func:`reference`.
    errors : Errors
        The error model.
    trials : iterable of int
        Trial indices (each draws from :func:`trial_rng`).
    seed : int
        The run's seed.
    min_burn_mps : float, optional
        Planned burns under this are skipped.

    Returns
    -------
    dict
        Plain arrays: ``dv_mps`` (n, K, 3) executed burns (zeros where skipped, inertial J2000
        axes), ``planned_mps`` (n, K) planned magnitudes before the minimum-burn rule, ``states``
        (n, K + 1, 6) true states just before each maneuver and at the span's end
        (nondimensional), ``deviation_km`` (n, K) true distance to the reference at each
        maneuver, ``lost`` (n,) index of the maneuver at which a trial left the orbit (-1: kept).

    Raises
    ------
    ValueError
        Arrays of the wrong shape (a reference not made by :func:`reference`); a trial that
        leaves the orbit is marked ``lost``, not raised.

    Examples
    --------
    >>> res = simulate(ref, Errors(1.0, 0.01), range(10), seed=1)    # doctest: +SKIP

    References
    ----------
    Howell, K. C. & Pernicka, H. J., "Station-keeping method for libration point trajectories",
    Journal of Guidance, Control, and Dynamics 16(1), 151 (1993) (from memory).
    """
    trials = np.asarray(list(trials), dtype=int)
    n, K = trials.size, ref.t_man.size
    s = ref.system
    vu_mps = s.velocity_kms * 1000.0
    z = _draws(seed, trials, K)
    sig_nav = np.array([errors.nav_position_km / s.length_km] * 3 + [errors.nav_velocity_mps / vu_mps] * 3)
    X = ref.x0[None, :] + z[:, :6] * sig_nav
    alive = np.ones(n, dtype=bool)
    lost = np.full(n, -1)
    dv_out = np.zeros((n, K, 3))
    planned = np.zeros((n, K))
    states = np.zeros((n, K + 1, 6))
    dev_km = np.zeros((n, K))
    t_prev = 0.0
    min_burn = min_burn_mps / vu_mps
    for k in range(K):
        X = _propagate(ref.model, X, t_prev, ref.t_man[k], alive)
        lost[(~alive) & (lost < 0)] = k
        states[:, k] = X
        dev_km[:, k] = np.sqrt(np.sum((X[:, :3] - ref.x_man[k, :3]) ** 2, axis=1)) * s.length_km
        gone = alive & (dev_km[:, k] > LOST_KM)
        lost[gone] = k
        alive &= ~gone
        zk = z[:, 6 + 12 * k: 18 + 12 * k]
        nav = X + zk[:, :6] * sig_nav
        # row by row, in a fixed order of operations (no matrix product over the trials, whose
        # rounding could depend on how many trials run together)
        d = nav - ref.x_man[k]
        B = ref.rows[k][:, 3:]                                         # (m, 3)
        M = np.linalg.solve(B @ B.T, B)                                # least-norm solution
        dv = np.zeros((n, 3))
        for j, row in enumerate(ref.rows[k]):
            dv -= np.sum(d * row, axis=1)[:, None] * M[j]
        mag = np.sqrt(np.sum(dv * dv, axis=1))
        planned[:, k] = np.where(alive, mag, 0.0) * vu_mps
        burn = alive & (mag >= min_burn) & (mag > 0.0)
        ex = dv + (errors.burn_proportional * mag[:, None] * zk[:, 6:9]
                   + (errors.burn_fixed_mps / vu_mps) * zk[:, 9:12])
        ex[~burn] = 0.0
        X[:, 3:] += ex
        dv_out[:, k] = ex * vu_mps
        t_prev = ref.t_man[k]
    X = _propagate(ref.model, X, t_prev, ref.span_tu, alive)
    lost[(~alive) & (lost < 0)] = K
    states[:, K] = X
    return {"trials": trials, "dv_mps": dv_out, "planned_mps": planned, "states": states,
            "deviation_km": dev_km, "lost": lost}


def _chunk(task):
    """One task of the pool or of dask: a chunk of trials in a worker (compiled code on one
    thread there; the workers provide the parallelism)."""
    try:
        import numba  # lazy: heavy library (numba), its failure handled here
        numba.set_num_threads(1)
    except Exception:          # pragma: no cover - a numba without threading control
        pass
    return simulate(task["reference"], task["errors"], task["trials"], task["seed"], task["min_burn_mps"])


def chunks(n: int, workers: int) -> list:
    """The trials ``0..n-1`` split into :data:`CHUNKS_PER_WORKER` contiguous chunks per worker
    (sizes differ by at most one): a few tasks per worker, so the round trips are few and a
    slow worker is still helped by the others at the end.

    Parameters
    ----------
    n : int
        Number of trials.
    workers : int
        Number of workers (a value below 1 counts as 1).

    Returns
    -------
    list of list of int
        At most ``CHUNKS_PER_WORKER * workers`` (and at most ``n``) non-empty chunks of
        consecutive trial indices, in order, covering ``0..n-1`` once.

    Raises
    ------
    TypeError, ValueError
        A ``workers`` that is not a whole number.

    Examples
    --------
    >>> chunks(10, 2)
    [[0, 1], [2, 3, 4], [5, 6], [7, 8, 9]]
    >>> chunks(3, 8)
    [[0], [1], [2]]

    References
    ----------
    Dask documentation, "Dask Best Practices" (a few tasks per worker, each large enough to
    outweigh its scheduling cost; common practice).
    """
    k = max(1, min(n, CHUNKS_PER_WORKER * max(1, int(workers))))
    bounds = [n * j // k for j in range(k + 1)]
    return [list(range(a, b)) for a, b in zip(bounds, bounds[1:]) if b > a]


def _collect(futures, completed, n, progress=None) -> dict:
    """The chunks' results as they complete (``completed``: the ``as_completed`` of the pool or
    of dask), merged in trial order."""
    parts, done = [], 0
    for f in completed(futures):
        part = f.result()
        parts.append(part)
        done += part["trials"].size
        if progress:
            progress(done, n)
    return _merge(parts)


def _merge(parts):
    out = {}
    for key in parts[0]:
        out[key] = np.concatenate([p[key] for p in parts])
    order = np.argsort(out["trials"], kind="stable")
    return {k: v[order] for k, v in out.items()}


def run_trials(ref: Reference, errors: Errors, trials: int, seed: int = 0, *, min_burn_mps: float = 0.0,
               workers: int | None = None, scheduler=None, progress=None, executor=None) -> dict:
    """:func:`simulate` over ``trials`` trials, here or over a pool of processes or a dask cluster.

    In this process (``workers`` None or 1; the compiled propagation runs the trials on parallel
    threads) or over a process pool of ``workers`` processes, with the pool helpers of
    :mod:`cr3bp.transfers.tasks` (workers die with the parent, Ctrl-C goes to the parent). The
    trials go in :func:`chunks` (a few tasks per worker, each on one thread). The result does
    not depend on ``workers`` or ``scheduler`` (byte for byte: every trial draws from its own
    generator and is computed row by row).

    Parameters
    ----------
    ref : Reference
        From :func:`reference`.
    errors : Errors
        The error model.
    trials : int
        Number of trials (at least 1).
    seed : int, optional
        The run's seed.
    min_burn_mps : float, optional
        Planned burns under this are skipped.
    workers : int, optional
        Processes (default: this one).
    scheduler : distributed.Client or str, optional
        A client, the address of a dask.distributed scheduler, or ``"local"`` / ``"local:N"`` (a
        local cluster of N worker processes, default ``workers`` or 2, started and stopped
        here); the trials go there in the same chunks (:func:`on_dask`).
    progress : callable(done, total), optional
        Called as chunks finish.
    executor : concurrent.futures.ProcessPoolExecutor, optional
        A pool of ``workers`` already started (:func:`cr3bp.transfers.tasks.start_pool`; a
        warm one saves the workers' start-up): used and left running for its owner.

    Returns
    -------
    dict
        As :func:`simulate`, over all trials in trial order.

    Raises
    ------
    InputError
        Fewer than one trial or worker, or an unreachable scheduler.

    Examples
    --------
    >>> res = run_trials(ref, Errors(1.0, 0.01), 50, seed=1, workers=2)    # doctest: +SKIP

    References
    ----------
    Howell, K. C. & Pernicka, H. J., "Station-keeping method for libration point trajectories",
    Journal of Guidance, Control, and Dynamics 16(1), 151 (1993) (from memory).
    """
    n = validate.whole_number("trials", trials, 1)
    if scheduler is not None:
        return on_dask(ref, errors, n, seed, min_burn_mps, scheduler, workers, progress)
    workers = 1 if workers is None else validate.whole_number("workers", workers, 1)
    if workers == 1 or n == 1:
        res = simulate(ref, errors, range(n), seed, min_burn_mps)
        if progress:
            progress(n, n)
        return res
    parts = chunks(n, workers)
    # spawned workers (as transfers.tasks: no fork under compiled threads), one kernel thread each
    ex = executor if executor is not None else tasks.start_pool(min(workers, len(parts)))
    try:
        with tasks.sigint_ignored():
            futs = [ex.submit(_chunk, {"reference": ref, "errors": errors, "trials": c, "seed": seed,
                                       "min_burn_mps": min_burn_mps}) for c in parts]
        out = _collect(futs, as_completed, n, progress)
    except BaseException:
        tasks.stop_pool(ex)
        raise
    if executor is None:
        ex.shutdown(wait=True)
    return out


# the dask helpers live in cr3bp.transfers.tasks (shared with the transfer graph and the family
# atlas); the names stay here for the callers of this module
CONNECT_TIMEOUT_S = tasks.CONNECT_TIMEOUT_S
MAX_LOCAL_WORKERS = tasks.MAX_LOCAL_WORKERS
LOCAL_HTTP_ADDRESS = tasks.LOCAL_HTTP_ADDRESS
local_workers = tasks.local_workers
dask_client = tasks.dask_client
close_dask = tasks.close_dask


def on_dask(ref: Reference, errors: Errors, n: int, seed: int, min_burn_mps: float, scheduler,
            workers: int | None = None, progress=None) -> dict:
    """:func:`simulate` over ``n`` trials in :func:`chunks` on a dask.distributed cluster.

    The reference is sent once to every worker; the result equals the one computed in this
    process (per-trial generators).

    Parameters
    ----------
    ref, errors, n, seed, min_burn_mps
        As for :func:`run_trials`.
    scheduler : distributed.Client or str
        As for :func:`dask_client`.
    workers : int, optional
        Processes of a local cluster.
    progress : callable(done, total), optional
        Called as chunks finish.

    Returns
    -------
    dict
        As :func:`simulate`.

    Raises
    ------
    InputError
        dask.distributed missing, or the scheduler cannot be reached.

    Examples
    --------
    >>> res = on_dask(ref, Errors(1.0, 0.01), 50, 1, 0.0, "local")   # doctest: +SKIP

    References
    ----------
    Rocklin, M., "Dask: Parallel computation with blocked algorithms and task scheduling",
    Proceedings of the 14th Python in Science Conference (2015).
    """
    from distributed import as_completed  # lazy: heavy library (distributed)
    client, cluster = dask_client(scheduler, workers)
    try:
        k = max(1, len(client.scheduler_info().get("workers", {})) or 1)
        ref_f = client.scatter(ref, broadcast=True)
        futs = [client.submit(_dask_chunk, ref_f, errors, c, seed, min_burn_mps, pure=False) for c in chunks(n, k)]
        return _collect(futs, as_completed, n, progress)
    finally:
        if client is not scheduler:
            close_dask(client, cluster)


def _dask_chunk(ref, errors, trials, seed, min_burn_mps):
    return _chunk({"reference": ref, "errors": errors, "trials": trials, "seed": seed, "min_burn_mps": min_burn_mps})


# ---- the budget ----------------------------------------------------------------------------

@dataclass(frozen=True)
class Budget:
    """Station-keeping Monte Carlo result (ephemeris model).

    Parameters
    ----------
    reference : Reference
        The shared reference.
    errors : Errors
        The error model.
    seed : int
        The run's seed.
    min_burn_mps : float
        The minimum-burn rule.
    result : dict
        :func:`simulate`'s arrays over all trials (trial order).

    Examples
    --------
    >>> b = budget(nrho, "2031-03-01T00:00:00 TDB", 30 / nrho.system.time_days,
    ...            Errors(1.0, 0.01, 0.01, 0.001), trials=20, seed=1)      # doctest: +SKIP

    References
    ----------
    Howell, K. C. & Pernicka, H. J., "Station-keeping method for libration point trajectories",
    Journal of Guidance, Control, and Dynamics 16(1), 151 (1993) (from memory).
    """

    reference: Reference
    errors: Errors
    seed: int
    min_burn_mps: float
    result: dict

    @property
    def trials(self) -> int:
        return int(self.result["trials"].size)

    @property
    def span_days(self) -> float:
        return self.reference.span_tu * self.reference.system.time_days

    @property
    def burn_mps(self) -> np.ndarray:
        """(trials, K) executed burn magnitudes, m/s (0: no burn)."""
        return np.linalg.norm(self.result["dv_mps"], axis=2)

    @property
    def total_mps(self) -> np.ndarray:
        """Δv of each trial over the span, m/s."""
        return self.burn_mps.sum(axis=1)

    @property
    def per_year_mps(self) -> np.ndarray:
        return self.total_mps * (YEAR_DAYS / self.span_days)

    @property
    def maneuvers(self) -> np.ndarray:
        """Burns executed by each trial over the span."""
        return (self.burn_mps > 0).sum(axis=1)

    @property
    def lost(self) -> int:
        return int((self.result["lost"] >= 0).sum())

    def summary(self) -> dict:
        py = self.per_year_mps
        b = self.burn_mps
        burns = b[b > 0]
        slots = int(self.reference.t_man.size)
        dev = self.result["deviation_km"]
        year = YEAR_DAYS / self.span_days
        return {
            "trials": self.trials, "maneuver_slots": slots, "lost_trials": self.lost,
            "dv_per_year_mps": {"mean": float(py.mean()), "p95": float(np.percentile(py, 95)),
                                "min": float(py.min()), "max": float(py.max())},
            "dv_over_span_mps": {"mean": float(self.total_mps.mean()),
                                 "p95": float(np.percentile(self.total_mps, 95))},
            "dv_per_maneuver_mps": {"mean": float(burns.mean()) if burns.size else 0.0,
                                    "p95": float(np.percentile(burns, 95)) if burns.size else 0.0,
                                    "max": float(burns.max()) if burns.size else 0.0},
            "maneuvers_over_span": {"mean": float(self.maneuvers.mean()), "min": int(self.maneuvers.min()),
                                    "max": int(self.maneuvers.max())},
            "maneuvers_per_year": {"mean": float(self.maneuvers.mean() * year)},
            "skipped_under_min_burn": int(((self.result["planned_mps"] > 0) & (b == 0)).sum()),
            "deviation_at_maneuvers_km": {"median": float(np.median(dev)), "p95": float(np.percentile(dev, 95)),
                                          "max": float(dev.max())},
        }

    def to_dict(self) -> dict:
        return {"model": self.reference.model_text, "reference": self.reference.to_dict(), "errors": self.errors.to_dict(),
                "seed": self.seed, "min_burn_mps": self.min_burn_mps, "summary": self.summary(),
                "dv_per_year_mps": self.per_year_mps.tolist(), "maneuvers": self.maneuvers.tolist(),
                "lost_at_maneuver": self.result["lost"].tolist(), "caution": caution("ephemeris")}


def budget(orbit, epoch, span_tu: float, errors: Errors, trials: int, *, seed: int = 0,
           min_burn_mps: float = 0.0, bodies=("sun", "earth", "moon"), srp=None,
           target_revs: int = TARGET_REVS, interval_tu: float | None = None, hold_phase: bool = False,
           policy: str = "crossing", workers: int | None = None, scheduler=None, progress=None) -> Budget:
    """Station-keeping budget of ``orbit`` from ``epoch`` over ``span_tu`` (module notes).

    Parameters
    ----------
    orbit : PeriodicOrbit
        Of a dimensional system with an ephemeris pair.
    epoch : str or float
        ISO text (Z = UTC) or TDB seconds since J2000.
    span_tu : float
        Span maintained (TU).
    errors : Errors
        The error model.
    trials : int
        Monte Carlo trials.
    seed, min_burn_mps
        As for :func:`run_trials`.
    bodies, srp, target_revs, interval_tu, hold_phase, policy
        As for :func:`reference`.
    workers, scheduler, progress
        As for :func:`run_trials`.

    Returns
    -------
    Budget
        The reference, the error model and the trials' arrays.

    Raises
    ------
    InputError
        Bad options (a negative minimum burn, errors not an :class:`Errors`, ...).
    NoSolutionError
        The reference does not cross the rotating x-z plane twice a revolution.
    ConvergenceError
        The transition to the ephemeris model does not converge.

    Examples
    --------
    >>> from cr3bp import orbit, system
    >>> nrho = orbit(system("earth-moon"), "halo L2 south resonance=9:2")    # doctest: +SKIP
    >>> b = budget(nrho, "2031-03-01T00:00:00 TDB", 30 / nrho.system.time_days,
    ...            Errors(1.0, 0.01, 0.01, 0.001), trials=20, seed=1)      # doctest: +SKIP
    >>> b.trials                                                            # doctest: +SKIP
    20

    References
    ----------
    Howell, K. C. & Pernicka, H. J., "Station-keeping method for libration point trajectories",
    Journal of Guidance, Control, and Dynamics 16(1), 151 (1993); Guzzetti, D., Zimovan, E. M.,
    Howell, K. C. & Davis, D. C., "Stationkeeping analysis for spacecraft in lunar near
    rectilinear halo orbits", AAS 17-395 (2017) (both from memory).
    """
    validate.number_value("minimum burn (m/s)", min_burn_mps, 0.0)
    if not isinstance(errors, Errors):
        raise InputError("errors must be an Errors")
    n_workers = 1 if workers is None else validate.whole_number("workers", workers, 1)
    trials = validate.whole_number("trials", trials, 1)
    # a pool is started (and its workers load the trial kernels) while the reference is computed
    # here, so that the workers' start-up overlaps the reference instead of delaying the trials
    pool = tasks.start_pool(min(n_workers, len(chunks(trials, n_workers))), warm=_warm_worker) \
        if scheduler is None and n_workers > 1 and trials > 1 else None
    try:
        ref = reference(orbit, epoch, span_tu, bodies=bodies, srp=srp, target_revs=target_revs,
                        interval_tu=interval_tu, hold_phase=hold_phase, policy=policy, progress=(
                            (lambda m: progress(m)) if progress else None))
        res = run_trials(ref, errors, trials, seed, min_burn_mps=min_burn_mps, workers=workers,
                         scheduler=scheduler, executor=pool,
                         progress=(lambda d, n: progress(f"trials: {d} of {n} done")) if progress else None)
    except BaseException:
        if pool is not None:
            tasks.stop_pool(pool)
        raise
    if pool is not None:
        pool.shutdown(wait=True)
    return Budget(ref, errors, int(seed), float(min_burn_mps), res)


def _warm_worker():
    """Run once in each pool worker before its first chunk: load the trial kernels (the
    ephemeris-model integrator, from the compiled cache) so the chunks find them loaded."""
    from ..fidelity import segments  # noqa: F401  # lazy: heavy library (numba), loaded in a worker only
