"""The ``PeriodicOrbit`` result type shared by orbits, manifolds, connections and export.

Geometry conventions (used by the CLI, the catalogue and the targets):

* ``amplitude_lu = (Ax, Ay, Az)``: ``Ax`` and ``Ay`` are half the extent of the orbit in x
  and y; ``Az`` is the largest ``|z|`` (the out-of-plane excursion from the plane of the
  primaries). For small halo and vertical orbits ``Az`` equals half the z extent.
* ``closest_approach_lu = (d1, d2)``: least distance from the centre of each primary over
  one period (perilune radius for an Earth–Moon orbit is ``d2``).
* Halo branches: ``north`` when ``z > 0`` at the perpendicular crossing farther from the
  smaller primary (the apolune side for L1/L2; for L3, farther from the larger primary),
  ``south`` when ``z < 0`` there. With this convention the Earth–Moon L2 southern
  near-rectilinear halos have their apolune south of the plane (common practice). Families
  start every member at that far crossing: the full-period map is far less sensitive there
  than at perilune, so the periodicity error of near-rectilinear orbits stays at 1e-13
  instead of 1e-10.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..display import Shown
from . import stability as _stab

_NAN3 = (float("nan"),) * 3


@dataclass(frozen=True, repr=False)
class PeriodicOrbit(Shown):
    """A converged periodic orbit.

    Parameters
    ----------
    system : System
    state : ndarray, shape (6,)
        Initial state (nondimensional, rotating frame).
    period : float
        TU.
    monodromy : ndarray, shape (6, 6)
        STM over one period from ``state``.
    family, point, branch : str
        E.g. ``"halo"``, ``"L2"``, ``"south"`` (``""`` where not meaningful).
    jacobi : float
    periodicity_error : float
        ``|s(T) - s(0)|`` of the converged orbit, nondimensional, from a propagation over the
        full period.
    iterations : int
        Corrector iterations used.
    extra : dict
        Anything else (method, residual history, ...).
    amplitude_lu : tuple of float
        (Ax, Ay, Az) in LU (see module notes).
    closest_approach_lu : tuple of float
        (d1, d2) least distance to each primary's centre, LU.
    symmetry : str
        ``"xz"`` (x-z plane), ``"x-axis"``, or ``"none"``.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (periodic orbits, monodromy and stability of the restricted problem).
    .. [2] R. A. Broucke, "Stability of periodic orbits in the elliptic restricted three-body
       problem", *AIAA Journal* 7, 1969 (stability indices).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry, family="lyapunov", point="L1")
    >>> round(orbit.period_days, 3), orbit.stable
    (11.689, False)
    """

    system: object
    state: np.ndarray
    period: float
    monodromy: np.ndarray
    family: str = ""
    point: str = ""
    branch: str = ""
    jacobi: float = float("nan")
    periodicity_error: float = float("nan")
    iterations: int = 0
    extra: dict = field(default_factory=dict, compare=False, repr=False)
    amplitude_lu: tuple = _NAN3
    closest_approach_lu: tuple = (float("nan"), float("nan"))
    symmetry: str = "xz"

    # ---- derived values --------------------------------------------------------------
    @property
    def period_days(self) -> float:
        return self.system.days(self.period) if self.system.dimensional else float("nan")

    @property
    def stability_indices(self):
        """The two non-trivial stability indices nu = (lambda + 1/lambda)/2 (see :mod:`.stability`)."""
        return _stab.stability_indices(self.monodromy)

    @property
    def eigenvalues(self) -> np.ndarray:
        return _stab.eigenvalues(self.monodromy)

    @property
    def stable(self) -> bool:
        return _stab.is_stable(self.stability_indices)

    @property
    def largest_multiplier(self) -> float:
        return _stab.largest_multiplier(self.stability_indices)

    @property
    def e_folding_tu(self) -> float:
        """Time for the most unstable mode to grow by e: ``T / ln|lambda_max|`` (inf if stable)."""
        lam = self.largest_multiplier
        return self.period / math.log(lam) if lam > 1.0 + 1e-9 else float("inf")

    @property
    def e_folding_days(self) -> float:
        t = self.e_folding_tu
        return self.system.days(t) if (self.system.dimensional and math.isfinite(t)) else (
            float("inf") if not math.isfinite(t) else float("nan"))

    @property
    def period_ratio(self):
        """The measured p:q of a resonant orbit, ``(n_sc, n_prim)``: revolutions of the
        spacecraft about the larger primary (inertial) and of the primaries about each other in
        one period, ``n_prim = T / 2 pi`` and ``n_sc = w + n_prim`` with ``w`` the whole turns of
        the rotating-frame position about the larger primary over the period (an inertial angle
        is the rotating one plus the frame's). Same order as the family's label p:q; exactly
        (p, q) for a Kepler ellipse of sidereal period 2 pi q / p. None for other families."""
        w = self.extra.get("winding_larger")
        if w is None:
            return None
        n_prim = self.period / (2 * math.pi)
        return (w + n_prim, n_prim)

    @property
    def osculating_period_ratio(self):
        """Sidereal two-body period about the larger primary (GM = 1 - mu) of the initial state,
        in periods of the primaries (2 pi), for a resonant orbit (else None): ``q/p`` for a
        Kepler ellipse of the p:q resonance. Resonant members start at a crossing far from the
        secondary, where the orbit about the larger primary is least perturbed; the osculating
        elements from the vis-viva equation (Murray & Dermott, *Solar System Dynamics*, 1999,
        eq. 2.34, from memory)."""
        if self.extra.get("winding_larger") is None:
            return None
        mu = self.system.mu
        x, y, _, vx, vy, _ = (float(v) for v in self.state)
        rx = x + mu
        r = math.hypot(rx, y)
        # inertial velocity = rotating velocity + omega x r (omega = 1 about z)
        ux, uy = vx - y, vy + rx
        inv_a = 2.0 / r - (ux * ux + uy * uy) / (1.0 - mu)
        if inv_a <= 0:
            return None
        return math.sqrt(1.0 / inv_a ** 3 / (1.0 - mu))

    @property
    def amplitude_km(self) -> dict:
        f = self.system.length_km if self.system.dimensional else float("nan")
        return {k: v * f for k, v in zip("xyz", self.amplitude_lu)}

    @property
    def closest_approach_km(self) -> dict:
        f = self.system.length_km if self.system.dimensional else float("nan")
        return {n: d * f for n, d in zip(self.system.names, self.closest_approach_lu)}

    def to_dict(self) -> dict:
        nus = self.stability_indices
        nu_out = [float(n.real) if isinstance(n, complex) else float(n) for n in nus]
        d = {
            "system": self.system.name,
            "family": self.family,
            "point": self.point,
            "branch": self.branch,
            "state": [float(v) for v in self.state],
            "period": float(self.period),
            "period_days": _num(self.period_days),
            "jacobi": float(self.jacobi),
            "stability_indices": nu_out,
            "stability_complex": any(isinstance(n, complex) for n in nus),
            "stable": self.stable,
            "e_folding_days": _num(self.e_folding_days),
            "periodicity_error": float(self.periodicity_error),
            "iterations": int(self.iterations),
            "amplitude_km": {k: _num(v) for k, v in self.amplitude_km.items()},
            "amplitude_lu": {k: float(v) for k, v in zip("xyz", self.amplitude_lu)},
            "closest_approach_km": {k: _num(v) for k, v in self.closest_approach_km.items()},
            "closest_approach_lu": {n: float(v) for n, v in zip(self.system.names, self.closest_approach_lu)},
            "approach_lu": [float(v) for v in self.closest_approach_lu],
            "symmetry": self.symmetry,
        }
        pr = self.period_ratio
        if pr is not None:
            d["period_ratio"] = [float(pr[0]), float(pr[1])]
            d["osculating_period_ratio"] = _num(self.osculating_period_ratio or float("nan"))
        if self.extra.get("periodicity_note"):
            d["periodicity_note"] = self.extra["periodicity_note"]
        tm = self.extra.get("target_matches")
        if tm:
            d["target_matches"] = {
                "quantity": tm["quantity"], "occurrence": tm["occurrence"], "count": tm["count"],
                "places": [{"member": p["member"], "period": p["period"],
                            "period_days": _num(self.system.days(p["period"])) if self.system.dimensional else None,
                            "jacobi": p["jacobi"]} for p in tm["places"]]}
        return d


def _num(v):
    v = float(v)
    return v if math.isfinite(v) else None
