"""Energy: Jacobi constants, zero-velocity curves and Hill regions.

Conventions (Omega, ``C = 2 Omega - v^2``) are in :mod:`cr3bp.systems`. A spacecraft with
Jacobi constant ``C`` can only be where ``2 Omega >= C`` (its Hill region); the boundary
``2 Omega = C`` is the zero-velocity curve (Szebehely, *Theory of Orbits*, 1967, §4.3).
A collinear point's "neck" lets the spacecraft pass from one realm to the next exactly when
``C < C_Li``, the Jacobi constant at rest at the point (Koon, Lo, Marsden & Ross,
*Dynamical Systems, the Three-Body Problem and Space Mission Design*, 2011, ch. 2 and 3).

Everything here works on whole grids with numpy; curves are traced with contourpy (the
contouring library matplotlib itself uses) and then projected onto ``2 Omega = C`` by
Newton steps along the gradient, so their points satisfy the equation to ~1e-12.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from . import dynamics, units
from .equilibria import COLLINEAR, NAMES, jacobi_constants, lagrange_point, point_name
from . import validate
from .errors import InputError
from .equilibria import collinear_gamma
from .validate import finite_number

PLANES = ("xy", "xz")
VIEWS = ("system", "secondary")
#: Grid points per side of the default Hill-region grid.
DEFAULT_RESOLUTION = 601
#: Half-width (LU) of the "system" view, centred on the barycentre.
SYSTEM_HALF_WIDTH = 1.5
#: Half-width of the "secondary" view in units of the larger of gamma_L1, gamma_L2.
SECONDARY_HALF_WIDTH = 2.0
#: Newton projections of contour points onto 2 Omega = C.
REFINE_STEPS = 8
#: Field values are clipped to this (2 Omega is infinite at the primaries' centres).
FIELD_CAP = 1e6


# ---- Jacobi constant helpers -------------------------------------------------------------

def jacobi(system, states):
    """Jacobi constant ``C = 2 Omega - v^2`` of one state or many.

    Wraps :func:`cr3bp.dynamics.jacobi`.

    Parameters
    ----------
    system : System
    states : array_like, shape (6,) or (N, 6)

    Returns
    -------
    float or ndarray

    Raises
    ------
    None

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §1.6 and §4.3 (the Jacobi
       integral and the zero-velocity surfaces; from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp import energy
    >>> em = system("earth-moon")
    >>> round(float(energy.jacobi(em, [0.836915, 0, 0, 0, 0, 0])), 4)
    3.1883
    """
    return dynamics.jacobi(system.mu, states)


def check_jacobi(value, name: str = "Jacobi constant") -> float:
    """A finite Jacobi constant, as float.

    Parameters
    ----------
    value : float or str
    name : str
        What the value is, for the message.

    Returns
    -------
    float

    Raises
    ------
    InputError
        Not a number, or not finite.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §1.6 and §4.3 (the Jacobi
       integral and the zero-velocity surfaces; from memory).

    Examples
    --------
    >>> from cr3bp.energy import check_jacobi
    >>> check_jacobi("3.15")
    3.15
    """
    return finite_number(name, value)


def _velocity(system, dv) -> float:
    """``dv`` as LU/TU: a float is taken as nondimensional, text is parsed by cr3bp.units."""
    if isinstance(dv, str):
        v = units.velocity(dv, system)
    else:
        v = finite_number("dv (LU/TU, or text with a unit such as '20m/s')", dv)
    if v < 0:
        raise InputError(f"dv {dv!r} is negative; a speed must be >= 0")
    return v


def jacobi_above(system, point: str, dv) -> float:
    """Jacobi constant of a spacecraft at Lagrange point ``point`` moving at speed ``dv``.

    ``C = C_L - dv^2`` with ``dv`` nondimensional (LU/TU): from ``C = 2 Omega - v^2`` at the
    point's position. ``dv`` is a float in LU/TU or a quantity such as ``"20m/s"`` (parsed by
    :mod:`cr3bp.units`; needs a dimensional system).

    Parameters
    ----------
    system : System
    point : str
        ``"L1"`` .. ``"L5"``.
    dv : float or str
        Speed at the point.

    Returns
    -------
    float

    Raises
    ------
    InputError
        Unknown point name, or ``dv`` negative, non-finite or not a velocity.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §1.6 and §4.3 (the Jacobi
       integral and the zero-velocity surfaces; from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp import energy
    >>> em = system("earth-moon")
    >>> round(energy.jacobi_above(em, "L1", 0.1), 4)
    3.1783
    """
    name = point_name(point)
    v = _velocity(system, dv)
    return jacobi_constants(system)[name] - v * v


def speed_at_point(system, point: str, jacobi_value: float) -> float | None:
    """Speed (LU/TU) a spacecraft with this Jacobi constant has when at ``point``.

    ``sqrt(C_L - C)``, or None when ``C > C_L`` (the point is in its forbidden region).

    Parameters
    ----------
    system : System
    point : str
    jacobi_value : float

    Returns
    -------
    float or None

    Raises
    ------
    InputError
        Unknown point, or a Jacobi constant that is not finite.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §1.6 and §4.3 (the Jacobi
       integral and the zero-velocity surfaces; from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp import energy
    >>> em = system("earth-moon")
    >>> energy.speed_at_point(em, "L1", 3.2) is None
    True
    """
    c = check_jacobi(jacobi_value)
    d = jacobi_constants(system)[point_name(point)] - c
    return math.sqrt(d) if d >= 0 else None


def necks(system, jacobi_value: float, levels: dict | None = None) -> dict:
    """Which necks are open: ``{"L1": C < C_L1, "L2": C < C_L2, "L3": C < C_L3}``.

    Parameters
    ----------
    system : System
    jacobi_value : float
    levels : dict, optional
        Jacobi constants of the points (computed when not given).

    Returns
    -------
    dict

    Raises
    ------
    InputError
        A Jacobi constant that is not finite.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, ch. 2 (Hill's region, realms and necks).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp import energy
    >>> em = system("earth-moon")
    >>> energy.necks(em, 3.18)
    {'L1': True, 'L2': False, 'L3': False}
    """
    c = check_jacobi(jacobi_value)
    levels = levels or jacobi_constants(system)
    return {n: bool(c < levels[n]) for n in COLLINEAR}


def realms(system, jacobi_value: float, levels: dict | None = None, plane: str = "xy") -> str:
    """Plain-English description of the realms a spacecraft with Jacobi constant C can reach.

    The five energy cases of Hill's region.

    Parameters
    ----------
    system : System
    jacobi_value : float
    levels : dict, optional
    plane : str
        ``"xy"`` or ``"xz"``.

    Returns
    -------
    str

    Raises
    ------
    InputError
        A Jacobi constant that is not finite.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, ch. 2 (Hill's region, realms and necks).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp import energy
    >>> em = system("earth-moon")
    >>> energy.realms(em, 3.18)
    'the Earth and Moon realms join through the L1 neck (L2, L3 closed)'
    """
    c = check_jacobi(jacobi_value)
    levels = levels or jacobi_constants(system)
    p1, p2 = (n.title() for n in system.names)
    o = necks(system, c, levels)
    if c <= levels["L4"] and plane == "xy":
        return ("C at or below C_L4 = C_L5: no forbidden region is left in the plane z = 0; "
                "the spacecraft may go anywhere in it")
    if not any(o.values()):
        return (f"all necks closed: the spacecraft stays in the realm where it is, around {p1}, "
                f"around {p2}, or the exterior realm")
    parts = []
    if o["L1"]:
        parts.append(f"the {p1} and {p2} realms join through the L1 neck")
    if o["L2"]:
        parts.append(f"the {p2} realm opens to the exterior through the L2 neck")
    if o["L3"]:
        parts.append(f"the {p1} realm opens to the exterior through the L3 neck" + (
            "; the forbidden region is reduced to two pieces around L4 and L5" if plane == "xy" else ""))
    closed = [n for n, v in o.items() if not v]
    tail = f" ({', '.join(closed)} closed)" if closed else ""
    return "; ".join(parts) + tail


# ---- grids ------------------------------------------------------------------------------------

def two_omega(system, u, v, plane: str = "xy"):
    """``2 Omega`` on arrays ``u, v`` of the plane ``"xy"`` (z = 0) or ``"xz"`` (y = 0).

    Vectorised numpy (Omega as in :mod:`cr3bp.systems`).

    Parameters
    ----------
    system : System
    u, v : array_like
        Coordinates in the plane (LU).
    plane : str

    Returns
    -------
    ndarray

    Raises
    ------
    None

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §1.6 and §4.3 (the Jacobi
       integral and the zero-velocity surfaces; from memory).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp import energy
    >>> em = system("earth-moon")
    >>> round(float(energy.two_omega(em, 0.836915, 0.0)), 4)
    3.1883
    """
    mu = system.mu
    u = np.asarray(u, dtype=float)
    v = np.asarray(v, dtype=float)
    with np.errstate(divide="ignore"):
        r1 = np.sqrt((u + mu) ** 2 + v * v)
        r2 = np.sqrt((u - 1.0 + mu) ** 2 + v * v)
        centrifugal = u * u + v * v if plane == "xy" else u * u
        return centrifugal + 2.0 * (1.0 - mu) / r1 + 2.0 * mu / r2


def _grad_two_omega(system, u, v, plane):
    mu = system.mu
    d1 = u + mu
    d2 = u - 1.0 + mu
    r1 = np.sqrt(d1 * d1 + v * v)
    r2 = np.sqrt(d2 * d2 + v * v)
    a = 2.0 * (1.0 - mu) / r1**3
    b = 2.0 * mu / r2**3
    gu = 2.0 * u - a * d1 - b * d2
    gv = (2.0 * v if plane == "xy" else 0.0) - (a + b) * v
    return gu, gv


def _check_plane(plane):
    if plane not in PLANES:
        raise InputError(f"plane {plane!r} is not allowed; allowed: {', '.join(PLANES)}")


def default_extent(system, view: str = "system") -> tuple[float, float, float, float]:
    """Default grid extent (umin, umax, vmin, vmax) in LU.

    The ``"system"`` view (all five points) or the ``"secondary"`` view (the smaller primary
    with L1 and L2).

    Parameters
    ----------
    system : System
    view : str

    Returns
    -------
    tuple of float

    Raises
    ------
    InputError
        Unknown view.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, ch. 2 (Hill's region, realms and necks).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp import energy
    >>> em = system("earth-moon")
    >>> energy.default_extent(em)
    (-1.5, 1.5, -1.5, 1.5)
    """
    if view == "system":
        h = SYSTEM_HALF_WIDTH
        return (-h, h, -h, h)
    if view == "secondary":
        g = max(collinear_gamma("L1", system.mu)[0], collinear_gamma("L2", system.mu)[0])
        h = SECONDARY_HALF_WIDTH * g
        x0 = 1.0 - system.mu
        return (x0 - h, x0 + h, -h, h)
    raise InputError(f"view {view!r} is not allowed; allowed: {', '.join(VIEWS)}")


def check_extent(extent):
    """Four finite numbers umin < umax, vmin < vmax, as floats.

    Parameters
    ----------
    extent : sequence of 4 numbers

    Returns
    -------
    tuple of float

    Raises
    ------
    InputError
        Not four finite numbers in order.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, ch. 2 (Hill's region, realms and necks).

    Examples
    --------
    >>> from cr3bp.energy import check_extent
    >>> check_extent([0, 1, 2, 1])
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: extent [0, 1, 2, 1] needs umin < umax and vmin < vmax
    """
    try:
        e = tuple(float(v) for v in extent)
    except (TypeError, ValueError):
        raise InputError(f"extent {extent!r} is not four numbers umin, umax, vmin, vmax") from None
    if len(e) != 4 or not all(math.isfinite(v) for v in e):
        raise InputError(f"extent {extent!r} must be four finite numbers umin, umax, vmin, vmax")
    if not (e[0] < e[1] and e[2] < e[3]):
        raise InputError(f"extent {extent!r} needs umin < umax and vmin < vmax")
    return e


def _refine(system, pts, c, plane, step_cap):
    """Project points onto 2 Omega = C by Newton steps along the gradient (capped in size)."""
    u, v = pts[:, 0].copy(), pts[:, 1].copy()
    for _ in range(REFINE_STEPS):
        f = two_omega(system, u, v, plane) - c
        gu, gv = _grad_two_omega(system, u, v, plane)
        g2 = gu * gu + gv * gv
        ok = g2 > 0
        s = np.where(ok, f / np.where(ok, g2, 1.0), 0.0)
        du, dv = -s * gu, -s * gv
        n = np.hypot(du, dv)
        shrink = np.where(n > step_cap, step_cap / np.maximum(n, 1e-300), 1.0)
        u += du * shrink
        v += dv * shrink
    return np.column_stack([u, v])


# ---- the Hill region ------------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class HillRegion:
    """The region a spacecraft of Jacobi constant C may reach, on a grid of one plane.

    Parameters
    ----------
    system : System
    jacobi : float
        The Jacobi constant C.
    plane : {"xy", "xz"}
        ``"xy"``: z = 0, grid over (x, y); ``"xz"``: y = 0, grid over (x, z).
    necks : dict
        ``{"L1": bool, "L2": bool, "L3": bool}``, True where the neck is open (C < C_Li).
    forbidden_region_vanishes : bool
        Plane "xy" and C <= C_L4 = C_L5: nothing is forbidden in the plane z = 0.
    realms : str
        Plain-English description of what is connected.
    levels : dict
        Jacobi constant at each Lagrange point, ``{"L1": C_L1, ...}``.
    extent : tuple
        (umin, umax, vmin, vmax), LU.
    u, v : 1-D arrays
        Grid coordinates, LU.
    field : 2-D array, shape (len(v), len(u))
        ``2 Omega - C`` (clipped to ``FIELD_CAP``); allowed where >= 0.
    curves : tuple of (N, 2) arrays
        Zero-velocity curves in (u, v), LU, each point refined onto ``2 Omega = C``.
    curve_residual : float
        Largest ``|2 Omega - C|`` over the curve points (0 when there are none).

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §1.6 and §4.3 (the Jacobi
       integral and the zero-velocity surfaces; from memory).
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, ch. 2 (Hill's region, realms and necks).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp import energy
    >>> em = system("earth-moon")
    >>> region = energy.hill_region(em, 3.18, resolution=101)
    >>> region.necks["L1"], region.curve_residual < 1e-9
    (True, True)
    """

    system: object
    jacobi: float
    plane: str
    necks: dict
    forbidden_region_vanishes: bool
    realms: str
    levels: dict
    extent: tuple
    u: np.ndarray
    v: np.ndarray
    field: np.ndarray
    curves: tuple
    curve_residual: float

    @property
    def allowed(self) -> np.ndarray:
        """Boolean grid, True where motion is allowed (2 Omega >= C)."""
        return self.field >= 0.0

    @property
    def allowed_fraction(self) -> float:
        return float(np.mean(self.allowed))

    def to_dict(self) -> dict:
        return {
            "system": self.system.name,
            "mu": self.system.mu,
            "jacobi": self.jacobi,
            "plane": self.plane,
            "necks_open": dict(self.necks),
            "forbidden_region_vanishes": self.forbidden_region_vanishes,
            "realms": self.realms,
            "levels": dict(self.levels),
            "jacobi_minus_level": {n: self.jacobi - c for n, c in self.levels.items()},
            "extent_lu": list(self.extent),
            "resolution": [len(self.u), len(self.v)],
            "allowed_fraction": self.allowed_fraction,
            "curve_count": len(self.curves),
            "curve_points": int(sum(len(c) for c in self.curves)),
            "curve_residual": self.curve_residual,
        }


def hill_region(system, jacobi_value, plane: str = "xy", extent=None, view: str = "system",
                resolution: int = DEFAULT_RESOLUTION) -> HillRegion:
    """Hill region and zero-velocity curves of Jacobi constant C in a plane.

    Evaluates ``2 Omega - C`` on a grid (numpy, vectorised), traces its zero level with
    contourpy's marching squares, and projects the traced points onto ``2 Omega = C`` by Newton
    steps.

    Parameters
    ----------
    system : System
    jacobi_value : float
        The Jacobi constant C (finite).
    plane : {"xy", "xz"}
    extent : 4 floats, optional
        (umin, umax, vmin, vmax) in LU; default from ``view``.
    view : {"system", "secondary"}
        Default extent: the whole system or the neighbourhood of the smaller primary.
    resolution : int
        Grid points per side (21 .. 4001).

    Returns
    -------
    HillRegion

    Raises
    ------
    InputError
        Non-finite C, unknown plane or view, a bad extent or resolution.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §1.6 and §4.3 (the Jacobi
       integral and the zero-velocity surfaces; from memory).
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, ch. 2 (Hill's region, realms and necks).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp import energy
    >>> em = system("earth-moon")
    >>> region = energy.hill_region(em, 3.0, resolution=101)
    >>> region.forbidden_region_vanishes, region.necks
    (False, {'L1': True, 'L2': True, 'L3': True})
    """
    import contourpy  # lazy: heavy library (contourpy)

    c = check_jacobi(jacobi_value)
    _check_plane(plane)
    e = check_extent(extent) if extent is not None else default_extent(system, view)
    resolution = validate.whole_number("resolution", resolution, 21, 4001)
    levels = jacobi_constants(system)
    u = np.linspace(e[0], e[1], int(resolution))
    v = np.linspace(e[2], e[3], int(resolution))
    uu, vv = np.meshgrid(u, v)
    f = two_omega(system, uu, vv, plane) - c
    f = np.where(np.isfinite(f), np.minimum(f, FIELD_CAP), FIELD_CAP)
    gen = contourpy.contour_generator(u, v, f, line_type=contourpy.LineType.Separate)
    spacing = max((e[1] - e[0]) / (resolution - 1), (e[3] - e[2]) / (resolution - 1))
    curves, worst = [], 0.0
    for line in gen.lines(0.0):
        if len(line) < 2:
            continue
        pts = _refine(system, np.asarray(line, dtype=float), c, plane, step_cap=spacing)
        res = np.abs(two_omega(system, pts[:, 0], pts[:, 1], plane) - c)
        worst = max(worst, float(np.max(res)))
        curves.append(pts)
    return HillRegion(system=system, jacobi=c, plane=plane, necks=necks(system, c, levels),
                      forbidden_region_vanishes=bool(plane == "xy" and c <= levels["L4"]),
                      realms=realms(system, c, levels, plane), levels=levels, extent=e, u=u, v=v,
                      field=f, curves=tuple(curves), curve_residual=worst)


@dataclass(frozen=True, eq=False)
class EnergyLevel:
    """An energy level of the CR3BP: which necks are open, the speed at each Lagrange point and,
    when traced, the Hill region and its zero-velocity curves (``librate zvc``; made by
    :func:`cr3bp.api.zvc`).

    Parameters
    ----------
    system : System
    jacobi : float
        The Jacobi constant C.
    level : dict
        How C was given: ``{"given": "jacobi"}`` or ``{"given": "above", "point", "dv", "dv_vu"
        (, "dv_mps")}``.
    plane : {"xy", "xz"}
    necks_open : dict
        ``{"L1": bool, "L2": bool, "L3": bool}``.
    forbidden_region_vanishes : bool
        Plane "xy" and C <= C_L4: nothing forbidden in z = 0.
    realms : str
        What is connected, in words.
    points : list of dict
        Per Lagrange point: name, jacobi (C_L), jacobi_minus_point, neck_open (None for L4, L5),
        speed_at_point_vu and speed_at_point_mps (None where forbidden or without units).
    region : HillRegion or None
        The grid and the curves, when traced.

    Examples
    --------
    >>> import cr3bp
    >>> lv = cr3bp.zvc("earth-moon", 3.17)
    >>> lv.necks_open
    {'L1': True, 'L2': True, 'L3': False}

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, ch. 2 (Hill's region, realms and necks).
    """

    system: object
    jacobi: float
    level: dict
    plane: str
    necks_open: dict
    forbidden_region_vanishes: bool
    realms: str
    points: list
    region: object = None

    def to_dict(self) -> dict:
        """The fields of ``librate zvc --format json`` (without the command's file names)."""
        return {"system": self.system.name, "mu": self.system.mu, "jacobi": self.jacobi, "level": self.level,
                "plane": self.plane, "necks_open": self.necks_open,
                "forbidden_region_vanishes": self.forbidden_region_vanishes, "realms": self.realms,
                "points": self.points, "region": self.region.to_dict() if self.region is not None else None}

    def __repr__(self):
        opened = ", ".join(n for n, v in self.necks_open.items() if v) or "none"
        return f"<EnergyLevel {self.system.name} C = {self.jacobi:.10f}: necks open {opened} (CR3BP)>"

    def _repr_html_(self):
        import html  # lazy: only for notebooks
        from .cautions import caution_short  # lazy: only for notebooks
        rows = [("system", self.system.name), ("Jacobi constant C", f"{self.jacobi:.10f}"),
                ("necks open", ", ".join(n for n, v in self.necks_open.items() if v) or "none"),
                ("realms", self.realms)]
        rows += [(f"speed at {p['name']} (CR3BP)", "-" if p["speed_at_point_vu"] is None else
                  f"{p['speed_at_point_vu']:.6g} LU/TU" + ("" if p["speed_at_point_mps"] is None
                                                           else f" = {p['speed_at_point_mps']:.6g} m/s"))
                 for p in self.points]
        body = "".join(f"<tr><th style='text-align:left'>{html.escape(k)}</th>"
                       f"<td style='text-align:left'>{html.escape(str(v))}</td></tr>" for k, v in rows)
        return (f"<table><caption style='text-align:left'><b>EnergyLevel</b></caption>{body}"
                f"<tr><td colspan='2' style='text-align:left;font-size:smaller'>{html.escape(caution_short())}"
                "</td></tr></table>")

    def plot(self, ax=None, km=False):
        """Draw the Hill region (traced now at 301 x 301 points when it was not) on ``ax`` and
        return the Axes.

        Parameters
        ----------
        ax : matplotlib.axes.Axes, optional
            A new figure when None.
        km : bool
            Axes in km (systems with units).

        Returns
        -------
        matplotlib.axes.Axes
        """
        from .plotting.energy import plot_hill_region  # lazy: heavy library (matplotlib)
        from .plotting.base import caption  # lazy: heavy library (matplotlib)
        region = self.region if self.region is not None else hill_region(self.system, self.jacobi, self.plane,
                                                                          resolution=301)
        ax = plot_hill_region(region, ax=ax, km=km and self.system.dimensional)
        if not any(t.get_gid() == "caption" for t in ax.figure.texts):
            caption(ax.figure, "")                  # the caution, once per figure
        return ax


def energy_table(system, jacobi_value) -> list[dict]:
    """For each Lagrange point: its C_L, C - C_L, whether C < C_L, and the speed there.

    The speed (LU/TU) of a spacecraft with Jacobi constant C at the point is
    ``sqrt(C_L - C)`` (None where forbidden).

    Parameters
    ----------
    system : System
    jacobi_value : float

    Returns
    -------
    list of dict

    Raises
    ------
    InputError
        A Jacobi constant that is not finite.

    References
    ----------
    .. [1] V. Szebehely, *Theory of Orbits*, Academic Press, 1967, §1.6 and §4.3 (the Jacobi
       integral and the zero-velocity surfaces; from memory).
    .. [2] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, ch. 2 (Hill's region, realms and necks).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp import energy
    >>> em = system("earth-moon")
    >>> [row["below_level"] for row in energy.energy_table(em, 3.1)]
    [True, True, False, False, False]
    """
    c = check_jacobi(jacobi_value)
    rows = []
    for n, cl in jacobi_constants(system).items():
        d = cl - c
        rows.append({"name": n, "jacobi": cl, "jacobi_minus_level": c - cl, "below_level": bool(c < cl),
                     "speed_vu": math.sqrt(d) if d >= 0 else None})
    return rows


# ---- realms: where a position lies relative to the necks --------------------------------

def realm(system, position) -> str:
    """Which realm a position lies in.

    ``"larger"`` (the larger primary's side of the L1 neck), ``"smaller"`` (between L1 and
    L2), or ``"exterior"`` (beyond L2, or farther from the barycentre than L3). A coarse split
    by the collinear points' x (common practice).

    Parameters
    ----------
    system : System
    position : array_like, shape (3,) or (6,)
        Rotating-frame position (nondimensional); only x and y are read.

    Returns
    -------
    str
        ``"larger"``, ``"smaller"`` or ``"exterior"``.

    Raises
    ------
    IndexError
        ``position`` has fewer than two components.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.2 (realms and necks of the Hill region).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> em = system("earth-moon")
    >>> realm(em, [0.0, 0.0, 0.0]), realm(em, [1 - em.mu, 0.0, 0.0]), realm(em, [1.3, 0.0, 0.0])
    ('larger', 'smaller', 'exterior')
    """
    x = float(position[0])
    r = float(np.linalg.norm(position[:2]))
    x1, x2 = lagrange_point(system, "L1").position[0], lagrange_point(system, "L2").position[0]
    x3 = abs(lagrange_point(system, "L3").position[0])
    if r > x3 and x < x1:
        return "exterior"
    if x < x1:
        return "larger"
    return "smaller" if x <= x2 else "exterior"


def necks_between(a: str, b: str) -> tuple:
    """The neck(s) a trajectory passes between two realms (:func:`realm`).

    L1 between the larger primary's realm and the smaller's, L2 between the smaller's and the
    exterior, L3 between the larger's and the exterior.

    Parameters
    ----------
    a, b : str
        Realm names as :func:`realm` returns them.

    Returns
    -------
    tuple of str
        The neck's point name, or ``()`` for the same realm.

    Raises
    ------
    None

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.2 (realms and necks of the Hill region).

    Examples
    --------
    >>> necks_between("larger", "smaller"), necks_between("exterior", "smaller"), necks_between("larger", "larger")
    (('L1',), ('L2',), ())
    """
    pair = {a, b}
    if pair == {"larger", "smaller"}:
        return ("L1",)
    if pair == {"smaller", "exterior"}:
        return ("L2",)
    if pair == {"larger", "exterior"}:
        return ("L3",)
    return ()


#: Realms an orbit about a collinear point touches (it sits in that point's neck).
NECK_REALMS = {"L1": {"larger", "smaller"}, "L2": {"smaller", "exterior"}, "L3": {"larger", "exterior"}}


def realms_of(system, position, point: str = "") -> set:
    """The realm(s) a node is in: an orbit about L1..L3 touches the two realms its neck joins.

    Parameters
    ----------
    system : System
    position : array_like
        Rotating-frame position (nondimensional), used when ``point`` names no neck.
    point : str, optional
        The collinear point the node's orbit is about (``"L1"``, ``"L2"``, ``"L3"``), if any.

    Returns
    -------
    set of str

    Raises
    ------
    IndexError
        ``position`` has fewer than two components.

    References
    ----------
    .. [1] W. S. Koon, M. W. Lo, J. E. Marsden and S. D. Ross, *Dynamical Systems, the Three-Body
       Problem and Space Mission Design*, 2011, §3.2 (realms and necks of the Hill region).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> sorted(realms_of(system("earth-moon"), [0.0, 0.0, 0.0], "L2"))
    ['exterior', 'smaller']
    """
    return set(NECK_REALMS[point]) if point in NECK_REALMS else {realm(system, position)}


__all__ = ["jacobi", "check_jacobi", "jacobi_above", "speed_at_point", "necks", "realms",
           "two_omega", "hill_region", "HillRegion", "energy_table", "default_extent", "NAMES",
           "realm", "realms_of", "necks_between", "NECK_REALMS"]
