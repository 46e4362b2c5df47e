"""Mission constraints checked on a periodic orbit, each with its margin.

Every check samples the orbit over one period (dense output of the propagator) and returns a
:class:`CheckResult`: what was required, what the orbit achieves, the margin (positive when
met) and pass/fail. Geometry (common practice for libration-point mission design):

* altitude over a primary: distance to its centre minus its mean radius;
* angle from the primaries' line: the angle at the larger primary between the directions to
  the spacecraft and to the smaller primary (e.g. the Sun-Earth-spacecraft angle of a Sun-Earth
  L1 observatory, kept above a few degrees so its downlink is not drowned by the Sun; or the
  Earth-Moon-line angle of a lunar relay);
* line of sight to the larger primary: the segment from the spacecraft to the larger
  primary's centre never passes within the smaller primary's radius (no occultation).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import units
from .errors import InputError

SAMPLES_PER_PERIOD = 4000


@dataclass(frozen=True)
class CheckResult:
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
    """States (n, 6) evenly in time over one period."""
    from .integrate import propagate
    t = np.linspace(0.0, orbit.period, n)
    return propagate(orbit.system, orbit.state, orbit.period, t_eval=t).states


def altitude_km(system, states, which: int) -> np.ndarray:
    """Altitude over primary ``which`` (0 larger, 1 smaller), km."""
    system.require_dimensional("an altitude")
    x = system.positions[which]
    body = (system.primary, system.secondary)[which]
    d = np.sqrt((states[:, 0] - x) ** 2 + states[:, 1] ** 2 + states[:, 2] ** 2)
    return d * system.length_km - body.radius_km


def angle_from_line_deg(system, states) -> np.ndarray:
    """Angle at the larger primary between the spacecraft and the smaller primary, degrees."""
    r = states[:, :3] - np.array([system.positions[0], 0.0, 0.0])
    cosang = r[:, 0] / np.linalg.norm(r, axis=1)
    return np.degrees(np.arccos(np.clip(cosang, -1.0, 1.0)))


def occultation_clearance_km(system, states) -> np.ndarray:
    """Distance (km) by which the spacecraft-to-larger-primary segment clears the smaller
    primary's surface (negative: the line of sight is blocked)."""
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


def run_checks(orbit, checks: dict, states=None) -> list[CheckResult]:
    """Evaluate the scenario's ``checks`` table on ``orbit``.

    Keys: ``min_altitude_smaller``, ``min_altitude_larger`` (lengths), ``max_stability_index``,
    ``min_angle_from_primaries_line_deg``, ``line_of_sight_to_larger`` (bool), ``max_period``.
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
        elif key == "min_angle_from_primaries_line_deg":
            act = float(angle_from_line_deg(system, states).min())
            out.append(_result(key, f"least angle from the {names[0]}-{names[1]} line seen from {names[0]}",
                               float(value), act, "deg", True))
        elif key == "line_of_sight_to_larger":
            if not value:
                continue
            act = float(occultation_clearance_km(system, states).min())
            out.append(_result(key, f"line of sight to {names[0]} clears {names[1]} by", 0.0, act, "km", True))
        elif key == "max_period":
            req = units.parse(value, "time").si() / 86400.0
            out.append(_result(key, "period", req, float(orbit.period_days), "d", False))
        else:
            raise InputError(f"unknown check '{key}'")
    return out
