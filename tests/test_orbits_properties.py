"""Properties of the corrector and the continuation, and the typed errors."""

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from cr3bp.errors import ConvergenceError, InputError, NoSolutionError
from cr3bp.orbits import continuation, shooting
from cr3bp.orbits.request import parse_request, solve_request

import _orbit_cache as cache


@settings(max_examples=6, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(dx=st.floats(-2e-4, 2e-4), dvy=st.floats(-2e-4, 2e-4), dtau=st.floats(-2e-3, 2e-3))
def test_perturbed_orbit_corrects_back(dx, dvy, dtau):
    """Correcting a slightly perturbed converged halo (z held) returns the same orbit."""
    o = cache.halo("L1", "north").members[5]
    s = o.state.copy()
    s[0] += dx
    s[4] += dvy
    back = shooting.correct(o.system, s, o.period / 2 + dtau, "xz", shooting.fix("z", s[2]))
    assert np.linalg.norm(back.state - o.state) < 1e-9
    assert back.period == pytest.approx(o.period, abs=1e-9)


def test_hold_jacobi_and_period():
    o = cache.halo("L2", "south").members[6]
    s = o.state.copy()
    s[0] += 1e-4
    a = shooting.correct(o.system, s, o.period / 2, "xz", shooting.hold_jacobi(o.jacobi))
    b = shooting.correct(o.system, s, o.period / 2, "xz", shooting.hold_period(o.period))
    for r in (a, b):
        assert np.linalg.norm(r.state - o.state) < 1e-8
    assert a.jacobi == pytest.approx(o.jacobi, abs=1e-12)
    assert b.period == pytest.approx(o.period, abs=1e-12)


def test_step_halving_does_not_change_members():
    """Natural-parameter continuation in x with step h and h/2: members at the same x agree."""
    em = cache.em()
    first = cache.lyapunov("L1").members[0]
    kw = dict(method="natural", parameter="x", direction=lambda t, X: -t[0], locate_bifurcations=False)
    h = 1e-3
    a = continuation.grow(em, first, "xz-planar", step=h, max_step=h,
                          stops=continuation.Stops(max_members=4, detect_closure=False), **kw)
    b = continuation.grow(em, first, "xz-planar", step=h / 2, max_step=h / 2,
                          stops=continuation.Stops(max_members=7, detect_closure=False), **kw)
    for k in (1, 2, 3):
        ma = a.members[k]
        mb = min(b.members, key=lambda m: abs(m.state[0] - ma.state[0]))
        assert abs(mb.state[0] - ma.state[0]) < 1e-12
        assert np.linalg.norm(ma.state - mb.state) < 1e-10
        assert ma.period == pytest.approx(mb.period, abs=1e-10)


def test_non_convergence_is_reported():
    em = cache.em()
    with pytest.raises(ConvergenceError) as e:
        shooting.correct(em, [0.5, 0, 0.3, 0, 0.9, 0], 0.3, "xz", shooting.fix("z", 0.3), max_iter=4)
    assert e.value.iterations >= 1 and len(e.value.residuals) >= 1 and e.value.last is not None


def test_parse_request():
    s = parse_request("halo L2 south period=6.5626d")
    assert (s.family, s.point, s.branch, s.key, s.value) == ("halo", "L2", "south", "period", "6.5626d")
    s = parse_request("resonant 3:2 jacobi=2.9")
    assert s.resonance == (3, 2)
    for bad in ("", "torus L1", "halo L1 east az=1km", "halo L2 south period=6d jacobi=3", "halo L1 north az="):
        with pytest.raises(InputError):
            parse_request(bad)


def test_out_of_range_gives_the_available_range():
    from cr3bp.catalog import Catalog
    from cr3bp.orbits.request import RECIPE, catalog_member
    em = cache.em()
    fam = cache.halo("L1", "north")      # part of the family only: az = 90 000 km lies beyond it
    cat = Catalog(":memory:")
    fid = cat.begin_family(em, "halo", "L1", "north", {"test": 1, "recipe": RECIPE})
    cat.add_members(fid, [catalog_member(m, i) for i, m in enumerate(fam.members)])
    cat.finish_family(fid, [], complete=True)
    with pytest.raises(NoSolutionError, match=r"covers az from .* km to .* km"):
        solve_request(em, "halo L1 north az=90000km", catalog=cat)
    # inside the catalogued range: solved exactly from the two bracketing members
    az = 0.5 * (fam.members[3].amplitude_km["z"] + fam.members[4].amplitude_km["z"])
    o = solve_request(em, f"halo L1 north az={az}km", catalog=cat)
    assert o.amplitude_km["z"] == pytest.approx(az, abs=1e-3)


def _brute_force_approach(o, k):
    """Least distance to primary k over one period, by brute force: the full period on a grid
    of 20 001 dense-output points, then a re-propagation of the two grid intervals around the
    minimum on 4 001 more (tolerance 1e-13)."""
    from cr3bp import propagate
    em = o.system
    xc = -em.mu if k == 0 else 1.0 - em.mu

    def dist(st):
        return np.sqrt((st[:, 0] - xc) ** 2 + st[:, 1] ** 2 + st[:, 2] ** 2)

    grid = np.linspace(0.0, o.period, 20001)
    arc = propagate(em, o.state, o.period, t_eval=grid, rtol=1e-13, atol=1e-13)
    i = int(np.argmin(dist(arc.states)))
    lo, hi = max(i - 1, 0), min(i + 1, len(grid) - 1)
    sub = propagate(em, arc.states[lo], grid[hi] - grid[lo], rtol=1e-13, atol=1e-13,
                    t_eval=np.linspace(0.0, grid[hi] - grid[lo], 4001))
    return float(dist(sub.states).min())


def test_closest_approaches_match_a_brute_force_search_to_one_metre():
    """The closest approaches of every kind of member (found on the integrator's steps, taken at
    an exact stationary point when the window of the sampled minimum holds one, else refined by a
    short re-propagation) agree with a brute-force dense search to one metre."""
    from cr3bp.orbits import geometry
    members = cache.sample_members()
    one_metre = 1e-3 / members[0].system.length_km
    shortcut = refined = 0
    for o in members:
        arc = shooting.propagate(o.system, o.state, o.period, rtol=shooting.RTOL, atol=shooting.ATOL,
                                 events=geometry.EXTREME_EVENTS)
        for k in (0, 1):
            assert o.closest_approach_lu[k] == pytest.approx(_brute_force_approach(o, k), abs=one_metre)
            xc = -o.system.mu if k == 0 else 1.0 - o.system.mu
            d = np.hypot(arc.states[:, 0] - xc, np.hypot(arc.states[:, 1], arc.states[:, 2]))
            i = int(np.argmin(d))
            lo, hi = arc.t[max(i - 1, 0)], arc.t[min(i + 1, len(arc.t) - 1)]
            cands = ([arc.states[0]] if i == 0 else []) + [e.state for e in arc.events if lo < e.t < hi]
            if any(geometry._stationary_minimum(o.system.mu, c, xc) is not None for c in cands):
                shortcut += 1
            else:
                refined += 1
    assert shortcut > 0 and refined > 0      # both paths are exercised


def test_stationary_minimum_accepts_only_perpendicular_minima():
    """A perpendicular x-z crossing on the near side of a primary is a distance minimum; the same
    point with a radial velocity, or the far side of a circle-like pass (a maximum), is not."""
    from cr3bp.orbits import geometry
    em = cache.em()
    xm = 1.0 - em.mu
    near = np.array([xm + 0.01, 0.0, 0.0, 0.0, 2.0, 0.0])      # fast pass close to the Moon
    assert geometry._stationary_minimum(em.mu, near, xm) == pytest.approx(0.01, abs=1e-15)
    moving = near.copy()
    moving[3] = 1e-3                                            # radial velocity: not stationary
    assert geometry._stationary_minimum(em.mu, moving, xm) is None
    slow = np.array([xm + 0.01, 0.0, 0.0, 0.0, 1e-4, 0.0])      # falling inward: a maximum
    assert geometry._stationary_minimum(em.mu, slow, xm) is None
