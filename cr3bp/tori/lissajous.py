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
2. a small torus about it at the orbit's Jacobi constant (:func:`torus.torus_around`),
   continued by pseudo-arclength at that Jacobi constant (:func:`family.continue_family`)
   until the other measured amplitude passes its target;
3. the two held quantities of the torus (Jacobi constant C and RMS circle size a, on the
   section the phase conditions against one fixed reference torus pick) corrected
   by a secant (Broyden) iteration on ``(ay - Ay, az - Az)``, the first Jacobian by finite
   differences; each step is a torus solve warm-started from the previous torus, the step
   halved when a solve fails. Stops when both amplitudes are within ``AMPLITUDE_RTOL``;
4. targets larger than ``RAY_START`` times the point's distance from the smaller primary:
   steps 1-2 for the target scaled down to that size, then continuation along the family in
   amplitude from the amplitudes reached there to the target, intermediate targets on the
   line between them met one after the other (``_ray``).
   (A secant from the edge orbit straight to a large target stalls: the estimate of the
   Jacobi constant from the edge orbits is poor there.)

The target is refused (``NoSolutionError``, CLI exit 3) when the Lyapunov orbit does not exist,
or the iteration cannot reach it; the message gives the range of (ay, az) reached.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import ConvergenceError, InputError, NoSolutionError
from . import seeds, solver
from .family import continue_family, hold_tangents
from .stability import stability
from .store import cached_torus
from .torus import SurfaceError, build, solve_adaptive, torus_around
from ..equilibria import lagrange_point
from ..orbits.continuation import Stops
from ..orbits.families import grow_family
from ..orbits.request import parse_request, solve_request
from ..validate import positive_number
from ..catalog import Catalog

#: Relative tolerance on each measured amplitude.
AMPLITUDE_RTOL = 1e-5
MAX_ITER = 14
POINTS = ("L1", "L2")
#: The first torus about the Lyapunov orbit: RMS circle size as a fraction of Ay (or Az/sqrt 2).
SEED_FRACTION = 0.04
#: Continuation at the orbit's Jacobi constant until the measured Az passes the target.
MAX_MEMBERS = 200
FAMILY_STEP, FAMILY_MAX_STEP = 0.005, 0.2
#: Targets larger than this fraction of the point's distance from the smaller primary (either
#: amplitude) are reached by continuation along the family in amplitude (step 4), from the
#: target scaled down to this size.
RAY_START = 0.2
#: Continuation in amplitude: first, largest and smallest step in the fraction f of the
#: target, Newton iterations per step, tolerance of the intermediate targets (relative).
RAY_FIRST_STEP, RAY_MAX_STEP, RAY_MIN_STEP = 0.1, 0.4, 1e-3
RAY_INNER = 5
RAY_RTOL = 1e-3


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

    Targets up to ``RAY_START`` (times the point's distance from the smaller primary) in both
    amplitudes are solved directly (module notes, steps 1-3); larger ones by continuation along
    the two-parameter family in amplitude (step 4): the direct solve at a scaled-down copy of
    the target ``f0 (Ay, Az)``, then the family followed along the ray ``f (Ay, Az)``,
    ``f0 < f <= 1``, each step corrected to its intermediate target.

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
    t, p, m, J, its = _direct(system, point, f0 * target, rtol, say, km, seen, reached,
                              correct=f0 == 1.0, catalog=catalog)
    steps = 0
    if f0 < 1.0:
        t, p, m, J, its, steps = _ray(system, point, t, p, m, J, target, f0, rtol, say, km,
                                      seen, reached)
    extra = dict(t.extra)
    extra.update({"ay_lu": float(m[0]), "az_lu": float(m[1]), "target_iterations": its,
                  "ray_steps": steps, "target_ay_lu": ay_lu, "target_az_lu": az_lu})
    stab = stability(system, t.circle, t.stroboscopic_time, t.rotation)
    return t.__class__(**{**{f: getattr(t, f) for f in t.__dataclass_fields__}, "extra": extra,
                          "stability": stab})


def _solve_at(system, point, t, C, a, ref):
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
                 with_stability=False)


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


def _direct(system, point, target, rtol, say, km, seen, reached, correct=True, catalog=None):
    """Steps 1-3 of the module notes: (torus, (C, a), measured (ay, az), Jacobian, iterations)."""
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
    seen.append(np.array(measured_amplitudes(t)))
    if seen[-1][other] < target[other]:
        say("lissajous: continuing the family at the orbit's Jacobi constant")

        def member(i, m):
            seen.append(np.array(measured_amplitudes(m)))
            say(f"lissajous: member {i}, Ay {km(seen[-1][0])}, Az {km(seen[-1][1])}")
        fam = continue_family(t, "jacobi", members=MAX_MEMBERS, step=FAMILY_STEP,
                              max_step=FAMILY_MAX_STEP, progress=member,
                              until=lambda m: measured_amplitudes(m)[other] >= target[other])
        if fam.stop != "until":
            raise NoSolutionError(f"the Lissajous family at {point} from the {fam_name} orbit "
                                  f"did not reach the target ({fam.stop}); {reached()}")
        t = fam.members[-1]

    def measure(t):
        m = np.array(measured_amplitudes(t))
        seen.append(m)
        return m

    p = np.array([t.jacobi, t.amplitude_lu])
    ref = _ref(t)
    t = _solve_at(system, point, t, *p, ref)   # the member again, its amplitudes measured
    ref = _ref(t)
    m = measure(t)
    say(f"lissajous: start Ay {km(m[0])}, Az {km(m[1])}")
    try:
        J = _fd_jacobian(system, point, t, p, m, measure, ref)
    except (ConvergenceError, SurfaceError) as e:
        raise NoSolutionError(f"the Lissajous family at {point} could not be followed from "
                              f"Ay {km(m[0])}, Az {km(m[1])} ({e}); {reached()}") from None
    if not correct:        # the start of step 4: its line begins at the amplitudes reached
        return t, p, m, J, 0
    for it in range(1, MAX_ITER + 1):
        r = m - target
        if np.all(np.abs(r) <= rtol * target):
            break
        try:
            dp = np.linalg.solve(J, -r)
        except np.linalg.LinAlgError:
            raise NoSolutionError(f"the amplitudes stopped responding to the family's "
                                  f"parameters; {reached()}") from None
        lam = 1.0
        while True:
            q = p + lam * dp
            try:
                if not q[1] > 0:
                    raise ConvergenceError("the torus would shrink to its orbit")
                t1 = _solve_at(system, point, t, *q, ref)
                break
            except (ConvergenceError, SurfaceError) as e:
                lam /= 2
                if lam < 1.0 / 64:
                    raise NoSolutionError(f"the Lissajous torus with Ay {km(ay_lu)}, Az "
                                          f"{km(az_lu)} at {point} was not reached ({e}); "
                                          f"{reached()}") from None
        m1 = measure(t1)
        s = q - p
        J += np.outer((m1 - m) - J @ s, s) / (s @ s)      # Broyden's update
        p, m, t = q, m1, t1
        say(f"lissajous: iteration {it}, Ay {km(m[0])}, Az {km(m[1])}")
    else:
        raise NoSolutionError(f"the Lissajous torus with Ay {km(ay_lu)}, Az {km(az_lu)} at "
                              f"{point} was not reached in {MAX_ITER} iterations; {reached()}")
    return t, p, m, J, it


def _ray(system, point, t, p, m, J, target, f0, rtol, say, km, seen, reached):
    """Step 4: the family followed in amplitude along the line from the amplitudes ``m0``
    reached by steps 1-2 for the scaled-down target ``f0 (Ay, Az)`` to the target,
    ``m0 + f ((Ay, Az) - m0)``, ``0 < f <= 1``.

    Natural-parameter continuation in the amplitudes (Allgower & Georg, "Introduction to
    Numerical Continuation Methods", SIAM 2003, §1-2; the parameters of the two-parameter
    family of tori as in Baresi, Olikara & Scheeres 2018): each intermediate target
    on the line is met by Newton in (C, a) with Broyden's update of ``d(ay, az)/d(C, a)``,
    starting from the previous torus (the Newton step from it is the predictor); a step that
    does not converge in ``RAY_INNER`` iterations is retried once with a fresh
    finite-difference Jacobian, then halved. Intermediate targets are met to ``RAY_RTOL``,
    the last to ``rtol``.
    """
    def measure(t):
        mm = np.array(measured_amplitudes(t))
        seen.append(mm)
        return mm

    m0 = m.copy()
    f, df, steps, its = 0.0, RAY_FIRST_STEP, 0, 0
    fresh = False
    ref = _ref(t)
    while f < 1.0:
        f1 = min(1.0, f + df)
        goal = m0 + f1 * (target - m0)
        tol = rtol if f1 == 1.0 else RAY_RTOL
        pt, mt, tt, Jt = p.copy(), m.copy(), t, J.copy()
        ok, k = False, 0
        for k in range(1, RAY_INNER + 1):
            try:
                dp = np.linalg.solve(Jt, goal - mt)
                q = pt + dp
                if not q[1] > 0:
                    break
                t1 = _solve_at(system, point, tt, *q, ref)
            except (ConvergenceError, SurfaceError, np.linalg.LinAlgError):
                break
            m1 = measure(t1)
            s = q - pt
            Jt += np.outer((m1 - mt) - Jt @ s, s) / (s @ s)
            if np.abs(m1 - goal).max() > np.abs(mt - goal).max() and k > 1:
                break
            pt, mt, tt = q, m1, t1
            if np.all(np.abs(mt - goal) <= tol * goal):
                ok = True
                break
        its += k
        if ok:
            p, m, t, J, f = pt, mt, tt, Jt, f1
            # the next step's reference: this torus, its circle size on the new section
            ref = _ref(t)
            p = np.array([t.jacobi, t.amplitude_lu])
            steps += 1
            fresh = False
            say(f"lissajous: along the family, {100 * f:.1f}% of the target: Ay {km(m[0])}, "
                f"Az {km(m[1])}")
            if k <= 2:
                df = min(2 * df, RAY_MAX_STEP)
            continue
        if not fresh:
            try:
                J = _fd_jacobian(system, point, t, p, m, measure, ref)
                fresh = True
                continue
            except (ConvergenceError, SurfaceError):
                pass
        df /= 2
        fresh = False
        if df < RAY_MIN_STEP:
            raise NoSolutionError(f"the Lissajous torus with Ay {km(target[0])}, Az "
                                  f"{km(target[1])} at {point} was not reached: the family "
                                  f"could not be followed past {100 * f:.1f}% of the target "
                                  f"(Ay {km(m[0])}, Az {km(m[1])}); {reached()}")
    return t, p, m, J, its, steps


def _lyapunov_at(system, point, jacobi):
    """The planar Lyapunov orbit at ``point`` with this Jacobi constant: the family grown from
    the point only until a member passes it (:class:`cr3bp.orbits.continuation.Stops` target),
    no bifurcations located."""
    try:
        fam = grow_family(system, "lyapunov", point, stops=Stops(target=("jacobi", jacobi)),
                          locate_bifurcations=False)
    except (NoSolutionError, ConvergenceError) as e:
        raise NoSolutionError(f"no lyapunov orbit at {point} with Jacobi constant {jacobi!r} to "
                              f"start the Lissajous torus from ({e})") from None
    if fam.target is None:
        raise NoSolutionError(f"the lyapunov family at {point} does not reach the Jacobi "
                              f"constant {jacobi!r} of the Lissajous target")
    return fam.target


def _gamma(system, point):
    """Distance of the collinear point from the smaller primary (LU)."""
    return abs(float(lagrange_point(system, point).position[0]) - (1 - system.mu))


def _c_point(system, point):
    """Jacobi constant of the collinear point (the family's scale for C steps)."""
    lp = lagrange_point(system, point)
    s = np.concatenate([np.asarray(lp.position, dtype=float), np.zeros(3)])[None, :]
    return float(solver.jacobi_many(system.mu, s)[0])
