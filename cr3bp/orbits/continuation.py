"""Continuation of families of symmetric periodic orbits, bifurcation detection, and solving
for a member with a given property.

* Pseudo-arclength continuation (Keller, "Numerical solution of bifurcation and nonlinear
  eigenvalue problems", in *Applications of Bifurcation Theory*, 1977; as applied to halo
  families by Doedel et al., "Elemental periodic orbits associated with the libration points
  in the circular restricted 3-body problem", *Int. J. Bifurcation and Chaos* 17, 2007):
  predictor ``X + ds t`` along the unit null vector ``t`` of the half-period Jacobian, corrector
  Newton on the half-period conditions plus ``(X - X_k) . t = ds``.
* Natural-parameter continuation: step one held quantity (``x``, ``z``, ``vz``, ``jacobi`` or
  ``period``) and correct with it held fixed.
* Adaptive step: grow by ``GROW`` after a quick convergence, shrink by ``SHRINK`` after a slow
  one, halve on failure (common practice).
* Bifurcations: a stability index crossing +1 or -1, or the two indices meeting and leaving the
  real axis (complex quadruple), between consecutive members (Broucke 1969; Howell 1984 for
  the halo branch at the Lyapunov family), located by the Illinois variant of regula falsi
  on the arclength (Dowell & Jarratt, *BIT* 11, 1971).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..display import Shown
from .. import validate
from ..errors import ConvergenceError, InputError, NoSolutionError
from . import shooting, stability
from .orbit import PeriodicOrbit
from .. import dynamics

GROW = 1.5
SHRINK = 0.6
MIN_STEP = 1e-7
#: corrector iterations at or below which the step grows / above which it shrinks
FAST, SLOW = 3, 6
#: a member smaller than this (LU) is the Lagrange point itself: where a family shrinks to the
#: point, the half-period conditions also hold at rest for any T/2, and a long step can land on
#: that line of equilibria (seen on the Earth-Moon L1 vertical family with --max-step 0.045)
DEGENERATE_LU = 1e-8
#: least cosine between consecutive tangents. Along a family resolved by the steps the tangent
#: turns by a few degrees per step (cosine > 0.99 measured along the Earth-Moon axial and
#: vertical families); a long step across a branch point can land on the crossing family, and
#: the tangent then turns by the angle between the two (~88 degrees at the axial-vertical
#: junction). Such a step is refused and halved (step control by the angle between successive
#: tangents: Allgower & Georg, *Numerical Continuation Methods*, 1990, ch. 6, from memory).
MIN_TANGENT_COSINE = 0.5
#: A stability index can cross +1 or -1 twice within one step (the Earth–Moon L2 southern halo
#: family touches -1 twice near 12 d, 0.04 d of period apart) and no sign change shows it.
#: When the parabola through the last three members' distances to the level dips through it
#: between the last two, the step is refused and halved, down to this arclength; the two
#: crossings then fall between consecutive members and are located as any other.
PAIR_STEP_FLOOR = 1e-3
#: A member that passes below a primary's surface (or the altitude asked for) or leaves a bound
#: ends the family, but only once the step that reached it is below this arclength: longer
#: steps are halved first, so the family ends near its true limit whatever the step size was
#: there (without this the L2 southern halo family ended at 6.11 d or at 5.96 d depending on
#: the steps before, losing a -1 crossing at 5.97 d).
LIMIT_STEP_FLOOR = 1e-3


@dataclass(frozen=True)
class Stops:
    """When a family stops growing.

    Parameters
    ----------
    max_members : int
        Member count (including the first).
    altitude_km : float or None
        Stop when a member passes lower than this above a primary's surface (None: at the
        surface, i.e. altitude 0).
    bounds : dict
        quantity -> (low, high); quantities as in :func:`quantity`.
    target : tuple or None
        ``(quantity, value)``: stop when a member with that value is bracketed; solve it exactly.
    detect_closure : bool
        Stop when the family returns to its first member.
    branch_points : int or None
        Stop once this many "+1" crossings of index ``which=1`` (the out-of-plane index of a
        planar family) have been located.

    References
    ----------
    .. [1] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (pseudo-arclength continuation,
       branch switching).

    Examples
    --------
    >>> from cr3bp.orbits.continuation import Stops
    >>> Stops(max_members=50).detect_closure
    True
    """

    max_members: int = 200
    altitude_km: float | None = None
    bounds: dict = field(default_factory=dict)
    target: tuple | None = None
    detect_closure: bool = True
    branch_points: int | None = None


@dataclass(frozen=True)
class Bifurcation:
    """A located change of stability along a family.

    Parameters
    ----------
    kind : str
        ``"+1"`` (an index crosses +1: branch point or fold; a new family may branch here),
        ``"-1"`` (period doubling), ``"complex"`` (indices collide and leave the real axis).
    index : int
        Member index just before the crossing.
    which : int
        Which stability index as the continuation tracked it (0 = in-plane, 1 = out-of-plane for
        planar families); the table's name of the crossing index (nu1 = larger |nu|, nu2) is
        ``to_dict()["stability_index"]`` (:func:`table_index`).
    orbit : PeriodicOrbit
        The orbit at the crossing, solved on the family.
    note : str

    References
    ----------
    .. [2] E. J. Doedel et al., "Elemental periodic orbits associated with the libration points in
       the circular restricted 3-body problem", *Int. J. Bifurcation and Chaos* 17, 2007 (families,
       bifurcations and branch switching; from memory).
    .. [3] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (families of symmetric orbits and their stability).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import continuation, families
    >>> em = system("earth-moon")
    >>> fam = families.grow_family(em, "lyapunov", "L1", stops=continuation.Stops(max_members=3))
    >>> fam.bifurcations
    ()
    """

    kind: str
    index: int
    which: int
    orbit: PeriodicOrbit
    note: str = ""

    def to_dict(self) -> dict:
        o = self.orbit
        name = None if self.kind == "complex" else f"nu{table_index(o, self.kind) + 1}"
        return {"type": self.kind, "member_index": self.index, "which_index": self.which,
                "stability_index": name,
                "jacobi": o.jacobi, "period": o.period, "period_days": _num(o.period_days),
                "state": [float(v) for v in o.state], "amplitude_km": o.to_dict()["amplitude_km"],
                "note": self.note}


@dataclass(frozen=True, repr=False)
class Family(Shown):
    """A computed family: members in order, located bifurcations, why it stopped.

    Parameters
    ----------
    system : System
    family, point, branch : str
    kind : str
        Symmetry type.
    members : tuple of PeriodicOrbit
    bifurcations : tuple of Bifurcation
    stop_reason : str
    settings : dict
        What grew it (recipe, family, point, ...).
    target : PeriodicOrbit or None
        The member solved at ``Stops.target``.

    References
    ----------
    .. [1] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (pseudo-arclength continuation,
       branch switching).
    .. [2] E. J. Doedel et al., "Elemental periodic orbits associated with the libration points in
       the circular restricted 3-body problem", *Int. J. Bifurcation and Chaos* 17, 2007 (families,
       bifurcations and branch switching; from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import continuation, families
    >>> em = system("earth-moon")
    >>> fam = families.grow_family(em, "lyapunov", "L1", stops=continuation.Stops(max_members=3))
    >>> len(fam.members), fam.kind
    (3, 'xz-planar')
    """

    system: object
    family: str
    point: str
    branch: str
    kind: str
    members: tuple
    bifurcations: tuple
    stop_reason: str
    settings: dict = field(default_factory=dict)
    target: PeriodicOrbit | None = None

    def to_dict(self) -> dict:
        return {"system": self.system.name, "family": self.family, "point": self.point,
                "branch": self.branch, "symmetry": self.kind, "stop_reason": self.stop_reason,
                "settings": self.settings,
                "members": [dict(m.to_dict(), index=i) for i, m in enumerate(self.members)],
                "bifurcations": [b.to_dict() for b in self.bifurcations],
                "target": self.target.to_dict() if self.target is not None else None}


def _num(v):
    return float(v) if math.isfinite(v) else None


def _norm(v) -> float:
    """Euclidean norm of a small 1-D array (the same value as np.linalg.norm, less overhead)."""
    return math.sqrt(float(v @ v))


QUANTITIES = ("jacobi", "period", "x", "z", "vz", "ax", "ay", "az", "approach1", "approach2",
              "nu1", "nu2", "nu_in", "nu_out")


def quantity(orbit: PeriodicOrbit, name: str) -> float:
    """A scalar of an orbit by name (nondimensional).

    jacobi, period (TU), x/z/vz of the initial state, ax/ay/az amplitudes (LU),
    approach1/approach2 (closest approach to the larger/smaller primary, LU), nu1/nu2
    (stability indices, real part) or nu_in/nu_out (planar orbits).

    Parameters
    ----------
    orbit : PeriodicOrbit
    name : str
        One of :data:`QUANTITIES`.

    Returns
    -------
    float

    Raises
    ------
    InputError
        Unknown name.

    References
    ----------
    .. [3] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (families of symmetric orbits and their stability).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import continuation, families
    >>> em = system("earth-moon")
    >>> fam = families.grow_family(em, "lyapunov", "L1", stops=continuation.Stops(max_members=3))
    >>> continuation.quantity(fam.members[0], "jacobi") == fam.members[0].jacobi
    True
    """
    if name == "jacobi":
        return orbit.jacobi
    if name == "period":
        return orbit.period
    if name in ("x", "z", "vz"):
        return float(orbit.state[shooting.COMPONENTS[name]])
    if name in ("ax", "ay", "az"):
        return float(orbit.amplitude_lu["xyz".index(name[1])])
    if name in ("approach1", "approach2"):
        return float(orbit.closest_approach_lu[int(name[-1]) - 1])
    if name in ("nu1", "nu2"):
        return float(complex(orbit.stability_indices[int(name[-1]) - 1]).real)
    if name in ("nu_in", "nu_out"):
        return stability.planar_indices(orbit.monodromy)[0 if name == "nu_in" else 1]
    raise InputError(f"unknown quantity '{name}'; allowed: {', '.join(QUANTITIES)}")


# ---- one step -----------------------------------------------------------------------------

def _X(orbit: PeriodicOrbit, sym) -> np.ndarray:
    return shooting.pack(sym, orbit.state, orbit.period / 2.0)


def _solve_at(system, sym, X_ref, t, ds, meta, check=True):
    """Member at arclength ``ds`` from ``X_ref`` along ``t``: (orbit, X, tangent, iterations)."""
    Xp = X_ref + ds * t
    X, it, hist, (arc, D) = shooting.newton(system, sym, Xp, shooting.arclength(X_ref, t, ds))
    tn = shooting.null_tangent(D)
    if float(tn @ t) < 0:
        tn = -tn
    orbit = shooting.finish(system, sym, X, it, hist, **meta, check=check, half_stm=arc.stm)
    return orbit, X, tn, it, _norm(X - Xp)


def _solve_natural(system, sym, X_ref, t, ds, param, meta):
    if param in ("x", "z", "vz"):
        j = sym.free.index(shooting.COMPONENTS[param])
        if abs(t[j]) < 1e-12:
            raise ConvergenceError(f"natural parameter {param} is stationary here (a fold); use arclength")
        Xp = X_ref + ds * t / t[j]
        c = shooting.fix(param, X_ref[j] + ds)
    elif param == "period":
        Xp = X_ref + ds * t / (2 * t[-1])
        c = shooting.hold_period(2 * X_ref[-1] + ds)
    elif param == "jacobi":
        s0, _ = shooting.unpack(sym, X_ref)
        _, row = shooting._extra_row(system, sym, shooting.hold_jacobi(0.0), X_ref)
        dcdt = float(np.dot(row, t))
        if abs(dcdt) < 1e-12:
            raise ConvergenceError("the Jacobi constant is stationary here (a fold); use arclength")
        Xp = X_ref + ds * t / dcdt
        c = shooting.hold_jacobi(dynamics.jacobi(system.mu, s0) + ds)
    else:
        raise InputError(f"natural parameter '{param}' is not allowed; use x, z, vz, jacobi or period")
    X, it, hist, (arc, D) = shooting.newton(system, sym, Xp, c)
    tn = shooting.null_tangent(D)
    if np.dot(tn, t) < 0:
        tn = -tn
    orbit = shooting.finish(system, sym, X, it, hist, **meta, half_stm=arc.stm)
    return orbit, X, tn, it, float(np.linalg.norm(X - Xp))


def solve_between(system, sym, orbit_a, X_a, t_a, ds_b, g, g_a, g_b, meta, tol=1e-11, max_eval=40,
                  check=True):
    """Orbit where ``g(orbit) = 0`` between arclength 0 and ``ds_b`` along ``t_a``.

    Illinois regula falsi on the arclength (Dowell & Jarratt 1971). ``check=False`` (used to
    locate branch points) accepts a solution whose full-period error exceeds the periodicity
    tolerance: next to a branch point the half-period Jacobian is nearly singular, Newton stalls
    a little higher, and a strongly unstable orbit (largest multiplier ~250 for the vertical L1
    branch point) then closes only to ~5e-10. The orbit keeps its measured
    ``periodicity_error``; the members of the branching family are checked in full.

    Parameters
    ----------
    system : System
    sym : Symmetry
    orbit_a : PeriodicOrbit or None
        Unused (kept for callers).
    X_a : ndarray
        Unknowns at arclength 0.
    t_a : ndarray
        Unit tangent.
    ds_b : float
        Arclength of the other end of the bracket.
    g : callable(PeriodicOrbit) -> float
    g_a, g_b : float
        Values of ``g`` at the two ends (of opposite sign).
    meta : dict
        family, point, branch labels.
    tol : float
    max_eval : int
    check : bool

    Returns
    -------
    PeriodicOrbit

    Raises
    ------
    ConvergenceError
        When the bracket does not close within ``max_eval`` evaluations.

    References
    ----------
    .. [1] M. Dowell and P. Jarratt, "A modified regula falsi method for computing the root of an
       equation", *BIT* 11, 1971 (the Illinois variant; from memory).
    .. [2] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (pseudo-arclength continuation,
       branch switching).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import continuation, families
    >>> em = system("earth-moon")
    >>> fam = families.grow_family(em, "lyapunov", "L1", stops=continuation.Stops(max_members=3))
    >>> from cr3bp.orbits import shooting
    >>> sym = shooting.symmetry("xz-planar")
    >>> a, b = fam.members[0], fam.members[1]
    >>> Xa, Xb = continuation._X(a, sym), continuation._X(b, sym)
    >>> L = float(((Xb - Xa) ** 2).sum() ** 0.5)
    >>> mid = 0.5 * (a.jacobi + b.jacobi)
    >>> o = continuation.solve_between(em, sym, a, Xa, (Xb - Xa) / L, L, lambda o: o.jacobi - mid,
    ...                                a.jacobi - mid, b.jacobi - mid, {})
    >>> abs(o.jacobi - mid) < 1e-10
    True
    """
    lo, hi, glo, ghi = 0.0, float(ds_b), float(g_a), float(g_b)
    side = 0
    best = None
    for _ in range(max_eval):
        ds = (lo * ghi - hi * glo) / (ghi - glo) if ghi != glo else 0.5 * (lo + hi)
        if not (min(lo, hi) < ds < max(lo, hi)):
            ds = 0.5 * (lo + hi)
        orbit, _, _, _, _ = _solve_at(system, sym, X_a, t_a, ds, meta, check=check)
        gv = float(g(orbit))
        best = orbit
        if abs(gv) < tol or abs(hi - lo) < 1e-13:
            return orbit
        if (gv > 0) == (ghi > 0):
            hi, ghi = ds, gv
            if side == 1:
                glo *= 0.5
            side = 1
        else:
            lo, glo = ds, gv
            if side == -1:
                ghi *= 0.5
            side = -1
    if best is not None and abs(float(g(best))) < 1e3 * tol:
        return best
    raise ConvergenceError("could not solve for the requested member between two family members")


# ---- index tracking -------------------------------------------------------------------------

def _indices(orbit, planar):
    if planar:
        return tuple(complex(v) for v in stability.planar_indices(orbit.monodromy))
    return tuple(complex(v) for v in stability.stability_indices(orbit.monodromy))


def _match(prev, new):
    """Order ``new`` like ``prev`` (continuity of the two indices)."""
    a = abs(prev[0] - new[0]) + abs(prev[1] - new[1])
    b = abs(prev[0] - new[1]) + abs(prev[1] - new[0])
    return new if a <= b else (new[1], new[0])


def _disc(orbit):
    m = orbit.monodromy
    p = np.trace(m) - 2.0
    q = 0.5 * (p * p - (np.trace(m @ m) + 2.0))
    return float(p * p - 4.0 * q)


def _hidden_pair(nus3, h1, h2):
    """True when a stability index may cross +1 or -1 twice between the last two of three
    consecutive members (indices ``nus3``, arclength spacings ``h1``, ``h2``): all three on
    one side of the level, the middle nearest, and the parabola through them reaching the
    other side at a vertex between the last two."""
    for j in (0, 1):
        vals = [n[j] for n in nus3]
        if any(abs(v.imag) > 0 for v in vals):
            continue
        for level in (1.0, -1.0):
            da, db, dc = (v.real - level for v in vals)
            if da * db <= 0 or db * dc <= 0 or not (abs(db) < abs(da) and abs(db) < abs(dc)):
                continue
            # f(s) = db + p s + q s^2 with f(-h1) = da, f(h2) = dc
            det = h1 * h2 * (h1 + h2)
            if det == 0.0:
                continue
            p = ((dc - db) * h1 * h1 - (da - db) * h2 * h2) / det
            q = ((da - db) * h2 + (dc - db) * h1) / det
            if q == 0.0:
                continue
            vertex = -p / (2.0 * q)
            if 0.0 < vertex < h2 and (db - p * p / (4.0 * q)) * db < 0:
                return True
    return False


def _crossings(prev_nu, new_nu, prev_orbit, new_orbit, discs=None):
    """Stability changes between two consecutive members: [(kind, which index)].
    ``discs``: their :func:`_disc` values when already known (the loop keeps them)."""
    out = []
    cp, cn = discs if discs is not None else (_disc(prev_orbit), _disc(new_orbit))
    if (cp >= 0) != (cn >= 0):
        out.append(("complex", -1))
    for j in (0, 1):
        a, b = prev_nu[j], new_nu[j]
        if abs(a.imag) > 0 or abs(b.imag) > 0:
            continue
        for level, kind in ((1.0, "+1"), (-1.0, "-1")):
            if (a.real - level) * (b.real - level) < 0:
                out.append((kind, j))
    return out


# ---- the loop -------------------------------------------------------------------------------

def grow(system, first: PeriodicOrbit, kind, *, step=1e-3, max_step=0.05, direction=None,
         method="arclength", parameter=None, stops: Stops = Stops(), family="", point="",
         branch="", progress=None, locate_bifurcations=True, planar=None, settings=None) -> Family:
    """Continue a family from its first member.

    Parameters
    ----------
    system : System
    first : PeriodicOrbit
        Converged first member.
    kind : str
        Symmetry type of the family (``"xz"``, ``"xz-planar"``, ``"x-axis"``).
    step, max_step : float
        Initial and largest step (arclength in the unknowns (free state, T/2), or the natural
        parameter's units).
    direction : callable(tangent, X) -> float, optional
        Its sign orients the first step (positive is forward); default: keep the sign that
        increases the first free component.
    method : str
        ``"arclength"`` or ``"natural"`` (then give ``parameter``: x, z, vz, jacobi, period).
    parameter : str, optional
    stops : Stops
    family, point, branch : str
        Labels of the members.
    progress : callable(count, max_members, orbit), optional
        Called after each member (numerics never print).
    locate_bifurcations : bool
    planar : bool, optional
        Track the in-plane and out-of-plane indices separately (default: ``kind == "xz-planar"``).
    settings : dict, optional
        Stored with the family.

    Returns
    -------
    Family
        Members, bifurcations, stop_reason, target if one was asked for.

    Raises
    ------
    InputError
        Unknown method, or natural continuation without a parameter.
    ConvergenceError
        When the first step cannot be taken.

    References
    ----------
    .. [1] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (pseudo-arclength continuation,
       branch switching).
    .. [2] E. J. Doedel et al., "Elemental periodic orbits associated with the libration points in
       the circular restricted 3-body problem", *Int. J. Bifurcation and Chaos* 17, 2007 (families,
       bifurcations and branch switching; from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import continuation, seeds, shooting
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> first = shooting.correct(em, sd.state, sd.half_period, sd.symmetry)
    >>> fam = continuation.grow(em, first, "xz-planar", stops=continuation.Stops(max_members=3))
    >>> len(fam.members), fam.stop_reason
    (3, 'reached 3 members')
    """
    sym = shooting.symmetry(kind)
    if method not in ("arclength", "natural"):
        raise InputError(f"continuation method '{method}' is not allowed; use arclength or natural")
    if method == "natural" and parameter is None:
        raise InputError("natural-parameter continuation needs a parameter (x, z, vz, jacobi or period)")
    meta = dict(family=family, point=point, branch=branch)
    planar = (kind == "xz-planar") if planar is None else planar
    X = _X(first, sym)
    D = shooting.jacobian(system, sym, X)
    t = shooting.null_tangent(D)
    sgn = direction(t, X) if direction is not None else t[0]
    if sgn < 0:
        t = -t
    members = [first]
    Xs = [X]
    ts = [t]
    nus = [_indices(first, planar)]
    disc_prev = _disc(first) if locate_bifurcations else 0.0
    bifs = []
    target = None
    ds = float(step)
    reason = f"reached {stops.max_members} members"
    radii = system.radii
    alt = 0.0 if stops.altitude_km is None else stops.altitude_km / system.length_km if system.dimensional else 0.0
    g_target = None
    if stops.target is not None:
        qname, qval = stops.target
        g_target = lambda o: quantity(o, qname) - qval  # noqa: E731
    while len(members) < stops.max_members:
        try:
            if method == "arclength":
                orbit, Xn, tn, it, jump = _solve_at(system, sym, X, t, ds, meta)
            else:
                orbit, Xn, tn, it, jump = _solve_natural(system, sym, X, t, ds, parameter, meta)
            if method == "arclength" and jump > max(0.5 * abs(ds), 1e-5):
                raise ConvergenceError("corrector jumped too far from the predictor")
            if max(orbit.amplitude_lu) < DEGENERATE_LU:
                raise ConvergenceError("corrector fell onto the equilibrium point (an orbit of zero size)")
            if np.dot(tn, t) < MIN_TANGENT_COSINE:
                raise ConvergenceError("the tangent turned by more than 60 degrees in one step (a switch "
                                       "onto a crossing family)")
        except (ConvergenceError, InputError) as e:
            ds *= 0.5
            if abs(ds) < MIN_STEP:
                reason = f"step fell below {MIN_STEP:g} ({e})"
                break
            continue
        # stop: passes within a primary (or the given altitude above it)
        hit = None
        if any(r > 0 for r in radii):
            for k, (d, r) in enumerate(zip(orbit.closest_approach_lu, radii)):
                if r > 0 and d < r + alt:
                    hit = k
        if hit is not None and abs(ds) > LIMIT_STEP_FLOOR:
            ds *= 0.5
            continue
        if hit is not None:
            name = system.names[hit]
            what = "its surface" if stops.altitude_km is None else f"{stops.altitude_km:g} km altitude"
            reason = f"next member passes below {what} of {name}"
            break
        prev = members[-1]
        nu = _match(nus[-1], _indices(orbit, planar))
        if locate_bifurcations and len(nus) >= 2 and abs(ds) > PAIR_STEP_FLOOR and \
                _hidden_pair((nus[-2], nus[-1], nu), _norm(Xs[-1] - Xs[-2]), _norm(Xn - Xs[-1])):
            ds *= 0.5
            continue
        if locate_bifurcations:
            disc_new = _disc(orbit)
            for kind_b, j in _crossings(nus[-1], nu, prev, orbit, (disc_prev, disc_new)):
                if kind_b == "complex":
                    g = _disc
                else:
                    level = 1.0 if kind_b == "+1" else -1.0
                    g = lambda o, j=j, level=level: _match(nus[-1], _indices(o, planar))[j].real - level  # noqa: E731
                try:
                    bo = solve_between(system, sym, prev, X, t, ds, g, g(prev), g(orbit), meta,
                                       check=False)
                    bifs.append(Bifurcation(kind_b, len(members) - 1, j, bo, _bif_note(kind_b, j, planar, bo)))
                except ConvergenceError:
                    bifs.append(Bifurcation(kind_b, len(members) - 1, j, orbit,
                                            _bif_note(kind_b, j, planar, orbit) + " (not located; next member)"))
        if stops.branch_points is not None and \
                sum(1 for b in bifs if b.kind == "+1" and b.which == 1) >= stops.branch_points:
            members.append(orbit)
            reason = f"located {stops.branch_points} out-of-plane branch point(s)"
            break
        if g_target is not None:
            ga, gb = g_target(prev), g_target(orbit)
            if ga == 0:
                target = prev
            elif ga * gb <= 0:
                target = orbit if gb == 0 else solve_between(system, sym, prev, X, t, ds, g_target, ga, gb, meta)
            if target is not None:
                members.append(orbit)
                reason = f"target {stops.target[0]} = {stops.target[1]:.12g} reached"
                break
        out = None
        for qn, (lo, hi) in stops.bounds.items():
            v = quantity(orbit, qn)
            if (lo is not None and v < lo) or (hi is not None and v > hi):
                out = qn
        if out is not None and abs(ds) > LIMIT_STEP_FLOOR:
            ds *= 0.5
            continue
        if out is not None:
            reason = f"next member leaves the bound on {out}"
            break
        members.append(orbit)
        Xs.append(Xn)
        ts.append(tn)
        nus.append(nu)
        if locate_bifurcations:
            disc_prev = disc_new
        if progress is not None:
            progress(len(members), stops.max_members, orbit)
        if stops.detect_closure and len(members) > 10 and _norm(Xn - Xs[0]) < 0.5 * abs(ds) \
                and float(tn @ ts[0]) > 0:
            reason = "the family closed (returned to its first member)"
            break
        X, t = Xn, tn
        if it <= FAST:
            ds = math.copysign(min(abs(ds) * GROW, max_step), ds)
        elif it > SLOW:
            ds *= SHRINK
    settings = dict(settings or {})
    settings.update({"step": step, "max_step": max_step, "method": method, "parameter": parameter,
                     "max_members": stops.max_members, "altitude_km": stops.altitude_km})
    return Family(system, family, point, branch, sym.name if kind != "xz-planar" else "xz-planar",
                  tuple(members), tuple(bifs), reason, settings, target)


def table_index(orbit, kind) -> int:
    """Which of the member's indices sits at the level of a ``"+1"`` or ``"-1"`` crossing.

    0: nu1, the larger |nu|; 1: nu2 (the numbering of
    :attr:`PeriodicOrbit.stability_indices`, the family table and the stability plot).

    Parameters
    ----------
    orbit : PeriodicOrbit
    kind : str
        ``"+1"`` or ``"-1"``.

    Returns
    -------
    int

    Raises
    ------
    None

    References
    ----------
    .. [3] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (families of symmetric orbits and their stability).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import continuation, families
    >>> em = system("earth-moon")
    >>> fam = families.grow_family(em, "lyapunov", "L1", stops=continuation.Stops(max_members=3))
    >>> continuation.table_index(fam.members[0], "+1")
    1
    """
    level = 1.0 if kind == "+1" else -1.0
    nus = [complex(v).real for v in stability.stability_indices(orbit.monodromy)]
    return int(np.argmin([abs(v - level) for v in nus]))


def _bif_note(kind, j, planar, orbit=None):
    """The note of a bifurcation, naming the index as the table does (nu1 / nu2)."""
    if kind == "complex":
        return "stability indices nu1 and nu2 collide and leave the real axis (complex quadruple)"
    k = table_index(orbit, kind) if orbit is not None else j
    which = f"nu{k + 1}" + ((" (in-plane)" if j == 0 else " (out-of-plane)") if planar else "")
    if kind == "+1":
        return f"stability index {which} crosses +1: branch point or fold"
    return f"stability index {which} crosses -1: period doubling"


def member_value(member, qname: str) -> float:
    """:func:`quantity` of a PeriodicOrbit or of a catalogued member record (dict).

    Parameters
    ----------
    member : PeriodicOrbit or dict
    qname : str

    Returns
    -------
    float

    Raises
    ------
    InputError
        A quantity not stored with catalogued members.

    References
    ----------
    .. [3] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (families of symmetric orbits and their stability).

    Examples
    --------
    >>> from cr3bp.orbits.continuation import member_value
    >>> member_value({"jacobi": 3.1, "period": 2.7}, "jacobi")
    3.1
    """
    if isinstance(member, PeriodicOrbit):
        return quantity(member, qname)
    m = member
    if qname in ("jacobi", "period"):
        return float(m[qname])
    if qname in ("x", "z", "vz"):
        return float(m["state"][shooting.COMPONENTS[qname]])
    if qname in ("ax", "ay", "az"):
        return float(m["amplitude_lu"][qname[1]])
    if qname in ("approach1", "approach2"):
        return float(m["approach_lu"][int(qname[-1]) - 1])
    if qname in ("nu1", "nu2"):
        return float(m["stability_indices"][int(qname[-1]) - 1])
    raise InputError(f"quantity '{qname}' is not stored with catalogued members")


def _member_X(member, sym):
    if isinstance(member, PeriodicOrbit):
        return _X(member, sym)
    return shooting.pack(sym, member["state"], float(member["period"]) / 2.0)


def value_range(members, qname):
    """Least and greatest value of a quantity over the members.

    Parameters
    ----------
    members : sequence of PeriodicOrbit or dict
    qname : str

    Returns
    -------
    tuple of float

    Raises
    ------
    InputError
        As :func:`member_value`.

    References
    ----------
    .. [3] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (families of symmetric orbits and their stability).

    Examples
    --------
    >>> from cr3bp.orbits.continuation import value_range
    >>> value_range([{"period": 2.7}, {"period": 2.9}], "period")
    (2.7, 2.9)
    """
    vals = [member_value(m, qname) for m in members]
    return min(vals), max(vals)


def target_brackets(vals, value) -> list:
    """Indices of the consecutive member pairs between which ``vals - value`` changes sign.

    One per place where the family meets the value: a member that meets it exactly is counted
    once (with the pair before it), and a family that only touches the value and turns back
    meets it once.

    Parameters
    ----------
    vals : sequence of float
    value : float

    Returns
    -------
    list of int

    Raises
    ------
    None

    References
    ----------
    .. [1] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (pseudo-arclength continuation,
       branch switching).

    Examples
    --------
    >>> from cr3bp.orbits.continuation import target_brackets
    >>> target_brackets([3.0, 3.1, 3.2, 3.1, 3.0], 3.05)
    [0, 3]
    """
    out = []
    for k in range(len(vals) - 1):
        ga, gb = vals[k] - value, vals[k + 1] - value
        if ga * gb > 0:
            continue
        if ga == 0 and out and out[-1] == k - 1:
            continue
        out.append(k)
    return out


def solve_on_members(system, kind, members, qname, value, family="", point="", branch="",
                     occurrence=1):
    """The member of an already computed family where ``quantity = value``.

    ``members`` are PeriodicOrbits or catalogue records (dicts). Families are not monotone in
    every quantity (the Earth-Moon L2 halo family meets a Jacobi constant of 3.05 twice), so
    every place where the family meets the value is found (:func:`target_brackets`, in order
    from the family's start) and the ``occurrence``-th one (1-based) is solved: directly with
    the quantity held (jacobi, period, x, z, vz) or by regula falsi along the secant of the
    bracketing pair (other quantities). Only that pair is corrected, so a catalogued family is
    not recomputed. ``orbit.extra["target_matches"]`` records ``occurrence``, ``count`` and,
    per place, the member index and the period (TU) and Jacobi constant interpolated there.

    Parameters
    ----------
    system : System
    kind : str
        Symmetry type.
    members : sequence of PeriodicOrbit or dict
    qname : str
        Quantity (see :func:`quantity`).
    value : float
        Nondimensional.
    family, point, branch : str
        Labels of the orbit.
    occurrence : int

    Returns
    -------
    PeriodicOrbit

    Raises
    ------
    NoSolutionError
        When no pair brackets the value (the message gives the available range,
        nondimensional; the request layer restates it in the user's units), or when the family
        meets it fewer than ``occurrence`` times.
    ConvergenceError
        When the member does not correct.

    References
    ----------
    .. [1] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (pseudo-arclength continuation,
       branch switching).
    .. [3] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (families of symmetric orbits and their stability).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import continuation, families
    >>> em = system("earth-moon")
    >>> fam = families.grow_family(em, "lyapunov", "L1", stops=continuation.Stops(max_members=3))
    >>> c = 0.5 * (fam.members[0].jacobi + fam.members[1].jacobi)
    >>> o = continuation.solve_on_members(em, "xz-planar", fam.members, "jacobi", c)
    >>> abs(o.jacobi - c) < 1e-10, o.extra["target_matches"]["count"]
    (True, 1)
    """
    sym = shooting.symmetry(kind)
    vals = [member_value(m, qname) for m in members]
    meta = dict(family=family, point=point, branch=branch)
    places = target_brackets(vals, value)
    if not places:
        lo, hi = min(vals), max(vals)
        raise NoSolutionError(f"no member with {qname} = {value:.10g}; this family spans "
                              f"{lo:.10g} to {hi:.10g}")
    occurrence = validate.whole_number("occurrence", occurrence, 1)
    if occurrence > len(places):
        raise NoSolutionError(f"this family meets {qname} = {value:.10g} at {len(places)} "
                              f"place{'s' if len(places) > 1 else ''}; occurrence {occurrence} "
                              "does not exist")
    k = places[occurrence - 1]
    orbit = _solve_pair(system, sym, members[k], members[k + 1], vals[k] - value,
                        vals[k + 1] - value, qname, value, meta)
    matches = []
    for j in places:
        ga, gb = vals[j] - value, vals[j + 1] - value
        f = ga / (ga - gb) if ga != gb else 0.0
        at = {q: (1 - f) * member_value(members[j], q) + f * member_value(members[j + 1], q)
              for q in ("period", "jacobi")}
        matches.append({"member": int(j), "period": float(at["period"]), "jacobi": float(at["jacobi"])})
    orbit.extra["target_matches"] = {"quantity": qname, "occurrence": occurrence,
                                     "count": len(places), "places": matches}
    return orbit


def _solve_pair(system, sym, ma, mb, ga, gb, qname, value, meta):
    Xa, Xb = _member_X(ma, sym), _member_X(mb, sym)
    if qname in ("jacobi", "period", "x", "z", "vz"):
        frac = ga / (ga - gb) if ga != gb else 0.0
        Xg = Xa + frac * (Xb - Xa)
        c = {"jacobi": shooting.hold_jacobi, "period": shooting.hold_period}.get(qname)
        c = c(value) if c else shooting.fix(qname, value)
        Xs, it, hist, (arc, _) = shooting.newton(system, sym, Xg, c)
        return shooting.finish(system, sym, Xs, it, hist, **meta, half_stm=arc.stm)
    L = float(np.linalg.norm(Xb - Xa))
    t = (Xb - Xa) / L
    if ga == 0:
        Xs, it, hist, (arc, _) = shooting.newton(system, sym, Xa, shooting.arclength(Xa, t, 0.0))
        return shooting.finish(system, sym, Xs, it, hist, **meta, half_stm=arc.stm)
    g = lambda o: quantity(o, qname) - value  # noqa: E731
    return solve_between(system, sym, None, Xa, t, L, g, ga, gb, meta)


# ---- branch switching -----------------------------------------------------------------------

def branch_direction(system, kind, orbit, parent_tangent):
    """Direction of the other family through a branch point ``orbit`` (unknowns space).

    At a simple branch point the half-period Jacobian (n-1 x n) loses one rank, so its null
    space is two-dimensional: the parent family's tangent and the branch's. The branch direction
    is the unit vector of that plane (the last two right singular vectors) orthogonal to the
    parent's tangent.

    Parameters
    ----------
    system : System
    kind : str
        Symmetry type.
    orbit : PeriodicOrbit
        The orbit at the branch point.
    parent_tangent : array_like
        The parent family's tangent there.

    Returns
    -------
    direction : ndarray
        Unit vector.
    ratio : float
        Smallest singular value over the largest (near 0 at a branch point).

    Raises
    ------
    numpy.linalg.LinAlgError
        When the singular value decomposition does not converge.

    References
    ----------
    .. [1] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (pseudo-arclength continuation,
       branch switching).
    .. [2] E. J. Doedel et al., "Elemental periodic orbits associated with the libration points in
       the circular restricted 3-body problem", *Int. J. Bifurcation and Chaos* 17, 2007 (families,
       bifurcations and branch switching; from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import continuation, families
    >>> em = system("earth-moon")
    >>> fam = families.grow_family(em, "lyapunov", "L1", stops=continuation.Stops(max_members=3))
    >>> from cr3bp.orbits import shooting
    >>> sym = shooting.symmetry("xz-planar")
    >>> t = continuation._X(fam.members[1], sym) - continuation._X(fam.members[0], sym)
    >>> d, ratio = continuation.branch_direction(em, "xz-planar", fam.members[0], t)
    >>> d.shape, ratio > 1e-6        # not a branch point: the Jacobian keeps its rank
    ((3,), True)
    """
    sym = shooting.symmetry(kind)
    X = _X(orbit, sym)
    D = shooting.jacobian(system, sym, X)
    _, sv, vt = np.linalg.svd(D, full_matrices=True)
    plane = vt[-2:]
    tp = plane.T @ (plane @ np.asarray(parent_tangent, float))
    tp /= np.linalg.norm(tp)
    tb = plane[0] - np.dot(plane[0], tp) * tp
    if np.linalg.norm(tb) < 0.5:
        tb = plane[1] - np.dot(plane[1], tp) * tp
    return tb / np.linalg.norm(tb), float(sv[-1] / sv[0])


def switch_branch(system, kind, orbit, parent_tangent, ds=5e-3, meta=None):
    """First member of the family crossing the parent at branch point ``orbit``.

    Predictor ``X_bp + ds t_b`` along :func:`branch_direction`, corrector Newton with the
    pseudo-arclength condition along ``t_b``. The member's distance from the parent's tangent
    line is checked to be at least ds/4, so the corrector cannot fall back onto the parent
    family.

    Parameters
    ----------
    system : System
    kind : str
        Symmetry type.
    orbit : PeriodicOrbit
        The orbit at the branch point.
    parent_tangent : array_like
    ds : float
        Predictor step.
    meta : dict, optional
        family, point, branch labels of the new member.

    Returns
    -------
    orbit : PeriodicOrbit
    t_b : ndarray
        The branch direction, oriented along the step taken.

    Raises
    ------
    ConvergenceError
        When no step lands on the other family.

    References
    ----------
    .. [1] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (pseudo-arclength continuation,
       branch switching).
    .. [2] E. J. Doedel et al., "Elemental periodic orbits associated with the libration points in
       the circular restricted 3-body problem", *Int. J. Bifurcation and Chaos* 17, 2007 (families,
       bifurcations and branch switching; from memory).

    Examples
    --------
    The vertical family branches from the axial family (Doedel et al. 2007); growing them takes
    minutes, so this example is not run here (tests/test_orbits_branching.py runs it):

    >>> first, tb = continuation.switch_branch(em, "x-axis", junction, axial_tangent)  # doctest: +SKIP
    """
    sym = shooting.symmetry(kind)
    tb, _ = branch_direction(system, kind, orbit, parent_tangent)
    X0 = _X(orbit, sym)
    tp = np.asarray(parent_tangent, float) / np.linalg.norm(parent_tangent)
    last = None
    for step in (ds, 0.5 * ds, 2.0 * ds, 0.25 * ds):
        try:
            o, Xn, _, _, _ = _solve_at(system, sym, X0, tb, step, meta or {})
        except ConvergenceError as e:
            last = e
            continue
        d = Xn - X0
        off = np.linalg.norm(d - np.dot(d, tp) * tp)
        if off >= 0.25 * abs(step):
            return o, (tb if step > 0 else -tb)
        last = ConvergenceError(f"the corrector fell back onto the parent family (offset {off:.2e})")
    raise ConvergenceError(f"could not switch branch at the branch point ({last})")
