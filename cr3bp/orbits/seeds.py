"""Initial guesses for periodic orbits.

Every seed is a :class:`Seed`: an initial state on a symmetry plane/axis, a half-period guess
and the symmetry the corrector should use. Seeds are *guesses*; the corrector turns them into
orbits.

* Linear Lyapunov and vertical orbits from the linearised equations at a collinear point
  (Szebehely, *Theory of Orbits*, 1967, §4.5; Richardson 1980, eqs. (5)-(7)).
* Richardson's third-order halo approximation (Richardson, "Analytic construction of periodic
  orbits about the collinear points", *Celestial Mechanics* 22, 1980, pp. 241-253: the
  solution eqs. (17)-(19), the amplitude constraint eq. (18) ``l1 Ax^2 + l2 Az^2 + Delta = 0``
  and the frequency correction ``omega = 1 + s1 Ax^2 + s2 Az^2``; coefficients as listed in
  the paper's appendix, recalled from memory and checked here by the corrector converging
  from them, see tests/test_against_richardson_1980.py).
* Distant retrograde orbits from the retrograde circular orbit about the smaller primary
  (Hill-problem limit; Hénon, "Numerical exploration of the restricted problem. V", *Astron.
  Astrophys.* 1, 1969, family f).
* p:q resonant orbits from a Kepler ellipse about the larger primary of period ``2 pi q / p``
  (sidereal), which in the rotating frame closes after ``2 pi q`` (common practice):
  :func:`resonant_encounter` places the apsis nearer the secondary's orbit on the secondary's
  side (the orbits of the family then come close to the secondary), :func:`resonant` the other
  way round.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import validate
from ..errors import InputError
from ..vocabulary import HALO_BRANCHES
from ._collinear import cn, collinear_point

XZ = "xz"          # symmetric about the x-z plane: perpendicular crossings of y = 0
XZ_PLANAR = "xz-planar"
X_AXIS_Y = "x-axis/y"  # symmetric about the x axis, half period ends on y = 0 (axial)
X_AXIS_Z = "x-axis/z"  # symmetric about the x axis, half period ends on z = 0 (vertical)


@dataclass(frozen=True)
class Seed:
    """An initial guess for the corrector.

    Parameters
    ----------
    state : ndarray, shape (6,)
        Initial state on the symmetry plane or axis (nondimensional, rotating frame).
    half_period : float
        Guess of half the period (TU).
    symmetry : str
        Symmetry type the corrector should use (:data:`XZ`, :data:`XZ_PLANAR`, ...).
    note : str
        What the guess is, for messages.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §4.5 (linearised motion about the
       collinear points; from memory).

    Examples
    --------
    >>> from cr3bp.orbits.seeds import linear_lyapunov
    >>> linear_lyapunov(0.0121505843, "L1", 1e-3).symmetry
    'xz-planar'
    """

    state: np.ndarray
    half_period: float
    symmetry: str
    note: str = ""


def linear_lyapunov(mu: float, point: str, ax_lu: float) -> Seed:
    """Linear planar Lyapunov orbit of x-amplitude ``ax_lu`` (LU) about a collinear point.

    ``x = xL + Ax cos(w t), y = -k Ax sin(w t)``, ``k = (w^2 + 1 + 2 c2) / (2 w)`` (Richardson
    1980, eq. (7) with Az = 0). Starts at the crossing farther from the smaller primary (L1,
    L2) or from the larger one (L3).

    Parameters
    ----------
    mu : float
        Mass ratio.
    point : str
        ``"L1"``, ``"L2"`` or ``"L3"``.
    ax_lu : float
        x amplitude (LU).

    Returns
    -------
    Seed

    Raises
    ------
    InputError
        ``point`` is not collinear.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §4.5 (linearised motion about the
       collinear points; from memory).
    .. [2] D. L. Richardson, *Celestial Mechanics* 22, 1980, eq. (7).

    Examples
    --------
    >>> from cr3bp.orbits.seeds import linear_lyapunov
    >>> sd = linear_lyapunov(0.0121505843, "L1", 1e-3)
    >>> round(sd.half_period, 4)
    1.3458
    """
    p = collinear_point(mu, point)
    a = abs(ax_lu) if p.name == "L2" else -abs(ax_lu)
    w = p.omega_p
    s = np.array([p.x + a, 0.0, 0.0, 0.0, -p.kappa * a * w, 0.0])
    return Seed(s, math.pi / w, XZ_PLANAR, f"linear Lyapunov, Ax = {abs(ax_lu):.3g} LU")


def linear_vertical(mu: float, point: str, az_lu: float) -> Seed:
    """Linear vertical orbit ``z = Az sin(wv t)`` through the collinear point.

    Starts at the node on the x axis going up; half period ends at the next z = 0 crossing.

    Parameters
    ----------
    mu : float
        Mass ratio.
    point : str
        ``"L1"``, ``"L2"`` or ``"L3"``.
    az_lu : float
        z amplitude (LU).

    Returns
    -------
    Seed

    Raises
    ------
    InputError
        ``point`` is not collinear.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §4.5 (linearised motion about the
       collinear points; from memory).

    Examples
    --------
    >>> from cr3bp.orbits.seeds import linear_vertical
    >>> linear_vertical(0.0121505843, "L1", 1e-3).symmetry
    'x-axis/z'
    """
    p = collinear_point(mu, point)
    s = np.array([p.x, 0.0, 0.0, 0.0, 0.0, abs(az_lu) * p.omega_v])
    return Seed(s, math.pi / p.omega_v, X_AXIS_Z, f"linear vertical, Az = {abs(az_lu):.3g} LU")


@dataclass(frozen=True)
class RichardsonCoefficients:
    """The coefficients of Richardson's third-order halo solution.

    Parameters
    ----------
    lam, k, delta : float
        In-plane frequency, amplitude ratio and ``lam^2 - c2``.
    c2, c3, c4 : float
        Legendre coefficients of the expanded potential.
    a21, a22, a23, a24, a31, a32, b21, b22, b31, b32, d21, d31, d32 : float
        Second- and third-order amplitude coefficients.
    s1, s2, l1, l2 : float
        Frequency-correction and amplitude-constraint coefficients.

    References
    ----------
    .. [1] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, pp. 241-253 (eqs. (17)-(19) and the appendix; coefficients
       from memory, checked by the corrector converging from them).

    Examples
    --------
    >>> from cr3bp.orbits.seeds import richardson_coefficients
    >>> round(richardson_coefficients(0.0121505843, "L1").c2, 4)
    5.1476
    """
    lam: float
    k: float
    delta: float
    c2: float
    c3: float
    c4: float
    a21: float
    a22: float
    a23: float
    a24: float
    a31: float
    a32: float
    b21: float
    b22: float
    b31: float
    b32: float
    d21: float
    d31: float
    d32: float
    s1: float
    s2: float
    l1: float
    l2: float


def richardson_coefficients(mu: float, point: str) -> RichardsonCoefficients:
    """Coefficients of Richardson's third-order solution at a collinear point.

    Parameters
    ----------
    mu : float
        Mass ratio.
    point : str
        ``"L1"``, ``"L2"`` or ``"L3"``.

    Returns
    -------
    RichardsonCoefficients

    Raises
    ------
    InputError
        ``point`` is not collinear.

    References
    ----------
    .. [1] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, pp. 241-253 (eqs. (17)-(19) and the appendix; coefficients
       from memory, checked by the corrector converging from them).

    Examples
    --------
    >>> from cr3bp.orbits.seeds import richardson_coefficients
    >>> c = richardson_coefficients(0.0121505843, "L2")
    >>> round(c.lam, 4)
    1.8626
    """
    p = collinear_point(mu, point)
    g = p.gamma
    c2, c3, c4 = (cn(mu, p.name, g, n) for n in (2, 3, 4))
    lam = p.omega_p
    k = (lam**2 + 1 + 2 * c2) / (2 * lam)
    delta = lam**2 - c2
    d1 = 3 * lam**2 / k * (k * (6 * lam**2 - 1) - 2 * lam)
    d2 = 8 * lam**2 / k * (k * (11 * lam**2 - 1) - 2 * lam)
    a21 = 3 * c3 * (k**2 - 2) / (4 * (1 + 2 * c2))
    a22 = 3 * c3 / (4 * (1 + 2 * c2))
    a23 = -3 * c3 * lam / (4 * k * d1) * (3 * k**3 * lam - 6 * k * (k - lam) + 4)
    a24 = -3 * c3 * lam / (4 * k * d1) * (2 + 3 * k * lam)
    b21 = -3 * c3 * lam / (2 * d1) * (3 * k * lam - 4)
    b22 = 3 * c3 * lam / d1
    d21 = -c3 / (2 * lam**2)
    a31 = (-9 * lam / (4 * d2) * (4 * c3 * (k * a23 - b21) + k * c4 * (4 + k**2))
           + (9 * lam**2 + 1 - c2) / (2 * d2) * (3 * c3 * (2 * a23 - k * b21) + c4 * (2 + 3 * k**2)))
    a32 = -1 / d2 * (9 * lam / 4 * (4 * c3 * (k * a24 - b22) + k * c4)
                     + 1.5 * (9 * lam**2 + 1 - c2) * (c3 * (k * b22 + d21 - 2 * a24) - c4))
    b31 = 3 / (8 * d2) * (8 * lam * (3 * c3 * (k * b21 - 2 * a23) - c4 * (2 + 3 * k**2))
                          + (9 * lam**2 + 1 + 2 * c2) * (4 * c3 * (k * a23 - b21) + k * c4 * (4 + k**2)))
    b32 = 1 / d2 * (9 * lam * (c3 * (k * b22 + d21 - 2 * a24) - c4)
                    + 3 / 8 * (9 * lam**2 + 1 + 2 * c2) * (4 * c3 * (k * a24 - b22) + k * c4))
    d31 = 3 / (64 * lam**2) * (4 * c3 * a24 + c4)
    d32 = 3 / (64 * lam**2) * (4 * c3 * (a23 - d21) + c4 * (4 + k**2))
    den = 2 * lam * (lam * (1 + k**2) - 2 * k)
    s1 = (1.5 * c3 * (2 * a21 * (k**2 - 2) - a23 * (k**2 + 2) - 2 * k * b21)
          - 3 / 8 * c4 * (3 * k**4 - 8 * k**2 + 8)) / den
    s2 = (1.5 * c3 * (2 * a22 * (k**2 - 2) + a24 * (k**2 + 2) + 2 * k * b22 + 5 * d21)
          + 3 / 8 * c4 * (12 - k**2)) / den
    l1 = -1.5 * c3 * (2 * a21 + a23 + 5 * d21) - 3 / 8 * c4 * (12 - k**2) + 2 * lam**2 * s1
    l2 = 1.5 * c3 * (a24 - 2 * a22) + 9 / 8 * c4 + 2 * lam**2 * s2
    return RichardsonCoefficients(lam, k, delta, c2, c3, c4, a21, a22, a23, a24, a31, a32, b21, b22,
                                  b31, b32, d21, d31, d32, s1, s2, l1, l2)


def richardson_halo(mu: float, point: str, az_lu: float, branch: str = "north",
                    n_points: int = 0) -> Seed:
    """Richardson's third-order halo of out-of-plane amplitude ``az_lu`` (LU).

    Richardson 1980, eqs. (17)-(19) in the frame centred on the Lagrange point with unit
    ``gamma`` and axes parallel to the rotating frame (so ``x = xL + gamma x_R``); ``Ax``
    from the amplitude constraint ``l1 Ax^2 + l2 Az^2 + Delta = 0``; period
    ``T = 2 pi / (lambda omega)``. The seed starts at a perpendicular crossing, the one farther
    from the smaller primary (or from the larger for L3); ``delta_n = +-1`` is chosen to give
    the requested branch (module notes of :mod:`cr3bp.orbits.orbit`): north means z > 0 at the
    start.

    Parameters
    ----------
    mu : float
        Mass ratio.
    point : str
        ``"L1"``, ``"L2"`` or ``"L3"``.
    az_lu : float
        Out-of-plane amplitude (LU).
    branch : str
        ``"north"`` or ``"south"``.
    n_points : int
        Unused (kept for callers); see :func:`richardson_curve` for the sampled curve.

    Returns
    -------
    Seed

    Raises
    ------
    InputError
        A bad point or branch, or an amplitude with no real Ax in the amplitude constraint.

    References
    ----------
    .. [1] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, pp. 241-253 (eqs. (17)-(19) and the appendix; coefficients
       from memory, checked by the corrector converging from them).

    Examples
    --------
    >>> from cr3bp.orbits.seeds import richardson_halo
    >>> sd = richardson_halo(0.0121505843, "L2", 0.01, "south")
    >>> sd.symmetry, bool(sd.state[2] < 0)
    ('xz', True)
    """
    p = collinear_point(mu, point)
    c = richardson_coefficients(mu, point)
    az = abs(az_lu) / p.gamma
    ax2 = (-c.delta - c.l2 * az * az) / c.l1
    if ax2 <= 0:
        raise InputError(f"Az = {az_lu:g} LU gives no real Ax in Richardson's amplitude constraint at {p.name}")
    branch = str(branch).lower()
    if branch not in HALO_BRANCHES:
        raise InputError(f"halo branch '{branch}' is not allowed; use north or south")
    # tau1 = 0 is the crossing at x_R ~ -Ax: farther from the smaller primary for L1, nearer for L2;
    # for L3 it is farther from the larger primary. The seed starts at the far crossing (tau1 = pi
    # for L2), where the sensitivity of the full-period map is least.
    far_at_zero = p.name in ("L1", "L3")
    dn = 1.0 if (branch == "north") == far_at_zero else -1.0
    state, period = _richardson_state(c, p, math.sqrt(ax2), az, dn, 0.0 if far_at_zero else math.pi)
    return Seed(state, 0.5 * period, XZ,
                f"Richardson third order, Az = {abs(az_lu):.4g} LU, Ax = {math.sqrt(ax2) * p.gamma:.4g} LU")


def _richardson_state(c, p, ax, az, dn, tau1):
    cos, sin = math.cos, math.sin
    x = (c.a21 * ax**2 + c.a22 * az**2 - ax * cos(tau1) + (c.a23 * ax**2 - c.a24 * az**2) * cos(2 * tau1)
         + (c.a31 * ax**3 - c.a32 * ax * az**2) * cos(3 * tau1))
    y = (c.k * ax * sin(tau1) + (c.b21 * ax**2 - c.b22 * az**2) * sin(2 * tau1)
         + (c.b31 * ax**3 - c.b32 * ax * az**2) * sin(3 * tau1))
    z = (dn * az * cos(tau1) + dn * c.d21 * ax * az * (cos(2 * tau1) - 3)
         + dn * (c.d32 * az * ax**2 - c.d31 * az**3) * cos(3 * tau1))
    dx = (ax * sin(tau1) - 2 * (c.a23 * ax**2 - c.a24 * az**2) * sin(2 * tau1)
          - 3 * (c.a31 * ax**3 - c.a32 * ax * az**2) * sin(3 * tau1))
    dy = (c.k * ax * cos(tau1) + 2 * (c.b21 * ax**2 - c.b22 * az**2) * cos(2 * tau1)
          + 3 * (c.b31 * ax**3 - c.b32 * ax * az**2) * cos(3 * tau1))
    dz = (-dn * az * sin(tau1) - 2 * dn * c.d21 * ax * az * sin(2 * tau1)
          - 3 * dn * (c.d32 * az * ax**2 - c.d31 * az**3) * sin(3 * tau1))
    omega = 1.0 + c.s1 * ax**2 + c.s2 * az**2
    rate = c.lam * omega            # d tau1 / dt
    g = p.gamma
    state = np.array([p.x + g * x, g * y, g * z, g * rate * dx, g * rate * dy, g * rate * dz])
    return state, 2 * math.pi / rate


def richardson_curve(mu: float, point: str, az_lu: float, branch: str = "north", n: int = 400):
    """The third-order halo sampled at ``n`` phases over one period.

    Parameters
    ----------
    mu : float
        Mass ratio.
    point : str
        ``"L1"``, ``"L2"`` or ``"L3"``.
    az_lu : float
        Out-of-plane amplitude (LU).
    branch : str
        ``"north"`` or ``"south"``.
    n : int
        Number of samples.

    Returns
    -------
    t : ndarray, shape (n,)
        Times (TU) from the start.
    states : ndarray, shape (n, 6)

    Raises
    ------
    InputError
        ``point`` is not collinear.

    References
    ----------
    .. [1] D. L. Richardson, "Analytic construction of periodic orbits about the collinear points",
       *Celestial Mechanics* 22, 1980, pp. 241-253 (eqs. (17)-(19) and the appendix; coefficients
       from memory, checked by the corrector converging from them).

    Examples
    --------
    >>> from cr3bp.orbits.seeds import richardson_curve
    >>> t, s = richardson_curve(0.0121505843, "L1", 0.005, n=8)
    >>> s.shape
    (8, 6)
    """
    p = collinear_point(mu, point)
    c = richardson_coefficients(mu, point)
    az = abs(az_lu) / p.gamma
    ax = math.sqrt((-c.delta - c.l2 * az * az) / c.l1)
    far_at_zero = p.name in ("L1", "L3")
    dn = 1.0 if (str(branch).lower() == "north") == far_at_zero else -1.0
    taus = np.linspace(0.0, 2 * math.pi, n, endpoint=False)
    rows = [_richardson_state(c, p, ax, az, dn, t) for t in taus]
    period = rows[0][1]
    return taus / (2 * math.pi) * period, np.array([r[0] for r in rows])


def dro(mu: float, distance_lu: float) -> Seed:
    """Distant retrograde orbit seed: a retrograde circle about the smaller primary.

    Radius ``distance_lu``, started on the far side (x = 1 - mu + d) with
    ``vy = -(sqrt(mu/d) + d)`` (two-body speed plus the frame rotation; Hill limit).

    Parameters
    ----------
    mu : float
        Mass ratio.
    distance_lu : float
        Radius of the circle (LU).

    Returns
    -------
    Seed

    Raises
    ------
    InputError
        ``distance_lu`` is not positive.

    References
    ----------
    .. [1] M. Hénon, "Numerical exploration of the restricted problem. V", *Astron. Astrophys.* 1,
       1969 (from memory).

    Examples
    --------
    >>> from cr3bp.orbits.seeds import dro
    >>> dro(0.0121505843, -1.0)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: DRO distance (LU) '-1.0' must be positive
    """
    d = validate.positive_number("DRO distance (LU)", distance_lu)
    s = np.array([1 - mu + d, 0.0, 0.0, 0.0, -(math.sqrt(mu / d) + d), 0.0])
    n_rel = math.sqrt(mu / d**3) + 1.0   # retrograde angular rate relative to the rotating frame
    return Seed(s, math.pi / n_rel, XZ_PLANAR, f"retrograde circle, d = {d:.4g} LU")


def resonant(mu: float, p: int, q: int, eccentricity: float = 0.5, start: str = "periapsis") -> Seed:
    """p:q resonant orbit seed about the larger primary, periapsis away from the secondary.

    Kepler ellipse with sidereal period ``2 pi q / p`` (``a = (q/p)^(2/3)`` with GM = 1 - mu),
    started at periapsis (or apoapsis) on the far side of the larger primary from the smaller;
    rotating-frame period ``2 pi q``.

    Parameters
    ----------
    mu : float
        Mass ratio.
    p, q : int
        Revolutions of the spacecraft and of the primaries.
    eccentricity : float
        In [0, 0.98).
    start : str
        ``"periapsis"`` or ``"apoapsis"``.

    Returns
    -------
    Seed

    Raises
    ------
    InputError
        p or q not positive integers, or the eccentricity out of range.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011 (resonant orbits of the restricted problem; Kepler's
       third law, common practice).

    Examples
    --------
    >>> from cr3bp.orbits.seeds import resonant
    >>> round(resonant(0.0121505843, 3, 2, 0.3).half_period, 6)
    6.283185
    """
    if not (isinstance(p, int) and isinstance(q, int) and p > 0 and q > 0):
        raise InputError(f"resonance {p}:{q} must be two positive integers")
    if not 0.0 <= eccentricity < 0.98:
        raise InputError(f"eccentricity {eccentricity} must be in [0, 0.98)")
    gm = 1.0 - mu
    a = (gm * (q / p) ** 2) ** (1.0 / 3.0)
    e = eccentricity
    r = a * (1 - e) if start == "periapsis" else a * (1 + e)
    v = math.sqrt(gm * (2 / r - 1 / a))
    s = np.array([-mu - r, 0.0, 0.0, 0.0, -(v - r), 0.0])
    return Seed(s, math.pi * q, XZ_PLANAR, f"{p}:{q} Kepler ellipse, e = {e:.3g}")


def resonant_geometry(mu: float, p: int, q: int):
    """Semi-major axis, touching eccentricity and nearer apsis of a p:q orbit.

    ``a = ((1 - mu) (q/p)^2)^(1/3)`` (Kepler's third law with GM = 1 - mu and the secondary's
    mean motion 1); the eccentricity at which the apsis nearer the secondary's orbit reaches it
    (``a (1 - e) = 1`` outside, ``a (1 + e) = 1`` inside); which apsis that is.

    Parameters
    ----------
    mu : float
        Mass ratio.
    p, q : int
        Revolutions of the spacecraft and of the primaries.

    Returns
    -------
    a : float
        Semi-major axis (LU).
    e_touch : float
    close : str
        ``"periapsis"`` (a > 1) or ``"apoapsis"`` (a < 1).

    Raises
    ------
    InputError
        p, q not positive integers, p = q, or p:q not in lowest terms.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011 (resonant orbits of the restricted problem; Kepler's
       third law, common practice).

    Examples
    --------
    >>> from cr3bp.orbits.seeds import resonant_geometry
    >>> a, e, close = resonant_geometry(0.0, 1, 8)
    >>> round(a, 12), round(e, 6), close
    (4.0, 0.75, 'periapsis')
    """
    if not (isinstance(p, int) and isinstance(q, int) and p > 0 and q > 0):
        raise InputError(f"resonance {p}:{q} must be two positive integers")
    if p == q:
        raise InputError(f"resonance {p}:{q} is the secondary's own period (co-orbital motion): "
                         "not offered as a resonant family; use p different from q, e.g. 3:4")
    if math.gcd(p, q) != 1:
        g = math.gcd(p, q)
        raise InputError(f"resonance {p}:{q} is not in lowest terms; write it as {p // g}:{q // g}")
    a = ((1.0 - mu) * (q / p) ** 2) ** (1.0 / 3.0)
    if a > 1.0:
        return a, 1.0 - 1.0 / a, "periapsis"
    return a, 1.0 / a - 1.0, "apoapsis"


def check_resonance(p: int, q: int) -> None:
    """Refuse a p:q resonant family that is not offered.

    p = q, p:q not in lowest terms, or an inner resonance whose ellipses cannot reach the
    secondary's orbit (p/q >= 2.8; the exact limit depends a little on the mass ratio, checked
    again when seeding).

    Parameters
    ----------
    p, q : int
        Revolutions of the spacecraft and of the primaries.

    Returns
    -------
    None

    Raises
    ------
    InputError
        Naming the resonance and what is offered.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011 (resonant orbits of the restricted problem; Kepler's
       third law, common practice).

    Examples
    --------
    >>> from cr3bp.orbits.seeds import check_resonance
    >>> check_resonance(3, 2)
    >>> check_resonance(4, 2)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: resonance 4:2 is not in lowest terms; write it as 2:1
    """
    _, e_touch, _ = resonant_geometry(0.0, p, q)
    if e_touch >= 0.98:
        raise InputError(f"a {p}:{q} orbit cannot reach the secondary's orbit on an ellipse; inner "
                         "resonances are offered while p/q < 2.8 (e.g. 5:2)")


def resonant_encounter(mu: float, p: int, q: int, eccentricity: float | None = None) -> Seed:
    """p:q resonant seed whose nearer apsis points at the secondary half a period later.

    As the eccentricity grows towards ``e_touch`` (:func:`resonant_geometry`) that apsis closes
    on the secondary, so the family through this seed reaches close approaches (the flyby orbits
    of moon tours). Kepler ellipse of sidereal period ``2 pi q / p``; rotating-frame period
    ``2 pi q``. At ``t = T/2 = pi q`` the spacecraft has made ``p/2`` revolutions and the frame
    ``q/2``: the seed starts on the far side of the larger primary when ``p - q`` is odd, on the
    secondary's side when it is even, at the nearer apsis when ``p`` is even and at the other
    apsis when ``p`` is odd. Default eccentricity ``e_touch / 2``.

    Parameters
    ----------
    mu : float
        Mass ratio.
    p, q : int
        Revolutions of the spacecraft and of the primaries.
    eccentricity : float, optional
        In [0, 0.98); default ``e_touch / 2``.

    Returns
    -------
    Seed

    Raises
    ------
    InputError
        No ellipse (e < 0.98) reaches the secondary's orbit (inner resonances with p/q > 2.8),
        or a bad p:q or eccentricity.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011 (resonant orbits of the restricted problem; Kepler's
       third law, common practice).

    Examples
    --------
    >>> from cr3bp.orbits.seeds import resonant_encounter
    >>> resonant_encounter(0.0121505843, 3, 2).symmetry
    'xz-planar'
    """
    a, e_touch, close = resonant_geometry(mu, p, q)
    if e_touch >= 0.98:
        raise InputError(f"a {p}:{q} orbit (semi-major axis {a:.4f} of the primaries' distance) cannot "
                         f"reach the secondary's orbit on an ellipse; inner resonances are offered while "
                         f"p/q < 2.8 (e.g. 5:2)")
    e = 0.5 * e_touch if eccentricity is None else float(eccentricity)
    if not 0.0 <= e < 0.98:
        raise InputError(f"eccentricity {eccentricity} must be in [0, 0.98)")
    theta0 = math.pi if (p - q) % 2 else 0.0
    start_close = p % 2 == 0
    at_periapsis = (close == "periapsis") == start_close
    gm = 1.0 - mu
    r = a * (1 - e) if at_periapsis else a * (1 + e)
    v = math.sqrt(gm * (2 / r - 1 / a))
    c = math.cos(theta0)
    s = np.array([-mu + c * r, 0.0, 0.0, 0.0, c * (v - r), 0.0])
    return Seed(s, math.pi * q, XZ_PLANAR,
                f"{p}:{q} Kepler ellipse, e = {e:.3g}, {close} towards the secondary at T/2")


def resonant_x_rate(mu: float, p: int, q: int, e: float) -> float:
    """Sign of d x0 / d e of :func:`resonant_encounter`.

    Which way along the family's tangent the eccentricity, and with it the approach to the
    secondary, grows.

    Parameters
    ----------
    mu : float
        Mass ratio.
    p, q : int
        Revolutions of the spacecraft and of the primaries.
    e : float
        Eccentricity.

    Returns
    -------
    float
        +1.0 or -1.0.

    Raises
    ------
    InputError
        As :func:`resonant_encounter`.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011 (resonant orbits of the restricted problem; Kepler's
       third law, common practice).

    Examples
    --------
    >>> from cr3bp.orbits.seeds import resonant_x_rate
    >>> resonant_x_rate(0.0121505843, 3, 2, 0.2) in (1.0, -1.0)
    True
    """
    h = 1e-6
    x1 = resonant_encounter(mu, p, q, e + h).state[0]
    x0 = resonant_encounter(mu, p, q, e).state[0]
    return 1.0 if x1 > x0 else -1.0
