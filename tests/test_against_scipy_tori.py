"""Quasi-halo tori against scipy: the centre eigenvalue angle of the monodromy (from scipy's
DOP853 and LAPACK) and independent propagation of torus points with scipy's DOP853.

Sources:
* The rotation of small tori about a periodic orbit tends to the angle of the orbit's centre
  multiplier pair ``e^{+-i alpha}``, with an error second order in the amplitude (Jorba,
  "Numerical computation of the normal behaviour of invariant curves of n-dimensional maps",
  Nonlinearity 14, 2001; Olikara & Scheeres, AAS 12-361, 2012, §III.A). The monodromy here is
  integrated by scipy's ``solve_ivp`` (DOP853) on equations written out in
  ``tests/_independent_cr3bp.py`` and decomposed by numpy's LAPACK ``eig``.
* Invariance: a torus point ``u(theta)`` mapped k times by the flow over the stroboscopic time
  lands on ``u(theta + k rho)``; scipy's DOP853 does the propagation.
"""

import functools
import math

import numpy as np
import pytest

from cr3bp import system
from cr3bp.orbits.request import parse_request, solve_request
from cr3bp.tori import torus_around
from cr3bp.tori.circle import evaluate
from cr3bp.tori.torus import INVARIANCE_TOL

from _independent_cr3bp import monodromy, propagate

KM = 1.0   # lengths below are in km, converted with the system's length unit


@functools.lru_cache(maxsize=None)
def em():
    return system("earth-moon")


@functools.lru_cache(maxsize=None)
def orbit(request):
    return solve_request(em(), parse_request(request))


@functools.lru_cache(maxsize=None)
def torus(request, amplitude_km, hold="period"):
    return torus_around(orbit(request), amplitude_km / em().length_km, hold=hold)


def scipy_centre_angle(o):
    """Angle in (0, pi) of the multiplier pair on the unit circle that is not the trivial pair."""
    _, M = monodromy(em().mu, o.state, o.period)
    w = np.linalg.eigvals(M)
    on = [z for z in w if abs(abs(z) - 1) < 1e-4 and z.imag > 1e-4]
    assert len(on) == 1, w
    return float(np.angle(on[0]))


@pytest.mark.parametrize("request_text", ["halo L1 north az=8000km", "halo L2 south resonance=9:2"])
def test_small_tori_rotation_tends_to_the_centre_angle(request_text):
    alpha = scipy_centre_angle(orbit(request_text))
    errs = [abs(torus(request_text, a).rotation - alpha) for a in (100.0, 400.0)]
    # second order in the amplitude: four times the amplitude, about sixteen times the error
    assert errs[1] / errs[0] == pytest.approx(16.0, rel=0.25)
    assert errs[0] < 2e-4
    # and the stroboscopic time held at the orbit's period
    assert torus(request_text, 100.0).stroboscopic_time == pytest.approx(orbit(request_text).period,
                                                                         rel=1e-12)


def test_nrho_torus_is_invariant_under_scipy_propagation():
    t = torus("halo L2 south resonance=9:2", 2000.0, "jacobi")
    mu = em().mu
    theta = np.array([0.3, 1.9, 4.4])
    start = evaluate(t.circle, theta)
    for th, s in zip(theta, start):
        state = s
        for k in range(1, 6):
            state = propagate(mu, state, t.stroboscopic_time, rtol=1e-13, atol=1e-13)
            want = evaluate(t.circle, [th + k * t.rotation])[0]
            # the near-rectilinear halo is nearly neutral: the error grows about linearly
            assert np.linalg.norm(state - want) < k * t.invariance_tolerance
    assert t.invariance_error < t.invariance_tolerance == INVARIANCE_TOL


def test_jacobi_constant_is_constant_over_the_torus():
    t = torus("halo L2 south resonance=9:2", 2000.0, "jacobi")
    mu = em().mu
    pts = evaluate(t.circle, np.linspace(0, 2 * np.pi, 37))

    def jacobi(s):   # written out here (Szebehely 1967, §1.6), not taken from the library
        r1 = math.dist(s[:3], (-mu, 0, 0))
        r2 = math.dist(s[:3], (1 - mu, 0, 0))
        return s[0] ** 2 + s[1] ** 2 + 2 * (1 - mu) / r1 + 2 * mu / r2 - float(s[3:] @ s[3:])

    c = [jacobi(s) for s in pts]
    c += [jacobi(propagate(mu, s, 0.37 * t.stroboscopic_time)) for s in pts[::6]]
    assert max(c) - min(c) < 1e-10
    assert np.mean(c) == pytest.approx(t.jacobi, abs=1e-10)
    # held at the orbit's Jacobi constant
    assert t.jacobi == pytest.approx(orbit("halo L2 south resonance=9:2").jacobi, abs=1e-10)
    assert t.amplitude_lu * em().length_km == pytest.approx(2000.0, abs=1e-3)


def test_l1_quasi_halo_is_invariant_over_one_stroboscopic_time():
    # an L1 halo is strongly unstable (multiplier ~2e3): one map only
    t = torus("halo L1 north az=8000km", 400.0)
    pts = evaluate(t.circle, [0.1, 2.2, 5.0])
    for th, s in zip((0.1, 2.2, 5.0), pts):
        got = propagate(em().mu, s, t.stroboscopic_time, rtol=1e-13, atol=1e-13)
        assert np.linalg.norm(got - evaluate(t.circle, [th + t.rotation])[0]) < INVARIANCE_TOL


@functools.lru_cache(maxsize=None)
def family(hold):
    from cr3bp.tori.family import continue_family
    return continue_family(torus("halo L2 south resonance=9:2", 1000.0, "jacobi"), hold,
                           members=2, step=0.005)


@pytest.mark.parametrize("hold, attr", [("jacobi", "jacobi"), ("period", "stroboscopic_time"),
                                        ("rotation", "rotation")])
def test_torus_family_members_hold_their_quantity_and_are_invariant(hold, attr):
    """Pseudo-arclength family (Baresi, Olikara & Scheeres 2018) about the 9:2 NRHO: each member
    keeps the held quantity, grows, and its points land on it again under scipy's DOP853."""
    f = family(hold)
    assert f.stop == "members" and len(f.members) == 3
    held = getattr(f.members[0], attr)
    amps = [m.amplitude_lu for m in f.members]
    assert amps[0] < amps[1] < amps[2]
    for m in f.members[1:]:
        assert getattr(m, attr) == pytest.approx(held, abs=1e-10)
        assert m.invariance_error < m.invariance_tolerance
    last = f.members[-1]
    for th in (0.7, 3.6):
        s = evaluate(last.circle, [th])[0]
        got = propagate(em().mu, s, last.stroboscopic_time, rtol=1e-13, atol=1e-13)
        want = evaluate(last.circle, [th + last.rotation])[0]
        assert np.linalg.norm(got - want) < last.invariance_tolerance
    # the family quantities that are not held do change
    free = [a for a in ("jacobi", "stroboscopic_time", "rotation") if a != attr]
    assert any(abs(getattr(last, a) - getattr(f.members[0], a)) > 1e-6 for a in free)
