"""Departures from a circular Earth parking orbit to a quasi-periodic torus (Earth–Moon), direct
or past the Moon, the insertion point free over both torus angles.

The lunar-flyby path is the periodic orbit's design (:mod:`cr3bp.transfers.departure`: a batch
scan of lunar periapsis states matched to the target by a k-d tree, two coasts joined at the
flyby, SLSQP in rounds with analytic gradients from the coasts' state transition matrices)
with the torus as the insertion end: :class:`TorusPoints` gives the state at both torus angles
and its derivatives with respect to them (:meth:`TorusPoints.partials`) and the scan's samples
over the torus (:meth:`TorusPoints.grid`).

The design is the one :func:`cr3bp.transfers.departure.design_departure` makes for a periodic
orbit (backward shooting from the insertion point to the first close perigee, a tangential
departure burn there, least total Δv by SLSQP under the parking-radius and optional inclination
constraints; first guesses from two-body Lambert arcs), with the orbit's one insertion phase
replaced by the torus's two: the unknowns are ``(a, b, dv_insertion)`` where the insertion state
is ``W(2 pi a, 2 pi b)``, the torus function of :func:`cr3bp.tori.trajectory.state_at`
(Olikara & Scheeres, AAS 12-361, 2012, §II). The result is a
:class:`cr3bp.transfers.departure.Departure` (its ``orbit`` the torus, its ``insertion_phase``
``a``; ``details["torus_phase_deg"]`` both angles), so :func:`cr3bp.transfers.departure.as_leg`
and :func:`cr3bp.transfers.departure.closure_km` read it as they read a periodic orbit's.

The flyby path to a torus (:func:`cr3bp.transfers.departure.design_flyby`, its public entry) is
found by continuation from the torus's base orbit rather than by the scan alone: the periodic
orbit the torus was grown from (:func:`base_orbit`) gets its own optimised flyby first; its
unknowns, with the orbit's insertion phase as the stroboscopic phase ``a`` and
``FLYBY_CIRCLE_STARTS`` circle angles ``b`` evenly spaced, are the starts on the torus, each made
feasible (least-norm Newton) and optimised until the first-order conditions hold; the cheapest is
kept (the first of equal costs). The scan runs only when no start is feasible (no base orbit, as
for a Lissajous torus). The search runs on one BLAS thread, so the same torus gives the same
transfer in any process at any thread count; the time of flight is bounded by the orbit's
``FLYBY_MAX_TOF_DAYS``.

Torus states at any phase come from ``PHASE_SAMPLES`` copies of the invariance circle carried
along the stroboscopic time (one batch propagation); a state is the Fourier interpolant of the
nearest earlier copy, propagated over the remainder (at most ``T / PHASE_SAMPLES``).
"""

from __future__ import annotations

import math
import time
import types

import numpy as np
from scipy.optimize import minimize

from .. import validate
from ..errors import ConvergenceError, InputError, NoSolutionError
from ..dynamics import acceleration
from ..integrate import propagate, propagate_batch
from ..transfers import departure as dep
from ..transfers import departure_common as common
from . import circle, solver

#: Copies of the invariance circle along the stroboscopic time (state look-up).
PHASE_SAMPLES = 32
#: First-guess grid over the torus: stroboscopic phases times circle angles.
GUESS_A, GUESS_B = 16, 8
#: Stroboscopic phases per stored circle copy in the flyby scan's samples (:meth:`TorusPoints.grid`).
GRID_SUBSTEPS = 4
#: Flyby starts continued from the base orbit's optimised flyby: the orbit's insertion phase as the
#: stroboscopic phase, this many circle angles evenly spaced (module notes).
FLYBY_CIRCLE_STARTS = 8


class TorusPoints:
    """States ``W(2 pi a, 2 pi b)`` of a torus at any phase ``(a, b)`` (revolutions).

    Parameters
    ----------
    torus : cr3bp.tori.Torus
        The torus.
    samples : int, optional
        Copies of the invariance circle along the stroboscopic time.

    Examples
    --------
    >>> pts = TorusPoints(torus)          # doctest: +SKIP
    >>> pts.at(0.25, 0.5).shape           # doctest: +SKIP
    (6,)

    The same on a hand-made circle (not a solved torus), to show the call:

    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> from cr3bp.tori.torus import example_torus
    >>> t = example_torus()                 # hand-made, not solved
    >>> from cr3bp.tori.departure import TorusPoints
    >>> TorusPoints(t).at(0.25, 0.5).shape
    (6,)

    References
    ----------
    Olikara & Scheeres, AAS 12-361, 2012, §II (the torus function); Fourier interpolation of the
    circle: common practice.
    """

    def __init__(self, torus, samples: int = PHASE_SAMPLES):
        self.torus = torus
        self.T = float(torus.stroboscopic_time)
        self.n = int(samples)
        u = np.asarray(torus.circle, dtype=float)
        m = u.shape[0]
        self.tau = np.arange(self.n) * self.T / self.n
        taus = np.repeat(self.tau[1:], m)
        moved = propagate_batch(torus.system, np.ascontiguousarray(np.tile(u, (self.n - 1, 1))), taus,
                                rtol=solver.RTOL, atol=solver.ATOL).states
        self.circles = np.concatenate([u[None], moved.reshape(self.n - 1, m, 6)])
        self.slopes = np.array([circle.derivative(c) for c in self.circles])

    #: Insertion phases (the two torus angles, in revolutions).
    nphase = 2

    def grid(self, n: int, sub: int = GRID_SUBSTEPS):
        """About ``n`` phases on the torus and their states (the flyby scan's samples):
        ``samples * sub`` stroboscopic phases (the stored circle copies and ``sub - 1`` phases
        between each two, one batch propagation) times at least 8 evenly spaced circle angles.

        Parameters
        ----------
        n : int
            Samples wanted (at least ``8 * samples * sub`` are given).
        sub : int, optional
            Stroboscopic phases per stored circle copy.

        Returns
        -------
        phases : numpy.ndarray, shape (m, 2)
            ``(a, b)`` in revolutions, ``a`` varying slowest.
        states : numpy.ndarray, shape (m, 6)

        Raises
        ------
        StateError
            The propagation fails.

        Examples
        --------
        >>> from cr3bp.tori.torus import example_torus
        >>> ph, st = TorusPoints(example_torus()).grid(256, sub=1)
        >>> ph.shape, st.shape
        ((256, 2), (256, 6))
        """
        sub = max(1, int(sub))
        na = self.n * sub
        nb = max(8, int(math.ceil(n / na)))
        b = np.arange(nb) / nb
        a = np.arange(na) / na
        starts = np.concatenate([circle.evaluate(self.circles[j // sub], 2 * math.pi * b - self.torus.rotation * a[j])
                                 for j in range(na)])
        dts = np.repeat(a * self.T - self.tau[np.arange(na) // sub], nb)
        states = starts.copy()
        moving = dts > 0.0
        if np.any(moving):
            states[moving] = propagate_batch(self.torus.system, np.ascontiguousarray(starts[moving]), dts[moving],
                                             rtol=dep.RTOL, atol=dep.ATOL).states
        phases = np.column_stack([np.repeat(a, nb), np.tile(b, na)])
        return phases, states

    def partials(self, phases):
        """The state at ``phases = (a, b)`` and its derivatives with respect to ``a`` and ``b``.

        With ``W(a, b) = phi_dt(C_k(2 pi b - rho a))`` (``C_k`` the circle copy ``k``, ``dt = a T -
        tau_k``): ``dW/db = 2 pi Phi C_k'`` and ``dW/da = T f(W) - (rho / 2 pi) dW/db``, ``Phi`` the
        state transition matrix over ``dt`` and ``f`` the vector field.

        Parameters
        ----------
        phases : array_like, shape (2,)
            ``(a, b)`` in revolutions.

        Returns
        -------
        state : numpy.ndarray, shape (6,)
        d_state : numpy.ndarray, shape (6, 2)
            Columns: d/da, d/db.

        Raises
        ------
        StateError
            The propagation fails.

        Examples
        --------
        >>> from cr3bp.tori.torus import example_torus
        >>> s, d = TorusPoints(example_torus()).partials([0.25, 0.5])
        >>> s.shape, d.shape
        ((6,), (6, 2))

        References
        ----------
        Olikara & Scheeres, AAS 12-361, 2012, §II (the torus function and its invariance).
        """
        a = float(phases[0]) % 1.0
        b = float(phases[1])
        k = min(int(a * self.n), self.n - 1)
        th = 2 * math.pi * b - self.torus.rotation * a
        s = circle.evaluate(self.circles[k], [th])[0]
        ds = circle.evaluate(self.slopes[k], [th])[0]
        dt = a * self.T - self.tau[k]
        if dt != 0.0:
            arc = propagate(self.torus.system, s, dt, stm=True, rtol=dep.RTOL, atol=dep.ATOL)
            s, ds = np.array(arc.final_state), np.asarray(arc.stm) @ ds
        d_b = 2 * math.pi * ds
        d_a = self.T * acceleration(self.torus.system.mu, s) - self.torus.rotation / (2 * math.pi) * d_b
        return np.array(s), np.column_stack([d_a, d_b])

    def at(self, a: float, b: float) -> np.ndarray:
        """The rotating state at phase ``(a, b)`` (revolutions of the two torus angles).

        Parameters
        ----------
        a, b : float
            ``theta0 / 2 pi`` (along the stroboscopic time) and ``theta1 / 2 pi``.

        Returns
        -------
        numpy.ndarray, shape (6,)

        Raises
        ------
        StateError
            The propagation fails (it does not near a torus).

        Examples
        --------
        >>> TorusPoints(torus).at(0.0, 0.0)   # doctest: +SKIP
        """
        a = float(a) % 1.0
        t = a * self.T
        k = min(int(a * self.n), self.n - 1)
        th = 2 * math.pi * float(b) - self.torus.rotation * a
        s = circle.evaluate(self.circles[k], [th])[0]
        dt = t - self.tau[k]
        if dt == 0.0:
            return np.array(s)
        return np.array(propagate(self.torus.system, s, dt, rtol=dep.RTOL, atol=dep.ATOL).final_state)


class _TorusProblem:
    """The direct departure's transfer as a function of ``z = (a, b, dv_x, dv_y, dv_z)``; the
    same callbacks and cache as :class:`cr3bp.transfers.departure._Problem`."""

    def __init__(self, torus, altitude_km, inclination_deg, max_tof, path="direct", min_flyby_km=None):
        s = torus.system
        self.system, self.orbit, self.path = s, torus, path
        self.points = TorusPoints(torus)
        self.r_park = (s.primary.radius_km + altitude_km) / s.length_km
        self.inc = None if inclination_deg is None else math.radians(inclination_deg)
        self.r_fb = None if min_flyby_km is None else (s.secondary.radius_km + min_flyby_km) / s.length_km
        self.max_tof = max_tof
        r_e, r_m = s.radii
        self.earth = common.Periapsis(s, 0, dep.EARTH_WITHIN if path == "direct" else dep.FLYBY_EARTH_WITHIN,
                                      (0.2 * r_e, r_m))
        self.cache = {}
        self.evaluations = 0

    def evaluate(self, z):
        key = tuple(np.round(np.asarray(z, dtype=float), 15))
        if key in self.cache:
            return self.cache[key]
        self.evaluations += 1
        out = self._evaluate(np.asarray(z, dtype=float))
        if len(self.cache) > 4096:
            self.cache.clear()
        self.cache[key] = out
        return out

    def _evaluate(self, z):
        s_ins = self.points.at(z[0], z[1])
        s = s_ins.copy()
        s[3:] -= z[2:5]
        hit = self.earth.find(s, self.max_tof)
        if hit is None:
            return None
        t_p, s_p = hit
        per = common.perigee_summary(self.system, s_p)
        return {"cost": per["dv"] + float(np.linalg.norm(z[2:5])), "perigee": per, "s_p": s_p, "t_p": t_p,
                "s_ins": s_ins, "flyby": None}

    def fun(self, z):
        e = self.evaluate(z)
        return 10.0 if e is None else e["cost"]

    def eq(self, z):
        e = self.evaluate(z)
        n = 1 if self.inc is None else 2
        if e is None:
            return np.full(n, 1.0)
        out = [(e["perigee"]["radius"] - self.r_park) * 10.0]
        if self.inc is not None:
            out.append(math.radians(e["perigee"]["inclination_deg"]) - self.inc)
        return np.array(out)


def _guesses(pb):
    """Two-body first guesses over the torus grid: (cost LU/TU, a, b, dv_insertion), cheapest first."""
    s = pb.system
    rows = []
    for i in range(GUESS_A):
        for j in range(GUESS_B):
            a, b = i / GUESS_A, j / GUESS_B
            st = pb.points.at(a, b)
            for d in dep.GUESS_TOF_DAYS:
                tof = d / s.days(1.0)
                if tof > pb.max_tof:
                    continue
                try:
                    dv1, v2, rel = common.lambert_arrival(s, pb.r_park, st[:3], tof, pb.inc)
                except (InputError, NoSolutionError):
                    continue
                dv_ins = st[3:] - (v2 - np.array([-rel[1], rel[0], 0.0]))
                rows.append((dv1 + float(np.linalg.norm(dv_ins)), a, b, dv_ins))
    rows.sort(key=lambda r: r[0])
    return rows


def _apart(r, seen):
    """A guess at least 1.5 grid cells from every chosen one (on the torus, both angles wrap)."""
    for a, b in seen:
        da, db = abs(r[1] - a), abs(r[2] - b)
        if min(da, 1 - da) * GUESS_A < 1.5 and min(db, 1 - db) * GUESS_B < 1.5:
            return False
    return True


def _repair(pb, z):
    """Newton steps on the constraints alone, the insertion phase held (as the orbit design's)."""
    return common.newton(pb, z, lambda p, zz: None if p.evaluate(zz) is None else p.eq(zz), range(2, 5),
                       tol=dep.CONSTRAINT_TOL, max_step=0.2)


def design_torus_departure(torus, altitude_km: float = 200.0, *, path: str = "direct",
                           inclination_deg: float | None = None, min_flyby_altitude_km: float = 100.0,
                           max_tof_days: float | None = None, guesses: int | None = None):
    """The least-Δv departure found from a circular Earth parking orbit to ``torus``, direct or past
    the Moon, the insertion point free over both torus angles (module notes).

    Parameters
    ----------
    torus : cr3bp.tori.Torus
        A torus of the Earth–Moon system.
    altitude_km : float
        Parking-orbit altitude (100 to 50 000 km).
    path : {"direct", "lunar-flyby"}
        ``"lunar-flyby"``: the periodic-orbit flyby design of :mod:`cr3bp.transfers.departure`
        (a scan of lunar periapsis states, two coasts joined at the flyby, SLSQP with analytic
        gradients) with the torus's two angles as the insertion unknowns.
    inclination_deg : float, optional
        Inclination of the parking orbit to the Moon's orbit plane (free when None).
    min_flyby_altitude_km : float
        Least altitude of the lunar periapsis (flyby path; above 0 to 20 000 km).
    max_tof_days : float, optional
        Longest time of flight, departure to insertion (1 to 400 d; default, as to a periodic
        orbit, :data:`cr3bp.transfers.departure.MAX_TOF_DAYS`, or
        :data:`cr3bp.transfers.departure.FLYBY_MAX_TOF_DAYS` on the flyby path).
    guesses : int, optional
        First guesses optimised (default :data:`cr3bp.transfers.departure.GUESSES_OPTIMISED`).

    Returns
    -------
    cr3bp.transfers.departure.Departure
        Path ``path``; ``orbit`` is the torus, ``insertion_phase`` is ``theta0 / 2 pi``,
        ``details["torus_phase_deg"]`` is ``[theta0, theta1]`` in degrees; all values CR3BP.

    Raises
    ------
    InputError
        Not the Earth–Moon system, or a value out of range.
    NoSolutionError
        No first guess, or none met the constraints.
    ConvergenceError
        The design does not close when propagated forward.

    Examples
    --------
    Skipped under doctest (the optimisation takes a minute):

    >>> from cr3bp import system
    >>> from cr3bp.tori import request
    >>> t = request.solve(system("earth-moon"), "quasi-halo around halo L1 north az=10000km amplitude=300km")  # doctest: +SKIP
    >>> d = design_torus_departure(t, 200.0)                     # doctest: +SKIP
    >>> d.maneuvers[-1]["name"], len(d.details["torus_phase_deg"])   # doctest: +SKIP
    ('insertion', 2)

    Refused before any work (a hand-made circle stands in for a torus):

    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> from cr3bp.tori.torus import example_torus
    >>> t = example_torus()                 # hand-made, not solved
    >>> from cr3bp.tori.departure import design_torus_departure
    >>> design_torus_departure(t, 5.0)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: parking altitude (km) '5.0' is outside the allowed range [100, 50000]

    References
    ----------
    Izzo, "Revisiting Lambert's problem", 2015 (first guess); Kraft, DLR-FB 88-28, 1988
    (SLSQP); Vallado 2013, §6.3 (tangential departure burn); Olikara & Scheeres, AAS 12-361,
    2012, §II (the torus function).
    """
    system = torus.system
    system.require_dimensional("a departure from a parking orbit")
    names = [n.lower() for n in system.names]
    if names[0] != "earth" or names[1] != "moon":
        raise InputError(f"departures from a parking orbit need the earth-moon system, not {system.name}")
    altitude_km = validate.number_in("parking altitude (km)", altitude_km, 100.0, 50_000.0)
    if inclination_deg is not None:
        inclination_deg = validate.number_in("inclination (deg)", inclination_deg, 0.0, 180.0)
    if max_tof_days is None:
        max_tof_days = dep.FLYBY_MAX_TOF_DAYS if path == "lunar-flyby" else dep.MAX_TOF_DAYS
    max_tof_days = validate.number_in("maximum time of flight (d)", max_tof_days, 1.0, 400.0)
    if path not in dep.PATHS:
        raise InputError(f"path '{path}' to a torus; allowed: {', '.join(dep.PATHS)}")
    if path == "lunar-flyby":
        min_flyby_altitude_km = validate.number_in("minimum flyby altitude (km)", min_flyby_altitude_km,
                                                   0.0, 20_000.0, open_lo=True)
    t_start = time.perf_counter()
    pb = _TorusProblem(torus, altitude_km, inclination_deg, max_tof_days / system.days(1.0), path,
                       min_flyby_altitude_km if path == "lunar-flyby" else None)
    if path == "lunar-flyby":
        return _flyby(torus, pb, altitude_km, inclination_deg, min_flyby_altitude_km, max_tof_days, guesses)
    guesses = dep.GUESSES_OPTIMISED if guesses is None else int(guesses)
    rows = _guesses(pb)
    if not rows:
        raise NoSolutionError("no two-body first guess: no Lambert arc reaches the torus within "
                              f"{max_tof_days:g} days")
    chosen, seen = [], []
    for r in rows:
        if _apart(r, seen):
            chosen.append(r)
            seen.append((r[1], r[2]))
        if len(chosen) >= guesses:
            break
    cons = [{"type": "eq", "fun": pb.eq}]
    best, tried = None, []
    for cost0, a, b, dv in chosen:
        z0 = _repair(pb, np.concatenate([[a, b], dv]))
        if z0 is None:
            tried.append({"phase": [a, b], "guess_cost_mps": float(system.mps(cost0)), "result": "no perigee"})
            continue
        res = minimize(pb.fun, z0, method="SLSQP", constraints=cons, options={"maxiter": dep.MAX_ITER, "ftol": 1e-12})
        z, e = res.x, pb.evaluate(res.x)
        ok = e is not None and bool(np.all(np.abs(pb.eq(z)) < dep.CONSTRAINT_TOL * 10.0))
        if e is not None and not ok:
            z1 = _repair(pb, z)
            if z1 is not None:
                z, e = z1, pb.evaluate(z1)
                ok = bool(np.all(np.abs(pb.eq(z1)) < dep.CONSTRAINT_TOL * 10.0))
        tried.append({"phase": [a, b], "guess_cost_mps": float(system.mps(cost0)),
                      "result_mps": None if e is None else float(system.mps(e["cost"])),
                      "feasible": ok, "iterations": int(res.nit), "message": str(res.message)})
        if ok and (best is None or e["cost"] < best[1]["cost"]):
            best = (z, e, bool(res.success))
    if best is None:
        raise NoSolutionError(f"no direct departure to the torus met the constraints (parking altitude "
                              f"{altitude_km:g} km) from {len(chosen)} first guess(es)")
    z, e, success = best
    return _build(pb, z, e, success, {
        "evaluations": pb.evaluations, "seconds": time.perf_counter() - t_start,
        "constraint_residuals": np.abs(pb.eq(z)).tolist(), "guesses": tried,
        "torus_phase_deg": [math.degrees(2 * math.pi * (z[0] % 1.0)), math.degrees(2 * math.pi * (z[1] % 1.0))],
        "method": "backward shooting from the insertion point, SLSQP over both torus angles of the "
                  "insertion point and the insertion impulse; first guess from two-body Lambert arcs"})


def base_orbit(torus):
    """The periodic orbit ``torus`` was grown from (its state and period, from ``torus.around``), or
    None when it has none (a Lissajous torus, a hand-made one).

    Parameters
    ----------
    torus : cr3bp.tori.Torus

    Returns
    -------
    types.SimpleNamespace or None
        ``system``, ``state``, ``period``, ``family``, ``point``, ``branch``: enough for
        :func:`cr3bp.transfers.departure.design_flyby`.

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.tori.torus import example_torus
    >>> base_orbit(example_torus()) is None
    True

    References
    ----------
    Olikara & Scheeres, AAS 12-361, 2012, §III (a torus grown from a periodic orbit's centre
    eigenpair, its base orbit).
    """
    around = torus.around or {}
    if around.get("state") is None or not around.get("period"):
        return None
    return types.SimpleNamespace(system=torus.system, state=np.array(around["state"], dtype=float),
                                 period=float(around["period"]), family=around.get("family", ""),
                                 point=around.get("point", ""), branch=around.get("branch", ""))


def _flyby(torus, pb, altitude_km, inclination_deg, min_flyby_altitude_km, max_tof_days, guesses):
    """The lunar-flyby departure to ``torus`` (module notes, "The flyby path to a torus")."""
    kw = {"inclination_deg": inclination_deg, "min_flyby_altitude_km": min_flyby_altitude_km,
          "max_tof_days": max_tof_days, "guesses": guesses}
    base = base_orbit(torus)
    starts, base_mps = [], None
    if base is not None:
        try:
            b = dep.design_flyby(base, altitude_km, **kw)
        except NoSolutionError:
            b = None
        if b is not None:
            base_mps = float(b.dv_mps)
            x = np.asarray(b.details["shooting_unknowns"], dtype=float)
            starts = [np.concatenate([x, [k / FLYBY_CIRCLE_STARTS]]) for k in range(FLYBY_CIRCLE_STARTS)]
    d = dep.design_flyby(torus, altitude_km, points=pb.points, starts=starts, **kw)
    d.details["torus_phase_deg"] = [math.degrees(2 * math.pi * p) for p in d.details["insertion_phases"]]
    d.details["base_orbit_dv_mps"] = base_mps
    return d


def _build(pb, z, e, success, details):
    """The Departure of the unknowns ``z`` (the orbit design's build with the impulse at z[2:5])."""
    s = pb.system
    tof = -e["t_p"]
    per, s_p = e["perigee"], e["s_p"]
    rel, vin = common.relative(s, s_p, 0)
    s_before = s_p.copy()
    s_before[3:] = per["speed_circular"] * vin / np.linalg.norm(vin) - np.array([-rel[1], rel[0], 0.0])
    sb = e["s_ins"].copy()
    sb[3:] -= z[2:5]
    man = ({"name": "departure", "t": 0.0, "position": s_p[:3].copy(), "dv_vector": s_p[3:] - s_before[3:],
            "state_before": s_before},
           {"name": "insertion", "t": tof, "position": e["s_ins"][:3].copy(),
            "dv_vector": np.array(z[2:5], dtype=float), "state_before": sb})
    d = dep.Departure(s, pb.orbit, "direct", float(s.km(pb.r_park) - s.primary.radius_km), man, float(tof),
                      float(z[0] % 1.0), per, None, success, details)
    miss = dep.closure_km(d)
    d.details["closure_km"] = miss
    if miss > dep.CLOSURE_TOL_KM:
        raise ConvergenceError(f"the departure to the torus misses its insertion point by {miss:.3g} km when "
                               f"propagated forward (tolerance {dep.CLOSURE_TOL_KM:g} km)", 0, [miss], z)
    return d


__all__ = ["TorusPoints", "base_orbit", "design_torus_departure"]
