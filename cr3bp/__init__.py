"""librate's library: preliminary mission design in the circular restricted three-body problem.

Conventions (units, frame, Omega, Jacobi constant) are stated once in :mod:`cr3bp.systems`.
"""

from .cautions import CAUTION
from .errors import ConvergenceError, InputError, LibrateError, NoSolutionError
from .integrate import Arc, escape, impact, plane, propagate, propagate_batch
from .systems import System, system, system_names
from .equilibria import LagrangePoint, lagrange_point, lagrange_points
from .energy import HillRegion, hill_region, jacobi_above

__version__ = "0.1.0"

__all__ = ["CAUTION", "System", "system", "system_names", "propagate", "propagate_batch", "Arc",
           "plane", "impact", "escape", "InputError", "NoSolutionError", "ConvergenceError",
           "LibrateError", "__version__", "LagrangePoint", "lagrange_point", "lagrange_points",
           "HillRegion", "hill_region", "jacobi_above"]
