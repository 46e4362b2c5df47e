"""Family recipes: how each named family is seeded, oriented and grown.

======================  ==========================================  =====================
family                  first member                                symmetry
======================  ==========================================  =====================
lyapunov L1/L2/L3       linear Lyapunov seed, x held                xz-planar
halo L1/L2/L3 n/s       Richardson third-order seed, z held         xz
vertical L1/L2          linear vertical seed, vz held               x-axis
axial L1/L2             branch at the 2nd out-of-plane +1 crossing  x-axis
                        of the Lyapunov family, vz held
dro                     retrograde circle about the smaller         xz-planar
                        primary (0.1 Hill radius), x held
resonant p:q            Kepler ellipse about the larger primary,    xz-planar
                        its apsis nearer the secondary's orbit on
                        the secondary's side; x held
======================  ==========================================  =====================

Resonant families (p revolutions of the spacecraft about the larger primary in q revolutions
of the primaries; rotating-frame period ``2 pi q`` in the Kepler limit) are followed along the
resonance towards the secondary (:func:`grow_resonant`): a periodic orbit of the planar
problem lies on a one-parameter family along which period and Jacobi constant change together
(the cylinder theorem: Hénon, "Numerical exploration of the restricted problem. V",
*Astron. Astrophys.* 1, 1969, from memory), so the period cannot be held at ``2 pi q`` while the
orbit closes on the secondary; the family is kept where its period stays within
:data:`RESONANCE_TOL` of ``2 pi q`` and every member reports its measured period ratio.

Other routes (:func:`grow_by_route`): vertical orbits also from the junction of the axial family
with the vertical family (:func:`vertical_by_branching`), axial orbits also from the vertical
family's branch point (:func:`axial_from_vertical`); branch switching there uses the second null
direction of the half-period Jacobian (:func:`cr3bp.orbits.continuation.switch_branch`).

Branching at a bifurcation (:func:`branch_at`): the new family's first member is the
bifurcating orbit pushed out of the plane (``z`` for halos, ``vz`` for axial orbits) by a
small amount and corrected with that component held (Howell 1984 for the halo branch).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import ConvergenceError, InputError, NoSolutionError
from ..vocabulary import FAMILIES, HALO_BRANCHES, POINT_FAMILIES
from . import continuation, seeds, shooting
from ._collinear import collinear_point, point_name

#: Largest relative departure of a resonant member's rotating-frame period from ``2 pi q`` (the
#: time in which the p:q resonance closes): members beyond it are not on the resonance and end
#: the family. Measured along Jupiter-Europa 3:4 (tests/test_against_kepler_resonances.py): the
#: period stays within 0.3 % of 2 pi q while the orbit passes more than 60 000 km from Europa and
#: departs by 2 to 3 % at the closest approaches above Europa's surface, where the flyby itself
#: takes part of the period.
RESONANCE_TOL = 0.03
BRANCHES = {"halo": HALO_BRANCHES}


def check_family(family: str, point: str | None, branch: str | None):
    f = str(family).strip().lower()
    if f not in FAMILIES:
        raise InputError(f"unknown family '{family}'; allowed: {', '.join(FAMILIES)}")
    if f in POINT_FAMILIES:
        if point is None:
            raise InputError(f"the {f} family needs a collinear point: L1, L2 or L3")
        point = point_name(point)
        if f in ("vertical", "axial") and point == "L3":
            raise InputError(f"{f} families are offered at L1 and L2 only")
    else:
        if point:
            raise InputError(f"the {f} family has no Lagrange point; leave out the point '{point}'")
        point = ""
    if f == "halo":
        b = (branch or "").strip().lower()
        if not b:
            raise InputError("the halo family needs a branch: north or south")
        if b not in BRANCHES["halo"]:
            raise InputError(f"halo branch '{branch}' is not allowed; use north or south")
        branch = b
    else:
        if branch:
            raise InputError(f"the {f} family has no north/south branch; leave out '{branch}'")
        branch = ""
    return f, point, branch


def kind_of(family: str) -> str:
    return {"lyapunov": seeds.XZ_PLANAR, "halo": seeds.XZ, "vertical": "x-axis", "axial": "x-axis",
            "dro": seeds.XZ_PLANAR, "resonant": seeds.XZ_PLANAR}[family]


def resonance_label(p: int, q: int) -> str:
    return f"{p}:{q}"


def first_member(system, family, point="", branch="", resonance=None, eccentricity=None,
                 alignment="secondary"):
    """(first PeriodicOrbit, symmetry kind, direction function, step, max_step).

    Resonant families: ``alignment="secondary"`` (default) seeds the ellipse whose apsis nearer
    the secondary's orbit points at the secondary (:func:`seeds.resonant_encounter`, default
    eccentricity half the touching one) and orients the family towards the secondary;
    ``"away"`` seeds the ellipse with its periapsis on the far side (:func:`seeds.resonant`,
    default eccentricity 0.5), oriented towards smaller eccentricity."""
    mu = system.mu
    meta = dict(family=family, point=point, branch=branch)
    if family == "lyapunov":
        p = collinear_point(mu, point)
        sd = seeds.linear_lyapunov(mu, point, 2e-3 * p.gamma)
        o = shooting.correct(system, sd.state, sd.half_period, sd.symmetry, shooting.fix("x", sd.state[0]), **meta)
        return o, sd.symmetry, (lambda t, X, xl=p.x: t[0] * (X[0] - xl)), 1e-3 * p.gamma, 0.3 * p.gamma
    if family == "halo" and point == "L3":
        # Richardson's series is too inaccurate at L3 (the halos begin at Ax ~ 0.4 gamma, beyond
        # the expansion's reach): branch from the L3 Lyapunov family instead.
        p = collinear_point(mu, point)
        lyap = grow_family(system, "lyapunov", point, stops=continuation.Stops(max_members=400, branch_points=1))
        bif = [b for b in lyap.bifurcations if b.kind == "+1" and b.which == 1]
        if not bif:
            raise ConvergenceError(f"the L3 Lyapunov family showed no out-of-plane branch point "
                                   f"({lyap.stop_reason})")
        o = branch_at(system, bif[0].orbit, "halo", point, branch)
        return o, seeds.XZ, (lambda t, X: t[1] * X[1]), 2e-3 * p.gamma, 0.05 * p.gamma
    if family == "halo":
        p = collinear_point(mu, point)
        sd = seeds.richardson_halo(mu, point, 0.02 * p.gamma, branch)
        o = shooting.correct(system, sd.state, sd.half_period, sd.symmetry, shooting.fix("z", sd.state[2]), **meta)
        return o, sd.symmetry, (lambda t, X: t[1] * X[1]), 2e-3 * p.gamma, 0.15 * p.gamma
    if family == "vertical":
        p = collinear_point(mu, point)
        sd = seeds.linear_vertical(mu, point, 5e-3 * p.gamma)
        tau = shooting.locate_half_period(system, sd.state, "z", direction=-1)
        o = shooting.correct(system, sd.state, tau, "x-axis", shooting.fix("vz", sd.state[5]), **meta)
        return o, "x-axis", (lambda t, X: t[2] * X[2]), 2e-3 * p.gamma, 0.05 * p.gamma
    if family == "axial":
        lyap = grow_family(system, "lyapunov", point, stops=continuation.Stops(max_members=600, branch_points=2))
        bif = [b for b in lyap.bifurcations if b.kind == "+1" and b.which == 1]
        if len(bif) < 2:
            raise ConvergenceError(f"the {point} Lyapunov family showed {len(bif)} out-of-plane "
                                   "branch points; the axial family needs the second")
        o = branch_at(system, bif[1].orbit, "axial", point)
        return o, "x-axis", (lambda t, X: t[2] * X[2]), 1e-3, 0.03
    if family == "dro":
        # sizes scale with the smaller primary's Hill radius (mu/3)^(1/3) (Szebehely 1967, §10)
        rh = (mu / 3.0) ** (1.0 / 3.0)
        sd = seeds.dro(mu, 0.1 * rh)
        o = shooting.correct(system, sd.state, sd.half_period, sd.symmetry, shooting.fix("x", sd.state[0]), **meta)
        return o, sd.symmetry, (lambda t, X: t[0]), 0.0125 * rh, 0.6 * rh
    if family == "resonant":
        if resonance is None:
            raise InputError("the resonant family needs p:q, e.g. 3:2")
        pp, qq = resonance
        if alignment == "away":
            sd = seeds.resonant(mu, pp, qq, 0.5 if eccentricity is None else eccentricity)
            toward = -1.0
        elif alignment == "secondary":
            o, e0 = _resonant_first(system, pp, qq, eccentricity)
            _, e_touch, _ = seeds.resonant_geometry(mu, pp, qq)
            rate = seeds.resonant_x_rate(mu, pp, qq, e0)
            toward = rate if e0 < e_touch else -rate
            return o, seeds.XZ_PLANAR, (lambda t, X, s=toward: s * t[0]), 2e-3, 0.02
        else:
            raise InputError(f"resonant alignment '{alignment}' is not allowed; use secondary or away")
        o = shooting.correct(system, sd.state, sd.half_period, sd.symmetry, shooting.fix("x", sd.state[0]),
                             family=family, point="", branch=resonance_label(pp, qq))
        return o, sd.symmetry, (lambda t, X, s=toward: s * t[0]), 2e-3, 0.02
    raise InputError(f"unknown family '{family}'")


#: eccentricities tried for the first resonant member, as fractions of the one at which the
#: nearer apsis touches the secondary's orbit (the Kepler guess does not converge everywhere
#: when the secondary is massive: Earth-Moon 3:4 converges from 0.65 and 0.8 only)
RESONANT_SEED_FRACTIONS = (0.5, 0.35, 0.65, 0.2, 0.8, 0.1)


def _resonant_first(system, p, q, eccentricity=None):
    """(first member, its seed eccentricity): the first Kepler guess of
    :data:`RESONANT_SEED_FRACTIONS` (or the eccentricity given) that converges to an orbit whose
    period is within :func:`resonance_band`."""
    _, e_touch, _ = seeds.resonant_geometry(system.mu, p, q)
    tries = [eccentricity] if eccentricity is not None else [f * e_touch for f in RESONANT_SEED_FRACTIONS]
    band = resonance_band((p, q))
    seen = []
    for e in tries:
        sd = seeds.resonant_encounter(system.mu, p, q, e)
        try:
            o = shooting.correct(system, sd.state, sd.half_period, sd.symmetry, shooting.fix("x", sd.state[0]),
                                 family="resonant", point="", branch=resonance_label(p, q))
        except ConvergenceError:
            seen.append(f"e = {e:.3g}: no convergence")
            continue
        if band[0] <= o.period <= band[1]:
            return o, e
        seen.append(f"e = {e:.3g}: {o.period / (2 * math.pi):.4g} revolutions of the primaries")
    raise NoSolutionError(f"no {p}:{q} resonant orbit was found within {RESONANCE_TOL:.0%} of {q} revolutions "
                          f"of the primaries (mass ratio {system.mu:.6g}; Kepler guesses: {'; '.join(seen)}): "
                          "the secondary perturbs this resonance too much")


def branch_at(system, orbit, family, point, branch="north", push=None):
    """First member of a three-dimensional family branching from a planar orbit at a +1
    out-of-plane crossing: push out of the plane and correct with the push held (Howell 1984)."""
    s = np.array(orbit.state, dtype=float)
    meta = dict(family=family, point=point, branch=branch if family == "halo" else "")
    if family == "halo":
        p = collinear_point(system.mu, point)
        dz = push or 2e-3 * p.gamma
        # north: z > 0 at the crossing farther from the smaller primary (orbit module notes)
        far = _far_crossing_is_start(system, orbit, point)
        sign = 1.0 if (branch == "north") == far else -1.0
        s[2] = sign * dz
        return shooting.correct(system, s, orbit.period / 2, seeds.XZ, shooting.fix("z", s[2]), **meta)
    if family == "axial":
        dv = push or 1e-3
        s[5] = dv
        return shooting.correct(system, s, orbit.period / 2, "x-axis", shooting.fix("vz", dv), **meta)
    raise InputError(f"no branching recipe for '{family}'")


def _far_crossing_is_start(system, orbit, point):
    """True if the orbit's initial crossing is the one farther from the reference primary."""
    mu = system.mu
    ref = -mu if point == "L3" else 1 - mu
    x0 = orbit.state[0]
    # the other crossing of a symmetric orbit: x at half period
    from ..integrate import propagate
    xh = propagate(system, orbit.state, orbit.period / 2).final_state[0]
    return abs(x0 - ref) > abs(xh - ref)


def grow_family(system, family, point="", branch="", *, stops=None, method="arclength",
                parameter=None, step=None, progress=None, resonance=None, eccentricity=None,
                first=None, locate_bifurcations=True, max_step=None, alignment="secondary"):
    """Compute a named family from its recipe (see module table). Returns a Family.

    Resonant families with ``alignment="secondary"`` are followed along the resonance towards
    the secondary (:func:`grow_resonant`)."""
    family, point, branch = check_family(family, point, branch) if family != "resonant" else (family, "", branch)
    stops = stops or continuation.Stops()
    if family == "resonant" and alignment == "secondary" and first is None:
        return grow_resonant(system, resonance, stops=stops, method=method, parameter=parameter,
                             step=step, progress=progress, eccentricity=eccentricity,
                             locate_bifurcations=locate_bifurcations, max_step=max_step)
    o, kind, direction, st, mx = first_member(system, family, point, branch, resonance, eccentricity,
                                              alignment) if first is None else first
    settings = {"family": family, "point": point, "branch": branch,
                "resonance": list(resonance) if resonance else None, "eccentricity": eccentricity
                if family == "resonant" else None}
    if family == "resonant":
        settings["alignment"] = alignment
    return continuation.grow(system, o, kind, step=step or st, max_step=max_step or mx, direction=direction,
                             method=method, parameter=parameter, stops=stops, family=family,
                             point=point, branch=branch or (resonance_label(*resonance) if resonance else ""),
                             progress=progress, locate_bifurcations=locate_bifurcations,
                             settings=settings)


def resonance_band(resonance, tol=None):
    """(low, high) of the rotating-frame period (TU) of members on the p:q resonance:
    ``2 pi q (1 -+ tol)`` (:data:`RESONANCE_TOL`)."""
    tol = RESONANCE_TOL if tol is None else tol
    q = resonance[1]
    return (2 * math.pi * q * (1 - tol), 2 * math.pi * q * (1 + tol))


def grow_resonant(system, resonance, *, stops=None, method="arclength", parameter=None, step=None,
                  progress=None, eccentricity=None, locate_bifurcations=True, max_step=None):
    """The p:q resonant family followed along the resonance towards the secondary.

    1. First member: :func:`seeds.resonant_encounter` (default eccentricity half the one at
       which the nearer apsis touches the secondary's orbit), corrected with x held.
    2. Its start: the family is first followed away from the secondary (towards the circular
       orbit, where it leaves the resonance onto the near-circular family whose period changes
       with the radius) until the period leaves the band :func:`resonance_band`; the last member
       inside the band is the family's first member.
    3. From there the family is followed towards the secondary, the period held inside the band
       as a bound, until a member passes below the surface (or ``stops.altitude_km``), leaves the
       band, or another stop applies.

    Every member's ``period_ratio`` (see :class:`cr3bp.orbits.orbit.PeriodicOrbit`) then lies
    within the band: the label p:q holds to :data:`RESONANCE_TOL` of the period."""
    from dataclasses import replace
    if resonance is None:
        raise InputError("the resonant family needs p:q, e.g. 3:2")
    pp, qq = resonance
    label = resonance_label(pp, qq)
    stops = stops or continuation.Stops()
    band = resonance_band(resonance)
    o, kind, toward, st, mx = first_member(system, "resonant", resonance=resonance,
                                           eccentricity=eccentricity, alignment="secondary")
    back = continuation.grow(system, o, kind, step=st, max_step=mx,
                             direction=lambda t, X: -toward(t, X),
                             stops=continuation.Stops(max_members=400, bounds={"period": band},
                                                      detect_closure=False),
                             family="resonant", branch=label, locate_bifurcations=False)
    start = back.members[-1]
    direction = toward
    if len(back.members) > 1:
        # back again along the secant of the last two members: beyond a fold of x (where the
        # family turns onto the near-circular orbits) the sign of dx no longer says which way
        sym = shooting.symmetry(kind)
        back_secant = continuation._X(start, sym) - continuation._X(back.members[-2], sym)
        direction = lambda t, X: -float(t @ back_secant)  # noqa: E731
    bounds = dict(stops.bounds)
    bounds["period"] = band if "period" not in bounds else (
        max(band[0], bounds["period"][0] if bounds["period"][0] is not None else band[0]),
        min(band[1], bounds["period"][1] if bounds["period"][1] is not None else band[1]))
    settings = {"family": "resonant", "point": "", "branch": label, "resonance": [pp, qq],
                "eccentricity": eccentricity, "alignment": "secondary",
                "resonance_tol": RESONANCE_TOL, "period_band": list(band)}
    fam = continuation.grow(system, start, kind, step=step or st, max_step=max_step or mx,
                            direction=direction, method=method, parameter=parameter,
                            stops=replace(stops, bounds=bounds), family="resonant", point="",
                            branch=label, progress=progress, locate_bifurcations=locate_bifurcations,
                            settings=settings)
    if fam.stop_reason == "next member leaves the bound on period":
        fam = replace(fam, stop_reason=f"the next member's period departs from {qq} revolutions of the "
                                       f"primaries by more than {RESONANCE_TOL:.0%}: it leaves the "
                                       f"{label} resonance")
    return fam


def branch_family(system, family, point, branch="", *, stops=None, progress=None, parent=None,
                  max_step=None):
    """Grow a three-dimensional family from its bifurcation on the planar Lyapunov family."""
    need = {"halo": 1, "axial": 2}[family]
    parent = parent or grow_family(system, "lyapunov", point,
                                   stops=continuation.Stops(max_members=600, branch_points=need))
    bif = [b for b in parent.bifurcations if b.kind == "+1" and b.which == 1]
    if len(bif) < need:
        raise ConvergenceError(f"the {point} Lyapunov family showed {len(bif)} out-of-plane branch points")
    o = branch_at(system, bif[need - 1].orbit, family, point, branch)
    kind = seeds.XZ if family == "halo" else "x-axis"
    direction = (lambda t, X: t[1] * X[1]) if family == "halo" else (lambda t, X: t[2] * X[2])
    p = collinear_point(system.mu, point)
    return continuation.grow(system, o, kind, step=2e-3 * p.gamma, max_step=max_step or 0.03 * p.gamma,
                             direction=direction, stops=stops or continuation.Stops(), family=family,
                             point=point, branch=branch if family == "halo" else "", progress=progress,
                             settings={"family": family, "point": point, "branch": branch,
                                       "from": "lyapunov bifurcation"}), bif[need - 1]


# ---- the vertical and axial families by the other route -------------------------------------
#
# Doedel et al., "Elemental periodic orbits associated with the libration points in the circular
# restricted 3-body problem", Int. J. Bifurcation and Chaos 17 (2007) (from memory): the axial
# family connects the planar Lyapunov family (at its second out-of-plane branch point) with the
# vertical family (at a branch point of the vertical family). Along the Earth-Moon L1 and L2
# Lyapunov families computed here the out-of-plane index crosses +1 only twice (halo, axial)
# before the family nears the Moon, so the vertical family is reached from the Lyapunov family
# through the axial family, and the axial family from the vertical seed through the vertical
# family's branch point.

def _secant(family, index, sym):
    a = continuation._X(family.members[index], sym)
    b = continuation._X(family.members[index + 1], sym)
    return (b - a) / np.linalg.norm(b - a)


def _x_half_gap(system, orbit):
    """x(T/2) - x(0) of an x-axis-symmetric orbit: zero for a vertical orbit, whose half-period
    shift is the reflection z -> -z (so both axis crossings are at the same point); odd about the
    vertical orbit along the axial family, whose two arms there are mirror images (Doedel et al.
    2007, from memory)."""
    from ..integrate import propagate
    end = propagate(system, orbit.state, orbit.period / 2, rtol=shooting.RTOL, atol=shooting.ATOL)
    return float(end.final_state[0] - orbit.state[0])


def vertical_junction(system, axial, point):
    """The orbit where the axial family meets the vertical family: the sign change of
    :func:`_x_half_gap` between two consecutive axial members, solved by regula falsi along
    their secant. Returns (orbit, member index before it, axial secant there)."""
    sym = shooting.symmetry("x-axis")
    gs = [_x_half_gap(system, m) for m in axial.members]
    meta = dict(family="vertical", point=point, branch="")
    for k in range(len(gs) - 1):
        if gs[k] * gs[k + 1] < 0:
            Xa = continuation._X(axial.members[k], sym)
            t = _secant(axial, k, sym)
            L = float(np.linalg.norm(continuation._X(axial.members[k + 1], sym) - Xa))
            try:
                o = continuation.solve_between(system, sym, axial.members[k], Xa, t, L,
                                               lambda o: _x_half_gap(system, o), gs[k], gs[k + 1],
                                               meta, tol=1e-10, check=False)
            except ConvergenceError:
                # exactly at the branch point the pseudo-arclength system is singular (the null
                # space of the half-period Jacobian is two-dimensional); the secant root of the
                # gap is close enough for the branch switch, which corrects onto the other family
                f = gs[k] / (gs[k] - gs[k + 1])
                o = None
                for ff in (f, f + 0.05, f - 0.05):
                    try:
                        o = continuation._solve_at(system, sym, Xa, t, ff * L, meta, check=False)[0]
                        break
                    except ConvergenceError:
                        continue
                if o is None:
                    raise
            return o, k, t
    raise ConvergenceError(f"the {point} axial family ({len(gs)} members) did not reach a vertical orbit")


def vertical_by_branching(system, point, *, stops=None, progress=None, axial=None, max_step=None):
    """The vertical family grown from its branch point with the axial family, the axial family
    itself branched from the Lyapunov family (Doedel et al. 2007, from memory).

    Returns (vertical Family grown towards the Lagrange point, junction orbit)."""
    _, point, _ = check_family("vertical", point, None)
    if axial is None:
        axial, _ = branch_family(system, "axial", point, stops=continuation.Stops(max_members=400))
    j, _, t_axial = vertical_junction(system, axial, point)
    meta = dict(family="vertical", point=point, branch="")
    first, tb = continuation.switch_branch(system, "x-axis", j, t_axial, ds=2e-3, meta=meta)
    p = collinear_point(system.mu, point)
    # towards the Lagrange point: the out-of-plane speed at the node decreases
    fam = continuation.grow(system, first, "x-axis", step=2e-3 * p.gamma, max_step=max_step or 0.05 * p.gamma,
                            direction=lambda t, X: -t[2] * X[2], stops=stops or continuation.Stops(),
                            family="vertical", point=point, branch="", progress=progress,
                            settings={"family": "vertical", "point": point, "branch": "",
                                      "from": "axial family junction"})
    return fam, j


def axial_from_vertical(system, point, *, stops=None, progress=None, vertical=None, max_step=None):
    """The axial family branched from the vertical family (grown from its linear seed) at the
    vertical family's first out-of-plane +1 crossing (Doedel et al. 2007, from memory), grown
    towards the Lyapunov family (for L1 x decreases, for L2 x increases: towards the crossing
    farther from the Moon).

    Returns (axial Family, Bifurcation on the vertical family)."""
    _, point, _ = check_family("axial", point, None)
    if vertical is None:
        vertical = grow_family(system, "vertical", point,
                               stops=continuation.Stops(max_members=400, branch_points=1))
    bifs = [b for b in vertical.bifurcations if b.kind == "+1"]
    if not bifs:
        raise ConvergenceError(f"the {point} vertical family showed no +1 crossing ({vertical.stop_reason})")
    bif = bifs[0]
    sym = shooting.symmetry("x-axis")
    meta = dict(family="axial", point=point, branch="")
    first, tb = continuation.switch_branch(system, "x-axis", bif.orbit, _secant(vertical, bif.index, sym),
                                           ds=2e-3, meta=meta)
    outward = -1.0 if point == "L1" else 1.0
    p = collinear_point(system.mu, point)
    fam = continuation.grow(system, first, "x-axis", step=1e-3, max_step=max_step or 0.03 * p.gamma,
                            direction=lambda t, X: outward * t[0], stops=stops or continuation.Stops(),
                            family="axial", point=point, branch="", progress=progress,
                            settings={"family": "axial", "point": point, "branch": "",
                                      "from": "vertical bifurcation"})
    return fam, bif


#: how each family is reached by default, and the other route offered
ROUTES = {"halo": ("seed", "branch"), "vertical": ("seed", "branch"), "axial": ("branch", "seed")}


def grow_by_route(system, family, point, branch="", route=None, *, stops=None, progress=None, max_step=None):
    """Grow a three-dimensional family by the route asked for: ``seed`` (halo: Richardson's seed;
    vertical: the linear seed; axial: the vertical family's branch point, itself from the linear
    vertical seed) or ``branch`` (halo and axial: the Lyapunov family's first / second
    out-of-plane branch point; vertical: the junction of the axial family branched from the
    Lyapunov family). The two routes reach the same orbits (tests/test_orbits_branching.py and
    test_against_published_orbits.py check members at equal Jacobi constant or z to 1e-9)."""
    family, point, branch = check_family(family, point, branch)
    allowed = ROUTES.get(family, ("seed",))
    if family == "halo" and point == "L3":
        allowed = ("branch",)   # Richardson's series is too inaccurate at L3 (see first_member)
    route = allowed[0] if route is None else str(route).strip().lower()
    if route not in allowed:
        raise InputError(f"route '{route}' is not offered for the {family} {point} family; allowed: "
                         f"{', '.join(allowed)}")
    if family == "halo":
        if route == "seed":
            return grow_family(system, family, point, branch, stops=stops, progress=progress, max_step=max_step)
        return branch_family(system, "halo", point, branch, stops=stops, progress=progress, max_step=max_step)[0]
    if route == ROUTES[family][0]:
        return grow_family(system, family, point, branch, stops=stops, progress=progress, max_step=max_step)
    if family == "vertical":
        return vertical_by_branching(system, point, stops=stops, progress=progress, max_step=max_step)[0]
    return axial_from_vertical(system, point, stops=stops, progress=progress, max_step=max_step)[0]
