"""Connections where tubes meet on a section: heteroclinic/homoclinic connections and
orbit-to-orbit transfers. (Legs between a parking orbit and a periodic orbit:
:mod:`.parking`; transit classification: :mod:`.transit`; the time of flight to arrival:
:mod:`.arrival`; the leg type: :mod:`cr3bp.transfers.leg`.)

Methods
-------
* Connections at one energy (Koon, Lo, Marsden & Ross, *Dynamical Systems, the Three-Body
  Problem and Space Mission Design*, 2011, ch. 3 and §4.5; Gómez et al., *Nonlinearity* 17,
  2004, §4): the unstable tube of one orbit and the stable tube of another are cut by a common
  section; where the cuts cross (planar: curves in the plane of the in-section position and
  velocity; spatial: curves whose in-section positions cross) a candidate is taken and refined
  by two-segment multiple shooting: the departure phases on both orbits are the unknowns, the
  segments are the forward unstable and backward stable trajectories to the section, and
  Newton's method (finite-difference Jacobian) zeroes their mismatch there. The Δv at the
  patch point is what is left: zero to tolerance for a planar heteroclinic connection, the
  velocity mismatch after position matching for a spatial one.
* Transfers at different energies: positions matched on the section, the phase pair chosen
  to minimise the patch Δv (planar: a one-parameter family, Brent's method along it).
"""

from __future__ import annotations

import math
import dataclasses

import numpy as np
from scipy.optimize import minimize_scalar

from ..errors import ConvergenceError, InputError, NoSolutionError
from ..integrate import propagate
from ..integrate.events import COORDS
from ..transfers.leg import Leg, Maneuver, _mps
from .arrival import arrival_time
from .manifolds import RTOL, ATOL, Stop, _globalise, grow_tube, manifold_starts
from .sections import Crossings, Section, hyperplane, parse_section

#: Patch tolerance of the refinement (nondimensional, on the matched coordinates).
PATCH_TOL = 1e-10
MAX_ITER = 25


# ---- one manifold trajectory as a function of its departure time ---------------------------

class _Branch:
    """A tube's trajectories as a function of departure time on the orbit (for refinement)."""

    def __init__(self, tube, stop=None):
        if tube.orbit is None:
            raise InputError("refinement needs a tube grown from a periodic orbit")
        self.tube = tube
        self.orbit = tube.orbit
        self.sign = tube.time_sign
        self.stop = stop or tube.stop
        self.cache = {}

    def at(self, stop):
        """The same branch cut by another stop (e.g. the plane moved)."""
        return _Branch(self.tube, stop)

    def end(self, t_orbit):
        """(start state, signed tof, end state, status) of the trajectory departing at t_orbit."""
        key = float(t_orbit) % self.orbit.period
        if key in self.cache:
            return self.cache[key]
        tb = self.tube
        _, _, _, starts, _, _, _ = manifold_starts(
            self.orbit, tb.stability, tb.branch, step_km=_step_arg(tb), times=np.array([key]))
        tof, ends, status = _globalise(tb.system, starts, self.stop, self.sign)
        out = (starts[0], float(tof[0]), ends[0], status[0])
        self.cache[key] = out
        return out


def _step_arg(tube):
    return tube.step_km if math.isfinite(tube.step_km) else f"{tube.step}LU"


def match_names(section: Section, planar: bool, same_energy: bool):
    """Coordinates matched at the patch: the in-section position coordinates, plus (planar, one
    energy) the in-section velocity coordinate.

    Parameters
    ----------
    section : Section
        A position hyperplane (:func:`cr3bp.tubes.sections.parse_section`).
    planar : bool
        Planar tubes.
    same_energy : bool
        Both tubes at one energy.

    Returns
    -------
    tuple of str
        The coordinates matched.

    Raises
    ------
    InputError
        A section that is not a position hyperplane.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> em = system("earth-moon")
    >>> from cr3bp.tubes.sections import parse_section
    >>> match_names(parse_section("x=1-mu", em), True, True)
    ('y', 'vy')

    References
    ----------
    Koon, W. S., Lo, M. W., Marsden, J. E. & Ross, S. D., "Dynamical Systems, the Three-Body
    Problem and Space Mission Design", Marsden Books (2011), ch. 4 (matching on a Poincaré section).
    """
    if section.kind != "plane" or section.coordinate > 2:
        raise InputError("connections need a position hyperplane section such as x=1-mu or y=0")
    k = section.coordinate
    pos = [c for c in (0, 1, 2) if c != k and not (planar and c == 2)]
    names = ["xyz"[c] for c in pos]
    if planar and same_energy:
        names.append("v" + names[0])
    return tuple(names)


def _is_planar(tube):
    return bool(np.all(np.abs(tube.start_states[:, [2, 5]]) < 1e-12))


# ---- candidates on a common section ---------------------------------------------------------

def _polylines(cut: Crossings, names):
    """Pieces of the cut polyline between consecutive (cyclic) phases that both crossed (one
    crossing per trajectory: a tube's cut at its ``count``-th crossing, else the first)."""
    first = cut.one_each()
    order = np.argsort(first.phase)
    pts = first.coords(names)[order]
    ph = first.phase[order]
    idx = first.trajectory[order]
    n = cut.n_trajectories
    segs = []
    m = len(ph)
    for a in range(m):
        b = (a + 1) % m
        if m < 2 or (b == 0 and m < n):
            continue
        if (idx[b] - idx[a]) % n != 1:
            continue
        segs.append((pts[a], pts[b], ph[a], ph[b]))
    return segs


def _seg_intersect(p1, p2, q1, q2):
    d1, d2 = p2 - p1, q2 - q1
    den = d1[0] * d2[1] - d1[1] * d2[0]
    if den == 0:
        return None
    w = q1 - p1
    s = (w[0] * d2[1] - w[1] * d2[0]) / den
    u = (w[0] * d1[1] - w[1] * d1[0]) / den
    if 0 <= s <= 1 and 0 <= u <= 1:
        return s, u
    return None


def cut_intersections(cut_a: Crossings, cut_b: Crossings, names=("y", "vy")):
    """Crossings of two cut polylines in the 2-D map ``names``: list of (phase_a, phase_b,
    point). Phases are interpolated along the crossing segments.

    Parameters
    ----------
    cut_a, cut_b : Crossings
        Closed tube cuts.
    names : sequence of str
        The 2-D map's coordinates.

    Returns
    -------
    list of (float, float, numpy.ndarray)
        ``(phase_a, phase_b, point)`` of each crossing.

    Raises
    ------
    InputError
        A map that is not two-dimensional.

    Examples
    --------
    >>> hits = cut_intersections(cut_u, cut_s, ("y", "vy"))     # doctest: +SKIP

    References
    ----------
    Koon, W. S., Lo, M. W., Marsden, J. E. & Ross, S. D., "Dynamical Systems, the Three-Body
    Problem and Space Mission Design", Marsden Books (2011), ch. 4.
    """
    sa, sb = _polylines(cut_a, names), _polylines(cut_b, names)
    out = []
    for p1, p2, pa1, pa2 in sa:
        for q1, q2, pb1, pb2 in sb:
            r = _seg_intersect(p1, p2, q1, q2)
            if r is None:
                continue
            s, u = r
            fa = pa1 + s * ((pa2 - pa1) % 1.0)
            fb = pb1 + u * ((pb2 - pb1) % 1.0)
            out.append((fa % 1.0, fb % 1.0, p1 + s * (p2 - p1)))
    return out


# ---- refinement -------------------------------------------------------------------------------

def _coords(state, names):
    return np.array([state[COORDS[n]] for n in names])


def _refine_pair(ba: _Branch, bb: _Branch, ta, tb, names, tol=PATCH_TOL):
    """Newton on (ta, tb) so that the named coordinates of the two trajectories' section states
    agree. Returns ta, tb, end_a, end_b, residual history."""
    Ta, Tb = ba.orbit.period, bb.orbit.period
    h = 1e-7
    res = []
    x = np.array([ta, tb], dtype=float)
    for it in range(MAX_ITER):
        ea, eb = ba.end(x[0]), bb.end(x[1])
        if ea[3] != "section" or eb[3] != "section":
            raise ConvergenceError("a refined trajectory no longer reaches the section",
                                   it, res, x)
        f = _coords(ea[2], names) - _coords(eb[2], names)
        res.append(float(np.linalg.norm(f)))
        if res[-1] < tol:
            return x[0], x[1], ea, eb, res
        da = (_coords(ba.end(x[0] + h * Ta)[2], names) - _coords(ea[2], names)) / (h * Ta)
        db = (_coords(bb.end(x[1] + h * Tb)[2], names) - _coords(eb[2], names)) / (h * Tb)
        J = np.column_stack([da, -db])
        step = np.linalg.lstsq(J, -f, rcond=None)[0]
        # limit the step to a tenth of a period
        lim = 0.1 * np.array([Ta, Tb])
        scale = np.max(np.abs(step) / lim)
        if scale > 1:
            step /= scale
        x = x + step
    raise ConvergenceError(f"patch refinement did not converge in {MAX_ITER} iterations "
                           f"(residual {res[-1]:.3e})", MAX_ITER, res, x)


def _leg_from_patch(system, ea, eb, ta, tb, tube_a, tube_b, kind, method, details):
    sa, tofa, pa, _ = ea
    sb, tofb, pb, _ = eb
    dv = pb[3:6] - pa[3:6]
    dvn = float(np.linalg.norm(dv))
    man = Maneuver(float(tofa), pa[:3].copy(), dv, _mps(system, dvn))
    segs = ((0.0, sa, float(tofa)), (float(tofa), pb, float(-tofb)))
    tof = float(tofa - tofb)
    alt = _min_altitude(system, segs)
    d = dict(details)
    d.update({"phase_from": (ta / tube_a.period) % 1.0, "phase_to": (tb / tube_b.period) % 1.0,
              "t_orbit_from": ta, "t_orbit_to": tb, "patch_dv": dvn,
              "position_mismatch": float(np.linalg.norm(pb[:3] - pa[:3])),
              "step_km": tube_a.step_km, "jacobi_from": tube_a.jacobi, "jacobi_to": tube_b.jacobi})
    t_arr, d_arr = arrival_time(system, segs, tube_b.orbit) if tube_b.orbit is not None else (tof, math.nan)
    return Leg(system, tube_a.origin, tube_b.origin, (man,) if dvn > 0 else (man,), man.dv_mps,
               tof, pa.copy(), segs, method, kind, alt, d, t_arr, d_arr)


def _min_altitude(system, segs, n=400):
    if not system.dimensional:
        return math.inf
    best = math.inf
    for _, s0, dur in segs:
        if dur == 0:
            continue
        arc = propagate(system, s0, dur, t_eval=np.linspace(0, dur, n), rtol=RTOL, atol=ATOL)
        for p, body in enumerate((system.primary, system.secondary)):
            c = system.positions[p]
            r = np.linalg.norm(arc.states[:, :3] - np.array([c, 0, 0]), axis=1)
            best = min(best, float(system.km(r.min())) - body.radius_km)
    return best


def _minimise_over_plane(ba, bb, ta, tb, names, tol, section, stop, width=0.02):
    """Spatial patches: positions matched on the plane s[k] = c, then c moved (windows of
    +/- ``width`` LU, re-centred up to three times) to minimise |dv| (Brent's bounded method;
    each value re-solved by Newton from the last solution). Returns the best solution, the plane value and the dv on the
    plane first given."""
    c0 = section.value
    first = {}
    state = {"ta": ta, "tb": tb, "best": None}

    def dv_at(c):
        sec = hyperplane(section.coordinate, c, section.direction, label=section.label)
        st = dataclasses.replace(stop, section=sec)
        try:
            a, b, ea, eb, res = _refine_pair(ba.at(st), bb.at(st), state["ta"], state["tb"], names, tol)
        except ConvergenceError:
            return 1e3
        state["ta"], state["tb"] = a, b
        dv = float(np.linalg.norm(eb[2][3:6] - ea[2][3:6]))
        if state["best"] is None or dv < state["best"][0]:
            state["best"] = (dv, a, b, ea, eb, res, c)
        first.setdefault("dv", dv)
        return dv

    dv_at(c0)
    centre = c0
    for _ in range(3):  # re-centre while the minimum sits on the window's edge
        r = minimize_scalar(dv_at, bounds=(centre - width, centre + width), method="bounded",
                            options={"xatol": 1e-7})
        if min(r.x - centre + width, centre + width - r.x) > 0.02 * width:
            break
        centre = r.x
    if state["best"] is None:
        raise NoSolutionError("no position-matched patch near the given plane")
    dv, a, b, ea, eb, res, c = state["best"]
    return a, b, ea, eb, res, c, first["dv"]


def connect_tubes(tube_u, tube_s, names=None, max_candidates=5, tol=PATCH_TOL, minimise=True):
    """Connections between an unstable tube and a stable tube cut by the same section.

    Same energy: heteroclinic (or homoclinic, when both tubes belong to one orbit) connections,
    refined to zero mismatch on ``names`` (planar: in-section position and velocity; spatial:
    in-section position, leaving a velocity mismatch reported as the patch Δv, which is then
    minimised by moving the patch plane within 0.02 LU when ``minimise``). Different
    energies: :func:`transfer_tubes`.

    Returns
    -------
    list of Leg, ascending in Δv, then time of flight.

    Raises
    ------
    NoSolutionError
        The cuts do not cross (the message gives the nearest approach on the map).

    Parameters
    ----------
    tube_u, tube_s : Tube
        Unstable and stable tubes cut by the same section.
    names : sequence of str, optional
        The coordinates matched (:func:`match_names`).
    max_candidates : int, optional
        Crossings refined.
    tol : float, optional
        Mismatch tolerance.
    minimise : bool, optional
        Minimise the spatial patch Δv by moving the patch plane.

    Examples
    --------
    >>> legs = connect_tubes(tube_u, tube_s)                    # doctest: +SKIP

    References
    ----------
    Koon, W. S., Lo, M. W., Marsden, J. E. & Ross, S. D., "Dynamical Systems, the Three-Body
    Problem and Space Mission Design", Marsden Books (2011), ch. 4; Gómez, G., Koon, W. S., Lo, M. W., Marsden, J. E., Masdemont, J. & Ross,
    S. D., "Connecting orbits and invariant manifolds in the spatial restricted three-body
    problem", Nonlinearity 17, 1571 (2004).
    """
    if tube_u.stability != "unstable" or tube_s.stability != "stable":
        raise InputError("connect an unstable tube (departure) to a stable tube (arrival)")
    if tube_u.stop.section is None or tube_s.stop.section is None or \
            tube_u.stop.section.to_dict() != tube_s.stop.section.to_dict():
        raise InputError("both tubes must be grown to the same section")
    system = tube_u.system
    planar = _is_planar(tube_u) and _is_planar(tube_s)
    same = abs(tube_u.jacobi - tube_s.jacobi) < 1e-9
    if not same:
        return transfer_tubes(tube_u, tube_s, max_candidates=max_candidates)
    section = tube_u.stop.section
    names = names or match_names(section, planar, True)
    search = names if planar else names[:2]
    ca, cb = tube_u.section_cut(), tube_s.section_cut()
    if len(ca) < 2 or len(cb) < 2:
        raise NoSolutionError(f"the tubes reach the section {section.label} with {len(ca)} and "
                              f"{len(cb)} trajectories; grow more points, allow more time, pick another "
                              f"section or the other branch (now {tube_u.branch} and {tube_s.branch})")
    cands = cut_intersections(ca, cb, search)
    if not cands:
        gap = _nearest_gap(ca, cb, search)
        raise NoSolutionError(f"the cuts of the two tubes on {section.label} do not cross "
                              f"(nearest approach {gap:.3e} in {'/'.join(search)}, nondimensional)")
    zero = 1e-7  # patch dv (LU/TU) below which the patch is a true connection (0.1 mm/s Earth-Moon)
    homo = (tube_u.orbit is not None and tube_s.orbit is not None
            and abs(tube_u.period - tube_s.period) < 1e-9
            and np.allclose(tube_u.orbit.state, tube_s.orbit.state, atol=1e-9))
    kind = "homoclinic" if homo else "heteroclinic"
    ba, bb = _Branch(tube_u), _Branch(tube_s)
    legs, failures = [], []
    for fa, fb, _ in cands[: max(1, int(max_candidates))]:
        try:
            ta, tb, ea, eb, res = _refine_pair(ba, bb, fa * tube_u.period, fb * tube_s.period,
                                               names, tol)
        except ConvergenceError as e:
            failures.append(str(e))
            continue
        if any(_same_phases(ta, tb, g, tube_u.period, tube_s.period) for g in legs):
            continue  # the same connection reached from another candidate crossing
        dvn = float(np.linalg.norm(eb[2][3:6] - ea[2][3:6]))
        method = ("two-segment multiple shooting on the section, Newton in the departure phases "
                  "(matched: " + ", ".join(names) + ")")
        extra = {"residuals": res, "matched": list(names), "candidates": len(cands)}
        if not planar and minimise and dvn >= zero:
            try:
                ta, tb, ea, eb, res, value, dv0 = _minimise_over_plane(ba, bb, ta, tb, names, tol,
                                                                       section, tube_u.stop)
                method += "; patch plane moved to minimise |dv| (Brent's method)"
                extra.update({"residuals": res, "patch_plane_value": value,
                              "dv_mps_on_given_plane": _mps(system, dv0)})
                dvn = float(np.linalg.norm(eb[2][3:6] - ea[2][3:6]))
            except (ConvergenceError, NoSolutionError) as e:
                extra["minimisation"] = f"skipped: {e}"
        legs.append(_leg_from_patch(system, ea, eb, ta, tb, tube_u, tube_s,
                                    kind if dvn < zero else "transfer", method, extra))
    if not legs:
        raise ConvergenceError("no candidate connection converged: " + "; ".join(failures[:3]),
                               0, [])
    legs.sort(key=lambda g: (round(g.dv_mps, 6), g.tof))
    return legs


def _same_phases(ta, tb, leg, Ta, Tb, tol=1e-7):
    """Whether refined departure times (ta, tb) give the same connection as ``leg`` (phases
    equal to ``tol``, cyclically)."""
    def close(f, g):
        d = abs((f - g) % 1.0)
        return min(d, 1.0 - d) < tol
    return (close((ta / Ta) % 1.0, leg.details["phase_from"])
            and close((tb / Tb) % 1.0, leg.details["phase_to"]))


def _nearest_gap(ca, cb, names):
    a, b = ca.coords(names), cb.coords(names)
    d = np.linalg.norm(a[:, None, :] - b[None, :, :], axis=2)
    return float(d.min())


def transfer_tubes(tube_u, tube_s, max_candidates=5):
    """Transfers between tubes at different energies through one manoeuvre on their common
    section (planar tubes): positions matched, phases chosen to minimise |Δv| (Brent's method
    along the one-parameter family of position matches).

    Parameters
    ----------
    tube_u, tube_s : Tube
        Planar unstable and stable tubes on one section.
    max_candidates : int, optional
        Candidates refined.

    Returns
    -------
    list of Leg
        Ascending in Δv.

    Raises
    ------
    NoSolutionError
        No position match on the section.

    Examples
    --------
    >>> legs = transfer_tubes(tube_u, tube_s)                   # doctest: +SKIP

    References
    ----------
    Brent, R. P., "Algorithms for Minimization without Derivatives", Prentice-Hall (1973),
    ch. 4; Koon, W. S., Lo, M. W., Marsden, J. E. & Ross, S. D., "Dynamical Systems, the Three-Body
    Problem and Space Mission Design", Marsden Books (2011), ch. 4.
    """
    system = tube_u.system
    section = tube_u.stop.section
    planar = _is_planar(tube_u) and _is_planar(tube_s)
    if not planar:
        names = match_names(section, False, False)
        return _spatial_transfer(tube_u, tube_s, names, max_candidates)
    (pname,) = match_names(section, True, False)
    ca, cb = tube_u.section_cut().one_each(), tube_s.section_cut().one_each()
    if len(ca) < 2 or len(cb) < 2:
        raise NoSolutionError(f"the tubes reach {section.label} with {len(ca)} and {len(cb)} "
                              "trajectories; nothing to patch")
    ya = ca.coords([pname])[:, 0]
    segs_b = _polylines(tube_s.section_cut(), (pname, "v" + pname))
    # for every departure sample: the arrival points with the same position coordinate
    best = []
    for i in range(len(ca)):
        for q1, q2, pb1, pb2 in segs_b:
            lo, hi = sorted((q1[0], q2[0]))
            if not lo <= ya[i] <= hi or q1[0] == q2[0]:
                continue
            u = (ya[i] - q1[0]) / (q2[0] - q1[0])
            fb = (pb1 + u * ((pb2 - pb1) % 1.0)) % 1.0
            vb = q1[1] + u * (q2[1] - q1[1])
            dv = abs(vb - ca.states[i, COORDS["v" + pname]])
            best.append((dv, ca.phase[i], fb))
    if not best:
        raise NoSolutionError(f"the tubes' cuts on {section.label} share no {pname} range; no "
                              "position match exists there")
    # per departure sample its cheapest match; the local minima of that along the cut (cyclic
    # in phase) are the candidates, cheapest first
    per = {}
    for dv0, fa, fb in best:
        if fa not in per or dv0 < per[fa][0]:
            per[fa] = (dv0, fa, fb)
    ph = sorted(per)
    vals = [per[f][0] for f in ph]
    m = len(ph)
    minima = [per[ph[k]] for k in range(m)
              if m < 3 or (vals[k] <= vals[k - 1] and vals[k] <= vals[(k + 1) % m])]
    minima.sort()
    ba, bb = _Branch(tube_u), _Branch(tube_s)
    legs = []
    seen = []
    for dv0, fa, fb in minima + sorted(best):
        if any(abs(fa - s) < 0.02 for s in seen):
            continue
        seen.append(fa)
        try:
            leg = _min_dv_transfer(system, ba, bb, fa, fb, pname, tube_u, tube_s)
        except (ConvergenceError, NoSolutionError):
            continue
        if any(abs(leg.details["phase_from"] - g.details["phase_from"]) < 1e-6 for g in legs):
            continue  # the same local minimum reached from another start
        legs.append(leg)
        if len(legs) >= max_candidates:
            break
    if not legs:
        raise NoSolutionError("no position-matched transfer could be refined on " + section.label)
    legs.sort(key=lambda g: (g.dv_mps, g.tof))
    return legs


def _solve_b(bb, tb, target, pname, Tb):
    """Newton/secant on the arrival phase so its section position equals ``target``."""
    h = 1e-7 * Tb
    for _ in range(MAX_ITER):
        eb = bb.end(tb)
        if eb[3] != "section":
            raise ConvergenceError("arrival trajectory left the section", 0, [])
        f = eb[2][COORDS[pname]] - target
        if abs(f) < PATCH_TOL:
            return tb, eb
        d = (bb.end(tb + h)[2][COORDS[pname]] - eb[2][COORDS[pname]]) / h
        step = -f / d
        step = max(-0.05 * Tb, min(0.05 * Tb, step))
        tb += step
    raise ConvergenceError("arrival phase did not converge", MAX_ITER, [])


def _min_dv_transfer(system, ba, bb, fa, fb, pname, tube_u, tube_s):
    Ta, Tb = tube_u.period, tube_s.period
    state = {"tb": fb * Tb}

    def dv_of(ta):
        ea = ba.end(ta)
        if ea[3] != "section":
            return 1e3
        try:
            tb, eb = _solve_b(bb, state["tb"], ea[2][COORDS[pname]], pname, Tb)
        except ConvergenceError:
            return 1e3
        state["tb"] = tb
        state["last"] = (ta, tb, ea, eb)
        return float(np.linalg.norm(eb[2][3:6] - ea[2][3:6]))

    width = 0.02 * Ta
    centre = fa * Ta
    for _ in range(4):  # re-centre the window while the minimum sits on its edge
        lo, hi = centre - width, centre + width
        r = minimize_scalar(dv_of, bounds=(lo, hi), method="bounded", options={"xatol": 1e-9 * Ta})
        if min(r.x - lo, hi - r.x) > 0.02 * width:
            break
        centre = r.x
    dv = dv_of(r.x)
    if dv >= 1e3:
        raise NoSolutionError("transfer refinement left the section")
    ta, tb, ea, eb = state["last"]
    return _leg_from_patch(system, ea, eb, ta, tb, tube_u, tube_s, "transfer",
                           f"position ({pname}) matched on the section by Newton in the arrival "
                           "phase; departure phase by Brent's bounded minimisation of |dv|",
                           {"matched": [pname]})


def _spatial_transfer(tube_u, tube_s, names, max_candidates):
    ca, cb = tube_u.section_cut(), tube_s.section_cut()
    cands = cut_intersections(ca, cb, names)
    if not cands:
        raise NoSolutionError(f"the tubes' cuts do not cross in {'/'.join(names)} on "
                              f"{tube_u.stop.section.label} (nearest {_nearest_gap(ca, cb, names):.3e})")
    ba, bb = _Branch(tube_u), _Branch(tube_s)
    legs = []
    for fa, fb, _ in cands[:max_candidates]:
        try:
            ta, tb, ea, eb, res = _refine_pair(ba, bb, fa * tube_u.period, fb * tube_s.period, names)
        except ConvergenceError:
            continue
        legs.append(_leg_from_patch(tube_u.system, ea, eb, ta, tb, tube_u, tube_s, "transfer",
                                    "positions matched on the section by Newton in both phases",
                                    {"residuals": res, "matched": list(names)}))
    if not legs:
        raise NoSolutionError("no spatial transfer candidate converged")
    legs.sort(key=lambda g: (g.dv_mps, g.tof))
    return legs


def connect(orbit_a, orbit_b, section, n_points=200, *, step_km=None, t_max=2 * math.pi,
            count=1, branch_a="interior", branch_b="interior", max_candidates=5, progress=None):
    """Connect ``orbit_a`` (departure, unstable tube) to ``orbit_b`` (arrival, stable tube) on
    ``section`` (a Section or text such as ``"x=1-mu"``). Returns (legs, tube_u, tube_s).

    Raises
    ------
    NoSolutionError
        The energies are below that of the necks that must be open (``necks`` gives it), or
        the cuts do not meet.

    Parameters
    ----------
    orbit_a, orbit_b : PeriodicOrbit
        Departure and arrival orbits.
    section : Section or str
        The patch section.
    n_points, step_km, t_max, count
        Tube sampling, step-off, propagation limit, crossings kept.
    branch_a, branch_b : str, optional
        The tubes' branches.
    max_candidates : int, optional
        Crossings refined.
    progress : callable(str), optional
        Progress lines.

    Returns
    -------
    legs : list of Leg
        Ascending in Δv.
    tube_u, tube_s : Tube
        The tubes.

    Examples
    --------
    >>> legs, tu, ts = connect(lyap1, lyap2, "x=1-mu")          # doctest: +SKIP

    References
    ----------
    Koon, W. S., Lo, M. W., Marsden, J. E. & Ross, S. D., "Dynamical Systems, the Three-Body
    Problem and Space Mission Design", Marsden Books (2011), ch. 4; Koon, W. S., Lo, M. W., Marsden, J. E. & Ross, S. D., "Heteroclinic
    connections between periodic orbits and resonance transitions in celestial mechanics",
    Chaos 10, 427 (2000).
    """
    sec = section if isinstance(section, Section) else parse_section(section, orbit_a.system)
    stop = Stop(sec, count, float(t_max))
    tu = grow_tube(orbit_a, "unstable", branch_a, n_points, stop, step_km=step_km, progress=progress)
    ts = grow_tube(orbit_b, "stable", branch_b, n_points, stop, step_km=step_km, progress=progress)
    return connect_tubes(tu, ts, max_candidates=max_candidates), tu, ts
