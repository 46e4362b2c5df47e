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
from .. import validate
from ..errors import ConvergenceError, InputError
from ..integrate import plane, propagate
from . import geometry, recipes, stability
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
#: with the unstable mode). The error is then measured again at FINE_RTOL; an orbit still over
#: PERIODICITY_TOL is accepted when its half-period residual is < 1e-11 and that error is
#: < INSTABILITY_ALLOWANCE * lambda; the orbit carries a
#: ``periodicity_note`` saying so. tests/test_against_heyoka.py re-checks these orbits with an
#: independent Taylor integrator at tolerance 1e-16, which closes them to < 1e-10.
INSTABILITY_ALLOWANCE = 3e-13
#: Tolerance of the second measurement of the full-period error, when the first (at RTOL) is
#: not under PERIODICITY_TOL: the integrator's tightest (:func:`cr3bp.validate.tolerance`).
FINE_RTOL = 1e-14
MAX_ITER = 30
RTOL = ATOL = 1e-13


@dataclass(frozen=True)
class Symmetry:
    """A symmetry type of the corrector: free initial components, zero components at T/2, mirror.

    Parameters
    ----------
    name : str
        ``"xz"`` or ``"x-axis"``.
    free : tuple of int
        Indices of the initial-state components the corrector may change.
    targets : tuple of int
        Indices of the components that must vanish at the half period.
    mirror : ndarray, shape (6, 6)
        The reflection ``G`` of the symmetry (see :mod:`cr3bp.orbits.stability`).

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (symmetric single shooting with the state transition matrix).
    .. [2] A. E. Roy and M. W. Ovenden, "On the occurrence of commensurable mean motions in the
       solar system: the mirror theorem", *Mon. Not. R. Astron. Soc.* 115, 1955 (from memory).

    Examples
    --------
    >>> from cr3bp.orbits.shooting import symmetry
    >>> symmetry("xz").free, symmetry("xz").targets
    ((0, 2, 4), (1, 3, 5))
    """
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
    """The :class:`Symmetry` of a symmetry type name.

    Parameters
    ----------
    kind : str or Symmetry
        ``"xz"``, ``"xz-planar"``, ``"x-axis"``, ``"x-axis/y"`` or ``"x-axis/z"``.

    Returns
    -------
    Symmetry

    Raises
    ------
    InputError
        Unknown name.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (symmetric single shooting with the state transition matrix).
    .. [2] A. E. Roy and M. W. Ovenden, "On the occurrence of commensurable mean motions in the
       solar system: the mirror theorem", *Mon. Not. R. Astron. Soc.* 115, 1955 (from memory).

    Examples
    --------
    >>> from cr3bp.orbits.shooting import symmetry
    >>> symmetry("x-axis/z").name
    'x-axis'
    """
    if isinstance(kind, Symmetry):
        return kind
    if kind not in SYMMETRIES:
        raise InputError(f"unknown symmetry '{kind}'; allowed: {', '.join(SYMMETRIES)}")
    return SYMMETRIES[kind]


def pack(sym: Symmetry, state, tau) -> np.ndarray:
    """The corrector's unknowns ``X = (free components of state, tau)``.

    Parameters
    ----------
    sym : Symmetry
    state : array_like, shape (6,)
    tau : float
        Half period (TU).

    Returns
    -------
    ndarray

    Raises
    ------
    None

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (symmetric single shooting with the state transition matrix).
    .. [2] A. E. Roy and M. W. Ovenden, "On the occurrence of commensurable mean motions in the
       solar system: the mirror theorem", *Mon. Not. R. Astron. Soc.* 115, 1955 (from memory).

    Examples
    --------
    >>> from cr3bp.orbits.shooting import pack, symmetry
    >>> pack(symmetry("xz-planar"), [0.8, 0, 0, 0, 0.1, 0], 1.5).tolist()
    [0.8, 0.1, 1.5]
    """
    s = np.asarray(state, dtype=float)
    X = np.empty(len(sym.free) + 1)
    X[:-1] = s[sym.free_idx]
    X[-1] = float(tau)
    return X


def unpack(sym: Symmetry, X) -> tuple[np.ndarray, float]:
    """The initial state and half period from the corrector's unknowns (inverse of :func:`pack`).

    Parameters
    ----------
    sym : Symmetry
    X : array_like
        Unknowns ``(free components, tau)``.

    Returns
    -------
    state : ndarray, shape (6,)
        Components that are not free are zero.
    tau : float

    Raises
    ------
    None

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (symmetric single shooting with the state transition matrix).
    .. [2] A. E. Roy and M. W. Ovenden, "On the occurrence of commensurable mean motions in the
       solar system: the mirror theorem", *Mon. Not. R. Astron. Soc.* 115, 1955 (from memory).

    Examples
    --------
    >>> from cr3bp.orbits.shooting import unpack, symmetry
    >>> s, tau = unpack(symmetry("xz-planar"), [0.8, 0.1, 1.5])
    >>> s.tolist(), tau
    ([0.8, 0.0, 0.0, 0.0, 0.1, 0.0], 1.5)
    """
    s = np.zeros(6)
    s[sym.free_idx] = X[:-1]
    return s, float(X[-1])


@dataclass(frozen=True)
class Constraint:
    """The extra scalar condition closing the Newton system.

    Parameters
    ----------
    kind : str
        ``"fix"`` (component ``index`` of the initial state = value), ``"jacobi"``, ``"period"``,
        or ``"arclength"`` (``(X - X_ref) . tangent = value``).
    value : float
    index : int
        Component index for ``"fix"``.
    ref, tangent : ndarray, optional
        Reference unknowns and unit tangent for ``"arclength"``.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (symmetric single shooting with the state transition matrix).
    .. [2] A. E. Roy and M. W. Ovenden, "On the occurrence of commensurable mean motions in the
       solar system: the mirror theorem", *Mon. Not. R. Astron. Soc.* 115, 1955 (from memory).
    .. [3] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems",
       in *Applications of Bifurcation Theory*, Academic Press, 1977 (pseudo-arclength).

    Examples
    --------
    >>> from cr3bp.orbits.shooting import fix
    >>> fix("z", 0.01).index
    2
    """

    kind: str
    value: float
    index: int = -1
    ref: np.ndarray | None = None
    tangent: np.ndarray | None = None


def fix(component: str, value: float) -> Constraint:
    """Hold one initial-state component at ``value``.

    Parameters
    ----------
    component : str
        ``"x"``, ``"y"``, ``"z"``, ``"vx"``, ``"vy"`` or ``"vz"``.
    value : float

    Returns
    -------
    Constraint

    Raises
    ------
    InputError
        Unknown component.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (symmetric single shooting with the state transition matrix).
    .. [2] A. E. Roy and M. W. Ovenden, "On the occurrence of commensurable mean motions in the
       solar system: the mirror theorem", *Mon. Not. R. Astron. Soc.* 115, 1955 (from memory).

    Examples
    --------
    >>> from cr3bp.orbits.shooting import fix
    >>> fix("w", 1.0)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: cannot hold 'w' fixed; allowed: x, y, z, vx, vy, vz
    """
    if component not in COMPONENTS:
        raise InputError(f"cannot hold '{component}' fixed; allowed: {', '.join(COMPONENTS)}")
    return Constraint("fix", float(value), COMPONENTS[component])


def hold_jacobi(value: float) -> Constraint:
    """Hold the Jacobi constant at ``value``.

    Parameters
    ----------
    value : float

    Returns
    -------
    Constraint

    Raises
    ------
    None

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (symmetric single shooting with the state transition matrix).
    .. [2] A. E. Roy and M. W. Ovenden, "On the occurrence of commensurable mean motions in the
       solar system: the mirror theorem", *Mon. Not. R. Astron. Soc.* 115, 1955 (from memory).

    Examples
    --------
    >>> from cr3bp.orbits.shooting import hold_jacobi
    >>> hold_jacobi(3.15).kind
    'jacobi'
    """
    return Constraint("jacobi", float(value))


def hold_period(value: float) -> Constraint:
    """Hold the period at ``value`` (TU).

    Parameters
    ----------
    value : float
        Positive.

    Returns
    -------
    Constraint

    Raises
    ------
    InputError
        ``value`` not positive.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (symmetric single shooting with the state transition matrix).
    .. [2] A. E. Roy and M. W. Ovenden, "On the occurrence of commensurable mean motions in the
       solar system: the mirror theorem", *Mon. Not. R. Astron. Soc.* 115, 1955 (from memory).

    Examples
    --------
    >>> from cr3bp.orbits.shooting import hold_period
    >>> hold_period(3.0).value
    3.0
    """
    return Constraint("period", validate.positive_number("period (TU)", value))


def arclength(ref, tangent, ds) -> Constraint:
    """The pseudo-arclength condition ``(X - ref) . tangent = ds``.

    Parameters
    ----------
    ref : array_like
        Unknowns of the previous member.
    tangent : array_like
        Unit tangent of the family there.
    ds : float
        Step along the tangent.

    Returns
    -------
    Constraint

    Raises
    ------
    None

    References
    ----------
    .. [3] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems",
       in *Applications of Bifurcation Theory*, Academic Press, 1977 (pseudo-arclength).

    Examples
    --------
    >>> from cr3bp.orbits.shooting import arclength
    >>> arclength([0.8, 0.1, 1.5], [1.0, 0.0, 0.0], 1e-3).kind
    'arclength'
    """
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
    """Half-period conditions, their Jacobian and the half-period arc at unknowns ``X``.

    Parameters
    ----------
    system : System
    sym : Symmetry
    X : ndarray
        Unknowns (see :func:`pack`).

    Returns
    -------
    F : ndarray
        Target components at the half period.
    D : ndarray
        dF/dX from the state transition matrix and the vector field.
    arc : Arc
        The half-period propagation.

    Raises
    ------
    ConvergenceError
        Half period not positive, or the propagation stopped early.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (symmetric single shooting with the state transition matrix).
    .. [2] A. E. Roy and M. W. Ovenden, "On the occurrence of commensurable mean motions in the
       solar system: the mirror theorem", *Mon. Not. R. Astron. Soc.* 115, 1955 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> sym = shooting.symmetry("xz-planar")
    >>> F, D, arc = shooting.half_residual(em, sym, shooting.pack(sym, sd.state, sd.half_period))
    >>> D.shape
    (2, 3)
    """
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
    """dF/dX of the half-period conditions at ``X``; its null vector is the family tangent.

    Parameters
    ----------
    system : System
    sym : Symmetry
    X : ndarray

    Returns
    -------
    ndarray, shape (len(targets), len(X))

    Raises
    ------
    ConvergenceError
        As :func:`half_residual`.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (symmetric single shooting with the state transition matrix).
    .. [2] A. E. Roy and M. W. Ovenden, "On the occurrence of commensurable mean motions in the
       solar system: the mirror theorem", *Mon. Not. R. Astron. Soc.* 115, 1955 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> sym = shooting.symmetry("xz-planar")
    >>> shooting.jacobian(em, sym, shooting.pack(sym, sd.state, sd.half_period)).shape
    (2, 3)
    """
    return half_residual(system, sym, X)[1]


def null_tangent(D: np.ndarray) -> np.ndarray:
    """Unit null vector of an (n-1) x n matrix (its last right singular vector).

    Parameters
    ----------
    D : ndarray, shape (n - 1, n)

    Returns
    -------
    ndarray, shape (n,)

    Raises
    ------
    numpy.linalg.LinAlgError
        When the singular value decomposition does not converge.

    References
    ----------
    .. [3] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems",
       in *Applications of Bifurcation Theory*, Academic Press, 1977 (pseudo-arclength).

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.orbits.shooting import null_tangent
    >>> np.abs(null_tangent(np.array([[1.0, 0.0, 0.0], [0.0, 1.0, 0.0]]))).tolist()
    [0.0, 0.0, 1.0]
    """
    _, _, vt = np.linalg.svd(D)
    t = vt[-1]
    return t / np.linalg.norm(t)


def newton(system, sym, X0, constraint: Constraint, tol=HALF_TOL, max_iter=MAX_ITER):
    """Damped Newton iteration on the half-period conditions plus ``constraint``.

    The Jacobian ``J = [dF/dX; constraint row]`` and the residual ``R = [F; g]`` live in two
    arrays allocated once per call; each iteration overwrites them in place.

    Parameters
    ----------
    system : System
    sym : Symmetry
    X0 : array_like
        Initial unknowns.
    constraint : Constraint
    tol : float
        Residual norm at which the iteration stops.
    max_iter : int

    Returns
    -------
    tuple
        ``(X, iterations, residual history, (last half-period arc, dF/dX at X))``.

    Raises
    ------
    ConvergenceError
        With iterations, residuals and the last iterate.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (symmetric single shooting with the state transition matrix).
    .. [2] A. E. Roy and M. W. Ovenden, "On the occurrence of commensurable mean motions in the
       solar system: the mirror theorem", *Mon. Not. R. Astron. Soc.* 115, 1955 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> sym = shooting.symmetry("xz-planar")
    >>> X0 = shooting.pack(sym, sd.state, sd.half_period)
    >>> X, it, history, _ = shooting.newton(em, sym, X0, shooting.fix("x", sd.state[0]))
    >>> history[-1] < 1e-10
    True
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
    """Time of the ``crossings``-th crossing of ``coordinate = 0`` from ``state``.

    Parameters
    ----------
    system : System
    state : array_like, shape (6,)
    coordinate : str
        ``"x"``, ``"y"``, ``"z"``, ...
    crossings : int
        Which crossing.
    t_max : float
        Longest propagation (TU).
    direction : int
        +1, -1 or 0 (either way).

    Returns
    -------
    float
        Time (TU).

    Raises
    ------
    ConvergenceError
        No crossing within ``t_max``.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (symmetric single shooting with the state transition matrix).
    .. [2] A. E. Roy and M. W. Ovenden, "On the occurrence of commensurable mean motions in the
       solar system: the mirror theorem", *Mon. Not. R. Astron. Soc.* 115, 1955 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_vertical(em.mu, "L1", 1e-3)
    >>> abs(shooting.locate_half_period(em, sd.state, "z", direction=-1) - sd.half_period) < 0.01
    True
    """
    ev = plane(coordinate, 0.0, direction, terminal=True, count=crossings)
    arc = propagate(system, state, t_max, events=[ev], rtol=1e-10, atol=1e-10)
    if arc.status != "event":
        raise ConvergenceError(f"no {coordinate} = 0 crossing within {t_max:g} TU of the seed", last=state)
    return arc.t_final


def finish(system, sym, X, iterations, history, family="", point="", branch="",
           extra=None, check=True, half_stm=None) -> PeriodicOrbit:
    """Build the PeriodicOrbit at converged unknowns ``X``.

    * Monodromy from the half-period STM at ``X`` (``half_stm``, or propagated when not given)
      with the mirror relation (:func:`cr3bp.orbits.stability.monodromy_from_half`).
    * Periodicity error ``|s(T) - s(0)|`` from an independent propagation of the state over the
      full period (no symmetry used), which also gives the samples for the geometry.

    Parameters
    ----------
    system : System
    sym : Symmetry
    X : ndarray
        Converged unknowns.
    iterations : int
    history : list of float
        Residual norms of the iteration.
    family, point, branch : str
        Labels of the orbit.
    extra : dict, optional
        Added to ``orbit.extra``.
    check : bool
        Refuse an orbit whose periodicity error exceeds :data:`PERIODICITY_TOL`.
    half_stm : ndarray, optional

    Returns
    -------
    PeriodicOrbit

    Raises
    ------
    ConvergenceError
        Periodicity error too large (with ``check``).

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (symmetric single shooting with the state transition matrix).
    .. [2] A. E. Roy and M. W. Ovenden, "On the occurrence of commensurable mean motions in the
       solar system: the mirror theorem", *Mon. Not. R. Astron. Soc.* 115, 1955 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> sym = shooting.symmetry("xz-planar")
    >>> X, it, hist, _ = shooting.newton(em, sym, shooting.pack(sym, sd.state, sd.half_period),
    ...                                  shooting.fix("x", sd.state[0]))
    >>> shooting.finish(em, sym, X, it, hist).periodicity_error < 1e-10
    True
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
        # The measurement's own error may be at fault: measured again at the integrator's
        # tightest tolerance. On the Earth-Moon 3:2 resonant family (lambda ~ 1 030) the error
        # at 1e-13 was 2.2-3.1e-10, at the edge of the allowance below, and 3.3e-11 at 1e-14.
        fine = propagate(system, s0, T, rtol=FINE_RTOL, atol=FINE_RTOL)
        err = float(np.linalg.norm(fine.final_state - s0))
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
    if recipes.measures_winding(family):
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
    state : array_like, shape (6,)
        Initial guess on the symmetry plane/axis (components that must be zero are zeroed).
    half_period : float
        Guess of T/2 (TU).
    kind : str
        ``"xz"``, ``"xz-planar"`` or ``"x-axis"`` (see module table).
    hold : Constraint, optional
        What is held fixed: :func:`fix` (``"x"``, ``"z"``, ``"vz"``, ...), :func:`hold_jacobi`,
        :func:`hold_period`. Default: the initial x.
    family, point, branch : str
        Labels of the orbit.
    tol : float
    max_iter : int

    Returns
    -------
    PeriodicOrbit
        Periodicity error < 1e-10 checked over a full period.

    Raises
    ------
    ConvergenceError
        With iterations, residual history and the last state.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (symmetric single shooting with the state transition matrix).
    .. [2] A. E. Roy and M. W. Ovenden, "On the occurrence of commensurable mean motions in the
       solar system: the mirror theorem", *Mon. Not. R. Astron. Soc.* 115, 1955 (from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry)
    >>> round(orbit.period, 4), orbit.periodicity_error < 1e-10
    (2.6918, True)
    """
    sym = symmetry(kind)
    X0 = pack(sym, state, half_period)
    hold = hold or fix("x", X0[0])
    X, it, hist, (arc, _) = newton(system, sym, X0, hold, tol, max_iter)
    return finish(system, sym, X, it, hist, family, point, branch, half_stm=arc.stm)
