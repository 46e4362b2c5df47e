"""The five Lagrange points of a system and the linear modes of motion about them.

Conventions are those of :mod:`cr3bp.systems` (larger primary at ``x = -mu``, smaller at
``x = 1 - mu``). L1 lies between the primaries, L2 beyond the smaller primary, L3 beyond the
larger one; L4 leads the smaller primary (``y > 0``) and L5 trails it.

Methods
-------
* Collinear points: safeguarded Newton's method on the quintic in ``gamma``, the distance
  from the nearer primary (the smaller one for L1 and L2, the larger for L3) (Szebehely,
  *Theory of Orbits*, 1967, §4.4; Richardson, "Analytic construction of periodic orbits
  about the collinear points", *Celestial Mechanics* 22, 1980, §2).
* Triangular points: closed form, equilateral triangles with the primaries
  (Szebehely 1967, §4.5).
* Linear modes: eigen-decomposition of the matrix of the variational equations
  (:func:`cr3bp.dynamics.jacobian`) at the point, and for the collinear points the closed
  forms in ``c2 = (1 - mu)/r1^3 + mu/r2^3`` (Richardson 1980, eqs. for ``c_n(mu)`` and the
  characteristic roots)::

      lambda^2  = (c2 - 2 + sqrt(9 c2^2 - 8 c2)) / 2      saddle exponent
      omega_p^2 = (2 - c2 + sqrt(9 c2^2 - 8 c2)) / 2      in-plane frequency
      omega_v^2 = c2                                      out-of-plane frequency

* Triangular stability: linearly stable iff ``mu < mu_R = (1 - sqrt(23/27)) / 2``, Routh's
  critical mass ratio (Routh, *Proc. London Math. Soc.* 6, 1875; Szebehely 1967, §5.5).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import dynamics
from .errors import ConvergenceError, InputError
from .vocabulary import COLLINEAR_POINTS, LAGRANGE_POINTS

NAMES = LAGRANGE_POINTS
COLLINEAR = COLLINEAR_POINTS

#: Newton's method on the quintic: stop when the step is below this (relative to gamma).
GAMMA_RTOL = 1e-15
#: ... or after this many iterations (raise ConvergenceError).
GAMMA_MAX_ITER = 60

#: Eigenvalues whose real part is below this (relative to their size) count as imaginary.
IMAGINARY_TOL = 1e-9


def routh_critical_mu() -> float:
    """Routh's critical mass ratio ``mu_R = (1 - sqrt(23/27)) / 2 ~ 0.0385208965``.

    Below it the triangular points are linearly stable.

    Returns
    -------
    float

    Raises
    ------
    None

    References
    ----------
    .. [1] E. J. Routh, "On Laplace's three particles, with a supplement on the stability of
       steady motion", *Proc. London Math. Soc.* 6, 1875.
    .. [2] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §5.5 (from memory).

    Examples
    --------
    >>> from cr3bp.equilibria import routh_critical_mu
    >>> round(routh_critical_mu(), 10)
    0.0385208965
    """
    return 0.5 * (1.0 - math.sqrt(23.0 / 27.0))


# ---- collinear points: the quintic in gamma ---------------------------------------------

def _quintic(name: str, mu: float) -> tuple:
    """Coefficients (highest power first) of the quintic in gamma (Szebehely 1967, §4.4;
    Richardson 1980, §2)."""
    if name == "L1":
        return (1.0, -(3.0 - mu), 3.0 - 2.0 * mu, -mu, 2.0 * mu, -mu)
    if name == "L2":
        return (1.0, 3.0 - mu, 3.0 - 2.0 * mu, -mu, -2.0 * mu, -mu)
    if name == "L3":
        m1 = 1.0 - mu
        return (1.0, 2.0 + mu, 1.0 + 2.0 * mu, -m1, -2.0 * m1, -m1)
    raise InputError(f"'{name}' is not a collinear point; allowed: L1, L2, L3")


def _bracket(name: str, mu: float) -> tuple[float, float, float]:
    """Bracket (lo, hi) holding the one physical root, and a first guess (Szebehely 1967, §4.4:
    gamma ~ (mu/3)^(1/3) for L1/L2, gamma ~ 1 - 7 mu / 12 for L3)."""
    if name == "L1":
        return 0.0, 1.0, min((mu / 3.0) ** (1.0 / 3.0), 0.5)
    if name == "L2":
        return 0.0, 2.0, (mu / 3.0) ** (1.0 / 3.0)
    return 0.0, 2.0, 1.0 - 7.0 * mu / 12.0


def collinear_gamma(name: str, mu: float) -> tuple[float, int]:
    """Distance ``gamma`` of a collinear point from its nearer primary, by safeguarded Newton.

    Newton's method on the quintic in gamma, falling back to bisection whenever a step would
    leave the bracket that holds the root (the quintic has exactly one root in it: one sign
    change for L2/L3, and for L1 the unique equilibrium between the primaries).

    Parameters
    ----------
    name : str
        ``"L1"``, ``"L2"`` or ``"L3"``.
    mu : float
        Mass ratio.

    Returns
    -------
    gamma : float
    iterations : int

    Raises
    ------
    InputError
        ``name`` is not collinear.
    ConvergenceError
        No convergence within ``GAMMA_MAX_ITER`` iterations.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, §4.4-§5.5 (the equilibria, their quintic and their stability; from memory).
    .. [2] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, §2.

    Examples
    --------
    >>> from cr3bp.equilibria import collinear_gamma
    >>> g, it = collinear_gamma("L1", 0.0121505843)
    >>> round(g, 6)
    0.150934
    """
    c = _quintic(name, float(mu))
    lo, hi, g = _bracket(name, mu)
    flo = -1.0  # f(0) < 0 for all three quintics (their constant terms are negative)
    steps = []
    for it in range(1, GAMMA_MAX_ITER + 1):
        f = d = 0.0
        for a in c:  # Horner: value and derivative together
            d = d * g + f
            f = f * g + a
        if f == 0.0:
            return float(g), it
        # keep the bracket: f(lo) < 0 < f(hi)
        if (f < 0) == (flo < 0):
            lo, flo = g, f
        else:
            hi = g
        new = g - f / d if d != 0.0 else 0.5 * (lo + hi)
        if not (lo <= new <= hi):
            new = 0.5 * (lo + hi)
        step = abs(new - g)
        steps.append(step)
        g = new
        if step <= GAMMA_RTOL * g:
            return float(g), it
    raise ConvergenceError(f"{name}: Newton's method on the quintic in gamma did not converge for "
                           f"mu = {mu!r} in {GAMMA_MAX_ITER} iterations (last step {steps[-1]:.3e})",
                           iterations=GAMMA_MAX_ITER, residuals=steps, last=g)


def _position(name: str, mu: float) -> tuple[np.ndarray, float | None, int]:
    if name in COLLINEAR:
        g, it = collinear_gamma(name, mu)
        x = {"L1": 1.0 - mu - g, "L2": 1.0 - mu + g, "L3": -mu - g}[name]
        return np.array([x, 0.0, 0.0]), g, it
    y = math.sqrt(3.0) / 2.0
    return np.array([0.5 - mu, y if name == "L4" else -y, 0.0]), None, 0


# ---- linear modes -------------------------------------------------------------------------

def _frozen(a) -> np.ndarray:
    a = np.array(a, copy=True)
    a.setflags(write=False)
    return a


@dataclass(frozen=True, eq=False)
class LinearModes:
    """Linearised motion about an equilibrium.

    Parameters
    ----------
    eigenvalues : (6,) complex
        Eigenvalues of :func:`cr3bp.dynamics.jacobian` at the point (numpy), ordered:
        collinear ``+lambda, -lambda, +-i omega_p, +-i omega_v``; triangular when stable
        ``+-i omega_long, +-i omega_short, +-i``; otherwise by decreasing real part.
    eigenvectors : (6, 6) complex
        Matching eigenvectors as columns, each of unit norm.
    kind : str
        ``"saddle x centre x centre"`` (collinear points), ``"centre x centre x centre"``
        (triangular, mu < mu_R) or ``"complex saddle x centre"`` (triangular, mu > mu_R).
    linearly_stable : bool
        All eigenvalues purely imaginary (within ``IMAGINARY_TOL``).
    c2 : float or None
        Richardson's (1980) ``c2 = (1 - mu)/r1^3 + mu/r2^3`` (collinear points).
    saddle_exponent : float or None
        ``lambda`` (collinear, closed form): the unstable eigenvalue, per TU.
    omega_inplane : float or None
        ``omega_p`` (collinear, closed form), rad/TU.
    omega_vertical : float
        ``omega_v`` (``sqrt(c2)`` collinear, 1 triangular), rad/TU.
    omega_long, omega_short : float or None
        Triangular points when stable: the long- and short-period in-plane frequencies,
        ``omega^2 = (1 -+ sqrt(1 - 27 mu (1 - mu))) / 2`` (Szebehely 1967, §5.5).
    unstable_direction, stable_direction : (6,) float or None
        Collinear points: real eigenvectors of ``+lambda`` and ``-lambda``, unit norm, with
        positive x component. The 1-D unstable (stable) manifold of the point leaves (arrives)
        along ``+-`` these: the seeds for the point's own manifolds.
    planar_centre : (2, 6) float or None
        Collinear: the real and imaginary parts of the ``i omega_p`` eigenvector, scaled so the
        x component of the first is 1: ``[1, 0, 0, 0, -omega_p k, 0]`` and
        ``[0, k, 0, omega_p, 0, 0]`` with ``k = (omega_p^2 + 1 + 2 c2) / (2 omega_p)``; the
        first is the seed of a planar Lyapunov orbit started on the x axis.
    vertical_centre : (2, 6) float
        ``[0, 0, 1, 0, 0, 0]`` and ``[0, 0, 0, 0, 0, omega_v]``: the seed of a vertical orbit.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, §4.4-§5.5 (the equilibria, their quintic and their stability; from memory).
    .. [2] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, §2.
    .. [3] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §2.7 and §4.4 (linearisation about the points).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.equilibria import lagrange_point
    >>> L1 = lagrange_point(system("earth-moon"), "L1")
    >>> L1.modes.kind, round(L1.modes.omega_inplane, 4)
    ('saddle x centre x centre', 2.3344)
    """

    eigenvalues: np.ndarray
    eigenvectors: np.ndarray
    kind: str
    linearly_stable: bool
    omega_vertical: float
    c2: float | None = None
    saddle_exponent: float | None = None
    omega_inplane: float | None = None
    omega_long: float | None = None
    omega_short: float | None = None
    unstable_direction: np.ndarray | None = None
    stable_direction: np.ndarray | None = None
    planar_centre: np.ndarray | None = None
    vertical_centre: np.ndarray | None = None

    def periods_tu(self) -> dict:
        """Linear periods ``2 pi / omega`` (TU) and the e-folding time ``1 / lambda`` (TU)."""
        out = {}
        for key, w in (("inplane", self.omega_inplane), ("vertical", self.omega_vertical),
                       ("long", self.omega_long), ("short", self.omega_short)):
            if w:
                out[key] = 2.0 * math.pi / w
        if self.saddle_exponent:
            out["efolding"] = 1.0 / self.saddle_exponent
        return out

    def to_dict(self) -> dict:
        def vec(v):
            return None if v is None else np.asarray(v).tolist()
        return {
            "kind": self.kind,
            "linearly_stable": self.linearly_stable,
            "eigenvalues": [[float(z.real), float(z.imag)] for z in self.eigenvalues],
            "c2": self.c2,
            "saddle_exponent": self.saddle_exponent,
            "omega_inplane": self.omega_inplane,
            "omega_vertical": self.omega_vertical,
            "omega_long": self.omega_long,
            "omega_short": self.omega_short,
            "unstable_direction": vec(self.unstable_direction),
            "stable_direction": vec(self.stable_direction),
            "planar_centre": vec(self.planar_centre),
            "vertical_centre": vec(self.vertical_centre),
        }


def linear_modes(mu: float, position, name: str = "") -> LinearModes:
    """Linear modes at an equilibrium ``position`` of the system with mass ratio ``mu``.

    Eigen-decomposition of :func:`cr3bp.dynamics.jacobian` together with Richardson's (1980)
    closed forms for collinear points and Szebehely's (1967, §5.5) for the triangular ones.

    Parameters
    ----------
    mu : float
        Mass ratio.
    position : array_like, shape (3,)
        The equilibrium (LU).
    name : str
        Its name, for messages.

    Returns
    -------
    LinearModes

    Raises
    ------
    numpy.linalg.LinAlgError
        When the eigen-decomposition does not converge.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, §4.4-§5.5 (the equilibria, their quintic and their stability; from memory).
    .. [2] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, §2.
    .. [3] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §2.7 and §4.4 (linearisation about the points).

    Examples
    --------
    >>> from cr3bp.equilibria import linear_modes
    >>> m = linear_modes(0.0121505843, [0.5 - 0.0121505843, 3 ** 0.5 / 2, 0.0], "L4")
    >>> m.linearly_stable
    True
    """
    pos = np.asarray(position, dtype=float)
    a = dynamics.jacobian(mu, np.concatenate([pos, np.zeros(3)]))
    w, v = np.linalg.eig(a)
    scale = max(1.0, float(np.max(np.abs(w))))
    imaginary = np.abs(w.real) <= IMAGINARY_TOL * scale
    stable = bool(np.all(imaginary))
    collinear = abs(pos[1]) < 1e-12 and abs(pos[2]) < 1e-12
    if collinear:
        r1 = abs(pos[0] + mu)
        r2 = abs(pos[0] - 1.0 + mu)
        c2 = (1.0 - mu) / r1**3 + mu / r2**3
        root = math.sqrt(9.0 * c2 * c2 - 8.0 * c2)
        lam = math.sqrt((c2 - 2.0 + root) / 2.0)
        wp = math.sqrt((2.0 - c2 + root) / 2.0)
        wv = math.sqrt(c2)
        uxx = 1.0 + 2.0 * c2
        sigma = (lam * lam - uxx) / (2.0 * lam)
        vu = np.array([1.0, sigma, 0.0, lam, lam * sigma, 0.0])
        vs = np.array([1.0, -sigma, 0.0, -lam, lam * sigma, 0.0])
        k = (wp * wp + uxx) / (2.0 * wp)
        # order numpy's pairs to match: +lam, -lam, +i wp, -i wp, +i wv, -i wv
        targets = [lam, -lam, 1j * wp, -1j * wp, 1j * wv, -1j * wv]
        order = _match(w, targets)
        return LinearModes(
            eigenvalues=_frozen(w[order]), eigenvectors=_frozen(v[:, order]),
            kind="saddle x centre x centre", linearly_stable=stable, omega_vertical=wv, c2=c2,
            saddle_exponent=lam, omega_inplane=wp,
            unstable_direction=_frozen(vu / np.linalg.norm(vu)),
            stable_direction=_frozen(vs / np.linalg.norm(vs)),
            planar_centre=_frozen([[1.0, 0.0, 0.0, 0.0, -wp * k, 0.0], [0.0, k, 0.0, wp, 0.0, 0.0]]),
            vertical_centre=_frozen([[0.0, 0.0, 1.0, 0.0, 0.0, 0.0], [0.0, 0.0, 0.0, 0.0, 0.0, wv]]))
    # triangular points (or any other equilibrium): numpy's decomposition, sorted
    disc = 1.0 - 27.0 * mu * (1.0 - mu)
    wl = ws = None
    if disc > 0:
        wl = math.sqrt((1.0 - math.sqrt(disc)) / 2.0)
        ws = math.sqrt((1.0 + math.sqrt(disc)) / 2.0)
        targets = [1j * wl, -1j * wl, 1j * ws, -1j * ws, 1j, -1j]
        order = _match(w, targets)
    else:
        order = sorted(range(6), key=lambda i: (-w[i].real, -w[i].imag))
    return LinearModes(
        eigenvalues=_frozen(w[order]), eigenvectors=_frozen(v[:, order]),
        kind="centre x centre x centre" if stable else "complex saddle x centre",
        linearly_stable=stable, omega_vertical=1.0, omega_long=wl, omega_short=ws,
        vertical_centre=_frozen([[0.0, 0.0, 1.0, 0.0, 0.0, 0.0], [0.0, 0.0, 0.0, 0.0, 0.0, 1.0]]))


def _match(w, targets) -> list[int]:
    """Indices of ``w`` nearest to each target, each index used once (greedy)."""
    left = list(range(len(w)))
    order = []
    for t in targets:
        i = min(left, key=lambda k: abs(w[k] - t))
        order.append(i)
        left.remove(i)
    return order


# ---- the points -------------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class LagrangePoint:
    """An equilibrium of the CR3BP.

    Parameters
    ----------
    name : str
        ``"L1"`` .. ``"L5"``.
    position : (3,) float
        Position in LU, barycentric rotating frame.
    jacobi : float
        Jacobi constant at rest at the point, ``2 Omega``.
    gamma : float or None
        Collinear points: distance from the nearer primary (smaller for L1/L2, larger for
        L3), LU.
    modes : LinearModes
    iterations : int
        Newton iterations spent on ``gamma`` (0 for triangular points).
    mu : float
        Mass ratio of the system.
    residual : float
        ``|grad Omega|`` at ``position`` (an equilibrium has 0; ~1e-16 in practice).

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, §4.4-§5.5 (the equilibria, their quintic and their stability; from memory).
    .. [2] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, §2.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.equilibria import lagrange_point
    >>> L1 = lagrange_point(system("earth-moon"), "L1")
    >>> L1.name, round(float(L1.position[0]), 6), round(L1.jacobi, 6)
    ('L1', 0.836915, 3.188341)
    """

    name: str
    position: np.ndarray
    jacobi: float
    gamma: float | None
    modes: LinearModes
    iterations: int = 0
    mu: float = field(default=float("nan"))
    residual: float = field(default=float("nan"))

    @property
    def state(self) -> np.ndarray:
        """The 6-state at rest at the point."""
        return np.concatenate([self.position, np.zeros(3)])

    @property
    def collinear(self) -> bool:
        return self.name in COLLINEAR

    def distances(self) -> dict:
        """Distances (LU) from the larger primary, the smaller one and the barycentre."""
        p = self.position
        return {"primary": float(np.linalg.norm(p - [-self.mu, 0.0, 0.0])),
                "secondary": float(np.linalg.norm(p - [1.0 - self.mu, 0.0, 0.0])),
                "barycentre": float(np.linalg.norm(p))}

    def to_dict(self) -> dict:
        return {"name": self.name, "x": float(self.position[0]), "y": float(self.position[1]),
                "z": float(self.position[2]), "jacobi": self.jacobi, "gamma": self.gamma,
                "distance_lu": self.distances(), "iterations": self.iterations,
                "residual": self.residual,
                "modes": self.modes.to_dict()}


def _point(system, name: str) -> LagrangePoint:
    mu = system.mu
    pos, g, it = _position(name, mu)
    c = float(dynamics.jacobi(mu, np.concatenate([pos, np.zeros(3)])))
    grad = dynamics.gradient(mu, pos)
    return LagrangePoint(name, _frozen(pos), c, g, linear_modes(mu, pos, name), it, mu,
                         float(np.linalg.norm(grad)))


def point_name(name) -> str:
    """Normalise ``"l2"``, ``" L2 "`` to ``"L2"``.

    Parameters
    ----------
    name : str

    Returns
    -------
    str

    Raises
    ------
    InputError
        Not one of L1 .. L5.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, §4.4-§5.5 (the equilibria, their quintic and their stability; from memory).
    .. [2] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, §2.

    Examples
    --------
    >>> from cr3bp.equilibria import point_name
    >>> point_name(" l4 ")
    'L4'
    """
    key = str(name).strip().upper()
    if key not in NAMES:
        raise InputError(f"unknown Lagrange point {name!r}; allowed: {', '.join(NAMES)}")
    return key


def lagrange_points(system) -> list[LagrangePoint]:
    """The five Lagrange points L1..L5 of ``system`` with their linear modes.

    Collinear points by Newton's method on the quintic in gamma, triangular points in closed
    form.

    Parameters
    ----------
    system : System

    Returns
    -------
    list of LagrangePoint

    Raises
    ------
    ConvergenceError
        When the quintic's Newton iteration does not converge.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, §4.4-§5.5 (the equilibria, their quintic and their stability; from memory).
    .. [2] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, §2.

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.equilibria import lagrange_points
    >>> round(float(lagrange_points(system("earth-moon"))[0].position[0]), 4)
    0.8369
    """
    return [_point(system, n) for n in NAMES]


def lagrange_point(system, name: str) -> LagrangePoint:
    """One Lagrange point by name (``"L1"`` .. ``"L5"``, case-insensitive).

    Parameters
    ----------
    system : System
    name : str

    Returns
    -------
    LagrangePoint

    Raises
    ------
    InputError
        Unknown name.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, §4.4-§5.5 (the equilibria, their quintic and their stability; from memory).
    .. [2] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, §2.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.equilibria import lagrange_point
    >>> L1 = lagrange_point(system("earth-moon"), "L1")
    >>> round(L1.gamma, 6)
    0.150934
    """
    return _point(system, point_name(name))


def jacobi_constants(system) -> dict:
    """Jacobi constant at each Lagrange point (no linear modes computed).

    Parameters
    ----------
    system : System

    Returns
    -------
    dict
        ``{"L1": C1, ...}``.

    Raises
    ------
    ConvergenceError
        When the quintic's Newton iteration does not converge.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
       Press, 1967, §4.4-§5.5 (the equilibria, their quintic and their stability; from memory).
    .. [2] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, §2.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.equilibria import jacobi_constants
    >>> {k: round(v, 4) for k, v in jacobi_constants(system("earth-moon")).items()}
    {'L1': 3.1883, 'L2': 3.1722, 'L3': 3.0121, 'L4': 2.988, 'L5': 2.988}
    """
    states = np.zeros((5, 6))
    for k, n in enumerate(NAMES):
        states[k, :3] = _position(n, system.mu)[0]
    return dict(zip(NAMES, (float(c) for c in dynamics.jacobi(system.mu, states))))
