"""Sections: plane, sphere and apsis crossings, directions, map coordinates, cut polygons."""

import math

import numpy as np
import pytest

from cr3bp import propagate, system
from cr3bp.dynamics import jacobi
from cr3bp.errors import InputError
from cr3bp.tubes.sections import (Crossings, apsis, crossings, hyperplane, parse_section, points_in_polygon,
    sphere)

EM = system("earth-moon")
ONE_METER_LU = 1e-3 / EM.length_km
STARTS = np.array([[0.83, 0.0, 0.0, 0.0, 0.15 + 0.01 * k, 0.0] for k in range(5)])


def test_plane_crossings_lie_on_the_plane_and_respect_direction():
    for d in (1, -1):
        sec = hyperplane("y", 0.0, d)
        for tmax in (4.0, -4.0):
            cr = crossings(EM, STARTS, sec, tmax, count=2)
            assert len(cr) > 0
            assert np.all(np.abs(cr.states[:, 1]) < 1e-12)
            # physical direction: sign of vy at the crossing, whatever the time direction
            assert np.all(np.sign(cr.states[:, 4]) == d)
            assert np.all(np.sign(cr.t) == np.sign(tmax))
            assert set(cr.count.tolist()) <= {1, 2}
            np.testing.assert_allclose(cr.jacobi, jacobi(EM.mu, STARTS)[cr.trajectory], atol=1e-10)


def test_crossing_states_are_on_the_trajectory():
    sec = parse_section("x=1-mu", EM)
    cr = crossings(EM, STARTS[:2], sec, 6.0)
    for k in range(len(cr)):
        end = propagate(EM, STARTS[cr.trajectory[k]], cr.t[k]).final_state
        assert np.linalg.norm(end[:3] - cr.states[k, :3]) < ONE_METER_LU


def test_sphere_crossings():
    sec = parse_section("sphere:moon:30000km", EM)
    cr = crossings(EM, STARTS, sec, 6.0)
    r = np.linalg.norm(cr.states[:, :3] - [1 - EM.mu, 0, 0], axis=1) * EM.length_km
    np.testing.assert_allclose(r, 30000.0, atol=1e-6)
    assert len(cr) > 0


def test_periapsis_passages_are_minima_of_distance():
    sec = apsis(EM, "moon", "periapsis")
    cr = crossings(EM, STARTS, sec, 6.0, count=2)
    assert len(cr) > 0
    c = np.array([1 - EM.mu, 0, 0])
    for s in cr.states:
        rel = s[:3] - c
        assert abs(rel @ s[3:6]) < 1e-12
        r0 = np.linalg.norm(rel)
        for dt in (-1e-3, 1e-3):
            r = np.linalg.norm(propagate(EM, s, dt).final_state[:3] - c)
            assert r > r0
    alt = cr.coords(["altitude_km"])[:, 0]
    np.testing.assert_allclose(alt, np.linalg.norm(cr.states[:, :3] - c, axis=1) * EM.length_km - 1737.4)


def test_apoapsis_passages_are_maxima():
    cr = crossings(EM, STARTS[:2], parse_section("apoapsis:moon", EM), 6.0)
    c = np.array([1 - EM.mu, 0, 0])
    for s in cr.states:
        r0 = np.linalg.norm(s[:3] - c)
        assert np.linalg.norm(propagate(EM, s, 1e-3).final_state[:3] - c) < r0


def test_polygon_area_of_a_regular_polygon():
    n, r = 64, 0.3
    ang = 2 * np.pi * np.arange(n) / n
    states = np.zeros((n, 6))
    states[:, 1], states[:, 4] = r * np.cos(ang), r * np.sin(ang)
    cut = Crossings(EM, hyperplane("x", 0.5), states, np.ones(n), np.arange(n), np.ones(n, int), n,
                    ang / (2 * np.pi))
    assert cut.closed
    # area of the inscribed regular n-gon: (n/2) r^2 sin(2 pi / n)
    assert cut.area() == pytest.approx(0.5 * n * r * r * math.sin(2 * math.pi / n), rel=1e-12)
    assert cut.contains([[0.0, 0.0], [0.29, 0.0], [0.31, 0.0], [0.25, 0.25]]).tolist() == \
        [True, True, False, False]


def test_points_in_square():
    sq = np.array([[0, 0], [1, 0], [1, 1], [0, 1.0]])
    got = points_in_polygon(np.array([[0.5, 0.5], [1.5, 0.5], [-0.1, 0.2], [0.99, 0.01]]), sq)
    assert got.tolist() == [True, False, False, True]


@pytest.mark.parametrize("text, kind, value", [("x=1-mu", "plane", 1 - EM.mu), ("y=0:+", "plane", 0.0),
                                               ("vx=0.1", "plane", 0.1), ("x=-mu", "plane", -EM.mu)])
def test_parse_planes(text, kind, value):
    s = parse_section(text, EM)
    assert s.kind == kind and s.value == pytest.approx(value)


@pytest.mark.parametrize("text", ["q=1", "x=1-nu", "x=__import__('os')", "sphere:moon", "sphere:pluto:1km",
                                  "periapsis", "y=0:sideways", "x", "sphere:moon:-5km"])
def test_parse_bad_sections(text):
    with pytest.raises(InputError):
        parse_section(text, EM)


def test_map_coordinates_and_dict():
    cr = crossings(EM, STARTS, parse_section("y=0:-", EM), 4.0)
    m = cr.coords(["x", "vx", "tof_days"])
    assert m.shape == (len(cr), 3)
    np.testing.assert_allclose(m[:, 2], cr.t * EM.time_days)
    d = cr.to_dict(["x", "vx"])
    assert d["crossings"] == len(cr) and len(d["map"]) == len(cr)
    with pytest.raises(InputError):
        cr.coords(["speed_of_light"])


# ---- half-plane sections ------------------------------------------------------------------

def test_half_plane_parse_forms_and_bad_input():
    s = parse_section("y=0,x<0", EM)
    assert s.kind == "plane" and s.coordinate == 1 and s.bound == (0, -1, 0.0) and s.direction == 0
    s = parse_section("x=1-mu:+,y>0", EM)
    assert s.direction == 1 and s.bound == (1, 1, 0.0) and s.value == pytest.approx(1 - EM.mu)
    s = parse_section("y=0,x>1-mu", EM)
    assert s.bound == (0, 1, pytest.approx(1 - EM.mu))
    assert s.to_dict()["bound"] == {"coordinate": "x", "side": ">", "value": s.bound[2]}
    states = np.array([[0.5, 0, 0, 0, 0, 0], [1.5, 0, 0, 0, 0, 0]])
    assert s.inside(states).tolist() == [False, True]
    for bad in ("y=0,x=0", "y=0,y<0", "y=0,q<0", "y=0,x<0,x>-1", "sphere:moon:2000km,x<0",
                "y=0,x<abc", "y=0,x"):
        with pytest.raises(InputError):
            parse_section(bad, EM)


def test_half_plane_counts_only_crossings_inside_the_bound():
    """The k-th crossing of a half-plane is the k-th crossing of the full plane that lies in
    the bound: crossings outside it are passed through, not stopped at."""
    full = crossings(EM, STARTS, hyperplane("y", 0.0), 12.0, count=12)
    half = crossings(EM, STARTS, parse_section("y=0,x<0.99", EM), 12.0, count=3)
    assert len(half) > 0 and np.all(half.states[:, 0] < 0.99)
    assert np.any(full.states[:, 0] >= 0.99)  # there are crossings to skip
    for i in range(len(STARTS)):
        want = full.select((full.trajectory == i) & (full.states[:, 0] < 0.99))
        got = half.select(half.trajectory == i)
        n = min(len(want), 3)
        assert len(got) == n
        np.testing.assert_allclose(got.states, want.states[:n], atol=1e-10)
        assert got.count.tolist() == list(range(1, n + 1))


def test_tube_stopped_by_a_half_plane_ends_inside_it():
    from cr3bp.tubes.manifolds import Stop, grow_tube
    from _orbit_fixtures import lyapunov
    o = lyapunov(EM, "L1", 3.15)
    sec = parse_section("y=0,x<0", EM)
    tube = grow_tube(o, "unstable", "exterior", 24, Stop(sec, 1, 20.0))
    m = tube.reached("section")
    assert m.sum() >= 20
    ends = tube.end_states[m]
    assert np.all(np.abs(ends[:, 1]) < 1e-12) and np.all(ends[:, 0] < 0)
    # the same as the first in-bound crossing of the full plane
    ref = crossings(EM, tube.start_states[m], hyperplane("y", 0.0), 20.0, count=10)
    for j, i in enumerate(np.nonzero(m)[0]):
        r = ref.select((ref.trajectory == j) & (ref.states[:, 0] < 0))
        np.testing.assert_allclose(ends[j], r.states[0], atol=1e-10)
        assert tube.tof[i] == pytest.approx(r.t[0], abs=1e-10)


def test_cut_at_a_later_crossing_is_one_curve():
    """A tube's cut at its 2nd crossing (count = 2 on every row) is used as it is by
    polygon/closed/area, not emptied by taking first crossings."""
    cr = crossings(EM, STARTS, hyperplane("y", 0.0), 12.0, count=2).nth(2)
    assert len(cr) == len(STARTS) and set(cr.count.tolist()) == {2}
    assert cr.one_each() is cr and cr.closed
    assert len(cr.polygon(("x", "vx"))) == len(STARTS)
    both = crossings(EM, STARTS, hyperplane("y", 0.0), 12.0, count=2)
    assert len(both.one_each()) == len(STARTS) and set(both.one_each().count.tolist()) == {1}
