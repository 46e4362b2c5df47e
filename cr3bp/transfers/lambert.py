"""Lambert's problem: the two-body arc that joins two positions in a given time.

Method: Izzo, "Revisiting Lambert's problem", *Celestial Mechanics and Dynamical Astronomy*
121, 1-15, 2015 — the non-dimensional variable x, the parameter lambda (eq. 5-9), the
time-of-flight equation (eq. 18, with Battin's hypergeometric form, eq. 20, near x = 1,
where eq. 18 loses precision) and the velocity reconstruction (eq. 10-13 of the paper's
algorithm 1). Single revolution only (M = 0). The root of the time-of-flight equation is
found by Brent's method on a bracket instead of the paper's Householder iterations: the
same equation, a slower but unconditionally convergent iteration (T(x) decreases
monotonically on x in (-1, inf) for M = 0, eq. 21 of the paper).

Units are the caller's (positions, time and ``gm`` consistent); librate calls it with
nondimensional values and the Earth's ``gm = 1 - mu``.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.optimize import brentq

from .. import validate
from ..errors import InputError, NoSolutionError

#: Width around x = 1 where Battin's series (eq. 20) replaces the closed form (eq. 18).
SERIES_WIDTH = 0.1
#: Terms of the hypergeometric series before giving up (|S1| < 0.1 there: ~20 are plenty).
SERIES_TERMS = 200


def _hyp_3_1_52(z: float) -> float:
    """Gauss hypergeometric 2F1(3, 1; 5/2; z), the series of Izzo 2015 eq. 20."""
    total, term = 1.0, 1.0
    for n in range(SERIES_TERMS):
        term *= (3.0 + n) / (2.5 + n) * z
        total += term
        if abs(term) < 1e-17 * abs(total):
            break
    return total


def tof_equation(x: float, lam: float) -> float:
    """Non-dimensional time of flight T(x) for zero complete revolutions (Izzo 2015, eq. 18; Battin's
    hypergeometric form, eq. 20, within ``SERIES_WIDTH`` of x = 1).

    Parameters
    ----------
    x : float
        Izzo's variable, x > -1 (x < 1 elliptic, x = 1 parabolic, x > 1 hyperbolic).
    lam : float
        The geometry parameter lambda in [-1, 1] (eq. 5-9).

    Returns
    -------
    float
        T, decreasing in x (eq. 21).

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.transfers.lambert import tof_equation
    >>> tof_equation(0.0, 0.5) > tof_equation(0.5, 0.5) > tof_equation(2.0, 0.5)
    True

    References
    ----------
    Izzo, "Revisiting Lambert's problem", *Celestial Mechanics and Dynamical Astronomy* 121, 1-15,
    2015; Battin, *An Introduction to the Mathematics and Methods of Astrodynamics*, AIAA, 1987,
    ch. 7 (from memory).
    """
    y = math.sqrt(max(0.0, 1.0 - lam * lam * (1.0 - x * x)))
    if abs(x - 1.0) < SERIES_WIDTH:
        eta = y - lam * x
        s1 = 0.5 * (1.0 - lam - x * eta)
        q = 4.0 / 3.0 * _hyp_3_1_52(s1)
        return 0.5 * (eta ** 3 * q + 4.0 * lam * eta)
    one = 1.0 - x * x
    if x < 1.0:
        psi = math.acos(max(-1.0, min(1.0, x * y + lam * one)))
    else:
        psi = math.asinh((y - x * lam) * math.sqrt(-one))
    return (psi / math.sqrt(abs(one)) - x + lam * y) / one


def lambert(r1, r2, tof: float, gm: float, prograde: bool = True):
    """Velocities at ``r1`` and ``r2`` of the two-body arc from ``r1`` to ``r2`` in ``tof``.

    Parameters
    ----------
    r1, r2 : array_like (3,)
        Positions relative to the attracting body.
    tof : float
        Time of flight (> 0), units consistent with ``gm``.
    gm : float
        Gravitational parameter of the attracting body.
    prograde : bool
        True: the arc's angular momentum has a positive z component (the short or long way
        chosen accordingly); False: negative.

    Returns
    -------
    v1, v2 : ndarray (3,)

    Raises
    ------
    InputError
        Non-positive time or ``gm``, coincident or collinear positions (transfer angle 0 or
        180 degrees: the plane is undefined).
    NoSolutionError
        No root of the time-of-flight equation was bracketed.

    Examples
    --------
    A quarter of a circular orbit (unit radius and ``gm``: a quarter period is pi/2):

    >>> import math
    >>> import numpy as np
    >>> from cr3bp.transfers.lambert import lambert
    >>> v1, v2 = lambert([1.0, 0.0, 0.0], [0.0, 1.0, 0.0], math.pi / 2, 1.0)
    >>> np.round(v1, 9) + 0.0, np.round(v2, 9) + 0.0
    (array([0., 1., 0.]), array([-1.,  0.,  0.]))

    References
    ----------
    Izzo, D., "Revisiting Lambert's problem", Celest. Mech. Dyn. Astr. 121, 2015.
    """
    r1 = np.asarray(r1, dtype=float)
    r2 = np.asarray(r2, dtype=float)
    tof = validate.positive_number("Lambert time of flight", tof)
    gm = validate.positive_number("Lambert gravitational parameter", gm)
    c = r2 - r1
    cn, n1, n2 = (float(np.linalg.norm(v)) for v in (c, r1, r2))
    if min(n1, n2) == 0.0 or cn == 0.0:
        raise InputError("Lambert positions must be distinct and away from the attracting body")
    s = 0.5 * (cn + n1 + n2)
    ir1, ir2 = r1 / n1, r2 / n2
    ih = np.cross(ir1, ir2)
    hn = float(np.linalg.norm(ih))
    if hn < 1e-12:
        raise InputError("Lambert positions are collinear with the attracting body (transfer angle "
                         "0 or 180 degrees): the transfer plane is undefined")
    ih = ih / hn
    lam = math.sqrt(max(0.0, 1.0 - cn / s))
    if (ih[2] < 0.0) == prograde:
        # the transfer angle exceeds 180 degrees in the requested sense (Izzo 2015, §2)
        lam = -lam
        it1, it2 = np.cross(ir1, ih), np.cross(ir2, ih)
    else:
        it1, it2 = np.cross(ih, ir1), np.cross(ih, ir2)
    it1 /= np.linalg.norm(it1)
    it2 /= np.linalg.norm(it2)
    T = math.sqrt(2.0 * gm / s ** 3) * tof

    def f(x):
        return tof_equation(x, lam) - T

    lo, hi = -1.0 + 1e-12, 1.0
    while f(hi) > 0.0:
        lo, hi = hi, 2.0 * hi + 1.0
        if hi > 1e8:
            raise NoSolutionError(f"Lambert: no arc with time of flight {tof!r} was found")
    if f(lo) < 0.0:
        raise NoSolutionError(f"Lambert: time of flight {tof!r} is beyond the single-revolution range")
    x = brentq(f, lo, hi, xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=200)
    y = math.sqrt(max(0.0, 1.0 - lam * lam * (1.0 - x * x)))
    gamma = math.sqrt(gm * s / 2.0)
    rho = (n1 - n2) / cn
    sigma = math.sqrt(max(0.0, 1.0 - rho * rho))
    vr1 = gamma * ((lam * y - x) - rho * (lam * y + x)) / n1
    vr2 = -gamma * ((lam * y - x) + rho * (lam * y + x)) / n2
    vt1 = gamma * sigma * (y + lam * x) / n1
    vt2 = gamma * sigma * (y + lam * x) / n2
    return vr1 * ir1 + vt1 * it1, vr2 * ir2 + vt2 * it2
