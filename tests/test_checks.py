"""Constraint geometry on hand-built states whose answers follow from plane geometry."""

import numpy as np
import pytest

from cr3bp import system
from cr3bp.scenario.checks import altitude_km, angle_at_earth_deg, occultation_clearance_km

EM = system("earth-moon")


def test_altitude_over_the_moon():
    x2 = 1 - EM.mu
    s = np.array([[x2 + 5000.0 / EM.length_km, 0, 0, 0, 0, 0]])
    assert altitude_km(EM, s, 1)[0] == pytest.approx(5000.0 - 1737.4, abs=1e-6)


def test_moon_angle_at_the_earth_in_earth_moon():
    x1 = -EM.mu
    # a point at 45 degrees above the Earth-Moon line, seen from the Earth; on the line; behind it
    s = np.array([[x1 + 0.5, 0.5, 0, 0, 0, 0], [x1 + 1.0, 0, 0.0, 0, 0, 0], [x1 - 1.0, 0, 0, 0, 0, 0]])
    a = angle_at_earth_deg(EM, np.zeros(3), s, "2031-03-01T00:00:00Z", "moon")
    assert a == pytest.approx([45.0, 0.0, 180.0], abs=1e-12)


def test_occultation_behind_the_moon_and_clear_of_it():
    x2 = 1 - EM.mu
    behind = [x2 + 0.1, 0, 0, 0, 0, 0]                     # on the far side, on the line: blocked
    beside = [x2 + 0.1, 0, 20000.0 / EM.length_km, 0, 0, 0]  # 20 000 km above the line
    c = occultation_clearance_km(EM, np.array([behind, beside]))
    assert c[0] == pytest.approx(-1737.4, abs=1e-6)
    # distance from the Moon's centre to the segment (beside -> Earth): the line's height over the
    # Moon by similar triangles, times the cosine of the line's slope
    h = 20000.0 / EM.length_km
    d_line = 20000.0 * (1.0 / 1.1) * np.cos(np.arctan(h / 1.1))
    assert c[1] == pytest.approx(d_line - 1737.4, rel=1e-9)
