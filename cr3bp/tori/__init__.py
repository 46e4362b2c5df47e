"""Quasi-periodic invariant tori of the CR3BP (stroboscopic-map invariance circles).

* :func:`torus_around` — the torus of a given amplitude about a periodic orbit (quasi-halo
  about halos and near-rectilinear halos, Lissajous about planar and vertical Lyapunov orbits)
* :func:`continue_family` — pseudo-arclength families with the Jacobi constant, the
  stroboscopic time or the rotation held
* :class:`Torus` — the result (frequencies, rotation, invariance error, geometry, ``to_dict``)
* :mod:`.solver` — the Newton solver (GMOS formulation), :mod:`.circle` — Fourier operators,
  :mod:`.seeds` — centre eigenpairs of a monodromy
"""

from .family import TorusFamily, continue_family
from .torus import Torus, build, lissajous_near_point, surface, torus_around

__all__ = ["Torus", "TorusFamily", "torus_around", "lissajous_near_point", "continue_family", "build", "surface"]
