"""Stable and unstable manifolds of hyperbolic tori ("torus tubes").

Method (Jorba & Masdemont, "Dynamics in the centre manifold of the collinear points of the
restricted three body problem", Physica D 132, 1999; Gómez & Mondelo, Physica D 157, 2001, §5;
Olikara, "Computation of quasi-periodic tori and heteroclinic connections in astrodynamics
using collocation techniques", PhD thesis, University of Colorado, 2016, ch. 5):

1. The linearised stroboscopic map of the invariance circle, ``DG = (Q(rho) (x) I_6)
   diag(Phi_j)`` (:func:`cr3bp.tori.stability.map_matrix`), has the torus's normal multipliers
   as eigenvalues, each repeated as ``lambda e^{i k rho}``. The unstable multiplier is the
   largest modulus; of its copies the one whose eigenvector is smoothest around the circle (its
   Fourier energy at the lowest mean harmonic, ``k = 0``) is taken, and its eigenvector made
   real by its own phase: the direction field ``v(theta_1)`` with ``Phi_T(u(theta)) v(theta) =
   lambda v(theta + rho)``. The stable one is the smallest modulus (``1 / lambda``).
2. A grid of torus points ``W(theta_0, theta_1)``: ``n_0`` stroboscopic phases times ``n_1``
   points of the circle. Each circle point and its direction are carried by the flow and its
   state transition matrix over ``tau = theta_0 T / 2 pi`` (one batch propagation with STMs).
3. Each direction is normalised on its position part, its sign fixed once at the circle's first
   point (toward the smaller primary: "interior"; away: "exterior") and kept along the field,
   and the torus point displaced by the step-off distance along it, the velocity then rescaled
   to the torus's Jacobi constant (:func:`cr3bp.tubes.manifolds.on_energy`).
4. The displaced states are propagated (one batch) forward for the unstable manifold, backward
   for the stable one, to the same stops as periodic-orbit tubes
   (:func:`cr3bp.tubes.manifolds.parse_until`). The result is a
   :class:`cr3bp.tubes.manifolds.Tube` (a :class:`TorusTube`), so sections and the section map
   read it as they read an orbit's tube.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError, NoSolutionError
from ..integrate import propagate_batch
from ..tubes.manifolds import Stop, Tube, _globalise, _globalise_pieces, branch_sign, on_energy, parse_until, step_lu
from ..vocabulary import STABILITIES, TUBE_BRANCHES
from . import circle, solver
from .stability import UNIT_RTOL, map_matrix


@dataclass(frozen=True)
class TorusModes:
    """The torus's hyperbolic multipliers and their direction fields on the invariance circle.

    ``unstable``/``stable``: (N, 6) real directions at the circle's nodes; ``lambda_unstable``,
    ``lambda_stable``: the multipliers (real parts of the chosen copies; their moduli are
    ``modulus_unstable``/``modulus_stable``).

    Parameters
    ----------
    lambda_unstable, lambda_stable : complex
        The chosen copies of the unstable and stable multipliers.
    modulus_unstable, modulus_stable : float
        Their moduli.
    unstable, stable : ndarray (N, 6)
        Real direction fields at the circle's nodes.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> from cr3bp.tori.torus import example_torus
    >>> t = example_torus()                 # hand-made, not solved
    >>> from cr3bp.tori.manifolds import modes
    >>> m = modes(t)                                      # a TorusModes
    >>> m.modulus_unstable > 1 > m.modulus_stable, m.unstable.shape
    (True, (5, 6))

    References
    ----------
    Gómez & Mondelo, Physica D 157, 2001, §5; Jorba & Masdemont, Physica D 132, 1999; Olikara,
    PhD thesis, University of Colorado, 2016, ch. 5.
    """

    lambda_unstable: complex
    lambda_stable: complex
    modulus_unstable: float
    modulus_stable: float
    unstable: np.ndarray
    stable: np.ndarray


def _mean_harmonic(vec: np.ndarray, n: int) -> float:
    """Mean |k| of the Fourier energy of an eigenvector around the circle (smoothness)."""
    k = np.abs(np.fft.fftfreq(n, 1.0 / n))
    c = np.abs(np.fft.fft(vec.reshape(n, 6), axis=0)) ** 2
    e = c.sum(axis=1)
    return float((k * e).sum() / max(e.sum(), 1e-300))


def _real_field(vec: np.ndarray, n: int) -> np.ndarray:
    """The eigenvector turned by its own phase and made real (N, 6)."""
    v = vec.reshape(n, 6)
    alpha = 0.5 * np.angle(np.sum(v * v))
    return np.real(v * np.exp(-1j * alpha))


def modes(torus) -> TorusModes:
    """Unstable and stable multipliers and direction fields of a hyperbolic torus (step 1).

    Parameters
    ----------
    torus : Torus

    Returns
    -------
    TorusModes

    Raises
    ------
    NoSolutionError
        The torus is not hyperbolic (no modulus above 1).

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> from cr3bp.tori.torus import example_torus
    >>> t = example_torus()                 # hand-made, not solved
    >>> from cr3bp.tori.manifolds import modes
    >>> round(modes(t).modulus_unstable * modes(t).modulus_stable, 3)   # reciprocal pair
    1.0

    References
    ----------
    Gómez & Mondelo, Physica D 157, 2001, §5; Jorba & Masdemont, Physica D 132, 1999; Olikara,
    PhD thesis, University of Colorado, 2016, ch. 5.
    """
    u = torus.circle
    n = u.shape[0]
    w, vecs = np.linalg.eig(map_matrix(torus.system, u, torus.stroboscopic_time, torus.rotation))
    mod = np.abs(w)
    top, low = mod.max(), mod.min()
    if top <= 1 + UNIT_RTOL:
        raise NoSolutionError(f"the torus is not hyperbolic (largest multiplier modulus {top:.6g}); "
                              "it has no stable and unstable manifolds")

    def pick(target):
        cand = np.nonzero(np.abs(mod - target) <= UNIT_RTOL * target)[0]
        j = min(cand, key=lambda i: _mean_harmonic(vecs[:, i], n))
        return w[j], _real_field(vecs[:, j], n)

    lu, vu = pick(top)
    ls, vs = pick(low)
    return TorusModes(complex(lu), complex(ls), float(abs(lu)), float(abs(ls)), vu, vs)


@dataclass(frozen=True, repr=False)
class TorusTube(Tube):
    """A half-manifold of a torus: a :class:`~cr3bp.tubes.manifolds.Tube` whose departure
    points are a grid on the torus. ``phase`` is ``theta_0 / 2 pi`` and ``t_orbit`` the time
    ``tau`` along the stroboscopic period (``period`` = T); ``circle_phase`` holds ``theta_1``
    (rad) of each departure point; ``multiplier`` the map's eigenvalue (complex).

    Parameters
    ----------
    *args
        The fields of :class:`cr3bp.tubes.manifolds.Tube`, in its order.
    circle_phase : ndarray
        ``theta_1`` (rad) of each departure point.
    multiplier : complex
        The map's eigenvalue.
    torus : Torus
        The torus the tube departs from.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> from cr3bp.tori.torus import example_torus
    >>> t = example_torus()                 # hand-made, not solved
    >>> from cr3bp.tori.manifolds import grow_tube
    >>> tube = grow_tube(t, "unstable", "interior", 4, until="time:1d")
    >>> tube.to_dict()["kind"], len(tube.circle_phase)
    ('torus manifold', 4)

    References
    ----------
    Gómez & Mondelo, Physica D 157, 2001, §5; Jorba & Masdemont, Physica D 132, 1999; Olikara,
    PhD thesis, University of Colorado, 2016, ch. 5.
    """

    circle_phase: np.ndarray = field(default=None, compare=False)
    multiplier: complex = 0j
    torus: object = field(default=None, compare=False, repr=False)

    def to_dict(self) -> dict:
        d = super().to_dict()
        d["kind"] = "torus manifold"
        d["model"] = ("circular restricted three-body problem (rotating frame, nondimensional unless "
                      "a unit is named)")
        d["stroboscopic_time"] = self.period
        d["multiplier"] = [self.multiplier.real, self.multiplier.imag]
        for tr, th0, th1 in zip(d["trajectories"], self.phase, self.circle_phase):
            tr["torus_phase_deg"] = [float(math.degrees(2 * math.pi * th0)), float(math.degrees(th1))]
        return d


def grid_shape(n_points: int) -> tuple[int, int]:
    """(n_0 stroboscopic phases, n_1 circle points) with n_0 n_1 <= n_points, near square.

    Parameters
    ----------
    n_points : int
        Departure points wanted (at least 1).

    Returns
    -------
    (int, int)
        ``n_0`` and ``n_1``.

    Raises
    ------
    InputError
        ``n_points`` below 1.

    Examples
    --------
    >>> from cr3bp.tori.manifolds import grid_shape
    >>> grid_shape(200), grid_shape(1)
    ((14, 14), (1, 1))
    >>> grid_shape(0)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: points = 0 must be at least 1

    References
    ----------
    Common practice.
    """
    n = int(n_points)
    if n < 1:
        raise InputError(f"points = {n_points!r} must be at least 1")
    n0 = max(1, int(math.isqrt(n)))
    return n0, max(1, n // n0)


def manifold_starts(torus, stability: str, branch: str, n_points: int = 200, step_km=None,
                    torus_modes: TorusModes | None = None):
    """Departure data (steps 1-3): ``(theta0, theta1, tau, torus states, unit directions, start
    states, TorusModes, step LU, step km)``, each array over the ``n_0 x n_1`` grid (theta0
    slowest).

    Parameters
    ----------
    torus : Torus
    stability : {"stable", "unstable"}
    branch : {"interior", "exterior"}
    n_points : int
        Departure points, as a grid of ``grid_shape(n_points)``.
    step_km : float or str, optional
        Step-off distance (default as for orbit tubes).
    torus_modes : TorusModes, optional
        Reuse computed modes.

    Returns
    -------
    tuple
        ``(theta0, theta1, tau, torus states, unit directions, start states, TorusModes, step
        LU, step km)``.

    Raises
    ------
    InputError
        Bad stability, branch or step.
    NoSolutionError
        The torus is not hyperbolic.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> from cr3bp.tori.torus import example_torus
    >>> t = example_torus()                 # hand-made, not solved
    >>> from cr3bp.tori.manifolds import manifold_starts
    >>> out = manifold_starts(t, "unstable", "interior", 20)
    >>> out[5].shape                                   # start states on the 4 x 5 grid
    (20, 6)
    >>> manifold_starts(t, "sideways", "interior")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: stability 'sideways' must be stable or unstable

    References
    ----------
    Gómez & Mondelo, Physica D 157, 2001, §5; Jorba & Masdemont, Physica D 132, 1999; Olikara,
    PhD thesis, University of Colorado, 2016, ch. 5.
    """
    if stability not in STABILITIES:
        raise InputError(f"stability '{stability}' must be stable or unstable")
    if branch not in TUBE_BRANCHES:
        raise InputError(f"branch '{branch}' must be interior or exterior")
    system = torus.system
    d, d_km = step_lu(system, step_km)
    m = torus_modes or modes(torus)
    v = m.unstable if stability == "unstable" else m.stable
    n0, n1 = grid_shape(n_points)
    th1 = circle.angles(n1)
    u = circle.evaluate(torus.circle, th1)
    dv = circle.evaluate(v, th1)
    T = torus.stroboscopic_time
    tau = np.repeat(np.arange(n0) * T / n0, n1)
    x0 = np.tile(u, (n0, 1))
    w0 = np.tile(dv, (n0, 1))
    states, w = x0.copy(), w0.copy()
    moved = tau > 0
    if moved.any():
        res = propagate_batch(system, np.ascontiguousarray(x0[moved]), tau[moved], rtol=solver.RTOL,
                              atol=solver.ATOL, stm=True)
        states[moved] = res.states
        w[moved] = np.einsum("kij,kj->ki", res.stm, w0[moved])
    w /= np.linalg.norm(w[:, :3], axis=1)[:, None]
    sign = branch_sign(system, u[0], dv[0] / np.linalg.norm(dv[0, :3]), branch)
    w *= sign
    theta0 = 2 * math.pi * tau / T
    theta1 = np.tile(th1, n0) + torus.rotation * tau / T
    starts = on_energy(system, states + d * w, torus.jacobi)
    return theta0, theta1, tau, states, w, starts, m, d, d_km


def describe(torus) -> str:
    """A short description for a tube's ``origin``: family, point, branch, torus, C.

    Parameters
    ----------
    torus : Torus

    Returns
    -------
    str

    Raises
    ------
    AttributeError
        ``torus`` is not a :class:`Torus`.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> from cr3bp.tori.torus import example_torus
    >>> t = example_torus()                 # hand-made, not solved
    >>> from cr3bp.tori.manifolds import describe
    >>> describe(t)
    'L1 torus C=3.180000'

    References
    ----------
    Common practice.
    """
    parts = [p for p in (torus.family, torus.point, torus.branch) if p]
    return " ".join(parts + ["torus", f"C={torus.jacobi:.6f}"])


def grow_tube(torus, stability: str, branch: str, n_points: int = 200, until=None, *, step_km=None,
              progress=None, origin=None, runner=None) -> TorusTube:
    """Grow a half-manifold of a hyperbolic torus in one batch propagation (module notes).

    Parameters
    ----------
    torus : cr3bp.tori.Torus
    stability : {"stable", "unstable"}
    branch : {"interior", "exterior"}
    n_points : int        departure points, as a grid of ``grid_shape(n_points)`` on the torus
    until : Stop, str or list of str     (:func:`cr3bp.tubes.manifolds.parse_until`)
    step_km : float or str, optional     step-off distance (default as for orbit tubes)

    progress : callable, optional
    origin : str, optional               the tube's origin in words (default :func:`describe`)
    runner : callable(function, tasks) -> list, optional
        Runs the propagation in pieces elsewhere, as for an orbit's tube
        (:func:`cr3bp.tubes.manifolds.grow_tube`: a pool or a dask cluster); the departure
        grid is computed here, and the result is the same bit for bit (every trajectory is
        integrated on its own).

    Returns
    -------
    TorusTube

    Raises
    ------
    InputError
        Bad stability, branch, stop or step.
    NoSolutionError
        The torus is not hyperbolic.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> from cr3bp.tori.torus import example_torus
    >>> t = example_torus()                 # hand-made, not solved
    >>> from cr3bp.tori.manifolds import grow_tube
    >>> tube = grow_tube(t, "stable", "exterior", 4, until="time:1d")
    >>> tube.stability, tube.branch
    ('stable', 'exterior')

    References
    ----------
    Gómez & Mondelo, Physica D 157, 2001, §5; Jorba & Masdemont, Physica D 132, 1999; Olikara,
    PhD thesis, University of Colorado, 2016, ch. 5.
    """
    system = torus.system
    stop = until if isinstance(until, Stop) else parse_until(until, system)
    th0, th1, tau, states, w, starts, m, d, d_km = manifold_starts(torus, stability, branch, n_points,
                                                                   step_km)
    sign = 1.0 if stability == "unstable" else -1.0
    if runner is None:
        tof, ends, status = _globalise(system, starts, stop, sign, progress)
    else:
        tof, ends, status = _globalise_pieces(system, starts, stop, sign, runner, progress)
    lam = m.lambda_unstable if stability == "unstable" else m.lambda_stable
    return TorusTube(system, origin or describe(torus), stability, branch, float(torus.jacobi),
                     float(torus.stroboscopic_time), m.modulus_unstable, d, d_km, th0 / (2 * math.pi),
                     tau, states, w, starts, tof, ends, status, stop, "torus grid", None,
                     circle_phase=th1, multiplier=complex(lam), torus=torus)


__all__ = ["TorusModes", "TorusTube", "modes", "manifold_starts", "grow_tube", "grid_shape", "describe"]
