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
                        x held
======================  ==========================================  =====================

Branching at a bifurcation (:func:`branch_at`): the new family's first member is the
bifurcating orbit pushed out of the plane (``z`` for halos, ``vz`` for axial orbits) by a
small amount and corrected with that component held (Howell 1984 for the halo branch).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import ConvergenceError, InputError
from . import continuation, seeds, shooting
from ._collinear import collinear_point, point_name

FAMILIES = ("lyapunov", "halo", "vertical", "axial", "dro", "resonant")
BRANCHES = {"halo": ("north", "south")}


def check_family(family: str, point: str | None, branch: str | None):
    f = str(family).strip().lower()
    if f not in FAMILIES:
        raise InputError(f"unknown family '{family}'; allowed: {', '.join(FAMILIES)}")
    if f in ("lyapunov", "halo", "vertical", "axial"):
        if point is None:
            raise InputError(f"the {f} family needs a collinear point: L1, L2 or L3")
        point = point_name(point)
        if f in ("vertical", "axial") and point == "L3":
            raise InputError(f"{f} families are offered at L1 and L2 only")
    else:
        point = ""
    if f == "halo":
        b = (branch or "").strip().lower()
        if b not in BRANCHES["halo"]:
            raise InputError(f"halo branch '{branch}' is not allowed; use north or south")
        branch = b
    else:
        branch = ""
    return f, point, branch


def kind_of(family: str) -> str:
    return {"lyapunov": seeds.XZ_PLANAR, "halo": seeds.XZ, "vertical": "x-axis", "axial": "x-axis",
            "dro": seeds.XZ_PLANAR, "resonant": seeds.XZ_PLANAR}[family]


def resonance_label(p: int, q: int) -> str:
    return f"{p}:{q}"


def first_member(system, family, point="", branch="", resonance=None, eccentricity=0.5):
    """(first PeriodicOrbit, symmetry kind, direction function, step, max_step)."""
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
        sd = seeds.resonant(mu, pp, qq, eccentricity)
        o = shooting.correct(system, sd.state, sd.half_period, sd.symmetry, shooting.fix("x", sd.state[0]),
                             family=family, point="", branch=resonance_label(pp, qq))
        return o, sd.symmetry, (lambda t, X: -t[0]), 2e-3, 0.02
    raise InputError(f"unknown family '{family}'")


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
                parameter=None, step=None, progress=None, resonance=None, eccentricity=0.5,
                first=None, locate_bifurcations=True, max_step=None):
    """Compute a named family from its recipe (see module table). Returns a Family."""
    family, point, branch = check_family(family, point, branch) if family != "resonant" else (family, "", branch)
    stops = stops or continuation.Stops()
    o, kind, direction, st, mx = first_member(system, family, point, branch, resonance, eccentricity) \
        if first is None else first
    settings = {"family": family, "point": point, "branch": branch,
                "resonance": list(resonance) if resonance else None, "eccentricity": eccentricity
                if family == "resonant" else None}
    return continuation.grow(system, o, kind, step=step or st, max_step=max_step or mx, direction=direction,
                             method=method, parameter=parameter, stops=stops, family=family,
                             point=point, branch=branch or (resonance_label(*resonance) if resonance else ""),
                             progress=progress, locate_bifurcations=locate_bifurcations,
                             settings=settings)


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
