"""Mission constraints checked on a periodic orbit, each with its margin.

Every check samples the orbit over one period (dense output of the propagator) and returns a
:class:`CheckResult`: what was required, what the orbit achieves, the margin (positive when
met) and pass/fail. Geometry (common practice for libration-point mission design):

* altitude over a primary: distance to its centre minus its mean radius;
* angles seen from the Earth: the Sun-Earth-spacecraft angle (kept above a few degrees so a
  ground antenna pointed at the spacecraft does not look into the Sun) and the
  Moon-Earth-spacecraft angle (so the Moon's disc does not sit in the beam of a lunar relay's
  ground link). The vertex is the Earth in every system: in Sun-Earth the Earth is the smaller
  primary (the model's Earth-Moon barycentre; the Earth's own offset from it, up to 4 700 km,
  moves the angle by at most about 0.2 degrees at the L1/L2 distance) and the Sun direction is
  the rotating -x axis; in Earth-Moon the Earth is the larger primary and the Moon direction is
  the rotating +x axis. Every other direction (the Moon in Sun-Earth, the Sun in Earth-Moon,
  both in Sun-Mars and Sun-Jupiter) comes from :mod:`cr3bp.time.ephemeris` at the epochs
  ``epoch + t`` over the period sampled from the scenario epoch, turned into the rotating axes
  by the ephemeris-anchored frame of :mod:`cr3bp.time.frames`;
* line of sight to the larger primary: the segment from the spacecraft to the larger
  primary's centre never passes within the smaller primary's radius (no occultation).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import units
from ..constants import SECONDS_PER_DAY
from ..errors import InputError
from .schema import RENAMED_CHECKS   # withdrawn check keys and their message
from ..integrate import propagate
from ..operations import phasing, placement
from ..time import frames, ephemeris
from ..time.frames import epoch_from_text
from .outputs import save_figures

SAMPLES_PER_PERIOD = 4000


@dataclass(frozen=True)
class CheckResult:
    """One constraint check of a scenario orbit.

    Parameters
    ----------
    name : str
        The check's key.
    description : str
        What it checks.
    required, actual, margin : float
        The limit, the value, and how far inside the limit it is (negative: outside).
    unit : str
        Their unit.
    passed : bool
        Whether it holds.

    Examples
    --------
    >>> CheckResult("max_period", "period", 7.0, 6.5, 0.5, "d", True).to_dict()["margin"]
    0.5

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    name: str
    description: str
    required: float
    actual: float
    margin: float
    unit: str
    passed: bool

    def to_dict(self) -> dict:
        return {"name": self.name, "description": self.description, "required": self.required,
                "actual": self.actual, "margin": self.margin, "unit": self.unit, "passed": self.passed}


def sample(orbit, n: int = SAMPLES_PER_PERIOD) -> np.ndarray:
    """States (n, 6) evenly in time over one period.

    Parameters
    ----------
    orbit : PeriodicOrbit
        The orbit.
    n : int, optional
        Samples.

    Returns
    -------
    numpy.ndarray, shape (n, 6)
        Rotating states.

    Raises
    ------
    NoSolutionError
        The propagation stops early.

    Examples
    --------
    >>> states = sample(nrho, 100)                  # doctest: +SKIP

    References
    ----------
    Hairer, E., Nørsett, S. P. & Wanner, G., "Solving Ordinary Differential Equations I",
    2nd ed., Springer (1993), sec. II.6.
    """
    t = np.linspace(0.0, orbit.period, n)
    return propagate(orbit.system, orbit.state, orbit.period, t_eval=t).states


def altitude_km(system, states, which: int) -> np.ndarray:
    """Altitude over primary ``which`` (0 larger, 1 smaller), km.

    Parameters
    ----------
    system : System
        Dimensional, with named primaries (their radii).
    states : array_like, shape (N, 6)
        Rotating states.
    which : {0, 1}
        The primary.

    Returns
    -------
    numpy.ndarray, shape (N,)
        km above the mean radius.

    Raises
    ------
    InputError
        A system without units or radii.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> em = system("earth-moon")
    >>> float(altitude_km(em, np.array([[1 - em.mu + 2000.0 / em.length_km, 0, 0, 0, 0, 0]]), 1)[0]).__round__(1)
    262.6

    References
    ----------
    Szebehely, V., "Theory of Orbits", Academic Press (1967) (the CR3BP and its units).
    """
    system.require_dimensional("an altitude")
    x = system.positions[which]
    body = (system.primary, system.secondary)[which]
    d = np.sqrt((states[:, 0] - x) ** 2 + states[:, 1] ** 2 + states[:, 2] ** 2)
    return d * system.length_km - body.radius_km


#: The checks measured at the Earth and the body whose direction each compares with the
#: spacecraft's.
ANGLE_CHECKS = {"min_angle_at_earth_from_sun_deg": "sun", "min_angle_at_earth_from_moon_deg": "moon"}


def _angle_deg(a, b) -> np.ndarray:
    """Angle between the rows of ``a`` and ``b`` (atan2 of |a x b| and a.b: exact near 0 and 180)."""
    c = np.linalg.norm(np.cross(a, b), axis=1)
    d = np.einsum("ij,ij->i", a, b)
    return np.degrees(np.arctan2(c, d))


def _names(system):
    p = system.primary.name if system.primary is not None else ""
    s = system.secondary.name if system.secondary is not None else ""
    return p, s


def _frame(system, epoch):
    return frames.frame(system, epoch, anchor="ephemeris", axes="j2000-equator", center="primary")


def angle_at_earth_deg(system, t_tu, states, epoch, body: str) -> np.ndarray:
    """Angle at the Earth between the directions to the spacecraft and to ``body`` ("sun" or
    "moon"), degrees, at rotating times ``t_tu`` (TU from ``epoch``) of the rotating ``states``.

    ``epoch``: ISO 8601 text (``Z`` = UTC) or TDB seconds since J2000, the date of rotating
    time 0. Geometry and sources of each direction: see the module docstring.

    Raises
    ------
    InputError
        The system has no ephemeris for its pair (only Earth-Moon, Sun-Earth, Sun-Mars and
        Sun-Jupiter have), or the epochs fall outside the ephemeris.

    Parameters
    ----------
    system : System
        A system with an ephemeris pair.
    t_tu : array_like, shape (N,)
        Rotating times, TU from ``epoch``.
    states : array_like, shape (N, 6)
        Rotating states.
    epoch : str or float
        The date of rotating time 0.
    body : {"sun", "moon"}
        The other direction.

    Returns
    -------
    numpy.ndarray, shape (N,)
        Degrees.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> em = system("earth-moon")
    >>> a = angle_at_earth_deg(em, np.zeros(1), np.array([[0.5, 0.1, 0, 0, 0, 0]]), 0.0, "moon")
    >>> bool(0.0 <= a[0] <= 180.0)
    True

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009).
    """
    if body not in ("sun", "moon"):
        raise InputError(f"angle at the Earth from '{body}': allowed sun, moon")
    problem = angle_check_problem(system, body)
    if problem:
        raise InputError(problem)
    t = np.asarray(t_tu, dtype=float)
    s = np.atleast_2d(np.asarray(states, dtype=float))
    p, q = _names(system)
    spec = _frame(system, epoch)
    tdb = spec.epoch_tdb_s + t * system.time_s
    if (p, q) in (("earth", "moon"), ("sun", "earth-moon")):
        earth_x = system.positions[0 if p == "earth" else 1]
        sc = s[:, :3] - np.array([earth_x, 0.0, 0.0])
        on_axis = {("earth", "moon"): "moon", ("sun", "earth-moon"): "sun"}[(p, q)]
        if body == on_axis:
            d = np.zeros_like(sc)
            d[:, 0] = 1.0 if body == "moon" else -1.0
        else:
            c, _, _, _ = frames.basis(spec, tdb)            # columns: rotating axes in EME2000
            eq = np.asarray(ephemeris.position(body, frames._epoch(tdb), "earth", "j2000-equator"))
            d = np.einsum("nji,nj->ni", c, eq.reshape(-1, 3))
        return _angle_deg(sc, d)
    # Sun-Mars, Sun-Jupiter: the spacecraft about the Sun from the anchored frame, the Earth
    # and the body from the ephemeris
    _, out = frames.to_frame(spec, t, s)
    ep = frames._epoch(tdb)
    earth = np.asarray(ephemeris.position("earth", ep, "sun", "j2000-equator")).reshape(-1, 3)
    sc = out[:, :3] - earth
    d = np.asarray(ephemeris.position(body, ep, "earth", "j2000-equator")).reshape(-1, 3)
    return _angle_deg(sc, d)


def angle_check_problem(system, body: str = "sun") -> str:
    """Why an angle at the Earth cannot be measured in ``system`` ("" when it can).

    Parameters
    ----------
    system : System
        The system.
    body : {"sun", "moon"}
        The other direction.

    Returns
    -------
    str
        The reason, or "".

    Raises
    ------
    AttributeError
        Not a system.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> angle_check_problem(system("earth-moon"), "sun")
    ''

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    p, q = _names(system)
    if (p, q) in (("earth", "moon"), ("sun", "earth-moon"), ("sun", "mars-system"), ("sun", "jupiter-system")):
        return ""
    return (f"an angle at the Earth from the {body.capitalize()} needs the spacecraft's place relative "
            f"to the Earth, which librate knows in earth-moon, sun-earth, sun-mars and sun-jupiter "
            f"only (system '{system.name}' has no ephemeris for its primaries)")


def plan_problems(system, checks: dict, epoch) -> list[tuple[str, str]]:
    """Problems of a scenario's ``checks`` table found before anything is computed.

    Withdrawn keys, angle checks in systems without the geometry, and an epoch outside the
    ephemeris.

    Parameters
    ----------
    system : System
        The scenario's system.
    checks : dict
        The ``checks`` table.
    epoch : str or float
        The scenario's epoch.

    Returns
    -------
    list of (str, str)
        ``(key, message)`` pairs.

    Raises
    ------
    TypeError
        A ``checks`` that is not a table.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> plan_problems(system("earth-moon"), {"max_period": "7d"}, 0.0)
    []

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    out = []
    for key in checks:
        if key in RENAMED_CHECKS:
            out.append((key, RENAMED_CHECKS[key]))
        elif key in ECLIPSE_CHECKS:
            why = eclipse_check_problem(system, checks[key])
            if why:
                out.append((key, why))
        elif key in ANGLE_CHECKS:
            why = angle_check_problem(system, ANGLE_CHECKS[key])
            try:
                epoch_from_text(epoch) if isinstance(epoch, str) else float(epoch)
            except (InputError, TypeError, ValueError):
                continue            # the epoch itself is reported where it is read
            if not why:
                try:
                    angle_at_earth_deg(system, np.zeros(1), np.array([[0.5, 0.1, 0.0, 0, 0, 0]]),
                                       epoch, ANGLE_CHECKS[key])
                except InputError as e:
                    why = str(e)
            if why:
                out.append((key, why))
    return out


def occultation_clearance_km(system, states) -> np.ndarray:
    """Distance by which the spacecraft-to-larger-primary line clears the smaller primary.

    Parameters
    ----------
    system : System
        Dimensional, with named primaries.
    states : array_like, shape (N, 6)
        Rotating states.

    Returns
    -------
    numpy.ndarray, shape (N,)
        km (negative: the line of sight is blocked).

    Raises
    ------
    InputError
        A system without units or radii.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> em = system("earth-moon")
    >>> float(occultation_clearance_km(em, np.array([[1.2, 0, 0, 0, 0, 0]]))[0]) < 0   # behind the Moon
    True

    References
    ----------
    Vallado, D. A., "Fundamentals of Astrodynamics and Applications", 4th ed. (2013), sec. 5.3
    (line of sight between two points past a sphere).
    """
    system.require_dimensional("a line-of-sight clearance")
    p1 = np.array([system.positions[0], 0.0, 0.0])
    p2 = np.array([system.positions[1], 0.0, 0.0])
    s = states[:, :3]
    d = p1 - s                                  # segment s -> p1
    w = p2 - s
    u = np.clip(np.einsum("ij,ij->i", w, d) / np.einsum("ij,ij->i", d, d), 0.0, 1.0)
    closest = s + u[:, None] * d
    dist = np.linalg.norm(closest - p2, axis=1)
    return dist * system.length_km - system.secondary.radius_km


def _result(name, description, required, actual, unit, at_least: bool) -> CheckResult:
    margin = actual - required if at_least else required - actual
    return CheckResult(name, description, float(required), float(actual), float(margin), unit,
                       bool(margin >= 0.0))


def run_checks(orbit, checks: dict, states=None, epoch=None, phase_deg: float = 0.0) -> list[CheckResult]:
    """Evaluate the scenario's ``checks`` table on ``orbit``.

    Keys: ``min_altitude_smaller``, ``min_altitude_larger`` (lengths), ``max_stability_index``,
    ``min_angle_at_earth_from_sun_deg``, ``min_angle_at_earth_from_moon_deg`` (need ``epoch``,
    the date of rotating time 0: ISO 8601 text or TDB seconds since J2000),
    ``line_of_sight_to_larger`` (bool), ``max_period``, ``max_eclipse_duration`` and
    ``max_eclipse_per_year`` (times; the orbit started at ``phase_deg`` at ``epoch``, a year of
    Earth and Moon shadows, :func:`eclipse_history`). ``states`` are samples evenly in time
    over one period from t = 0 (as :func:`sample` gives).

    Parameters
    ----------
    orbit : PeriodicOrbit
        The orbit.
    checks : dict
        The scenario's ``checks`` table.
    states : numpy.ndarray, optional
        :func:`sample` of the orbit.
    epoch : str or float, optional
        The date of rotating time 0.
    phase_deg : float, optional
        The orbit's phase at the epoch.

    Returns
    -------
    list of CheckResult
        One per key.

    Raises
    ------
    InputError
        A value that cannot be read, or a check the system cannot make.

    Examples
    --------
    >>> results = run_checks(nrho, {"max_period": "7d"})      # doctest: +SKIP

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2 (conical shadow model).
    """
    system = orbit.system
    if states is None and checks:
        states = sample(orbit)
    out = []
    names = system.names
    for key, value in checks.items():
        if key in ("min_altitude_smaller", "min_altitude_larger"):
            which = 1 if key.endswith("smaller") else 0
            req = units.parse(value, "length").si()
            act = float(altitude_km(system, states, which).min())
            out.append(_result(key, f"least altitude over {names[which]}", req, act, "km", True))
        elif key == "max_stability_index":
            act = float(np.max(np.abs(np.real(orbit.stability_indices))))
            out.append(_result(key, "largest |stability index|", float(value), act, "", False))
        elif key in ANGLE_CHECKS:
            body = ANGLE_CHECKS[key]
            if epoch is None:
                raise InputError(f"check '{key}' needs the epoch of rotating time 0")
            t = np.linspace(0.0, orbit.period, len(states))
            act = float(angle_at_earth_deg(system, t, states, epoch, body).min())
            out.append(_result(key, f"least {body.capitalize()}-Earth-spacecraft angle (vertex at the "
                                    "Earth) over one period from the epoch", float(value), act, "deg", True))
        elif key in RENAMED_CHECKS:
            raise InputError(f"check '{key}': {RENAMED_CHECKS[key]}")
        elif key == "line_of_sight_to_larger":
            if not value:
                continue
            act = float(occultation_clearance_km(system, states).min())
            out.append(_result(key, f"line of sight to {names[0]} clears {names[1]} by", 0.0, act, "km", True))
        elif key == "max_period":
            req = units.parse(value, "time").si() / SECONDS_PER_DAY
            out.append(_result(key, "period", req, float(orbit.period_days), "d", False))
        elif key in ECLIPSE_CHECKS:
            out.append(eclipse_check(orbit, key, value, epoch, phase_deg))
        else:
            raise InputError(f"unknown check '{key}'")
    return out


# ---- eclipse checks (a year of shadows of the orbit placed at the epoch and phase) ----------

#: Eclipse check keys: what each measures (minutes).
ECLIPSE_CHECKS = {"max_eclipse_duration": "longest shadow pass (Earth or Moon, penumbra included)",
                  "max_eclipse_per_year": "shadow time per year (Earth and Moon, penumbra included)"}
#: Systems whose orbits are placed about the Earth for the shadows (cr3bp.operations.placement).
ECLIPSE_SYSTEMS = ("earth-moon", "sun-earth")
#: The span and search step of the eclipse checks.
ECLIPSE_SPAN_DAYS = 365.25
ECLIPSE_STEP_S = 300.0
_HISTORIES: dict = {}


def eclipse_check_problem(system, value) -> str:
    """Why an eclipse check cannot be made ("" when it can): the system, or the value.

    Parameters
    ----------
    system : System
        The system.
    value : str
        The check's limit (a time).

    Returns
    -------
    str
        The reason, or "".

    Raises
    ------
    AttributeError
        Not a system.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> eclipse_check_problem(system("earth-moon"), "30min")
    ''

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2 (conical shadow model).
    """
    if system.name not in ECLIPSE_SYSTEMS:
        return (f"eclipse checks are computed for {' and '.join(ECLIPSE_SYSTEMS)} only (the Earth and the "
                f"Moon as occulting bodies), not '{system.name}'")
    try:
        q = units.parse(value, "time")
    except InputError as e:
        return str(e)
    if not q.value >= 0:
        return f"'{value}' is not allowed; a time that is zero or more is needed, e.g. '90min'"
    return ""


def eclipse_history(orbit, epoch, phase_deg: float = 0.0, torus_phase_deg=(0.0, 0.0)):
    """Shadow passes (:class:`cr3bp.operations.phasing.History`) of ``orbit`` placed at ``epoch``
    (ISO text or TDB s) and started at ``phase_deg``, over :data:`ECLIPSE_SPAN_DAYS`; computed
    once per orbit, epoch and phase in a run (the checks and the report's timeline share it).
    A torus is placed from ``torus_phase_deg`` (:func:`cr3bp.operations.placement.place_torus`,
    the trajectory ``librate shadow --torus --torus-phase`` follows).

    Parameters
    ----------
    orbit : PeriodicOrbit or Torus
        The orbit or torus.
    epoch : str or float
        The date of rotating time 0.
    phase_deg : float
        The orbit's phase at the epoch.
    torus_phase_deg : (float, float), optional
        A torus's phase ``(theta0, theta1)`` at the epoch, degrees.

    Returns
    -------
    History
        The passes.

    Raises
    ------
    InputError
        A system without an ephemeris pair, epochs outside the ephemeris.

    Examples
    --------
    >>> h = eclipse_history(nrho, "2031-03-01T00:00:00 TDB", 0.0)    # doctest: +SKIP

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2 (conical shadow model).
    """
    torus = getattr(orbit, "circle", None) is not None and hasattr(orbit, "stroboscopic_time")
    if torus:
        key = (orbit.system.name, "torus", np.asarray(orbit.circle, dtype=float).tobytes(),
               float(orbit.stroboscopic_time), str(epoch), float(phase_deg) % 360.0,
               tuple(float(p) for p in torus_phase_deg))
    else:
        key = (orbit.system.name, tuple(np.asarray(orbit.state, dtype=float)), float(orbit.period), str(epoch),
               float(phase_deg) % 360.0)
    if key not in _HISTORIES:
        pl = (placement.place_torus(orbit.system, orbit, epoch, ECLIPSE_SPAN_DAYS / orbit.system.time_days,
                                    torus_phase_deg) if torus else placement.place(orbit.system, orbit, epoch))
        sk = phasing.sky(pl, ECLIPSE_SPAN_DAYS * SECONDS_PER_DAY, ECLIPSE_STEP_S)
        if len(_HISTORIES) > 32:
            _HISTORIES.clear()
        _HISTORIES[key] = (pl.epoch_tdb_s, phasing.history(pl, sk, float(phase_deg) % 360.0))
    return _HISTORIES[key]


def eclipse_check(orbit, key: str, value, epoch, phase_deg: float = 0.0, torus_phase_deg=(0.0, 0.0)) -> CheckResult:
    """One eclipse check: the longest pass or the total per year (minutes) against ``value``.

    Parameters
    ----------
    orbit : PeriodicOrbit
        The orbit.
    key : {"max_eclipse_duration", "max_eclipse_per_year"}
        The check.
    value : str
        The limit (a time).
    epoch : str or float
        The date of rotating time 0.
    phase_deg : float
        The orbit's phase at the epoch.
    torus_phase_deg : (float, float), optional
        A torus's phase at the epoch, degrees (:func:`eclipse_history`).

    Returns
    -------
    CheckResult
        The check.

    Raises
    ------
    InputError
        An unreadable limit.

    Examples
    --------
    >>> c = eclipse_check(nrho, "max_eclipse_duration", "90min", "2031-03-01T00:00:00 TDB", 0.0)  # doctest: +SKIP

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2 (conical shadow model).
    """
    if epoch is None:
        raise InputError(f"check '{key}' needs the epoch of rotating time 0")
    why = eclipse_check_problem(orbit.system, value)
    if why:
        raise InputError(f"check '{key}': {why}")
    req = units.parse(value, "time").si() / 60.0
    _, h = eclipse_history(orbit, epoch, phase_deg, torus_phase_deg)
    act = h.longest_min() if key == "max_eclipse_duration" else h.total_min() * (365.25 * 86400.0 / h.span_s)
    at = (f"at phase {float(phase_deg) % 360:g} deg" if getattr(orbit, "circle", None) is None else
          "on the torus from phase ({:g}, {:g}) deg".format(*torus_phase_deg))
    return _result(key, f"{ECLIPSE_CHECKS[key]}, over a year from the epoch {at}", req, act, "min", False)


def eclipse_figures(plan, orbits, out, formats) -> dict:
    """The eclipse timeline of every orbit with an eclipse check (report figures ``eclipses-NAME``).

    Parameters
    ----------
    plan : Plan
        The checked scenario.
    orbits : dict
        Name -> PeriodicOrbit.
    out : Outputs
        Where the figures go.
    formats : sequence of str
        Image formats.

    Returns
    -------
    dict
        Figure name -> (path, caption).

    Raises
    ------
    OutputError
        A figure cannot be written.

    Examples
    --------
    >>> figs = eclipse_figures(plan, orbits, out, ("png",))     # doctest: +SKIP

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.4.2 (conical shadow model).
    """
    from ..plotting.eclipses import timeline_figure  # lazy: heavy library (matplotlib, via cr3bp.plotting.eclipses)
    figs = {}
    for name, entry in plan.data["orbits"].items():
        if not any(k in ECLIPSE_CHECKS for k in (entry.get("checks") or {})):
            continue
        phase = float(entry.get("phase_deg", 0.0))
        tphase = tuple(float(p) for p in (entry.get("torus_phase_deg") or (0.0, 0.0)))
        t0, h = eclipse_history(orbits[name], plan.epoch, phase, tphase)
        at = (f"phase {phase % 360:g} deg" if "torus" not in entry else
              "torus phase ({:g}, {:g}) deg".format(*tphase))
        fig = timeline_figure(h, t0, title=f"'{name}' from the epoch, {at}")
        figs[f"eclipses-{name}"] = save_figures(
            fig, out, f"eclipses-{name}", formats,
            f"{plan.name}: Earth and Moon shadow passes of '{name}' over a year from the epoch (CR3BP "
            f"{'torus trajectory' if 'torus' in entry else 'orbit'} placed at the epoch; conical shadows from DE421 positions, Montenbruck & Gill 2000, sec. 3.4.2).")
    return figs
