"""Orbit requests in plain words, for the CLI and other commands.

Grammar: ``FAMILY [POINT] [BRANCH] [RESONANCE] KEY=VALUE``, for example::

    halo L2 south period=6.5626d
    halo L2 south resonance=9:2        # 9 periods = 2 synodic months (see targets)
    lyapunov L1 jacobi=3.15
    halo L1 north az=12000km
    halo L2 south perilune=3500km
    vertical L1 az=20000km
    dro x=1.08                         # x of the far-side crossing (LU unless a unit is given)
    resonant 3:2 jacobi=2.9
    halo L2 south jacobi=3.05 occurrence=2  # the second place along the family meeting it

FAMILY is one of lyapunov, halo (alias nrho), vertical, axial, dro, resonant. KEY is one of
period, jacobi, ax, ay, az, x, perilune, resonance. A family need not be monotone in its
target (the Earth–Moon L2 southern halo family meets C = 3.05 twice): ``occurrence=N``
(default 1) picks the N-th place from the family's start, and the orbit records every place
(``extra["target_matches"]``, JSON ``target_matches``).
"""

from __future__ import annotations

from dataclasses import dataclass

from .. import validate
from ..errors import InputError, NoSolutionError, shown
from ..vocabulary import COLLINEAR_POINTS, FAMILY_ALIASES, HALO_BRANCHES, LAGRANGE_POINTS, ORBIT_TARGETS
from . import continuation, families, recipes, seeds, targets
from .orbit import PeriodicOrbit

ALIASES = FAMILY_ALIASES


@dataclass(frozen=True)
class OrbitSpec:
    """A parsed orbit request: family, point, branch, one target and its place.

    Parameters
    ----------
    family : str
    point, branch : str
        ``""`` where the family has none.
    key : str
        Target word (``"period"``), ``""`` for none.
    value : str
        Target value as written (``"6.5626d"``).
    resonance : tuple of int, optional
        p:q of a resonant family (not a target).
    occurrence : int
        Which place along the family meeting the target.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking a member of a family by a property).
    .. [2] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (the continuation that grows the
       family).

    Examples
    --------
    >>> from cr3bp.orbits.request import parse_request
    >>> parse_request("resonant 3:2 jacobi=3.07").branch_label
    '3:2'
    """
    family: str
    point: str = ""
    branch: str = ""
    key: str = ""
    value: str = ""
    resonance: tuple | None = None   # p:q of a resonant family (not a target)
    occurrence: int = 1               # which place along the family meeting the target

    def to_dict(self) -> dict:
        d = {"family": self.family, "point": self.point, "branch": self.branch, "key": self.key,
             "value": self.value, "resonance": list(self.resonance) if self.resonance else None}
        if self.occurrence != 1:
            d["occurrence"] = self.occurrence
        return d

    @property
    def branch_label(self) -> str:
        if recipes.has_ratio(self.family) and self.resonance:
            return f"{self.resonance[0]}:{self.resonance[1]}"
        return self.branch


def parse_request(text: str) -> OrbitSpec:
    """Parse a request (grammar in the module notes).

    Parameters
    ----------
    text : str
        E.g. ``"halo L2 south period=6.5626d"``.

    Returns
    -------
    OrbitSpec

    Raises
    ------
    InputError
        Naming the bad word and what is allowed.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking a member of a family by a property).
    .. [2] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (the continuation that grows the
       family).

    Examples
    --------
    >>> from cr3bp.orbits.request import parse_request
    >>> parse_request("nrho L2 southern az=70000km")
    OrbitSpec(family='halo', point='L2', branch='south', key='az', value='70000km', resonance=None, occurrence=1)
    >>> parse_request("halo L2 south colour=red")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: unknown target 'colour'; allowed: period, jacobi, ax, ay, az, x, perilune, resonance
    """
    if not isinstance(text, str) or not text.strip():
        raise InputError("empty orbit request; expected e.g. 'halo L2 south period=6.5626d'")
    if not text.isprintable():
        raise InputError(f"orbit request '{shown(text)}' contains a control character; expected e.g. "
                         "'halo L2 south period=6.5626d'")
    words = text.replace(",", " ").split()
    fam = ALIASES.get(words[0].lower(), words[0].lower())
    if fam not in families.FAMILIES:
        if fam in ("lissajous", "quasi-halo", "quasihalo"):   # tori: cr3bp.tori.request
            raise InputError(f"'{words[0]}' is a torus, not a periodic orbit: ask for it with "
                             "'librate torus --request' (Python: cr3bp.tori.request.solve)")
        raise InputError(f"unknown family '{words[0]}'; allowed: {', '.join(families.FAMILIES)}")
    point = branch = key = value = ""
    resonance = None
    occurrence = 1
    for w in words[1:]:
        lw = w.lower()
        if lw.startswith("occurrence="):
            occurrence = parse_occurrence(w.split("=", 1)[1])
        elif "=" in w:
            if key:
                raise InputError(f"only one target per request; got '{key}={value}' and '{w}'")
            key, value = (p.strip() for p in w.split("=", 1))
            key = key.lower()
            if key not in recipes.RECIPES[fam].targets:
                raise InputError(f"unknown target '{key}'; allowed: {', '.join(recipes.RECIPES[fam].targets)}")
            if not value:
                raise InputError(f"target '{key}=' has no value")
        elif w.upper() in LAGRANGE_POINTS:
            point = w.upper()
        elif lw in HALO_BRANCHES or lw in tuple(b + "ern" for b in HALO_BRANCHES):
            branch = lw.removesuffix("ern")
        elif ":" in w and recipes.has_ratio(fam):
            resonance = targets.parse_resonance(w)
            seeds.check_resonance(*resonance)
        else:
            raise InputError(f"'{w}' is not understood in the request '{text}'; expected a point "
                             f"({', '.join(COLLINEAR_POINTS)}), a branch ({', '.join(HALO_BRANCHES)}), p:q for "
                             "resonant, or KEY=VALUE")
    if recipes.has_ratio(fam):
        if resonance is None:
            raise InputError(f"a {fam} family needs p:q, e.g. 'resonant 3:2 jacobi=2.9'")
        if point or branch:
            raise InputError(f"the {fam} family has no Lagrange point or branch; leave out "
                             f"'{point or branch}'")
    else:
        fam, point, branch = families.check_family(fam, point or None, branch or None)
    return OrbitSpec(fam, point, branch, key, value, resonance, occurrence)


def parse_occurrence(value) -> int:
    """``occurrence`` as an int >= 1.

    Parameters
    ----------
    value : str or int

    Returns
    -------
    int

    Raises
    ------
    InputError
        Naming the value when it is not a whole number >= 1.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking a member of a family by a property).
    .. [2] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (the continuation that grows the
       family).

    Examples
    --------
    >>> from cr3bp.orbits.request import parse_occurrence
    >>> parse_occurrence(" 2 ")
    2
    """
    try:
        return validate.whole_number("occurrence", str(value).strip(), 1)
    except InputError:
        raise InputError(f"occurrence {value!r} must be a whole number >= 1 (1: the first place "
                         "along the family, from its start, that meets the target)") from None


def spec_from_options(family, point=None, branch=None, resonance_family=None, occurrence=None,
                      **target) -> OrbitSpec:
    """The same spec from separate options (the CLI's --family/--point/--branch/--period ...).

    Parameters
    ----------
    family : str
    point, branch : str, optional
    resonance_family : str, optional
        p:q of a resonant family.
    occurrence : int or str, optional
    **target
        At most one target keyword (``period="6.5626d"``); None values are ignored.

    Returns
    -------
    OrbitSpec

    Raises
    ------
    InputError
        More than one target, or as :func:`parse_request`.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking a member of a family by a property).
    .. [2] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (the continuation that grows the
       family).

    Examples
    --------
    >>> from cr3bp.orbits.request import spec_from_options
    >>> spec_from_options("halo", "L1", "north", az="12000km").key
    'az'
    """
    given = {k: v for k, v in target.items() if v is not None}
    if len(given) > 1:
        raise InputError(f"give one target, not {len(given)}: {', '.join('--' + k for k in given)}")
    words = [family] + [w for w in (point, branch, resonance_family) if w]
    words += [f"{k}={v}" for k, v in given.items()]
    if occurrence is not None:
        words.append(f"occurrence={occurrence}")
    return parse_request(" ".join(words))


def default_stops(system, spec: OrbitSpec) -> continuation.Stops:
    """How far a requested family is grown: all of it (up to 600 members).

    So that every place meeting the target is known.

    Parameters
    ----------
    system : System
    spec : OrbitSpec

    Returns
    -------
    continuation.Stops

    Raises
    ------
    None

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking a member of a family by a property).
    .. [2] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (the continuation that grows the
       family).

    Examples
    --------
    >>> from cr3bp.orbits.request import default_stops
    >>> default_stops(None, None).max_members
    600
    """
    return continuation.Stops(max_members=600)


def family_key(spec: OrbitSpec):
    """The (family, point, branch label) a family is catalogued under.

    Parameters
    ----------
    spec : OrbitSpec

    Returns
    -------
    tuple of str

    Raises
    ------
    None

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking a member of a family by a property).
    .. [2] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (the continuation that grows the
       family).

    Examples
    --------
    >>> from cr3bp.orbits.request import family_key, parse_request
    >>> family_key(parse_request("resonant 3:2 jacobi=3.07"))
    ('resonant', '', '3:2')
    """
    return (spec.family, spec.point, spec.branch_label)


def solve_request(system, spec, catalog=None, progress=None, grown=None) -> PeriodicOrbit:
    """The orbit a request asks for.

    Parameters
    ----------
    system : System
    spec : OrbitSpec or str
        Parsed with :func:`parse_request` when text.
    catalog : cr3bp.catalog.Catalog, optional
        When given, the family is read from it if catalogued by this version of the recipes
        (:data:`RECIPE`; not recomputed: only the two members bracketing the target are
        corrected), else computed in full and stored. Without it the family is computed in full
        and not kept. Either way every place where the family meets the target is known, the
        ``spec.occurrence``-th is solved, and ``orbit.extra["target_matches"]`` lists them all.
    progress : callable(count, max, orbit), optional
    grown : dict, optional
        Without a catalogue: families already grown by earlier requests of the same caller
        (filled here), so that many requests on one family grow it once (a graph's orbit
        nodes); the family grown is the same either way, so the orbit is too.

    Returns
    -------
    PeriodicOrbit

    Raises
    ------
    InputError
        Malformed request, or no target.
    NoSolutionError
        Target outside the family (the message gives the family's range in the request's units).
    ConvergenceError
        When a member does not correct.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking a member of a family by a property).
    .. [2] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (the continuation that grows the
       family).

    Examples
    --------
    Growing the whole family takes several seconds, so this example is not run here
    (tests/test_cli_orbits.py runs requests end to end)::

        >>> orbit = solve_request(system("earth-moon"), "halo L2 south period=6.5626d")  # doctest: +SKIP
    """
    if isinstance(spec, str):
        spec = parse_request(spec)
    if not spec.key:
        raise InputError("the request has no target; add one of "
                         + ", ".join(k + "=" for k in ORBIT_TARGETS))
    tg = targets.make_target(system, spec.key, spec.value)
    fam, point, branch = family_key(spec)
    kind = families.kind_of(spec.family)
    stopped = ""
    if catalog is not None:
        rec = catalog.load_family(system, fam, point, branch)
        if rec is not None and rec.get("members") and rec.get("complete") and \
                rec["settings"].get("recipe", 0) >= RECIPE:
            members = rec["members"]
        else:
            family = compute_into_catalog(catalog, system, spec, progress=progress)
            members = [catalog_member(m, i) for i, m in enumerate(family.members)]
            stopped = family.stop_reason
    else:
        known = None if grown is None else grown.get((fam, point, branch, spec.resonance))
        if known is None:
            family = families.grow_family(system, spec.family, spec.point, spec.branch,
                                          stops=default_stops(system, spec), progress=progress,
                                          resonance=spec.resonance, locate_bifurcations=False)
            known = (family.members, family.stop_reason)
            if grown is not None:
                grown[(fam, point, branch, spec.resonance)] = known
        members, stopped = known
    vals = [continuation.member_value(m, tg.quantity) for m in members]
    places = continuation.target_brackets(vals, tg.value)
    if not places:
        why = f" (family stopped: {stopped})" if stopped else ""
        raise NoSolutionError(_range_message(system, spec, tg, min(vals), max(vals)) + why)
    if spec.occurrence > len(places):
        n = len(places)
        raise NoSolutionError(f"the {_name(spec)} family meets {spec.key} = {spec.value} at {n} "
                              f"place{'s' if n > 1 else ''}; occurrence {spec.occurrence} does not "
                              f"exist (allowed: 1{f' to {n}' if n > 1 else ''})")
    return continuation.solve_on_members(system, kind, members, tg.quantity, tg.value,
                                         spec.family, spec.point, branch, spec.occurrence)


def describe_places(orbit_dict) -> list:
    """One text per place where the orbit's family meets its target.

    E.g. "period 13.3147 d, Jacobi constant 3.050000", from ``target_matches`` of
    :meth:`PeriodicOrbit.to_dict`; empty when the target is met at one place only.

    Parameters
    ----------
    orbit_dict : dict
        :meth:`PeriodicOrbit.to_dict` of a requested orbit.

    Returns
    -------
    list of str

    Raises
    ------
    None

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking a member of a family by a property).
    .. [2] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (the continuation that grows the
       family).

    Examples
    --------
    >>> from cr3bp.orbits.request import describe_places
    >>> describe_places({"target_matches": {"count": 2, "places": [
    ...     {"period_days": 13.3147, "jacobi": 3.05}, {"period_days": 9.1, "jacobi": 3.05}]}})
    ['period 13.3147 d, Jacobi constant 3.050000', 'period 9.1000 d, Jacobi constant 3.050000']
    """
    tm = orbit_dict.get("target_matches")
    if not tm or tm["count"] < 2:
        return []
    return [(f"period {p['period_days']:.4f} d" if p["period_days"] is not None else
             f"period {p['period']:.6f} TU") + f", Jacobi constant {p['jacobi']:.6f}"
            for p in tm["places"]]


def _name(spec):
    return " ".join(w for w in (spec.family, spec.point, spec.branch_label) if w)


def _range_message(system, spec, tg, lo, hi):
    name = _name(spec)
    d = targets.describe_value
    where = "the family covers"
    if recipes.has_ratio(spec.family) and spec.resonance:
        p, q = spec.resonance
        where = (f"along the {p}:{q} resonance (members whose period is within "
                 f"{families.RESONANCE_TOL:.0%} of {q} revolutions of the primaries) the family covers")
    return (f"no {name} orbit has {spec.key} = {spec.value}; {where} {spec.key} from "
            f"{d(system, tg.quantity, lo)} to {d(system, tg.quantity, hi)}")


def catalog_member(orbit: PeriodicOrbit, index: int) -> dict:
    """A member's record for the catalogue: ``to_dict()`` with its index, without the system.

    Parameters
    ----------
    orbit : PeriodicOrbit
    index : int

    Returns
    -------
    dict

    Raises
    ------
    None

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking a member of a family by a property).
    .. [2] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (the continuation that grows the
       family).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.orbits.request import catalog_member
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> rec = catalog_member(shooting.correct(em, sd.state, sd.half_period, sd.symmetry), 0)
    >>> rec["index"], "system" in rec
    (0, False)
    """
    d = orbit.to_dict()
    d["index"] = int(index)
    d.pop("system", None)
    return d


#: Version of how families are grown, stored with every catalogued family. A request reuses
#: a catalogued family only from this version on. 2 (2026-12-02): the continuation refuses
#: steps that may hide two crossings of +1/-1 and approaches the family's limit (more members
#: near bifurcation pairs and at the end; families of version 1 could miss such pairs).
#: 3 (2026-12-03): resonant families are seeded towards the secondary and kept on the
#: resonance (families.grow_resonant); members carry their period ratio.
RECIPE = 3


def catalog_settings(spec: OrbitSpec, stops: continuation.Stops) -> dict:
    """The settings a catalogued family is keyed by (what changes its members).

    Parameters
    ----------
    spec : OrbitSpec
    stops : continuation.Stops

    Returns
    -------
    dict

    Raises
    ------
    None

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking a member of a family by a property).
    .. [2] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (the continuation that grows the
       family).

    Examples
    --------
    >>> from cr3bp.orbits.continuation import Stops
    >>> from cr3bp.orbits.request import catalog_settings, parse_request
    >>> catalog_settings(parse_request("dro x=1.08"), Stops())["recipe"]
    3
    """
    return {"recipe": RECIPE, "family": spec.family, "point": spec.point, "branch": spec.branch_label,
            "max_members": stops.max_members, "altitude_km": stops.altitude_km,
            "bounds": {k: list(v) for k, v in stops.bounds.items()}}


def compute_into_catalog(catalog, system, spec: OrbitSpec, stops=None, progress=None):
    """Grow the family of ``spec`` and store it.

    Each member is written as it converges, so an interrupted run keeps what it computed.

    Parameters
    ----------
    catalog : cr3bp.catalog.Catalog
    system : System
    spec : OrbitSpec
    stops : continuation.Stops, optional
        Default :func:`default_stops`.
    progress : callable(count, max, orbit), optional

    Returns
    -------
    continuation.Family

    Raises
    ------
    InputError, ConvergenceError, NoSolutionError
        As :func:`cr3bp.orbits.families.grow_family`.
    CatalogWriteError
        When the catalogue cannot be written.

    References
    ----------
    .. [1] K. C. Howell, "Three-dimensional, periodic, 'halo' orbits", *Celestial Mechanics* 32,
       1984 (picking a member of a family by a property).
    .. [2] H. B. Keller, "Numerical solution of bifurcation and nonlinear eigenvalue problems", in
       *Applications of Bifurcation Theory*, Academic Press, 1977 (the continuation that grows the
       family).

    Examples
    --------
    >>> from cr3bp.catalog import Catalog
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits.continuation import Stops
    >>> from cr3bp.orbits.request import compute_into_catalog, parse_request
    >>> cat = Catalog(":memory:")
    >>> fam = compute_into_catalog(cat, system("earth-moon"), parse_request("lyapunov L1 jacobi=3.18"),
    ...                            stops=Stops(max_members=3))
    >>> [f["members"] for f in cat.list_families()]
    [3]
    """
    stops = stops or default_stops(system, spec)
    fid = catalog.begin_family(system, spec.family, spec.point, spec.branch_label,
                               catalog_settings(spec, stops))

    def keep(i, n, orbit):
        catalog.add_members(fid, [catalog_member(orbit, i - 1)])
        if progress is not None:
            progress(i, n, orbit)

    family = families.grow_family(system, spec.family, spec.point, spec.branch, stops=stops,
                                  progress=keep, resonance=spec.resonance)
    catalog.add_members(fid, [catalog_member(m, i) for i, m in enumerate(family.members)])
    catalog.finish_family(fid, [b.to_dict() for b in family.bifurcations], complete=True)
    return family


