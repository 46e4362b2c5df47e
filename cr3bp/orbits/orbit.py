"""The ``PeriodicOrbit`` result type shared by orbits, manifolds, connections and export."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np


@dataclass(frozen=True)
class PeriodicOrbit:
    """A converged periodic orbit.

    Attributes
    ----------
    system : System
    state : ndarray (6,)     initial state (nondimensional, rotating frame)
    period : float           TU
    monodromy : ndarray (6, 6)  STM over one period from ``state``
    family, point, branch : str  e.g. "halo", "L2", "south" ("" where not meaningful)
    jacobi : float
    periodicity_error : float  |s(T) - s(0)| of the converged orbit, nondimensional
    iterations : int          corrector iterations used
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
