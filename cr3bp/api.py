"""The public face of the library: one call per stage of a mission design.

``import cr3bp`` offers these functions (loaded on first use, so the import stays light)::

    system -> points -> orbit -> family -> manifold -> section -> connect -> route -> export
                                     \\-> torus        shadow, keep (an orbit at a date)   run (a scenario)

Each is a thin, documented wrapper around the library call the ``librate`` command makes for
the same stage, with the same words: an orbit request such as ``"halo L2 south
resonance=9:2"``, a stop such as ``"section:x=1-mu"``, quantities as text with their unit
(``"12000km"``, ``"6.5626d"``) or as nondimensional floats. Bad input raises
:class:`cr3bp.errors.InputError` (one line naming the value and what is allowed), a target
nothing meets :class:`cr3bp.errors.NoSolutionError`, an iteration that gives up
:class:`cr3bp.errors.ConvergenceError`.

All results are preliminary design in a simplified model (the circular restricted three-body
problem unless a function says otherwise): see :data:`cr3bp.cautions.CAUTION`.

Every library import of this module is inside the function that needs it: the one place the
public calls meet the library's module paths (kept here so a module move is fixed in one file).
"""

from __future__ import annotations

import math
import os
import sys
from dataclasses import replace
from pathlib import Path

from .errors import InputError
from .vocabulary import TUBE_BRANCHES
from . import units
from .systems import System, system as _system
from .units import length

__all__ = ["system", "points", "orbit", "orbit_request", "family", "manifold", "section", "connect", "optimise", "route",
           "trajectory", "export", "run", "torus", "shadow", "keep",
           "departure", "low_energy_transfer", "launch_window", "graph", "design_route", "refine"]


# ---- helpers ---------------------------------------------------------------------------

def _system_of(obj):
    s = getattr(obj, "system", None)
    if s is None:
        raise InputError(f"expected a System or a result that carries one, not {type(obj).__name__}")
    return s


def _as_system(value):
    if isinstance(value, System):
        return value
    if isinstance(value, str):
        return system(value)
    raise InputError(f"system {value!r}: give a System (cr3bp.system('earth-moon')) or a system name")


def _whole(name, value, lo, hi):
    from .validate import whole_number  # lazy: start-up: keeps cr3bp.api free of numpy
    return whole_number(name, value, lo, hi)


def _text(value):
    return None if value is None else str(value)


def _one_of(name, value, allowed):
    if value not in allowed:
        raise InputError(f"{name} {value!r} is not allowed; allowed: {', '.join(map(str, allowed))}")
    return value


# ---- system and equilibria -------------------------------------------------------------

def system(name=None, *, mu=None, length_km=None, time_s=None):
    """A three-body system: a tabulated pair of primaries, or a custom mass ratio.

    Parameters
    ----------
    name : str, optional
        A tabulated system, e.g. ``"earth-moon"`` or ``"sun-earth"`` (the names of
        ``librate systems``).
    mu : float, optional
        Custom system: mass ratio in (0, 0.5] (instead of ``name``).
    length_km, time_s : float, optional
        Custom system: length unit in km and time unit in seconds (both or neither).

    Returns
    -------
    cr3bp.systems.System
        Its mass ratio ``mu`` and units (conventions in :mod:`cr3bp.systems`).

    Raises
    ------
    InputError
        An unknown name, a mass ratio outside (0, 0.5], or both ``name`` and ``mu``.

    Examples
    --------
    >>> import cr3bp
    >>> em = cr3bp.system("earth-moon")
    >>> round(em.mu, 6)
    0.012151

    References
    ----------
    Szebehely, *Theory of Orbits*, 1967 (the nondimensional units; conventions in
    :mod:`cr3bp.systems`).
    """
    if name is not None and mu is not None:
        raise InputError("give a system name or mu, not both")
    if name is None and mu is None:
        raise InputError("give a system name (e.g. 'earth-moon') or mu=VALUE")
    if name is not None:
        if length_km is not None or time_s is not None:
            raise InputError("length_km and time_s go with mu (a custom system)")
        return _system(name)
    return _system(mu=mu, length_km=length_km, time_s=time_s)


def points(system):
    """The five Lagrange points: positions, Jacobi constants, linear modes, stability.

    Parameters
    ----------
    system : System or str

    Returns
    -------
    list of cr3bp.equilibria.LagrangePoint
        L1..L5 in order; ``.position`` (LU), ``.jacobi``, ``.modes``, ``.to_dict()``.

    Raises
    ------
    InputError
        ``system`` is neither a System nor a system name.

    Examples
    --------
    >>> import cr3bp
    >>> [p.name for p in cr3bp.points("earth-moon")]
    ['L1', 'L2', 'L3', 'L4', 'L5']

    References
    ----------
    Szebehely, *Theory of Orbits*, 1967, §4.4-4.5 and §5.5; Routh, *Proc. London Math. Soc.*
    6, 1875 (the triangular points' stability); Richardson, *Celestial Mechanics* 22, 1980,
    §2 (the collinear points' linear modes). See :mod:`cr3bp.equilibria`.
    """
    from .equilibria import lagrange_points  # lazy: start-up: keeps cr3bp.api free of numpy
    return lagrange_points(_as_system(system))


# ---- periodic orbits -------------------------------------------------------------------

def _spec(request, family, point, branch, ratio, occurrence, target):
    from .orbits.request import OrbitSpec, parse_request, spec_from_options  # lazy: start-up: keeps cr3bp.api free of numpy
    if request is not None:
        if family is not None or point is not None or branch is not None or ratio is not None or target:
            raise InputError("give the orbit as request text or as keywords (family=..., one target), not both")
        spec = request if isinstance(request, OrbitSpec) else parse_request(request)
        if occurrence is not None:
            from .orbits.request import parse_occurrence  # lazy: start-up: keeps cr3bp.api free of numpy
            spec = replace(spec, occurrence=parse_occurrence(occurrence))
        return spec
    if family is None:
        raise InputError("give the orbit: a request such as 'halo L2 south period=6.5626d', or family=... "
                         "with one target (period=, jacobi=, ax=, ay=, az=, x=, perilune=, resonance=)")
    return spec_from_options(family, point, branch, ratio, occurrence=occurrence,
                             **{k: _text(v) for k, v in target.items()})


def orbit_request(system=None, request=None, *, family=None, point=None, branch=None, ratio=None,
                  occurrence=None, **target):
    """The parsed orbit request :func:`orbit` would solve, checked, with no computation.

    What ``librate orbit`` and ``librate family`` show before they start (the family, point,
    branch and target in the library's own spelling), and the object :func:`orbit` also accepts
    as ``request``.

    Parameters
    ----------
    system : System or str, optional
        When given, the target's value and unit are checked against it (``"12 parsecs"`` fails
        here, before any work).
    request : str, optional
        The orbit in words, as for :func:`orbit`.
    family, point, branch, ratio, occurrence, **target
        The same as keywords, as for :func:`orbit`; the target may be left out (a family).

    Returns
    -------
    cr3bp.orbits.request.OrbitSpec
        ``.family``, ``.point``, ``.branch``, ``.branch_label``, ``.key``, ``.value``,
        ``.resonance``, ``.occurrence``.

    Raises
    ------
    InputError
        A malformed request, an unknown family or target, more than one target, a bad unit.

    Examples
    --------
    >>> import cr3bp.api as api
    >>> spec = api.orbit_request("earth-moon", family="nrho", point="L2", branch="south", period="6.5626d")
    >>> spec.family, spec.point, spec.branch, spec.key, spec.value
    ('halo', 'L2', 'south', 'period', '6.5626d')
    >>> api.orbit_request(request="resonant 3:2 jacobi=3.07").branch_label
    '3:2'

    References
    ----------
    Howell, *Celestial Mechanics* 32, 1984 (picking a member of a family by a property); the
    grammar is in :mod:`cr3bp.orbits.request`.
    """
    spec = _spec(request, family, point, branch, ratio, occurrence, target)
    if system is not None and spec.key:
        from .orbits.targets import make_target  # lazy: start-up: keeps cr3bp.api free of numpy
        make_target(_as_system(system), spec.key, spec.value)      # bad units fail here, before any work
    return spec


def orbit(system, request=None, *, family=None, point=None, branch=None, ratio=None, occurrence=None,
          state=None, period=None, catalog=None, progress=None, **target):
    """One periodic orbit, picked out of its family by a target value (``librate orbit``).

    Parameters
    ----------
    system : System or str
    request : str or cr3bp.orbits.request.OrbitSpec, optional
        The orbit in words, e.g. ``"halo L2 south resonance=9:2"`` or ``"lyapunov L1
        jacobi=3.15"`` (grammar in :mod:`cr3bp.orbits.request`), or a request parsed by
        :func:`orbit_request`.
    family, point, branch, ratio : str, optional
        The same as keywords: ``family="halo", point="L2", branch="south"``; ``ratio="3:2"``
        names a resonant family. With ``state=``, ``family`` and ``point`` only label the
        given orbit (default ``"given"``).
    **target
        Exactly one of ``period``, ``jacobi``, ``ax``, ``ay``, ``az``, ``x``, ``perilune``,
        ``resonance``: text with its unit (``"12000km"``, ``"6.5626d"``) or a nondimensional
        number.
    occurrence : int, optional
        Where the family meets the target at several places: the N-th from its start.
    state : sequence of six floats, optional
        Instead of a request: an already converged orbit's state (LU and LU/TU), with
        ``period=`` its period (``"2.84TU"``, ``"12.4d"`` or TU as a float). Without
        ``state``, ``period=`` is the target period of the request.
    catalog : cr3bp.catalog.Catalog, optional
        Read the family from this catalogue (or compute and store it).
    progress : callable(count, max, orbit), optional

    Returns
    -------
    cr3bp.orbits.orbit.PeriodicOrbit
        State, period, monodromy matrix, stability indices; ``.to_dict()``, ``.plot(ax)``.

    Raises
    ------
    InputError
        A malformed request, an unknown family or target, a bad unit.
    NoSolutionError
        The family does not meet the target (the message gives its range).
    ConvergenceError

    Examples
    --------
    >>> import cr3bp
    >>> em = cr3bp.system("earth-moon")
    >>> o = cr3bp.orbit(em, "lyapunov L1 jacobi=3.15")
    >>> round(o.period_days, 3)
    12.354
    >>> same = cr3bp.orbit(em, family="lyapunov", point="L1", jacobi=3.15)
    >>> abs(same.period - o.period) < 1e-9
    True
    >>> given = cr3bp.orbit(em, state=o.state, period=o.period)
    >>> given.family
    'given'
    >>> cr3bp.orbit(em, "halo L2 sideways period=6d")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: 'sideways' is not understood in the request 'halo L2 sideways period=6d'; expected a point (L1, L2, L3), a branch (north, south), p:q for resonant, or KEY=VALUE

    References
    ----------
    Howell, *Celestial Mechanics* 32, 1984 (halo orbits by differential correction);
    Doedel et al., *Int. J. Bifurcation and Chaos* 17, 2007 (continuation of families).
    """
    system = _as_system(system)
    if state is None and period is not None:
        target["period"] = period                     # the target period of a request
    if state is not None:
        if period is None:
            raise InputError("a given orbit needs both state=[x, y, z, vx, vy, vz] and period=")
        if request is not None or branch is not None or ratio is not None or occurrence is not None or target:
            raise InputError("give a request or state= with period=, not both")
        import numpy as np  # lazy: start-up: keeps cr3bp.api free of numpy
        from .tubes.manifolds import orbit_from_state  # lazy: start-up: keeps cr3bp.api free of numpy
        from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
        try:
            s = np.asarray(state, dtype=float).reshape(-1)
        except (TypeError, ValueError):
            raise InputError(f"state {state!r} is not six numbers x, y, z, vx, vy, vz") from None
        if s.shape != (6,) or not np.all(np.isfinite(s)):
            raise InputError(f"state {state!r} must be six finite numbers x, y, z, vx, vy, vz")
        T = quantity("period", _text(period), "time", system, sign="positive", default_unit="TU")
        return orbit_from_state(system, s, T, family=family or "given", point=point or "")
    from .orbits.request import solve_request  # lazy: start-up: keeps cr3bp.api free of numpy
    from .orbits.targets import make_target  # lazy: start-up: keeps cr3bp.api free of numpy
    spec = _spec(request, family, point, branch, ratio, occurrence, target)
    if spec.key:
        make_target(system, spec.key, spec.value)    # bad units fail here, before any work
    return solve_request(system, spec, catalog=catalog, progress=progress)   # no target: said there


def family(system, name, *, point=None, branch=None, ratio=None, members=200, until=None, altitude=None,
           method="arclength", parameter=None, step=None, max_step=None, route=None, progress=None,
           catalog=None):
    """Grow a family of periodic orbits with its stability and bifurcations (``librate family``).

    Parameters
    ----------
    system : System or str
    name : str
        ``lyapunov``, ``halo`` (alias ``nrho``), ``vertical``, ``axial``, ``dro`` or ``resonant``.
    point, branch, ratio : str, optional
        Collinear point (``"L1"``), halo branch (``"north"``/``"south"``), resonance (``"3:2"``).
    members : int
        Largest member count, 2..5000 (default 200).
    until : str, optional
        ``"KEY=VALUE"``: stop at the member where KEY (jacobi, period, az, ax, perilune)
        reaches VALUE, e.g. ``"period=8d"``.
    altitude : str, optional
        Stop when a member passes below this altitude above a primary (``"100km"``).
    method : {"arclength", "natural"}
    parameter : {"x", "z", "vz", "jacobi", "period"}, optional
        The stepped quantity of natural-parameter continuation.
    step, max_step : float, optional
        First and largest step (nondimensional, in (0, 1)).
    route : {"seed", "branch"}, optional
        How a three-dimensional family is reached (halo, vertical, axial).
    progress : callable(count, max, orbit), optional
    catalog : cr3bp.catalog.Catalog, optional
        Keep the family in this catalogue (as ``librate family --catalog``): later
        :func:`orbit` requests with the same catalogue read it instead of growing it again.

    Returns
    -------
    cr3bp.orbits.continuation.Family
        ``.members`` (PeriodicOrbit), ``.bifurcations``, ``.stop_reason``; ``.plot(ax)``.
        Kept in a catalogue, ``.settings["catalog_id"]`` is its family id there.

    Raises
    ------
    InputError
        An unknown family, point or branch; ``members`` outside 2..5000; a bad ``until``.

    Examples
    --------
    >>> import cr3bp
    >>> fam = cr3bp.family("earth-moon", "lyapunov", point="L1", members=4)
    >>> len(fam.members)
    4
    >>> cr3bp.family("earth-moon", "lyapunov", point="L1", members=1)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: members 1 is outside the allowed range 2..5000

    References
    ----------
    Doedel et al., *Int. J. Bifurcation and Chaos* 17, 2007 (pseudo-arclength continuation and
    bifurcations of families in the restricted problem).
    """
    from .orbits import continuation, families, targets  # lazy: start-up: keeps cr3bp.api free of numpy
    from .orbits.request import spec_from_options  # lazy: start-up: keeps cr3bp.api free of numpy
    system = _as_system(system)
    spec = spec_from_options(name, point, branch, ratio)
    if isinstance(members, bool) or not isinstance(members, int) or not 2 <= members <= 5000:
        raise InputError(f"members {members!r} is outside the allowed range 2..5000")
    _one_of("method", method, ("arclength", "natural"))
    if method == "natural" and not parameter:
        raise InputError("method 'natural' needs parameter= (x, z, vz, jacobi or period)")
    if route is not None:
        _one_of("route", route, ("seed", "branch"))
        if spec.family not in families.ROUTES:
            raise InputError(f"route is offered for the halo, vertical and axial families, not {spec.family}")
        if method != "arclength" or step is not None:
            raise InputError("route works with the default arclength continuation and steps; drop method=/step=")
    target = None
    if until is not None:
        text = str(until)
        if "=" not in text:
            raise InputError(f"until {text!r} must be KEY=VALUE with KEY one of jacobi, period, az, ax, perilune")
        k, v = (s.strip() for s in text.split("=", 1))
        if k.lower() not in ("jacobi", "period", "az", "ax", "perilune"):
            raise InputError(f"until key '{k}' is not allowed; use one of jacobi, period, az, ax, perilune")
        t = targets.make_target(system, k.lower(), v)
        target = (t.quantity, t.value)
    alt = None
    if altitude is not None:
        system.require_dimensional("altitude")
        from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
        alt = quantity("altitude", _text(altitude), "length", system, sign="nonnegative") * system.length_km
    for label, v in (("step", step), ("max_step", max_step)):
        if v is not None and not (isinstance(v, (int, float)) and 0 < v < 1):
            raise InputError(f"{label} {v!r} is outside the allowed range (0, 1)")
    stops = continuation.Stops(max_members=members, altitude_km=alt, target=target)
    if route is not None:
        fam = families.grow_by_route(system, spec.family, spec.point, spec.branch, route, stops=stops,
                                     max_step=max_step, progress=progress)
    else:
        fam = families.grow_family(system, spec.family, spec.point, spec.branch, stops=stops, method=method,
                                   parameter=parameter, step=step, resonance=spec.resonance,
                                   max_step=max_step, progress=progress)
    if catalog is None:
        return fam
    from .orbits.request import catalog_member, catalog_settings  # lazy: start-up: keeps cr3bp.api free of numpy
    settings = catalog_settings(spec, stops)
    if route is not None:
        settings["route"] = route
    fid = catalog.begin_family(system, spec.family, spec.point, spec.branch_label, settings)
    catalog.add_members(fid, [catalog_member(m, i) for i, m in enumerate(fam.members)])
    catalog.finish_family(fid, [b.to_dict() for b in fam.bifurcations], complete=True)
    return replace(fam, settings={**fam.settings, "catalog_id": fid})


# ---- tubes -----------------------------------------------------------------------------

def manifold(orbit, stability, *, branch="interior", points=200, until=None, spacing="time",
             step_off=None, progress=None, origin=None):
    """Grow the stable or unstable manifold (a tube) of a periodic orbit (``librate manifold``).

    Parameters
    ----------
    orbit : PeriodicOrbit
        Or a hyperbolic quasi-periodic torus (:class:`cr3bp.tori.torus.Torus`, e.g. from
        :func:`torus`): its departure points are a grid of about ``sqrt(points)`` stroboscopic
        phases times ``sqrt(points)`` points of its invariance circle. Or, for the
        one-dimensional manifold of a collinear Lagrange point, a pair ``(system, "L1")``.
    stability : {"stable", "unstable"}
        Unstable: departures, propagated forward; stable: arrivals, propagated backward.
    branch : {"interior", "exterior"}
        The half stepping toward the smaller primary, or away from it.
    points : int
        Departure points along the orbit, 2..100000 (default 200).
    until : str or list of str, optional
        Stop condition(s): ``"section:x=1-mu"``, ``"time:20d"``, ``"altitude:earth:200km"``,
        ``"escape:3LU"`` (default ``time:2pi TU``).
    spacing : {"time", "arc"}
    step_off : str or float, optional
        Step-off distance from the orbit, e.g. ``"40km"`` (default per system).
    progress : callable(done, total, message), optional
    origin : str, optional
        How the tube's label names its orbit or torus (default: described from it).

    Returns
    -------
    cr3bp.tubes.manifolds.Tube
        Start and end states, times of flight, how each trajectory ended; ``.plot(ax)``
        (a :class:`cr3bp.tori.manifolds.TorusTube` for a torus).

    Raises
    ------
    InputError
        ``stability`` or ``branch`` not one of the allowed words, a bad stop, ``points`` out of range.

    Examples
    --------
    >>> import cr3bp
    >>> em = cr3bp.system("earth-moon")
    >>> o = cr3bp.orbit(em, "lyapunov L1 jacobi=3.15")
    >>> tube = cr3bp.manifold(o, "unstable", points=8, until="time:1TU")
    >>> tube.n
    8

    References
    ----------
    Gómez et al., *Nonlinearity* 17, 2004, §3; Koon, Lo, Marsden and Ross, *Dynamical Systems,
    the Three-Body Problem and Space Mission Design*, 2011, §4.5.
    """
    from .tubes.manifolds import grow_tube, parse_until, point_tube  # lazy: start-up: keeps cr3bp.api free of numpy
    stability = _one_of("stability", stability, ("stable", "unstable"))
    branch = _one_of("branch", branch, TUBE_BRANCHES)
    _one_of("spacing", spacing, ("time", "arc"))
    if isinstance(orbit, tuple) and len(orbit) == 2:
        sysm, name = _as_system(orbit[0]), str(orbit[1]).upper()
        if name not in ("L1", "L2", "L3"):
            raise InputError(f"point {orbit[1]!r}: only the collinear points L1, L2, L3 have "
                             "one-dimensional manifolds")
        return point_tube(sysm, name, stability, branch, parse_until(until, sysm), step_km=step_off)
    sysm = _system_of(orbit)
    _whole("points", points, 2, 100_000)
    stop = parse_until(until, sysm)
    if _is_torus(orbit):
        if spacing != "time":
            raise InputError("spacing does not go with a torus (its points are a grid on the torus)")
        from .tori.manifolds import grow_tube as grow_torus_tube  # lazy: start-up: keeps cr3bp.api free of numpy
        return grow_torus_tube(orbit, stability, branch, int(points), stop, step_km=step_off, progress=progress,
                               origin=origin)
    return grow_tube(orbit, stability, branch, int(points), stop, spacing=spacing, step_km=step_off,
                     progress=progress, origin=origin)


def _loaded_instance(obj, module, name):
    """isinstance(obj, module.name), without importing ``module``: when it is not loaded yet,
    ``obj`` cannot be one of its objects (so a command that has none does not load it)."""
    mod = sys.modules.get(module)
    return mod is not None and isinstance(obj, getattr(mod, name))


def _is_torus(obj):
    return _loaded_instance(obj, "cr3bp.tori.torus", "Torus")


def _is_orbit(obj):
    return _loaded_instance(obj, "cr3bp.orbits.orbit", "PeriodicOrbit")


def section(tube, where, *, crossing=1, time=None, stability=None, branch="interior", points=200,
            step_off=None, label=None, origin=None, progress=None):
    """Cut a tube with a Poincaré section (``librate section``).

    Parameters
    ----------
    tube : Tube, PeriodicOrbit or Torus
        A tube from :func:`manifold`; it is grown again from its orbit to the section (same
        departure points, stability, branch and step-off), unless it was grown to this very
        section and crossing, in which case its own cut is returned. Or the orbit (or
        hyperbolic torus) whose tube is grown to the section here, with ``stability``,
        ``branch``, ``points`` and ``step_off`` (what ``librate section --tube`` does).
    where : str
        ``"x=1-mu"``, ``"y=0:+"`` (one direction), ``"sphere:moon:20000km"``; for an orbit or a
        torus also ``"periapsis:earth"``, ``"apoapsis:moon"``.
    crossing : int
        Take the N-th crossing, 1..1000 (default 1).
    time : str or float, optional
        Time limit per trajectory (default 2 pi TU).
    stability : {"stable", "unstable"}, optional
        With an orbit or torus: the half-manifold cut (required there).
    branch : {"interior", "exterior"}
        With an orbit or torus (default interior).
    points : int
        With an orbit or torus: trajectories of the tube, 2..100000 (default 200).
    step_off : str or float, optional
        With an orbit or torus: step-off distance (default per system).
    label : str, optional
        The cut's label (default: from the tube).
    origin : str, optional
        With an orbit or torus: how the tube's label names it.
    progress : callable(done, total, message), optional

    Returns
    -------
    cr3bp.tubes.sections.Crossings
        The crossing states; ``.coords(("y", "vy"))``, ``.to_dict()``.

    Raises
    ------
    InputError
        A malformed section, ``crossing`` out of range, an orbit without ``stability``, or
        neither a Tube nor an orbit or torus.

    Examples
    --------
    >>> import cr3bp
    >>> em = cr3bp.system("earth-moon")
    >>> o = cr3bp.orbit(em, "lyapunov L1 jacobi=3.15")
    >>> tube = cr3bp.manifold(o, "unstable", points=8, until="time:1TU")
    >>> cut = cr3bp.section(tube, "x=1-mu")
    >>> cut.n_trajectories
    8
    >>> cr3bp.section(o, "x=1-mu", stability="unstable", points=8).n_trajectories
    8

    References
    ----------
    Poincaré, *Les méthodes nouvelles de la mécanique céleste* (surfaces of section); see
    :mod:`cr3bp.tubes.sections`.
    """
    from .tubes.manifolds import Stop, Tube, grow_tube  # lazy: start-up: keeps cr3bp.api free of numpy
    from .tubes.sections import parse_section  # lazy: start-up: keeps cr3bp.api free of numpy
    grown_here = _is_orbit(tube) or _is_torus(tube)
    if not (isinstance(tube, Tube) or grown_here):
        raise InputError(f"section cuts a Tube (from cr3bp.manifold) or an orbit's tube, not {type(tube).__name__}")
    sysm = tube.system
    sec = parse_section(str(where), sysm)
    crossing = _whole("crossing", crossing, 1, 1000)
    t_max = 2 * math.pi
    if time is not None:
        from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
        t_max = quantity("time", _text(time), "time", sysm, sign="positive", default_unit="TU")
    if grown_here:
        if stability is None:
            raise InputError("cutting an orbit's tube needs stability= ('stable' or 'unstable')")
        return _cut(tube, _one_of("stability", stability, ("stable", "unstable")),
                    _one_of("branch", branch, TUBE_BRANCHES), _whole("points", points, 2, 100_000), sec,
                    crossing, t_max, step_off, label, origin, progress)
    if sec.kind == "apsis":
        raise InputError(f"section {where!r}: an apsis map is drawn by cr3bp.connect with a parking orbit")
    if tube.stop.section == sec and tube.stop.count == crossing and time is None:
        return _labelled(tube.section_cut(), label)
    if tube.orbit is None:
        raise InputError("this tube does not carry its orbit; grow it with cr3bp.manifold")
    grown = grow_tube(tube.orbit, tube.stability, tube.branch, tube.n, Stop(sec, crossing, t_max),
                      spacing=tube.spacing, step_km=tube.step_km if math.isfinite(tube.step_km) else None,
                      origin=tube.origin, progress=progress)
    return _labelled(grown.section_cut(), label)


def _labelled(cut, label):
    return cut if label is None else type(cut)(**{**cut.__dict__, "label": label})


def _cut(source, stability, branch, n, sec, crossing, t_max, step_off, label, origin, progress):
    """The cut of ``source``'s (an orbit's or a torus's) half-manifold with ``sec``."""
    from .tubes.manifolds import Stop  # lazy: start-up: keeps cr3bp.api free of numpy
    from .tubes.sections import crossings  # lazy: start-up: keeps cr3bp.api free of numpy
    sign = 1.0 if stability == "unstable" else -1.0
    torus = _is_torus(source)
    if sec.kind == "apsis":          # apsides are found per trajectory from the departure states
        if torus:
            from .tori.manifolds import manifold_starts  # lazy: start-up: keeps cr3bp.api free of numpy
            th0, _, _, _, _, starts, *_ = manifold_starts(source, stability, branch, n, step_km=step_off)
            phase = th0 / (2 * 3.141592653589793)
        else:
            from .tubes.manifolds import manifold_starts  # lazy: start-up: keeps cr3bp.api free of numpy
            ts, _, _, starts, *_ = manifold_starts(source, stability, branch, n, step_km=step_off)
            phase = ts / source.period
        return crossings(source.system, starts, sec, sign * t_max, crossing, phase=phase,
                         label="" if label is None else label).nth(crossing)
    if torus:
        from .tori.manifolds import grow_tube  # lazy: start-up: keeps cr3bp.api free of numpy
    else:
        from .tubes.manifolds import grow_tube  # lazy: start-up: keeps cr3bp.api free of numpy
    tube = grow_tube(source, stability, branch, n, Stop(sec, crossing, t_max), step_km=step_off,
                     progress=progress, origin=origin)
    return _labelled(tube.section_cut(), label)


def _parking(text, sysm):
    from .tubes.sections import primary_index  # lazy: start-up: keeps cr3bp.api free of numpy
    from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
    words = str(text).split()
    if not words or words[0].lower() != "parking":
        return None
    if len(words) != 3:
        raise InputError(f"'{text}': write 'parking BODY ALTITUDE', e.g. 'parking earth 200km'")
    p = primary_index(sysm, words[1])
    sysm.require_dimensional("a parking altitude")
    alt = sysm.km(quantity(f"parking altitude in '{text}'", words[2], "length", sysm, sign="nonnegative"))
    return p, float(alt)


def connect(origin, target, *, system=None, section="x=1-mu", points=None, crossing=1, time=None,
            step_off=None, candidates=5, from_branch=None, to_branch=None, arrival_within=None,
            progress=None, full=False, on_map=None):
    """Legs between two periodic orbits, or a parking orbit and a periodic orbit, or with a
    quasi-periodic torus at one end or both (``librate connect``).

    Parameters
    ----------
    origin, target : PeriodicOrbit, Torus or str
        An orbit (from :func:`orbit`), an orbit request, ``"parking BODY ALTITUDE"``
        (``"parking moon 100km"``) at one end, or a torus (from :func:`torus`) or torus request
        (``"quasi-halo around halo L1 north az=10000km amplitude=300km"``): the unstable manifold
        of the first joined to the stable manifold of the second on ``section`` (a position
        plane; :mod:`cr3bp.tori.connections`; 100 trajectories per manifold by default).
    system : System or str, optional
        Needed when neither end is a PeriodicOrbit.
    section : str
        The section on which the two tubes are matched (default ``"x=1-mu"``), as ``librate
        connect --section``.
    points : int, optional
        Trajectories per tube (default 200; 100 for a parking-orbit leg).
    crossing : int
        Which crossing of the section (default 1).
    time : str or float, optional
        Time limit per trajectory (default 2 pi TU).
    step_off : str or float, optional
    candidates : int
        Most legs returned, 1..1000 (default 5), best first.
    from_branch, to_branch : {"interior", "exterior"}, optional
    arrival_within : str or float, optional
        Distance from the arrival orbit's path that counts as arrived (``"5000km"``; a float is
        in LU), for ``.tof_arrival_days`` (default per system: 1000 km in earth-moon); not for
        a leg that ends on a parking orbit, nor with a torus.
    progress : callable(done, total, message), optional
        Progress of the tubes grown (orbit to orbit) or of the periapsis search (parking orbit).
    full : bool
        Also return what the legs came from (for figures): ``(legs, tubes, periapsis_map)``,
        the two tubes cut by the section (orbit to orbit; else ``[]``) and the periapsis map
        of a parking-orbit leg (else None).
    on_map : callable(PeriapsisMap), optional
        Parking-orbit leg: called with the periapsis map before the legs are searched, so a
        figure of it can show why none is found (``librate connect --map``).

    Returns
    -------
    list of cr3bp.transfers.leg.Leg
        Best first: ``.dv_mps`` (CR3BP), ``.tof_days``, ``.segments``, ``.to_dict()``
        (with ``full=True``: the tuple above).

    Raises
    ------
    InputError
        Both ends parking orbits, a malformed request or section.
    NoSolutionError
        The tubes do not meet on the section.

    Examples
    --------
    >>> import cr3bp
    >>> cr3bp.connect("parking earth 200km", "parking moon 100km", system="earth-moon")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: one end must be a periodic orbit; both ends are parking orbits

    References
    ----------
    Koon, Lo, Marsden and Ross, *Dynamical Systems, the Three-Body Problem and Space Mission
    Design*, 2011, ch. 3 and §4.5; Gómez et al., *Nonlinearity* 17, 2004, §4 (tubes cut by a
    common section); see :mod:`cr3bp.tubes.connections`.
    """
    from .orbits.orbit import PeriodicOrbit  # lazy: start-up: keeps cr3bp.api free of numpy
    from .tubes.connections import connect as _connect  # lazy: heavy library (scipy, via cr3bp.tubes.connections)
    from .tubes.parking import parking_legs, periapsis_map  # lazy: heavy library (scipy, via cr3bp.tubes.parking)
    sysm = None
    for end in (origin, target):
        if isinstance(end, PeriodicOrbit) or type(end).__name__ == "Torus":
            sysm = end.system
    if sysm is None:
        if system is None:
            raise InputError("give system= when neither end is a PeriodicOrbit")
        sysm = _as_system(system)
    candidates = _whole("candidates", candidates, 1, 1000)
    crossing = _whole("crossing", crossing, 1, 1000)
    if points is not None:
        points = _whole("points", points, 2, 100_000)
    t_max = 2 * math.pi
    if time is not None:
        from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
        t_max = quantity("time", _text(time), "time", sysm, sign="positive", default_unit="TU")
    pa = _parking(origin, sysm) if isinstance(origin, str) else None
    pb = _parking(target, sysm) if isinstance(target, str) else None
    if pa and pb:
        raise InputError("one end must be a periodic orbit; both ends are parking orbits")
    for b in (from_branch, to_branch):
        if b is not None:
            _one_of("branch", b, TUBE_BRANCHES)

    within_km = None
    if arrival_within is not None:
        within_km = units.length(_text(arrival_within), sysm)
        within_km = within_km * sysm.length_km if sysm.dimensional else within_km
        if not (math.isfinite(within_km) and within_km > 0):
            raise InputError(f"arrival_within {arrival_within!r} must be a positive length")
        if pb:
            raise InputError(f"arrival_within {arrival_within!r} measures the approach to an arrival orbit; "
                             "this leg ends on a parking orbit, which it reaches when it ends")

    def _orbit(end):
        return end if isinstance(end, PeriodicOrbit) else orbit(sysm, end)

    ta, tb = _torus_end(origin), _torus_end(target)
    if ta or tb:
        if within_km is not None:
            raise InputError(f"arrival_within {arrival_within!r} measures the approach to an arrival periodic "
                             "orbit; it does not apply to a leg with a torus")
        legs = _connect_tori(origin, target, ta, tb, pa, pb, sysm, _orbit, section, points, step_off, t_max,
                             candidates, from_branch, to_branch, crossing)
        return (legs, [], None) if full else legs
    tubes, pm = [], None
    if pa or pb:
        primary, alt = pa or pb
        orb = _orbit(target if pa else origin)
        stability = "stable" if pa else "unstable"
        facing = "interior" if primary == 1 else "exterior"
        branch = (to_branch if pa else from_branch) or facing
        n = points or 100
        pm = periapsis_map(orb, primary, stability, branch, n, t_max=t_max, step_km=step_off, progress=progress)
        if on_map is not None:
            on_map(pm)
        legs = parking_legs(orb, primary, alt, stability=stability, branch=branch, n_points=n, t_max=t_max,
                            step_km=step_off, max_legs=candidates, pmap=pm)
        arrival = orb if pa else None
    else:
        oa, arrival = _orbit(origin), _orbit(target)
        legs, tu, ts = _connect(oa, arrival, str(section), points or 200, step_km=step_off, t_max=t_max,
                                count=crossing, branch_a=from_branch or "interior",
                                branch_b=to_branch or "interior", max_candidates=candidates, progress=progress)
        tubes = [tu, ts]
    if within_km is not None and arrival is not None:
        from .tubes.arrival import arrival_time, orbit_path  # lazy: start-up: keeps cr3bp.api free of numpy
        path = orbit_path(arrival)
        legs = [replace(g, tof_arrival=t, arrival_distance_km=d)
                for g in legs for t, d in [arrival_time(sysm, g.segments, arrival, within_km, path)]]
    return (legs, tubes, pm) if full else legs


def _torus_end(end) -> bool:
    """A quasi-periodic torus (cr3bp.tori.Torus) or a torus request text."""
    from .tori.request import is_torus_request  # lazy: start-up: keeps cr3bp.api free of numpy
    return type(end).__name__ == "Torus" or is_torus_request(end)


def _connect_tori(origin, target, ta, tb, pa, pb, sysm, as_orbit, section, points, step_off, t_max,
                  candidates, from_branch, to_branch, crossing):
    """:func:`connect` with a torus at one end or both (:mod:`cr3bp.tori.connections`)."""
    from .tori import connections as tc  # lazy: heavy library (scipy, via cr3bp.tori)
    from .tori import request as treq  # lazy: heavy library (scipy, via cr3bp.tori)
    if pa or pb:
        raise InputError("a parking orbit and a torus: the leg from an Earth parking orbit to a torus is the "
                         "direct departure, cr3bp.tori.departure.design_torus_departure (librate connect "
                         "--path direct); other parking legs of tori are not built yet")
    if crossing != 1:
        raise InputError(f"crossing {crossing}: connections with a torus use the first crossing of the section")

    def end(e, is_torus):
        if not is_torus:
            return as_orbit(e)
        return treq.solve(sysm, e) if isinstance(e, str) else e

    a, b = end(origin, ta), end(target, tb)
    kw = dict(n_points=points or 100, branch_a=from_branch or "interior", branch_b=to_branch or "interior",
              step_km=step_off, t_max=t_max)
    if ta and tb:
        legs = tc.connect_torus_to_torus(a, b, str(section), **kw)
    elif ta:
        legs = tc.connect_torus_to_orbit(a, b, str(section), **kw)
    else:
        legs = tc.connect_orbit_to_torus(a, b, str(section), **kw)
    return legs[:candidates]


def optimise(origin, target, *, system=None, impulses=3, max_tof=None, start="patch", section="x=1-mu",
             points=None, crossing=1, time=None, step_off=None, progress=None):
    """The least-Δv transfer between two periodic orbits with two or three impulses
    (``librate connect --optimise``).

    Parameters
    ----------
    origin, target : PeriodicOrbit or str
        The departure and arrival orbits (orbit requests as for :func:`orbit`).
    system : System or str, optional
        Needed when neither end is a PeriodicOrbit.
    impulses : {2, 3}
        Departure and insertion, plus one mid-course impulse with 3 (default).
    max_tof : str or float, optional
        Cap on the time of flight (``"30d"``, or TU as a float); default 1.5 times the start's
        and at least two periods of the longer orbit.
    start : {"patch", "sweep"} or Leg
        Start from the manifold patch of the two tubes (as :func:`connect`; a phase sweep of
        two-impulse legs where the tubes do not meet), from the sweep only, or from a given
        connection leg (one of :func:`connect`'s legs between the same two orbits, as
        ``librate connect --optimise`` does with its ``--section`` and branch options).
    section, points, crossing, time, step_off : as :func:`connect` (the patch start).
    progress : callable(str), optional

    Returns
    -------
    cr3bp.transfers.optimise.OrbitTransfer
        ``.solution`` ("optimised", "patch" or "first guess"), ``.dv_mps`` and ``.tof_days``
        (CR3BP), ``.start`` (what it started from), ``.iterations``, ``.active_bounds``,
        ``.primer`` (Lawden's check), ``.to_dict()``, ``.leg()``.

    Raises
    ------
    InputError
        A parking orbit at either end, an impulse count other than 2 or 3, a bad cap.
    NoSolutionError
        No start: the tubes do not meet and no two-impulse leg of the sweep converged.

    Examples
    --------
    >>> import cr3bp
    >>> cr3bp.optimise("lyapunov L1 jacobi=3.15", "lyapunov L2 jacobi=3.15", system="earth-moon",
    ...                impulses=4)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: impulses = 4; allowed: 2 or 3

    References
    ----------
    Betts, *Practical Methods for Optimal Control and Estimation Using Nonlinear Programming*,
    2010; Pavlak, PhD thesis, Purdue, 2013 (multiple shooting in the CR3BP); Lawden, *Optimal
    Trajectories for Space Navigation*, 1963 (primer vector); see :mod:`cr3bp.transfers.optimise`.
    """
    from .errors import ConvergenceError, NoSolutionError  # lazy: start-up (keeps cr3bp.api free of numpy)
    from .orbits.orbit import PeriodicOrbit  # lazy: start-up (keeps cr3bp.api free of numpy)
    from .transfers.optimise import IMPULSES, optimise_transfer, start_from_leg  # lazy: start-up (keeps cr3bp.api free of numpy)
    from .tubes.connections import connect as _connect  # lazy: start-up (keeps cr3bp.api free of numpy)
    from .validate import quantity  # lazy: start-up (keeps cr3bp.api free of numpy)
    sysm = None
    for end in (origin, target):
        if isinstance(end, PeriodicOrbit):
            sysm = end.system
    if sysm is None:
        if system is None:
            raise InputError("give system= when neither end is a PeriodicOrbit")
        sysm = _as_system(system)
    if impulses not in IMPULSES:
        raise InputError(f"impulses = {impulses!r}; allowed: 2 or 3")
    given = None if isinstance(start, str) else start
    if given is not None and type(given).__name__ != "Leg":
        raise InputError(f"start = {type(start).__name__}: give 'patch', 'sweep' or a Leg from cr3bp.connect")
    if given is None:
        _one_of("start", start, ("patch", "sweep"))
    for end in (origin, target):
        if isinstance(end, str) and _parking(end, sysm):
            raise InputError(f"'{end}' is a parking orbit; optimise joins two periodic orbits")
    cap = None if max_tof is None else quantity("max_tof", _text(max_tof), "time", sysm, sign="positive",
                                                default_unit="TU")
    t_max = 2 * math.pi if time is None else quantity("time", _text(time), "time", sysm, sign="positive",
                                                      default_unit="TU")
    crossing = _whole("crossing", crossing, 1, 1000)
    if points is not None:
        points = _whole("points", points, 2, 100_000)
    oa = origin if isinstance(origin, PeriodicOrbit) else orbit(sysm, origin)
    ob = target if isinstance(target, PeriodicOrbit) else orbit(sysm, target)
    first = None if given is None else start_from_leg(given)
    if given is None and start == "patch":
        try:
            legs, _, _ = _connect(oa, ob, str(section), points or 200, step_km=step_off, t_max=t_max,
                                  count=crossing)
            first = start_from_leg(legs[0])
        except (NoSolutionError, ConvergenceError):
            first = None              # the tubes gave no patch: the phase sweep starts instead
    return optimise_transfer(oa, ob, first, impulses=impulses, max_tof=cap, progress=progress)


# ---- routes, export, scenarios ---------------------------------------------------------

def low_energy_transfer(target, parking="parking earth 200km", *, system="earth-moon", epoch=None,
                        inclination=None, max_tof="130d", progress=None):
    """A low-energy (ballistic) transfer with the Sun's pull from an Earth parking orbit to an
    Earth-Moon periodic orbit, designed in the bicircular model (``librate connect --path
    low-energy``).

    Parameters
    ----------
    target : PeriodicOrbit or str
        The target orbit, or a request (``"halo L2 south resonance=9:2"``).
    parking : str
        ``"parking earth ALTITUDE"`` (100 km to 50 000 km).
    system : System or str
        The Earth-Moon system (when ``target`` is a request).
    epoch : str, optional
        The launch date (ISO 8601): the Sun's phase at the departure burn is the date's.
        Without it the Sun's phase is searched over a full synodic month.
    inclination : float, optional
        Parking-orbit inclination to the Moon's orbit plane, degrees (default: free).
    max_tof : str or float
        Longest time of flight (default ``"130d"``; a number is in days), more than 70 d and at most 200 d.

    Returns
    -------
    cr3bp.transfers.low_energy.LowEnergyTransfer
        Immutable: ``.maneuvers`` (departure, insertion), ``.dv_mps``, ``.departure_dv_mps``,
        ``.insertion_dv_mps``, ``.c3_km2_s2``, ``.tof_days``, ``.max_distance_km``,
        ``.sun_phase_deg``, ``.departure_epoch``, ``.optimised``, ``.to_dict()`` -- all in the
        bicircular model.

    Raises
    ------
    InputError
        Not a parking orbit about the Earth, a value out of range, a bad date.
    NoSolutionError
        The search finds no transfer in the time-of-flight window.

    Examples
    --------
    The design takes minutes, so only the refusal of a bad window is run:

    >>> from cr3bp.api import low_energy_transfer
    >>> tr = low_energy_transfer("halo L2 south resonance=9:2", epoch="2031-03-01")  # doctest: +SKIP
    >>> tr.dv_mps > 0, 70 < tr.tof_days <= 130                                      # doctest: +SKIP
    (True, True)
    >>> low_energy_transfer("halo L2 south resonance=9:2", max_tof="300d")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: max_tof = '300d'; allowed: more than 70 d, at most 200 d

    References
    ----------
    Parker & Anderson, *Low-Energy Lunar Trajectory Design*, 2013, ch. 3; Boudad, Howell &
    Davis, Adv. Space Res. 66, 2020 (the model); see :mod:`cr3bp.transfers.low_energy`.
    """
    from .orbits.orbit import PeriodicOrbit  # lazy: start-up: keeps cr3bp.api free of numpy
    from .transfers.low_energy import MIN_TOF_DAYS, design_low_energy  # lazy: start-up: keeps cr3bp.api free of numpy
    from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
    sysm = target.system if isinstance(target, PeriodicOrbit) else _as_system(system)
    pk = _parking(parking, sysm) if isinstance(parking, str) else None
    if pk is None or pk[0] != 0:
        raise InputError(f"parking = {parking!r}: give 'parking earth ALTITUDE', e.g. 'parking earth 200km'")
    if not 100.0 <= pk[1] <= 50_000.0:
        raise InputError(f"parking altitude {pk[1]:g} km in {parking!r}; allowed: 100 km to 50000 km")
    tof = float(max_tof) if isinstance(max_tof, (int, float)) else \
        sysm.days(quantity("max_tof", _text(max_tof), "time", sysm, sign="positive", default_unit="d"))
    if not MIN_TOF_DAYS < tof <= 200.0:
        raise InputError(f"max_tof = {max_tof!r}; allowed: more than {MIN_TOF_DAYS:g} d, at most 200 d")
    orb = target if isinstance(target, PeriodicOrbit) else orbit(sysm, target)
    return design_low_energy(orb, pk[1], epoch=epoch, inclination_deg=inclination, max_tof_days=tof,
                             progress=progress)


def launch_window(target, window, parking="parking earth 200km", *, system="earth-moon", inclination=None,
                  max_tof="130d", progress=None):
    """The best launch dates of a window for a low-energy transfer (``librate connect --path
    low-energy --window``), in the bicircular model.

    Parameters
    ----------
    target : PeriodicOrbit or str
        The target orbit, or a request.
    window : str or (str, str)
        ``"START/END"`` or two ISO 8601 dates (at most two years apart).
    parking, system, inclination, max_tof, progress
        As :func:`low_energy_transfer`.

    Returns
    -------
    cr3bp.transfers.low_energy.LaunchWindow
        ``.free`` (the best Sun phase with no date), ``.dates`` (each date of the window that
        brings that phase, or the window's edges), ``.transfers`` (designed, each a
        LowEnergyTransfer), ``.best``, ``.to_dict()`` -- all in the bicircular model.

    Raises
    ------
    InputError
        A malformed window, a window too long or outside the ephemeris, and the refusals of
        :func:`low_energy_transfer`.
    NoSolutionError
        No date of the window gives a transfer.

    Examples
    --------
    The search takes minutes, so only the refusal of a malformed window is run:

    >>> from cr3bp.api import launch_window
    >>> w = launch_window("halo L2 south resonance=9:2",
    ...                   "2027-03-01T00:00:00Z/2027-05-01T00:00:00Z")            # doctest: +SKIP
    >>> w.best.dv_mps > 0                                                          # doctest: +SKIP
    True
    >>> launch_window("halo L2 south resonance=9:2", "2027-03-01")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: window '2027-03-01' must be START/END, two ISO 8601 dates, e.g. 2027-03-01T00:00:00Z/2027-05-01T00:00:00Z

    References
    ----------
    Parker & Anderson, *Low-Energy Lunar Trajectory Design*, 2013, ch. 3 (launch periods);
    see :func:`cr3bp.transfers.low_energy.launch_window`.
    """
    from .errors import shown  # lazy: start-up: keeps cr3bp.api light
    from .orbits.orbit import PeriodicOrbit  # lazy: start-up: keeps cr3bp.api free of numpy
    from .transfers import low_energy as le  # lazy: start-up: keeps cr3bp.api free of numpy
    from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
    sysm = target.system if isinstance(target, PeriodicOrbit) else _as_system(system)
    parts = str(window).split("/") if isinstance(window, str) else list(window)
    if len(parts) != 2 or not all(str(x).strip() for x in parts):
        raise InputError(f"window '{shown(str(window))}' must be START/END, two ISO 8601 dates, e.g. "
                         "2027-03-01T00:00:00Z/2027-05-01T00:00:00Z")
    pk = _parking(parking, sysm) if isinstance(parking, str) else None
    if pk is None or pk[0] != 0:
        raise InputError(f"parking = {parking!r}: give 'parking earth ALTITUDE', e.g. 'parking earth 200km'")
    if not 100.0 <= pk[1] <= 50_000.0:
        raise InputError(f"parking altitude {pk[1]:g} km in {parking!r}; allowed: 100 km to 50000 km")
    tof = float(max_tof) if isinstance(max_tof, (int, float)) else \
        sysm.days(quantity("max_tof", _text(max_tof), "time", sysm, sign="positive", default_unit="d"))
    if not le.MIN_TOF_DAYS < tof <= 200.0:
        raise InputError(f"max_tof = {max_tof!r}; allowed: more than {le.MIN_TOF_DAYS:g} d, at most 200 d")
    t0, t1 = le.window_seconds(str(parts[0]).strip(), str(parts[1]).strip(), sysm)
    orb = target if isinstance(target, PeriodicOrbit) else orbit(sysm, target)
    return le.launch_window(orb, pk[1], t0, t1, inclination_deg=inclination, max_tof_days=tof, progress=progress)


def _angle_deg(name, value):
    """An angle 0..180 deg from degrees (a number) or text with its unit (``28.5deg``, ``0.5rad``)."""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        v = float(value)
    else:
        t = str(value).strip().lower()
        v = math.nan
        for unit, f in (("deg", 1.0), ("°", 1.0), ("rad", 57.29577951308232)):
            if t.endswith(unit):
                try:
                    v = float(t[: -len(unit)]) * f
                except ValueError:
                    pass
                break
    if not 0.0 <= v <= 180.0:
        raise InputError(f"{name} {value!r}: give an angle from 0deg to 180deg (a number: degrees; text with its "
                         "unit, e.g. 28.5deg)")
    return v


def departure(target, parking="parking earth 200km", *, system="earth-moon", path="direct", inclination=None,
              max_tof="150d", min_flyby_altitude="100km", progress=None):
    """The least-Δv departure found from a circular Earth parking orbit to an Earth-Moon periodic
    orbit or quasi-periodic torus, designed by optimisation in the CR3BP (``librate connect
    --path direct`` or ``--path lunar-flyby``).

    Parameters
    ----------
    target : PeriodicOrbit, Torus or str
        The target orbit (or an orbit request), or a torus (from :func:`torus`, or a torus
        request such as ``"quasi-halo around halo L1 north az=10000km amplitude=300km"``; the
        insertion point free over both torus angles; ``path="direct"`` only).
    parking : str
        ``"parking earth ALTITUDE"`` (100 km to 50 000 km).
    system : System or str
        The Earth-Moon system (when ``target`` is a request).
    path : {"direct", "lunar-flyby"}
        Departure burn, coast, insertion burn; or with a powered lunar flyby between them.
    inclination : str or float, optional
        Parking-orbit inclination to the Moon's orbit plane (``"28.5deg"``; a float is in
        degrees), 0 to 180 deg (default: free).
    max_tof : str or float
        Longest time of flight, departure to insertion (default ``"150d"``; a float is in
        days), 1 d to 400 d.
    min_flyby_altitude : str or float
        ``path="lunar-flyby"``: least flyby altitude over the Moon's mean radius (default
        ``"100km"``; a float is in km), above 0 to 20 000 km.
    progress : callable(str), optional
        Messages of the torus solve (a torus request only).

    Returns
    -------
    cr3bp.transfers.departure.Departure
        Immutable: ``.maneuvers``, ``.dv_mps``, ``.departure_dv_mps``, ``.tof_days``,
        ``.c3_km2_s2``, ``.inclination_deg``, ``.flyby_altitude_km``, ``.optimised``,
        ``.to_dict()`` -- all in the CR3BP.

    Raises
    ------
    InputError
        Not a parking orbit about the Earth in the earth-moon system, a value out of range,
        a lunar flyby to a torus.
    NoSolutionError
        No first guess of the search converges.

    Examples
    --------
    >>> import cr3bp.api as api
    >>> dep = api.departure("halo L1 north az=10000km", "parking earth 200km")      # doctest: +SKIP
    >>> round(dep.dv_mps), round(dep.tof_days, 1)                                   # doctest: +SKIP
    (3695, 11.3)
    >>> api.departure("halo L1 north az=10000km", "parking earth 60000km")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: parking altitude 60000 km in 'parking earth 60000km'; allowed: 100 km to 50000 km

    References
    ----------
    Betts, *Practical Methods for Optimal Control and Estimation Using Nonlinear Programming*,
    2010 (direct transcription); Parker & Anderson, *Low-Energy Lunar Trajectory Design*,
    2013, ch. 2 (direct and flyby transfers); see :mod:`cr3bp.transfers.departure` and
    :mod:`cr3bp.tori.departure`.
    """
    from .orbits.orbit import PeriodicOrbit  # lazy: start-up: keeps cr3bp.api free of numpy
    from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
    from .vocabulary import CR3BP_DEPARTURE_PATHS  # lazy: start-up of cr3bp.api (one name, here only)
    _one_of("path", path, CR3BP_DEPARTURE_PATHS)
    sysm = target.system if isinstance(target, PeriodicOrbit) or type(target).__name__ == "Torus" \
        else _as_system(system)
    pk = _parking(parking, sysm) if isinstance(parking, str) else None
    if pk is None or pk[0] != 0 or sysm.name != "earth-moon":
        raise InputError(f"parking = {parking!r}: give 'parking earth ALTITUDE' in the earth-moon system, e.g. "
                         "'parking earth 200km'")
    if not 100.0 <= pk[1] <= 50_000.0:
        raise InputError(f"parking altitude {pk[1]:g} km in {parking!r}; allowed: 100 km to 50000 km")
    tof = float(max_tof) if isinstance(max_tof, (int, float)) else \
        sysm.days(quantity("max_tof", _text(max_tof), "time", sysm, sign="positive", default_unit="d"))
    if not 1.0 <= tof <= 400.0:
        raise InputError(f"max_tof = {max_tof!r}; allowed: 1 d to 400 d")
    inc = None
    if inclination is not None:
        inc = _angle_deg("inclination", inclination)
    fb = float(min_flyby_altitude) if isinstance(min_flyby_altitude, (int, float)) else \
        sysm.km(quantity("min_flyby_altitude", _text(min_flyby_altitude), "length", sysm, sign="positive"))
    if not 0.0 < fb <= 20_000.0:
        raise InputError(f"min_flyby_altitude = {min_flyby_altitude!r}; allowed: above 0 km to 20000 km")
    if _torus_end(target):
        if path != "direct":
            raise InputError(f"path {path!r} to a torus is not built yet; to a torus, path='direct'")
        from .tori import request as treq  # lazy: heavy library (scipy, via cr3bp.tori)
        from .tori.departure import design_torus_departure  # lazy: heavy library (scipy, via cr3bp.tori)
        torus_ = treq.solve(sysm, target, progress=progress) if isinstance(target, str) else target
        return design_torus_departure(torus_, pk[1], inclination_deg=inc, max_tof_days=tof)
    from .transfers.departure import design_departure  # lazy: heavy library (scipy, via cr3bp.transfers)
    orb = target if isinstance(target, PeriodicOrbit) else orbit(sysm, target)
    return design_departure(orb, pk[1], path=path, inclination_deg=inc, max_tof_days=tof,
                            min_flyby_altitude_km=fb)


# ---- routes, export, scenarios ---------------------------------------------------------


def route(system, nodes, start, goal, *, objective="dv", best=1, max_dv=None, max_tof=None,
          min_altitude=None, max_legs=None, through=(), avoid=(), workers=1, catalog=None, tof=None,
          progress=None):
    """The best routes through a transfer graph (``librate route``, without stitching).

    Parameters
    ----------
    system : System or str
    nodes : str or path
        A node list (TOML; format in the user guide, e.g. ``examples/cislunar_nodes.toml``).
    start, goal : str
        Node names, ids, orbit texts, or ``"parking BODY ALTITUDE"``.
    objective : {"dv", "tof"}
    best : int
        How many routes, 1..1000 (default 1).
    max_dv, max_tof, min_altitude : str, optional
        Caps with their unit: ``"1500m/s"``, ``"60d"``, ``"100km"``.
    max_legs : int, optional
    through, avoid : sequence of str
        Nodes a route must pass / must not pass.
    workers : int or None
        Worker processes for the legs (default 1: in this process; None: all cores).
    catalog : str or path, optional
        Leg cache (default: none, every leg is computed).
    tof : str, optional
        Time of flight of targeted legs without their own (``"6d"``).
    progress : callable(done, total, leg), optional

    Returns
    -------
    list of cr3bp.transfers.search.Route
        Best first: ``.nodes``, ``.dv_total_mps`` and ``.tof_days`` (CR3BP); ``.plot(ax)``.

    Raises
    ------
    InputError
        A bad node list, unknown node, start equal to goal, a bad cap.
    NoSolutionError
        No route meets the caps (the message names the binding one).

    Examples
    --------
    >>> import cr3bp
    >>> cr3bp.route("earth-moon", "examples/cislunar_nodes.toml", "leo", "leo")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: start and goal name the same node...

    References
    ----------
    Dijkstra, "A note on two problems in connexion with graphs", *Numer. Math.* 1, 1959,
    applied to paths (Martins, "On a multicriteria shortest path problem", *EJOR* 16, 1984):
    see :mod:`cr3bp.transfers.search`.
    """
    from .catalog import Catalog  # lazy: start-up: keeps cr3bp.api free of numpy
    from .transfers.graph import build_graph  # lazy: heavy library (networkx, via cr3bp.transfers.graph)
    from .transfers.nodes import find_node, load_nodes  # lazy: start-up: keeps cr3bp.api free of numpy
    from .transfers.search import Constraints, best_routes  # lazy: heavy library (networkx, via cr3bp.transfers.search)
    from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
    sysm = _as_system(system)
    nodelist = load_nodes(nodes, sysm)
    src, dst = find_node(nodelist.nodes, str(start)), find_node(nodelist.nodes, str(goal))
    if src.id == dst.id:
        raise InputError(f"start and goal name the same node ({src.name})")
    _one_of("objective", objective, ("dv", "tof"))
    k = _whole("best", best, 1, 1000)
    dv = None if max_dv is None else sysm.mps(quantity("max_dv", _text(max_dv), "velocity", sysm, sign="nonnegative"))
    tmax = None if max_tof is None else sysm.days(quantity("max_tof", _text(max_tof), "time", sysm,
                                                           sign="nonnegative"))
    alt = None if min_altitude is None else sysm.km(quantity("min_altitude", _text(min_altitude), "length", sysm,
                                                              sign="nonnegative"))
    legs = None if max_legs is None else _whole("max_legs", max_legs, 1, 1000)
    if isinstance(through, str) or isinstance(avoid, str):
        raise InputError("through= and avoid= are lists of node names")
    constraints = Constraints(dv, tmax, legs, alt, tuple(find_node(nodelist.nodes, str(t)).id for t in through),
                              tuple(find_node(nodelist.nodes, str(t)).id for t in avoid))
    if workers is not None:
        workers = _whole("workers", workers, 1, 256)
    tof_days = None if tof is None else sysm.days(quantity("tof", _text(tof), "time", sysm, sign="positive"))
    cat = Catalog(catalog) if catalog is not None else None
    try:
        result = build_graph(sysm, nodelist, workers=workers, catalog=cat, progress=progress, tof_days=tof_days)
    finally:
        if cat is not None:
            cat.close()
    return best_routes(result.graph, src.id, dst.id, constraints, objective, k)


def _node_list(nodes, sysm):
    """A loaded node list (cr3bp.transfers.nodes.NodeList) or a node-list file read for ``sysm``."""
    from .transfers.nodes import NodeList, load_nodes  # lazy: start-up: keeps cr3bp.api free of numpy
    return nodes if isinstance(nodes, NodeList) else load_nodes(nodes, sysm)


def _build_settings(sysm, workers, scheduler, tof):
    """The checked ``workers``, ``scheduler`` and ``tof`` (days) of a graph build."""
    from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
    if workers is not None:
        from .validate import workers as _workers  # lazy: start-up: keeps cr3bp.api free of numpy
        workers = _workers("workers", workers)
    if scheduler and workers:
        raise InputError("give workers= or scheduler=, not both")
    tof_days = None if tof is None else sysm.days(quantity("tof", _text(tof), "time", sysm, sign="positive"))
    return workers, scheduler, tof_days


def _with_catalog(catalog, work):
    """``work(open Catalog or None)``: a Catalog is used as given; a path is opened and closed."""
    from .catalog import Catalog  # lazy: start-up: keeps cr3bp.api free of numpy
    if catalog is None or isinstance(catalog, Catalog):
        return work(catalog)
    cat = Catalog(catalog)
    try:
        return work(cat)
    finally:
        cat.close()


def graph(system, nodes, *, workers=None, scheduler=None, catalog=None, tof=None, progress=None):
    """The transfer graph of a node list: every leg computed (or read from a catalogue), the
    pairs pruned with their reason (``librate graph build`` and ``show``).

    Parameters
    ----------
    system : System or str
    nodes : str, path or cr3bp.transfers.nodes.NodeList
        A node list (TOML; format in the user guide, e.g. ``examples/cislunar_nodes.toml``).
    workers : int, optional
        Worker processes (default: all cores; 1: in this process).
    scheduler : str, optional
        A dask.distributed scheduler address instead (needs ``librate[cluster]``).
    catalog : str, path or cr3bp.catalog.Catalog, optional
        Leg cache (default: none, every leg is computed); a path is opened and closed here.
    tof : str, optional
        Time of flight of targeted legs without their own (``"6d"``).
    progress : callable(done, total, leg), optional

    Returns
    -------
    cr3bp.transfers.graph.BuildResult
        ``.graph`` (networkx MultiDiGraph of node ids, each edge carrying its Leg), ``.nodes``,
        ``.legs`` (every attempted leg, CR3BP Δv and times), ``.computed``, ``.cached``,
        ``.pruned``, ``.to_dict()``.

    Raises
    ------
    InputError
        A bad node list, workers and scheduler both given, a bad time of flight.

    Examples
    --------
    >>> import cr3bp.api as api
    >>> g = api.graph("earth-moon", "examples/cislunar_nodes.toml", workers=1)       # doctest: +SKIP
    >>> g.graph.number_of_edges() > 0                                              # doctest: +SKIP
    True
    >>> api.graph("earth-moon", "examples/cislunar_nodes.toml", workers=2, scheduler="tcp://h:8786")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: give workers= or scheduler=, not both

    References
    ----------
    Hagberg, Schult and Swart, "Exploring network structure, dynamics, and function using
    NetworkX", *Proc. SciPy* 2008 (the graph); legs by two-impulse targeting (Betts, *Practical
    Methods for Optimal Control and Estimation Using Nonlinear Programming*, 2010): see
    :mod:`cr3bp.transfers.graph`.
    """
    from .transfers.graph import build_graph  # lazy: heavy library (networkx, via cr3bp.transfers.graph)
    sysm = _as_system(system)
    workers, scheduler, tof_days = _build_settings(sysm, workers, scheduler, tof)
    nodelist = _node_list(nodes, sysm)
    return _with_catalog(catalog, lambda cat: build_graph(sysm, nodelist, workers=workers, scheduler=scheduler,
                                                          catalog=cat, progress=progress, tof_days=tof_days))


def design_route(system, nodes, start, goal, *, objective="dv", best=5, max_dv=None, max_tof=None,
                 min_altitude=None, max_legs=None, through=(), avoid=(), pareto=False, stitch=True,
                 optimise=False, workers=None, scheduler=None, catalog=None, tof=None, progress=None,
                 on_stage=None):
    """The whole route design (``librate route``): the transfer graph built, the routes ranked,
    the Pareto set, the best route stitched into one trajectory, its orbit-to-orbit legs
    optimised.

    Parameters
    ----------
    system : System or str
    nodes : str, path or cr3bp.transfers.nodes.NodeList
    start, goal : str
        Node names, ids, orbit texts, or ``"parking BODY ALTITUDE"``.
    objective : {"dv", "tof"}
    best : int
        How many ranked routes, 1..1000 (default 5).
    max_dv, max_tof, min_altitude : str, optional
        Caps with their unit: ``"800m/s"``, ``"120d"``, ``"100km"``.
    max_legs : int, optional
    through, avoid : sequence of str
    pareto : bool
        Also the Pareto set of Δv against time of flight.
    stitch : bool
        Stitch the best route by multiple shooting (default True).
    optimise : bool
        Also optimise each orbit-to-orbit leg of the best route (beside it, not stitched).
    workers, scheduler, catalog, tof, progress
        As :func:`graph`.
    on_stage : callable(stage, value), optional
        Called with ``("built", BuildResult)``, ``("optimising", None)`` and ``("stitching",
        Route)`` as the design goes.

    Returns
    -------
    cr3bp.transfers.design.TransferDesign
        ``.built`` (the graph build), ``.graph``, ``.routes`` (best first: ``.dv_total_mps``,
        ``.tof_days``, CR3BP), ``.pareto``, ``.stitched`` (or None; ``.not_stitched`` says why),
        ``.optimised``.

    Raises
    ------
    InputError
        A bad node list, unknown node, start equal to goal, a bad cap.
    NoSolutionError
        No route meets the caps (the message names the binding one).

    Examples
    --------
    >>> import cr3bp.api as api
    >>> d = api.design_route("earth-moon", "examples/cislunar_nodes.toml", "leo", "relay")  # doctest: +SKIP
    >>> d.stitched.dv_total_mps > 0                                                    # doctest: +SKIP
    True
    >>> api.design_route("earth-moon", "examples/cislunar_nodes.toml", "leo", "leo")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: start and goal name the same node...

    References
    ----------
    Dijkstra, "A note on two problems in connexion with graphs", *Numer. Math.* 1, 1959;
    Martins, "On a multicriteria shortest path problem", *EJOR* 16, 1984 (Pareto set); Betts,
    *Practical Methods for Optimal Control and Estimation Using Nonlinear Programming*, 2010
    (stitching by multiple shooting): see :mod:`cr3bp.transfers.design`.
    """
    from .transfers.design import design_transfer  # lazy: heavy library (networkx, via cr3bp.transfers.design)
    from .transfers.nodes import find_node  # lazy: start-up: keeps cr3bp.api free of numpy
    from .transfers.search import Constraints  # lazy: heavy library (networkx, via cr3bp.transfers.search)
    from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
    sysm = _as_system(system)
    nodelist = _node_list(nodes, sysm)
    src, dst = find_node(nodelist.nodes, str(start)), find_node(nodelist.nodes, str(goal))
    if src.id == dst.id:
        raise InputError(f"start and goal name the same node ({src.name})")
    _one_of("objective", objective, ("dv", "tof"))
    k = _whole("best", best, 1, 1000)
    dv = None if max_dv is None else sysm.mps(quantity("max_dv", _text(max_dv), "velocity", sysm, sign="nonnegative"))
    tmax = None if max_tof is None else sysm.days(quantity("max_tof", _text(max_tof), "time", sysm,
                                                           sign="nonnegative"))
    alt = None if min_altitude is None else sysm.km(quantity("min_altitude", _text(min_altitude), "length", sysm,
                                                              sign="nonnegative"))
    legs = None if max_legs is None else _whole("max_legs", max_legs, 1, 1000)
    if isinstance(through, str) or isinstance(avoid, str):
        raise InputError("through= and avoid= are lists of node names")
    constraints = Constraints(dv, tmax, legs, alt, tuple(find_node(nodelist.nodes, str(t)).id for t in through),
                              tuple(find_node(nodelist.nodes, str(t)).id for t in avoid))
    workers, scheduler, tof_days = _build_settings(sysm, workers, scheduler, tof)
    return _with_catalog(catalog, lambda cat: design_transfer(
        sysm, nodelist, src, dst, constraints, objective=objective, best=k, pareto=bool(pareto), stitch=bool(stitch),
        on_stage=on_stage, optimise=bool(optimise), workers=workers, scheduler=scheduler, catalog=cat,
        tof_days=tof_days, progress=progress))


def _srp(value):
    """(area-to-mass m2/kg, Cr) from a pair or ``"0.01m2/kg,1.3"``."""
    from .errors import shown  # lazy: start-up: keeps cr3bp.api light
    from .validate import number_in  # lazy: start-up: keeps cr3bp.api free of numpy
    if value is None:
        return None
    if isinstance(value, str):
        parts = [w.strip() for w in value.split(",")]
        if len(parts) != 2 or not parts[0].endswith("m2/kg"):
            raise InputError(f"srp '{shown(value)}' must be AREA_TO_MASS,CR with the unit m2/kg, e.g. 0.01m2/kg,1.3")
        parts[0] = parts[0].removesuffix("m2/kg").strip()
    else:
        parts = list(value)
        if len(parts) != 2:
            raise InputError(f"srp {value!r} must be (area-to-mass m2/kg, reflectivity coefficient)")
    return (number_in("srp area-to-mass", parts[0], 0.0, 100.0),
            number_in("srp reflectivity coefficient", parts[1], 0.0, 2.0))


def _is_route(source):
    return isinstance(source, os.PathLike) or (isinstance(source, str) and os.path.exists(source))


def refine(source, epoch, *, system=None, revs=12, span=None, phase=(0.0, 0.0), bodies="sun,earth,moon",
           central=None, srp=None, patches=7, fix_first=False, fixed_times=False, patch_days=1.0, hold_end=True,
           max_iter=25, progress=None):
    """Carry a CR3BP design into the ephemeris model at an epoch and correct it to a continuous
    trajectory (``librate refine``): a periodic orbit (whole revolutions), an arc on a
    quasi-periodic torus, or a stitched route (its maneuvers re-optimised).

    Parameters
    ----------
    source : PeriodicOrbit, Torus, str or path
        An orbit or an orbit request (``"halo L2 south period=6.5626d"``); a torus or a torus
        request; or a route: the folder written by ``librate route --out`` (or a file in it),
        given as a :class:`pathlib.Path` or as text naming an existing path.
    epoch : str or float
        Date of the first patch point (ISO 8601; Z = UTC, or a trailing TDB/TT/TAI/UTC).
    system : System or str, optional
        Needed for a request or a route (dimensional, with an ephemeris for its primaries).
    revs : int
        Orbit: revolutions, 1..200 (default 12).
    span : str or float
        Torus (required): the arc's length, a time (``"20d"``) or ``"Nperiods"`` (stroboscopic
        periods), at most 200 periods; a float is in TU.
    phase : (float, float)
        Torus: phase of the arc's first state, degrees (theta0 along the stroboscopic period,
        theta1 around the invariance circle).
    bodies : str or sequence of str
        Point masses (default ``"sun,earth,moon"``).
    central : str, optional
        Central body (default: the smaller primary; the Earth for a low-energy route).
    srp : str or (float, float), optional
        Cannonball radiation pressure: ``"0.01m2/kg,1.3"`` or (area-to-mass m2/kg, Cr).
    patches : int
        Orbit and torus: patch points per revolution (per stroboscopic period), 2..64 (default 7).
    fix_first, fixed_times : bool
        Orbit and torus: hold the first patch state; hold the patch times.
    patch_days : float
        Route: one patch segment per this many days of each arc, 0.01..1000 (default 1).
    hold_end : bool
        Route: hold the route's end position (default True).
    max_iter : int
        Newton iterations at most, 1..200 (default 25).
    progress : callable, optional
        Orbit and torus: ``progress(iteration, mismatch)``; route: ``progress(stage, iteration,
        mismatch)``.

    Returns
    -------
    cr3bp.fidelity.transition.Transition or cr3bp.fidelity.route.RouteTransition
        In the ephemeris model: ``.continuity_km``, ``.continuity_mps``, ``.iterations``,
        ``.dv_total_mps``, ``.per_rev`` (orbit, torus) or ``.arcs`` and ``.maneuvers`` (route),
        ``.sample_km``, ``.to_dict()``.

    Raises
    ------
    InputError
        A system without an ephemeris model, a date outside the ephemeris, a bad body list,
        a value out of range, an option of another source.
    ConvergenceError
        Newton's method does not reach continuity.

    Examples
    --------
    >>> import cr3bp.api as api
    >>> tr = api.refine("halo L2 south period=6.5626d", "2031-03-01T00:00:00Z", system="earth-moon",
    ...                 revs=1)                                                        # doctest: +SKIP
    >>> tr.continuity_km < 1e-3                                                        # doctest: +SKIP
    True
    >>> api.refine("halo L2 south period=6.5626d", "2031-03-01T00:00:00Z", system="earth-moon", revs=0)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: revs 0 is outside the allowed range 1..200

    References
    ----------
    Pavlak, PhD thesis, Purdue, 2013, ch. 4 (multiple shooting from the CR3BP into an ephemeris
    model); Folta, Bosanac, Guzzetti and Howell, *Acta Astronautica* 110, 2015 (the transition):
    see :mod:`cr3bp.fidelity.transition`, :mod:`cr3bp.fidelity.torus_arc`, :mod:`cr3bp.fidelity.route`.
    """
    from .fidelity import model as fm  # lazy: heavy library (the ephemeris, via cr3bp.fidelity)
    from .time import frames  # lazy: heavy library (the ephemeris, via cr3bp.time.frames)
    from .validate import number_in  # lazy: start-up: keeps cr3bp.api free of numpy
    torus_ = type(source).__name__ == "Torus" or (isinstance(source, str) and not _is_route(source)
                                                   and _torus_end(source))
    route_ = not torus_ and _is_route(source)
    sysm = _as_system(system) if (route_ or isinstance(source, str)) else source.system
    sysm.require_dimensional("an ephemeris model")
    max_iter = _whole("max_iter", max_iter, 1, 200)
    srp = _srp(srp)
    bodies = fm.parse_bodies(bodies if isinstance(bodies, str) else ",".join(bodies))
    frames.frame(sysm, epoch, anchor="ephemeris", center="secondary")        # the date checked before any work
    if route_:
        from .fidelity.route import read_route, route_launch, transition_route  # lazy: heavy library (scipy)
        days = number_in("patch_days", str(patch_days).lower().removesuffix("d"), 0.01, 1000.0)
        t_tu, states, maneuvers = read_route(source, sysm)
        low_energy = route_launch(source, epoch, sysm)
        return transition_route(sysm, t_tu, states, maneuvers, epoch, bodies,
                                central=central or ("earth" if low_energy else None), srp=srp, patch_days=days,
                                hold_end=bool(hold_end), max_iter=max_iter, progress=progress)
    per = _whole("patches", patches, 2, 64)
    if torus_:
        from .fidelity.torus_arc import MAX_PERIODS, transition_torus_arc  # lazy: heavy library (scipy)
        from .io.export import parse_span  # lazy: start-up: keeps cr3bp.api free of numpy
        from .tori import request as treq  # lazy: heavy library (scipy, via cr3bp.tori)
        if span is None:
            raise InputError("a torus arc needs span= (a time such as '20d', or 'Nperiods')")
        th = [math.radians(float(x)) for x in phase]
        if len(th) != 2 or not all(math.isfinite(x) for x in th):
            raise InputError(f"phase {phase!r} must be two finite angles (theta0, theta1) in degrees")
        if isinstance(span, str):
            parse_span(span, sysm, 1.0)                                      # its form, before the solve
        tor = treq.solve(sysm, source) if isinstance(source, str) else source
        T = tor.stroboscopic_time
        sp = parse_span(span, sysm, T) if isinstance(span, str) else float(span)
        if not (math.isfinite(sp) and sp > 0):
            raise InputError(f"span {span!r} must be a positive time")
        if sp > MAX_PERIODS * T * (1 + 1e-12):
            raise InputError(f"span {span} is {sp / T:.4g} stroboscopic periods; at most {MAX_PERIODS}")
        return transition_torus_arc(tor, epoch, sp, th, bodies, central=central, srp=srp, per_period=per,
                                    fix_first=bool(fix_first), free_times=not fixed_times, max_iter=max_iter,
                                    progress=progress)
    from .fidelity.transition import transition  # lazy: heavy library (scipy, via cr3bp.fidelity)
    n = _whole("revs", revs, 1, 200)
    orb = orbit(sysm, source) if isinstance(source, str) else source
    return transition(orb, epoch, n, bodies, central=central, srp=srp, per_rev=per, fix_first=bool(fix_first),
                      free_times=not fixed_times, max_iter=max_iter, progress=progress)


def _oem_axes(kind, axes):
    if kind in ("oem", "xml") and axes == "rotating":
        raise InputError("OEM needs inertial axes (frame j2000-equator or j2000-ecliptic); use a .csv or .json "
                         "file for the rotating frame")


def trajectory(source, *, epoch=None, span=None, step=None, frame="j2000-equator", center=None, time_system="tdb",
               anchor="ephemeris", orientation=None, object_name="LIBRATE DESIGN", object_id="NONE", system=None,
               period=None, model=None, progress=None):
    """A CR3BP trajectory dated and sampled in a frame: what :func:`export` writes (``librate export``).

    Parameters
    ----------
    source : PeriodicOrbit, sequence of six floats, or cr3bp.io.export.Segment
        A periodic orbit; or an initial rotating-frame state (nondimensional, with ``system=``);
        or rotating states at times (a segment, e.g. read from a file with
        :func:`cr3bp.io.export.read`, with ``system=``): propagated from its first state, or
        without ``step`` its own samples as they are.
    epoch : str or float
        Date of rotating time 0, ISO 8601: ``"2031-03-01T00:00:00Z"`` (Z = UTC) or with a
        trailing TDB, TT, TAI or UTC; or TDB seconds from J2000.
    span : str, optional
        How long: ``"12d"``, ``"36h"``, ``"3periods"`` (default for a segment: its own span).
    step : str, optional
        Output step on the output clock: ``"10min"``, ``"1h"`` (a segment may leave it out).
    frame : {"j2000-equator", "j2000-ecliptic", "rotating"}
    center : str, optional
        ``"earth"``, ``"moon"``, ``"barycenter"`` ... (default: the larger primary).
    time_system : {"tdb", "tt", "tai", "utc"}
    anchor : {"ephemeris", "circular"}
    orientation : cr3bp.time.frames.Orientation, optional
        Circular anchoring: the secondary's orbit plane and phase at the epoch (default: the
        osculating values of the ephemeris).
    object_name, object_id : str
    system : System or str, optional
        The system of a state or a segment (an orbit carries its own).
    period : str or float, optional
        The period of a state or segment (``"14.8177d"`` or TU), so that ``span`` can count
        periods.
    model : dict, optional
        The header lines describing the source (default: from the orbit, the state or the
        period).
    progress : callable(done, total, message), optional
        Told the number of states before they are sampled.

    Returns
    -------
    cr3bp.io.export.Trajectory
        Its frame (``.frame``), segments of times and states, time system, model lines.

    Raises
    ------
    InputError
        A bad epoch, span, step, frame or centre; a state or segment without ``system``; a
        custom system without units.

    Examples
    --------
    >>> import cr3bp.api as api
    >>> em = api.system("earth-moon")
    >>> t = api.trajectory([1.1805031, 0, -0.02, 0, -0.1581343, 0], system=em, period="14.8177d",
    ...                    epoch="2031-03-01T00:00:00Z", span="1d", step="6h", center="moon")
    >>> len(t.segments[0].t_tu), t.frame.center_name
    (5, 'moon')

    References
    ----------
    CCSDS 502.0-B-3, *Orbit Data Messages*, 2023 (the frame and time words); time scales and
    frames as in :mod:`cr3bp.time.scales` and :mod:`cr3bp.time.frames`.
    """
    import numpy as np  # lazy: start-up: keeps cr3bp.api free of numpy
    from .io import export as ex  # lazy: start-up: keeps cr3bp.api free of numpy
    from .time import frames  # lazy: start-up: keeps cr3bp.api free of numpy
    from .validate import plain_text, quantity  # lazy: start-up: keeps cr3bp.api free of numpy
    is_orbit = _is_orbit(source)
    is_segment = isinstance(source, ex.Segment)
    if is_orbit:
        if period is not None:
            raise InputError("period= goes with a state or a segment (an orbit has its own period)")
        sysm = source.system
    else:
        if system is None:
            raise InputError("give system= with a state or a segment (an orbit carries its own)")
        sysm = _as_system(system)
    sysm.require_dimensional("an export in km")
    _one_of("frame", frame, ("j2000-equator", "j2000-ecliptic", "rotating"))
    _one_of("anchor", anchor, ("ephemeris", "circular"))
    ts = _one_of("time_system", str(time_system).lower(), ("tdb", "tt", "tai", "utc")).upper()
    plain_text("object_name", object_name, 100)
    plain_text("object_id", object_id, 100)
    if orientation is not None and anchor != "circular":
        raise InputError("orientation= goes with anchor='circular'")
    if is_orbit:
        period_tu = float(source.period)
        default_model = {"orbit": f"{source.family} {source.point} {source.branch}".strip(),
                         "period": f"{source.period!r} TU = {source.period * sysm.time_days:.9f} d",
                         "jacobi": repr(float(source.jacobi))}
    else:
        default_model = {}
        if not is_segment:
            from .validate import state as _state  # lazy: start-up: keeps cr3bp.api free of numpy
            source = _state(sysm, np.asarray(source, dtype=float))
            default_model["initial state (rotating, nondimensional)"] = ", ".join(repr(float(x)) for x in source)
        period_tu = None
        if isinstance(period, (int, float)) and not isinstance(period, bool):
            period_tu = float(period)
            if not (math.isfinite(period_tu) and period_tu > 0):
                raise InputError(f"period {period!r} must be a positive time (TU)")
        elif period is not None:
            period_tu = quantity("period", _text(period), "time", sysm, sign="positive")
        if period_tu is not None:
            default_model["period"] = f"{period_tu!r} TU = {period_tu * sysm.time_days:.9f} d"
    if span is not None:
        ex.parse_span(str(span), sysm, period_tu)      # '3periods' without a period: said now
    if epoch is None:
        raise InputError("give epoch= (the date of rotating time 0), e.g. '2031-03-01T00:00:00Z'")
    spec = frames.frame(sysm, epoch, anchor=anchor, axes=frame, center=center or "primary",
                        orientation=orientation, time_scale=ts)
    if step is None:
        if not is_segment:
            raise InputError("give step= (e.g. '10min')")
        if span is not None:
            raise InputError("span= needs step= (without a step the segment's own samples are taken)")
        seg = source
    else:
        step_s = float(quantity("step", _text(step), "time", sysm, sign="positive") * sysm.time_s)
        if not step_s > 0:
            raise InputError(f"step {step!r} must be positive")
        if span is None:
            if not is_segment:
                raise InputError("give span= (e.g. '12d' or '3periods')")
            span_tu = float(source.t_tu[-1] - source.t_tu[0])
        else:
            span_tu = ex.parse_span(str(span), sysm, period_tu)
        grid = ex.epoch_grid(spec, ts, span_tu, step_s)
        start = ex.Segment(np.array([float(source.t_tu[0])]), source.states[:1]) if is_segment else source
        if progress is not None:
            progress(0, grid.size, "sampling states")
        seg = ex.sample(sysm, start, grid)
    return ex.Trajectory(spec, (seg,), ts, (), object_name, object_id,
                         default_model if model is None else dict(model))


def export(source, path, *, epoch=None, span=None, step=None, frame="j2000-equator", center=None,
           time_system="tdb", anchor="ephemeris", orientation=None, fmt=None, object_name="LIBRATE DESIGN",
           object_id="NONE", system=None, period=None, model=None, progress=None):
    """Write a periodic orbit as a dated hand-off file: CCSDS OEM, CSV or JSON (``librate export``).

    Parameters
    ----------
    source : PeriodicOrbit, state, Segment or cr3bp.io.export.Trajectory
        What to write: anything :func:`trajectory` takes (then it is dated and sampled with
        the keywords below), or a trajectory it made (written as it is).
    path : str or path
        The file to write (atomically); the format follows its suffix unless ``fmt`` is given.
    epoch : str
        Date of rotating time 0, ISO 8601: ``"2031-03-01T00:00:00Z"`` (Z = UTC) or with a
        trailing TDB, TT, TAI or UTC.
    span : str
        How long: ``"12d"``, ``"36h"``, ``"3periods"``.
    step : str
        Output step on the output clock: ``"10min"``, ``"1h"``.
    frame : {"j2000-equator", "j2000-ecliptic", "rotating"}
    center : str, optional
        ``"earth"``, ``"moon"``, ``"barycenter"`` ... (default: the larger primary).
    time_system : {"tdb", "tt", "tai", "utc"}
    anchor : {"ephemeris", "circular"}
    orientation, system, period, model, progress
        As for :func:`trajectory`.
    fmt : {"oem", "xml", "csv", "json"}, optional
    object_name, object_id : str

    Returns
    -------
    pathlib.Path
        The file written; its header carries the model and the caution.

    Raises
    ------
    InputError
        A bad epoch, span, step, frame or centre; OEM in the rotating frame.

    Examples
    --------
    >>> import cr3bp
    >>> em = cr3bp.system("earth-moon")
    >>> o = cr3bp.orbit(em, "lyapunov L1 jacobi=3.15")
    >>> cr3bp.export(o, "o.oem", epoch="2031-03-01T00:00:00Z", span="1d", step="1h", frame="rotating")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: OEM needs inertial axes (frame j2000-equator or j2000-ecliptic); use a .csv or .json file for the rotating frame

    References
    ----------
    CCSDS 502.0-B-3, *Orbit Data Messages*, 2023 (the OEM); time scales and frames as in
    :mod:`cr3bp.time.scales` and :mod:`cr3bp.time.frames`.
    """
    from .io import export as ex  # lazy: start-up: keeps cr3bp.api free of numpy
    from .validate import output_file  # lazy: start-up: keeps cr3bp.api free of numpy
    if isinstance(source, ex.Trajectory):
        traj = source
        kind = ex.format_of(str(path), fmt)
        _oem_axes(kind, traj.frame.axes)
        output_file("path", str(path))
    else:
        if hasattr(source, "period") and hasattr(source, "system"):
            _system_of(source).require_dimensional("an export in km")
        _one_of("frame", frame, ("j2000-equator", "j2000-ecliptic", "rotating"))
        kind = ex.format_of(str(path), fmt)
        _oem_axes(kind, frame)
        output_file("path", str(path))
        traj = trajectory(source, epoch=epoch, span=span, step=step, frame=frame, center=center,
                          time_system=time_system, anchor=anchor, orientation=orientation, object_name=object_name,
                          object_id=object_id, system=system, period=period, model=model, progress=progress)
    return Path(ex.write(str(path), traj, kind))


def run(scenario, out, *, catalog=None, workers=None, scheduler=None, check_only=False, progress=None,
        reuse=True):
    """Run a scenario file: orbits, checks, transfers, exports, figures, report (``librate run``).

    Parameters
    ----------
    scenario : str or path or cr3bp.scenario.run.Plan
        A scenario (TOML; its format is in the user guide), e.g. ``examples/farlight.toml``, or
        the plan a ``check_only`` call returned.
    out : str or path
        The output folder (created; a folder holding another run's files is refused).
    catalog : str or path, optional
        The orbit catalogue (default: the per-user one, ``$LIBRATE_CATALOG``).
    workers : int, optional
        Worker processes for the transfer legs (default: the scenario's setting).
    scheduler : str, optional
        Address of a dask.distributed scheduler for the transfer legs.
    check_only : bool
        Check the scenario and the output folder, write nothing, and return the checked plan
        (``.name``, ``.orbit_specs``, ``.data``), which a later call may run.
    progress : callable(str), optional
        One line per step.
    reuse : bool, optional
        When ``out`` holds a finished run of the same scenario bytes, code and package versions
        whose every file is unchanged (SHA-256 against its manifest), report that run instead
        of computing it again (default True; :mod:`cr3bp.scenario.reuse`). False runs again.
        Not with ``check_only`` or a checked plan.

    Returns
    -------
    cr3bp.scenario.run.RunResult or cr3bp.scenario.reuse.ReusedRun
        ``.report``, ``.manifest``, ``.files``, ``.orbits``, ``.checks``, ``.reused``;
        ``.to_dict()``. A reused run's orbits and checks are the stored records. With
        ``check_only``: the checked :class:`cr3bp.scenario.run.Plan`.

    Raises
    ------
    InputError
        Every problem of the scenario, one line each (``.problems``), before anything is written.

    Examples
    --------
    >>> import cr3bp
    >>> cr3bp.run("no-such-file.toml", "out")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: ...no-such-file.toml...

    References
    ----------
    The scenario format: the user guide's scenario page (generated from
    :mod:`cr3bp.scenario.schema`).
    """
    if workers is not None:
        workers = _whole("workers", workers, 1, 256)
    if reuse and not check_only and isinstance(scenario, (str, os.PathLike)):
        # before the run's heavy imports: an unchanged rerun costs hashing only
        from .scenario.reuse import try_reuse  # lazy: start-up: keeps cr3bp.api light
        if catalog is not None and not str(catalog).strip():
            raise InputError("the catalogue path is empty; give a file path")
        earlier = try_reuse(scenario, out)
        if earlier is not None:
            return earlier
    from .catalog import Catalog, default_path  # lazy: start-up: keeps cr3bp.api free of numpy
    from .scenario import run as mission  # lazy: start-up: keeps cr3bp.api free of numpy
    plan = scenario if isinstance(scenario, mission.Plan) else mission.prepare(scenario)
    mission.check_output_folder(out, plan.path, default_path() if catalog is None else catalog,
                                mission.planned_files(plan.data))
    if check_only:
        return plan
    # an empty path is given, not left out: the catalogue refuses it
    return mission.run(plan, out, catalog=None if catalog is None else Catalog(catalog), workers=workers,
                       scheduler=scheduler, progress=progress)


# ---- tori and operations at a date -----------------------------------------------------

def torus(orbit=None, amplitude=None, *, hold="jacobi", lissajous=None, members=None, progress=None,
          catalog=None):
    """A quasi-periodic invariant torus about a periodic orbit, or a Lissajous torus (``librate torus``).

    Parameters
    ----------
    orbit : PeriodicOrbit, optional
        The orbit the torus surrounds (with ``amplitude``).
    amplitude : str or float, optional
        The torus's size about the orbit: ``"2000km"`` or LU (at most 0.2 LU).
    hold : {"jacobi", "rotation", "period"}
        What is held fixed while the torus grows (default the Jacobi constant).
    lissajous : tuple, optional
        Instead of an orbit: ``(system, "L2", ay, az)`` with the amplitudes as lengths
        (``"5000km"``).
    members : int, optional
        Continue a family of this many tori (1..500) from the first.
    progress : callable, optional
    catalog : cr3bp.catalog.Catalog, optional
        Read the torus and the family members from it when computed before, else keep them
        there as they converge (an interrupted family resumes: :mod:`cr3bp.tori.store`).

    Returns
    -------
    cr3bp.tori.torus.Torus or cr3bp.tori.family.TorusFamily
        Its invariance circle, rotation number, stroboscopic time; ``.to_dict()``.

    Raises
    ------
    InputError
        Neither or both of an orbit and ``lissajous``; an amplitude that is not a positive
        length or is over 0.2 LU.
    ConvergenceError

    Examples
    --------
    >>> import cr3bp
    >>> cr3bp.torus()
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: give an orbit with amplitude=, or lissajous=(system, point, ay, az)

    References
    ----------
    Gómez and Mondelo, *Physica D* 157, 2001, §3; Olikara and Scheeres, AAS 12-361, 2012,
    eqs. 9-14 (the invariance circle); Baresi, Olikara and Scheeres (the continuation): see
    :mod:`cr3bp.tori`.
    """
    if (orbit is None) == (lissajous is None):
        raise InputError("give an orbit with amplitude=, or lissajous=(system, point, ay, az)")
    _one_of("hold", hold, ("jacobi", "rotation", "period"))
    if members is not None:
        members = _whole("members", members, 1, 500)
    if lissajous is not None:
        from .tori.lissajous import lissajous as _lissajous  # lazy: start-up: keeps cr3bp.api free of numpy
        if not (isinstance(lissajous, tuple) and len(lissajous) == 4):
            raise InputError("lissajous= is (system, point, ay, az), e.g. (em, 'L2', '5000km', '8000km')")
        sysm, point, ay, az = lissajous
        sysm = _as_system(sysm)
        point = str(point).upper()
        if point not in ("L1", "L2"):
            raise InputError(f"Lissajous point {lissajous[1]!r}: allowed L1, L2")
        from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
        ay_lu = quantity("Lissajous amplitude ay", _text(ay), "length", sysm, sign="positive",
                         default_unit="km")
        az_lu = quantity("Lissajous amplitude az", _text(az), "length", sysm, sign="positive",
                         default_unit="km")
        t = _lissajous(sysm, point, ay_lu, az_lu, progress=progress, catalog=catalog)
    else:
        from .tori import torus_around  # lazy: start-up: keeps cr3bp.api free of numpy
        sysm = _system_of(orbit)
        if amplitude is None:
            raise InputError("a torus about an orbit needs amplitude= (e.g. '2000km')")
        amp = length(_text(amplitude), sysm, default_unit="km")
        if not amp > 0:
            raise InputError(f"amplitude {amplitude!r} must be a positive length")
        if amp > 0.2:
            raise InputError(f"amplitude {amplitude!r} is larger than 0.2 of the distance between the primaries; "
                             "tori that large are not attempted")
        from .tori.store import cached_torus  # lazy: start-up: keeps cr3bp.api free of numpy
        key = {"kind": "around orbit", "state": [float(v) for v in orbit.state],
               "period": float(orbit.period), "family": orbit.family, "amplitude_lu": amp,
               "hold": hold}
        t = cached_torus(catalog, sysm, orbit.point, key,
                         lambda: torus_around(orbit, amp, hold=hold, progress=progress))
    if members is None:
        return t
    from .tori import continue_family  # lazy: start-up: keeps cr3bp.api free of numpy
    return continue_family(t, hold=hold, members=members, progress=progress, catalog=catalog)


def shadow(orbit, epoch, *, span="365d", step="5min", phase=0.0, bodies=("earth", "moon"),
           avoid_eclipses=False, phases=36, max_eclipse=None, torus_phase=(0.0, 0.0)):
    """Eclipse passes of a periodic orbit or a torus trajectory placed at a date (``librate shadow``).

    The CR3BP orbit (or the trajectory on a torus from ``torus_phase``) is placed at ``epoch``
    by the ephemeris-anchored rotating frame (J2000 mean equator, Earth-centred); shadows are
    conical, from the project's ephemeris of the Sun and Moon. With ``avoid_eclipses`` the
    start is scanned over ``phases`` phases of one period (``librate shadow --avoid-eclipses``:
    the same scan, the same ranking).

    Parameters
    ----------
    orbit : PeriodicOrbit or Torus
        An Earth-Moon or Sun-Earth orbit or torus (:func:`cr3bp.torus`).
    epoch : str
        Date of rotating time 0, ISO 8601 (``"2031-03-01T00:00:00Z"``).
    span : str
        How long: a time (``"365d"``) or ``"Nperiods"`` (stroboscopic times for a torus).
    step : str
        Search step, 10 s to 1 h (default ``"5min"``).
    phase : str or float
        Phase of the orbit at the epoch: ``"120deg"``, ``"0.25rev"`` or degrees (for a torus:
        the start moved along the flow by that fraction of the stroboscopic time).
    bodies : sequence of {"earth", "moon"}
        The occulting bodies.
    avoid_eclipses : bool
        Scan ``phases`` phases evenly over one period instead of ``phase``.
    phases : int
        Phases of the scan, 1..720.
    max_eclipse : str, optional
        With ``avoid_eclipses``: phases whose longest pass is at most this time (``"90min"``)
        rank first.
    torus_phase : (float, float)
        For a torus: ``(theta0, theta1)`` at the epoch, degrees.

    Returns
    -------
    cr3bp.operations.phasing.History or list of History
        One history (``.passes``, each with ``.to_dict()``: body, kind, start and end UTC,
        duration, depth; ``.total_min()``, ``.longest_min()``); with ``avoid_eclipses`` the
        scan's histories, best first (``[0].phase_deg`` the phase chosen).

    Raises
    ------
    InputError
        Not Earth-Moon or Sun-Earth, a step outside 10 s..1 h, unknown bodies, an epoch outside
        the ephemeris tables, ``max_eclipse`` without ``avoid_eclipses``.

    Examples
    --------
    >>> import cr3bp
    >>> o = cr3bp.orbit("earth-moon", "lyapunov L1 jacobi=3.15")
    >>> cr3bp.shadow(o, "2031-03-01T00:00:00Z", step="1s")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: step '1s' is 1 s; allowed 10 s to 1 h

    References
    ----------
    Montenbruck and Gill, *Satellite Orbits*, 2000, §3.4.2 (conical shadow model).
    """
    from .io import export as ex  # lazy: start-up: keeps cr3bp.api free of numpy
    from .operations import eclipses, phasing, placement  # lazy: start-up: keeps cr3bp.api free of numpy
    from .time import frames  # lazy: start-up: keeps cr3bp.api free of numpy
    from .validate import finite_number, numbers  # lazy: start-up: keeps cr3bp.api free of numpy
    sysm = _system_of(orbit)
    sysm.require_dimensional("eclipses at a date")
    if sysm.name not in ("earth-moon", "sun-earth"):
        raise InputError(f"system {sysm.name}: eclipses are computed for earth-moon and sun-earth only")
    bodies = tuple(str(b).strip().lower() for b in bodies)
    if not bodies or any(b not in eclipses.BODIES for b in bodies) or len(set(bodies)) != len(bodies):
        raise InputError(f"bodies {bodies!r}: allowed earth, moon or both")
    q = units.parse(str(step), "time")
    step_s = q.nondim(sysm) * sysm.time_s if q.unit == "TU" else q.si()
    if not 10.0 <= step_s <= 3600.0:
        raise InputError(f"step '{step}' is {step_s:g} s; allowed 10 s to 1 h")
    phase_deg = (placement.parse_phase(phase) if isinstance(phase, str)
                 else finite_number("phase (degrees)", phase))
    n_phases = _whole("phases", phases, 1, 720)
    max_min = None
    if max_eclipse is not None:
        if not avoid_eclipses:
            raise InputError("max_eclipse goes with avoid_eclipses=True")
        mq = units.parse(_text(max_eclipse), "time")
        max_min = (mq.nondim(sysm) * sysm.time_s if mq.unit == "TU" else mq.si()) / 60.0
        if not max_min >= 0:
            raise InputError(f"max_eclipse '{max_eclipse}' must be zero or positive")
    is_torus = hasattr(orbit, "stroboscopic_time") and getattr(orbit, "circle", None) is not None
    tphase = numbers("torus_phase", torus_phase, 2, "THETA0,THETA1 (degrees)")
    period = float(orbit.stroboscopic_time if is_torus else orbit.period)
    t0 = frames.epoch_from_text(epoch)
    span_s = ex.parse_span(str(span), sysm, period) * sysm.time_s
    if span_s > 20 * 365.25 * 86400.0:
        raise InputError(f"span '{span}' is longer than 20 years")
    placed = (placement.place_torus(sysm, orbit, t0, span_s / sysm.time_s, tphase) if is_torus
              else placement.place(sysm, orbit, t0))
    sk = phasing.sky(placed, span_s, step_s)
    if avoid_eclipses:
        return phasing.scan(placed, sk, n_phases, max_min, bodies)
    return phasing.history(placed, sk, phase_deg, bodies)


def keep(orbit, epoch, *, span="365d", trials=200, nav_error=(1.0, 0.01), burn_error=(0.01, 0.001),
         min_burn_mps=0.0, bodies=("sun", "earth", "moon"), target_revs=4, interval=None, hold_phase=False,
         seed=0, workers=None, progress=None, policy="crossing"):
    """Station-keeping Δv budget of an orbit carried into the ephemeris model (``librate keep``).

    A Monte Carlo of navigation and burn errors about a reference trajectory solved in the
    ephemeris model (point masses of ``bodies``); all Δv in the ephemeris model.

    Parameters
    ----------
    orbit : PeriodicOrbit
    epoch : str
        Date of the reference's start, ISO 8601.
    span : str
        Span maintained: ``"365d"`` or ``"Nperiods"``.
    trials : int
        Monte Carlo trials, 1..100000.
    nav_error : (float, float)
        Navigation error, 1-sigma per axis: position km, velocity m/s.
    burn_error : (float, float)
        Execution error, 1-sigma per axis: proportional (fraction, 0.01 = 1 %), fixed m/s.
    min_burn_mps : float
        Planned burns smaller than this are skipped.
    bodies : sequence of str
    target_revs : int
        Revolutions from a maneuver to the crossing it targets, 1..10.
    interval : str, optional
        A maneuver every TIME (``"7d"``) instead of once a revolution.
    hold_phase : bool
    seed : int
    workers : int, optional
    progress : callable(str), optional
    policy : {"crossing", "floquet"}
        The control: x-axis crossing control (default; ``target_revs`` and ``hold_phase`` are
        its options) or Floquet-mode control (the unstable mode's component cancelled).

    Returns
    -------
    cr3bp.operations.keeping.Budget
        ``.summary()`` (Δv per year and per maneuver), ``.to_dict()``.

    Raises
    ------
    InputError
        Values outside the ranges above; a span shorter than a revolution without ``interval``.

    Examples
    --------
    >>> import cr3bp
    >>> o = cr3bp.orbit("earth-moon", "lyapunov L1 jacobi=3.15")
    >>> cr3bp.keep(o, "2031-03-01T00:00:00Z", trials=0)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: trials 0 is outside the allowed range 1..100000

    References
    ----------
    x-axis crossing control after Davis, Guzzetti et al., AAS 17-269, 2017, and Guzzetti,
    Zimovan, Howell and Davis, AAS 17-395, 2017; the crossing condition of Howell and
    Pernicka, *J. Guidance* 16(1), 1993 (all from memory; see :mod:`cr3bp.operations.keeping`).
    Floquet-mode control after Simó, Gómez, Llibre and Martínez, ESA SP-255, 1986, and Howell
    and Gordon, *J. Astronautical Sciences* 42(2), 1994 (from memory).
    """
    from .io import export as ex  # lazy: start-up: keeps cr3bp.api free of numpy
    from .operations import keeping  # lazy: start-up: keeps cr3bp.api free of numpy
    from .validate import finite_number, quantity  # lazy: start-up: keeps cr3bp.api free of numpy
    trials = _whole("trials", trials, 1, 100000)
    target_revs = _whole("target_revs", target_revs, 1, 10)
    seed = _whole("seed", seed, 0, 999999999999)
    if workers is not None:
        workers = _whole("workers", workers, 1, 256)
    sysm = _system_of(orbit)
    sysm.require_dimensional("an ephemeris model")
    try:
        pos_km, vel_mps = (finite_number("nav_error", v) for v in nav_error)
        prop, fixed_mps = (finite_number("burn_error", v) for v in burn_error)
    except (TypeError, ValueError):
        raise InputError("nav_error is (km, m/s) and burn_error is (fraction, m/s)") from None
    if not (0 <= pos_km <= 1e5 and 0 <= vel_mps <= 1000 and 0 <= prop <= 1 and 0 <= fixed_mps <= 1000):
        raise InputError(f"nav_error {nav_error!r} or burn_error {burn_error!r} is outside the allowed ranges "
                         "(0..100000 km, 0..1000 m/s, 0..1, 0..1000 m/s)")
    errors = keeping.Errors(pos_km, vel_mps, prop, fixed_mps)
    span_tu = ex.parse_span(str(span), sysm, float(orbit.period))
    revs = span_tu / float(orbit.period)
    if revs + target_revs + 2 > keeping.MAX_REVS:
        raise InputError(f"span '{span}' is {revs:.1f} revolutions; with target_revs {target_revs} at most "
                         f"{keeping.MAX_REVS - target_revs - 3}")
    interval_tu = None
    if interval is not None:
        interval_tu = quantity("interval", _text(interval), "time", sysm, sign="positive")
        if not 0.05 * orbit.period <= interval_tu <= span_tu:
            raise InputError(f"interval '{interval}' must be between 5 % of the period and the span")
    elif revs < 1.0:
        raise InputError(f"span '{span}' is shorter than one revolution; lengthen it or give interval=")
    return keeping.budget(orbit, epoch, span_tu, errors, trials, seed=seed, min_burn_mps=min_burn_mps,
                          bodies=tuple(bodies), target_revs=target_revs, interval_tu=interval_tu,
                          hold_phase=hold_phase, policy=str(policy), workers=workers, progress=progress)
