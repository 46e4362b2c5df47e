"""Compiled, parallel propagation of many segments, each with its own start time (the
ephemeris model is not autonomous, so :func:`cr3bp.integrate.dop853.integrate_batch`, which
shares one start time, does not serve). Same method: Dormand-Prince 8(5,3) (Hairer, Norsett &
Wanner, *Solving ODE I*, 2nd ed., 1993, section II.5)."""

from __future__ import annotations

import numpy as np
from numba import njit, prange

from ..integrate.dop853 import integrate


@njit(cache=True, parallel=True)
def integrate_segments(mode, params, y0s, t0s, t1s, rtol, atol, max_step, max_steps, events,
                       out_y, out_status, out_t):
    """Row i of ``y0s`` from ``t0s[i]`` to ``t1s[i]``; final states into ``out_y``."""
    no_eval = np.empty(0)
    for i in prange(y0s.shape[0]):
        res = integrate(mode, params, y0s[i].copy(), t0s[i], t1s[i], rtol, atol, -1.0, max_step,
                        max_steps, events, 0, no_eval, False)
        out_status[i] = res[0]
        out_t[i] = res[1]
        out_y[i, :] = res[2]
