"""Single shooting for symmetric periodic orbits.

Method: a symmetric orbit that starts perpendicular to its symmetry plane (or axis) and meets
it perpendicularly again after a half period ``tau`` is periodic with period ``2 tau``
(Roy & Ovenden's mirror theorem, *Mon. Not. R. Astron. Soc.* 115, 1955; applied to halos by
Howell, *Celestial Mechanics* 32, 1984). Unknowns ``X = (free initial components, tau)``;
residual ``F = s(tau)[targets]``; Newton's method with ``dF/dX = [Phi(tau)[targets, free],
f(s(tau))[targets]]`` from the state transition matrix, closed by one extra scalar
condition (a fixed component, the Jacobi constant, the period, or the pseudo-arclength
condition of Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems",
1977).

========== ==================== ==================== ===================== ===========
symmetry   start                free                 zero at tau           mirror
========== ==================== ==================== ===================== ===========
xz         (x, 0, z, 0, vy, 0)  x, z, vy             y, vx, vz             G_XZ
xz-planar  (x, 0, 0, 0, vy, 0)  x, vy                y, vx                 G_XZ
x-axis     (x, 0, 0, 0, vy, vz) x, vy, vz            y, z, vx              G_XAXIS
========== ==================== ==================== ===================== ===========
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .. import dynamics
from ..errors import ConvergenceError, InputError
from ..integrate import plane, propagate
from . import geometry, stability
from .orbit import PeriodicOrbit
from .seeds import X_AXIS_Y, X_AXIS_Z, XZ, XZ_PLANAR

#: Residual norm (nondimensional) at which the half-period conditions count as met; the
#: iteration also stops when the residual is below STALL_TOL and no longer decreasing (the
#: integrator's accuracy is reached).
HALF_TOL = 1e-12
STALL_TOL = 1e-10
#: Periodicity error |s(T) - s(0)| (nondimensional) required of a converged orbit.
PERIODICITY_TOL = 1e-10
#: For strongly unstable orbits (largest multiplier lambda > 100) a full-period propagation at
#: tolerance 1e-13 cannot itself close to better than about 1e-13 * lambda (its local errors grow
#: with the unstable mode). Such an orbit is accepted when its half-period residual is < 1e-11 and
#: its measured full-period error is < INSTABILITY_ALLOWANCE * lambda; the orbit carries a
#: ``periodicity_note`` saying so. tests/test_against_heyoka.py re-checks these orbits with an
#: independent Taylor integrator at tolerance 1e-16, which closes them to < 1e-10.
INSTABILITY_ALLOWANCE = 3e-13
MAX_ITER = 30
RTOL = ATOL = 1e-13


@dataclass(frozen=True)
class Symmetry:
    name: str
    free: tuple
    targets: tuple
    mirror: np.ndarray
    # index arrays built once (the Newton loop indexes with them at every iteration)
    free_idx: np.ndarray = field(init=False, repr=False, compare=False)
    target_idx: np.ndarray = field(init=False, repr=False, compare=False)
    block: tuple = field(init=False, repr=False, compare=False)

    def __post_init__(self):
        object.__setattr__(self, "free_idx", np.array(self.free, dtype=np.intp))
        object.__setattr__(self, "target_idx", np.array(self.targets, dtype=np.intp))
        object.__setattr__(self, "block", np.ix_(self.targets, self.free))


SYMMETRIES = {
    XZ: Symmetry("xz", (0, 2, 4), (1, 3, 5), stability.G_XZ),
    XZ_PLANAR: Symmetry("xz", (0, 4), (1, 3), stability.G_XZ),
    "x-axis": Symmetry("x-axis", (0, 4, 5), (1, 2, 3), stability.G_XAXIS),
}
SYMMETRIES[X_AXIS_Y] = SYMMETRIES["x-axis"]
SYMMETRIES[X_AXIS_Z] = SYMMETRIES["x-axis"]
COMPONENTS = {"x": 0, "y": 1, "z": 2, "vx": 3, "vy": 4, "vz": 5}


def symmetry(kind) -> Symmetry:
    if isinstance(kind, Symmetry):
        return kind
    if kind not in SYMMETRIES:
        raise InputError(f"unknown symmetry '{kind}'; allowed: {', '.join(SYMMETRIES)}")
    return SYMMETRIES[kind]


def pack(sym: Symmetry, state, tau) -> np.ndarray:
    s = np.asarray(state, dtype=float)
    X = np.empty(len(sym.free) + 1)
    X[:-1] = s[sym.free_idx]
    X[-1] = float(tau)
    return X


def unpack(sym: Symmetry, X) -> tuple[np.ndarray, float]:
    s = np.zeros(6)
    s[sym.free_idx] = X[:-1]
    return s, float(X[-1])


@dataclass(frozen=True)
class Constraint:
    """The extra scalar condition closing the Newton system.

    kind: "fix" (component ``index`` of the initial state = value), "jacobi", "period",
    or "arclength" (``(X - X_ref) . tangent = value``).
    """

    kind: str
    value: float
    index: int = -1
    ref: np.ndarray | None = None
    tangent: np.ndarray | None = None


def fix(component: str, value: float) -> Constraint:
    if component not in COMPONENTS:
        raise InputError(f"cannot hold '{component}' fixed; allowed: {', '.join(COMPONENTS)}")
    return Constraint("fix", float(value), COMPONENTS[component])


def hold_jacobi(value: float) -> Constraint:
    return Constraint("jacobi", float(value))


def hold_period(value: float) -> Constraint:
    if not value > 0:
        raise InputError(f"period {value!r} must be positive")
    return Constraint("period", float(value))


def arclength(ref, tangent, ds) -> Constraint:
    return Constraint("arclength", float(ds), -1, np.asarray(ref, float), np.asarray(tangent, float))


def _extra_row(system, sym, c: Constraint, X):
    """(value, gradient row) of the closing condition at ``X`` (the row may be the constraint's
    own array: callers copy it into their matrix)."""
    if c.kind == "arclength":
        return float((X - c.ref) @ c.tangent) - c.value, c.tangent
    n = len(X)
    row = np.zeros(n)
    if c.kind == "fix":
        if c.index not in sym.free:
            raise InputError(f"component {list(COMPONENTS)[c.index]} is not free for {sym.name} orbits")
        j = sym.free.index(c.index)
        row[j] = 1.0
        return X[j] - c.value, row
    if c.kind == "period":
        row[-1] = 2.0
        return 2.0 * X[-1] - c.value, row
    if c.kind == "jacobi":
        s, _ = unpack(sym, X)
        grad = dynamics.gradient(system.mu, s[:3])
        dc = np.concatenate([2.0 * grad, -2.0 * s[3:]])
        row[:-1] = dc[sym.free_idx]
        return dynamics.jacobi(system.mu, s) - c.value, row
    raise InputError(f"unknown constraint kind '{c.kind}'")


def half_residual(system, sym: Symmetry, X):
    """(F, dF/dX, arc) of the half-period conditions at unknowns ``X``."""
    D = np.empty((len(sym.targets), len(X)))
    F, arc = _residual_into(system, sym, X, D)
    return F, D, arc


def _residual_into(system, sym: Symmetry, X, D):
    """F of the half-period conditions at ``X``; dF/dX written into the first rows of ``D``
    (the Newton loop hands it the rows of its own matrix, so nothing is stacked or copied)."""
    s0, tau = unpack(sym, X)
    if not tau > 0:
        raise ConvergenceError(f"half period became non-positive ({tau:g} TU)", last=X)
    arc = propagate(system, s0, tau, stm=True, rtol=RTOL, atol=ATOL)
    if arc.status != "time":
        raise ConvergenceError(f"propagation stopped early ({arc.status}) at t = {arc.t_final:g}", last=X)
    sf = arc.final_state
    tg = sym.target_idx
    m = len(tg)
    D[:m, :-1] = arc.stm[sym.block]
    D[:m, -1] = dynamics.acceleration(system.mu, sf)[tg]
    return sf[tg], arc


def jacobian(system, sym, X):
    """dF/dX (len(targets) x len(X)) at ``X``; its null vector is the family tangent."""
    return half_residual(system, sym, X)[1]


def null_tangent(D: np.ndarray) -> np.ndarray:
    """Unit null vector of the (n-1) x n matrix D (last right singular vector)."""
    _, _, vt = np.linalg.svd(D)
    t = vt[-1]
    return t / np.linalg.norm(t)


def newton(system, sym, X0, constraint: Constraint, tol=HALF_TOL, max_iter=MAX_ITER):
    """Damped Newton iteration on the half-period conditions plus ``constraint``.

    Returns (X, iterations, residual history, (last half-period arc, dF/dX at X)).
    Raises ConvergenceError with iterations, residuals and the last iterate.

    The Jacobian ``J = [dF/dX; constraint row]`` and the residual ``R = [F; g]`` live in two
    arrays allocated once per call; each iteration overwrites them in place.
    """
    X = np.array(X0, dtype=float)
    n = len(X)
    m = n - 1
    J = np.empty((n, n))
    R = np.empty(n)
    history = []
    for it in range(1, max_iter + 1):
        try:
            F, arc = _residual_into(system, sym, X, J)
        except ConvergenceError as e:
            raise ConvergenceError(f"shooting failed: {e}", it, history, X) from None
        except InputError as e:  # e.g. a state inside a primary
            raise ConvergenceError(f"shooting failed: {e}", it, history, X) from None
        g, row = _extra_row(system, sym, constraint, X)
        R[:m] = F
        R[m] = g
        norm = math.sqrt(float(R @ R))
        history.append(norm)
        if not math.isfinite(norm):
            break
        if norm < tol or (norm < STALL_TOL and len(history) > 1 and norm > 0.3 * history[-2]):
            return X, it - 1, history, (arc, J[:m].copy())
        J[m] = row
        try:
            dX = np.linalg.solve(J, -R)
        except np.linalg.LinAlgError:
            dX = np.linalg.lstsq(J, -R, rcond=None)[0]
        # damping: never move more than a tenth of the state's scale at once
        step = math.sqrt(float(dX @ dX))
        X = X + dX / max(1.0, step / 0.1)
    raise ConvergenceError(
        f"single shooting did not converge in {max_iter} iterations; residual {history[-1]:.3e} "
        f"(needed < {tol:.0e})", len(history), history, unpack(sym, X)[0])


def locate_half_period(system, state, coordinate: str, crossings: int = 1, t_max: float = 50.0,
                       direction: int = 0):
    """Time of the ``crossings``-th crossing of ``coordinate = 0`` (in ``direction``) from ``state``
    (a seed refinement)."""
    ev = plane(coordinate, 0.0, direction, terminal=True, count=crossings)
    arc = propagate(system, state, t_max, events=[ev], rtol=1e-10, atol=1e-10)
    if arc.status != "event":
        raise ConvergenceError(f"no {coordinate} = 0 crossing within {t_max:g} TU of the seed", last=state)
    return arc.t_final


def finish(system, sym, X, iterations, history, family="", point="", branch="",
           extra=None, check=True, half_stm=None) -> PeriodicOrbit:
    """Build the PeriodicOrbit at converged ``X``.

    * Monodromy from the half-period STM at ``X`` (``half_stm``, or propagated when not given)
      with the mirror relation (:func:`cr3bp.orbits.stability.monodromy_from_half`).
    * Periodicity error ``|s(T) - s(0)|`` from an independent propagation of the state over the
      full period (no symmetry used), which also gives the samples for the geometry.
    """
    s0, tau = unpack(sym, X)
    T = 2.0 * tau
    if half_stm is None:
        half_stm = propagate(system, s0, tau, stm=True, rtol=RTOL, atol=ATOL).stm
    monodromy = stability.monodromy_from_half(half_stm, sym.mirror)
    arc = propagate(system, s0, T, rtol=RTOL, atol=ATOL, events=geometry.EXTREME_EVENTS)
    err = float(np.linalg.norm(arc.final_state - s0))
    note = ""
    if not err < PERIODICITY_TOL:
        # A single propagation over one period amplifies its own local errors by up to the
        # largest multiplier lambda; above 1e-10 the measurement, not the orbit, may be at fault.
        lam = stability.largest_multiplier(stability.stability_indices(monodromy))
        if history and history[-1] < 1e-11 and err < INSTABILITY_ALLOWANCE * lam:
            note = (f"full-period error {err:.2e} is within the integrator's reach for an orbit with "
                    f"largest multiplier {lam:.3g} ({INSTABILITY_ALLOWANCE:g} x lambda); the half-period "
                    f"conditions hold to {history[-1]:.1e}")
        elif check:
            raise ConvergenceError(
                f"half-period conditions met but the periodicity error over one period is {err:.2e} "
                f"(needed < {PERIODICITY_TOL:.0e})", iterations, history, s0)
    amp, approach = geometry.extremes(system, arc)
    ex = {"method": "single shooting", "symmetry_type": sym.name, "residuals": history,
          "half_period_residual": history[-1] if history else float("nan")}
    if note:
        ex["periodicity_note"] = note
    if family == "resonant":
        # turns about the larger primary: with the period, the measured p:q (orbit.period_ratio)
        ex["winding_larger"] = geometry.winding_about_larger(system, arc)
    ex.update(extra or {})
    return PeriodicOrbit(system, s0, T, monodromy, family, point, branch,
                         float(dynamics.jacobi(system.mu, s0)), err, iterations, ex,
                         tuple(float(a) for a in amp), tuple(float(d) for d in approach), sym.name)


def correct(system, state, half_period, kind=XZ, hold: Constraint | None = None,
            family="", point="", branch="", tol=HALF_TOL, max_iter=MAX_ITER) -> PeriodicOrbit:
    """Correct a guess into a symmetric periodic orbit by single shooting.

    Parameters
    ----------
    system : System
    state : (6,) initial guess on the symmetry plane/axis (components that must be zero are zeroed)
    half_period : float, guess of T/2 (TU)
    kind : "xz", "xz-planar" or "x-axis" (see module table)
    hold : Constraint, what is held fixed: :func:`fix` ("x", "z", "vz", ...), :func:`hold_jacobi`,
        :func:`hold_period`. Default: the initial x.

    Returns
    -------
    PeriodicOrbit (periodicity error < 1e-10 checked over a full period)

    Raises
    ------
    ConvergenceError with iterations, residual history and the last state.
    """
    sym = symmetry(kind)
    X0 = pack(sym, state, half_period)
    hold = hold or fix("x", X0[0])
    X, it, hist, (arc, _) = newton(system, sym, X0, hold, tol, max_iter)
    return finish(system, sym, X, it, hist, family, point, branch, half_stm=arc.stm)
