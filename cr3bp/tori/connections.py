"""Connections from a hyperbolic torus's unstable manifold to a periodic orbit's stable manifold
on a Poincaré section (a patch with one Δv), as a :class:`cr3bp.transfers.leg.Leg`; and between
two tori (:func:`connect_torus_to_torus`: the unstable manifold of one, the stable manifold of the
other, four unknowns: both tori's departure phases).

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
#: Crossings nearer a primary's centre than this many of its radii are not refined.
GRAZE = 1.5
#: Step halvings tried when a Newton step of the torus-to-torus patch does not lower the residual.
BACKTRACK = 12
#: What a torus-to-torus patch matches: the in-section positions, or positions and velocities.
MATCHES = ("position", "state")
#: Candidate pairs refined when the whole in-section state is matched (the cuts are surfaces in
#: four dimensions: the nearest sampled pairs are farther from a meeting point).
STATE_CANDIDATES = 10


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

    Parameters
    ----------
    torus : cr3bp.tori.Torus
        The departure torus (hyperbolic).
    orbit : PeriodicOrbit
        The arrival orbit (same system).
    section : str or Section
        A position plane, e.g. ``"x=1-mu"``.
    n_points : int, optional
        Departure points of each manifold.
    branch_a, branch_b : {"interior", "exterior"}, optional
        Half-manifolds of the departing and arriving object.
    step_km : float or str, optional
        Step-off distance (default as for orbit tubes).
    t_max : float, optional
        Time limit per trajectory, TU.

    Returns
    -------
    list of Leg, cheapest first (method ``"torus-manifold"``, kind ``"torus-to-orbit"``)

    Raises
    ------
    InputError
        A section that is not a position plane.
    NoSolutionError
        The cuts do not come near each other, or no candidate converges.

    Examples
    --------
    >>> legs = connect_torus_to_orbit(torus, orbit, "x=1-mu")          # doctest: +SKIP
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> from cr3bp.tori.torus import example_torus
    >>> t = example_torus()                 # hand-made, not solved
    >>> from cr3bp.tori.connections import connect_torus_to_orbit
    >>> connect_torus_to_orbit(t, None, "vx=0")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: torus connections need a position plane such as x=1-mu or y=0

    References
    ----------
    Gómez, Koon, Lo, Marsden, Masdemont & Ross, Nonlinearity 17, 2004, §4 (patch connections);
    Gómez & Mondelo, Physica D 157, 2001, §5 (manifolds of tori); Golub & Van Loan 2013, §5.6.
    """
    return _connect(torus, orbit, section, n_points, branch_a, branch_b, step_km, t_max, True)


def connect_orbit_to_torus(orbit, torus, section, n_points=100, *, branch_a="interior",
                           branch_b="interior", step_km=None, t_max=2 * math.pi):
    """The cheapest patch connections from ``orbit``'s unstable manifold to ``torus``'s stable
    manifold on ``section`` (arrival at a torus; otherwise as :func:`connect_torus_to_orbit`,
    kind ``"orbit-to-torus"``).

    Parameters
    ----------
    orbit : PeriodicOrbit
        The departure orbit.
    torus : cr3bp.tori.Torus
        The arrival torus (hyperbolic; same system).
    section : str or Section
        A position plane, e.g. ``"x=1-mu"``.
    n_points : int, optional
        Departure points of each manifold.
    branch_a, branch_b : {"interior", "exterior"}, optional
        Half-manifolds of the departing and arriving object.
    step_km : float or str, optional
        Step-off distance (default as for orbit tubes).
    t_max : float, optional
        Time limit per trajectory, TU.

    Returns
    -------
    list of Leg
        Cheapest first (method ``"torus-manifold"``, kind ``"orbit-to-torus"``).

    Raises
    ------
    InputError
        A section that is not a position plane.
    NoSolutionError
        The cuts do not come near each other, or no candidate converges.

    Examples
    --------
    >>> legs = connect_orbit_to_torus(orbit, torus, "x=1-mu")          # doctest: +SKIP
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> from cr3bp.tori.torus import example_torus
    >>> t = example_torus()                 # hand-made, not solved
    >>> from cr3bp.tori.connections import connect_orbit_to_torus
    >>> connect_orbit_to_torus(None, t, "vx=0")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: torus connections need a position plane such as x=1-mu or y=0

    References
    ----------
    Gómez, Koon, Lo, Marsden, Masdemont & Ross, Nonlinearity 17, 2004, §4 (patch connections);
    Gómez & Mondelo, Physica D 157, 2001, §5 (manifolds of tori); Golub & Van Loan 2013, §5.6.
    """
    return _connect(torus, orbit, section, n_points, branch_a, branch_b, step_km, t_max, False)


def _connect(torus, orbit, section, n_points, branch_a, branch_b, step_km, t_max, torus_first):
    system = torus.system
    sec = parse_section(section, system) if isinstance(section, str) else section
    if sec.kind != "plane" or sec.coordinate > 2:
        raise InputError("torus connections need a position plane such as x=1-mu or y=0")
    stop = Stop(sec, 1, float(t_max))
    names = tuple("xyz"[c] for c in (0, 1, 2) if c != sec.coordinate)
    if torus_first:
        tt = grow_tube(torus, "unstable", branch_a, n_points, stop, step_km=step_km)
        to = grow_orbit_tube(orbit, "stable", branch_b, n_points, stop, step_km=step_km)
        ta, tb = tt, to
    else:
        to = grow_orbit_tube(orbit, "unstable", branch_a, n_points, stop, step_km=step_km)
        tt = grow_tube(torus, "stable", branch_b, n_points, stop, step_km=step_km)
        ta, tb = to, tt
    it_ = np.nonzero(tt.reached("section"))[0]
    io_ = np.nonzero(to.reached("section"))[0]
    if it_.size == 0 or io_.size == 0:
        raise NoSolutionError(f"the {'torus' if it_.size == 0 else 'orbit'} manifold does not reach "
                              f"{sec.label} within {t_max:.4g} TU")
    pt = np.array([_coords(tt.end_states[i], names) for i in it_])
    po = np.array([_coords(to.end_states[j], names) for j in io_])
    d = np.linalg.norm(pt[:, None, :] - po[None, :, :], axis=2)
    order = np.dstack(np.unravel_index(np.argsort(d, axis=None), d.shape))[0][:CANDIDATES]
    t_end = _TorusEnd(tt, stop)
    o_end = _Branch(to, stop)
    T, To = torus.stroboscopic_time, orbit.period
    kind = "torus-to-orbit" if torus_first else "orbit-to-torus"
    legs, reasons = [], []
    for kt, ko in order:
        i, j = it_[kt], io_[ko]
        x = np.array([tt.t_orbit[i], tt.circle_phase[i] - torus.rotation * tt.t_orbit[i] / T,
                      to.t_orbit[j]], dtype=float)
        try:
            x, et, eo = _refine(t_end, o_end, x, names, T, To, torus_first)
        except ConvergenceError as e:
            reasons.append(str(e))
            continue
        ea, eb = (et, eo) if torus_first else (eo, et)
        t_a, t_b = (x[0], x[2]) if torus_first else (x[2], x[0])
        legs.append(_leg_from_patch(system, ea, eb, float(t_a), float(t_b), ta, tb, kind, "torus-manifold",
                                    {"section": sec.label, "torus_tau": float(x[0]),
                                     "torus_circle_angle": float(x[1])}))
    if not legs:
        raise NoSolutionError(f"no {kind} patch converged: " + "; ".join(reasons[:3]))
    return sorted(legs, key=lambda lg: lg.dv_mps)


def _refine(t_end, o_end, x, names, T, To, torus_first, tol=PATCH_TOL):
    """Newton (minimum-norm) on (tau, phi, t_orbit) matching the in-section positions of the
    torus trajectory and the orbit's."""
    h = np.array([1e-7 * T, 1e-7, 1e-7 * To])
    sign = 1.0 if torus_first else -1.0          # residual: departing side minus arriving side
    res = []
    for it in range(MAX_ITER):
        et, eo = t_end.end(x[0], x[1]), o_end.end(x[2])
        if et[3] != "section" or eo[3] != "section":
            raise ConvergenceError("a refined trajectory no longer reaches the section", it, res, x)
        f = sign * (_coords(et[2], names) - _coords(eo[2], names))
        res.append(float(np.linalg.norm(f)))
        if res[-1] < tol:
            return x, et, eo
        cols = []
        for k in range(3):
            xk = x.copy()
            xk[k] += h[k]
            if k < 2:
                fk = sign * (_coords(t_end.end(xk[0], xk[1])[2], names) - _coords(eo[2], names))
            else:
                fk = sign * (_coords(et[2], names) - _coords(o_end.end(xk[2])[2], names))
            cols.append((fk - f) / h[k])
        step = np.linalg.lstsq(np.column_stack(cols), -f, rcond=None)[0]
        lim = np.array([0.1 * T, 0.3, 0.1 * To])
        scale = np.max(np.abs(step) / lim)
        if scale > 1:
            step /= scale
        x = x + step
    raise ConvergenceError(f"torus patch refinement did not converge in {MAX_ITER} iterations "
                           f"(residual {res[-1]:.3e})", MAX_ITER, res, x)


def connect_torus_to_torus(torus_a, torus_b, section, n_points=100, *, branch_a="interior",
                           branch_b="interior", step_km=None, t_max=2 * math.pi, match="position"):
    """The cheapest patch connections from ``torus_a``'s unstable manifold to ``torus_b``'s
    stable manifold on ``section`` (a position plane ``x = c``, ``y = c`` or ``z = c``).

    Both half-manifolds are grown to the section (:func:`cr3bp.tori.manifolds.grow_tube`); the
    pairs of crossings nearest in the in-section position coordinates are refined by Newton's
    method (minimum-norm update, forward-difference partials) on the four departure phases
    ``(tau_a, phi_a, tau_b, phi_b)`` (time along each stroboscopic period, circle angle at
    departure) until the positions match; the velocity jump there is the leg's Δv.

    With ``match="state"`` (two tori of one Jacobi constant) the in-section velocities are
    matched too: four equations in the four phases, a square system. In the spatial problem the
    cut of each torus's manifold is a two-dimensional surface of the four-dimensional section
    of one energy level, so two such surfaces meet at isolated points where they meet at all:
    a heteroclinic connection (Δv at the patch zero to Newton's tolerance; the velocity across
    the plane agrees through the common Jacobi constant). The pairs nearest in position and
    velocity are refined; where none converges, NoSolutionError.

    Parameters
    ----------
    torus_a, torus_b : cr3bp.tori.Torus
        The departure and arrival tori (hyperbolic; one system).
    section : str or Section
        A position plane, e.g. ``"x=1-mu"``.
    n_points : int, optional
        Departure points of each manifold (a grid on its torus).
    branch_a, branch_b : {"interior", "exterior"}, optional
        Half-manifolds.
    step_km : float or str, optional
        Step-off distance (default as for orbit tubes).
    t_max : float, optional
        Time limit per trajectory, TU.
    match : {"position", "state"}, optional
        Match the in-section positions (default) or positions and velocities (a heteroclinic
        connection; ``details["match"]`` says which).

    Returns
    -------
    list of Leg
        Cheapest first; method ``"torus-manifold"``, kind ``"torus-to-torus"``; ``details``
        holds both tori's departure phases (``torus_tau``, ``torus_circle_angle`` of the
        departing torus, ``arrival_torus_tau``, ``arrival_torus_circle_angle``).

    Raises
    ------
    InputError
        A section that is not a position plane, or tori of two systems.
    NoSolutionError
        A manifold does not reach the section, a torus is not hyperbolic, or no candidate
        converges.

    Examples
    --------
    Skipped under doctest (two tori and their manifolds take minutes):

    >>> from cr3bp import system
    >>> from cr3bp.tori import request
    >>> em = system("earth-moon")
    >>> a = request.solve(em, "quasi-halo around halo L1 north az=10000km amplitude=300km")   # doctest: +SKIP
    >>> legs = connect_torus_to_torus(a, a, "y=0")                                             # doctest: +SKIP

    Refused at once (a hand-made circle stands in for a torus):

    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> from cr3bp.tori.torus import example_torus
    >>> t = example_torus()                 # hand-made, not solved
    >>> from cr3bp.tori.connections import connect_torus_to_torus
    >>> connect_torus_to_torus(t, t, "vx=0")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: torus connections need a position plane such as x=1-mu or y=0

    References
    ----------
    Gómez, Koon, Lo, Marsden, Masdemont & Ross, "Connecting orbits and invariant manifolds in the
    spatial restricted three-body problem", Nonlinearity 17, 2004, §4 (patch connections);
    Gómez & Mondelo, Physica D 157, 2001, §5 (manifolds of tori); Olikara, PhD thesis,
    University of Colorado, 2016, ch. 5 (torus-to-torus connections).
    """
    system = torus_a.system
    if torus_b.system.mu != system.mu:
        raise InputError("the two tori belong to different systems")
    if match not in MATCHES:
        raise InputError(f"match {match!r}; allowed: {', '.join(MATCHES)}")
    sec = parse_section(section, system) if isinstance(section, str) else section
    if sec.kind != "plane" or sec.coordinate > 2:
        raise InputError("torus connections need a position plane such as x=1-mu or y=0")
    stop = Stop(sec, 1, float(t_max))
    names = tuple("xyz"[c] for c in (0, 1, 2) if c != sec.coordinate)
    if match == "state":
        names = names + tuple("v" + n for n in names)
    ta = grow_tube(torus_a, "unstable", branch_a, n_points, stop, step_km=step_km)
    tb = grow_tube(torus_b, "stable", branch_b, n_points, stop, step_km=step_km)
    ia = np.nonzero(ta.reached("section"))[0]
    ib = np.nonzero(tb.reached("section"))[0]
    if ia.size == 0 or ib.size == 0:
        raise NoSolutionError(f"the {'departure' if ia.size == 0 else 'arrival'} torus's manifold does not reach "
                              f"{sec.label} within {t_max:.4g} TU")
    pa = np.array([_coords(ta.end_states[i], names) for i in ia])
    pb = np.array([_coords(tb.end_states[j], names) for j in ib])
    d = np.linalg.norm(pa[:, None, :] - pb[None, :, :], axis=2)
    if match == "state":        # the plane crossed the same way (the normal velocity's sign)
        k = sec.coordinate + 3
        d[np.sign(ta.end_states[ia, k])[:, None] != np.sign(tb.end_states[ib, k])[None, :]] = np.inf
    order = _spread_pairs(system, d, ta.end_states[ia], tb.end_states[ib], pa,
                          STATE_CANDIDATES if match == "state" else CANDIDATES)
    end_a, end_b = _TorusEnd(ta, stop), _TorusEnd(tb, stop)
    Ta, Tb = torus_a.stroboscopic_time, torus_b.stroboscopic_time
    legs, reasons = [], []
    for ka, kb in order:
        i, j = ia[ka], ib[kb]
        x = np.array([ta.t_orbit[i], ta.circle_phase[i] - torus_a.rotation * ta.t_orbit[i] / Ta,
                      tb.t_orbit[j], tb.circle_phase[j] - torus_b.rotation * tb.t_orbit[j] / Tb], dtype=float)
        try:
            x, ea, eb = _refine_two(end_a, end_b, x, names, Ta, Tb)
        except ConvergenceError as e:
            reasons.append(str(e))
            continue
        legs.append(_leg_from_patch(system, ea, eb, float(x[0]), float(x[2]), ta, tb, "torus-to-torus",
                                    "torus-manifold",
                                    {"section": sec.label, "torus_tau": float(x[0]),
                                     "torus_circle_angle": float(x[1]), "arrival_torus_tau": float(x[2]),
                                     "arrival_torus_circle_angle": float(x[3]), "match": match,
                                     # the departure points as (fraction of T, turns of the circle):
                                     # the phases cr3bp.transfers.optimise starts from
                                     "torus_phase_from": [float(x[0] / Ta), float(x[1] / (2 * math.pi))],
                                     "torus_phase_to": [float(x[2] / Tb), float(x[3] / (2 * math.pi))]}))
    if not legs:
        what = "heteroclinic (position and velocity)" if match == "state" else "torus-to-torus"
        raise NoSolutionError(f"no {what} patch converged: " + "; ".join(reasons[:3]))
    return sorted(legs, key=lambda lg: lg.dv_mps)


def _spread_pairs(system, d, ends_a, ends_b, pa, most=CANDIDATES):
    """Up to CANDIDATES pairs (rows of ``d``: departing crossings, columns: arriving), nearest
    first, leaving out crossings that graze a primary (within GRAZE body radii of its centre:
    Newton steps there fall into the body) and pairs whose departing crossing lies within twice
    the pair's distance of an earlier candidate's (so the candidates are different places)."""
    near = np.zeros(len(ends_a), bool), np.zeros(len(ends_b), bool)
    r = system.radii if system.dimensional else (0.0, 0.0)
    for k, (c, rb) in enumerate(zip(system.positions, r)):
        for side, e in enumerate((ends_a, ends_b)):
            near[side][np.linalg.norm(e[:, :3] - np.array([c, 0.0, 0.0]), axis=1) < GRAZE * rb] = True
    dd = d.copy()
    dd[near[0], :] = np.inf
    dd[:, near[1]] = np.inf
    out = []
    for flat in np.argsort(dd, axis=None):
        i, j = np.unravel_index(flat, dd.shape)
        if not np.isfinite(dd[i, j]):
            break
        if all(np.linalg.norm(pa[i] - pa[k]) > 2 * dd[i, j] for k, _ in out):
            out.append((i, j))
        if len(out) >= most:
            break
    return out


def _refine_two(end_a, end_b, x, names, Ta, Tb, tol=PATCH_TOL):
    """Newton (minimum-norm) on (tau_a, phi_a, tau_b, phi_b) matching the in-section positions of
    the departing torus's trajectory and the arriving one's."""
    h = np.array([1e-7 * Ta, 1e-7, 1e-7 * Tb, 1e-7])
    lim = np.array([0.1 * Ta, 0.3, 0.1 * Tb, 0.3])
    res = []

    def ends(x):
        ea, eb = end_a.end(x[0], x[1]), end_b.end(x[2], x[3])
        if ea[3] != "section" or eb[3] != "section":
            return None
        return ea, eb, _coords(ea[2], names) - _coords(eb[2], names)

    got = ends(x)
    if got is None:
        raise ConvergenceError("a trajectory of the pair does not reach the section", 0, res, x)
    for it in range(MAX_ITER):
        ea, eb, f = got
        ca, cb = _coords(ea[2], names), _coords(eb[2], names)
        res.append(float(np.linalg.norm(f)))
        if res[-1] < tol:
            return x, ea, eb
        cols = []
        for k in range(4):
            xk = x.copy()
            xk[k] += h[k]
            if k < 2:
                fk = _coords(end_a.end(xk[0], xk[1])[2], names) - cb
            else:
                fk = ca - _coords(end_b.end(xk[2], xk[3])[2], names)
            cols.append((fk - f) / h[k])
        step = np.linalg.lstsq(np.column_stack(cols), -f, rcond=None)[0]
        scale = np.max(np.abs(step) / lim)
        if scale > 1:
            step /= scale
        # backtracking: halve the step while a trajectory misses the section or the residual grows
        for _ in range(BACKTRACK):
            trial = ends(x + step)
            if trial is not None and np.linalg.norm(trial[2]) < res[-1]:
                break
            step = step / 2
        else:
            raise ConvergenceError("a refined trajectory no longer reaches the section (or the residual "
                                   f"stopped falling at {res[-1]:.3e})", it, res, x)
        x, got = x + step, trial
    raise ConvergenceError(f"torus-to-torus patch refinement did not converge in {MAX_ITER} iterations "
                           f"(residual {res[-1]:.3e})", MAX_ITER, res, x)


__all__ = ["connect_torus_to_orbit", "connect_orbit_to_torus", "connect_torus_to_torus"]
