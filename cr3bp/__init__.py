"""librate's library: preliminary mission design in the circular restricted three-body problem.

One call per stage of a design (:mod:`cr3bp.api`)::

    import cr3bp
    em = cr3bp.system("earth-moon")
    nrho = cr3bp.orbit(em, "halo L2 south resonance=9:2")
    tube = cr3bp.manifold(nrho, "unstable", points=100, until="time:20d")

``system``, ``points``, ``orbit``, ``family``, ``manifold``, ``section``, ``connect``, ``optimise``,
``route``, ``export``, ``run`` (a scenario file), ``torus``, ``shadow``, ``keep``, ``disperse``,
``refine`` (into the ephemeris model); ``propagate_state`` (one state followed), ``zvc`` (an
energy level); ``catalog_list``, ``catalog_show``, ``catalog_remove`` (the orbit catalogue);
``read_trajectory`` (a file written by ``export``, read back); ``atlas`` (many families);
``torus_atlas`` (many families of tori).

Conventions (units, frame, Omega, Jacobi constant) are stated once in :mod:`cr3bp.systems`.

The names below are loaded on first use (PEP 562 module ``__getattr__``): ``import cr3bp`` or
``from cr3bp.errors import InputError`` costs no numba, scipy or matplotlib import, so a
command pays only for what it uses. ``from cr3bp import propagate`` and ``cr3bp.system(...)``
work as before; so does attribute access to a submodule (``cr3bp.dynamics``).
"""

from __future__ import annotations

import importlib

from .cautions import CAUTION
from .errors import ConvergenceError, InputError, LibrateError, NoSolutionError

__version__ = "0.1.0"

#: public name -> submodule that defines it (imported on first access)
_LAZY = {
    "propagate": "integrate", "propagate_batch": "integrate", "Arc": "integrate",
    "plane": "integrate", "impact": "integrate", "escape": "integrate",
    "System": "systems", "system_names": "systems",
    "LagrangePoint": "equilibria", "lagrange_point": "equilibria", "lagrange_points": "equilibria",
    "HillRegion": "energy", "hill_region": "energy", "jacobi_above": "energy",
}
#: the public face: one call per stage (cr3bp/api.py)
STAGES = ("system", "points", "orbit", "family", "manifold", "section", "connect", "optimise", "route", "export",
          "run", "torus", "shadow", "keep", "disperse", "propagate_state", "zvc", "catalog_list", "catalog_show",
          "catalog_remove", "read_trajectory", "atlas", "torus_atlas", "refine")
_LAZY.update({name: "api" for name in STAGES})

__all__ = list(STAGES) + ["CAUTION", "System", "system_names", "propagate", "propagate_batch", "Arc",
           "plane", "impact", "escape", "InputError", "NoSolutionError", "ConvergenceError",
           "LibrateError", "__version__", "LagrangePoint", "lagrange_point", "lagrange_points",
           "HillRegion", "hill_region", "jacobi_above"]


def __getattr__(name):
    if name in _LAZY:
        value = getattr(importlib.import_module(f".{_LAZY[name]}", __name__), name)
        globals()[name] = value
        return value
    if not name.startswith("_"):
        try:
            return importlib.import_module(f".{name}", __name__)
        except ModuleNotFoundError as e:
            if e.name != f"{__name__}.{name}":
                raise
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(__all__))
