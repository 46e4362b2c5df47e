"""The ephemeris force model at an epoch: bodies fitted by Chebyshev series, packed for the
compiled integrator, and propagation in it (state and state + STM).

Body positions are JPL DE421 (:mod:`cr3bp.time.ephemeris`), sampled once at the Chebyshev nodes of
one-day segments and refitted relative to the central body, so the compiled right-hand side
evaluates one short series per body and step: within 1 cm of DE421 over a year for every body
(rounding of positions up to 5e9 km; tests/test_fidelity.py asserts 5 cm).

Equations in :mod:`cr3bp.fidelity.forces` (Montenbruck & Gill, *Satellite Orbits*, 2000,
eq. 3.37, from memory). Units: the CR3BP system's length and time units (LU, TU), positions
relative to the central body on J2000 equator axes, model time ``t`` in TU from the epoch.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .. import systems
from ..constants import AU_KM, GM_KM3_S2_DE430, SECONDS_PER_DAY, SOLAR_PRESSURE_1AU
from ..errors import ConvergenceError, InputError
from ..validate import number_in
from ..time import ephemeris
from ..time.frames import _epoch
from ..integrate import dop853
from ..integrate.events import table
from ..integrate.modes import MODE_EPHEMERIS, MODE_EPHEMERIS_STM
from . import chebyshev
from .forces import HEADER, body_position, eom, eom_stm
from .segments import integrate_segments

#: Series layout: segment length (days) and degree. Checked against DE421 in
#: tests/test_fidelity.py (below 5 cm for every body over a year; measured 1 cm, rounding).
SEGMENT_DAYS = 1.0
DEGREE = 16

BODY_NAMES = ("sun", "earth", "moon", "mercury", "venus", "mars", "jupiter", "saturn",
              "uranus", "neptune")


def gm_km3_s2(name: str) -> float:
    """GM of a body: the project's table (:mod:`cr3bp.systems`), else DE430 (from memory).

    Parameters
    ----------
    name : str
        A body (``sun``, ``earth``, ``moon``, ``jupiter``, ...).

    Returns
    -------
    float
        km^3/s^2.

    Raises
    ------
    InputError
        A body with no GM on record.

    Examples
    --------
    >>> round(gm_km3_s2("earth"))
    398600

    References
    ----------
    Folkner, W. M., Williams, J. G., Boggs, D. H., Park, R. S. & Kuchynka, P., "The Planetary and
    Lunar Ephemerides DE430 and DE431", JPL IPN Progress Report 42-196 (2014), Table 8 (from
    memory).
    """
    try:
        return float(systems.body(name).gm_km3_s2)
    except Exception:
        if name in GM_KM3_S2_DE430:
            return GM_KM3_S2_DE430[name]
        raise InputError(f"no GM known for '{name}'") from None


def parse_bodies(text) -> tuple:
    """``"sun,earth,moon"`` -> ("sun", "earth", "moon"), checked.

    Parameters
    ----------
    text : str or sequence of str
        Body names, comma-separated or as a sequence.

    Returns
    -------
    tuple of str
        The names, lower case.

    Raises
    ------
    InputError
        An unknown or repeated body, or none.

    Examples
    --------
    >>> parse_bodies("Sun, earth,moon")
    ('sun', 'earth', 'moon')

    References
    ----------
    Folkner, W. M., Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421",
    JPL IPN Progress Report 42-178 (2009) (the bodies the ephemeris holds).
    """
    names = [w.strip().lower() for w in (text.split(",") if isinstance(text, str) else text)]
    names = [w for w in names if w]
    if not names:
        raise InputError("--bodies is empty; give e.g. sun,earth,moon")
    for w in names:
        if w not in BODY_NAMES:
            raise InputError(f"unknown body '{w}'; allowed: {', '.join(BODY_NAMES)}")
    if len(set(names)) != len(names):
        raise InputError(f"--bodies '{text}' names a body twice")
    return tuple(names)


@dataclass(frozen=True)
class Model:
    """A packed ephemeris model.

    Parameters
    ----------
    system : System           gives LU (km) and TU (s)
    epoch_tdb_s : float       model time 0, TDB seconds since J2000
    central : str             central body
    bodies : tuple            perturbing bodies (point masses)
    fitted : tuple            bodies in the series (perturbers, plus the Sun for SRP)
    srp : (area_to_mass_m2_kg, cr) or None
    t0, t1 : float            span of the series, TU from the epoch
    params : ndarray          parameter vector for the compiled kernels
    ephemeris : str           where the body positions come from (:func:`cr3bp.time.ephemeris.describe`)

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> m = build(system("earth-moon"), 0.0, 0.0, 10.0, "moon", ("sun", "earth"))   # doctest: +SKIP

    References
    ----------
    Montenbruck, O. & Gill, E., "Satellite Orbits: Models, Methods and Applications",
    Springer (2000), sec. 3.2-3.4 (point masses and solar radiation pressure, from memory).
    """

    system: object
    epoch_tdb_s: float
    central: str
    bodies: tuple
    fitted: tuple
    srp: tuple | None
    t0: float
    t1: float
    params: np.ndarray
    ephemeris: str = ""

    def to_dict(self) -> dict:
        return {"epoch_tdb_s": self.epoch_tdb_s, "central": self.central, "bodies": list(self.bodies),
                "srp": None if self.srp is None else {"area_to_mass_m2_kg": self.srp[0], "cr": self.srp[1]},
                "span_tu": [self.t0, self.t1], "ephemeris": self.ephemeris}

    def body_position_km(self, name: str, t_tu) -> np.ndarray:
        """Series position (km) of a fitted body at model times (for checks)."""
        j = self.fitted.index(name)
        t = np.atleast_1d(np.asarray(t_tu, dtype=float))
        out = np.empty((t.size, 3))
        for i in range(t.size):
            body_position(self.params, j, t[i], out[i])
        return out * self.system.length_km

    def acceleration(self, t, state) -> np.ndarray:
        """Time derivative of one nondimensional 6-state (numpy convenience)."""
        out = np.empty(6)
        eom(float(t), np.ascontiguousarray(state, dtype=float), self.params, out)
        return out

    def rhs_stm(self, t, y) -> np.ndarray:
        out = np.empty(42)
        eom_stm(float(t), np.ascontiguousarray(y, dtype=float), self.params, out)
        return out


def _epochs(epoch_tdb_s, seconds):
    return _epoch(epoch_tdb_s + np.asarray(seconds, dtype=float))


def build(system, epoch_tdb_s: float, t0_tu: float, t1_tu: float, central: str, bodies,
          srp=None, *, segment_days: float = SEGMENT_DAYS, degree: int = DEGREE,
          sample=None) -> Model:
    """Fit the bodies over ``[t0_tu, t1_tu]`` (TU from the epoch) and pack the model.

    Chebyshev interpolation on equal segments (Press et al., *Numerical Recipes*, 3rd ed., 2007,
    section 5.8) of :func:`cr3bp.time.ephemeris.position` relative to the central body.

    Parameters
    ----------
    system : System (dimensional)
    central : str             body at the origin
    bodies : sequence of str  perturbing point masses (the central body is dropped if named)
    srp : (area_to_mass_m2_kg, cr), optional
    sample : callable, optional
        ``sample(times_tu) -> (n_fitted, len(times), 3)`` positions in LU in place of the
        ephemeris (e.g. the idealised circular motion, for the consistency check).

    Raises
    ------
    InputError  unknown bodies, bad SRP figures, a span outside the ephemeris validity
                (:class:`~cr3bp.errors.EphemerisSpanError` outside DE421, 1899-07-29 .. 2053-10-09).

    Returns
    -------
    Model
        The packed model.

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> m = build(system("earth-moon"), 0.0, 0.0, 10.0, "moon", ("sun", "earth"))   # doctest: +SKIP

    References
    ----------
    Press, W. H. et al., "Numerical Recipes", 3rd ed. (2007), sec. 5.8; Folkner, W. M.,
    Williams, J. G. & Boggs, D. H., "The Planetary and Lunar Ephemeris DE 421", JPL IPN Progress
    Report 42-178 (2009).
    """
    system.require_dimensional("an ephemeris model")
    central = central.lower()
    if central not in BODY_NAMES:
        raise InputError(f"unknown central body '{central}'; allowed: {', '.join(BODY_NAMES)}")
    bodies = tuple(b for b in parse_bodies(bodies) if b != central)
    if srp is not None:
        am, cr = srp
        srp = (number_in("radiation pressure area-to-mass (m2/kg)", am, 0.0),
               number_in("radiation pressure coefficient Cr", cr, 0.0, 2.0))
        if central == "sun":
            raise InputError("radiation pressure about the Sun is not modelled (the Sun-line is the origin)")
    fitted = bodies + (("sun",) if srp is not None and "sun" not in bodies else ())
    lu, tu = system.length_km, system.time_s
    span = float(t1_tu) - float(t0_tu)
    if not (math.isfinite(span) and span > 0):
        raise InputError(f"model span [{t0_tu}, {t1_tu}] TU must be increasing")
    nseg = max(1, int(math.ceil(span * tu / SECONDS_PER_DAY / segment_days)))
    nb = len(fitted)
    source = ephemeris.LABELS[ephemeris.DEFAULT_MODEL] if nb and sample is None else (
        "positions supplied by the caller" if nb else "none (no bodies fitted)")
    if nb and sample is None:
        def sample(times_tu):
            ep = _epochs(epoch_tdb_s, np.asarray(times_tu) * tu)
            return np.stack([np.asarray(ephemeris.position(b, ep, central, "j2000-equator")) / lu
                             for b in fitted])
    if nb:
        f = chebyshev.fit(sample, float(t0_tu), float(t1_tu), nseg, degree, nb)
        coef = f.coef.ravel()
        h = f.h
    else:
        coef = np.zeros(0)
        h = span
    p = np.zeros(HEADER + nb + coef.size)
    p[1] = gm_km3_s2(central) * tu * tu / lu ** 3
    p[2] = nb
    p[3] = nseg
    p[4] = degree + 1
    p[5] = float(t0_tu)
    p[6] = h
    p[8] = fitted.index("sun") if "sun" in fitted else -1
    for j, b in enumerate(fitted):
        p[HEADER + j] = gm_km3_s2(b) * tu * tu / lu ** 3 if b in bodies else 0.0
    if srp is not None:
        # K = P Cr A/m au^2: N/m^2 * m^2/kg = m/s^2; /1000 -> km/s^2; * au^2 -> km^3/s^2
        k = SOLAR_PRESSURE_1AU * srp[1] * srp[0] / 1000.0 * AU_KM ** 2
        p[7] = k * tu * tu / lu ** 3
    p[HEADER + nb:] = coef
    return Model(system, float(epoch_tdb_s), central, bodies, fitted, srp, float(t0_tu),
                 float(t1_tu), np.ascontiguousarray(p), source)


def _check_span(model, t0, t1):
    lo, hi = min(t0, t1), max(t0, t1)
    eps = 1e-9 * max(1.0, abs(model.t1))
    if lo < model.t0 - eps or hi > model.t1 + eps:
        raise InputError(f"times [{lo:.6g}, {hi:.6g}] TU lie outside the model span "
                         f"[{model.t0:.6g}, {model.t1:.6g}] TU")


@dataclass(frozen=True)
class EphemerisArc:
    """One propagation in the ephemeris model (nondimensional, inertial, about the central body).

    ``t``/``states``: dense output at the requested ``t_eval`` (empty without it);
    ``events``: (t, state, event index) of each recorded event; ``status`` as the CR3BP
    propagator's ("time", "event", "impact", "escape").

    Parameters
    ----------
    t_end : float
        Where the propagation stopped, TU from the epoch.
    state_end : numpy.ndarray, shape (6,)
        The state there.
    stm : numpy.ndarray or None
        The state transition matrix (with ``stm=True``).
    t, states : numpy.ndarray
        Dense output.
    events : tuple
        ``(t, state, event index)`` of each recorded event.
    status : str
        ``"time"``, ``"event"``, ``"impact"`` or ``"escape"``.

    Examples
    --------
    >>> arc = propagate(model, x0, 0.0, 1.0)          # doctest: +SKIP
    >>> arc.status                                    # doctest: +SKIP
    'time'

    References
    ----------
    Hairer, E., Nørsett, S. P. & Wanner, G., "Solving Ordinary Differential Equations I",
    2nd ed., Springer (1993), sec. II.5 and II.6 (dense output).
    """

    t_end: float
    state_end: np.ndarray
    stm: np.ndarray | None
    t: np.ndarray
    states: np.ndarray
    events: tuple
    status: str

    def to_dict(self) -> dict:
        return {"t_end": self.t_end, "state_end": self.state_end.tolist(), "status": self.status,
                "stm": None if self.stm is None else self.stm.tolist(),
                "events": [{"t": t, "state": st.tolist(), "index": k} for t, st, k in self.events]}


def propagate(model: Model, state, t0: float, t1: float, *, stm=False, t_eval=None, events=(),
              rtol=1e-12, atol=1e-12, max_steps=dop853.DEFAULT_MAX_STEPS) -> EphemerisArc:
    """Propagate one nondimensional inertial state from ``t0`` to ``t1`` (TU from the epoch).

    Dormand-Prince 8(5,3) (Hairer, Norsett & Wanner, *Solving ODE I*, 1993, section II.5), the
    project's compiled integrator with its events: :func:`cr3bp.integrate.events.plane` on any
    state component, and ``impact(0, radius)`` / ``escape(radius, 0)`` about the central body
    (the model sits it at the origin).

    Parameters
    ----------
    model : Model
        From :func:`build`.
    state : array_like, shape (6,)
        Nondimensional inertial state about the central body.
    t0, t1 : float
        TU from the epoch, inside the model's span.
    stm : bool, optional
        Also the state transition matrix.
    t_eval : array_like, optional
        Dense output times.
    events : sequence of Event, optional
        Events to record or stop at.
    rtol, atol : float, optional
        Tolerances.
    max_steps : int, optional
        Step limit.

    Returns
    -------
    EphemerisArc
        The propagation.

    Raises
    ------
    InputError
        Times outside the model's span, a bad state or event.

    Examples
    --------
    >>> arc = propagate(model, x0, 0.0, 1.0, stm=True)   # doctest: +SKIP

    References
    ----------
    Hairer, E., Nørsett, S. P. & Wanner, G., "Solving Ordinary Differential Equations I",
    2nd ed., Springer (1993), sec. II.5; Montenbruck, O. & Gill, E., "Satellite Orbits",
    Springer (2000), eq. 3.37 (from memory).
    """
    _check_span(model, t0, t1)
    s0 = np.asarray(state, dtype=float).ravel()
    if s0.shape != (6,) or not np.all(np.isfinite(s0)):
        raise InputError("an ephemeris state must be 6 finite numbers")
    y0 = np.concatenate([s0, np.eye(6).ravel()]) if stm else s0.copy()
    te = np.empty(0) if t_eval is None else np.ascontiguousarray(t_eval, dtype=float)
    tab = np.ascontiguousarray(table(events), dtype=np.float64)
    (code, t_end, y_end, _ts, _ys, ev_t, ev_y, ev_k, _seen, eval_y, n_eval, _nfev, nsteps,
     _nrej) = dop853.integrate(MODE_EPHEMERIS_STM if stm else MODE_EPHEMERIS, model.params, y0, float(t0), float(t1),
                               float(rtol), float(atol), -1.0, math.inf, int(max_steps), tab, -1,
                               te, False)
    if int(code) < 0:
        raise ConvergenceError(f"ephemeris propagation failed ({dop853.STATUS_NAMES[int(code)]}) at "
                               f"t = {t_end:.9g} TU after {nsteps} steps", iterations=int(nsteps),
                               last=np.array(y_end[:6]))
    phi = y_end[6:].reshape(6, 6).copy() if stm else None
    hits = tuple((float(a), np.array(b), int(k)) for a, b, k in zip(ev_t, ev_y, ev_k))
    return EphemerisArc(float(t_end), y_end[:6].copy(), phi, te[:n_eval].copy(),
                        np.array(eval_y[:n_eval, :6]), hits, dop853.STATUS_NAMES[int(code)])


def propagate_many(model: Model, states, t0s, t1s, *, stm=False, rtol=1e-12, atol=1e-12,
                   max_steps=dop853.DEFAULT_MAX_STEPS):
    """Propagate segments (row k from ``t0s[k]`` to ``t1s[k]``) in parallel inside compiled code.

    (:func:`cr3bp.fidelity.segments.integrate_segments`.)

    Parameters
    ----------
    model : Model
        From :func:`build`.
    states : array_like, shape (M, 6)
        Nondimensional inertial states.
    t0s, t1s : array_like, shape (M,)
        Start and end of each segment, TU from the epoch.
    stm : bool, optional
        Also the state transition matrices.
    rtol, atol : float, optional
        Tolerances.
    max_steps : int, optional
        Step limit per segment.

    Returns
    -------
    ends : numpy.ndarray, shape (M, 6)
        End states.
    stms : numpy.ndarray, shape (M, 6, 6) or None
        State transition matrices (with ``stm``).

    Raises
    ------
    InputError
        Times outside the model's span.
    ConvergenceError
        A segment that stops early (impact, escape, step limit).

    Examples
    --------
    >>> ends, stms = propagate_many(model, x, t[:-1], t[1:], stm=True)   # doctest: +SKIP

    References
    ----------
    Hairer, E., Nørsett, S. P. & Wanner, G., "Solving Ordinary Differential Equations I",
    2nd ed., Springer (1993), sec. II.5.
    """
    s = np.ascontiguousarray(np.atleast_2d(states), dtype=float)
    m = s.shape[0]
    t0s = np.ascontiguousarray(t0s, dtype=float).ravel()
    t1s = np.ascontiguousarray(t1s, dtype=float).ravel()
    if t0s.size != m or t1s.size != m:
        raise InputError("one start and one end time per segment")
    _check_span(model, float(min(t0s.min(), t1s.min())), float(max(t0s.max(), t1s.max())))
    y0 = np.hstack([s, np.tile(np.eye(6).ravel(), (m, 1))]) if stm else s.copy()
    y0 = np.ascontiguousarray(y0)
    out_y = np.empty_like(y0)
    out_status = np.zeros(m, dtype=np.int64)
    out_t = np.empty(m)
    integrate_segments(MODE_EPHEMERIS_STM if stm else MODE_EPHEMERIS, model.params, y0, t0s, t1s, float(rtol),
                       float(atol), math.inf, int(max_steps), table(()), out_y, out_status, out_t)
    bad = out_status < 0
    if bad.any():
        k = int(np.argmax(bad))
        raise ConvergenceError(f"segment {k} of {m}: ephemeris propagation failed "
                               f"({dop853.STATUS_NAMES[int(out_status[k])]}) at t = {out_t[k]:.9g} TU",
                               iterations=0, last=out_y[k, :6].copy())
    return out_y[:, :6].copy(), (out_y[:, 6:].reshape(m, 6, 6).copy() if stm else None)
