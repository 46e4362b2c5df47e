"""Direct departures from a circular Earth parking orbit to a quasi-periodic torus (Earth–Moon),
the insertion point free over both torus angles.

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

Torus states at any phase come from ``PHASE_SAMPLES`` copies of the invariance circle carried
along the stroboscopic time (one batch propagation); a state is the Fourier interpolant of the
nearest earlier copy, propagated over the remainder (at most ``T / PHASE_SAMPLES``).
"""

from __future__ import annotations

import math
import time

import numpy as np
from scipy.optimize import minimize

from .. import validate
from ..errors import ConvergenceError, InputError, NoSolutionError
from ..integrate import propagate, propagate_batch
from ..transfers import departure as dep
from . import circle, solver

#: Copies of the invariance circle along the stroboscopic time (state look-up).
PHASE_SAMPLES = 32
#: First-guess grid over the torus: stroboscopic phases times circle angles.
GUESS_A, GUESS_B = 16, 8


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

    def __init__(self, torus, altitude_km, inclination_deg, max_tof):
        s = torus.system
        self.system, self.orbit, self.path = s, torus, "direct"
        self.points = TorusPoints(torus)
        self.r_park = (s.primary.radius_km + altitude_km) / s.length_km
        self.inc = None if inclination_deg is None else math.radians(inclination_deg)
        self.r_fb = None
        self.max_tof = max_tof
        r_e, r_m = s.radii
        self.earth = dep._Periapsis(s, 0, dep.EARTH_WITHIN, (0.2 * r_e, r_m))
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
        per = dep._perigee_summary(self.system, s_p)
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
                    dv1, v2, rel = dep._lambert_arrival(s, pb.r_park, st[:3], tof, pb.inc)
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
    return dep._newton(pb, z, lambda p, zz: None if p.evaluate(zz) is None else p.eq(zz), range(2, 5),
                       tol=dep.CONSTRAINT_TOL, max_step=0.2)


def design_torus_departure(torus, altitude_km: float = 200.0, *, inclination_deg: float | None = None,
                           max_tof_days: float = 150.0, guesses: int | None = None):
    """The least-Δv direct departure found from a circular Earth parking orbit to ``torus``, the
    insertion point free over both torus angles (module notes).

    Parameters
    ----------
    torus : cr3bp.tori.Torus
        A torus of the Earth–Moon system.
    altitude_km : float
        Parking-orbit altitude (100 to 50 000 km).
    inclination_deg : float, optional
        Inclination of the parking orbit to the Moon's orbit plane (free when None).
    max_tof_days : float
        Longest time of flight, departure to insertion (1 to 400 d).
    guesses : int, optional
        First guesses optimised (default :data:`cr3bp.transfers.departure.GUESSES_OPTIMISED`).

    Returns
    -------
    cr3bp.transfers.departure.Departure
        Path ``"direct"``; ``orbit`` is the torus, ``insertion_phase`` is ``theta0 / 2 pi``,
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
    max_tof_days = validate.number_in("maximum time of flight (d)", max_tof_days, 1.0, 400.0)
    t_start = time.perf_counter()
    pb = _TorusProblem(torus, altitude_km, inclination_deg, max_tof_days / system.days(1.0))
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


def _build(pb, z, e, success, details):
    """The Departure of the unknowns ``z`` (the orbit design's build with the impulse at z[2:5])."""
    s = pb.system
    tof = -e["t_p"]
    per, s_p = e["perigee"], e["s_p"]
    rel, vin = dep._relative(s, s_p, 0)
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


__all__ = ["TorusPoints", "design_torus_departure"]
