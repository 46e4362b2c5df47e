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
from dataclasses import dataclass, replace
from pathlib import Path

from .errors import InputError, LibrateError
from .vocabulary import TUBE_BRANCHES
from . import units
from .systems import System, system as _system
from .units import length

__all__ = ["system", "points", "orbit", "orbit_request", "family", "manifold", "section", "connect", "optimise", "route",
           "trajectory", "export", "run", "torus", "shadow", "keep", "disperse", "propagate_state", "zvc",
           "catalog_list", "catalog_show", "catalog_remove", "read_trajectory", "atlas", "torus_atlas", "shadow_along",
           "departure", "return_transfer", "low_energy_transfer", "launch_window", "graph", "design_route",
           "refine"]


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
             step_off=None, progress=None, origin=None, workers=None, scheduler=None):
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
    workers : int, optional
        Propagate a periodic orbit's or a torus's tube in pieces over this many worker processes
        (default: here, on the compiled kernels' threads); the result is the same bit for bit.
    scheduler : str or distributed.Client, optional
        Or on a dask.distributed scheduler: an address, ``"local"`` / ``"local:N"`` (a local
        cluster started and stopped here), or a client.

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
    runner = _piece_runner(workers, scheduler, orbit)
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
                               origin=origin, runner=runner)
    return grow_tube(orbit, stability, branch, int(points), stop, spacing=spacing, step_km=step_off,
                     progress=progress, origin=origin, runner=runner)


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
            step_off=None, label=None, origin=None, progress=None, workers=None, scheduler=None):
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
    workers : int, optional
        Propagate a periodic orbit's or a torus's tube in pieces over this many worker processes
        (default: here, on the compiled kernels' threads); the result is the same bit for bit.
    scheduler : str or distributed.Client, optional
        Or on a dask.distributed scheduler: an address, ``"local"`` / ``"local:N"`` (a local
        cluster started and stopped here), or a client.

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
    runner = _piece_runner(workers, scheduler, tube.orbit if isinstance(tube, Tube) else tube,
                           apsis=sec.kind == "apsis")
    t_max = 2 * math.pi
    if time is not None:
        from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
        t_max = quantity("time", _text(time), "time", sysm, sign="positive", default_unit="TU")
    if grown_here:
        if stability is None:
            raise InputError("cutting an orbit's tube needs stability= ('stable' or 'unstable')")
        return _cut(tube, _one_of("stability", stability, ("stable", "unstable")),
                    _one_of("branch", branch, TUBE_BRANCHES), _whole("points", points, 2, 100_000), sec,
                    crossing, t_max, step_off, label, origin, progress, runner)
    if sec.kind == "apsis":
        raise InputError(f"section {where!r}: an apsis map is drawn by cr3bp.connect with a parking orbit")
    if tube.stop.section == sec and tube.stop.count == crossing and time is None:
        return _labelled(tube.section_cut(), label)
    if tube.orbit is None:
        raise InputError("this tube does not carry its orbit; grow it with cr3bp.manifold")
    grown = grow_tube(tube.orbit, tube.stability, tube.branch, tube.n, Stop(sec, crossing, t_max),
                      spacing=tube.spacing, step_km=tube.step_km if math.isfinite(tube.step_km) else None,
                      origin=tube.origin, progress=progress, runner=runner)
    return _labelled(grown.section_cut(), label)


def _labelled(cut, label):
    return cut if label is None else type(cut)(**{**cut.__dict__, "label": label})


def _cut(source, stability, branch, n, sec, crossing, t_max, step_off, label, origin, progress, runner=None):
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
                     progress=progress, origin=origin, **({"runner": runner} if runner is not None else {}))
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
            progress=None, full=False, on_map=None, match="position"):
    """Legs between two periodic orbits, or a parking orbit and a periodic orbit, or with a
    quasi-periodic torus at one end or both (``librate connect``).

    Parameters
    ----------
    origin, target : PeriodicOrbit, Torus or str
        An orbit (from :func:`orbit`), an orbit request, ``"parking BODY ALTITUDE"``
        (``"parking moon 100km"``) at one end, or a torus (from :func:`torus`) or torus request
        (``"quasi-halo around halo L1 north az=10000km amplitude=300km"``): the unstable manifold
        of the first joined to the stable manifold of the second on ``section`` (a position
        plane; :mod:`cr3bp.tori.connections`; 100 trajectories per manifold by default). A
        parking orbit and a hyperbolic torus: the torus's stable (arrival) or unstable
        (departure) manifold through its first periapsis at the parking altitude
        (:mod:`cr3bp.tori.parking`), as for an orbit.
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
        of a parking-orbit leg (a :class:`cr3bp.tori.parking.TorusPeriapsisMap` for a torus;
        else None).
    on_map : callable(PeriapsisMap), optional
        Parking-orbit leg: called with the periapsis map before the legs are searched, so a
        figure of it can show why none is found (``librate connect --map``).
    match : {"position", "state"}
        Two tori: match the in-section positions (default) or positions and velocities, a
        heteroclinic connection where the two manifolds' cuts meet (tori of one Jacobi
        constant; :func:`cr3bp.tori.connections.connect_torus_to_torus`). Other ends: only
        ``"position"``.

    Returns
    -------
    list of cr3bp.transfers.leg.Leg
        Best first: ``.dv_mps`` (CR3BP), ``.tof_days``, ``.segments``, ``.to_dict()``
        (with ``full=True``: the tuple above).

    Raises
    ------
    InputError
        Both ends parking orbits, a malformed request or section, a parking orbit and a torus
        that is not hyperbolic.
    NoSolutionError
        The tubes do not meet on the section; no periapsis reaches the parking altitude.

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
    _one_of("match", match, ("position", "state"))
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
    if match != "position" and not (ta and tb):
        raise InputError(f"match {match!r} joins two tori (their manifolds' cuts are surfaces); between "
                         "other ends the patch matches positions: match='position'")
    if ta or tb:
        if within_km is not None:
            raise InputError(f"arrival_within {arrival_within!r} measures the approach to an arrival periodic "
                             "orbit; it does not apply to a leg with a torus")
        if pa or pb:
            legs, pm = _torus_parking(target if tb else origin, pa or pb, bool(pa), sysm, points, step_off,
                                      t_max, candidates, to_branch if pa else from_branch, progress, on_map)
            return (legs, [], pm) if full else legs
        legs = _connect_tori(origin, target, ta, tb, pa, pb, sysm, _orbit, section, points, step_off, t_max,
                             candidates, from_branch, to_branch, crossing, match)
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


def _torus_parking(end, parking, arrive, sysm, points, step_off, t_max, candidates, branch, progress, on_map):
    """:func:`connect` between a parking orbit and a torus (:mod:`cr3bp.tori.parking`): the
    torus's stable manifold to arrive (``arrive``), its unstable one to leave; ``(legs, map)``."""
    from .tori import request as treq  # lazy: heavy library (scipy, via cr3bp.tori)
    from .tori.manifolds import describe  # lazy: heavy library (scipy, via cr3bp.tori)
    from .tori.parking import not_hyperbolic, torus_parking_legs, torus_periapsis_map  # lazy: heavy library (scipy, via cr3bp.tori)
    primary, alt = parking
    torus_ = treq.solve(sysm, end) if isinstance(end, str) else end
    why = not_hyperbolic(torus_.stability, "parking orbit through a periapsis")
    if why:
        raise InputError(f"the torus '{end if isinstance(end, str) else describe(torus_)}' is {why}")
    stability = "stable" if arrive else "unstable"
    branch = branch or ("interior" if primary == 1 else "exterior")
    n = points or 100
    pm = torus_periapsis_map(torus_, primary, stability, branch, n, t_max=t_max, step_km=step_off,
                             progress=progress)
    if on_map is not None:
        on_map(pm)
    return torus_parking_legs(torus_, primary, alt, stability=stability, branch=branch, n_points=n, t_max=t_max,
                              step_km=step_off, max_legs=candidates, pmap=pm), pm


def _connect_tori(origin, target, ta, tb, pa, pb, sysm, as_orbit, section, points, step_off, t_max,
                  candidates, from_branch, to_branch, crossing, match="position"):
    """:func:`connect` with a torus at one end or both (:mod:`cr3bp.tori.connections`)."""
    from .tori import connections as tc  # lazy: heavy library (scipy, via cr3bp.tori)
    from .tori import request as treq  # lazy: heavy library (scipy, via cr3bp.tori)
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
        legs = tc.connect_torus_to_torus(a, b, str(section), match=match, **kw)
    elif ta:
        legs = tc.connect_torus_to_orbit(a, b, str(section), **kw)
    else:
        legs = tc.connect_orbit_to_torus(a, b, str(section), **kw)
    return legs[:candidates]


def optimise(origin, target, *, system=None, impulses=3, max_tof=None, start="patch", section="x=1-mu",
             points=None, crossing=1, time=None, step_off=None, progress=None):
    """The least-Δv transfer between two periodic orbits, or two quasi-periodic tori, with two
    or three impulses (``librate connect --optimise``).

    Parameters
    ----------
    origin, target : PeriodicOrbit, Torus or str
        The departure and arrival orbits (orbit requests as for :func:`orbit`), or two tori
        (from :func:`torus`, or torus requests as for :func:`torus`): then each end adds its
        two torus angles to the unknowns, and the patch start is the heteroclinic connection
        of :func:`connect` with ``match="state"`` where the manifolds' cuts meet (tori of one
        Jacobi constant), else the position-matched patch; no sweep.
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
        A parking orbit at either end, an impulse count other than 2 or 3, a bad cap, a torus
        at one end only, ``start="sweep"`` between tori.
    NoSolutionError
        No start: the tubes do not meet and no two-impulse leg of the sweep converged (tori:
        no patch converged).

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
        if isinstance(end, PeriodicOrbit) or type(end).__name__ == "Torus":
            sysm = end.system
    if sysm is None:
        if system is None:
            raise InputError("give system= when neither end is a PeriodicOrbit or Torus")
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
    ta, tb = _torus_end(origin), _torus_end(target)
    if ta != tb:
        raise InputError(f"optimise joins two periodic orbits or two tori; got a torus at the "
                         f"{'departure' if ta else 'arrival'} end only")
    if ta and start == "sweep":
        raise InputError("start 'sweep' joins periodic orbits; between two tori the optimiser starts from "
                         "their manifold patch (start='patch' or a Leg from cr3bp.connect)")
    cap = None if max_tof is None else quantity("max_tof", _text(max_tof), "time", sysm, sign="positive",
                                                default_unit="TU")
    t_max = 2 * math.pi if time is None else quantity("time", _text(time), "time", sysm, sign="positive",
                                                      default_unit="TU")
    crossing = _whole("crossing", crossing, 1, 1000)
    if points is not None:
        points = _whole("points", points, 2, 100_000)
    if ta:
        return _optimise_tori(origin, target, sysm, given, cap, impulses, section, points, t_max, step_off,
                              progress)
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


def _optimise_tori(origin, target, sysm, given, cap, impulses, section, points, t_max, step_off, progress):
    """:func:`optimise` between two tori: from the heteroclinic patch where the manifolds' cuts
    meet (``match="state"``), else from the position-matched patch."""
    from .errors import ConvergenceError, NoSolutionError  # lazy: start-up (keeps cr3bp.api free of numpy)
    from .tori import request as treq  # lazy: heavy library (scipy, via cr3bp.tori)
    from .transfers.optimise import optimise_transfer, start_from_leg  # lazy: start-up (keeps cr3bp.api free of numpy)
    a, b = (treq.solve(sysm, e) if isinstance(e, str) else e for e in (origin, target))
    if given is None:
        legs, why = None, ""
        for match in ("state", "position"):
            try:
                legs = connect(a, b, section=section, points=points, time=t_max, step_off=step_off, match=match)
                break
            except (NoSolutionError, ConvergenceError) as e:
                why = str(e)
        if legs is None:
            raise NoSolutionError(f"no manifold patch between the two tori to start from: {why}")
        given = legs[0]
    return optimise_transfer(a, b, start_from_leg(given), impulses=impulses, max_tof=cap, progress=progress)


# ---- routes, export, scenarios ---------------------------------------------------------

def low_energy_transfer(target, parking="parking earth 200km", *, system="earth-moon", epoch=None,
                        inclination=None, max_tof="130d", progress=None):
    """A low-energy (ballistic) transfer with the Sun's pull from an Earth parking orbit to an
    Earth-Moon periodic orbit or quasi-periodic torus, designed in the bicircular model
    (``librate connect --path low-energy``).

    Parameters
    ----------
    target : PeriodicOrbit, Torus or str
        The target orbit, or a request (``"halo L2 south resonance=9:2"``); or a torus (from
        :func:`torus`, or a torus request such as ``"quasi-halo around halo L2 south
        resonance=9:2 amplitude=300km"``: the insertion point free over both torus angles,
        :mod:`cr3bp.tori.low_energy`).
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
        bicircular model. To a torus, ``.orbit`` is the torus and ``.details["torus_phase_deg"]``
        the insertion's two torus angles.

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
    >>> tq = low_energy_transfer("quasi-halo around halo L2 south resonance=9:2 amplitude=300km")  # doctest: +SKIP
    >>> len(tq.details["torus_phase_deg"])                                           # doctest: +SKIP
    2
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
    torus_end = _torus_end(target)
    sysm = target.system if isinstance(target, PeriodicOrbit) or type(target).__name__ == "Torus" \
        else _as_system(system)
    pk = _parking(parking, sysm) if isinstance(parking, str) else None
    if pk is None or pk[0] != 0:
        raise InputError(f"parking = {parking!r}: give 'parking earth ALTITUDE', e.g. 'parking earth 200km'")
    if not 100.0 <= pk[1] <= 50_000.0:
        raise InputError(f"parking altitude {pk[1]:g} km in {parking!r}; allowed: 100 km to 50000 km")
    tof = float(max_tof) if isinstance(max_tof, (int, float)) else \
        sysm.days(quantity("max_tof", _text(max_tof), "time", sysm, sign="positive", default_unit="d"))
    if not MIN_TOF_DAYS < tof <= 200.0:
        raise InputError(f"max_tof = {max_tof!r}; allowed: more than {MIN_TOF_DAYS:g} d, at most 200 d")
    if torus_end:
        from .tori import request as treq  # lazy: heavy library (scipy, via cr3bp.tori)
        from .tori.low_energy import design_torus_low_energy  # lazy: heavy library (scipy, via cr3bp.tori)
        from .transfers.low_energy import check_inputs  # lazy: start-up: keeps cr3bp.api free of numpy
        check_inputs(sysm, pk[1], epoch=epoch, inclination_deg=inclination, max_tof_days=tof)  # before the solve
        torus_ = treq.solve(sysm, target, progress=progress) if isinstance(target, str) else target
        return design_torus_low_energy(torus_, pk[1], epoch=epoch, inclination_deg=inclination, max_tof_days=tof,
                                       progress=progress)
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


def _angle_deg(name, value, lo=0.0, hi=180.0):
    """An angle ``lo``..``hi`` deg (default 0..180) from degrees (a number) or text with its unit
    (``28.5deg``, ``0.5rad``)."""
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
    if not lo <= v <= hi:
        raise InputError(f"{name} {value!r}: give an angle from {lo:g}deg to {hi:g}deg (a number: degrees; text "
                         "with its unit, e.g. 28.5deg)")
    return v


def departure(target, parking="parking earth 200km", *, system="earth-moon", path="direct", inclination=None,
              max_tof=None, min_flyby_altitude="100km", progress=None, epoch=None, equator_inclination=None,
              launch_latitude=None):
    """The least-Δv departure found from a circular Earth parking orbit to an Earth-Moon periodic
    orbit or quasi-periodic torus, designed by optimisation in the CR3BP (``librate connect
    --path direct`` or ``--path lunar-flyby``).

    Parameters
    ----------
    target : PeriodicOrbit, Torus or str
        The target orbit (or an orbit request), or a torus (from :func:`torus`, or a torus
        request such as ``"quasi-halo around halo L1 north az=10000km amplitude=300km"``; the
        insertion point free over both torus angles).
    parking : str
        ``"parking earth ALTITUDE"`` (100 km to 50 000 km).
    system : System or str
        The Earth-Moon system (when ``target`` is a request).
    path : {"direct", "lunar-flyby"}
        Departure burn, coast, insertion burn; or with a powered lunar flyby between them.
    inclination : str or float, optional
        Parking-orbit inclination to the Moon's orbit plane (``"28.5deg"``; a float is in
        degrees), 0 to 180 deg (default: free).
    max_tof : str or float, optional
        Longest time of flight, departure to insertion (a float is in days), 1 d to 400 d;
        default 150 d, or 10 d on the flyby path to an orbit or a torus (where the cost keeps
        falling slowly with longer flights: :data:`cr3bp.transfers.departure.FLYBY_MAX_TOF_DAYS`).
    min_flyby_altitude : str or float
        ``path="lunar-flyby"``: least flyby altitude over the Moon's mean radius (default
        ``"100km"``; a float is in km), above 0 to 20 000 km.
    progress : callable(str), optional
        Messages of the torus solve (a torus request only).
    epoch : str or float, optional
        The departure date (ISO 8601, ``Z`` = UTC; or TDB seconds since J2000), to a periodic
        orbit: it places the Earth's equator in the rotating frame (the Moon's DE421 ephemeris
        at that instant), and ``.to_dict()`` adds ``departure_epoch`` (UTC) and
        ``inclination_equator_deg`` (to the mean equator of J2000).
    equator_inclination : str or float, optional
        With ``epoch``: hold the parking orbit's inclination to the equator (0 to 180 deg).
    launch_latitude : str or float, optional
        With ``epoch``: a launch site's latitude (-90 to 90 deg); the inclination to the equator
        is held at least its absolute value (``bounds_hit`` names ``launch-latitude`` when the
        bound is active). At most one of ``inclination``, ``equator_inclination`` and
        ``launch_latitude``.

    Returns
    -------
    cr3bp.transfers.departure.Departure
        Immutable: ``.maneuvers``, ``.dv_mps``, ``.departure_dv_mps``, ``.tof_days``,
        ``.c3_km2_s2``, ``.inclination_deg``, ``.flyby_altitude_km``, ``.optimised``,
        ``.to_dict()`` -- all in the CR3BP.

    Raises
    ------
    InputError
        Not a parking orbit about the Earth in the earth-moon system, a value out of range.
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
    sysm, alt, inc, tof, fb = _parking_transfer_inputs(target, parking, system, path, inclination, max_tof,
                                                       min_flyby_altitude, "parking")
    eq = None if equator_inclination is None else _angle_deg("equator_inclination", equator_inclination)
    lat = None if launch_latitude is None else _angle_deg("launch_latitude", launch_latitude, -90.0, 90.0)
    if _torus_end(target):
        if epoch is not None or eq is not None or lat is not None:
            raise InputError("epoch, equator_inclination and launch_latitude date a departure to a periodic "
                             "orbit; a departure to a torus is not dated yet")
        from .tori import request as treq  # lazy: heavy library (scipy, via cr3bp.tori)
        from .tori.departure import design_torus_departure  # lazy: heavy library (scipy, via cr3bp.tori)
        torus_ = treq.solve(sysm, target, progress=progress) if isinstance(target, str) else target
        return design_torus_departure(torus_, alt, path=path, inclination_deg=inc, max_tof_days=tof,
                                      min_flyby_altitude_km=fb)
    from .transfers.departure import design_departure  # lazy: heavy library (scipy, via cr3bp.transfers)
    if epoch is not None or eq is not None or lat is not None:
        from .transfers.departure import dating  # lazy: the ephemeris, only for a dated departure
        dating(sysm, epoch, inc, eq, lat)       # every refusal of the dated options, before the orbit is solved
    orb = target if isinstance(target, PeriodicOrbit) else orbit(sysm, target)
    return design_departure(orb, alt, path=path, inclination_deg=inc, max_tof_days=tof,
                            min_flyby_altitude_km=fb, epoch=epoch, equator_inclination_deg=eq,
                            launch_latitude_deg=lat)


def _parking_transfer_inputs(target, parking, system, path, inclination, max_tof, min_flyby_altitude, what):
    """The checked inputs of a departure from, or a return to, an Earth parking orbit:
    (system, altitude km, inclination deg or None, max time of flight d, least flyby altitude km)."""
    from .orbits.orbit import PeriodicOrbit  # lazy: start-up: keeps cr3bp.api free of numpy
    from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
    from .vocabulary import CR3BP_DEPARTURE_PATHS  # lazy: start-up of cr3bp.api (one name, here only)
    _one_of("path", path, CR3BP_DEPARTURE_PATHS)
    sysm = target.system if isinstance(target, PeriodicOrbit) or type(target).__name__ == "Torus" \
        else _as_system(system)
    pk = _parking(parking, sysm) if isinstance(parking, str) else None
    if pk is None or pk[0] != 0 or sysm.name != "earth-moon":
        raise InputError(f"{what} = {parking!r}: give 'parking earth ALTITUDE' in the earth-moon system, e.g. "
                         "'parking earth 200km'")
    if not 100.0 <= pk[1] <= 50_000.0:
        raise InputError(f"parking altitude {pk[1]:g} km in {parking!r}; allowed: 100 km to 50000 km")
    if max_tof is None:     # the design's defaults (FLYBY_MAX_TOF_DAYS, MAX_TOF_DAYS), orbit or torus
        tof = 10.0 if path == "lunar-flyby" else 150.0
    else:
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
    return sysm, pk[1], inc, tof, fb


def return_transfer(source, parking="parking earth 200km", *, system="earth-moon", path="direct",
                    inclination=None, max_tof=None, min_flyby_altitude="100km", progress=None):
    """The least-Δv return found from an Earth-Moon periodic orbit or torus to a circular Earth
    parking orbit (``librate connect --from ORBIT --to "parking earth ALTITUDE" --path ...``).

    The time-reverse (y -> -y, t -> -t) of the least-Δv departure to the mirror image of
    ``source``, designed by optimisation in the CR3BP; the perigee burn puts the spacecraft on
    the parking circle.

    Parameters
    ----------
    source : PeriodicOrbit, Torus or str
        The orbit left (or an orbit request), or a torus (from :func:`torus`, or a torus request;
        the departure point free over both torus angles).
    parking : str
        ``"parking earth ALTITUDE"``, 100 km to 50 000 km.
    system : System or str
        The Earth-Moon system (when ``source`` is a request).
    path : {"direct", "lunar-flyby"}
    inclination : str or float, optional
        Parking-orbit inclination to the Moon's orbit plane, 0 to 180 deg (default: free).
    max_tof : str or float, optional
        Longest time of flight (a float is in days), 1 d to 400 d; default as for
        :func:`departure`.
    min_flyby_altitude : str or float
        ``path="lunar-flyby"``: least flyby altitude (default ``"100km"``).
    progress : callable(str), optional
        Messages of the torus solve (a torus request only).

    Returns
    -------
    cr3bp.transfers.returns.Return
        Immutable: ``.maneuvers`` (departure, [flyby], insertion), ``.dv_mps``, ``.tof_days``,
        ``.perigee_altitude_km``, ``.inclination_deg``, ``.to_dict()`` -- all in the CR3BP.

    Raises
    ------
    InputError
        Not a parking orbit about the Earth in the earth-moon system, a value out of range.
    NoSolutionError
        No first guess of the search converges.

    Examples
    --------
    >>> import cr3bp.api as api
    >>> ret = api.return_transfer("halo L2 south resonance=9:2", "parking earth 200km")   # doctest: +SKIP
    >>> round(ret.dv_mps), round(ret.tof_days, 2)                                         # doctest: +SKIP
    (3972, 5.25)
    >>> api.return_transfer("halo L1 north az=10000km", "parking moon 100km")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: parking = 'parking moon 100km': give 'parking earth ALTITUDE' in the earth-moon system, e.g. 'parking earth 200km'

    References
    ----------
    Szebehely, *Theory of Orbits*, 1967, section 2.9 (time reversal); see
    :func:`cr3bp.transfers.returns.design_return`.
    """
    from .orbits.orbit import PeriodicOrbit  # lazy: start-up: keeps cr3bp.api free of numpy
    sysm, alt, inc, tof, fb = _parking_transfer_inputs(source, parking, system, path, inclination, max_tof,
                                                       min_flyby_altitude, "parking")
    from .transfers.returns import design_return  # lazy: heavy library (scipy, via cr3bp.transfers)
    if _torus_end(source):
        from .tori import request as treq  # lazy: heavy library (scipy, via cr3bp.tori)
        src = treq.solve(sysm, source, progress=progress) if isinstance(source, str) else source
    else:
        src = source if isinstance(source, PeriodicOrbit) else orbit(sysm, source)
    return design_return(src, alt, path=path, inclination_deg=inc, max_tof_days=tof, min_flyby_altitude_km=fb)


def _route_inputs(sysm, nodelist, start, goal, objective, best, max_dv, max_tof, min_altitude, max_legs,
                  through, avoid):
    """The checked ends, route count and constraints of a route search (:func:`route`,
    :func:`design_route`): (start node, goal node, best, Constraints)."""
    from .transfers.nodes import find_node  # lazy: start-up: keeps cr3bp.api free of numpy
    from .transfers.search import Constraints  # lazy: heavy library (networkx, via cr3bp.transfers.search)
    from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
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
    return src, dst, k, constraints


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
    from .transfers.nodes import load_nodes  # lazy: start-up: keeps cr3bp.api free of numpy
    from .transfers.search import best_routes  # lazy: heavy library (networkx, via cr3bp.transfers.search)
    from .validate import quantity  # lazy: start-up: keeps cr3bp.api free of numpy
    sysm = _as_system(system)
    nodelist = load_nodes(nodes, sysm)
    src, dst, k, constraints = _route_inputs(sysm, nodelist, start, goal, objective, best, max_dv, max_tof,
                                             min_altitude, max_legs, through, avoid)
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
    if isinstance(scheduler, str):
        from .transfers.tasks import check_scheduler  # lazy: start-up: keeps cr3bp.api free of numpy
        check_scheduler(scheduler)
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
    sysm = _as_system(system)
    nodelist = _node_list(nodes, sysm)
    src, dst, k, constraints = _route_inputs(sysm, nodelist, start, goal, objective, best, max_dv, max_tof,
                                             min_altitude, max_legs, through, avoid)
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
        ``.sample_km``, ``.to_dict() A low-energy route (designed in the bicircular
        model) ends on its target orbit at its first arrival, with the maneuvers ``departure``,
        ``correction`` and ``insertion`` (:mod:`cr3bp.fidelity.low_energy`).

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
        if low_energy:
            from .fidelity.low_energy import transition_low_energy  # lazy: heavy library (scipy)
            return transition_low_energy(sysm, t_tu, states, maneuvers, epoch, float(low_energy["sun_phase_rad"]), bodies,
                                         central=(central or "earth").lower(), srp=srp, patch_days=days,
                                         max_iter=max_iter, progress=progress)
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

def torus(orbit=None, amplitude=None, *, around=None, hold="jacobi", lissajous=None, members=None, progress=None,
          catalog=None):
    """A quasi-periodic invariant torus about a periodic orbit, or a Lissajous torus (``librate torus``).

    Four ways to name it: an orbit and an amplitude (``torus(o, "2000km")``); a system and a
    torus request in words, as ``librate torus --request`` takes it (``torus(em, "lissajous L2
    ay=300000km az=150000km")``, ``torus(em, "quasi-halo around halo L2 south resonance=9:2
    amplitude=2000km")``: :mod:`cr3bp.tori.request`); a system, an orbit request and an
    amplitude (``torus(em, "2000km", around="lyapunov L1 jacobi=3.15")``, as ``librate torus
    --around``); or ``lissajous=(system, point, ay, az)``. With ``members`` a family of tori is
    continued from the first; a torus given as ``orbit`` with ``members`` continues its family.

    Parameters
    ----------
    orbit : PeriodicOrbit, System, str or Torus, optional
        The orbit the torus surrounds (with ``amplitude``); or the system (a System or its name)
        of a torus named by request text (the second argument) or by ``around``; or a torus
        whose family ``members`` continues.
    amplitude : str or float, optional
        The torus's size about the orbit: ``"2000km"`` or LU (at most 0.2 LU). After a system:
        the torus request text, unless ``around`` is given.
    around : str, optional
        After a system: the orbit request (``"lyapunov L1 jacobi=3.15"``) the torus of size
        ``amplitude`` grows about; the torus is kept in ``catalog`` under this text.
    hold : {"jacobi", "rotation", "period"}
        What is held fixed while the torus grows (default the Jacobi constant).
    lissajous : tuple, optional
        Instead of an orbit: ``(system, "L2", ay, az)`` with the amplitudes as lengths
        (``"5000km"``).
    members : int, optional
        Continue a family of this many tori (1..500) from the first.
    progress : callable, optional
        Receives the steps: ``(step, amplitude_lu)`` while a torus grows about an orbit,
        ``(member, torus)`` for a family, one line of text otherwise.
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
        Neither or several of an orbit, a system and ``lissajous``; request text it refuses; an
        amplitude that is not a positive length or is over 0.2 LU.
    NoSolutionError
        A request whose torus cannot be reached.
    ConvergenceError

    Examples
    --------
    >>> import cr3bp
    >>> cr3bp.torus()
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: give an orbit with amplitude=, a system with a torus request, or lissajous=(system, point, ay, az)
    >>> t = cr3bp.torus("sun-earth", "lissajous L2 ay=300000km az=150000km")  # doctest: +SKIP
    >>> cr3bp.torus("earth-moon", "quasi-halo around lyapunov L1 jacobi=3.15 amplitude=2000km")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: a quasi-halo torus is about a halo orbit (or NRHO); 'lyapunov L1 jacobi=3.15' is a lyapunov orbit

    References
    ----------
    Gómez and Mondelo, *Physica D* 157, 2001, §3; Olikara and Scheeres, AAS 12-361, 2012,
    eqs. 9-14 (the invariance circle); Baresi, Olikara and Scheeres (the continuation): see
    :mod:`cr3bp.tori`.
    """
    _one_of("hold", hold, ("jacobi", "rotation", "period"))
    if members is not None:
        members = _whole("members", members, 1, 500)
    if orbit is not None and _is_torus(orbit):
        if members is None or amplitude is not None or around is not None or lissajous is not None:
            raise InputError("a torus given: members= (alone) continues its family")
        from .tori import continue_family  # lazy: start-up: keeps cr3bp.api free of numpy
        return continue_family(orbit, hold=hold, members=members, progress=progress, catalog=catalog)
    by_system = isinstance(orbit, (System, str))
    if (orbit is None) == (lissajous is None):
        raise InputError("give an orbit with amplitude=, a system with a torus request, or lissajous=(system, point, "
                         "ay, az)")
    if around is not None and not by_system:
        raise InputError("around= (an orbit request) goes with a system: torus(system, amplitude, around=...)")
    if by_system and around is None:
        from .tori import request as treq  # lazy: start-up: keeps cr3bp.api free of numpy
        if amplitude is None:
            raise InputError("after a system give the torus request, e.g. 'lissajous L2 ay=300000km az=150000km'")
        sysm = _as_system(orbit)
        spec = treq.checked(sysm, amplitude)
        t = treq.solve(sysm, spec, catalog=catalog, progress=progress)
    elif by_system:
        from .orbits.request import parse_request  # lazy: start-up: keeps cr3bp.api free of numpy
        from .orbits.targets import make_target  # lazy: start-up: keeps cr3bp.api free of numpy
        from .tori import torus_around  # lazy: start-up: keeps cr3bp.api free of numpy
        from .tori.store import cached_torus  # lazy: start-up: keeps cr3bp.api free of numpy
        sysm = _as_system(orbit)
        spec = parse_request(str(around))
        if not spec.key:
            raise InputError(f"around '{around}' has no target; e.g. \"halo L2 south resonance=9:2\" or "
                             "\"lyapunov L1 ax=5000km\"")
        make_target(sysm, spec.key, spec.value)
        amp = _torus_amplitude(amplitude, sysm)
        o = globals()["orbit"](sysm, spec, catalog=catalog)
        t = cached_torus(catalog, sysm, o.point,
                         {"kind": "around", "around": str(around), "amplitude_lu": amp, "hold": hold},
                         lambda: torus_around(o, amp, hold=hold, progress=progress))
    elif lissajous is not None:
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
        amp = _torus_amplitude(amplitude, sysm)
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


def _torus_amplitude(amplitude, sysm):
    amp = length(_text(amplitude), sysm, default_unit="km")
    if not amp > 0:
        raise InputError(f"amplitude {amplitude!r} must be a positive length")
    if amp > 0.2:
        raise InputError(f"amplitude {amplitude!r} is larger than 0.2 of the distance between the primaries; "
                         "tori that large are not attempted")
    return amp


def shadow(orbit, epoch, *, span="365d", step="5min", phase=0.0, bodies=("earth", "moon"),
           avoid_eclipses=False, phases=36, max_eclipse=None, torus_phase=(0.0, 0.0), until_epoch=None, epochs=8,
           stations=(), report=False):
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
        With ``avoid_eclipses`` or ``until_epoch``: phases (start epochs) whose longest pass is
        at most this time (``"90min"``) rank first.
    torus_phase : (float, float)
        For a torus: ``(theta0, theta1)`` at the epoch, degrees.
    until_epoch : str, optional
        Scan ``epochs`` start epochs evenly from ``epoch`` to this one (ISO 8601) and keep the
        one with the least shadow time (``librate shadow --until-epoch``); with
        ``avoid_eclipses`` the phases are scanned at every epoch.
    epochs : int
        Start epochs of that scan, 2..200.
    stations : sequence of cr3bp.operations.visibility.Station
        Ground stations whose windows of view the report gives
        (:func:`cr3bp.operations.visibility.read_stations` reads them from TOML).
    report : bool
        Return the whole :class:`ShadowReport` (what ``librate shadow`` prints: the passes,
        the scans, the Earth angles and the station windows) instead of the history.

    Returns
    -------
    cr3bp.operations.phasing.History or list of History
        One history (``.passes``, each with ``.to_dict()``: body, kind, start and end UTC,
        duration, depth; ``.total_min()``, ``.longest_min()``); with ``avoid_eclipses`` the
        scan's histories, best first (``[0].phase_deg`` the phase chosen); with
        ``until_epoch`` the history of the best start epoch (or its phase scan). With
        ``report=True`` a :class:`ShadowReport`.

    Raises
    ------
    InputError
        Not Earth-Moon or Sun-Earth, a step outside 10 s..1 h, unknown bodies, an epoch outside
        the ephemeris tables, ``max_eclipse`` without ``avoid_eclipses`` or ``until_epoch``,
        ``until_epoch`` not after ``epoch``.

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
    from .validate import finite_number, iso8601, numbers  # lazy: start-up: keeps cr3bp.api free of numpy
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
        if not (avoid_eclipses or until_epoch is not None):
            raise InputError("max_eclipse goes with avoid_eclipses=True or until_epoch=")
        mq = units.parse(_text(max_eclipse), "time")
        max_min = (mq.nondim(sysm) * sysm.time_s if mq.unit == "TU" else mq.si()) / 60.0
        if not max_min >= 0:
            raise InputError(f"max_eclipse '{max_eclipse}' must be zero or positive")
    is_torus = hasattr(orbit, "stroboscopic_time") and getattr(orbit, "circle", None) is not None
    tphase = numbers("torus_phase", torus_phase, 2, "THETA0,THETA1 (degrees)")
    period = float(orbit.stroboscopic_time if is_torus else orbit.period)
    t0 = frames.epoch_from_text(epoch)
    starts = [t0]
    if until_epoch is not None:
        last = frames.epoch_from_text(iso8601("until_epoch", until_epoch))
        if not last > t0:
            raise InputError(f"until_epoch '{until_epoch}' must be after epoch '{epoch}'")
        n = _whole("epochs", epochs, 2, 200)
        starts = [t0 + (last - t0) * k / (n - 1) for k in range(n)]
    span_tu = ex.parse_span(str(span), sysm, period)
    span_s = span_tu * sysm.time_s
    if span_s > 20 * 365.25 * 86400.0:
        raise InputError(f"span '{span}' is longer than 20 years")
    placed = (placement.place_torus(sysm, orbit, t0, span_tu, tphase) if is_torus
              else placement.place(sysm, orbit, t0))
    epoch_scan = []
    if len(starts) > 1:
        epoch_scan = phasing.scan_epochs(placed, starts, span_s, step_s, phase_deg=phase_deg,
                                         n_phases=n_phases if avoid_eclipses else None,
                                         max_pass_min=max_min, bodies=bodies)
        t0 = epoch_scan[0].epoch_tdb_s
        placed = (placement.with_epoch(placed, t0) if is_torus      # the same sample, moved
                  else placement.place(sysm, orbit, t0))
    sk = phasing.sky(placed, span_s, step_s)
    scan = []
    if epoch_scan:
        scan = list(epoch_scan[0].phases)
        best = epoch_scan[0].best
    elif avoid_eclipses:
        scan = phasing.scan(placed, sk, n_phases, max_min, bodies)
        best = scan[0]
    else:
        best = phasing.history(placed, sk, phase_deg, bodies)
    if not report:
        return scan if avoid_eclipses else best
    angles = phasing.earth_angles(placed, sk, best.phase_deg)
    wins = []
    if stations:
        from .operations import visibility  # lazy: start-up: keeps cr3bp.api free of numpy
        m = visibility.terrestrial_matrices(sk.tdb_s)
        for st in stations:
            wins += visibility.windows(sk.tdb_s, angles["position_km"], st, m)
    return ShadowReport(orbit=orbit, is_torus=is_torus, period=period, epoch_tdb_s=t0, span_s=span_s,
                        step_s=step_s, bodies=bodies, placed=placed, sky=sk, best=best, phase_scan=tuple(scan),
                        epoch_scan=tuple(epoch_scan), epochs_scanned=len(starts), angles=angles,
                        windows=tuple(wins), stations=tuple(stations))


@dataclass(frozen=True)
class ShadowReport:
    """Everything ``librate shadow`` reports of an orbit or torus at a date (made by
    :func:`shadow` with ``report=True``).

    Parameters
    ----------
    orbit : PeriodicOrbit or Torus
    is_torus : bool
    period : float
        The orbit's period or the torus's stroboscopic time, TU (CR3BP).
    epoch_tdb_s : float
        The start (the best of the epoch scan when there was one), TDB seconds from J2000.
    span_s, step_s : float
        The span followed and the search step, seconds.
    bodies : tuple of str
        The occulting bodies counted.
    placed : object
        The placement at the epoch (:mod:`cr3bp.operations.placement`).
    sky : cr3bp.operations.phasing.Sky
        The sampled geometry.
    best : cr3bp.operations.phasing.History
        The passes of the phase given or chosen (``.phase_deg``, ``.passes``).
    phase_scan : tuple of History
        The phases scanned, best first (empty without a scan).
    epoch_scan : tuple
        The start epochs scanned, best first (empty without ``until_epoch``).
    epochs_scanned : int
    angles : dict
        Sun-Earth-spacecraft and Moon-Earth-spacecraft angles (degrees), position and range
        (km) over the span (:func:`cr3bp.operations.phasing.earth_angles`).
    windows : tuple
        Station windows of view.
    stations : tuple
        The stations.

    Examples
    --------
    >>> from cr3bp.api import ShadowReport
    >>> "phase_scan" in ShadowReport.__dataclass_fields__
    True

    References
    ----------
    Montenbruck and Gill, *Satellite Orbits*, 2000, §3.4.2 (conical shadow model).
    """

    orbit: object
    is_torus: bool
    period: float
    epoch_tdb_s: float
    span_s: float
    step_s: float
    bodies: tuple
    placed: object
    sky: object
    best: object
    phase_scan: tuple
    epoch_scan: tuple
    epochs_scanned: int
    angles: dict
    windows: tuple
    stations: tuple

    def __repr__(self):
        h = self.best
        return (f"<ShadowReport phase {h.phase_deg:g} deg: {len(h.passes)} eclipse passes, "
                f"{h.total_min():.1f} min in shadow over {self.span_s / 86400.0:.4g} d (ephemeris geometry)>")


def keep(orbit, epoch, *, span="365d", trials=200, nav_error=(1.0, 0.01), burn_error=(0.01, 0.001),
         min_burn_mps=0.0, bodies=("sun", "earth", "moon"), target_revs=4, interval=None, hold_phase=False,
         seed=0, workers=None, progress=None, policy="crossing", srp=None, scheduler=None):
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
    srp : (float, float), optional
        Cannonball radiation pressure in the reference and the trials: area-to-mass ratio m2/kg
        and the reflectivity coefficient (``librate keep --srp``).
    scheduler : dask.distributed.Client, optional
        Run the trials on this cluster (:func:`cr3bp.operations.keeping.dask_client`); the
        results do not depend on it.

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
    if srp is not None:
        try:
            srp = tuple(finite_number("srp", v) for v in srp)
        except (TypeError, ValueError):
            raise InputError(f"srp {srp!r} is (area-to-mass m2/kg, reflectivity coefficient)") from None
        if len(srp) != 2 or not (0 <= srp[0] <= 100 and 0 <= srp[1] <= 2):
            raise InputError(f"srp {srp!r}: area-to-mass 0..100 m2/kg and reflectivity coefficient 0..2")
    return keeping.budget(orbit, epoch, span_tu, errors, trials, seed=seed, min_burn_mps=min_burn_mps,
                          bodies=tuple(bodies), srp=srp, target_revs=target_revs, interval_tu=interval_tu,
                          hold_phase=hold_phase, policy=str(policy), workers=workers, scheduler=scheduler,
                          progress=progress)


def disperse(orbit=None, *, route=None, coast=None, arrive_phase="0deg", branch="interior", burn="0m/s",
             corrections=(), nav_error=(1.0, 0.01), burn_error=(0.01, 0.001), trials=1000, seed=0,
             workers=None, scheduler=None):
    """Insertion dispersion: the last maneuver's errors carried to an insertion (``librate disperse``).

    A Monte Carlo of navigation and execution errors beside the linear covariance estimate, with
    correction maneuvers that target the nominal insertion point; all Δv, distances and times in
    the circular restricted three-body model. The insertion is either the coast along ``orbit``'s
    stable manifold (``coast`` long, arriving at ``arrive_phase``) or the last maneuver of a
    route file (``route``, which sets the burn and the coast).

    Parameters
    ----------
    orbit : PeriodicOrbit, optional
        The orbit inserted into (of a system with units), with ``coast``.
    route : str or path-like, optional
        Instead of ``orbit``: the ``route.json`` of ``librate route --out DIR``.
    coast : str or float
        With ``orbit``: coast from the last maneuver to the insertion, a time (``"10d"``) or TU;
        at most 1000 d.
    arrive_phase : str or float
        Where the manifold reaches the orbit: ``"120deg"``, ``"0.25rev"`` or degrees.
    branch : {"interior", "exterior"}
    burn : str or float
        Size of the last maneuver (scales its proportional error): ``"20m/s"`` or m/s.
    corrections : sequence of str or float
        Correction times after the last maneuver, increasing, before the insertion (``"1d"`` or
        TU); at most :data:`cr3bp.operations.dispersion.MAX_CORRECTIONS`.
    nav_error : (float, float)
        Navigation error, 1-sigma per axis: position km, velocity m/s.
    burn_error : (float, float)
        Execution error, 1-sigma per axis: proportional (fraction), fixed m/s.
    trials : int
        Monte Carlo trials, 1..100000.
    seed : int
    workers : int, optional
        Run the trials in pieces over this many worker processes (default: here); the result is
        the same bit for bit (every draw made here from the one seed).
    scheduler : str or distributed.Client, optional
        Or on a dask.distributed scheduler: an address, ``"local"`` / ``"local:N"``, or a client.

    Returns
    -------
    cr3bp.operations.dispersion.Dispersion
        ``.nominal`` (the arc), ``.summary()`` (per correction and at insertion, Monte Carlo and
        linear), ``.to_dict()``.

    Raises
    ------
    InputError
        Neither or both of ``orbit`` and ``route``; values outside the ranges above; corrections
        not increasing or not before the insertion.

    Examples
    --------
    >>> import cr3bp
    >>> o = cr3bp.orbit("earth-moon", "lyapunov L1 jacobi=3.15")
    >>> d = cr3bp.disperse(o, coast="2d", corrections=["1d"], trials=20)
    >>> d.summary()["trials"], len(d.summary()["corrections"])
    (20, 1)

    References
    ----------
    Geller, "Linear covariance techniques for orbital rendezvous analysis and autonomous onboard
    mission planning", *J. Guidance, Control, and Dynamics* 29(6), 2006 (the linear covariance);
    see :mod:`cr3bp.operations.dispersion`.
    """
    from .operations import dispersion as dp  # lazy: start-up: keeps cr3bp.api free of numpy
    from .operations.keeping import Errors  # lazy: start-up: keeps cr3bp.api free of numpy
    from .operations.placement import parse_phase  # lazy: start-up: keeps cr3bp.api free of numpy
    from .validate import finite_number, quantity  # lazy: start-up: keeps cr3bp.api free of numpy
    if (orbit is None) == (route is None):
        raise InputError("give an orbit (with coast=) or route=, not both or neither")
    trials = _whole("trials", trials, 1, 100000)
    seed = _whole("seed", seed, 0, 999999999999)
    runner = _task_runner(workers, scheduler)
    try:
        pos_km, vel_mps = (finite_number("nav_error", v) for v in nav_error)
        prop, fixed_mps = (finite_number("burn_error", v) for v in burn_error)
    except (TypeError, ValueError):
        raise InputError("nav_error is (km, m/s) and burn_error is (fraction, m/s)") from None
    if not (0 <= pos_km <= 1e5 and 0 <= vel_mps <= 1000 and 0 <= prop <= 1 and 0 <= fixed_mps <= 1000):
        raise InputError(f"nav_error {nav_error!r} or burn_error {burn_error!r} is outside the allowed ranges "
                         "(0..100000 km, 0..1000 m/s, 0..1, 0..1000 m/s)")
    errors = Errors(pos_km, vel_mps, prop, fixed_mps)
    if route is not None:
        nom = dp.after_route_maneuver(dp.read_route(route))
        sysm, coast_tu = nom.system, nom.tf_tu
    else:
        sysm = _system_of(orbit)
        sysm.require_dimensional("an insertion dispersion in km and m/s")
        if coast is None:
            raise InputError("an orbit needs coast= (the coast along the stable manifold, e.g. '10d')")
        _one_of("branch", branch, TUBE_BRANCHES)
        burn_mps = (quantity("burn", burn, "velocity", sign="nonnegative") * 1000.0 if isinstance(burn, str)
                    else finite_number("burn (m/s)", burn))
        if not 0 <= burn_mps <= 1e5:
            raise InputError(f"burn {burn!r} must be 0 to 100 km/s")
        coast_tu = quantity("coast", _text(coast), "time", sysm, sign="positive", default_unit="TU")
        if coast_tu * sysm.time_days > 1000.0:
            raise InputError(f"coast {coast!r} is over 1000 d")
        phase = parse_phase(arrive_phase) if isinstance(arrive_phase, str) else finite_number(
            "arrive_phase (degrees)", arrive_phase)
        nom = dp.manifold_insertion(orbit, phase, coast_tu, burn_mps, branch=branch)
    corr = [quantity("corrections", _text(c), "time", sysm, sign="positive", default_unit="TU")
            for c in corrections]
    if len(corr) > dp.MAX_CORRECTIONS:
        raise InputError(f"corrections: {len(corr)} times; at most {dp.MAX_CORRECTIONS}")
    if any(not b > a for a, b in zip(corr, corr[1:])) or (corr and corr[-1] >= coast_tu):
        raise InputError(f"corrections {list(corrections)!r} must increase and come before the insertion")
    return dp.dispersion(nom, corr, errors, trials, seed, runner)


def propagate_state(system, state, time, *, km=False, stm=False, rtol=1e-12, atol=1e-12, step=None,
                    model="cr3bp", sun_phase=None, epoch=None):
    """One state followed over a time, with the energy check (``librate propagate``).

    The circular restricted three-body model, or with ``model="bicircular"`` the Earth-Moon
    model with the Sun on a circle about the barycentre (Boudad, Howell and Davis 2020). The
    integration stops at an impact on a primary (its radius). (``cr3bp.propagate`` is the
    integrator underneath, in nondimensional units only.)

    Parameters
    ----------
    system : System or str
    state : sequence of 6 float
        Start in the barycentric rotating frame: LU and LU/TU, or km and km/s with ``km=True``.
    time : str or float
        How long: a time with its unit (``"12d"``, ``"36h"``, ``"2.5TU"``) or TU; negative:
        backward.
    km : bool
        ``state`` is in km and km/s (systems with units).
    stm : bool
        Also integrate the state transition matrix (``.arc.stm``).
    rtol, atol : str or float
        Tolerances in [1e-14, 1e-3].
    step : str or float, optional
        Output spacing (``"1h"`` or TU) from the dense output; default every integration step;
        at most 1,000,000 output points.
    model : {"cr3bp", "bicircular"}
    sun_phase : str, optional
        Bicircular: the Sun's angle from the Earth-Moon line at the start, ``"45deg"`` or
        ``"0.785rad"`` (default 0).
    epoch : str, optional
        Bicircular: the date of the start (ISO 8601); the Sun's phase from the ephemeris.

    Returns
    -------
    cr3bp.propagation.Propagation
        ``.arc`` (times, states, events, STM), ``.status``, ``.final_state``, ``.to_dict()``
        (the command's JSON), ``.rows()``, ``.plot(ax=None)``.

    Raises
    ------
    InputError
        A state that is not six finite numbers or lies inside a primary, a time without a unit,
        tolerances out of range, too many output points, ``sun_phase``/``epoch`` without the
        bicircular model, both of them, the bicircular model outside earth-moon.

    Examples
    --------
    >>> import cr3bp
    >>> p = cr3bp.propagate_state("earth-moon", [0.8234, 0, 0.0224, 0, 0.1343, 0], "12d", stm=True)
    >>> p.status, p.arc.stm.shape
    ('time', (6, 6))
    >>> cr3bp.propagate_state("earth-moon", [0.8, 0, 0, 0, 0.1, 0], "1d", sun_phase="10deg")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: sun_phase goes with model='bicircular'

    References
    ----------
    Hairer, Nørsett and Wanner, *Solving Ordinary Differential Equations I*, 2nd ed., 1993,
    §II.5 and §II.6 (the DOP853 pair and its dense output); Boudad, Howell and Davis, "Dynamics
    of synodic resonant near rectilinear halo orbits in the bicircular four-body problem",
    *Advances in Space Research* 66(9), 2020 (the bicircular model).
    """
    import numpy as np  # lazy: heavy library (numpy)

    from . import bicircular, validate  # lazy: start-up: keeps cr3bp.api free of numpy
    from .integrate import impact, propagate  # lazy: start-up: keeps cr3bp.api free of numpy
    from .propagation import Propagation  # lazy: start-up: keeps cr3bp.api free of numpy
    sysm = _as_system(system)
    try:
        values = [float(v) for v in state]
    except (TypeError, ValueError):
        raise InputError(f"state {state!r}: give six numbers x, y, z, vx, vy, vz") from None
    if len(values) != 6:
        raise InputError(f"state has {len(values)} values; give six numbers x, y, z, vx, vy, vz")
    if km:
        sysm.require_dimensional("km=True")
        values = [v / sysm.length_km for v in values[:3]] + [v / sysm.velocity_kms for v in values[3:]]
    x0 = validate.state(sysm, values)
    t_final = validate.quantity("time", _text(time), "time", sysm, default_unit="TU")
    rtol = validate.tolerance("rtol", rtol)
    atol = validate.tolerance("atol", atol)
    t_eval = None
    if step is not None:
        dt = validate.quantity("step", _text(step), "time", sysm, sign="positive", default_unit="TU")
        n = int(np.floor(abs(t_final) / dt + 1e-9))
        if n + 2 > 1_000_000:
            raise InputError(f"step {step!r} gives {n + 2} output points; allowed at most 1000000")
        t_eval = (1.0 if t_final >= 0 else -1.0) * dt * np.arange(n + 1)
        if abs(t_eval[-1]) < abs(t_final) * (1 - 1e-12):
            t_eval = np.append(t_eval, t_final)
        else:
            t_eval[-1] = t_final
    name = str(model).strip().lower()
    _one_of("model", name, ("cr3bp", "bicircular"))
    events = [impact(k, r, label=f"impact {n}") for k, (r, n) in enumerate(zip(sysm.radii, sysm.names)) if r > 0]
    if name == "cr3bp":
        for opt, v in (("sun_phase", sun_phase), ("epoch", epoch)):
            if v is not None:
                raise InputError(f"{opt} goes with model='bicircular'")
        arc = propagate(sysm, x0, t_final, stm=stm, rtol=rtol, atol=atol, events=events, t_eval=t_eval)
        p = Propagation(sysm, None, x0, arc, rtol, atol, 0.0, 0.0)
    else:
        if sun_phase is not None and epoch is not None:
            raise InputError("give sun_phase or epoch, not both")
        phase = 0.0
        if sun_phase is not None:
            phase = _angle_rad(sun_phase)
        bsys = bicircular.bicircular_system(sysm, sun_phase=phase, epoch=epoch)
        arc = bicircular.propagate(bsys, x0, t_final, stm=stm, rtol=rtol, atol=atol, events=events, t_eval=t_eval)
        p = Propagation(sysm, bsys, x0, arc, rtol, atol, 0.0, 0.0)
    return replace(p, energy_initial=float(p.energy(0.0, x0)),
                   energy_final=float(p.energy(arc.t_final, arc.final_state)))


def _angle_rad(text, name="sun_phase"):
    """``'45deg'`` or ``'0.785rad'`` -> radians; a bare number is refused (which unit was meant?)."""
    t = str(text).strip().lower()
    for unit, factor in (("deg", math.pi / 180.0), ("rad", 1.0)):
        if t.endswith(unit):
            try:
                v = float(t[:-len(unit)])
            except ValueError:
                break
            if not math.isfinite(v):
                raise InputError(f"{name} {text!r} must be finite")
            return v * factor
    raise InputError(f"{name} {text!r} is not an angle with a unit; give e.g. 45deg or 0.785rad")


def zvc(system, jacobi=None, *, above=None, dv=None, plane="xy", region=False, view=None, extent=None,
        resolution=601):
    """An energy level: open necks, speeds at the Lagrange points, the Hill region and its
    zero-velocity curves (``librate zvc``).

    Parameters
    ----------
    system : System or str
    jacobi : str or float, optional
        The Jacobi constant C = 2 Omega - v^2 (nondimensional).
    above : {"L1", "L2", "L3", "L4", "L5"}, optional
        Instead of ``jacobi``: C of a spacecraft at that point moving at speed ``dv``.
    dv : str, optional
        With ``above``: the speed there with a unit (``"20m/s"``, ``"0.01VU"``; default 0).
    plane : {"xy", "xz"}
        The plane of the curves: z = 0 or y = 0.
    region : bool
        Also trace the Hill region on a grid and its zero-velocity curves (``.region``).
    view : {"system", "secondary"}, optional
        With ``region``: the default extent (default: secondary when the mass ratio is below
        1e-4, else system).
    extent : sequence of 4 or str, optional
        With ``region``: ``(umin, umax, vmin, vmax)``, LU or lengths with a unit, or the same as
        text ``"0.7,1.2,-0.2,0.2"``.
    resolution : int
        With ``region``: grid points per side, 21..4001.

    Returns
    -------
    cr3bp.energy.EnergyLevel
        ``.necks_open``, ``.realms``, ``.points``, ``.region`` (a :class:`cr3bp.energy.HillRegion`
        or None), ``.to_dict()``, ``.plot(ax=None)``.

    Raises
    ------
    InputError
        Neither or both of ``jacobi`` and ``above``; ``dv`` without ``above``; an unknown point,
        plane or view; a bad extent or resolution.

    Examples
    --------
    >>> import cr3bp
    >>> lv = cr3bp.zvc("earth-moon", above="L1", dv="20m/s")
    >>> round(lv.jacobi, 6), lv.necks_open["L1"]
    (3.18796, True)
    >>> cr3bp.zvc("earth-moon", 3.1, above="L1")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: give jacobi or above (with dv), not both

    References
    ----------
    Szebehely, *Theory of Orbits*, 1967, §1.6 and §4.3 (the Jacobi integral and the zero-velocity
    surfaces; from memory); Koon, Lo, Marsden and Ross, *Dynamical Systems, the Three-Body
    Problem and Space Mission Design*, 2011, ch. 2 (Hill's region, realms and necks).
    """
    from . import energy  # lazy: start-up: keeps cr3bp.api free of numpy
    from .equilibria import jacobi_constants, point_name  # lazy: start-up: keeps cr3bp.api free of numpy
    sysm = _as_system(system)
    _one_of("plane", plane, energy.PLANES)
    if jacobi is not None and above is not None:
        raise InputError("give jacobi or above (with dv), not both")
    if jacobi is not None:
        if dv is not None:
            raise InputError("dv goes with above=POINT, not with jacobi")
        c, level = energy.check_jacobi(jacobi, "jacobi"), {"given": "jacobi"}
    elif above is None:
        raise InputError("give jacobi=C, or above=POINT with dv=SPEED")
    else:
        name = point_name(above)
        speed = dv if dv is not None else "0VU"
        c = energy.jacobi_above(sysm, name, speed)
        level = {"given": "above", "point": name, "dv": speed,
                 "dv_vu": units.parse(speed, "velocity").nondim(sysm)}
        if sysm.dimensional:
            level["dv_mps"] = sysm.mps(level["dv_vu"])
    hill = None
    if region:
        if view is None:
            from .plotting.energy import default_view  # lazy: heavy library (matplotlib)
            view = default_view(sysm)
        _one_of("view", view, energy.VIEWS)
        if isinstance(extent, str):
            extent = extent.split(",")
            if len(extent) != 4:
                raise InputError(f"extent {extent!r} must be four values UMIN,UMAX,VMIN,VMAX")
        if extent is not None:
            extent = energy.check_extent(tuple(units.length(_text(t), sysm, default_unit="LU") for t in extent))
        resolution = _whole("resolution", resolution, 21, 4001)
        hill = energy.hill_region(sysm, c, plane=plane, extent=extent, view=view, resolution=resolution)
    elif view is not None or extent is not None:
        raise InputError("view and extent shape the traced region; give region=True too")
    levels = jacobi_constants(sysm)
    opened = energy.necks(sysm, c, levels)
    points = []
    for r in energy.energy_table(sysm, c):
        v = r["speed_vu"]
        points.append(dict(name=r["name"], jacobi=r["jacobi"], jacobi_minus_point=r["jacobi_minus_level"],
                           neck_open=opened.get(r["name"]) if r["name"] in opened else None,
                           speed_at_point_vu=v,
                           speed_at_point_mps=sysm.mps(v) if (sysm.dimensional and v is not None) else None))
    return energy.EnergyLevel(system=sysm, jacobi=c, level=level, plane=plane, necks_open=opened,
                              forbidden_region_vanishes=bool(plane == "xy" and c <= levels["L4"]),
                              realms=energy.realms(sysm, c, levels, plane), points=points, region=hill)


# ---- the orbit catalogue ---------------------------------------------------------------

def _catalog_call(catalog, fn):
    from .catalog import Catalog  # lazy: start-up: keeps cr3bp.api free of numpy
    if isinstance(catalog, Catalog):
        return fn(catalog)
    with Catalog(catalog) as cat:
        return fn(cat)


def _family_id(value):
    if isinstance(value, bool) or not isinstance(value, int):
        raise InputError(f"family id {value!r} must be a whole number (see catalog_list)")
    return value


def catalog_list(catalog=None):
    """The families kept in an orbit catalogue (``librate catalog list``).

    Parameters
    ----------
    catalog : cr3bp.catalog.Catalog, str or path-like, optional
        An open catalogue or its file (default: the user's catalogue,
        :func:`cr3bp.catalog.default_path`).

    Returns
    -------
    list of dict
        One per family, by id: ``id``, ``system``, ``mu``, ``family``, ``point``, ``branch``,
        ``complete``, ``updated`` and ``members`` (how many).

    Raises
    ------
    cr3bp.catalog.CatalogWriteError
        A file that is not a catalogue, or one that cannot be opened.

    Examples
    --------
    >>> import cr3bp, tempfile, os
    >>> from cr3bp.catalog import Catalog
    >>> with tempfile.TemporaryDirectory() as d, Catalog(os.path.join(d, "cat.sqlite")) as cat:
    ...     fam = cr3bp.family("earth-moon", "lyapunov", point="L1", members=3, catalog=cat)
    ...     [(f["id"], f["family"], f["members"]) for f in cr3bp.catalog_list(cat)]
    [(1, 'lyapunov', 3)]

    References
    ----------
    The catalogue is one SQLite 3 file (sqlite.org, "Database File Format"); its tables:
    :mod:`cr3bp.catalog`.
    """
    return _catalog_call(catalog, lambda cat: cat.list_families())


def catalog_show(family_id, catalog=None):
    """One catalogued family: its members and bifurcations (``librate catalog show``).

    Parameters
    ----------
    family_id : int
        The family's id (:func:`catalog_list`).
    catalog : cr3bp.catalog.Catalog, str or path-like, optional
        As for :func:`catalog_list`.

    Returns
    -------
    dict
        ``id``, ``system``, ``mu``, ``family``, ``point``, ``branch``, ``settings``,
        ``complete``, ``bifurcations``, ``created``, ``updated`` and ``members`` (a dict per
        member: ``state``, ``period``, ``jacobi``, stability and amplitudes; CR3BP).

    Raises
    ------
    InputError
        No family with that id.

    Examples
    --------
    >>> import cr3bp, tempfile, os
    >>> with tempfile.TemporaryDirectory() as d:
    ...     cr3bp.catalog_show(7, os.path.join(d, "cat.sqlite"))  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: no family with id 7 in the catalogue ...

    References
    ----------
    The catalogue is one SQLite 3 file (sqlite.org, "Database File Format"); its tables:
    :mod:`cr3bp.catalog`.
    """
    fid = _family_id(family_id)
    return _catalog_call(catalog, lambda cat: cat.family(fid))


def catalog_remove(family_id, catalog=None):
    """Delete one family (its members and bifurcations) from a catalogue (``librate catalog remove``).

    Parameters
    ----------
    family_id : int
    catalog : cr3bp.catalog.Catalog, str or path-like, optional
        As for :func:`catalog_list`.

    Returns
    -------
    int
        The id removed.

    Raises
    ------
    InputError
        No family with that id (nothing is changed).

    Examples
    --------
    >>> import cr3bp, tempfile, os
    >>> from cr3bp.catalog import Catalog
    >>> with tempfile.TemporaryDirectory() as d, Catalog(os.path.join(d, "cat.sqlite")) as cat:
    ...     fam = cr3bp.family("earth-moon", "lyapunov", point="L1", members=3, catalog=cat)
    ...     cr3bp.catalog_remove(1, cat), cr3bp.catalog_list(cat)
    (1, [])

    References
    ----------
    The catalogue is one SQLite 3 file (sqlite.org, "Database File Format"); its tables:
    :mod:`cr3bp.catalog`.
    """
    fid = _family_id(family_id)
    _catalog_call(catalog, lambda cat: cat.remove_family(fid))
    return fid


# ---- trajectory files ------------------------------------------------------------------

def read_trajectory(path, *, fmt=None):
    """A trajectory file read back: CCSDS OEM (KVN or XML), CSV or JSON as :func:`export`
    writes them (``librate convert``, ``librate export --from``).

    Parameters
    ----------
    path : str or path-like
        The file.
    fmt : {"oem", "xml", "csv", "json"}, optional
        Its format (default from the suffix, or a look at the first line).

    Returns
    -------
    cr3bp.io.export.ReadResult
        ``.header``, ``.segments`` (epochs and states as written), ``.time_system``, ``.frame``
        (the CR3BP frame the file describes, or None for a file that does not say),
        ``.maneuvers``, ``.to_dict()``; :func:`cr3bp.io.export.trajectory_from` makes it a
        trajectory :func:`export` writes again.

    Raises
    ------
    InputError
        A missing file, an unknown format, a malformed file (one line naming the file and the
        line).

    Examples
    --------
    >>> import cr3bp, tempfile, os
    >>> with tempfile.TemporaryDirectory() as d:
    ...     path = cr3bp.export([1.1805031, 0, -0.02, 0, -0.1581343, 0], os.path.join(d, "a.csv"), system="earth-moon",
    ...                         epoch="2031-03-01T00:00:00Z", span="1d", step="6h")
    ...     data = cr3bp.read_trajectory(path)
    ...     data.format, len(data.segments[0].epochs), data.frame.system.name
    ('csv', 5, 'earth-moon')

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages", Blue Book, Consultative Committee for Space Data
    Systems, 2023 (the OEM); RFC 4180 (CSV); RFC 8259 (JSON).
    """
    from .io import export as ex  # lazy: start-up: keeps cr3bp.api free of numpy
    return ex.read(path, fmt)


# ---- family atlas: many families in one call, one task each ------------------------------

#: Most families in one atlas.
MAX_ATLAS_FAMILIES = 64


def _atlas_items(given, name, sep, sep_words, kind, one, example, atlas):
    """The requests of an atlas: a list, or one text split on ``sep``; none empty, at most
    :data:`MAX_ATLAS_FAMILIES` (the messages name ``name``, the ``kind`` of request and examples)."""
    if isinstance(given, str):
        items = [s.strip() for s in given.split(sep)]
    else:
        try:
            items = [str(s).strip() for s in given]
        except TypeError:
            raise InputError(f"{name} {given!r} must be a list of {kind} such as {one}") from None
    if not items or any(not s for s in items):
        raise InputError(f"{name} {given!r}: give one or more {kind} separated by {sep_words}, e.g. {example}")
    if len(items) > MAX_ATLAS_FAMILIES:
        raise InputError(f"{name}: {len(items)} requests; {atlas} takes at most {MAX_ATLAS_FAMILIES}")
    return items


def _atlas_entries(families):
    """The atlas's family requests (a list, or one text separated by commas), each checked."""
    from .orbits.request import parse_request  # lazy: start-up: keeps cr3bp.api free of numpy
    items = _atlas_items(families, "families", ",", "commas", "family requests", "'halo L1 north'",
                         "'halo L1 north, lyapunov L2'", "an atlas")
    specs, seen = [], {}
    for text in items:
        spec = parse_request(text)
        if spec.key:
            raise InputError(f"family request '{text}' names a member ({spec.key}={spec.value}); an atlas "
                             "grows whole families: leave the target out")
        ident = (spec.family, spec.point, spec.branch_label)
        if ident in seen:
            raise InputError(f"family request '{text}' repeats '{seen[ident]}'")
        seen[ident] = text
        specs.append(spec)
    return items, specs


def _atlas_grow(task):
    """One family of an atlas (a task of the pool or of dask): :func:`family` without a catalogue."""
    return family(task["system"], task["family"], point=task["point"], branch=task["branch"],
                  ratio=task["ratio"], members=task["members"], until=task["until"],
                  altitude=task["altitude"], max_step=task["max_step"])


def atlas(system, families, *, members=200, until=None, altitude=None, max_step=None, workers=None,
          scheduler=None, progress=None, catalog=None):
    """Grow many families of periodic orbits at once, one task per family (``librate family --atlas``).

    Every request is checked before any family is grown. The families are grown here
    (``workers`` None or 1), over a process pool of ``workers`` processes, or on a
    dask.distributed cluster (``scheduler``), one task per family; each family is the one
    :func:`family` grows with the same settings, wherever it is computed (member by member,
    bit for bit). The catalogue is written by this process only, after every family is
    grown, in the order of the requests (each family in its own transactions, as
    :func:`family` stores it).

    Parameters
    ----------
    system : System or str
    families : str or list of str
        Family requests without a target: ``"halo L1 north, lyapunov L2"`` or
        ``["halo L1 north", "lyapunov L2", "resonant 3:2"]`` (at most
        :data:`MAX_ATLAS_FAMILIES`, none repeated).
    members : int
        Largest member count of each family, 2..5000 (default 200).
    until : str, optional
        ``"KEY=VALUE"`` stop applied to every family (as for :func:`family`).
    altitude : str, optional
        Stop a family when a member passes below this altitude above a primary.
    max_step : float, optional
        Largest continuation step (nondimensional, in (0, 1)).
    workers : int, optional
        Processes (default: this one); with ``scheduler="local"`` the local cluster's size.
    scheduler : str or distributed.Client, optional
        A dask.distributed scheduler's address, ``"local"`` / ``"local:N"`` (a local cluster
        started and stopped here), or a client.
    progress : callable(done, total, family), optional
        Called in this process as each family is grown (in completion order).
    catalog : cr3bp.catalog.Catalog, optional
        Keep every family in this catalogue (ids in request order).

    Returns
    -------
    list of cr3bp.orbits.continuation.Family
        In the order of the requests; kept in a catalogue, ``.settings["catalog_id"]``.

    Raises
    ------
    InputError
        A malformed, repeated or targeted request; ``members``, ``until``, ``altitude``,
        ``max_step`` or ``workers`` out of range; an unreachable scheduler.

    Examples
    --------
    >>> import cr3bp
    >>> fams = cr3bp.atlas("earth-moon", "lyapunov L1, lyapunov L2", members=3)
    >>> [(f.point, len(f.members)) for f in fams]
    [('L1', 3), ('L2', 3)]
    >>> cr3bp.atlas("earth-moon", "lyapunov L1, lyapunov L1")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: family request 'lyapunov L1' repeats 'lyapunov L1'

    References
    ----------
    Doedel et al., *Int. J. Bifurcation and Chaos* 17, 2007 (families of the restricted
    problem, as :func:`family`); Rocklin, "Dask: parallel computation with blocked algorithms
    and task scheduling", Proc. 14th Python in Science Conference (SciPy 2015).
    """
    from .orbits import continuation, targets  # lazy: start-up: keeps cr3bp.api free of numpy
    from .transfers import tasks as tasks_mod  # lazy: start-up: keeps cr3bp.api free of numpy
    system = _as_system(system)
    items, specs = _atlas_entries(families)
    if isinstance(members, bool) or not isinstance(members, int) or not 2 <= members <= 5000:
        raise InputError(f"members {members!r} is outside the allowed range 2..5000")
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
    if max_step is not None and not (isinstance(max_step, (int, float)) and not isinstance(max_step, bool)
                                     and 0 < max_step < 1):
        raise InputError(f"max_step {max_step!r} is outside the allowed range (0, 1)")
    if workers is not None:
        workers = _whole("workers", workers, 1, 256)
    if scheduler is not None and isinstance(scheduler, str):
        tasks_mod.check_scheduler(scheduler, workers)
    jobs = [{"system": system, "family": s.family, "point": s.point or None, "branch": s.branch or None,
             "ratio": (f"{s.resonance[0]}:{s.resonance[1]}" if s.resonance else None), "members": members,
             "until": until, "altitude": altitude, "max_step": max_step} for s in specs]
    fams = tasks_mod.run_tasks(_atlas_grow, jobs, 1 if workers is None and scheduler is None else workers,
                               scheduler, (lambda done, total, fam: progress(done, total, fam)) if progress else None,
                               chunks_per_worker=len(jobs))
    if catalog is None:
        return fams
    from .orbits.request import catalog_member, catalog_settings  # lazy: start-up: keeps cr3bp.api free of numpy
    stops = continuation.Stops(max_members=members, altitude_km=alt, target=target)
    out = []
    for spec, fam in zip(specs, fams):
        fid = catalog.begin_family(system, spec.family, spec.point, spec.branch_label, catalog_settings(spec, stops))
        catalog.add_members(fid, [catalog_member(m, i) for i, m in enumerate(fam.members)])
        catalog.finish_family(fid, [b.to_dict() for b in fam.bifurcations], complete=True)
        out.append(replace(fam, settings={**fam.settings, "catalog_id": fid}))
    return out


# ---- torus atlas: many torus families in one call, one task each ------------------------

#: The separator of the torus requests in one text (a comma is a space inside a torus request,
#: cr3bp.tori.request.parse; a semicolon is in no request's words).
TORUS_ATLAS_SEPARATOR = ";"


def _torus_atlas_entries(sysm, tori):
    """The torus atlas's requests (a list, or one text separated by semicolons), each checked."""
    items = _atlas_items(tori, "tori", TORUS_ATLAS_SEPARATOR, "semicolons", "torus requests",
                         "'quasi-halo around halo L1 north az=10000km amplitude=300km'",
                         "'quasi-halo around halo L1 north az=10000km amplitude=300km; lissajous L2 "
                         "ay=30000km az=20000km'", "a torus atlas")
    from .orbits.request import parse_request  # lazy: start-up: keeps cr3bp.api free of numpy
    from .orbits.targets import make_target  # lazy: start-up: keeps cr3bp.api free of numpy
    from .tori import request as treq  # lazy: start-up: keeps cr3bp.api free of numpy
    specs, seen = [], {}
    for text in items:
        spec = treq.checked(sysm, text)
        # repeats compared by value, not by spelling ("10000km" and "1e4km" are one request)
        around = None
        if spec.around:
            o = parse_request(spec.around)
            t = make_target(sysm, o.key, o.value) if o.key else None
            around = (o.family, o.point, o.branch, o.resonance, o.occurrence,
                      None if t is None else (t.quantity, float(t.value)))
        ident = (spec.family, spec.point, around,
                 tuple(sorted((k, repr(v)) for k, v in treq.values(sysm, spec).items())))
        if ident in seen:
            raise InputError(f"torus request '{text}' repeats '{seen[ident]}'")
        seen[ident] = text
        specs.append(spec)
    return items, specs


def _catalog_records(cat):
    """Every family record of a catalogue (in id order), as plain data to copy elsewhere."""
    return [cat.family(f["id"]) for f in cat.list_families()]


def _torus_atlas_grow(task):
    """One torus family of a torus atlas (a task of the pool or of dask): :func:`torus` with
    ``members``, kept in a catalogue in memory when the caller keeps a catalogue. Returns
    ``(request, family, records, error)``: a request that cannot be solved comes back as its error."""
    from .catalog import Catalog  # lazy: start-up: keeps cr3bp.api free of numpy
    cat = Catalog(":memory:") if task["keep"] else None
    try:
        fam = torus(task["system"], task["request"], hold=task["hold"], members=task["members"], catalog=cat)
    except LibrateError as e:
        return task["request"], None, None, e
    return task["request"], fam, (_catalog_records(cat) if cat is not None else None), None


def torus_atlas(system, tori, *, members=5, hold="jacobi", workers=None, scheduler=None, progress=None,
                catalog=None):
    """Continue many families of tori at once, one task per family (``librate torus --atlas``).

    Every request is parsed and its values checked before any torus is solved. The families
    are continued here (``workers`` None or 1), over a process pool of ``workers`` processes,
    or on a dask.distributed cluster (``scheduler``), one task per family; each family is the
    one :func:`torus` gives for the request with ``members`` (bit for bit, wherever it is
    computed: the torus numerics run on one thread, :mod:`cr3bp.threads`). With a catalogue,
    each task keeps its records in a catalogue in memory and this process alone copies them
    into ``catalog`` after every family is done, in the order of the requests: the same
    records :func:`torus` with ``catalog`` keeps (a later single-family call reads them
    back). The atlas computes every family afresh; it does not read the catalogue.

    Parameters
    ----------
    system : System or str
    tori : str or list of str
        Torus requests (:mod:`cr3bp.tori.request`): a list, or one text with the requests
        separated by semicolons (a comma is a space inside a torus request), at most
        :data:`MAX_ATLAS_FAMILIES`, none repeated.
    members : int
        Tori continued after each family's first, 1..500 (as :func:`torus`; default 5).
    hold : {"jacobi", "rotation", "period"}
        Held along every family (default the Jacobi constant).
    workers : int, optional
        Processes (default: this one); with ``scheduler="local"`` the local cluster's size.
    scheduler : str or distributed.Client, optional
        A dask.distributed scheduler's address, ``"local"`` / ``"local:N"`` (a local cluster
        started and stopped here), or a client.
    progress : callable(done, total, request, family), optional
        Called in this process as each family is done (in completion order; ``family`` None
        for a request that could not be solved).
    catalog : cr3bp.catalog.Catalog, optional
        Keep every family in this catalogue (written only when every family is done).

    Returns
    -------
    list of cr3bp.tori.family.TorusFamily
        In the order of the requests.

    Raises
    ------
    InputError
        An empty, malformed or repeated request, more than :data:`MAX_ATLAS_FAMILIES`;
        ``members``, ``hold`` or ``workers`` out of range; a malformed scheduler.
    NoSolutionError, ConvergenceError
        The first request (in request order) whose torus or family could not be computed,
        after every task has ended; nothing is then kept in ``catalog``.

    Examples
    --------
    >>> import cr3bp
    >>> cr3bp.torus_atlas("earth-moon", "lissajous L1 ay=9000km az=9000km; liss L1 az=9000km ay=9000km")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: torus request 'liss L1 az=9000km ay=9000km' repeats 'lissajous L1 ay=9000km az=9000km'

    References
    ----------
    Baresi, Olikara and Scheeres, J. Astronaut. Sci. 65, 2018 (continuation of tori, as
    :func:`torus`); Rocklin, "Dask: parallel computation with blocked algorithms and task
    scheduling", Proc. 14th Python in Science Conference (SciPy 2015).
    """
    from .transfers import tasks as tasks_mod  # lazy: start-up: keeps cr3bp.api free of numpy
    system = _as_system(system)
    items, specs = _torus_atlas_entries(system, tori)
    members = _whole("members", members, 1, 500)
    _one_of("hold", hold, ("jacobi", "rotation", "period"))
    if workers is not None:
        workers = _whole("workers", workers, 1, 256)
    if scheduler is not None and isinstance(scheduler, str):
        tasks_mod.check_scheduler(scheduler, workers)
    jobs = [{"system": system, "request": text, "hold": hold, "members": members, "keep": catalog is not None}
            for text in items]
    results = tasks_mod.run_tasks(_torus_atlas_grow, jobs, 1 if workers is None and scheduler is None else workers,
                                  scheduler, (lambda n, total, r: progress(n, total, r[0], r[1])) if progress else None, chunks_per_worker=len(jobs))
    for _text, _fam, _recs, err in results:
        if err is not None:
            raise err
    fams = [r[1] for r in results]
    if catalog is not None and not getattr(catalog, "read_only", False):
        for _text, _fam, recs, _err in results:
            for rec in recs:
                fid = catalog.begin_family(system, rec["family"], rec["point"], rec["branch"], rec["settings"])
                catalog.add_members(fid, rec["members"])
                if rec["complete"]:
                    catalog.finish_family(fid, rec["bifurcations"], complete=True)
    return fams


def _piece_runner(workers, scheduler, source, apsis=False):
    """``runner(function, tasks)`` that propagates a tube in pieces over a pool (``workers``
    above 1) or a dask cluster (``scheduler``), or None (here); checked before any work."""
    if workers is not None:
        workers = _whole("workers", workers, 1, 256)
    if scheduler is None and workers in (None, 1):
        return None
    if not (_is_orbit(source) or _is_torus(source)) or apsis:
        raise InputError("workers/scheduler split the tube of a periodic orbit or a torus cut by a plane or a "
                         "sphere; a Lagrange point's manifold or an apsis map is computed in this process")
    return _task_runner(workers, scheduler)


def _task_runner(workers, scheduler):
    """``runner(function, tasks)`` over a pool (``workers`` above 1) or a dask cluster
    (``scheduler``, checked here), or None (here)."""
    if workers is not None:
        workers = _whole("workers", workers, 1, 256)
    if scheduler is None and workers in (None, 1):
        return None
    from .transfers import tasks as tasks_mod  # lazy: start-up: keeps cr3bp.api free of numpy
    if isinstance(scheduler, str):
        tasks_mod.check_scheduler(scheduler, workers)
        scheduler = scheduler.strip()

    def runner(function, items):
        return tasks_mod.run_tasks(function, items, workers, scheduler)
    return runner



def shadow_along(trajectory, *, epoch=None, system=None, step="5min", bodies=("earth", "moon"), stations=()):
    """Eclipse passes, sky angles and station windows along a trajectory file at its own epoch
    (``librate shadow --trajectory``).

    The file (an export, route, scenario or refined arc) is followed as written: CR3BP design
    states, or ephemeris-model states for a refined arc; the eclipse geometry comes from the
    DE421 ephemeris at the file's dates.

    Parameters
    ----------
    trajectory : str or path-like
        A trajectory file of ``librate export``, ``route``, ``run`` or ``refine`` (CCSDS OEM,
        OEM XML, CSV, JSON).
    epoch : str, optional
        ISO 8601 date of the file's time 0, only for a rotating-frame file without an epoch
        (then with ``system``).
    system : System or str, optional
        The file's system (earth-moon or sun-earth), for such a file; when given it must be
        the file's.
    step : str or float
        Sample step: a time with its unit (``"5min"``) or seconds, 10 s to 1 h (at most half
        the file's span).
    bodies : sequence of {"earth", "moon"}
        The eclipsing bodies.
    stations : sequence of cr3bp.operations.visibility.Station
        Ground stations whose windows of view are found
        (:func:`cr3bp.operations.visibility.read_stations` reads them from TOML).

    Returns
    -------
    (cr3bp.operations.along.Track, cr3bp.operations.along.Shadows)
        The trajectory at its epoch (``.start_tdb_s``, ``.end_tdb_s``, ``.spec``) and what was
        found along it (``.history`` of passes, angles, station windows).

    Raises
    ------
    InputError
        An unreadable file, a system other than the file's, a span over 20 years or under
        20 s, a step outside 10 s to 1 h, an unknown body.

    Examples
    --------
    >>> import cr3bp.api as api
    >>> api.shadow_along("no-such-file.oem")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: trajectory 'no-such-file.oem' is not a file

    References
    ----------
    Montenbruck and Gill, *Satellite Orbits*, 2000, §3.4.2 (conical shadow model); see
    :mod:`cr3bp.operations.along`.
    """
    from .operations import along, eclipses  # lazy: start-up: keeps cr3bp.api free of numpy
    if not Path(str(trajectory)).is_file():
        raise InputError(f"trajectory '{trajectory}' is not a file")
    bodies = tuple(str(b).strip().lower() for b in bodies)
    if not bodies or any(b not in eclipses.BODIES for b in bodies) or len(set(bodies)) != len(bodies):
        raise InputError(f"bodies {bodies!r}: allowed earth, moon or both")
    if isinstance(step, (int, float)) and not isinstance(step, bool):
        step_s = float(step)
    else:
        q = units.parse(str(step), "time")
        if q.unit == "TU":
            raise InputError(f"step '{step}': give the step in s, min or h (a file's TU is its own)")
        step_s = q.si()
    if not (math.isfinite(step_s) and 10.0 <= step_s <= 3600.0):
        raise InputError(f"step '{step}' is {step_s:g} s; allowed 10 s to 1 h")
    sysm = None if system is None else _as_system(system)
    track = along.from_file(trajectory, epoch=epoch, system=sysm)
    if sysm is not None and sysm.name != track.system.name:
        raise InputError(f"system {sysm.name}: the file '{trajectory}' is in {track.system.name}")
    span_s = track.end_tdb_s - track.start_tdb_s
    if span_s > 20 * 365.25 * 86400.0:
        raise InputError(f"'{trajectory}' spans more than 20 years")
    if span_s < 2 * step_s and span_s < 20.0:
        raise InputError(f"'{trajectory}' spans {span_s:g} s; at least 20 s are needed")
    return track, along.shadows(track, min(step_s, span_s / 2.0), bodies, tuple(stations))
