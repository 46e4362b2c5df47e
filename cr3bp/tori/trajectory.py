"""A trajectory on a torus over a span, from a chosen torus phase.

The torus function is ``W(theta0, theta1) = phi_tau(u(theta1 - omega1 tau))`` with
``tau = theta0 / omega0`` (``0 <= theta0 < 2 pi``), ``omega0 = 2 pi / T``, ``omega1 = rho / T``
(Olikara & Scheeres, AAS 12-361, 2012, §II): the flow moves the phases uniformly,
``phi_t(W(theta0, theta1)) = W(theta0 + omega0 t, theta1 + omega1 t)``. The trajectory from a
phase is sampled as ``W`` at the moved phases: within each stroboscopic time it is one
propagation from a point of the invariance circle (with the integrator's dense output), and at
each new stroboscopic time it starts again from the circle. A hyperbolic torus thus keeps the
samples on the torus over any span (a single long propagation would leave it at the rate of
its largest multiplier); the joins differ from a continued propagation by the torus's
invariance error.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import InputError, NoSolutionError
from . import circle, solver
from ..integrate import propagate
from ..io.export import Segment


def state_at(torus, theta0: float, theta1: float) -> np.ndarray:
    """The state ``W(theta0, theta1)`` on the torus (angles in rad).

    Parameters
    ----------
    torus : Torus
        The torus (:mod:`cr3bp.tori.torus`).
    theta0, theta1 : float
        The torus angles: along the flow (``2 pi`` is one stroboscopic time) and along the
        invariance circle.

    Returns
    -------
    numpy.ndarray, shape (6,)
        Rotating state.

    Raises
    ------
    NoSolutionError
        The propagation from the circle stops early.

    Examples
    --------
    >>> x = state_at(torus, 0.0, 0.0)              # doctest: +SKIP

    References
    ----------
    Olikara, Z. P. & Scheeres, D. J., "Numerical method for computing quasi-periodic orbits and
    their stability in the restricted three-body problem", AAS 12-361 (2012), sec. II.
    """
    T = torus.stroboscopic_time
    w1 = torus.rotation / T
    a = float(theta0) % (2 * math.pi)
    tau = a * T / (2 * math.pi)
    u = circle.evaluate(torus.circle, [float(theta1) - w1 * tau])[0]
    if tau == 0.0:
        return u
    return np.asarray(propagate(torus.system, u, tau, rtol=solver.RTOL, atol=solver.ATOL).states[-1])


def sample(torus, t_eval, phase=(0.0, 0.0)):
    """States on the torus at times ``t_eval`` from the torus phase ``phase``.

    Parameters
    ----------
    torus : Torus
        The torus.
    t_eval : array_like
        Times, TU, increasing from 0.
    phase : (float, float), optional
        ``(theta0, theta1)``, radians.

    Returns
    -------
    Segment
        :class:`cr3bp.io.export.Segment` of the samples.

    Raises
    ------
    InputError
        Times not increasing from 0, or a phase that is not two finite angles.

    Examples
    --------
    >>> seg = sample(torus, np.linspace(0.0, 10.0, 200))          # doctest: +SKIP
    >>> sample(None, [1.0, 0.5])
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: sample times must be increasing from 0

    References
    ----------
    Olikara, Z. P. & Scheeres, D. J., "Numerical method for computing quasi-periodic orbits and
    their stability in the restricted three-body problem", AAS 12-361 (2012), sec. II.
    """
    t = np.asarray(t_eval, dtype=float)
    if t.ndim != 1 or t.size == 0 or np.any(np.diff(t) <= 0) or t[0] < 0:
        raise InputError("sample times must be increasing from 0")
    th0, th1 = (float(p) for p in phase)
    if not (math.isfinite(th0) and math.isfinite(th1)):
        raise InputError(f"torus phase {phase!r} must be two finite angles")
    T = torus.stroboscopic_time
    w0, w1 = 2 * math.pi / T, torus.rotation / T
    a = th0 % (2 * math.pi) + w0 * t
    k = np.floor(a / (2 * math.pi)).astype(int)
    tau = (a - 2 * math.pi * k) / w0
    out = np.empty((t.size, 6))
    for kk in np.unique(k):            # one propagation per stroboscopic time of the span
        sel = np.nonzero(k == kk)[0]
        start_t = t[sel[0]] - tau[sel[0]]          # the time this stretch left the circle
        u0 = circle.evaluate(torus.circle, [th1 + w1 * start_t])[0]
        taus = tau[sel]
        if taus[-1] == 0.0:
            out[sel] = u0
            continue
        grid = taus if taus[0] > 0 else taus
        arc = propagate(torus.system, u0, float(taus[-1]), rtol=solver.RTOL, atol=solver.ATOL,
                        t_eval=np.concatenate([[0.0], grid]) if grid[0] > 0 else grid)
        st = np.asarray(arc.states)
        if grid[0] > 0:
            st = st[1:]
        if st.shape[0] != sel.size:
            raise NoSolutionError(f"propagation on the torus stopped ({arc.status})")
        out[sel] = st
    return Segment(t.copy(), out)
