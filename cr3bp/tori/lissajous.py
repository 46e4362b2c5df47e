"""Lissajous tori at L1/L2 targeted by their in-plane and out-of-plane amplitudes (Ay, Az).

The measured amplitudes of a torus (:func:`measured_amplitudes`) are

* ``ay`` = the largest ``|y|`` and ``az`` = the largest ``|z|`` over the torus surface, i.e.
  the distances from the x-z and x-y planes through the collinear point (both contain the
  point, y = z = 0), taken over the trajectories of at least 45 points of the invariance
  circle (Fourier-interpolated) sampled 96 times per stroboscopic time, each maximum refined
  by the quadratic through the 3 x 3 samples around it (:func:`torus.build`,
  :func:`torus.refined_max`). Sampling only the N circle points' trajectories (as before)
  made the maxima jump by up to a few per cent between neighbouring tori and stalled the
  secant iteration below.

Method (a two-parameter target needs both parameters of the 2-D family of Lissajous tori):

1. the target's Jacobi constant estimated from the linear solution at the point (the energies
   of the in-plane and out-of-plane oscillations of amplitudes Ay and Az add:
   :func:`seeds.linear_lissajous_jacobi`, Richardson 1980 eq. 7 in the Jacobi integral; its
   third-order error, under 10 % of the oscillations' energy at Sun–Earth observatory sizes, is
   corrected by step 3), and the planar Lyapunov orbit with that Jacobi constant, the family
   grown from the point only until it passes it (the family's edge ``Az = 0``); past the halo
   bifurcation it has no centre eigenpair (no Lissajous tori about it), and the vertical orbit
   with it (the edge ``Ay = 0``) is used. (The estimate used to be ``C_p + C_v - C_L`` from the
   planar orbit with ``Ay`` and the vertical orbit with ``Az``, which grew both periodic
   families whole: about half the CPU time of a torus);
2. a small torus about it at the orbit's Jacobi constant (:func:`torus.torus_around`), its
   amplitudes measured, and ``d(ay, az)/d(C, a)`` by finite differences in the two held
   quantities of the torus (Jacobi constant C and RMS circle size a);
3. a walk along the two-parameter family in (C, a) from the amplitudes of that small torus
   towards the target on the straight line between them (``_ray``): each step aims at the
   next point of the line with Broyden's estimate of ``d(ay, az)/d(C, a)``, its torus
   predicted by the quadratic through the last three tori of the walk (the family's tangent
   for the first two), the step length adapted to the torus Newton's iterations; at the
   target the same steps repeat until both amplitudes are within ``AMPLITUDE_RTOL``;
4. targets larger than ``RAY_START`` times the point's distance from the smaller primary
   take their Lyapunov orbit and small torus (steps 1-2) for the target scaled down to that
   size (the linear estimate of the Jacobi constant is poor at the full size, and may put it
   past the halo bifurcation), and walk (step 3) from there to the full target.

Before 2026-12-03 step 2 continued the small torus at fixed Jacobi constant by
pseudo-arclength until its other amplitude passed the target, and step 3 met intermediate
targets one after another with several secant iterations each: 21.5 s of computation for the
issue's 800000 x 500000 km Sun–Earth L2 example on a quiet machine; the walk takes about a
tenth of that (``benchmarks/bench_tori.py``).

The target is refused (``NoSolutionError``, CLI exit 3) when the Lyapunov orbit does not exist,
or the iteration cannot reach it; the message gives the range of (ay, az) reached.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import ConvergenceError, InputError, NoSolutionError
from . import circle, seeds, solver
from .family import hold_tangents
from .store import cached_torus
from .torus import SurfaceError, build, lissajous_near_point, solve_adaptive, torus_around
from ..equilibria import lagrange_point
from ..orbits.continuation import Stops
from ..orbits.families import grow_family
from ..orbits.request import parse_request, solve_request
from ..validate import positive_number
from ..catalog import Catalog

#: Relative tolerance on each measured amplitude.
AMPLITUDE_RTOL = 1e-5
POINTS = ("L1", "L2")
#: The first torus about the Lyapunov orbit: RMS circle size as a fraction of Ay (or Az/sqrt 2).
SEED_FRACTION = 0.04
#: Targets larger than this fraction of the point's distance from the smaller primary (either
#: amplitude) start from the target scaled down to this size (step 4).
RAY_START = 0.2
#: Walk in amplitude (``_ray``): first, largest and smallest step in the fraction f of the
#: way from the amplitudes reached to the target; a step is kept when its amplitudes land
#: within ``RAY_BAD`` of its point (relative to the step), and may grow only when they land
#: within ``RAY_GOOD``; at most ``RAY_MAX_SOLVES`` torus solves.
RAY_FIRST_STEP, RAY_MAX_STEP, RAY_MIN_STEP = 0.04, 1.0, 1e-3
RAY_GOOD, RAY_BAD = 0.2, 0.5
#: ... the step grows by ``RAY_GROWTH`` after a torus solve of at most ``RAY_EASY`` Newton
#: iterations and shrinks by ``RAY_SHRINK`` after one of more than ``RAY_HARD`` (the torus
#: Newton's range, not the amplitudes' curvature, limits the step: a failed solve costs
#: several times a good one).
RAY_GROWTH, RAY_SHRINK, RAY_EASY, RAY_HARD = 1.5, 0.7, 3, 4
RAY_MAX_SOLVES = 80
#: Predict each torus of the walk by the quadratic through the last three (``_extrapolate``).
RAY_QUADRATIC = True


def measured_amplitudes(torus) -> tuple[float, float]:
    """``(ay, az)`` in LU: largest ``|y|`` and ``|z|`` over the sampled torus surface (module
    notes).

    Parameters
    ----------
    torus : Torus
        A torus with its sampled extent (``extent_lu``: axis -> (min, max), LU).

    Returns
    -------
    (float, float)
        ``ay`` and ``az``, LU.

    Raises
    ------
    AttributeError
        ``torus`` has no ``extent_lu``.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> from cr3bp.tori.lissajous import measured_amplitudes
    >>> t = SimpleNamespace(extent_lu={"y": (-0.03, 0.028), "z": (-0.01, 0.012)})
    >>> measured_amplitudes(t)
    (0.03, 0.012)

    References
    ----------
    Richardson, Celestial Mechanics 22, 1980 (Ay, Az as the Lissajous amplitudes); the sampling
    is our own (module notes).
    """
    e = torus.extent_lu
    return (max(abs(e["y"][0]), abs(e["y"][1])), max(abs(e["z"][0]), abs(e["z"][1])))


def _check(name, v):
    return positive_number(f"{name} (LU)", v)


def lissajous(system, point: str, ay_lu: float, az_lu: float, progress=None,
              rtol: float = AMPLITUDE_RTOL, catalog=None):
    """The Lissajous torus at ``point`` (L1 or L2) with measured amplitudes ``ay_lu, az_lu``.

    A small torus about the planar Lyapunov (or vertical) orbit with the target's estimated
    Jacobi constant, then a walk along the two-parameter family in amplitude from its
    amplitudes to the target (module notes, steps 1-3); targets larger than ``RAY_START``
    (times the point's distance from the smaller primary) take the orbit and small torus for
    the target scaled down to that size (step 4).

    Returns a :class:`Torus` with ``extra["ay_lu"], extra["az_lu"]`` (measured),
    ``extra["target_iterations"]`` and ``extra["ray_steps"]``. ``progress(message)`` receives
    one line per step.

    With a ``catalog`` (:class:`cr3bp.catalog.Catalog`) the torus is read from it when this
    target was solved before (:mod:`cr3bp.tori.store`), else solved and stored. The planar
    Lyapunov orbit it starts from is grown from the point up to the target's Jacobi constant
    each time (a few hundredths of a second); the vertical orbit, needed only past the halo
    bifurcation, is read from and kept in the catalogue (without one, a scratch in-memory
    catalogue).

    Parameters
    ----------
    system : System
    point : {"L1", "L2"}
    ay_lu, az_lu : float
        Target in-plane and out-of-plane amplitudes, LU (positive).
    progress : callable(str), optional
        Receives one line per step.
    rtol : float
        Relative tolerance on each measured amplitude.
    catalog : cr3bp.catalog.Catalog, optional
        Where solved tori and the edge orbits are kept.

    Returns
    -------
    Torus
        With ``extra["ay_lu"]``, ``extra["az_lu"]`` (measured), ``extra["target_iterations"]``
        and ``extra["ray_steps"]``.

    Raises
    ------
    InputError
        A point other than L1/L2, or a non-positive amplitude.
    NoSolutionError
        The target is not reachable (the message gives the range of amplitudes reached).

    Examples
    --------
    >>> t = lissajous(em, "L2", 0.02, 0.015)                    # doctest: +SKIP
    >>> from cr3bp import system
    >>> from cr3bp.tori.lissajous import lissajous
    >>> lissajous(system("earth-moon"), "L4", 0.01, 0.01)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: point 'L4': Lissajous tori by amplitudes are built at L1 or L2

    References
    ----------
    Richardson, Celestial Mechanics 22, 1980 (Lissajous amplitudes); Olikara & Scheeres, AAS
    12-361, 2012 (the torus solve); Baresi, Olikara & Scheeres 2018 (two-parameter families).
    """
    if point not in POINTS:
        raise InputError(f"point '{point}': Lissajous tori by amplitudes are built at L1 or L2")
    ay_lu, az_lu = _check("ay", ay_lu), _check("az", az_lu)
    request = {"kind": "lissajous by amplitudes", "ay_lu": ay_lu, "az_lu": az_lu, "rtol": rtol}
    return cached_torus(catalog, system, point, request,
                        lambda: _lissajous(system, point, ay_lu, az_lu, progress, rtol, catalog))


def _lissajous(system, point, ay_lu, az_lu, progress, rtol, catalog):
    if catalog is None:
        catalog = Catalog(":memory:")    # the edge orbits' families, grown once
    say = progress or (lambda m: None)
    km = (lambda v: f"{system.km(v):,.0f} km") if system.dimensional else (lambda v: f"{v:.4g} LU")
    seen = []

    def reached():
        if not seen:
            return "nothing was reached"
        ys, zs = [s[0] for s in seen], [s[1] for s in seen]
        return (f"reached Ay {km(min(ys))} to {km(max(ys))}, Az {km(min(zs))} to "
                f"{km(max(zs))}")
    target = np.array([ay_lu, az_lu])
    big = RAY_START * _gamma(system, point)
    f0 = min(1.0, big / target.max())
    t, p, m, J = _seed(system, point, f0 * target, say, km, seen, reached, catalog=catalog)
    t, p, m, J, its, steps = _ray(system, point, t, p, m, J, target, rtol, say, km, seen,
                                  reached)
    extra = dict(t.extra)
    extra.update({"ay_lu": float(m[0]), "az_lu": float(m[1]), "target_iterations": its,
                  "ray_steps": steps, "target_ay_lu": ay_lu, "target_az_lu": az_lu})
    # the walk's tori were measured without their closest approaches: the last one in full
    # (the same surface sampling, so the same extents) with its stability
    return build(system, t.circle, t.stroboscopic_time, t.rotation, t.invariance_error,
                 t.invariance_tolerance, family=t.family, point=t.point, around=t.around,
                 holds=t.holds, iterations=t.iterations, extra=extra)


def _solve_at(system, point, t, C, a, ref, guess=None):
    """The torus holding Jacobi constant C and circle size a, warm-started from ``t`` by the
    family's tangent predictor (:func:`family.hold_tangents`): the whole unknown vector
    ``[U, T, rho]`` of ``t`` moved by ``dx/d(C, a) . (C - C_t, a - a_t)``, so that the
    stroboscopic time and rotation move with the circle (scaling the circle alone left T and
    rho behind and put large steps outside Newton's range). Its phase conditions are against
    the fixed reference torus ``ref`` (``(U, T, rho)``). The circle's size depends on the
    section theta_0 = 0 the phase condition picks: with one reference for all the solves of a
    correction, the amplitudes are a smooth function of (C, a); a reference that moved with
    every solve made them noisy."""
    holds = {"jacobi": C, "amplitude": a}
    if guess is not None:           # the walk's extrapolation along its line (``_ray``)
        x = guess
        n = (x.size - 2) // 6
    else:
        n = t.n_circle_points
        key = (id(t), id(ref))
        if _TANGENTS.get("key") != key:
            _TANGENTS.clear()
            _TANGENTS.update(key=key, d=hold_tangents(system, t, holds, ref), t=t, ref=ref)
        dx = _TANGENTS["d"] @ np.array([C - t.jacobi, a - t.amplitude_lu])
        x = np.concatenate([t.circle.ravel(), [t.stroboscopic_time, t.rotation]]) + dx
    u, T0, rho0 = x[:6 * n].reshape(n, 6), x[-2], x[-1]
    u1, T1, rho1, info = solve_adaptive(system, u, T0, rho0, holds, reference=ref)
    return build(system, u1, T1, rho1, info["invariance_error"], info["invariance_tolerance"],
                 family="lissajous", point=point, around=t.around,
                 holds=holds, iterations=t.iterations + info["iterations"],
                 with_stability=False, with_approaches=False)


#: The last tangent computed (one torus and reference at a time; the objects are kept alive
#: with it so that their ids are not reused).
_TANGENTS: dict = {}


def _ref(t):
    return (t.circle, t.stroboscopic_time, t.rotation)


def _fd_jacobian(system, point, t, p, m, measure, ref):
    """d(ay, az)/d(C, a) by forward differences (two torus solves)."""
    J = np.empty((2, 2))
    h = np.array([1e-3 * abs(_c_point(system, point) - p[0]) + 1e-12, 1e-3 * p[1]])
    for k in range(2):
        q = p.copy()
        q[k] += h[k]
        J[:, k] = (measure(_solve_at(system, point, t, *q, ref)) - m) / h[k]
    return J


def _seed(system, point, target, say, km, seen, reached, catalog=None):
    """Steps 1-2 of the module notes: the small torus about the edge orbit for ``target``:
    (torus, (C, a), measured (ay, az), d(ay, az)/d(C, a) by finite differences)."""
    ay_lu, az_lu = target

    def edge(fam_name, key, value):
        text = (f"{system.km(value)}km" if system.dimensional and key != "jacobi"
                else repr(float(value)))
        try:
            return solve_request(system, parse_request(f"{fam_name} {point} {key}={text}"),
                                 catalog=catalog)
        except (NoSolutionError, ConvergenceError) as e:
            raise NoSolutionError(f"no {fam_name} orbit at {point} with {key} {text} to start "
                                  f"the Lissajous torus from ({e})") from None
    # the target's energy from the linear solution (the two oscillations' energies add; the
    # secant below corrects its third-order error), and the planar orbit with it grown only
    # up to that energy (growing the whole planar and vertical families for the two edge orbits
    # of Ay and Az was about half the CPU time of a torus)
    c_target = seeds.linear_lissajous_jacobi(lagrange_point(system, point).modes,
                                             _c_point(system, point), ay_lu, az_lu)
    orbit = None
    for fam_name, k in (("lyapunov", 0), ("vertical", 1)):
        say(f"lissajous: the {fam_name} orbit at {point} with Jacobi constant {c_target:.10f}")
        o = (_lyapunov_at(system, point, c_target) if fam_name == "lyapunov"
             else edge(fam_name, "jacobi", c_target))
        if o is None:
            # the target is smaller than the planar family's first orbit: the torus from the
            # linear solution at the point (Richardson 1980), in-plane x amplitude Ay / kappa
            modes = lagrange_point(system, point).modes
            d = np.asarray(modes.planar_centre[0], dtype=float)
            kappa = abs(d[4]) / modes.omega_inplane / abs(d[0])
            say(f"lissajous: smaller than the planar Lyapunov family's first orbit: the torus "
                f"from the linear solution at {point}")
            try:
                t = lissajous_near_point(system, point, ay_lu / kappa, az_lu)
            except (ConvergenceError, SurfaceError) as e:
                raise NoSolutionError(f"no Lissajous torus could be grown from the linear "
                                      f"solution at {point} ({e})") from None
            return _start(system, point, t, say, km, seen, reached)
        if seeds.centre_pairs(o.monodromy):
            orbit = o
            break
        say(f"lissajous: the {fam_name} orbit has no centre pair (past the halo bifurcation)")
    if orbit is None:
        raise NoSolutionError(f"neither the planar Lyapunov nor the vertical orbit at {point} "
                              f"with the target's Jacobi constant {c_target:.10f} has a centre "
                              "eigenpair to grow a Lissajous torus from")
    other = 1 - k                 # the amplitude grown along the family
    small = min(target[other] / math.sqrt(2.0), SEED_FRACTION * target[k])
    say(f"lissajous: the torus about it with size {km(small)}")
    try:
        t = torus_around(orbit, small, hold="jacobi")
    except (ConvergenceError, SurfaceError, NoSolutionError) as e:
        raise NoSolutionError(f"no Lissajous torus could be grown from the {fam_name} orbit at "
                              f"{point} ({e})") from None
    return _start(system, point, t, say, km, seen, reached)


def _start(system, point, t, say, km, seen, reached):
    """The walk's start from the small torus ``t``: (torus, (C, a), measured (ay, az),
    d(ay, az)/d(C, a) by finite differences)."""
    def measure(t):
        m = np.array(measured_amplitudes(t))
        seen.append(m)
        return m

    p = np.array([t.jacobi, t.amplitude_lu])
    ref = _ref(t)
    t = _solve_at(system, point, t, *p, ref)   # the seed again, its amplitudes measured
    m = measure(t)
    say(f"lissajous: start Ay {km(m[0])}, Az {km(m[1])}")
    try:
        J = _fd_jacobian(system, point, t, p, m, measure, _ref(t))
    except (ConvergenceError, SurfaceError) as e:
        raise NoSolutionError(f"the Lissajous family at {point} could not be followed from "
                              f"Ay {km(m[0])}, Az {km(m[1])} ({e}); {reached()}") from None
    return t, np.array([t.jacobi, t.amplitude_lu]), m, J


def _ray(system, point, t, p, m, J, target, rtol, say, km, seen, reached):
    """Step 3 of the module notes: the family walked in amplitude along the line from the
    amplitudes ``m0`` of the small torus to the target, ``m0 + f ((Ay, Az) - m0)``,
    ``0 < f <= 1``, then the target met to ``rtol``.

    Natural-parameter continuation in the amplitudes with one corrector step per point
    (Allgower & Georg, "Introduction to Numerical Continuation Methods", SIAM 2003, §1-2; the
    parameters of the two-parameter family of tori as in Baresi, Olikara & Scheeres 2018):
    each step moves (C, a) by Broyden's estimate of ``d(ay, az)/d(C, a)`` towards the next
    point of the line (the torus itself solved by :func:`_solve_at`) and updates the estimate with the amplitudes measured (Broyden, "A class
    of methods for solving nonlinear simultaneous equations", Math. Comp. 19, 1965).
    The point need not be met: the next step aims at the line again from wherever this one
    landed. Each torus is predicted by the quadratic through the last three tori of the walk
    (:func:`_extrapolate`; the family's tangent before that). A step is kept when the
    amplitudes moved at least half way to its point (``RAY_BAD``); the step grows by
    ``RAY_GROWTH`` after a torus Newton of at most ``RAY_EASY`` iterations that landed within
    ``RAY_GOOD`` of its point, shrinks after one of more than ``RAY_HARD``, and halves after a
    solve that failed or a step not kept (the first of these in a row also refreshes the
    estimate by finite differences). At ``f = 1`` the same steps repeat until both amplitudes
    are within ``rtol``.
    """
    def measure(t):
        mm = np.array(measured_amplitudes(t))
        seen.append(mm)
        return mm

    m0 = m.copy()
    f, df, steps, its = 0.0, RAY_FIRST_STEP, 0, 0
    fresh = False
    ref = _ref(t)
    line = [(0.0, t)]          # the tori reached along the line, by f
    while True:
        if f >= 1.0 and np.all(np.abs(m - target) <= rtol * target):
            break
        if its >= RAY_MAX_SOLVES:
            raise NoSolutionError(f"the Lissajous torus with Ay {km(target[0])}, Az "
                                  f"{km(target[1])} at {point} was not reached in "
                                  f"{RAY_MAX_SOLVES} steps; {reached()}")
        f1 = min(1.0, f + df)
        goal = m0 + f1 * (target - m0)
        ok = False
        try:
            q = p + np.linalg.solve(J, goal - m)
            if q[1] > 0:
                t1 = _solve_at(system, point, t, *q, ref, guess=_extrapolate(line, f1))
                ok = True
        except (ConvergenceError, SurfaceError, np.linalg.LinAlgError):
            pass
        its += 1
        miss = math.inf
        if ok:
            m1 = measure(t1)
            s = q - p
            J = J + np.outer((m1 - m) - J @ s, s) / (s @ s)       # Broyden's update
            miss = float(np.abs(m1 - goal).max() / max(np.abs(goal - m).max(), 1e-300))
        if miss <= RAY_BAD:
            t0_iterations = t.iterations
            if f1 > f:
                line.append((f1, t1))
            t, m, f = t1, m1, f1
            # the next step's reference: this torus, its circle size on the new section
            ref = _ref(t)
            p = np.array([t.jacobi, t.amplitude_lu])
            steps += 1
            fresh = False
            say(f"lissajous: along the family, {100 * f:.1f}% of the way: Ay {km(m[0])}, "
                f"Az {km(m[1])}")
            newton = t1.iterations - t0_iterations
            if miss <= RAY_GOOD and newton <= RAY_EASY:
                df = min(RAY_GROWTH * df, RAY_MAX_STEP)
            elif newton > RAY_HARD:
                df *= RAY_SHRINK
            continue
        if not fresh:
            fresh = True
            try:
                J = _fd_jacobian(system, point, t, p, m, measure, ref)
                its += 2
            except (ConvergenceError, SurfaceError):
                pass
        df /= 2
        if df < RAY_MIN_STEP:
            raise NoSolutionError(f"the Lissajous torus with Ay {km(target[0])}, Az "
                                  f"{km(target[1])} at {point} was not reached: the family "
                                  f"could not be followed past {100 * f:.1f}% of the way "
                                  f"(Ay {km(m[0])}, Az {km(m[1])}); {reached()}")
    return t, p, m, J, its, steps


def _extrapolate(line, f1):
    """The unknowns ``[U, T, rho]`` at ``f1`` extrapolated by the quadratic through the last
    three tori of the walk (Lagrange's form; their circles on the largest N among them), or
    None (fewer than three, or ``f1`` not beyond them). The tangent predictor is first order
    (its miss grows as the square of the step); this one is second order, which lets the walk
    take longer steps within the torus Newton's range (Allgower & Georg, SIAM 2003, §2.3:
    polynomial predictors through previous points)."""
    if not RAY_QUADRATIC or len(line) < 3 or f1 <= line[-1][0]:
        return None
    pts = line[-3:]
    n = max(tt.n_circle_points for _, tt in pts)
    fs = [fk for fk, _ in pts]
    x = 0.0
    for i, (fi, ti) in enumerate(pts):
        w = 1.0
        for j, fj in enumerate(fs):
            if j != i:
                w *= (f1 - fj) / (fi - fj)
        u = ti.circle if ti.n_circle_points == n else circle.resample(ti.circle, n)
        x = x + w * np.concatenate([u.ravel(), [ti.stroboscopic_time, ti.rotation]])
    return x


def _lyapunov_at(system, point, jacobi):
    """The planar Lyapunov orbit at ``point`` with this Jacobi constant: the family grown from
    the point only until a member passes it (:class:`cr3bp.orbits.continuation.Stops` target),
    no bifurcations located; None when the family's first orbit is already larger (a Jacobi
    constant that close to the point's)."""
    try:
        fam = grow_family(system, "lyapunov", point, stops=Stops(target=("jacobi", jacobi)),
                          locate_bifurcations=False)
    except (NoSolutionError, ConvergenceError) as e:
        raise NoSolutionError(f"no lyapunov orbit at {point} with Jacobi constant {jacobi!r} to "
                              f"start the Lissajous torus from ({e})") from None
    return fam.target           # None: the family's first orbit is already larger


def _gamma(system, point):
    """Distance of the collinear point from the smaller primary (LU)."""
    return abs(float(lagrange_point(system, point).position[0]) - (1 - system.mu))


def _c_point(system, point):
    """Jacobi constant of the collinear point (the family's scale for C steps)."""
    lp = lagrange_point(system, point)
    s = np.concatenate([np.asarray(lp.position, dtype=float), np.zeros(3)])[None, :]
    return float(solver.jacobi_many(system.mu, s)[0])
