"""Families of periodic orbits grown from their recipes.

Each family's recipe is one row of :data:`cr3bp.orbits.recipes.RECIPES` (points, branches,
seed, symmetry, held component, orientation, steps, routes); the functions here read the row
and never ask which family it is. In short:

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
from dataclasses import replace

import numpy as np

from ..errors import ConvergenceError, InputError, NoSolutionError
from . import continuation, recipes, seeds, shooting
from ._collinear import collinear_point, point_name
from ..integrate import propagate

#: The family words (the rows of :data:`cr3bp.orbits.recipes.RECIPES`, one per word of
#: :data:`cr3bp.vocabulary.FAMILIES`; tests/test_orbit_recipes.py checks they agree).
FAMILIES = recipes.FAMILIES
#: Largest relative departure of a resonant member's rotating-frame period from ``2 pi q`` (the
#: time in which the p:q resonance closes): members beyond it are not on the resonance and end
#: the family. Measured along Jupiter-Europa 3:4 (tests/test_against_kepler_resonances.py): the
#: period stays within 0.3 % of 2 pi q while the orbit passes more than 60 000 km from Europa and
#: departs by 2 to 3 % at the closest approaches above Europa's surface, where the flyby itself
#: takes part of the period.
RESONANCE_TOL = 0.03
#: Branch words of the families that have branches.
BRANCHES = {r.name: r.branches for r in recipes.RECIPES.values() if r.branches}


def check_family(family: str, point: str | None, branch: str | None):
    """Clean a family word, its Lagrange point and its branch against the family's recipe.

    Parameters
    ----------
    family : str
        Family word (case and surrounding blanks ignored), one of :data:`FAMILIES`.
    point : str or None
        Lagrange point (``"L1"``), required by families that have one and refused by the others.
    branch : str or None
        Branch word (``"north"``), required by families that have branches and refused by the
        others.

    Returns
    -------
    tuple of str
        ``(family, point, branch)`` cleaned; ``""`` where the family has no point or branch.

    Raises
    ------
    InputError
        Naming the word that is not allowed and what is.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics*
       32, 1984 (the northern and southern halo branches).

    Examples
    --------
    >>> from cr3bp.orbits.families import check_family
    >>> check_family(" Halo ", "l2", "South")
    ('halo', 'L2', 'south')
    >>> check_family("dro", None, None)
    ('dro', '', '')
    """
    f = str(family).strip().lower()
    if f not in recipes.RECIPES:
        raise InputError(f"unknown family '{family}'; allowed: {', '.join(FAMILIES)}")
    rec = recipes.RECIPES[f]
    if rec.points:
        if point is None:
            raise InputError(f"the {f} family needs a collinear point: L1, L2 or L3")
        point = point_name(point)
        if point not in rec.points:
            raise InputError(f"{f} families are offered at {' and '.join(rec.points)} only")
    else:
        if point:
            raise InputError(f"the {f} family has no Lagrange point; leave out the point '{point}'")
        point = ""
    if rec.branches:
        b = (branch or "").strip().lower()
        if not b:
            raise InputError(f"the {f} family needs a branch: {' or '.join(rec.branches)}")
        if b not in rec.branches:
            raise InputError(f"{f} branch '{branch}' is not allowed; use {' or '.join(rec.branches)}")
        branch = b
    else:
        if branch:
            raise InputError(f"the {f} family has no north/south branch; leave out '{branch}'")
        branch = ""
    return f, point, branch


def kind_of(family: str) -> str:
    """Symmetry type the corrector uses for ``family`` (its recipe's ``symmetry``).

    Parameters
    ----------
    family : str
        A family word of :data:`FAMILIES`.

    Returns
    -------
    str
        ``"xz"``, ``"xz-planar"`` or ``"x-axis"`` (see :mod:`cr3bp.orbits.shooting`).

    Raises
    ------
    KeyError
        When ``family`` has no recipe.

    References
    ----------
    .. [1] A. E. Roy and M. W. Ovenden, "On the occurrence of commensurable mean motions in the
       solar system: the mirror theorem", *Mon. Not. R. Astron. Soc.* 115, 1955 (from memory).

    Examples
    --------
    >>> from cr3bp.orbits.families import kind_of
    >>> kind_of("halo"), kind_of("vertical")
    ('xz', 'x-axis')
    """
    return recipes.RECIPES[family].symmetry


def resonance_label(p: int, q: int) -> str:
    """The label ``"p:q"`` of a resonant family.

    Parameters
    ----------
    p, q : int
        Revolutions of the spacecraft about the larger primary, and of the primaries.

    Returns
    -------
    str

    Raises
    ------
    None

    References
    ----------
    .. [1] M. Hénon, "Numerical exploration of the restricted problem. V", *Astron. Astrophys.*
       1, 1969 (from memory).

    Examples
    --------
    >>> from cr3bp.orbits.families import resonance_label
    >>> resonance_label(3, 2)
    '3:2'
    """
    return f"{p}:{q}"


def _scale(system, rec, point):
    """The recipe's length scale (see :mod:`cr3bp.orbits.recipes`)."""
    if rec.scale == "gamma":
        return collinear_point(system.mu, point).gamma
    if rec.scale == "hill":
        # sizes scale with the smaller primary's Hill radius (mu/3)^(1/3) (Szebehely 1967, §10)
        return (system.mu / 3.0) ** (1.0 / 3.0)
    return 1.0


def _point(system, rec, point):
    return collinear_point(system.mu, point) if rec.points else None


def _start_from_seed(system, rec, point, branch, resonance, eccentricity, alignment):
    """A seed corrected by single shooting with the recipe's component held."""
    scale = _scale(system, rec, point)
    sd = rec.seed(system.mu, point, rec.seed_size * scale, branch)
    tau = sd.half_period
    if rec.half_period_at is not None:
        coordinate, sense = rec.half_period_at
        tau = shooting.locate_half_period(system, sd.state, coordinate, direction=sense)
    hold = shooting.fix(rec.hold, sd.state[shooting.COMPONENTS[rec.hold]])
    o = shooting.correct(system, sd.state, tau, rec.symmetry, hold, family=rec.name, point=point,
                         branch=branch)
    return o, rec.symmetry, rec.direction(_point(system, rec, point)), rec.step * scale, rec.max_step * scale


def _start_from_branch(system, rec, point, branch, resonance, eccentricity, alignment):
    """The branch point on the parent family, pushed out of the plane (Howell 1984)."""
    scale = _scale(system, rec, point)
    bp = rec.branching
    parent = grow_family(system, bp.parent, point, stops=continuation.Stops(
        max_members=rec.parent_members, branch_points=bp.crossing))
    bif = [b for b in parent.bifurcations if b.kind == "+1" and b.which == 1]
    if len(bif) < bp.crossing:
        if bp.crossing == 1:
            raise ConvergenceError(f"the {point} {bp.parent.capitalize()} family showed no out-of-plane "
                                   f"branch point ({parent.stop_reason})")
        raise ConvergenceError(f"the {point} {bp.parent.capitalize()} family showed {len(bif)} out-of-plane "
                               f"branch points; the {rec.name} family needs the second")
    o = branch_at(system, bif[bp.crossing - 1].orbit, rec.name, point, branch)
    return o, rec.symmetry, rec.direction(_point(system, rec, point)), rec.step * scale, rec.max_step * scale


def _start_on_resonance(system, rec, point, branch, resonance, eccentricity, alignment):
    """A Kepler ellipse on the p:q resonance (:func:`seeds.resonant_encounter` or
    :func:`seeds.resonant`), corrected with x held."""
    mu = system.mu
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
        return o, rec.symmetry, (lambda t, X, s=toward: s * t[0]), rec.step, rec.max_step
    else:
        raise InputError(f"resonant alignment '{alignment}' is not allowed; use secondary or away")
    o = shooting.correct(system, sd.state, sd.half_period, sd.symmetry, shooting.fix(rec.hold, sd.state[0]),
                         family=rec.name, point="", branch=resonance_label(pp, qq))
    return o, sd.symmetry, (lambda t, X, s=toward: s * t[0]), rec.step, rec.max_step


#: How a recipe's ``start`` is carried out.
STARTS = {"seed": _start_from_seed, "branch": _start_from_branch, "resonance": _start_on_resonance}


def first_member(system, family, point="", branch="", resonance=None, eccentricity=None,
                 alignment="secondary"):
    """The first member of a family, from its recipe (:mod:`cr3bp.orbits.recipes`).

    Parameters
    ----------
    system : System
    family : str
        A family word of :data:`FAMILIES` (cleaned: see :func:`check_family`).
    point, branch : str
        Lagrange point and branch, ``""`` where the family has none.
    resonance : tuple of int, optional
        ``(p, q)`` of a resonant family.
    eccentricity : float, optional
        Seed eccentricity of a resonant family (default: see below).
    alignment : str
        Resonant families: ``"secondary"`` (default) seeds the ellipse whose apsis nearer the
        secondary's orbit points at the secondary (:func:`seeds.resonant_encounter`, default
        eccentricity half the touching one) and orients the family towards the secondary;
        ``"away"`` seeds the ellipse with its periapsis on the far side (:func:`seeds.resonant`,
        default eccentricity 0.5), oriented towards smaller eccentricity.

    Returns
    -------
    tuple
        ``(first PeriodicOrbit, symmetry kind, direction function, step, max_step)``.

    Raises
    ------
    InputError
        Unknown family, a resonant family without p:q, an unknown alignment.
    ConvergenceError, NoSolutionError
        When the seed does not correct into an orbit (or no branch point is found).

    References
    ----------
    .. [1] D. L. Richardson, "Analytic construction of periodic orbits about the collinear
       points", *Celestial Mechanics* 22, 1980 (halo seed).
    .. [2] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics*
       32, 1984 (symmetric single shooting; the branch from the planar family).
    .. [3] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §4.5 (linear seeds; from
       memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits.families import first_member
    >>> orbit, kind, direction, step, max_step = first_member(system("earth-moon"), "lyapunov", "L1")
    >>> kind, orbit.periodicity_error < 1e-10
    ('xz-planar', True)
    """
    rec = recipes.RECIPES.get(family)
    if rec is None:
        raise InputError(f"unknown family '{family}'")
    rec = rec.at_point(point)
    return STARTS[rec.start](system, rec, point, branch, resonance, eccentricity, alignment)


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
    """First member of a three-dimensional family branching from a planar orbit.

    The planar orbit at an out-of-plane +1 crossing of its family is pushed out of the plane in
    the component the family's recipe names (``z`` for halos, ``vz`` for axial orbits) and
    corrected by single shooting with the push held.

    Parameters
    ----------
    system : System
    orbit : PeriodicOrbit
        The planar orbit at the branch point.
    family : str
        The branching family (its recipe has ``branching``).
    point : str
        Lagrange point of the planar family.
    branch : str
        Branch word of families that have branches (halo: north means z > 0 at the crossing
        farther from the reference primary).
    push : float, optional
        Size of the push (nondimensional); default the recipe's.

    Returns
    -------
    PeriodicOrbit

    Raises
    ------
    InputError
        When ``family`` has no branching recipe.
    ConvergenceError
        When the pushed orbit does not correct.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics*
       32, 1984.

    Examples
    --------
    >>> from cr3bp.orbits.families import branch_at
    >>> branch_at(None, None, "dro", "")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: no branching recipe for 'dro'
    """
    rec = recipes.RECIPES.get(family)
    if rec is None or rec.branching is None:
        raise InputError(f"no branching recipe for '{family}'")
    bp = rec.branching
    s = np.array(orbit.state, dtype=float)
    meta = dict(family=family, point=point, branch=branch if rec.branches else "")
    size = push or bp.push_size * (collinear_point(system.mu, point).gamma if bp.scale == "gamma" else 1.0)
    sign = 1.0
    if rec.branches:
        # north: z > 0 at the crossing farther from the smaller primary (orbit module notes)
        far = _far_crossing_is_start(system, orbit, point)
        sign = 1.0 if (branch == rec.branches[0]) == far else -1.0
    k = shooting.COMPONENTS[bp.push]
    s[k] = sign * size
    return shooting.correct(system, s, orbit.period / 2, rec.symmetry, shooting.fix(bp.push, s[k]), **meta)


def _far_crossing_is_start(system, orbit, point):
    """True if the orbit's initial crossing is the one farther from the reference primary."""
    mu = system.mu
    ref = -mu if point == "L3" else 1 - mu
    x0 = orbit.state[0]
    # the other crossing of a symmetric orbit: x at half period
    xh = propagate(system, orbit.state, orbit.period / 2).final_state[0]
    return abs(x0 - ref) > abs(xh - ref)


def grow_family(system, family, point="", branch="", *, stops=None, method="arclength",
                parameter=None, step=None, progress=None, resonance=None, eccentricity=None,
                first=None, locate_bifurcations=True, max_step=None, alignment="secondary"):
    """Compute a named family from its recipe (:mod:`cr3bp.orbits.recipes`).

    Resonant families with ``alignment="secondary"`` are followed along the resonance towards
    the secondary (:func:`grow_resonant`).

    Parameters
    ----------
    system : System
    family, point, branch : str
        As for :func:`check_family` (resonant families: point and branch are not used).
    stops : continuation.Stops, optional
    method : str
        ``"arclength"`` or ``"natural"``.
    parameter : str, optional
        Natural-parameter continuation: x, z, vz, jacobi or period.
    step, max_step : float, optional
        First and largest step; default the recipe's.
    progress : callable(count, max, orbit), optional
    resonance : tuple of int, optional
        ``(p, q)`` of a resonant family.
    eccentricity : float, optional
        Seed eccentricity of a resonant family.
    first : tuple, optional
        A first member as returned by :func:`first_member` (skips the seeding).
    locate_bifurcations : bool
    alignment : str
        Resonant families: ``"secondary"`` or ``"away"`` (see :func:`first_member`).

    Returns
    -------
    continuation.Family

    Raises
    ------
    InputError
        A bad family, point, branch, resonance or alignment.
    ConvergenceError, NoSolutionError
        When the first member or a step fails.

    References
    ----------
    .. [1] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (pseudo-arclength continuation).
    .. [2] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import continuation, families
    >>> fam = families.grow_family(system("earth-moon"), "halo", "L1", "north",
    ...                            stops=continuation.Stops(max_members=3))
    >>> len(fam.members), fam.members[0].branch, bool(fam.members[0].state[2] > 0)
    (3, 'north', True)
    """
    rec = recipes.RECIPES.get(family)
    on_ratio = rec is not None and rec.ratio
    family, point, branch = (family, "", branch) if on_ratio else check_family(family, point, branch)
    stops = stops or continuation.Stops()
    if on_ratio and alignment == "secondary" and first is None:
        return grow_resonant(system, resonance, stops=stops, method=method, parameter=parameter,
                             step=step, progress=progress, eccentricity=eccentricity,
                             locate_bifurcations=locate_bifurcations, max_step=max_step)
    o, kind, direction, st, mx = first_member(system, family, point, branch, resonance, eccentricity,
                                              alignment) if first is None else first
    settings = {"family": family, "point": point, "branch": branch,
                "resonance": list(resonance) if resonance else None, "eccentricity": eccentricity
                if on_ratio else None}
    if on_ratio:
        settings["alignment"] = alignment
    return continuation.grow(system, o, kind, step=step or st, max_step=max_step or mx, direction=direction,
                             method=method, parameter=parameter, stops=stops, family=family,
                             point=point, branch=branch or (resonance_label(*resonance) if resonance else ""),
                             progress=progress, locate_bifurcations=locate_bifurcations,
                             settings=settings)


def resonance_band(resonance, tol=None):
    """Low and high rotating-frame period (TU) of members on the p:q resonance.

    ``2 pi q (1 -+ tol)`` (:data:`RESONANCE_TOL`).

    Parameters
    ----------
    resonance : tuple of int
        ``(p, q)``.
    tol : float, optional
        Default :data:`RESONANCE_TOL`.

    Returns
    -------
    tuple of float

    Raises
    ------
    None

    References
    ----------
    .. [1] M. Hénon, "Numerical exploration of the restricted problem. V", *Astron. Astrophys.* 1,
       1969 (periodic orbits of the planar problem lie on one-parameter families along which
       period and Jacobi constant change together; from memory).

    Examples
    --------
    >>> from cr3bp.orbits.families import resonance_band
    >>> [round(v, 4) for v in resonance_band((3, 2), tol=0.01)]
    [12.4407, 12.692]
    """
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
    within the band: the label p:q holds to :data:`RESONANCE_TOL` of the period.

    Parameters
    ----------
    system : System
    resonance : tuple of int
        ``(p, q)``.
    stops : continuation.Stops, optional
    method, parameter, step, progress, eccentricity, locate_bifurcations, max_step
        As for :func:`grow_family`.

    Returns
    -------
    continuation.Family

    Raises
    ------
    InputError
        No resonance given, or one that is not offered.
    NoSolutionError
        No Kepler guess converges onto the resonance.

    References
    ----------
    .. [1] M. Hénon, "Numerical exploration of the restricted problem. V", *Astron. Astrophys.* 1,
       1969 (periodic orbits of the planar problem lie on one-parameter families along which
       period and Jacobi constant change together; from memory).
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011 (resonant orbits and flybys).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import continuation, families
    >>> fam = families.grow_resonant(system("earth-moon"), (3, 2), stops=continuation.Stops(max_members=3))
    >>> lo, hi = families.resonance_band((3, 2))
    >>> all(lo <= m.period <= hi for m in fam.members)
    True
    """
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


#: Parent members grown, first step and largest step (units of gamma) of a family grown from
#: its branch point by :func:`branch_family`.
BRANCH_PARENT_MEMBERS = 600
BRANCH_STEP = 2e-3
BRANCH_MAX_STEP = 0.03


def branch_family(system, family, point, branch="", *, stops=None, progress=None, parent=None,
                  max_step=None):
    """Grow a three-dimensional family from its branch point on the planar parent family.

    The recipe's ``branching`` names the parent (the Lyapunov family) and which out-of-plane +1
    crossing along it the family leaves from; the first member is :func:`branch_at` there.

    Parameters
    ----------
    system : System
    family : str
        A family whose recipe has ``branching`` (halo, axial).
    point : str
        Collinear Lagrange point.
    branch : str
        Branch word (halo: north or south).
    stops : continuation.Stops, optional
    progress : callable(count, max, orbit), optional
    parent : Family, optional
        The parent family already grown (else grown to :data:`BRANCH_PARENT_MEMBERS`).
    max_step : float, optional
        Largest continuation step (nondimensional); default ``0.03 gamma``.

    Returns
    -------
    tuple
        ``(Family, Bifurcation on the parent where it branches)``.

    Raises
    ------
    InputError
        When ``family`` has no branching recipe.
    ConvergenceError
        When the parent shows too few out-of-plane branch points or a member does not correct.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics*
       32, 1984.
    .. [2] E. J. Doedel et al., "Elemental periodic orbits associated with the libration
       points in the circular restricted 3-body problem", *Int. J. Bifurcation and Chaos* 17,
       2007 (the axial branch; from memory).

    Examples
    --------
    >>> from cr3bp.orbits.families import branch_family
    >>> branch_family(None, "resonant", "")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: no branching recipe for 'resonant'
    """
    rec = recipes.RECIPES.get(family)
    if rec is None or rec.branching is None:
        raise InputError(f"no branching recipe for '{family}'")
    bp = rec.branching
    need = bp.crossing
    parent = parent or grow_family(system, bp.parent, point,
                                   stops=continuation.Stops(max_members=BRANCH_PARENT_MEMBERS, branch_points=need))
    bif = [b for b in parent.bifurcations if b.kind == "+1" and b.which == 1]
    if len(bif) < need:
        raise ConvergenceError(f"the {point} {bp.parent.capitalize()} family showed {len(bif)} out-of-plane "
                               "branch points")
    o = branch_at(system, bif[need - 1].orbit, family, point, branch)
    p = collinear_point(system.mu, point)
    return continuation.grow(system, o, rec.symmetry, step=BRANCH_STEP * p.gamma,
                             max_step=max_step or BRANCH_MAX_STEP * p.gamma,
                             direction=rec.direction(p), stops=stops or continuation.Stops(), family=family,
                             point=point, branch=branch if rec.branches else "", progress=progress,
                             settings={"family": family, "point": point, "branch": branch,
                                       "from": f"{bp.parent} bifurcation"}), bif[need - 1]


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
    end = propagate(system, orbit.state, orbit.period / 2, rtol=shooting.RTOL, atol=shooting.ATOL)
    return float(end.final_state[0] - orbit.state[0])


def vertical_junction(system, axial, point):
    """The orbit where the axial family meets the vertical family.

    The sign change of ``x(T/2) - x(0)`` between two consecutive axial members, solved by
    regula falsi along their secant.

    Parameters
    ----------
    system : System
    axial : continuation.Family
        The axial family.
    point : str

    Returns
    -------
    orbit : PeriodicOrbit
    index : int
        Member index before it.
    tangent : ndarray
        Axial secant there.

    Raises
    ------
    ConvergenceError
        When the axial family does not reach a vertical orbit.

    References
    ----------
    .. [1] E. J. Doedel et al., "Elemental periodic orbits associated with the libration points in
       the circular restricted 3-body problem", *Int. J. Bifurcation and Chaos* 17, 2007 (the axial
       family joins the Lyapunov and vertical families; from memory).

    Examples
    --------
    Growing the axial and vertical families takes minutes, so this example is not run here
    (tests/test_orbits_branching.py runs it)::

        >>> axial, _ = families.branch_family(em, "axial", "L1")  # doctest: +SKIP
        >>> orbit, k, t = families.vertical_junction(em, axial, "L1")  # doctest: +SKIP
    """
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
    """The vertical family grown from its branch point with the axial family.

    The axial family itself is branched from the Lyapunov family.

    Parameters
    ----------
    system : System
    point : str
        ``"L1"`` or ``"L2"``.
    stops : continuation.Stops, optional
    progress : callable, optional
    axial : continuation.Family, optional
        The axial family already grown.
    max_step : float, optional

    Returns
    -------
    family : continuation.Family
        Vertical family grown towards the Lagrange point.
    junction : PeriodicOrbit

    Raises
    ------
    InputError
        A bad point.
    ConvergenceError
        When the junction or the branch switch fails.

    References
    ----------
    .. [1] E. J. Doedel et al., "Elemental periodic orbits associated with the libration points in
       the circular restricted 3-body problem", *Int. J. Bifurcation and Chaos* 17, 2007 (the axial
       family joins the Lyapunov and vertical families; from memory).
    .. [2] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (pseudo-arclength continuation).

    Examples
    --------
    Growing the axial and vertical families takes minutes, so this example is not run here
    (tests/test_orbits_branching.py runs it)::

        >>> fam, junction = families.vertical_by_branching(em, "L1")  # doctest: +SKIP
    """
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
    """The axial family branched from the vertical family at its first +1 crossing.

    The vertical family is grown from its linear seed; the axial family is grown towards the
    Lyapunov family (for L1 x decreases, for L2 x increases: towards the crossing farther from
    the Moon).

    Parameters
    ----------
    system : System
    point : str
        ``"L1"`` or ``"L2"``.
    stops : continuation.Stops, optional
    progress : callable, optional
    vertical : continuation.Family, optional
        The vertical family already grown (to its first branch point).
    max_step : float, optional

    Returns
    -------
    family : continuation.Family
    bifurcation : continuation.Bifurcation
        Where it leaves the vertical family.

    Raises
    ------
    InputError
        A bad point.
    ConvergenceError
        When the vertical family shows no +1 crossing, or the branch switch fails.

    References
    ----------
    .. [1] E. J. Doedel et al., "Elemental periodic orbits associated with the libration points in
       the circular restricted 3-body problem", *Int. J. Bifurcation and Chaos* 17, 2007 (the axial
       family joins the Lyapunov and vertical families; from memory).
    .. [2] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (pseudo-arclength continuation).

    Examples
    --------
    Growing the axial and vertical families takes minutes, so this example is not run here
    (tests/test_orbits_branching.py runs it)::

        >>> fam, bif = families.axial_from_vertical(em, "L1")  # doctest: +SKIP
    """
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


#: how each family is reached by default, and the other route offered (from the recipes)
ROUTES = recipes.routes_offered()


def _by_growing(system, family, point, branch, stops, progress, max_step):
    return grow_family(system, family, point, branch, stops=stops, progress=progress, max_step=max_step)


def _by_lyapunov_branch(system, family, point, branch, stops, progress, max_step):
    return branch_family(system, family, point, branch, stops=stops, progress=progress, max_step=max_step)[0]


def _by_axial_junction(system, family, point, branch, stops, progress, max_step):
    return vertical_by_branching(system, point, stops=stops, progress=progress, max_step=max_step)[0]


def _by_vertical_branch(system, family, point, branch, stops, progress, max_step):
    return axial_from_vertical(system, point, stops=stops, progress=progress, max_step=max_step)[0]


#: The ways a recipe's ``routes`` name, and the function that carries each out.
WAYS = {"grow": _by_growing, "lyapunov branch point": _by_lyapunov_branch,
        "axial junction": _by_axial_junction, "vertical branch point": _by_vertical_branch}


def grow_by_route(system, family, point, branch="", route=None, *, stops=None, progress=None, max_step=None):
    """Grow a family by the route asked for (the recipe's ``routes``; default the first).

    ``seed`` (halo: Richardson's seed; vertical: the linear seed; axial: the vertical family's
    branch point, itself from the linear vertical seed) or ``branch`` (halo and axial: the
    Lyapunov family's first / second out-of-plane branch point; vertical: the junction of the
    axial family branched from the Lyapunov family). The two routes reach the same orbits
    (tests/test_orbits_branching.py and test_against_published_orbits.py check members at
    equal Jacobi constant or z to 1e-9).

    Parameters
    ----------
    system : System
    family, point, branch : str
        As for :func:`check_family`.
    route : str, optional
        ``"seed"`` or ``"branch"``, where the family's recipe offers it.
    stops : continuation.Stops, optional
    progress : callable(count, max, orbit), optional
    max_step : float, optional
        Largest continuation step (nondimensional).

    Returns
    -------
    Family

    Raises
    ------
    InputError
        A bad family, point or branch, or a route the family does not offer.
    ConvergenceError
        When a member or a branch point is not found.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics*
       32, 1984.
    .. [2] E. J. Doedel et al., "Elemental periodic orbits associated with the libration
       points in the circular restricted 3-body problem", *Int. J. Bifurcation and Chaos* 17,
       2007 (from memory).

    Examples
    --------
    >>> from cr3bp.orbits.families import grow_by_route
    >>> grow_by_route(None, "halo", "L3", "north", route="seed")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: route 'seed' is not offered for the halo L3 family; allowed: branch
    """
    family, point, branch = check_family(family, point, branch)
    ways = dict(recipes.RECIPES[family].at_point(point).routes)
    allowed = tuple(ways)
    route = allowed[0] if route is None else str(route).strip().lower()
    if route not in allowed:
        raise InputError(f"route '{route}' is not offered for the {family} {point} family; allowed: "
                         f"{', '.join(allowed)}")
    return WAYS[ways[route]](system, family, point, branch, stops, progress, max_step)
