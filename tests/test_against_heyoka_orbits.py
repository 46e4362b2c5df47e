"""Periodicity re-checked with heyoka, an independent integrator (Taylor method, Biscani &
Izzo, "Revisiting high-order Taylor methods for astrodynamics and celestial mechanics",
MNRAS 504, 2021): every sampled converged orbit closes to < 1e-10 (nondimensional) after one
period propagated by heyoka at tolerance 1e-16, with the CR3BP equations written out afresh
here (Szebehely 1967, §1.5)."""

import numpy as np
import pytest

hy = pytest.importorskip("heyoka")

import _orbit_cache as cache  # noqa: E402


def _integrator(mu, state):
    x, y, z, vx, vy, vz = hy.make_vars("x", "y", "z", "vx", "vy", "vz")
    r1 = hy.sqrt((x + mu) ** 2 + y ** 2 + z ** 2)
    r2 = hy.sqrt((x - 1 + mu) ** 2 + y ** 2 + z ** 2)
    dyn = [(x, vx), (y, vy), (z, vz),
           (vx, 2 * vy + x - (1 - mu) * (x + mu) / r1 ** 3 - mu * (x - 1 + mu) / r2 ** 3),
           (vy, -2 * vx + y - (1 - mu) * y / r1 ** 3 - mu * y / r2 ** 3),
           (vz, -(1 - mu) * z / r1 ** 3 - mu * z / r2 ** 3)]
    return hy.taylor_adaptive(dyn, [float(v) for v in state], tol=1e-16)


def test_periodicity_with_heyoka():
    for o in cache.sample_members():
        ta = _integrator(o.system.mu, o.state)
        ta.propagate_until(o.period)
        err = float(np.linalg.norm(np.asarray(ta.state) - o.state))
        assert err < 1e-10, (o.family, o.point, o.branch, o.state, err)


def test_strongly_unstable_lyapunov_members_close_with_heyoka():
    """The L2 Lyapunov members whose own full-period check is limited by their instability
    (largest multiplier ~1400) close to < 1e-10 with heyoka."""
    fam = cache.lyapunov("L2")
    for o in fam.members[::4]:
        ta = _integrator(o.system.mu, o.state)
        ta.propagate_until(o.period)
        assert float(np.linalg.norm(np.asarray(ta.state) - o.state)) < 1e-10


def test_resonant_members_accepted_on_the_finer_measurement_close_with_heyoka():
    """The Earth-Moon 3:2 resonant family (largest multiplier ~30-1 400) whose full-period error
    at tolerance 1e-13 exceeds 1e-10 and is measured again at 1e-14 (shooting.FINE_RTOL): its
    first orbit and its members close to < 1e-10 after one period with heyoka."""
    from cr3bp.orbits import continuation, families
    first, _ = families._resonant_first(cache.em(), 3, 2)
    fam = families.grow_family(cache.em(), "resonant", resonance=(3, 2),
                               stops=continuation.Stops(max_members=5))
    assert len(fam.members) == 5
    for o in (first,) + tuple(fam.members):
        ta = _integrator(o.system.mu, o.state)
        ta.propagate_until(o.period)
        assert float(np.linalg.norm(np.asarray(ta.state) - o.state)) < 1e-10
