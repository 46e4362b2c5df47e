"""The ``Torus`` result type and the computation of a torus about a periodic orbit.

A torus is stored as its invariance circle ``U`` (N x 6, the states at ``theta_1 = 2 pi j /
N`` on the section ``theta_0 = 0``), the stroboscopic time ``T`` and the rotation ``rho``:
``phi_T(u(theta)) = u(theta + rho)``. Its frequencies are ``omega_0 = 2 pi / T`` and
``omega_1 = rho / T`` (rad/TU); the rotation number is ``rho / 2 pi``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from ..errors import ConvergenceError, InputError, NoSolutionError, StateError
from ..integrate import propagate_batch
from ..integrate.propagate import batch_kernel
from ..systems import system as _system
from ..validate import positive_number
from ..vocabulary import COLLINEAR_POINTS
from . import circle, seeds, solver
from ..equilibria import lagrange_point
from .stability import stability
from ..threads import serial_call
from .. import validate
from ..integrate.events import table
from ..integrate.modes import MODE_STATE
from ..integrate.status import DEFAULT_MAX_STEPS

#: Smallest and largest number of points on the circle (odd).
N_MIN, N_MAX = 15, 151
#: The circle has enough points when its top quarter of harmonics is below this (relative).
TAIL_TOL = 1e-9
#: Largest accepted invariance error between the nodes (nondimensional 6-vector norm), raised
#: for strongly hyperbolic tori to the Newton floor (``solver.FLOOR_PER_GAIN`` times the largest
#: STM entry): the tolerance a torus states is ``Torus.invariance_tolerance``.
INVARIANCE_TOL = 1e-8
#: Amplitude continuation from the periodic orbit: first step (LU; smaller about unstable
#: orbits: ``FIRST_GAIN_AMPLITUDE / |largest multiplier|``) and growth per step.
FIRST_AMPLITUDE = 1e-3
FIRST_GAIN_AMPLITUDE = 0.03
GROWTH = 3.0
MIN_RATIO = 1.05


class SurfaceError(NoSolutionError):
    """The torus passes inside a primary (no such torus in the model's domain).

    Parameters
    ----------
    message : str
        The reason, naming the primary.

    Examples
    --------
    >>> from cr3bp.errors import NoSolutionError
    >>> from cr3bp.tori.torus import SurfaceError
    >>> issubclass(SurfaceError, NoSolutionError)
    True

    References
    ----------
    Common practice.
    """


@dataclass(frozen=True)
class Torus:
    """A converged quasi-periodic invariant torus (2-D) of the CR3BP.

    Attributes
    ----------
    system : System
    circle : ndarray (N, 6)     invariance circle (nondimensional, rotating frame)
    stroboscopic_time : float  T (TU)
    rotation : float           rho (rad): the circle turns by rho over T
    jacobi : float             mean Jacobi constant of the circle's points
    jacobi_spread : float      largest minus smallest Jacobi constant on the circle
    invariance_error : float   largest |phi_T(u(theta)) - u(theta + rho)| between the nodes
    invariance_tolerance : float   the tolerance it was solved to (INVARIANCE_TOL, or the
                               integrator's floor for strongly hyperbolic tori)
    family : str               "quasi-halo" or "lissajous"
    around : dict              the periodic orbit it was grown from (to_dict summary)
    amplitude_lu : float       RMS distance of the circle's positions from their mean (LU)
    holds : dict               the quantities held when it was solved
    closest_approach_lu : (d1, d2)   least distance from each primary's centre over the torus
    extent_lu : dict           {"x": (min, max), "y": ..., "z": ...} over the torus
    iterations : int
    stability : dict           eigenvalues of the discretised stroboscopic map
                               (:func:`cr3bp.tori.stability.stability`: moduli, verdict)
    extra : dict

    Parameters
    ----------
    system, circle, stroboscopic_time, rotation, jacobi, jacobi_spread, invariance_error, invariance_tolerance, family, point, branch, around, amplitude_lu, holds, closest_approach_lu, extent_lu, iterations, stability, extra
        As the attributes above; made by :func:`build`, not by hand.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> u = np.tile([0.8369, 0, 0, 0, 0, 0], (5, 1)) + 1e-3 * np.eye(5, 6)  # hand-made, not solved
    >>> from cr3bp.tori.torus import Torus
    >>> t = Torus(system=em, circle=u, stroboscopic_time=2.7, rotation=0.3, jacobi=3.18,
    ...           jacobi_spread=0.0, invariance_error=0.0, point="L1")
    >>> t.n_circle_points, round(t.rotation_number, 6), round(t.stroboscopic_period_days, 1)
    (5, 0.047746, 11.7)

    References
    ----------
    Olikara & Scheeres, AAS 12-361 (Adv. Astronaut. Sci. 145), 2012; Gómez & Mondelo, Physica D
    157, 2001.
    """

    system: object
    circle: np.ndarray
    stroboscopic_time: float
    rotation: float
    jacobi: float
    jacobi_spread: float
    invariance_error: float
    invariance_tolerance: float = INVARIANCE_TOL
    family: str = ""
    point: str = ""
    branch: str = ""
    around: dict = field(default_factory=dict, compare=False)
    amplitude_lu: float = float("nan")
    holds: dict = field(default_factory=dict, compare=False)
    closest_approach_lu: tuple = (float("nan"), float("nan"))
    extent_lu: dict = field(default_factory=dict, compare=False)
    iterations: int = 0
    stability: dict = field(default_factory=dict, compare=False)
    extra: dict = field(default_factory=dict, compare=False, repr=False)

    @property
    def n_circle_points(self) -> int:
        return int(self.circle.shape[0])

    @property
    def frequencies_rad_tu(self) -> tuple:
        T = self.stroboscopic_time
        return (2 * math.pi / T, self.rotation / T)

    @property
    def rotation_deg(self) -> float:
        return math.degrees(self.rotation)

    @property
    def rotation_number(self) -> float:
        return self.rotation / (2 * math.pi)

    def _days(self, tu):
        return self.system.days(tu) if self.system.dimensional else None

    @property
    def stroboscopic_period_days(self):
        return self._days(self.stroboscopic_time)

    @property
    def frequency_periods_days(self) -> tuple:
        return tuple(None if w == 0 else self._days(2 * math.pi / abs(w))
                     for w in self.frequencies_rad_tu)

    def to_plotly(self, **options):
        """A rotatable 3-D plotly figure of the torus surface and its invariance circle
        (:func:`cr3bp.tori.figures.interactive_figure`; rotating frame, CR3BP); needs plotly."""
        from .figures import interactive_figure   # lazy: heavy library (matplotlib, plotly)
        return interactive_figure(self, **options)

    def to_dict(self) -> dict:
        km = self.system.km if self.system.dimensional else (lambda v: None)
        return {
            "kind": "torus",
            "family": self.family,
            "point": self.point,
            "branch": self.branch,
            "system": self.system.name,
            "model": "circular restricted three-body problem (rotating frame, nondimensional "
                     "unless a unit is named)",
            "around": self.around,
            "stroboscopic_time": self.stroboscopic_time,
            "stroboscopic_period_days": self.stroboscopic_period_days,
            "rotation_rad": self.rotation,
            "rotation_deg": self.rotation_deg,
            "rotation_number": self.rotation_number,
            "frequencies_rad_tu": list(self.frequencies_rad_tu),
            "frequency_periods_days": list(self.frequency_periods_days),
            "jacobi": self.jacobi,
            "jacobi_spread": self.jacobi_spread,
            "invariance_error": self.invariance_error,
            "invariance_tolerance": self.invariance_tolerance,
            "n_circle_points": self.n_circle_points,
            "amplitude_lu": self.amplitude_lu,
            "amplitude_km": km(self.amplitude_lu),
            "holds": dict(self.holds),
            "closest_approach_km": dict(zip(self.system.names if self.system.dimensional
                                            else ("primary 1", "primary 2"),
                                            [km(d) for d in self.closest_approach_lu])),
            "closest_approach_lu": list(self.closest_approach_lu),
            "extent_lu": {k: list(v) for k, v in self.extent_lu.items()},
            "extent_km": {k: [km(a) for a in v] for k, v in self.extent_lu.items()},
            "iterations": self.iterations,
            "stability": dict(self.stability),
            "circle": self.circle.tolist(),
        }


# ---- solving with an adaptive number of points ----------------------------------------

def solve_adaptive(system, u, T, rho, holds, reference=None, arclength_fn=None):
    """Solve, then double N (spectral resampling) while the Fourier tail or the invariance
    error between the nodes is too large.

    Parameters
    ----------
    system : System
    u : ndarray (N, 6), N odd
        First guess of the circle.
    T, rho : float
        First guesses of the stroboscopic time (TU) and rotation (rad).
    holds : dict
        Held quantities (:func:`cr3bp.tori.solver.solve`).
    reference : (U, T, rho), optional
        Reference of the phase conditions (resampled as N grows).
    arclength_fn : callable(N) -> (x0, tangent, ds), optional
        The pseudo-arclength condition for N points.

    Returns
    -------
    (U, T, rho, info)
        ``info``: iterations, Fourier tail, invariance error and its tolerance.

    Raises
    ------
    InputError
        The circle is not (N, 6) with N odd.
    ConvergenceError
        Newton fails, or more than ``N_MAX`` points would be needed.

    Examples
    --------
    >>> U, T, rho, info = solve_adaptive(em, u0, T0, rho0, holds)       # doctest: +SKIP
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import solve_adaptive
    >>> solve_adaptive(system("earth-moon"), np.zeros((4, 6)), 3.0, 1.0, {})
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: the circle must be (N, 6) with N odd, got (4, 6)

    References
    ----------
    Olikara & Scheeres, AAS 12-361 (Adv. Astronaut. Sci. 145), 2012; Gómez & Mondelo, Physica D
    157, 2001.
    """
    its = 0
    while True:
        n = u.shape[0]
        ref = reference
        if ref is not None and ref[0].shape[0] != n:
            ref = (circle.resample(ref[0], n), ref[1], ref[2])
        arc = arclength_fn(n) if arclength_fn else None
        u, T, rho, info = solver.solve(system, u, T, rho, holds, reference=ref, arclength=arc)
        its += info["iterations"]
        tail = circle.tail(u)
        err = solver.invariance_error(system, u, T, rho)
        tol = max(INVARIANCE_TOL, info["floor"])
        if (tail < TAIL_TOL and err < tol) or n >= N_MAX:
            break
        u = circle.resample(u, min(2 * n + 1, N_MAX))
    if err >= tol:
        raise ConvergenceError(f"the torus needs more than {N_MAX} points on its circle "
                               f"(invariance error {err:.2e} with {n})", iterations=its)
    return u, T, rho, {"iterations": its, "tail": tail, "invariance_error": err,
                       "invariance_tolerance": tol}


def _kind(orbit) -> tuple[str, float | None]:
    """Torus family around this orbit and the linear rotation that picks the branch."""
    if orbit.family == "halo":
        return "quasi-halo", None
    if orbit.family in ("lyapunov", "vertical") and orbit.point in COLLINEAR_POINTS:
        m = lagrange_point(orbit.system, orbit.point).modes
        wp, wv = m.omega_inplane, m.omega_vertical
        ratio = wv / wp if orbit.family == "lyapunov" else wp / wv
        return "lissajous", 2 * math.pi * ratio
    return "quasi-periodic", None


@serial_call
def torus_around(orbit, amplitude_lu: float, hold: str = "jacobi", progress=None) -> Torus:
    """The torus of the given amplitude about a periodic orbit, grown from its centre eigenpair.

    Parameters
    ----------
    orbit : PeriodicOrbit
    amplitude_lu : float   RMS distance of the invariance circle's positions from their centre
    hold : {"jacobi", "period", "rotation"}
        Held at the orbit's value (the Jacobi constant, the period as stroboscopic time) or at
        the rotation of the centre eigenpair while the amplitude grows.
    progress : callable(i, amplitude_lu) or None

    Returns
    -------
    Torus
        With ``extra["amplitude_steps"]`` and ``extra["centre_angle_rad"]``.

    Raises
    ------
    InputError
        Bad amplitude or hold.
    NoSolutionError
        The orbit has no centre eigenpair.
    ConvergenceError
        Newton failed even with small amplitude steps.

    Examples
    --------
    >>> t = torus_around(orbit, 0.005)                                  # doctest: +SKIP
    >>> from cr3bp.tori.torus import torus_around
    >>> torus_around(None, -1.0)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: amplitude (LU) '-1.0' must be positive

    References
    ----------
    Olikara & Scheeres, AAS 12-361, 2012 (method); Gómez & Mondelo, Physica D 157, 2001.
    """
    amplitude_lu = positive_number("amplitude (LU)", amplitude_lu)
    if hold not in ("jacobi", "period", "rotation"):
        raise InputError(f"hold '{hold}' is not allowed; allowed: jacobi, period, rotation")
    system = orbit.system
    pairs = seeds.centre_pairs(orbit.monodromy)
    kind, rho_lin = _kind(orbit)
    if not pairs:
        raise NoSolutionError(f"the {orbit.family} {orbit.point} orbit has no centre eigenpair "
                              "(no quasi-periodic tori about it); its multipliers are "
                              f"{seeds.multipliers_text(orbit.monodromy)}")
    if rho_lin is not None:   # the pair whose angle is nearest the linear one, mod 2 pi
        alpha, v = min(pairs, key=lambda p: min(abs(math.remainder(s * p[0] - rho_lin, 2 * math.pi))
                                                for s in (1, -1)))
    else:
        alpha, v = pairs[0]
    rho0, sign = seeds.branch_rotation(alpha, rho_lin)
    if sign < 0:
        v = np.conj(v)
    value = {"jacobi": orbit.jacobi, "period": orbit.period, "rotation": rho0}[hold]
    lam = float(np.abs(np.linalg.eigvals(orbit.monodromy)).max())
    a = min(amplitude_lu, FIRST_AMPLITUDE, FIRST_GAIN_AMPLITUDE / lam)
    u = seeds.circle_from_pair(orbit.state, v, a, N_MIN)
    T, rho = float(orbit.period), float(rho0)
    done_a, step_ratio, k, its = 0.0, GROWTH, 0, 0
    prev = None
    while True:
        holds = {hold: value, "amplitude": a}
        try:
            u1, T1, rho1, info = solve_adaptive(system, u, T, rho, holds)
        except ConvergenceError:
            if prev is None or step_ratio < MIN_RATIO:
                raise
            step_ratio = 1 + (step_ratio - 1) / 2
            a = done_a * step_ratio if done_a * step_ratio < amplitude_lu else amplitude_lu
            u, T, rho = _scaled(prev, a / done_a)
            continue
        its += info["iterations"]
        k += 1
        if progress:
            progress(k, a)
        prev, done_a = (u1, T1, rho1), a
        if a >= amplitude_lu:
            break
        a = min(a * step_ratio, amplitude_lu)
        u, T, rho = _scaled(prev, a / done_a)
    return build(system, u1, T1, rho1, info["invariance_error"], info["invariance_tolerance"],
                 family=kind, point=orbit.point,
                 branch=orbit.branch, around=_orbit_summary(orbit), holds=holds, iterations=its,
                 extra={"amplitude_steps": k, "centre_angle_rad": alpha})


def _scaled(prev, ratio):
    u, T, rho = prev
    c = u.mean(axis=0)
    return c + (u - c) * ratio, T, rho


def _orbit_summary(orbit) -> dict:
    return {"family": orbit.family, "point": orbit.point, "branch": orbit.branch,
            "state": np.asarray(orbit.state).tolist(), "period": float(orbit.period),
            "period_days": orbit.period_days if orbit.system.dimensional else None,
            "jacobi": float(orbit.jacobi)}


#: The geometry (extents, closest approaches) is sampled on at least this many trajectories
#: of the torus (the circle resampled; odd) at ``samples`` times per stroboscopic time, and
#: each extreme refined by a quadratic through its 3 x 3 neighbourhood of samples.
GEOMETRY_POINTS = 45
GEOMETRY_SAMPLES = 96


def example_torus(**changes) -> "Torus":
    """A hand-made torus for examples: five points near the Earth-Moon L1 point as its circle,
    stroboscopic time 2.7 TU, rotation 0.3 rad, Jacobi constant 3.18. It is NOT a solved
    invariant torus: it only gives the documentation's examples something cheap to work on.

    Parameters
    ----------
    **changes
        Fields to set otherwise (:func:`dataclasses.replace`), e.g. ``amplitude_lu=1e-3``.

    Returns
    -------
    Torus

    Raises
    ------
    TypeError
        A name that is not a field of :class:`Torus`.

    Examples
    --------
    >>> t = example_torus()
    >>> t.circle.shape, t.point
    ((5, 6), 'L1')

    References
    ----------
    Common practice (one shared example object instead of a copy in every docstring).
    """
    u = np.tile([0.8369, 0, 0, 0, 0, 0], (5, 1)) + 1e-3 * np.eye(5, 6)
    t = Torus(system=_system("earth-moon"), circle=u, stroboscopic_time=2.7, rotation=0.3,
              jacobi=3.18, jacobi_spread=0.0, invariance_error=0.0, point="L1")
    return replace(t, **changes) if changes else t


def build(system, u, T, rho, err, tol=INVARIANCE_TOL, samples=GEOMETRY_SAMPLES,
          with_stability=True, with_approaches=True, **kw) -> Torus:
    """Torus with its geometry (closest approaches, extents) measured on the surface and its
    stability (eigenvalues of the discretised map; skipped with ``with_stability=False``).

    The surface is sampled on the trajectories of ``max(GEOMETRY_POINTS, N)`` points of the
    circle (Fourier-interpolated) at ``samples`` times over ``T`` plus one before and one
    after; every sample lies on the smooth torus function ``W(t, theta)`` on a regular
    (sheared) lattice, so each extreme is refined by the maximum of the quadratic through
    the 3 x 3 samples around the best one (periodic in the circle's angle).

    Parameters
    ----------
    system : System
    u : ndarray (N, 6)
        The solved circle.
    T, rho : float
        Stroboscopic time (TU) and rotation (rad).
    err : float
        Its invariance error.
    tol : float
        The tolerance it was solved to.
    samples : int
        Time samples per stroboscopic time.
    with_stability : bool
        Compute the map's eigenvalues.
    with_approaches : bool
        Compute the closest approaches to the primaries (else left NaN: for the intermediate
        tori of a search that needs only the extents).
    **kw
        Further :class:`Torus` fields (family, point, holds, ...).

    Returns
    -------
    Torus

    Raises
    ------
    SurfaceError
        The torus passes inside a primary.

    Examples
    --------
    >>> t = build(em, u1, T1, rho1, info["invariance_error"])            # doctest: +SKIP
    >>> from cr3bp.tori.torus import GEOMETRY_POINTS, GEOMETRY_SAMPLES
    >>> GEOMETRY_POINTS, GEOMETRY_SAMPLES
    (45, 96)

    References
    ----------
    Olikara & Scheeres, AAS 12-361 (Adv. Astronaut. Sci. 145), 2012; Gómez & Mondelo, Physica D
    157, 2001.
    """
    C = solver.jacobi_many(system.mu, u)
    if with_stability:
        kw["stability"] = stability(system, u, T, rho)
    n_geo = max(GEOMETRY_POINTS, u.shape[0])
    ug = circle.resample(u, n_geo) if n_geo != u.shape[0] else u
    grid = _padded_surface(system, ug, T, samples)
    ext = {name: (-refined_max(-grid[:, :, i]), refined_max(grid[:, :, i]))
           for i, name in enumerate("xyz")}
    ca = ((float("nan"), float("nan")) if not with_approaches else
          tuple(closest_approach(system, grid, c, T / samples) for c in (-system.mu, 1 - system.mu)))
    return Torus(system=system, circle=u, stroboscopic_time=T, rotation=rho, jacobi=float(C.mean()),
                 jacobi_spread=float(C.max() - C.min()), invariance_error=err,
                 invariance_tolerance=tol,
                 amplitude_lu=solver.amplitude(u), closest_approach_lu=ca, extent_lu=ext, **kw)


def _padded_surface(system, u, T, samples):
    """``surface`` with one more time step before 0 and after T: (samples + 3, N, 6)."""
    try:
        before = propagate_batch(system, np.asarray(u, dtype=float), -T / samples,
                                 rtol=solver.RTOL, atol=solver.ATOL).states
    except StateError as e:
        raise SurfaceError(f"the torus passes inside a primary ({e}); choose a smaller "
                           "amplitude") from None
    grid = surface(system, before, T * (samples + 2) / samples, samples + 2)
    return grid


def refined_max(f: np.ndarray) -> float:
    """Largest value of a smooth function sampled on a lattice ``f[m, j]`` (m: time, clipped;
    j: periodic): the best sample, refined by the quadratic through its 3 x 3 neighbourhood
    when that quadratic has its maximum within one step (else the sample itself).

    Parameters
    ----------
    f : ndarray (M, N)
        Samples; the first axis clipped (its end rows are not candidates), the second periodic.

    Returns
    -------
    float
        The refined maximum.

    Raises
    ------
    ValueError
        Fewer than three rows.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.tori.torus import refined_max
    >>> m, j = np.meshgrid(np.arange(7.0), np.arange(8.0), indexing="ij")
    >>> f = 1.0 - (m - 3.3) ** 2 - (j - 4.2) ** 2          # a quadratic peak between the samples
    >>> round(refined_max(f), 12), float(f.max()) < 1.0
    (1.0, True)

    References
    ----------
    Common practice (quadratic interpolation of a sampled extremum; Nocedal & Wright,
    *Numerical Optimization*, 2nd ed., 2006, ch. 2, from memory).
    """
    m_count = f.shape[0]
    inner = f[1:m_count - 1]
    m, j = np.unravel_index(np.argmax(inner), inner.shape)
    m += 1
    n = f.shape[1]
    jm, jp = (j - 1) % n, (j + 1) % n
    c = f[m, j]
    g = np.array([(f[m + 1, j] - f[m - 1, j]) / 2, (f[m, jp] - f[m, jm]) / 2])
    h = np.array([[f[m + 1, j] - 2 * c + f[m - 1, j],
                   (f[m + 1, jp] - f[m + 1, jm] - f[m - 1, jp] + f[m - 1, jm]) / 4],
                  [0.0, f[m, jp] - 2 * c + f[m, jm]]])
    h[1, 0] = h[0, 1]
    if np.all(np.linalg.eigvalsh(h) < 0):
        d = -np.linalg.solve(h, g)
        if np.all(np.abs(d) <= 1.0):
            return float(c + 0.5 * g @ d)
    return float(c)


def surface(system, u, T, samples=256) -> np.ndarray:
    """States on the torus, ``grid[m, j] = phi_{m T / M}(u_j)``, shape (M + 1, N, 6); one batch
    propagation of the whole circle per time step (no loop over points).

    The steps after the first call the batch kernel behind :func:`propagate_batch` directly
    with buffers allocated once (the same kernel, method and tolerances): the wrapper's
    per-call checks and result objects cost about as much as the short steps themselves
    (measured ~1.3 ms of ~2.3 ms per 45-point step). Every state of the grid is checked
    against the primaries at the end, and a step any trajectory of which fails is repeated
    through :func:`propagate_batch` for its error.

    Parameters
    ----------
    system : System
    u : ndarray (N, 6)
        The circle's states.
    T : float
        Stroboscopic time, TU.
    samples : int
        Time steps M over ``T``.

    Returns
    -------
    ndarray (M + 1, N, 6)

    Raises
    ------
    SurfaceError
        A trajectory passes inside a primary.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> u = np.tile([0.8369, 0, 0, 0, 0, 0], (5, 1)) + 1e-3 * np.eye(5, 6)  # hand-made, not solved
    >>> from cr3bp.tori.torus import surface
    >>> surface(em, u, 2.7, samples=1).shape
    (2, 5, 6)

    References
    ----------
    Olikara & Scheeres, AAS 12-361 (Adv. Astronaut. Sci. 145), 2012; Gómez & Mondelo, Physica D
    157, 2001.
    """
    kernel = batch_kernel()      # the one propagate_batch runs (prebuilt on one thread)
    s = np.ascontiguousarray(u, dtype=float)
    n = s.shape[0]
    dt = T / samples
    out = np.empty((samples + 1, n, 6))
    out[0] = s

    def step(m, s):
        try:
            return propagate_batch(system, s, dt, rtol=solver.RTOL, atol=solver.ATOL).states
        except StateError as e:
            raise SurfaceError(f"the torus passes inside a primary ({e}); choose a smaller "
                               "amplitude") from None
    if samples == 0:
        return out
    out[1] = step(1, s)
    params = np.array([system.mu], dtype=np.float64)
    tab = np.ascontiguousarray(table(()), dtype=np.float64)
    tf = np.full(n, float(dt))
    o_y, o_t = np.empty((n, 6)), np.empty(n)
    o_st, o_nev, o_seen = (np.zeros(n, dtype=np.int64) for _ in range(3))
    ev_t, ev_y, ev_k = np.empty((n, 1)), np.empty((n, 1, 6)), np.empty((n, 1), dtype=np.int64)
    o_nfev, o_nsteps = np.zeros(n, dtype=np.int64), np.zeros(n, dtype=np.int64)
    for m in range(2, samples + 1):
        y0 = np.ascontiguousarray(out[m - 1])
        kernel(MODE_STATE, params, y0, 0.0, tf, solver.RTOL, solver.ATOL, math.inf,
               DEFAULT_MAX_STEPS, tab, 0, False, o_y, o_t, o_st, o_nev, o_seen, ev_t, ev_y, ev_k,
               o_nfev, o_nsteps)
        if (o_st < 0).any() or not np.isfinite(o_y).all():
            out[m] = step(m, y0)          # the wrapper's checks and its error
        else:
            out[m] = o_y
    try:
        validate.states(system, out.reshape(-1, 6), "the torus surface")
    except StateError as e:
        raise SurfaceError(f"the torus passes inside a primary ({e}); choose a smaller "
                           "amplitude") from None
    return out


def closest_approach(system, grid, xc, spacing) -> float:
    """Least distance to the primary at (xc, 0, 0): the best sample on each trajectory, then
    Newton on ``(r - c) . v = 0`` (the distance is stationary) for all trajectories at once.

    Parameters
    ----------
    system : System
    grid : ndarray (M, N, 6)
        States on the torus (:func:`surface`).
    xc : float
        The primary's x (LU).
    spacing : float
        Time between samples, TU (bounds each Newton step).

    Returns
    -------
    float
        Least distance, LU.

    Raises
    ------
    StateError
        A Newton step lands inside a primary.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> u = np.tile([0.8369, 0, 0, 0, 0, 0], (5, 1)) + 1e-3 * np.eye(5, 6)  # hand-made, not solved
    >>> from cr3bp.tori.torus import closest_approach, surface
    >>> d = closest_approach(em, surface(em, u, 2.7, samples=1), 1 - em.mu, 2.7)
    >>> bool(0.0 < d < 0.2)
    True

    References
    ----------
    Common practice (Newton on the stationarity of the distance).
    """
    N = grid.shape[1]
    c = np.array([xc, 0.0, 0.0])
    d = np.linalg.norm(grid[:, :, :3] - c, axis=2)
    idx = np.argmin(d, axis=0)
    s = grid[idx, np.arange(N)].copy()
    best = d[idx, np.arange(N)].copy()
    for _ in range(6):
        rel = s[:, :3] - c
        f = solver.eom_many(system.mu, s)
        g = np.sum(rel * s[:, 3:], axis=1)
        dg = np.sum(s[:, 3:] ** 2, axis=1) + np.sum(rel * f[:, 3:], axis=1)
        ok = dg > 0
        dt = np.where(ok, -g / np.where(ok, dg, 1.0), 0.0)
        dt = np.clip(dt, -2.0 * spacing, 2.0 * spacing)
        if np.all(np.abs(dt) < 1e-14):
            break
        moved = np.abs(dt) > 0
        if moved.any():
            s[moved] = propagate_batch(system, s[moved], dt[moved], rtol=solver.RTOL,
                                       atol=solver.ATOL).states
    dist = np.linalg.norm(s[:, :3] - c, axis=1)
    return float(min(dist.min(), best.min()))


@serial_call
def lissajous_near_point(system, point: str, ax_lu: float, az_lu: float) -> Torus:
    """A small Lissajous torus at a collinear point from the linear solution
    (:func:`seeds.linear_lissajous`), grown from a tiny copy by amplitude steps, each solved
    holding the Jacobi constant of the linear seed of that size and
    the circle's amplitude ``az_lu / sqrt(2)`` (the out-of-plane oscillation); the in-plane size
    follows from the energy. For amplitudes where the linear solution is a good first guess
    (a few thousand km in the Earth–Moon system); larger Lissajous tori are reached from a
    planar Lyapunov orbit (:func:`torus_around`) or by continuation.

    Parameters
    ----------
    system : System
    point : {"L1", "L2", "L3"}
    ax_lu, az_lu : float
        In-plane and out-of-plane amplitudes of the linear seed, LU.

    Returns
    -------
    Torus
        ``family`` = "lissajous".

    Raises
    ------
    InputError
        A point not collinear, a non-positive amplitude.
    ConvergenceError
        Newton fails even with small amplitude steps.

    Examples
    --------
    >>> t = lissajous_near_point(em, "L1", 0.002, 0.002)                # doctest: +SKIP
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import lissajous_near_point
    >>> lissajous_near_point(system("earth-moon"), "L4", 0.002, 0.002)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: point 'L4': Lissajous tori are about a collinear point (L1, L2, L3)

    References
    ----------
    Richardson, Celestial Mechanics 22, 1980 (linear solution); Olikara & Scheeres 2012.
    """
    if point not in COLLINEAR_POINTS:
        raise InputError(f"point '{point}': Lissajous tori are about a collinear point (L1, L2, L3)")
    ax_lu, az_lu = positive_number("ax (LU)", ax_lu), positive_number("az (LU)", az_lu)
    lp = lagrange_point(system, point)
    centre = np.concatenate([np.asarray(lp.position, dtype=float), np.zeros(3)])
    # the saddle of the point amplifies the seed's error by e^(lambda T) per map: start small
    gain = math.exp(lp.modes.saddle_exponent * 2 * math.pi / lp.modes.omega_inplane)
    f = min(1.0, FIRST_GAIN_AMPLITUDE / gain / max(ax_lu, az_lu))
    u, T, rho = seeds.linear_lissajous(lp.modes, lp.position, f * ax_lu, f * az_lu, N_MIN)
    ratio, done, its, prev = GROWTH, None, 0, None
    while True:
        seed_u = seeds.linear_lissajous(lp.modes, lp.position, f * ax_lu, f * az_lu, N_MIN)[0]
        holds = {"jacobi": float(solver.jacobi_many(system.mu, seed_u).mean()),
                 "amplitude": f * az_lu / math.sqrt(2.0)}
        try:
            u1, T1, rho1, info = solve_adaptive(system, u, T, rho, holds)
        except ConvergenceError:
            if prev is None or ratio < MIN_RATIO:
                raise
            ratio = 1 + (ratio - 1) / 2
            f = min(done * ratio, 1.0)
            u, T, rho = centre + (prev[0] - centre) * (f / done), prev[1], prev[2]
            continue
        its += info["iterations"]
        prev, done = (u1, T1, rho1), f
        if f >= 1.0:
            break
        f = min(f * ratio, 1.0)
        u, T, rho = centre + (u1 - centre) * (f / done), T1, rho1
    return build(system, u1, T1, rho1, info["invariance_error"], info["invariance_tolerance"],
                 family="lissajous", point=point, holds=holds, iterations=its,
                 around={"family": "linear Lissajous", "point": point, "ax_lu": ax_lu,
                         "az_lu": az_lu})
