"""Connections from a hyperbolic torus's unstable manifold to a periodic orbit's stable manifold
on a Poincaré section (a patch with one Δv), as a :class:`cr3bp.transfers.leg.Leg`.

Method: both half-manifolds are grown to the section (:func:`cr3bp.tori.manifolds.grow_tube`,
:func:`cr3bp.tubes.manifolds.grow_tube`); the pairs of crossings nearest in the matched
position coordinates are refined by Newton's method on the torus departure phases
``(tau, phi)`` (time along the stroboscopic period, circle angle at departure) and the orbit's
departure time ``t_b``: three unknowns, the two in-section position coordinates matched, the
minimum-norm update (Golub & Van Loan, *Matrix Computations*, 4th ed., 2013, §5.6) with
forward-difference partials. The velocity jump at the matched point is the leg's Δv (the
patch-point connection of Gómez, Koon, Lo, Marsden, Masdemont & Ross, Nonlinearity 17, 2004,
§4, with a torus at the departure end as in Gómez & Mondelo, Physica D 157, 2001, §5).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import ConvergenceError, InputError, NoSolutionError
from ..integrate import propagate_batch
from ..tubes.connections import _Branch, _coords, _leg_from_patch
from ..tubes.manifolds import Stop, _globalise, branch_sign, on_energy
from ..tubes.manifolds import grow_tube as grow_orbit_tube
from ..tubes.sections import parse_section
from . import circle, solver
from .manifolds import grow_tube, modes

#: Newton on the patch: tolerance on the matched coordinates (LU) and iterations.
PATCH_TOL = 1e-10
MAX_ITER = 25
#: Candidate pairs refined (nearest first).
CANDIDATES = 5


class _TorusEnd:
    """The torus tube's trajectory departing at ``(tau, phi)`` (see the module notes)."""

    def __init__(self, tube, stop):
        self.tube, self.stop = tube, stop
        t = tube.torus
        self.torus = t
        self.m = modes(t)
        v = self.m.unstable if tube.stability == "unstable" else self.m.stable
        self.v = v
        u0, v0 = t.circle[0], v[0]
        self.sign = branch_sign(t.system, u0, v0 / np.linalg.norm(v0[:3]), tube.branch)

    def start(self, tau, phi):
        t = self.torus
        u = circle.evaluate(t.circle, [phi])
        dv = circle.evaluate(self.v, [phi])
        if tau != 0.0:
            r = propagate_batch(t.system, u, float(tau), rtol=solver.RTOL, atol=solver.ATOL, stm=True)
            u, dv = r.states, np.einsum("kij,kj->ki", r.stm, dv)
        w = self.sign * dv / np.linalg.norm(dv[:, :3], axis=1)[:, None]
        return on_energy(t.system, u + self.tube.step * w, t.jacobi)[0]

    def end(self, tau, phi):
        s = self.start(tau, phi)
        tof, ends, status = _globalise(self.torus.system, s[None, :], self.stop, self.tube.time_sign)
        return s, float(tof[0]), ends[0], status[0]


def connect_torus_to_orbit(torus, orbit, section, n_points=100, *, branch_a="interior",
                           branch_b="interior", step_km=None, t_max=2 * math.pi):
    """The cheapest patch connections from ``torus``'s unstable manifold to ``orbit``'s stable
    manifold on ``section`` (a plane ``x = c``, ``y = c`` or ``z = c``).

    Returns
    -------
    list of Leg, cheapest first (method ``"torus-manifold"``)

    Raises
    ------
    InputError: a section that is not a position plane. NoSolutionError: the cuts do not come
    near each other, or no candidate converges.
    """
    system = torus.system
    sec = parse_section(section, system) if isinstance(section, str) else section
    if sec.kind != "plane" or sec.coordinate > 2:
        raise InputError("torus connections need a position plane such as x=1-mu or y=0")
    stop = Stop(sec, 1, float(t_max))
    names = tuple("xyz"[c] for c in (0, 1, 2) if c != sec.coordinate)
    ta = grow_tube(torus, "unstable", branch_a, n_points, stop, step_km=step_km)
    tb = grow_orbit_tube(orbit, "stable", branch_b, n_points, stop, step_km=step_km)
    ia = np.nonzero(ta.reached("section"))[0]
    ib = np.nonzero(tb.reached("section"))[0]
    if ia.size == 0 or ib.size == 0:
        raise NoSolutionError(f"the {'torus' if ia.size == 0 else 'orbit'} manifold does not reach "
                              f"{sec.label} within {t_max:.4g} TU")
    pa = np.array([_coords(ta.end_states[i], names) for i in ia])
    pb = np.array([_coords(tb.end_states[j], names) for j in ib])
    d = np.linalg.norm(pa[:, None, :] - pb[None, :, :], axis=2)
    order = np.dstack(np.unravel_index(np.argsort(d, axis=None), d.shape))[0][:CANDIDATES]
    ea_fn = _TorusEnd(ta, stop)
    bb = _Branch(tb, stop)
    T, Tb = torus.stroboscopic_time, orbit.period
    legs, reasons = [], []
    for ka, kb in order:
        i, j = ia[ka], ib[kb]
        x = np.array([ta.t_orbit[i], ta.circle_phase[i] - torus.rotation * ta.t_orbit[i] / T,
                      tb.t_orbit[j]], dtype=float)
        try:
            x, ea, eb = _refine(ea_fn, bb, x, names, T, Tb)
        except ConvergenceError as e:
            reasons.append(str(e))
            continue
        leg = _leg_from_patch(system, ea, eb, float(x[0]), float(x[2]), ta, tb, "torus-to-orbit",
                              "torus-manifold", {"section": sec.label, "torus_tau": float(x[0]),
                                                 "torus_circle_angle": float(x[1])})
        legs.append(leg)
    if not legs:
        raise NoSolutionError("no torus-to-orbit patch converged: " + "; ".join(reasons[:3]))
    return sorted(legs, key=lambda lg: lg.dv_mps)


def _refine(ea_fn, bb, x, names, T, Tb, tol=PATCH_TOL):
    """Newton (minimum-norm) on (tau, phi, t_b) matching the in-section positions."""
    h = np.array([1e-7 * T, 1e-7, 1e-7 * Tb])
    res = []
    for it in range(MAX_ITER):
        ea, eb = ea_fn.end(x[0], x[1]), bb.end(x[2])
        if ea[3] != "section" or eb[3] != "section":
            raise ConvergenceError("a refined trajectory no longer reaches the section", it, res, x)
        f = _coords(ea[2], names) - _coords(eb[2], names)
        res.append(float(np.linalg.norm(f)))
        if res[-1] < tol:
            return x, ea, eb
        cols = []
        for k in range(3):
            xk = x.copy()
            xk[k] += h[k]
            e = ea_fn.end(xk[0], xk[1])[2] if k < 2 else None
            fk = (_coords(e, names) - _coords(eb[2], names)) if k < 2 else \
                (_coords(ea[2], names) - _coords(bb.end(xk[2])[2], names))
            cols.append((fk - f) / h[k])
        step = np.linalg.lstsq(np.column_stack(cols), -f, rcond=None)[0]
        lim = np.array([0.1 * T, 0.3, 0.1 * Tb])
        scale = np.max(np.abs(step) / lim)
        if scale > 1:
            step /= scale
        x = x + step
    raise ConvergenceError(f"torus patch refinement did not converge in {MAX_ITER} iterations "
                           f"(residual {res[-1]:.3e})", MAX_ITER, res, x)


__all__ = ["connect_torus_to_orbit"]
