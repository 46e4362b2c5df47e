"""The integrator's right-hand-side modes: one number per force model and state size, defined
here once.

The compiled integrator (:mod:`cr3bp.integrate.dop853`) takes a mode and a parameter vector and
calls :func:`cr3bp.integrate.dispatch.rhs`, which picks the model's kernel. A new force model is
a new pair of numbers here and a new branch there; nothing else in the integrator changes.
This module imports nothing compiled, so code that only names a mode does not load numba.
"""

from __future__ import annotations

__all__ = ["MODE_STATE", "MODE_STM", "MODE_EPHEMERIS", "MODE_EPHEMERIS_STM", "MODE_BICIRCULAR",
           "MODE_BICIRCULAR_STM", "MODEL_MODES"]

#: The CR3BP (:mod:`cr3bp.dynamics.kernels`), 6 states; ``params[0]`` is mu.
MODE_STATE = 0
#: The CR3BP with its variational equations, 42 states (state + row-major STM).
MODE_STM = 1
#: Point-mass ephemeris model (:mod:`cr3bp.fidelity.forces`), 6 states.
MODE_EPHEMERIS = 2
#: The same with its variational equations, 42 states.
MODE_EPHEMERIS_STM = 3
#: Bicircular Earth-Moon-Sun model (:mod:`cr3bp.bicircular_kernels`), 6 states.
MODE_BICIRCULAR = 4
#: The same with its variational equations, 42 states.
MODE_BICIRCULAR_STM = 5

#: (state mode, STM mode) pairs of the models whose ``params[0]`` is the system's mu (the ones
#: :func:`cr3bp.integrate.propagate` accepts as ``model=``).
MODEL_MODES = ((MODE_STATE, MODE_STM), (MODE_BICIRCULAR, MODE_BICIRCULAR_STM))
