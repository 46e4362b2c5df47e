"""Returns from an Earth–Moon periodic orbit or torus to a circular Earth parking orbit, designed as
the time-reverse of a departure.

Method
------
The CR3BP is reversible: if ``x(t)`` is a solution, so is ``R x(-t)`` with ``R = diag(1, -1, 1,
-1, 1, -1)`` (y -> -y and the time reversed; Szebehely, *Theory of Orbits*, 1967, §2.9; Roberts
& Quispel, "Chaos and time-reversal symmetry", *Physics Reports* 216, 1992). The mirror image
of the target (an orbit's initial state ``R s0``; a torus's invariance circle ``v(theta) =
R u(-theta)``, the same stroboscopic time and rotation) is again a periodic orbit or torus of
the model. The least-Δv departure from the parking orbit to the mirror image
(:func:`cr3bp.transfers.departure.design_departure`, :func:`cr3bp.tori.departure.
design_torus_departure`: direct or past the Moon) is designed, then mirrored and reversed: its
insertion burn becomes the departure from the target, its flyby the flyby, its tangential
departure burn the perigee burn that inserts into the parking orbit (``name`` "insertion").
Each burn's size is unchanged; the time of a burn is ``tof - t``; the state before a burn of the
return is ``R`` (the state after the departure's), and its Δv vector ``(dvx, -dvy, dvz)``.

Everything the departure design guarantees carries over: the perigee radius is the parking
radius, the perigee burn is tangential and lands on the circular speed there, the inclination
(to the Moon's orbit plane, the model's x-y plane) is the departure's (``R`` keeps the plane's
inclination), and the closure of every coast is checked by forward propagation of the return
itself (:func:`cr3bp.transfers.departure.closure_km`).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from ..errors import ConvergenceError
from ..io.plain import plain as _plain
from . import departure as dep
from .departure_common import perigee_summary, relative

#: The reversing symmetry of the CR3BP on a state ``[x, y, z, vx, vy, vz]`` (with t -> -t).
MIRROR = np.array([1.0, -1.0, 1.0, -1.0, 1.0, -1.0])


def mirror_target(target):
    """The mirror image ``R`` of a periodic orbit or torus under the CR3BP's time-reversal symmetry.

    Parameters
    ----------
    target : PeriodicOrbit or cr3bp.tori.Torus
        An orbit (``state``, ``period``, ``monodromy``) or a torus (``circle``).

    Returns
    -------
    Same type
        The orbit through ``R s0`` (monodromy ``R M^-1 R``), or the torus of circle ``R u(-theta)``
        (same stroboscopic time and rotation). Its phase ``p`` is the target's phase ``-p``
        (both torus angles negated).

    Raises
    ------
    TypeError
        Neither an orbit nor a torus.

    Examples
    --------
    >>> from cr3bp.tori.torus import example_torus
    >>> t = example_torus()
    >>> m = mirror_target(t)
    >>> bool(np.allclose(m.circle[1], MIRROR * t.circle[-1])), m.rotation == t.rotation
    (True, True)

    References
    ----------
    Szebehely, *Theory of Orbits*, 1967, §2.9 (the mirror theorem of the restricted problem).
    """
    if hasattr(target, "circle"):
        u = np.asarray(target.circle, dtype=float)
        idx = (-np.arange(u.shape[0])) % u.shape[0]
        around = dict(target.around or {})
        if around.get("state") is not None:     # the orbit it was grown from, mirrored with it
            around["state"] = (MIRROR * np.asarray(around["state"], dtype=float)).tolist()
        return dataclasses.replace(target, circle=np.ascontiguousarray(MIRROR * u[idx]), around=around)
    if hasattr(target, "state") and hasattr(target, "monodromy"):
        r = np.diag(MIRROR)
        mono = np.asarray(target.monodromy, dtype=float)
        return dataclasses.replace(target, state=MIRROR * np.asarray(target.state, dtype=float),
                                   monodromy=r @ np.linalg.inv(mono) @ r)
    raise TypeError(f"a periodic orbit or a torus, not {type(target).__name__}")


def _mirrored_maneuvers(d):
    """The departure ``d``'s burns mirrored and reversed (module notes)."""
    names = {"insertion": "departure", "departure": "insertion", "flyby": "flyby"}
    out = []
    for m in reversed(d.maneuvers):
        after = np.array(m["state_before"], dtype=float)
        after[3:] += m["dv_vector"]
        before = MIRROR * after
        dv = -MIRROR[3:] * np.asarray(m["dv_vector"], dtype=float)
        out.append({"name": names[m["name"]], "t": float(d.tof - m["t"]),
                    "position": MIRROR[:3] * np.asarray(m["position"], dtype=float),
                    "dv_vector": dv, "state_before": before})
    return tuple(out)


@dataclasses.dataclass(frozen=True)
class Return(dep.Departure):
    """A designed return from an Earth–Moon periodic orbit or torus to a circular Earth parking orbit
    (all values CR3BP; time from the departure burn off the orbit). Made by :func:`design_return`.

    The fields are those of :class:`cr3bp.transfers.departure.Departure` read the other way:
    ``orbit`` is the orbit or torus left, ``maneuvers`` are (departure, [flyby,] insertion), the
    last the tangential perigee burn onto the parking orbit; ``insertion_phase`` is the phase
    on the orbit where the return leaves it (``details["torus_phase_deg"]`` both angles for a
    torus); ``perigee`` the arrival perigee (before the burn: its Earth-relative speed).

    Parameters
    ----------
    system, orbit, path, altitude_km, maneuvers, tof, insertion_phase, perigee, flyby_altitude_km, optimised, details
        As :class:`cr3bp.transfers.departure.Departure` (above).

    Examples
    --------
    Skipped under doctest (the optimisation takes tens of seconds):

    >>> from cr3bp import orbit
    >>> halo = orbit("earth-moon", "halo L1 north az=10000km")  # doctest: +SKIP
    >>> ret = design_return(halo, 200.0)                          # doctest: +SKIP
    >>> [m["name"] for m in ret.maneuvers]                        # doctest: +SKIP
    ['departure', 'insertion']

    References
    ----------
    Szebehely, *Theory of Orbits*, 1967, §2.9 (time reversal); Vallado, *Fundamentals of
    Astrodynamics and Applications*, 4th ed., 2013, §6.3 (tangential burn at perigee).
    """

    @property
    def insertion_dv_mps(self) -> float:
        """The perigee burn onto the parking orbit (m/s, CR3BP)."""
        return float(self.system.mps(np.linalg.norm(self.maneuvers[-1]["dv_vector"])))

    @property
    def arrival_speed_kms(self) -> float:
        """Earth-relative inertial speed at perigee before the insertion burn (km/s, CR3BP)."""
        return float(self.system.mps(self.perigee["speed_inertial"]) / 1e3)

    @property
    def perigee_altitude_km(self) -> float:
        """Perigee altitude over the Earth's mean radius (km, CR3BP)."""
        return float(self.system.km(self.perigee["radius"]) - self.system.primary.radius_km)

    @property
    def final_state(self) -> np.ndarray:
        """Rotating-frame state on the parking orbit just after the insertion burn."""
        m = self.maneuvers[-1]
        s = np.array(m["state_before"], dtype=float)
        s[3:] += m["dv_vector"]
        return s

    def to_dict(self) -> dict:
        d = super().to_dict()
        d.pop("departure_speed_kms", None)
        d.update({"from": d["to"], "to": f"parking earth {self.altitude_km:g}km", "kind": "return",
                  "insertion_dv_mps": self.insertion_dv_mps, "arrival_speed_kms": self.arrival_speed_kms,
                  "perigee_altitude_km": self.perigee_altitude_km, "departure_phase": self.insertion_phase,
                  "start_state": [float(v) for v in self.maneuvers[0]["state_before"]], "final_state": self.final_state.tolist(),
                  "c3_note": "two-body energy about the Earth on arrival at perigee"})
        d.pop("insertion_phase", None)
        return d


def design_return(target, altitude_km: float = 200.0, *, path: str = "direct",
                  inclination_deg: float | None = None, min_flyby_altitude_km: float = 100.0,
                  max_tof_days: float | None = None, guesses: int | None = None) -> Return:
    """The least-Δv return found from ``target`` (an Earth–Moon periodic orbit or torus) to a circular
    Earth parking orbit: the time-reverse of the departure to its mirror image (module notes).

    Parameters
    ----------
    target : PeriodicOrbit or cr3bp.tori.Torus
        Of the Earth–Moon system.
    altitude_km : float
        Parking-orbit altitude (100 to 50 000 km).
    path : {"direct", "lunar-flyby"}
    inclination_deg : float, optional
        Inclination of the parking orbit to the Moon's orbit plane (free when None).
    min_flyby_altitude_km : float
        Least lunar flyby altitude (flyby path).
    max_tof_days : float, optional
        Longest time of flight (1 to 400 d; default as for the departure: ``MAX_TOF_DAYS``, or
        ``FLYBY_MAX_TOF_DAYS`` on the flyby path).
    guesses : int, optional
        First guesses optimised (the departure design's default).

    Returns
    -------
    Return

    Raises
    ------
    InputError
        Not the Earth–Moon system, or a value out of range (the departure design's messages).
    NoSolutionError
        No first guess met the constraints.
    ConvergenceError
        The return does not close when propagated forward, or its end is off the parking orbit.

    Examples
    --------
    Refused before any work:

    >>> from cr3bp.tori.torus import example_torus
    >>> design_return(example_torus(), 5.0)
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: parking altitude (km) '5.0' is outside the allowed range [100, 50000]

    References
    ----------
    Szebehely, *Theory of Orbits*, 1967, §2.9 (time reversal); the departure design's references
    (:func:`cr3bp.transfers.departure.design_departure`).
    """
    mirror = mirror_target(target)
    kw = dict(path=path, inclination_deg=inclination_deg, min_flyby_altitude_km=min_flyby_altitude_km,
              max_tof_days=max_tof_days, guesses=guesses)
    if hasattr(target, "circle"):
        from ..tori.departure import design_torus_departure   # lazy: import cycle (tori imports transfers)
        d = design_torus_departure(mirror, altitude_km, **kw)
    else:
        d = dep.design_departure(mirror, altitude_km, **kw)
    man = _mirrored_maneuvers(d)
    s = d.system
    details = dict(d.details)
    details["method"] = "time-reverse (y -> -y, t -> -t) of the departure to the mirror image: " + \
        str(d.details.get("method", ""))
    if "torus_phase_deg" in details:
        details["torus_phase_deg"] = [(-v) % 360.0 for v in details["torus_phase_deg"]]
    if "insertion_phases" in details:
        details["insertion_phases"] = [(-v) % 1.0 for v in details["insertion_phases"]]
    pre = np.array(man[-1]["state_before"], dtype=float)
    per = perigee_summary(s, pre)
    ret = Return(s, target, d.path, d.altitude_km, man, d.tof, float((-d.insertion_phase) % 1.0), per,
                 d.flyby_altitude_km, d.optimised, details)
    miss = dep.closure_km(ret)
    ret.details["closure_km"] = miss
    # the end: on the parking circle, the burn lands on the circular speed, no radial velocity
    rel, vin = relative(s, ret.final_state, 0)
    r_err_km = abs(float(s.km(np.linalg.norm(rel))) - (s.primary.radius_km + d.altitude_km))
    v_err = abs(float(np.linalg.norm(vin)) - math.sqrt((1.0 - s.mu) / np.linalg.norm(rel)))
    ret.details["parking_radius_error_km"] = r_err_km
    ret.details["parking_speed_error_mps"] = float(s.mps(v_err))
    if miss > dep.CLOSURE_TOL_KM or r_err_km > dep.CLOSURE_TOL_KM:
        raise ConvergenceError(f"the return misses by {max(miss, r_err_km):.3g} km when propagated forward "
                               f"(tolerance {dep.CLOSURE_TOL_KM:g} km)", 0, [miss, r_err_km], None)
    return ret


def as_leg(ret: Return, patches: int = 4):
    """``ret`` as a :class:`cr3bp.transfers.leg.Leg` (the transfer graph's leg to a parking orbit):
    the shooting form of :func:`cr3bp.transfers.departure.as_leg`, kind ``"arrival"`` (a leg that
    ends on a parking orbit), the departure state on the orbit before the first burn and the
    parking-orbit state after the perigee burn.

    Parameters
    ----------
    ret : Return
    patches : int
        Shooting segments per coast.

    Returns
    -------
    Leg

    Raises
    ------
    None
        A designed return always has its coasts and burns.

    Examples
    --------
    Skipped under doctest (the design takes tens of seconds):

    >>> leg = as_leg(design_return(halo, 200.0))      # doctest: +SKIP
    >>> leg.kind, [m.where for m in leg.maneuvers]    # doctest: +SKIP
    ('arrival', ['departure', 'arrival'])

    References
    ----------
    As :func:`cr3bp.transfers.departure.as_leg`.
    """
    leg = dep.as_leg(ret, patches)
    rec = {k: v for k, v in ret.to_dict().items() if k != "details"}
    return dataclasses.replace(leg, kind="arrival", method=f"{ret.path} return (optimised in the CR3BP as the "
                               "time-reverse of a departure)", details=_plain({"return": rec}))


__all__ = ["MIRROR", "Return", "as_leg", "design_return", "mirror_target"]
