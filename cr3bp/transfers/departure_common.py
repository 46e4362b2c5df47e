"""Pieces shared by the parking-orbit transfers of periodic orbits
(:mod:`cr3bp.transfers.departure`) and of tori (:mod:`cr3bp.tori.departure`): geometry about a
primary, the departure perigee, backward propagation to a periapsis, the two-body first guess,
and least-norm Newton steps on constraints. All values are nondimensional, CR3BP, rotating
frame (state layout and units: /work/shared/design.md conventions, ``[x, y, z, vx, vy, vz]``).

Moved here from :mod:`cr3bp.transfers.departure` (where they were private, names with a
leading underscore) without a change in any number.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import brentq

from ..errors import StateError
from ..integrate import impact, propagate
from .lambert import lambert

#: Integration tolerances of the departure designs (relative and absolute).
RTOL = ATOL = 1e-12
#: Transfer angle of the first-guess Lambert arcs (degrees; 180 leaves the plane undefined).
GUESS_ANGLE_DEG = 170.0


def relative(system, state, primary):
    """Position and inertial velocity (rotating-frame components) of ``state`` relative to a
    primary.

    Parameters
    ----------
    system : System
    state : array_like, shape (6,) or more
        Rotating-frame state (nondimensional).
    primary : {0, 1}
        The larger (0) or smaller (1) primary.

    Returns
    -------
    rel, v_inertial : numpy.ndarray, shape (3,)
        ``r - r_primary`` and ``v + omega x (r - r_primary)`` (unit rate about z).

    Raises
    ------
    IndexError
        ``primary`` is not 0 or 1.

    Examples
    --------
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> rel, v = relative(em, [1.0 - em.mu + 0.01, 0, 0, 0, 0, 0], 1)
    >>> [round(float(a), 6) for a in rel], [round(float(a), 6) for a in v]
    ([0.01, 0.0, 0.0], [0.0, 0.01, 0.0])

    References
    ----------
    Szebehely, *Theory of Orbits*, 1967, §1.3 (the rotating frame; inertial velocity
    ``v + omega x r``).
    """
    c = np.array([system.positions[primary], 0.0, 0.0])
    rel = np.asarray(state[:3], dtype=float) - c
    v = np.asarray(state[3:6], dtype=float)
    return rel, v + np.array([-rel[1], rel[0], 0.0])


def perigee_summary(system, state):
    """The departure perigee of ``state`` about the Earth (primary 0): radius, inertial speed,
    circular speed there, inclination of the osculating plane to the x-y plane, and the
    tangential burn ``dv = |v_inertial| - sqrt(GM_E / r)``.

    Parameters
    ----------
    system : System
    state : array_like, shape (6,)
        Rotating-frame state at the perigee.

    Returns
    -------
    dict
        ``radius`` (LU), ``speed_inertial``, ``speed_circular`` (LU/TU), ``inclination_deg``,
        ``dv`` (LU/TU).

    Raises
    ------
    ValueError
        Never for a state off the Earth's centre (a zero angular momentum gives NaN).

    Examples
    --------
    >>> import math
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> r = 6578.0 / em.length_km
    >>> vc = math.sqrt((1 - em.mu) / r)
    >>> p = perigee_summary(em, [-em.mu + r, 0, 0, 0, vc - r, 0])
    >>> round(p["dv"], 12), round(p["inclination_deg"], 6)
    (0.0, 0.0)

    References
    ----------
    Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed., 2013, §6.3 (tangential
    burn from a circular orbit).
    """
    rel, vin = relative(system, state, 0)
    r = float(np.linalg.norm(rel))
    speed = float(np.linalg.norm(vin))
    h = np.cross(rel, vin)
    inc = math.degrees(math.acos(max(-1.0, min(1.0, h[2] / np.linalg.norm(h)))))
    vc = math.sqrt((1.0 - system.mu) / r)
    return {"radius": r, "speed_inertial": speed, "speed_circular": vc, "inclination_deg": inc,
            "dv": speed - vc}


class Periapsis:
    """Backward propagation to the first close periapsis about a primary.

    Parameters
    ----------
    system : System
    primary : {0, 1}
        The primary whose periapsis is sought.
    within : float
        A periapsis counts only closer than this to the primary's centre (LU).
    stop_radius : (float, float)
        Impact radii (LU) of the two primaries that stop a propagation.

    Examples
    --------
    A state just past perigee on a circular orbit: its periapsis lies a moment back in time.

    >>> import math
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> r = 6578.0 / em.length_km
    >>> v = 1.2 * math.sqrt((1 - em.mu) / r)
    >>> pa = Periapsis(em, 0, 0.2, (0.5 * em.radii[0], em.radii[1]))
    >>> t, s = pa.find([-em.mu + r, 0, 0, 1e-3, v - r, 0], 0.1)
    >>> bool(-0.01 < t < 0.0), bool(abs(pa.g(s)) < 1e-12)
    (True, True)

    References
    ----------
    Brent, *Algorithms for Minimization without Derivatives*, 1973, ch. 4 (the root of
    ``r . v`` between samples; scipy's brentq).
    """

    def __init__(self, system, primary, within, stop_radius):
        self.system = system
        self.p = primary
        self.c = np.array([system.positions[primary], 0.0, 0.0])
        self.within = within
        self.events = [impact(0, stop_radius[0]), impact(1, stop_radius[1])]

    def g(self, s):
        """``(r - r_primary) . v`` of one state or an array of states.

        Parameters
        ----------
        s : numpy.ndarray, shape (..., 6)

        Returns
        -------
        numpy.ndarray or float

        Raises
        ------
        IndexError
            Fewer than six components.

        Examples
        --------
        >>> from cr3bp import system
        >>> em = system("earth-moon")
        >>> float(Periapsis(em, 0, 0.2, (0.001, 0.001)).g(np.array([1.0 - em.mu, 0, 0, 1.0, 0, 0])))
        1.0
        """
        rel = s[..., :3] - self.c
        return np.sum(rel * s[..., 3:6], axis=-1)

    def find(self, state, t_max):
        """(t <= 0, state) at the first periapsis backward in time within ``t_max``, or None.

        Parameters
        ----------
        state : array_like, shape (6,)
        t_max : float
            Longest backward time (TU, positive).

        Returns
        -------
        (float, numpy.ndarray) or None
            None when no close periapsis comes, the propagation stops, or a trial state lies
            inside a primary.

        Raises
        ------
        ConvergenceError
            The integrator fails.

        Examples
        --------
        See the class.
        """
        try:
            return self._find(state, t_max)
        except StateError:   # a trial state inside a primary
            return None

    def _find(self, state, t_max):
        arc = propagate(self.system, state, -t_max, rtol=RTOL, atol=ATOL, events=self.events)
        if arc.status not in ("time", "impact"):
            return None
        g = self.g(arc.states)
        d = np.linalg.norm(arc.states[:, :3] - self.c, axis=1)
        # backward in time, a periapsis is g going from + (later) to - (earlier)
        idx = np.nonzero((g[:-1] > 0.0) & (g[1:] <= 0.0) & (np.minimum(d[:-1], d[1:]) < self.within))[0]
        if idx.size == 0:
            return None
        j = int(idx[0])
        t_j, s_j = float(arc.t[j]), arc.states[j]
        dt_lo = float(arc.t[j + 1]) - t_j

        def gap(dt):
            if dt == 0.0:
                return float(self.g(s_j))
            return float(self.g(propagate(self.system, s_j, dt, rtol=RTOL, atol=ATOL).final_state))

        try:
            dt = brentq(gap, dt_lo, 0.0, xtol=1e-15, rtol=1e-14, maxiter=100)
            s = propagate(self.system, s_j, dt, rtol=RTOL, atol=ATOL).final_state if dt != 0.0 else s_j
        except StateError:
            # the periapsis lies below the surface (a trial point of the search): the nearer
            # sample is enough to tell the optimiser it is far too low
            jj = j if d[j] < d[j + 1] else j + 1
            return float(arc.t[jj]), np.array(arc.states[jj])
        return t_j + dt, np.array(s)


def plane_normal(u, inc, pole=None):
    """A unit normal perpendicular to ``u`` whose inclination to ``pole`` (default z) is closest
    to ``inc``.

    Parameters
    ----------
    u : numpy.ndarray, shape (3,)
        Unit vector in the plane.
    inc : float or None
        Inclination (rad); None: the normal closest to +z.
    pole : numpy.ndarray, shape (3,), optional
        Unit pole the inclination is measured from (rotating axes; default the model's z axis,
        the normal of the Moon's orbit plane).

    Returns
    -------
    numpy.ndarray, shape (3,)

    Raises
    ------
    ValueError
        Never for a unit ``u``.

    Examples
    --------
    >>> [float(a) for a in plane_normal(np.array([1.0, 0.0, 0.0]), None)]
    [0.0, 0.0, 1.0]

    References
    ----------
    Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed., 2013, §2.5 (orbit plane and
    inclination from the angular momentum).
    """
    z = np.array([0.0, 0.0, 1.0])
    a = z - (z @ u) * u
    if np.linalg.norm(a) < 1e-9:
        a = np.array([1.0, 0.0, 0.0]) - u[0] * u
    a /= np.linalg.norm(a)
    if inc is None:
        return a
    b = np.cross(u, a)
    phis = np.linspace(0.0, math.pi, 721)
    ns = np.cos(phis)[:, None] * a + np.sin(phis)[:, None] * b
    axis = ns[:, 2] if pole is None else ns @ np.asarray(pole, dtype=float)
    k = int(np.argmin(np.abs(np.arccos(np.clip(axis, -1, 1)) - inc)))
    return ns[k]


def lambert_arrival(system, r_park, target_pos, tof, inc, pole=None):
    """Two-body (Earth) arc from a perigee ``GUESS_ANGLE_DEG`` before ``target_pos``.

    Parameters
    ----------
    system : System
    r_park : float
        Parking radius (LU).
    target_pos : array_like, shape (3,)
        Rotating-frame position to reach (barycentric).
    tof : float
        Time of flight (TU).
    inc : float or None
        Inclination of the arc's plane (rad), or None (closest to the x-y plane, prograde).
    pole : numpy.ndarray, shape (3,), optional
        Pole ``inc`` is measured from (default z; :func:`plane_normal`).

    Returns
    -------
    dv1 : float
        Burn at the perigee in the two-body sense (LU/TU).
    v2 : numpy.ndarray, shape (3,)
        Arrival velocity relative to the Earth (inertial components).
    rel : numpy.ndarray, shape (3,)
        ``target_pos`` relative to the Earth.

    Raises
    ------
    InputError, NoSolutionError
        From :func:`cr3bp.transfers.lambert.lambert`.

    Examples
    --------
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> dv1, v2, rel = lambert_arrival(em, 6578.0 / em.length_km, [0.5, 0.5, 0.0], 4.0 / em.days(1.0), None)
    >>> 3.0 < em.mps(dv1) / 1e3 < 3.3
    True

    References
    ----------
    Izzo, "Revisiting Lambert's problem", *Celestial Mechanics and Dynamical Astronomy* 121,
    2015.
    """
    gm = 1.0 - system.mu
    rel = np.asarray(target_pos, dtype=float) - np.array([system.positions[0], 0.0, 0.0])
    u = rel / np.linalg.norm(rel)
    n = plane_normal(u, inc, pole)
    e2 = np.cross(n, u)
    th = math.radians(GUESS_ANGLE_DEG)
    r0 = r_park * (math.cos(th) * u - math.sin(th) * e2)
    v1, v2 = lambert(r0, rel, tof, gm, prograde=n[2] >= 0.0)
    return float(np.linalg.norm(v1) - math.sqrt(gm / r_park)), v2, rel


def equator_pole(system, epoch_tdb_s: float) -> np.ndarray:
    """The Earth's equator pole (the z axis of the mean equator and equinox of J2000, EME2000) on
    the Earth–Moon rotating axes of ``epoch_tdb_s``, the rotating frame anchored to the Moon's
    ephemeris (DE421) at that instant (:func:`cr3bp.time.frames.basis`).

    Parameters
    ----------
    system : System
        Earth–Moon, with dimensional units.
    epoch_tdb_s : float
        TDB seconds since J2000.

    Returns
    -------
    numpy.ndarray, shape (3,)
        Unit vector; its z component is the cosine of the Moon's orbit plane's inclination to
        the equator (18.3 to 28.6 degrees over the 18.6-year nodal cycle, common practice).

    Raises
    ------
    InputError
        An epoch outside the ephemeris' span.

    Examples
    --------
    >>> import math
    >>> from cr3bp import system
    >>> p = equator_pole(system("earth-moon"), 0.0)          # 2000-01-01 12:00 TDB
    >>> 18.0 < math.degrees(math.acos(p[2])) < 29.0
    True

    References
    ----------
    The instantaneous rotating frame of the secondary's ephemeris: Gómez, Llibre, Martínez &
    Simó, *Dynamics and Mission Design Near Libration Points*, vol. I, 2001, ch. 1 (from memory).
    """
    from ..time import frames  # lazy: the ephemeris, only for a dated departure
    c, _, _, _ = frames.basis(frames.frame(system, float(epoch_tdb_s), anchor="ephemeris",
                                           axes="j2000-equator"), [float(epoch_tdb_s)])
    pole = c[0][2, :]           # the rows of C are the output axes on the rotating axes
    return pole / np.linalg.norm(pole)


def inclination_to(system, s_p, pole) -> float:
    """Inclination (rad) of the Earth-relative orbit through the rotating state ``s_p`` to the
    plane whose unit normal is ``pole`` (rotating axes).

    Parameters
    ----------
    system : System
    s_p : numpy.ndarray, shape (6,)
        Rotating-frame state (barycentric, nondimensional).
    pole : numpy.ndarray, shape (3,)

    Returns
    -------
    float

    Raises
    ------
    ValueError
        Never for a state off the Earth's centre.

    Examples
    --------
    >>> import math
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> s = np.array([-em.mu + 0.02, 0.0, 0.0, 0.0, 7.0, 0.0])
    >>> round(math.degrees(inclination_to(em, s, np.array([0.0, 0.0, 1.0]))), 6)
    0.0

    References
    ----------
    Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed., 2013, §2.5 (inclination
    from the angular momentum).
    """
    rel, vin = relative(system, s_p, 0)
    h = np.cross(rel, vin)
    return math.acos(max(-1.0, min(1.0, float(h @ pole) / float(np.linalg.norm(h)))))


def newton(pb, z, resid, idx, tol=1e-8, max_step=0.05, iterations=30):
    """Least-norm Newton steps on ``resid(pb, z)`` over the unknowns ``idx`` (forward finite
    differences of step 1e-7).

    Parameters
    ----------
    pb : object
        Passed through to ``resid``.
    z : array_like
        Start.
    resid : callable(pb, z) -> numpy.ndarray or None
        Residuals (None: undefined there).
    idx : iterable of int
        The unknowns moved.
    tol, max_step : float
        Largest residual accepted; longest step.
    iterations : int

    Returns
    -------
    numpy.ndarray or None
        A point near ``z`` where every residual is below ``tol``, or None.

    Raises
    ------
    numpy.linalg.LinAlgError
        The pseudo-inverse fails (non-finite residuals).

    Examples
    --------
    >>> z = newton(None, [2.0, 0.0], lambda p, z: np.array([z[0] ** 2 - 2.0]), [0], max_step=1.0)
    >>> round(float(z[0]), 8)
    1.41421356

    References
    ----------
    Ben-Israel, "A Newton-Raphson method for the solution of systems of equations", *J. Math.
    Anal. Appl.* 15, 1966 (least-norm steps by the pseudo-inverse).
    """
    z = np.array(z, dtype=float)
    idx = list(idx)
    for _ in range(iterations):
        c = resid(pb, z)
        if c is None:
            return None
        if np.all(np.abs(c) < tol):
            return z
        J = np.empty((c.size, len(idx)))
        for j, i in enumerate(idx):
            zp = z.copy()
            zp[i] += 1e-7
            cp = resid(pb, zp)
            if cp is None:
                return None
            J[:, j] = (cp - c) / 1e-7
        step = -np.linalg.pinv(J) @ c
        n = np.linalg.norm(step)
        if n > max_step:
            step *= max_step / n
        z[idx] += step
    c = resid(pb, z)
    return z if c is not None and np.all(np.abs(c) < tol) else None


__all__ = ["ATOL", "GUESS_ANGLE_DEG", "Periapsis", "RTOL", "equator_pole", "inclination_to", "lambert_arrival",
           "newton", "perigee_summary", "plane_normal", "relative"]
