"""The families of periodic orbits as a table of recipes: one row per family.

A row says everything the orbit code needs to know about a family: which Lagrange points and
branches it has, how its first member is reached (a seed corrected by single shooting, a branch
point on a parent family, or a Kepler ellipse on a resonance), which symmetry the corrector uses
and which component it holds, how the family is oriented and stepped during continuation, the
routes offered to reach it, and the targets a request may pick a member by. The code in
:mod:`cr3bp.orbits.families`, :mod:`cr3bp.orbits.shooting` and :mod:`cr3bp.orbits.request`
reads the row and never asks which family it is: adding a family is adding a row (and, when its
first member needs a new kind of start, one function in :mod:`cr3bp.orbits.families`).

This module holds data and the small seed adapters only; it imports :mod:`cr3bp.orbits.seeds`
and nothing that corrects or integrates, so the corrector can read the table without an
import circle.

Sizes are nondimensional multiples of a scale (``Recipe.scale``): ``"gamma"`` is the distance
from the collinear point to its nearest primary, ``"hill"`` the smaller primary's Hill radius
``(mu/3)^(1/3)`` (Szebehely 1967, Theory of Orbits, §10; from memory) and ``"one"`` the
distance between the primaries.

References
----------
.. [1] V. Szebehely, *Theory of Orbits: The Restricted Problem of Three Bodies*, Academic
   Press, 1967 (linear Lyapunov and vertical orbits, §4.5; from memory).
.. [2] D. L. Richardson, "Analytic construction of periodic orbits about the collinear
   points", *Celestial Mechanics* 22, 1980 (third-order halo seed).
.. [3] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
   1984 (halo branch from the planar Lyapunov family).
.. [4] E. J. Doedel et al., "Elemental periodic orbits associated with the libration points
   in the circular restricted 3-body problem", *Int. J. Bifurcation and Chaos* 17, 2007
   (axial and vertical families and their junctions; from memory).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

from ..vocabulary import ORBIT_TARGETS  # noqa: F401  (the targets a request may pick a member by)
from . import seeds

__all__ = ["FAMILIES", "ORBIT_TARGETS", "Branching", "Recipe", "RECIPES", "recipe",
           "measures_winding", "has_ratio", "routes_offered"]



# ---- orientation of a family: which way along the tangent is "forward" ---------------------
# Each factory takes the collinear point (or None) and returns ``direction(t, X)``; the
# continuation keeps the tangent ``t`` for which the value is positive (see
# :func:`cr3bp.orbits.continuation.grow`).

def _away_from_point(p):
    """In-plane amplitude grows: x moves away from the collinear point."""
    return lambda t, X, xl=p.x: t[0] * (X[0] - xl)


def _z_grows(p):
    """Out-of-plane amplitude grows: |z| of the start increases."""
    return lambda t, X: t[1] * X[1]


def _vz_grows(p):
    """Out-of-plane speed at the node grows: |vz| of the start increases."""
    return lambda t, X: t[2] * X[2]


def _x_grows(p):
    """The start's x increases (away from the smaller primary for a distant retrograde orbit)."""
    return lambda t, X: t[0]


# ---- seed adapters: (mu, point, size, branch) -> seeds.Seed --------------------------------

def _lyapunov_seed(mu, point, size, branch):
    return seeds.linear_lyapunov(mu, point, size)


def _halo_seed(mu, point, size, branch):
    return seeds.richardson_halo(mu, point, size, branch)


def _vertical_seed(mu, point, size, branch):
    return seeds.linear_vertical(mu, point, size)


def _dro_seed(mu, point, size, branch):
    return seeds.dro(mu, size)


@dataclass(frozen=True)
class Branching:
    """How a family branches from a planar parent family at an out-of-plane +1 crossing.

    Parameters
    ----------
    parent : str
        Family branched from (``"lyapunov"``).
    crossing : int
        Which out-of-plane +1 crossing along the parent (1: the first, 2: the second).
    push : str
        Initial-state component pushed out of the plane and held while correcting
        (``"z"`` or ``"vz"``).
    push_size : float
        Default size of the push, in units of ``scale``.
    scale : str
        ``"gamma"`` or ``"one"`` (see the module notes).

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics*
       32, 1984.

    Examples
    --------
    >>> from cr3bp.orbits.recipes import recipe
    >>> recipe("axial").branching.crossing
    2
    """

    parent: str
    crossing: int
    push: str
    push_size: float
    scale: str


@dataclass(frozen=True)
class Recipe:
    """One family's recipe: how it is named, seeded, corrected and grown.

    Parameters
    ----------
    name : str
        The family word (``"halo"``).
    points : tuple of str
        Lagrange points the family is offered at; empty for families without one.
    branches : tuple of str
        Branch words (``("north", "south")``); empty for families without branches.
    ratio : bool
        The family needs a p:q resonance (and has no point or branch).
    symmetry : str
        Symmetry type of the corrector (:data:`cr3bp.orbits.seeds.XZ`, ``XZ_PLANAR`` or
        ``"x-axis"``; see :mod:`cr3bp.orbits.shooting`).
    start : str
        How the first member is reached: ``"seed"`` (``seed`` corrected with ``hold`` fixed),
        ``"branch"`` (at ``branching`` on the parent family grown to ``parent_members``) or
        ``"resonance"`` (a Kepler ellipse on the p:q resonance).
    seed : callable or None
        ``seed(mu, point, size, branch) -> Seed`` for ``start="seed"``.
    seed_size : float
        Size handed to ``seed``, in units of ``scale``.
    hold : str
        Initial-state component held fixed when the seed is corrected.
    half_period_at : tuple or None
        ``(coordinate, direction)``: the seed's half period is replaced by the time of its
        first crossing of ``coordinate = 0`` in ``direction`` (vertical orbits).
    direction : callable
        ``direction(point) -> f(t, X)``: which way along the tangent the family grows.
    step, max_step : float
        First and largest continuation step, in units of ``scale``.
    scale : str
        ``"gamma"``, ``"hill"`` or ``"one"`` (see the module notes).
    branching : Branching or None
        How the family branches from a planar parent (halo, axial).
    parent_members : int
        Members of the parent grown to find the branch point when ``start="branch"``.
    routes : tuple of (str, str)
        ``(route word, way)`` pairs, the default first; the ways are carried out by
        :func:`cr3bp.orbits.families.grow_by_route`.
    winding : bool
        Members record their turns about the larger primary (resonant families).
    targets : tuple of str
        Targets a request may pick a member by.
    at : dict
        Per-point overrides of any of the fields above (``{"L3": {...}}``).
    note : str
        One line for the family table in the documentation.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967 (from memory).
    .. [2] D. L. Richardson, *Celestial Mechanics* 22, 1980.
    .. [3] K. C. Howell, *Celestial Mechanics* 32, 1984.

    Examples
    --------
    >>> from cr3bp.orbits.recipes import recipe
    >>> r = recipe("halo")
    >>> r.points, r.branches, r.start
    (('L1', 'L2', 'L3'), ('north', 'south'), 'seed')
    >>> r.at_point("L3").start
    'branch'
    """

    name: str
    points: tuple
    branches: tuple
    ratio: bool
    symmetry: str
    start: str
    direction: object
    step: float
    max_step: float
    scale: str
    seed: object = None
    seed_size: float = 0.0
    hold: str = "x"
    half_period_at: tuple | None = None
    branching: Branching | None = None
    parent_members: int = 600
    routes: tuple = (("seed", "grow"),)
    winding: bool = False
    targets: tuple = ORBIT_TARGETS
    at: dict = field(default_factory=dict)
    note: str = ""

    def at_point(self, point):
        """This recipe with the overrides for ``point`` applied.

        Parameters
        ----------
        point : str
            Lagrange point name (``"L3"``) or ``""``.

        Returns
        -------
        Recipe
            The row itself when ``point`` has no overrides.

        Examples
        --------
        >>> from cr3bp.orbits.recipes import recipe
        >>> recipe("halo").at_point("L3").routes
        (('branch', 'lyapunov branch point'),)
        """
        over = self.at.get(point)
        return replace(self, **over) if over else self


#: The table: one row per family, in the order the families are listed to users.
RECIPES = {r.name: r for r in (
    Recipe("lyapunov", ("L1", "L2", "L3"), (), False, seeds.XZ_PLANAR, "seed",
           _away_from_point, 1e-3, 0.3, "gamma", seed=_lyapunov_seed, seed_size=2e-3, hold="x",
           note="linear Lyapunov seed, x held; xz-planar"),
    Recipe("halo", ("L1", "L2", "L3"), ("north", "south"), False, seeds.XZ, "seed",
           _z_grows, 2e-3, 0.15, "gamma", seed=_halo_seed, seed_size=0.02, hold="z",
           branching=Branching("lyapunov", 1, "z", 2e-3, "gamma"),
           routes=(("seed", "grow"), ("branch", "lyapunov branch point")),
           # Richardson's series is too inaccurate at L3 (the halos begin at Ax ~ 0.4 gamma,
           # beyond the expansion's reach): branch from the L3 Lyapunov family instead.
           at={"L3": dict(start="branch", parent_members=400, max_step=0.05,
                          routes=(("branch", "lyapunov branch point"),))},
           note="Richardson third-order seed, z held (L3: Lyapunov branch point); xz"),
    Recipe("vertical", ("L1", "L2"), (), False, "x-axis", "seed",
           _vz_grows, 2e-3, 0.05, "gamma", seed=_vertical_seed, seed_size=5e-3, hold="vz",
           half_period_at=("z", -1),
           routes=(("seed", "grow"), ("branch", "axial junction")),
           note="linear vertical seed, vz held; x-axis"),
    Recipe("axial", ("L1", "L2"), (), False, "x-axis", "branch",
           _vz_grows, 1e-3, 0.03, "one", hold="vz",
           branching=Branching("lyapunov", 2, "vz", 1e-3, "one"), parent_members=600,
           routes=(("branch", "grow"), ("seed", "vertical branch point")),
           note="second out-of-plane +1 crossing of the Lyapunov family, vz held; x-axis"),
    Recipe("dro", (), (), False, seeds.XZ_PLANAR, "seed",
           _x_grows, 0.0125, 0.6, "hill", seed=_dro_seed, seed_size=0.1, hold="x",
           note="retrograde circle about the smaller primary (0.1 Hill radius), x held; xz-planar"),
    Recipe("resonant", (), (), True, seeds.XZ_PLANAR, "resonance",
           None, 2e-3, 0.02, "one", hold="x", winding=True,
           note="Kepler ellipse about the larger primary on the p:q resonance, x held; xz-planar"),
)}

#: The family words, in table order.
FAMILIES = tuple(RECIPES)


def recipe(family):
    """The recipe of ``family``.

    Parameters
    ----------
    family : str
        A family word of :data:`FAMILIES` (exact, lower case).

    Returns
    -------
    Recipe

    Raises
    ------
    KeyError
        When ``family`` has no row (callers that take user text check it first with
        :func:`cr3bp.orbits.families.check_family`, which raises ``InputError``).

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics*
       32, 1984 (the symmetric single-shooting set-up the rows name).

    Examples
    --------
    >>> from cr3bp.orbits.recipes import recipe
    >>> recipe("vertical").hold
    'vz'
    """
    return RECIPES[family]


def measures_winding(family):
    """True when members of ``family`` record their turns about the larger primary.

    Parameters
    ----------
    family : str
        Any text; families without a row answer False.

    Returns
    -------
    bool

    Raises
    ------
    None

    References
    ----------
    .. [1] M. Hénon, "Numerical exploration of the restricted problem. V", *Astron. Astrophys.*
       1, 1969 (resonant orbits of the planar problem; from memory).

    Examples
    --------
    >>> from cr3bp.orbits.recipes import measures_winding
    >>> measures_winding("resonant"), measures_winding("halo"), measures_winding("")
    (True, False, False)
    """
    r = RECIPES.get(family)
    return bool(r and r.winding)


def has_ratio(family):
    """True when ``family`` is labelled by a p:q resonance rather than a point and branch.

    Parameters
    ----------
    family : str
        Any text; families without a row answer False.

    Returns
    -------
    bool

    Raises
    ------
    None

    References
    ----------
    .. [1] M. Hénon, "Numerical exploration of the restricted problem. V", *Astron. Astrophys.*
       1, 1969 (from memory).

    Examples
    --------
    >>> from cr3bp.orbits.recipes import has_ratio
    >>> has_ratio("resonant"), has_ratio("dro")
    (True, False)
    """
    r = RECIPES.get(family)
    return bool(r and r.ratio)


def routes_offered():
    """Families reached by more than one route: ``{family: (route words, default first)}``.

    Returns
    -------
    dict
        ``{"halo": ("seed", "branch"), ...}`` for every row with an alternative route.

    Raises
    ------
    None

    References
    ----------
    .. [1] E. J. Doedel et al., *Int. J. Bifurcation and Chaos* 17, 2007 (the axial family
       joins the Lyapunov and vertical families; from memory).

    Examples
    --------
    >>> from cr3bp.orbits.recipes import routes_offered
    >>> routes_offered()["axial"]
    ('branch', 'seed')
    """
    return {r.name: tuple(w for w, _ in r.routes) for r in RECIPES.values() if len(r.routes) > 1}
