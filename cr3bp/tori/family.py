"""Families of tori by pseudo-arclength continuation with one quantity held.

Tori of the spatial CR3BP come in two-parameter families; holding one of the Jacobi constant,
the stroboscopic time or the rotation leaves a one-parameter family, followed here by
pseudo-arclength continuation in the unknowns ``x = [U, T, rho]`` (Baresi, Olikara &
Scheeres, "Fully numerical methods for continuing families of quasi-periodic invariant tori
in astrodynamics", J. Astronaut. Sci. 65, 2018, §III; Keller's pseudo-arclength). The tangent
is the null vector of the Jacobian of invariance + phase conditions + held quantity (numpy
SVD); step lengths are measured with the circle's part weighted by ``1/sqrt(N)``, so that
they do not depend on the number of points.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import validate
from ..errors import ConvergenceError, InputError
from . import circle, solver
from .store import FamilyStore
from ..threads import serial
from .torus import SurfaceError, Torus, build, solve_adaptive

HOLDS = ("jacobi", "period", "rotation")
#: A member smaller than this (LU) is the periodic orbit the family started from.
SHRUNK_LU = 1e-6
#: Step control on Newton's effort (Allgower & Georg 2003, §6.1): after a member that took at
#: most ``EASY_ITERATIONS`` iterations the step grows by ``GROWTH`` (up to ``max_step``); a
#: failed step is halved.
EASY_ITERATIONS = 4
GROWTH = 1.5


#: Why a family stops when it has passed through the periodic orbit at its far end.
FAR_END = ("the family reached the periodic orbit at its far end (for Lissajous tori: the "
           "vertical or the planar Lyapunov orbit) and would turn back along the tori already "
           "computed")
#: Changes of T and rho smaller than this (TU, rad) are not counted as a turn.
TURN_TOL = 1e-12


_QUANTITIES = {"jacobi": lambda t: t.jacobi, "period": lambda t: t.stroboscopic_time,
               "rotation": lambda t: t.rotation}


def _turned_back(out, new, hold) -> bool:
    """True when the two quantities not held (of the Jacobi constant, the stroboscopic time and
    the rotation) both reverse their direction of change at the last member: the continuation
    has passed through a degenerate torus (a periodic orbit whose own closed curve is an
    invariance circle) and is retracing the family with the circle's angle shifted. A fold of
    the family turns one of the two, generically not both."""
    if len(out) < 2:
        return False
    a, b = out[-2], out[-1]
    turns = 0
    for f in (g for k, g in _QUANTITIES.items() if k != hold):
        d0, d1 = f(b) - f(a), f(new) - f(b)
        if abs(d0) > TURN_TOL and abs(d1) > TURN_TOL and d0 * d1 < 0:
            turns += 1
    return turns == 2


@dataclass(frozen=True)
class TorusFamily:
    """Members in continuation order, the held quantity and why the continuation stopped.

    Parameters
    ----------
    members : tuple of Torus
        In continuation order, the start first.
    hold : str
        The held quantity ("jacobi", "period" or "rotation").
    stop : str
        Why the continuation ended ("members", "until" or the reason in words).

    Examples
    --------
    >>> from cr3bp.tori.family import TorusFamily
    >>> TorusFamily(members=(), hold="jacobi", stop="members").to_dict()
    {'kind': 'torus family', 'hold': 'jacobi', 'stop': 'members', 'members': []}

    References
    ----------
    Baresi, Olikara & Scheeres, J. Astronaut. Sci. 65, 2018, §III (continuation of tori);
    Keller 1977 (pseudo-arclength).
    """

    members: tuple
    hold: str
    stop: str

    def to_dict(self) -> dict:
        return {"kind": "torus family", "hold": self.hold, "stop": self.stop,
                "members": [_summary(t) for t in self.members]}


def _summary(t: Torus) -> dict:
    d = t.to_dict()
    for k in ("circle", "around"):
        d.pop(k)
    return d


def _weights(n: int) -> np.ndarray:
    return np.concatenate([np.full(6 * n, 1.0 / math.sqrt(n)), [1.0, 1.0]])


def _x(t: Torus) -> np.ndarray:
    return np.concatenate([t.circle.ravel(), [t.stroboscopic_time, t.rotation]])


def _resample_x(x, n_old, n_new):
    if n_old == n_new:
        return x
    u = circle.resample(x[:6 * n_old].reshape(n_old, 6), n_new)
    return np.concatenate([u.ravel(), x[-2:]])


def tangent(system, t: Torus, hold: str, previous=None) -> np.ndarray:
    """Unit tangent (in the weighted norm) of the family through ``t`` holding ``hold``;
    oriented along ``previous`` when given, else towards growing amplitude.

    Parameters
    ----------
    system : System
    t : Torus
        A solved torus.
    hold : {"jacobi", "period", "rotation"}
    previous : (ndarray, int), optional
        The previous tangent and its circle's number of points.

    Returns
    -------
    ndarray (6N + 2,)
        The tangent in the unknowns ``x = [U, T, rho]``.

    Raises
    ------
    KeyError
        ``hold`` is not one of the three.

    Examples
    --------
    >>> v = tangent(em, torus, "jacobi")                          # doctest: +SKIP
    >>> from cr3bp.tori.family import HOLDS
    >>> HOLDS
    ('jacobi', 'period', 'rotation')

    References
    ----------
    Baresi, Olikara & Scheeres, J. Astronaut. Sci. 65, 2018, §III (continuation of tori);
    Keller 1977 (pseudo-arclength).
    """
    n = t.n_circle_points
    x = _x(t)
    value = {"jacobi": t.jacobi, "period": t.stroboscopic_time, "rotation": t.rotation}[hold]
    ref = (t.circle, t.stroboscopic_time, t.rotation)
    _, jac, _ = solver._residual_and_jacobian(system, x, n, ref, {hold: value}, None)
    w = _weights(n)
    v = np.linalg.svd(jac / w[None, :])[2][-1] / w      # null vector of J, back in x
    v /= np.linalg.norm(w * v)
    if previous is not None:
        if np.dot(w * w * v, _resample_x(previous[0], previous[1], n)) < 0:
            v = -v
    else:
        u, du = t.circle, v[:6 * n].reshape(n, 6)
        grow = np.sum((u[:, :3] - u[:, :3].mean(0)) * (du[:, :3] - du[:, :3].mean(0)))
        if grow < 0:
            v = -v
    return v


def hold_tangents(system, t: Torus, holds: dict, reference) -> np.ndarray:
    """Derivatives ``dx/dh`` of the unknowns ``x = [U, T, rho]`` with respect to the held values
    ``h`` (in the order of ``holds``) at the solved torus ``t``, its phase conditions against
    ``reference``: the family's tangents in the held quantities, from the linearised equations
    ``J dx = e_k`` (J the Newton Jacobian, e_k the unit vector of the k-th held row; numpy's
    lstsq, the one redundant row being the Jacobi integral). Used as the predictor of a
    continuation step in the held values (Euler predictor: Allgower & Georg, "Introduction to
    Numerical Continuation Methods", SIAM 2003, §2.2; Keller 1977): the whole unknown vector,
    circle, T and rho, moves along the family, not the circle alone. Shape (6N + 2, len(holds)).

    Parameters
    ----------
    system : System
    t : Torus
        A solved torus.
    holds : dict
        Held kind -> value (:data:`cr3bp.tori.solver.HOLD_KINDS`).
    reference : (ndarray (M, 6), float, float)
        Reference circle, stroboscopic time and rotation of the phase conditions (resampled to
        the torus's N points when M differs).

    Returns
    -------
    ndarray (6N + 2, len(holds))
        One column ``dx/dh`` per held quantity.

    Raises
    ------
    numpy.linalg.LinAlgError
        The least-squares solve fails (non-finite Jacobian).

    Examples
    --------
    >>> d = hold_tangents(em, torus, {"jacobi": torus.jacobi, "amplitude": torus.amplitude_lu},
    ...                   (torus.circle, torus.stroboscopic_time, torus.rotation))  # doctest: +SKIP
    >>> from cr3bp.tori.solver import HOLD_KINDS
    >>> HOLD_KINDS
    ('jacobi', 'period', 'rotation', 'amplitude')

    References
    ----------
    Allgower & Georg, *Introduction to Numerical Continuation Methods*, SIAM 2003, §2.2; Keller
    1977; Baresi, Olikara & Scheeres 2018.
    """
    n = t.n_circle_points
    ref = reference
    if ref[0].shape[0] != n:
        ref = (circle.resample(ref[0], n), ref[1], ref[2])
    _, jac, _ = solver._residual_and_jacobian(system, _x(t), n, ref, holds, None)
    rhs = np.zeros((jac.shape[0], len(holds)))
    for k in range(len(holds)):
        rhs[6 * n + 2 + k, k] = 1.0      # residual = value - held: d(residual)/d(held) = -1
    return solver._lstsq(jac, rhs)


def continue_family(start: Torus, hold: str = "jacobi", members: int = 10, step: float = 0.02,
                    min_step: float = 1e-4, max_step: float = 0.2, direction: int = 1,
                    progress=None, until=None, catalog=None) -> TorusFamily:
    """Pseudo-arclength continuation of tori from ``start`` with ``hold`` fixed.

    Parameters
    ----------
    start : Torus
    hold : {"jacobi", "period", "rotation"}
    members : int   members to compute after ``start``
    step, min_step, max_step : float   arclength steps (weighted norm, nondimensional)
    direction : +1 (growing amplitude) or -1
    progress : callable(i, torus) or None
    until : callable(torus) -> bool or None   stop after the first member for which it is true
        (``stop`` = "until")
    catalog : cr3bp.catalog.Catalog or None
        Members are read from and written to it as they converge (:mod:`cr3bp.tori.store`,
        keyed by the start torus, ``hold``, the step settings and ``direction``): a second call
        reads them back, and a call asking for more members than are stored goes on from the
        last one with the stored tangent and step, giving the same members as one
        uninterrupted run.

    Returns
    -------
    TorusFamily (``start`` first). ``stop`` says why it ended: "members" or the reason the
    step fell below ``min_step``.

    Raises
    ------
    InputError
        A held quantity other than the three, a member count below 1, a direction not +-1.

    Examples
    --------
    >>> fam = continue_family(torus, "jacobi", members=5)               # doctest: +SKIP
    >>> from cr3bp.tori.family import continue_family
    >>> continue_family(None, hold="colour")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: hold 'colour' is not allowed; allowed: jacobi, period, rotation

    References
    ----------
    Baresi, Olikara & Scheeres, J. Astronaut. Sci. 65, 2018, §III (continuation of tori);
    Keller 1977 (pseudo-arclength).
    """
    if hold not in HOLDS:
        raise InputError(f"hold '{hold}' is not allowed; allowed: {', '.join(HOLDS)}")
    members = validate.whole_number("members", members, 1)
    if direction not in (1, -1):
        raise InputError(f"direction {direction!r} must be +1 or -1")
    system = start.system
    value = {"jacobi": start.jacobi, "period": start.stroboscopic_time, "rotation": start.rotation}[hold]
    out = [start]
    t = start
    store = tan = ds = None
    if catalog is not None:
        store = FamilyStore(catalog, start, {"hold": hold, "step": step, "min_step": min_step,
                                             "max_step": max_step, "direction": direction})
        kept, states, kept_stop = store.load()
        for i, m in enumerate(kept[:members]):
            out.append(m)
            if progress:
                progress(i + 1, m)
            if until is not None and until(m):
                return TorusFamily(members=tuple(out), hold=hold, stop="until")
        if len(kept) >= members or kept_stop is not None:
            stop = kept_stop if (kept_stop is not None and len(kept) <= members) else "members"
            return TorusFamily(members=tuple(out), hold=hold, stop=stop)
        if kept:
            t = kept[-1]
            tan, ds = states[-1]
    with serial():       # computing: one thread (cr3bp.threads); read-backs skip numba
        return _continue(system, start, out, t, tan, ds, hold, value, members, step, min_step,
                         max_step, direction, progress, until, store)


def _continue(system, start, out, t, tan, ds, hold, value, members, step, min_step, max_step,
              direction, progress, until, store):
    if len(out) == 1:
        tan = direction * tangent(system, t, hold)
        ds = step
    stop = "members"
    while len(out) <= members:
        n = t.n_circle_points
        x0 = _x(t)
        xp = x0 + ds * tan
        u = xp[:6 * n].reshape(n, 6)

        def arclength(m, x0=x0, tan=tan, ds=ds, n=n):
            w = _weights(m)
            return (_resample_x(x0, n, m), w * w * _resample_x(tan, n, m), ds)
        try:
            u1, T1, rho1, info = solve_adaptive(system, u, xp[-2], xp[-1], {hold: value},
                                                reference=(t.circle, t.stroboscopic_time, t.rotation),
                                                arclength_fn=arclength)
        except ConvergenceError as e:
            ds /= 2
            if ds < min_step:
                stop = f"step below {min_step:g}: {e}"
                break
            continue
        try:
            new = build(system, u1, T1, rho1, info["invariance_error"], info["invariance_tolerance"],
                        family=start.family, point=start.point, branch=start.branch,
                        around=start.around, holds={hold: value}, iterations=info["iterations"])
        except SurfaceError as e:
            stop = str(e)
            break
        if new.amplitude_lu < SHRUNK_LU:
            out.append(new)
            if store is not None:
                store.add(len(out) - 1, new, tan, ds)
            stop = "the torus shrank to its periodic orbit"
            break
        if _turned_back(out, new, hold):
            stop = FAR_END
            break
        tan = tangent(system, new, hold, previous=(tan, n))
        out.append(new)
        t = new
        if info["iterations"] <= EASY_ITERATIONS:
            ds = min(ds * GROWTH, max_step)
        if store is not None:
            store.add(len(out) - 1, new, tan, ds)
        if progress:
            progress(len(out) - 1, new)
        if until is not None and until(new):
            stop = "until"
            break
    if store is not None and stop not in ("members", "until"):
        store.finish(stop)
    return TorusFamily(members=tuple(out), hold=hold, stop=stop)
