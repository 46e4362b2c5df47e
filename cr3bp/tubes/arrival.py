"""Arrival at a periodic orbit: when a trajectory first comes within a stated distance of the
orbit's path (the time of flight to arrival of a leg; see
:data:`cr3bp.transfers.leg.TOF_DEFINITIONS`).

The nearest point of the path is found with a k-d tree over the sampled orbit and refined on
the two polyline segments meeting there; the crossing time by Brent's method (Brent,
*Algorithms for Minimization without Derivatives*, 1973, ch. 4, as scipy's ``brentq``).
"""

from __future__ import annotations


import numpy as np
from scipy.optimize import brentq
from scipy.spatial import cKDTree

from ..validate import positive_number
from ..integrate import propagate
from .manifolds import ATOL, RTOL


#: Distance from the target orbit's path at which a leg counts as arrived, km (a design choice
#: of librate, not a standard): 1 000 km in Earth-Moon, 10 000 km in Sun-Earth; elsewhere 1 % of
#: the smaller primary's Hill radius LU (mu/3)^(1/3) (:func:`arrival_distance_km`).
ARRIVAL_DISTANCE_KM = {"earth-moon": 1000.0, "sun-earth": 10000.0}
#: Points per period on the target orbit's path (nearest point refined on the polyline).
ORBIT_PATH_SAMPLES = 20000
#: Samples per ballistic segment when looking for the first approach (then Brent's method).
ARRIVAL_SCAN_SAMPLES = 4000


def arrival_distance_km(system) -> float:
    """The default arrival distance of ``system`` (:data:`ARRIVAL_DISTANCE_KM`), km.

    In a system without units, the same 1 % of the Hill radius in LU.

    Parameters
    ----------
    system : System
        The system.

    Returns
    -------
    float
        km (LU without units).

    Raises
    ------
    AttributeError
        Not a system.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> em = system("earth-moon")
    >>> arrival_distance_km(em)
    1000.0

    References
    ----------
    Common practice (an arrival sphere about the target orbit's path).
    """
    if system.name in ARRIVAL_DISTANCE_KM:
        return ARRIVAL_DISTANCE_KM[system.name]
    hill = (system.mu / 3.0) ** (1.0 / 3.0)
    return 0.01 * hill * (system.length_km if system.dimensional else 1.0)


_PATHS: dict = {}


def orbit_path(orbit, n: int = ORBIT_PATH_SAMPLES) -> np.ndarray:
    """Positions (n, 3), LU, evenly in time over one period of ``orbit`` (the closed path).
    The last few paths are kept (every candidate leg to one orbit reuses its path).

    Parameters
    ----------
    orbit : PeriodicOrbit
        The orbit.
    n : int, optional
        Samples.

    Returns
    -------
    numpy.ndarray, shape (n, 3)
        Positions, LU.

    Raises
    ------
    NoSolutionError
        The propagation stops early.

    Examples
    --------
    >>> path = orbit_path(nrho, 500)             # doctest: +SKIP

    References
    ----------
    Hairer, E., Nørsett, S. P. & Wanner, G., "Solving Ordinary Differential Equations I",
    2nd ed., Springer (1993), sec. II.6.
    """
    key = (float(orbit.system.mu), float(orbit.period), np.asarray(orbit.state, dtype=float).tobytes(), int(n))
    if key not in _PATHS:
        te = np.linspace(0.0, orbit.period, int(n) + 1)
        arc = propagate(orbit.system, orbit.state, orbit.period, t_eval=te, rtol=RTOL, atol=ATOL)
        if len(_PATHS) >= 8:
            _PATHS.pop(next(iter(_PATHS)))
        _PATHS[key] = arc.states[:-1, :3].copy()
        _PATHS[key].flags.writeable = False
    return _PATHS[key]


def distance_to_path(path, points) -> np.ndarray:
    """Distance (LU) from each point (K, 3) to the closed polyline through ``path`` (n, 3): the
    nearest vertex (k-d tree), then the nearest point of the two segments meeting there.

    Parameters
    ----------
    path : numpy.ndarray, shape (n, 3)
        Vertices of the closed polyline.
    points : numpy.ndarray, shape (K, 3)
        The points.

    Returns
    -------
    numpy.ndarray, shape (K,)
        LU.

    Raises
    ------
    ValueError
        Arrays of the wrong shape.

    Examples
    --------
    >>> square = np.array([[0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0]], dtype=float)
    >>> distance_to_path(square, np.array([[0.5, -0.2, 0.0]])).round(12).tolist()
    [0.2]

    References
    ----------
    Bentley, J. L., "Multidimensional binary search trees used for associative searching",
    Communications of the ACM 18, 509 (1975).
    """
    pts = np.atleast_2d(np.asarray(points, dtype=float))
    n = len(path)
    _, i = cKDTree(path).query(pts)
    best = np.linalg.norm(pts - path[i], axis=1)
    for j in (i - 1, i):
        a, b = path[j % n], path[(j + 1) % n]
        ab = b - a
        u = np.clip(np.einsum("ij,ij->i", pts - a, ab) / np.maximum(np.einsum("ij,ij->i", ab, ab), 1e-300),
                    0.0, 1.0)
        best = np.minimum(best, np.linalg.norm(pts - (a + u[:, None] * ab), axis=1))
    return best


def arrival_time(system, segments, orbit, distance_km=None, path=None):
    """When a leg's trajectory first comes within ``distance_km`` (default
    :func:`arrival_distance_km`) of the path of ``orbit``.

    ``segments``: the leg's ballistic arcs ``(t0, state, duration)`` forward in time (as
    :class:`Leg` holds them). Each is sampled at :data:`ARRIVAL_SCAN_SAMPLES` points, the first
    sample inside the distance is bracketed with the one before it and the crossing found by
    Brent's method on the re-propagated state (Brent, *Algorithms for Minimization without
    Derivatives*, 1973, ch. 4, as scipy's ``brentq``).

    Returns
    -------
    (t, distance_km) : TU from the leg's start; the leg's full duration when it never comes that
    close (it then ends on the orbit at its step-off point).

    Parameters
    ----------
    system : System
        The system.
    segments : sequence of (float, array_like, float)
        The leg's ballistic arcs.
    orbit : PeriodicOrbit
        The target orbit.
    distance_km : float, optional
        The arrival distance.
    path : numpy.ndarray, optional
        :func:`orbit_path` of the orbit.

    Raises
    ------
    NoSolutionError
        A segment cannot be propagated.

    Examples
    --------
    >>> t, d = arrival_time(em, leg.segments, nrho)       # doctest: +SKIP

    References
    ----------
    Brent, R. P., "Algorithms for Minimization without Derivatives", Prentice-Hall (1973),
    ch. 4.
    """
    d_km = (arrival_distance_km(system) if distance_km is None
            else positive_number("arrival distance (km)", distance_km))
    lu = d_km / system.length_km if system.dimensional else d_km
    path = orbit_path(orbit) if path is None else path
    end = 0.0
    for t0, s0, dur in segments:
        if dur <= 0:
            continue
        end = max(end, float(t0) + float(dur))
        te = np.linspace(0.0, float(dur), ARRIVAL_SCAN_SAMPLES)
        arc = propagate(system, s0, float(dur), t_eval=te, rtol=RTOL, atol=ATOL)
        d = distance_to_path(path, arc.states[:, :3])
        inside = np.nonzero(d <= lu)[0]
        if inside.size == 0:
            continue
        k = int(inside[0])
        if k == 0:
            return float(t0), d_km
        sa, h = arc.states[k - 1], float(te[k] - te[k - 1])

        def gap(dt):
            if dt == 0.0:
                return float(d[k - 1] - lu)
            st = propagate(system, sa, dt, rtol=RTOL, atol=ATOL).states[-1]
            return float(distance_to_path(path, st[:3])[0] - lu)
        dt = brentq(gap, 0.0, h, xtol=1e-12 * max(1.0, h), rtol=1e-14, maxiter=100)
        return float(t0) + float(te[k - 1]) + dt, d_km
    return end, d_km
