"""Torus requests in plain words, and tori targeted by two of their quantities.

Grammar (one request names one torus)::

    lissajous L2 ay=800000km az=500000km          # largest |y| and |z| over the torus
    lissajous L1 jacobi=3.0008 period=178d         # Jacobi constant and stroboscopic time
    lissajous L2 jacobi=3.0008 frequency-ratio=0.97
    quasi-halo around halo L2 south resonance=9:2 amplitude=2000km
    quasi-halo around halo L2 south resonance=9:2 jacobi=3.0466 period=6.56d
    quasi-halo around halo L1 north az=8000km frequency-ratio=0.3   # Jacobi constant: the orbit's

After ``around`` comes an orbit request (:mod:`cr3bp.orbits.request`); its first ``KEY=VALUE``
ends it, the words after it are the torus's targets. ``period`` is the stroboscopic time;
``frequency-ratio`` (alias ``rotation-number``) is ``omega_1 / omega_0 = rho / 2 pi``, the
turn of the invariance circle per stroboscopic time in revolutions; ``amplitude`` the RMS
distance of the invariance circle's points from its centre. A target pair
(``jacobi`` with ``period`` or ``frequency-ratio``) is reached by :func:`reach`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .. import validate
from ..errors import ConvergenceError, InputError, NoSolutionError, shown
from ..vocabulary import TORUS_FAMILIES, TORUS_TARGETS
from . import circle, seeds
from .family import continue_family
from .store import cached_torus
from .torus import SurfaceError, build, solve_adaptive, torus_around
from ..orbits.request import parse_request, solve_request
from ..orbits.targets import make_target
from .lissajous import lissajous
from .solver import amplitude

FAMILIES = TORUS_FAMILIES
ALIASES = {"quasihalo": "quasi-halo", "qh": "quasi-halo", "liss": "lissajous"}
KEYS = TORUS_TARGETS
KEY_ALIASES = {"rotation-number": "frequency-ratio", "ratio": "frequency-ratio"}
EXAMPLE = "quasi-halo around halo L2 south resonance=9:2 amplitude=2000km"
#: Continuation of the held pair from the start torus to the target: first, smallest step
#: (fraction of the way) and growth after an easy step.
FIRST_STEP, MIN_STEP, MAX_STEP = 0.25, 1e-3, 1.0
#: Size of the torus the continuation starts from (LU; smaller about unstable orbits, as in
#: :func:`cr3bp.tori.torus_around`).
START_AMPLITUDE = 3e-4
#: Most family members followed at the Jacobi constant towards a rotation or period target.
FAMILY_MEMBERS = 200


@dataclass(frozen=True)
class TorusSpec:
    """A parsed torus request: the family, the point (Lissajous) or the orbit (quasi-halo) and
    the targets as written.

    Parameters
    ----------
    family : str
        "lissajous" or "quasi-halo".
    point : str
        "L1" or "L2" for a Lissajous torus, else "".
    around : str
        The orbit request after ``around`` (quasi-halo), else "".
    targets : dict
        Target key -> value text (e.g. ``{"ay": "800000km"}``).

    Examples
    --------
    >>> from cr3bp.tori.request import TorusSpec
    >>> TorusSpec("lissajous", "L2", targets={"ay": "8000km", "az": "6000km"}).to_dict()
    {'family': 'lissajous', 'point': 'L2', 'around': '', 'targets': {'ay': '8000km', 'az': '6000km'}}

    References
    ----------
    Common practice (a plain-words request grammar of our own; module notes).
    """

    family: str
    point: str = ""
    around: str = ""
    targets: dict = field(default_factory=dict)

    def to_dict(self) -> dict:
        return {"family": self.family, "point": self.point, "around": self.around,
                "targets": dict(self.targets)}


def is_torus_request(text) -> bool:
    """True when ``text`` starts with a torus family's name (or an alias).

    Parameters
    ----------
    text : object
        A request; anything not a non-empty string is not a torus request.

    Returns
    -------
    bool

    Raises
    ------
    Nothing
        Every input gives True or False.

    Examples
    --------
    >>> from cr3bp.tori.request import is_torus_request
    >>> is_torus_request("qh around halo L2 south az=8000km amplitude=500km"), is_torus_request("halo L2")
    (True, False)
    >>> is_torus_request(None)
    False

    References
    ----------
    Common practice (a plain-words request grammar of our own; module notes).
    """
    if not isinstance(text, str) or not text.split():
        return False
    w = text.split()[0].lower()
    return ALIASES.get(w, w) in FAMILIES


def parse(text: str) -> TorusSpec:
    """Parse a torus request (module notes).

    Parameters
    ----------
    text : str
        The request, e.g. ``"lissajous L2 ay=800000km az=500000km"``.

    Returns
    -------
    TorusSpec

    Raises
    ------
    InputError
        Naming the bad word: unknown family or key, missing point or orbit, a target pair not
        allowed for the family.

    Examples
    --------
    >>> from cr3bp.tori.request import parse
    >>> parse("quasi-halo around halo L2 south resonance=9:2 amplitude=2000km").around
    'halo L2 south resonance=9:2'
    >>> parse("lissajous L2 ay=8000km").targets
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: a lissajous torus is targeted by one of: ay + az; jacobi + period; frequency-ratio + jacobi; got ay

    References
    ----------
    Common practice (a plain-words request grammar of our own; module notes).
    """
    if not isinstance(text, str) or not text.strip():
        raise InputError(f"empty torus request; expected e.g. '{EXAMPLE}'")
    if not text.isprintable():
        raise InputError(f"torus request '{shown(text)}' contains a control character; expected "
                         f"e.g. '{EXAMPLE}'")
    words = text.replace(",", " ").split()
    fam = ALIASES.get(words[0].lower(), words[0].lower())
    if fam not in FAMILIES:
        raise InputError(f"unknown torus family '{words[0]}'; allowed: {', '.join(FAMILIES)}")
    rest = words[1:]
    point, around = "", ""
    if fam == "quasi-halo":
        if not rest or rest[0].lower() != "around":
            raise InputError(f"a quasi-halo request names its orbit after 'around', e.g. "
                             f"'{EXAMPLE}'")
        k = 1
        while k < len(rest) and ("=" not in rest[k] or rest[k].lower().startswith("occurrence=")):
            k += 1
        if k >= len(rest):
            raise InputError(f"the orbit after 'around' in '{shown(text)}' has no target; e.g. "
                             f"'{EXAMPLE}'")
        around = " ".join(rest[1:k + 1])
        rest = rest[k + 1:]
    else:
        if not rest or rest[0].upper() not in ("L1", "L2"):
            raise InputError(f"a Lissajous request names its point (L1 or L2) after the family, "
                             f"e.g. 'lissajous L2 ay=800000km az=500000km'; got "
                             f"'{shown(rest[0]) if rest else '(nothing)'}'")
        point = rest[0].upper()
        rest = rest[1:]
    targets = {}
    for w in rest:
        if "=" not in w:
            raise InputError(f"'{shown(w)}' in the torus request is not KEY=VALUE; keys: "
                             f"{', '.join(KEYS)}")
        key, value = (p.strip() for p in w.split("=", 1))
        key = KEY_ALIASES.get(key.lower(), key.lower())
        if key not in KEYS:
            raise InputError(f"unknown torus target '{shown(key)}'; allowed: {', '.join(KEYS)}")
        if key in targets:
            raise InputError(f"torus target '{key}' is given twice")
        if not value:
            raise InputError(f"torus target '{key}' has no value")
        targets[key] = value
    _check_pairs(fam, targets)
    return TorusSpec(family=fam, point=point, around=around, targets=targets)


def _check_pairs(fam, targets):
    keys = set(targets)
    allowed = ([{"ay", "az"}, {"jacobi", "period"}, {"jacobi", "frequency-ratio"}]
               if fam == "lissajous" else
               [{"amplitude"}, {"jacobi", "period"}, {"jacobi", "frequency-ratio"},
                {"frequency-ratio"}])
    if keys not in allowed:
        said = ", ".join(sorted(keys)) or "none"
        ok = "; ".join(" + ".join(sorted(a)) for a in allowed)
        raise InputError(f"a {fam} torus is targeted by one of: {ok}; got {said}")


def checked(system, text) -> TorusSpec:
    """A torus request parsed and every value checked for ``system``, with no solving: the
    targets (:func:`values`) and, for a quasi-halo torus, that its orbit is a halo orbit with
    a valid target.

    Parameters
    ----------
    system : System
    text : str
        The torus request.

    Returns
    -------
    TorusSpec

    Raises
    ------
    InputError
        A bad request or value, or a quasi-halo torus about an orbit that is not a halo orbit.

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.tori.request import checked
    >>> checked(system("earth-moon"), "quasi-halo around halo L1 north az=10000km amplitude=300km").around
    'halo L1 north az=10000km'
    >>> checked(system("earth-moon"), "quasi-halo around lyapunov L1 ax=5000km amplitude=300km")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: a quasi-halo torus is about a halo orbit (or NRHO); 'lyapunov L1 ax=5000km' is a lyapunov orbit

    References
    ----------
    Common practice (every value checked before any work; module notes).
    """
    spec = parse(str(text))
    values(system, spec)
    if spec.around:
        ospec = parse_request(spec.around)
        if ospec.family != "halo":
            raise InputError(f"a quasi-halo torus is about a halo orbit (or NRHO); '{shown(spec.around)}' is a "
                             f"{ospec.family} orbit")
        make_target(system, ospec.key, ospec.value)
    return spec


def values(system, spec: TorusSpec) -> dict:
    """The targets as numbers (LU, TU, nondimensional; frequency-ratio as rotation in rad).

    Parameters
    ----------
    system : System
    spec : TorusSpec

    Returns
    -------
    dict
        Key -> value; ``frequency-ratio`` comes back as ``rotation`` (rad).

    Raises
    ------
    InputError
        A value that is not a number of the right kind, an amplitude above 0.2 LU, a
        frequency ratio outside (0, 1).

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.tori.request import parse, values
    >>> v = values(system("earth-moon"), parse("lissajous L2 jacobi=3.0008 frequency-ratio=0.25"))
    >>> v["jacobi"], round(v["rotation"], 6)
    (3.0008, 1.570796)

    References
    ----------
    Common practice (a plain-words request grammar of our own; module notes).
    """
    out = {}
    for key, text in spec.targets.items():
        if key in ("ay", "az", "amplitude"):
            v = validate.quantity(key, text, "length", system, sign="positive")
            if v > 0.2:
                raise InputError(f"{key} {text} is larger than 0.2 of the distance between the "
                                 "primaries; tori that large are not attempted")
        elif key == "period":
            v = validate.quantity(key, text, "time", system, sign="positive")
        elif key == "jacobi":
            v = _number(key, text)
        else:
            r = _number(key, text)
            if not 0.0 < r < 1.0:
                raise InputError(f"frequency-ratio {text} must be between 0 and 1 (revolutions "
                                 "of the invariance circle per stroboscopic time)")
            v = 2 * math.pi * r
            key = "rotation"
        out[key] = v
    return out


def _number(key, text):
    return validate.finite_number(key, text)


def solve(system, request, progress=None, catalog=None):
    """The torus a request names (text or :class:`TorusSpec`). Everything the request would
    refuse is found before any work. Raises InputError, NoSolutionError.

    With a ``catalog`` the torus is read from it when the same request was solved before
    (:mod:`cr3bp.tori.store`), else solved and stored.

    Parameters
    ----------
    system : System
    request : str or TorusSpec
    progress : callable(str), optional
        Receives one line per step.
    catalog : cr3bp.catalog.Catalog, optional

    Returns
    -------
    Torus

    Raises
    ------
    InputError
        A request it refuses (found before any work).
    NoSolutionError
        The torus cannot be reached.

    Examples
    --------
    >>> t = solve(em, "quasi-halo around halo L2 south resonance=9:2 amplitude=2000km")  # doctest: +SKIP
    >>> from cr3bp import system
    >>> from cr3bp.tori.request import solve
    >>> solve(system("earth-moon"), "lissajous L2 ay=900000km az=1000km")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: ay 900000km is larger than 0.2 of the distance between the primaries; tori that large are not attempted

    References
    ----------
    Olikara & Scheeres, AAS 12-361 (Adv. Astronaut. Sci. 145), 2012; Gómez & Mondelo, Physica D
    157, 2001.
    """
    spec = parse(request) if isinstance(request, str) else request
    want = values(system, spec)
    say = progress or (lambda m: None)
    if spec.family == "lissajous" and "ay" in want:
        return lissajous(system, spec.point, want["ay"], want["az"], progress=say,
                         catalog=catalog)
    key = {"kind": "request", "family": spec.family, "around": spec.around,
           "values": {k: float(v) for k, v in want.items()}}
    return cached_torus(catalog, system, spec.point, key,
                        lambda: _solve(system, spec, dict(want), say, catalog))


def _solve(system, spec, want, say, catalog):
    if spec.family == "lissajous" and "ay" in want:
        return lissajous(system, spec.point, want["ay"], want["az"], progress=say,
                         catalog=catalog)
    if spec.family == "quasi-halo":
        ospec = parse_request(spec.around)
        if ospec.family != "halo":
            raise InputError(f"a quasi-halo torus is about a halo orbit (or NRHO); "
                             f"'{shown(spec.around)}' is a {ospec.family} orbit")
        make_target(system, ospec.key, ospec.value)
        say(f"torus request: the {spec.around} orbit")
        orbit = solve_request(system, ospec, catalog=catalog)
        if "amplitude" in want:
            return torus_around(orbit, want["amplitude"], hold="jacobi")
        want.setdefault("jacobi", float(orbit.jacobi))
        start = torus_around(orbit, START_AMPLITUDE / max(1.0, _gain(orbit)), hold="jacobi")
    else:
        start = _lissajous_start(system, spec.point, want["jacobi"], say)
    return reach(start, want, progress=say)


def _gain(orbit):
    return float(np.abs(np.linalg.eigvals(orbit.monodromy)).max()) ** 0.5


def _lissajous_start(system, point, jacobi, say):
    """A small torus about the planar Lyapunov orbit at the Jacobi constant (the vertical orbit
    past the halo bifurcation), the edge of the Lissajous family."""
    for fam in ("lyapunov", "vertical"):
        say(f"torus request: the {fam} {point} orbit with Jacobi constant {jacobi:.10f}")
        try:
            o = solve_request(system, parse_request(f"{fam} {point} jacobi={jacobi!r}"))
        except (NoSolutionError, ConvergenceError) as e:
            raise NoSolutionError(f"no {fam} orbit at {point} with Jacobi constant {jacobi!r} to "
                                  f"start the Lissajous torus from ({e})") from None
        if seeds.centre_pairs(o.monodromy):
            return torus_around(o, START_AMPLITUDE / max(1.0, _gain(o)), hold="jacobi")
    raise NoSolutionError(f"neither the planar Lyapunov nor the vertical orbit at {point} with "
                          f"Jacobi constant {jacobi!r} has a centre eigenpair")


def reach(start, want: dict, progress=None):
    """The torus holding the two quantities ``want`` (two of ``jacobi``, ``period``,
    ``rotation``), by continuation of the held values from those of ``start``.

    Natural-parameter continuation (Allgower & Georg, "Introduction to Numerical Continuation
    Methods", SIAM 2003, §1-2) of the two held quantities of the torus Newton (Olikara &
    Scheeres, AAS 12-361, 2012; Baresi, Olikara & Scheeres 2018 hold the same quantities along
    families): ``q(s) = q_start + s (q_want - q_start)``, ``0 < s <= 1``, each step solved
    from the previous torus (the secant of the last two as predictor when the circles match),
    the step halved when Newton fails and grown after an easy step.

    Parameters
    ----------
    start : Torus
        A solved torus to start from.
    want : dict
        Two of ``jacobi``, ``period`` (TU), ``rotation`` (rad) -> target value.
    progress : callable(str), optional

    Returns
    -------
    Torus
        Holding ``want``.

    Raises
    ------
    InputError
        ``want`` is not two of the three quantities.
    NoSolutionError
        Naming how far it got (the torus family may not reach the target: the held pair has a
        fold, or the torus shrinks onto its orbit).

    Examples
    --------
    >>> t = reach(start, {"jacobi": 3.0466, "period": 6.56 / 4.34})     # doctest: +SKIP
    >>> from types import SimpleNamespace
    >>> from cr3bp.tori.request import reach
    >>> reach(SimpleNamespace(system=None), {"jacobi": 3.0})
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: two of jacobi, period, rotation are held; got jacobi

    References
    ----------
    Allgower & Georg, SIAM 2003, §1-2; Olikara & Scheeres 2012; Baresi, Olikara & Scheeres 2018.
    """
    say = progress or (lambda m: None)
    system = start.system
    if len(want) != 2 or not set(want) <= {"jacobi", "period", "rotation"}:
        raise InputError(f"two of jacobi, period, rotation are held; got {', '.join(want)}")
    keys = list(want)
    have = {"jacobi": start.jacobi, "period": start.stroboscopic_time, "rotation": start.rotation}
    other = [k for k in keys if k != "jacobi"]
    if "jacobi" in want and abs(start.jacobi - want["jacobi"]) < 1e-12 and other:
        # at the start's Jacobi constant: along the family (pseudo-arclength, Jacobi constant
        # held) until the other quantity passes its target, then both held from that member.
        # Near the orbit the rotation and stroboscopic time change only at second order in the
        # amplitude: they are poor continuation parameters there, the arclength is not.
        key = other[0]
        goal = want[key]
        val = (lambda m: m.rotation) if key == "rotation" else (lambda m: m.stroboscopic_time)
        sign = 1.0 if goal >= val(start) else -1.0
        say(f"torus: along the family at the Jacobi constant until the {key} passes its target")
        fam = continue_family(start, "jacobi", members=FAMILY_MEMBERS,
                              until=lambda m: sign * (val(m) - goal) >= 0,
                              progress=lambda i, m: say(f"torus: member {i}, {key} "
                                                        f"{val(m):.10f}"))
        if fam.stop != "until":
            raise NoSolutionError(f"the torus with {_said(want)} was not reached: the family at "
                                  f"the Jacobi constant did not pass it ({fam.stop}); "
                                  f"{key} {val(fam.members[0]):.10f} to "
                                  f"{val(fam.members[-1]):.10f}")
        start = fam.members[-1]
        have = {"jacobi": start.jacobi, "period": start.stroboscopic_time,
                "rotation": start.rotation}
    q0 = np.array([have[k] for k in keys])
    q1 = np.array([want[k] for k in keys])
    s, ds = 0.0, FIRST_STEP
    t, prev = start, None
    its = 0
    while s < 1.0:
        s1 = min(1.0, s + ds)
        holds = dict(zip(keys, q0 + s1 * (q1 - q0)))
        u, T, rho = t.circle, t.stroboscopic_time, t.rotation
        if prev is not None and prev[0].shape == u.shape and prev[3] < s:
            g = (s1 - s) / (s - prev[3])
            u, T, rho = u + g * (u - prev[0]), T + g * (T - prev[1]), rho + g * (rho - prev[2])
        try:
            u1, T1, rho1, info = solve_adaptive(system, u, T, rho, holds,
                                                reference=(t.circle, t.stroboscopic_time,
                                                           t.rotation))
            if solver_amplitude(u1) < 1e-9:
                raise ConvergenceError("the torus shrank onto its periodic orbit")
        except (ConvergenceError, SurfaceError) as e:
            ds /= 2
            if ds < MIN_STEP:
                raise NoSolutionError(f"the torus with {_said(want)} was not reached: the family "
                                      f"could not be followed past {100 * s:.1f}% of the way "
                                      f"from {_said(dict(zip(keys, q0)))} ({e})") from None
            continue
        its += info["iterations"]
        prev = (t.circle, t.stroboscopic_time, t.rotation, s)
        t = build(system, u1, T1, rho1, info["invariance_error"], info["invariance_tolerance"],
                  family=start.family, point=start.point, branch=start.branch,
                  around=start.around, holds=holds, iterations=start.iterations + its,
                  with_stability=s1 == 1.0)
        s = s1
        say(f"torus: {100 * s:.1f}% of the way to the target, amplitude {t.amplitude_lu:.4g} LU")
        if info["iterations"] <= 4:
            ds = min(2 * ds, MAX_STEP)
    return t


def solver_amplitude(u):
    """RMS distance of the circle's positions from their centre, LU
    (:func:`cr3bp.tori.solver.amplitude`).

    Parameters
    ----------
    u : ndarray (N, 6)

    Returns
    -------
    float

    Raises
    ------
    IndexError
        ``u`` is not two-dimensional.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp.tori.request import solver_amplitude
    >>> solver_amplitude(np.zeros((3, 6)))
    0.0

    References
    ----------
    Olikara & Scheeres, AAS 12-361, 2012 (the amplitude as a held quantity).
    """
    return amplitude(u)


def _said(d):
    names = {"jacobi": "Jacobi constant", "period": "stroboscopic time", "rotation": "rotation"}
    fmt = {"jacobi": lambda v: f"{v:.10f}", "period": lambda v: f"{v:.8f} TU",
           "rotation": lambda v: f"{v / (2 * math.pi):.8f} rev"}
    return ", ".join(f"{names[k]} {fmt[k](v)}" for k, v in d.items())


__all__ = ["TorusSpec", "parse", "solve", "reach", "is_torus_request", "circle"]
