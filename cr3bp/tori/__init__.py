"""Quasi-periodic invariant tori of the CR3BP (stroboscopic-map invariance circles).

* :func:`torus_around` — the torus of a given amplitude about a periodic orbit (quasi-halo
  about halos and near-rectilinear halos, Lissajous about planar and vertical Lyapunov orbits)
* :class:`Torus` — the result (frequencies, rotation, invariance error, geometry, ``to_dict``)
* :mod:`.solver` — the Newton solver (GMOS formulation), :mod:`.circle` — Fourier operators,
  :mod:`.seeds` — centre eigenpairs of a monodromy
"""

from .torus import Torus, build, surface, torus_around

__all__ = ["Torus", "torus_around", "build", "surface"]
