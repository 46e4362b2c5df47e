"""The integrator's right-hand-side dispatcher: the one place that knows every force model.

:func:`rhs` ``(mode, t, s, params, out)`` picks the kernel of the mode (numbers in
:mod:`cr3bp.integrate.modes`): the CR3BP (:mod:`cr3bp.dynamics.kernels`), the point-mass
ephemeris model (:mod:`cr3bp.fidelity.forces`) or the bicircular model
(:mod:`cr3bp.bicircular_kernels`). Each model keeps its kernels in its own room; the
integrator (:mod:`cr3bp.integrate.dop853`) calls only this function for a mode it has no
specialised step for.
"""

from __future__ import annotations

from numba import njit

from .. import bicircular_kernels as _bicircular
from ..dynamics.kernels import eom, eom_stm
from ..fidelity import forces as _ephemeris_forces
from .modes import MODE_BICIRCULAR, MODE_EPHEMERIS, MODE_EPHEMERIS_STM, MODE_STATE, MODE_STM


@njit(cache=True)
def rhs(mode, t, s, params, out):
    """Dispatch on ``mode``: ``MODE_STATE`` (6) or ``MODE_STM`` (42), ``params[0]`` is mu;
    ``MODE_EPHEMERIS`` (6) or ``MODE_EPHEMERIS_STM`` (42), ``params`` packed as described in
    :mod:`cr3bp.fidelity.forces`; ``MODE_BICIRCULAR`` (6) or ``MODE_BICIRCULAR_STM`` (42),
    ``params`` packed as described in :mod:`cr3bp.bicircular_kernels`."""
    if mode == MODE_STM:
        eom_stm(t, s, params[0], out)
    elif mode == MODE_STATE:
        eom(t, s, params[0], out)
    elif mode == MODE_EPHEMERIS:
        _ephemeris_forces.eom(t, s, params, out)
    elif mode == MODE_EPHEMERIS_STM:
        _ephemeris_forces.eom_stm(t, s, params, out)
    elif mode == MODE_BICIRCULAR:
        _bicircular.eom(t, s, params, out)
    else:
        _bicircular.eom_stm(t, s, params, out)
