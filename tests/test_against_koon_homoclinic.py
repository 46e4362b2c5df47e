"""Homoclinic orbits of planar Lyapunov orbits, on half-plane sections.

Koon, Lo, Marsden & Ross, "Heteroclinic connections between periodic orbits and resonance
transitions in celestial mechanics", Chaos 10, 2000, §3-4 (from memory), and *Dynamical
Systems, the Three-Body Problem and Space Mission Design*, 2011, ch. 3 (from memory): in the
Sun-Jupiter system (mu = 9.537e-4) at the energy E = -1.5185 (Jacobi constant C = -2E = 3.037,
just below C(L2), so both necks are open) the unstable manifold of the L1 Lyapunov orbit, cut
by the half-plane U1 = {y = 0, x < 0} in the Sun's realm, meets its own stable manifold:
the first cuts cross, and each crossing is a homoclinic orbit. The same holds in Jupiter's
realm on U2/U3 = {x = 1 - mu, y < 0 / y > 0}. Their construction uses the x-axis symmetry
of the problem, (x, y, vx, vy, t) -> (x, -y, -vx, vy, -t), which maps the unstable manifold
of a symmetric Lyapunov orbit onto its stable manifold; on y = 0 the stable cut is the mirror
(x, vx) -> (x, -vx) of the unstable one, so symmetric homoclinic points sit where the
unstable cut crosses vx = 0 (common practice).

Checked here: the crossings exist at that energy, the refined connections have zero patch
Δv (below 1 mm/s), the Jacobi constant holds to 1e-10 along them, each leaves and returns to
the orbit at the step-off distance, symmetric ones are found where the unstable cut crosses
vx = 0 and are invariant under the symmetry, asymmetric ones come in mirror pairs, and the
Jupiter-realm connections on y < 0 are the mirror images of those on y > 0. The Earth-Moon
counterpart (C = 3.15, first crossing of U1) is checked the same way.
"""

import numpy as np
import pytest

from cr3bp import propagate, system
from cr3bp.tubes.connections import connect
from cr3bp.dynamics import jacobi

from _orbit_fixtures import lyapunov, point_jacobi

SJ = system("sun-jupiter")
EM = system("earth-moon")
ONE_MM_PER_S = 1e-3      # m/s
C_SJ = 3.037             # -2 * (-1.5185), Koon et al. 2000 (from memory)


def mirror(s):
    """The x-axis symmetry of the planar problem applied to states (time reversed)."""
    s = np.array(s, dtype=float)
    s[..., [1, 3, 5]] *= -1
    return s


def check_leg(system, orbit, leg, c, reach=0.1):
    assert leg.kind == "homoclinic"
    assert leg.dv_mps < ONE_MM_PER_S
    assert leg.details["residuals"][-1] < 1e-10
    t, s = leg.trajectory(1500)
    assert np.all(np.diff(t) >= 0)
    assert np.max(np.abs(jacobi(system.mu, s) - c)) < 1e-10
    ring = propagate(system, orbit.state, orbit.period,
                     t_eval=np.linspace(0, orbit.period, 4000)).states[:, :3]
    step = leg.details["step_km"] / system.length_km
    for end in (s[0], s[-1]):  # departs from and returns to the same orbit at the step-off
        d = np.min(np.linalg.norm(ring - end[:3], axis=1))
        assert 0.5 * step < d < 1.5 * step
    # and goes far from it in between (a true excursion into the realm; ``reach`` LU)
    assert np.max(np.min(np.linalg.norm(s[::25, None, :3] - ring[None, ::20], axis=2), axis=1)) > reach


@pytest.fixture(scope="module")
def sun_realm():
    assert C_SJ < point_jacobi(SJ.mu, "L2") < point_jacobi(SJ.mu, "L1")
    o = lyapunov(SJ, "L1", C_SJ)
    legs, tu, ts = connect(o, o, "y=0,x<0", 200, t_max=12.0, branch_a="exterior",
                           branch_b="exterior", max_candidates=8)
    return o, legs, tu, ts


def test_sun_jupiter_mu():
    assert SJ.mu == pytest.approx(9.537e-4, rel=2e-3)  # Koon et al. 2000 (from memory)


def test_sun_realm_homoclinics_have_zero_dv(sun_realm):
    o, legs, tu, ts = sun_realm
    assert len(legs) >= 2
    for leg in legs:
        check_leg(SJ, o, leg, C_SJ)
        assert leg.patch_state[0] < 0 and abs(leg.patch_state[1]) < 1e-12


def test_stable_cut_is_the_mirror_of_the_unstable_cut(sun_realm):
    o, legs, tu, ts = sun_realm
    cu, cs = tu.section_cut(), ts.section_cut()
    assert cu.closed and cs.closed
    pu, ps = cu.polygon(("x", "vx")), cs.polygon(("x", "vx"))
    # every mirrored stable point lies on the unstable polygon (within its sampling error)
    mir = ps * np.array([1.0, -1.0])
    d = np.min(np.linalg.norm(mir[:, None, :] - pu[None, :, :], axis=2), axis=1)
    assert np.max(d) < 2e-3


def test_symmetric_homoclinics_sit_where_the_unstable_cut_crosses_vx_zero(sun_realm):
    o, legs, tu, ts = sun_realm
    cut = tu.section_cut()
    order = np.argsort(cut.phase)
    x, vx = cut.states[order, 0], cut.states[order, 3]
    zeros = [x[i] - vx[i] * (x[i + 1] - x[i]) / (vx[i + 1] - vx[i])
             for i in range(len(x) - 1) if np.sign(vx[i]) != np.sign(vx[i + 1])]
    assert len(zeros) >= 2
    sym = [g for g in legs if abs(g.patch_state[3]) < 1e-9]
    assert len(sym) >= 2
    for g in sym:
        assert min(abs(z - g.patch_state[0]) for z in zeros) < 1e-3
        # the departure and arrival phases are mirror images on the orbit (orbit state at
        # phase 0 on y = 0, as the library's symmetric Lyapunov orbits start there)
        f = (g.details["phase_from"] + g.details["phase_to"]) % 1.0
        assert min(f, 1 - f) < 1e-7
        # the trajectory is invariant under the symmetry about the patch point
        fwd = propagate(SJ, g.patch_state, 3.0).final_state
        back = propagate(SJ, g.patch_state, -3.0).final_state
        np.testing.assert_allclose(mirror(back), fwd, atol=1e-8)
    # asymmetric connections come in mirror pairs (x, vx) and (x, -vx)
    asym = [g for g in legs if abs(g.patch_state[3]) >= 1e-9]
    for g in asym:
        assert any(np.allclose(mirror(h.patch_state), g.patch_state, atol=1e-8) for h in asym)


def test_jupiter_realm_homoclinics_mirror_across_the_x_axis():
    o = lyapunov(SJ, "L1", C_SJ)
    below, _, _ = connect(o, o, "x=1-mu,y<0", 200, t_max=12.0, max_candidates=4)
    above, _, _ = connect(o, o, "x=1-mu,y>0", 200, t_max=12.0, max_candidates=4)
    assert len(below) >= 2 and len(above) >= 2
    for g in below:
        check_leg(SJ, o, g, C_SJ, reach=0.03)  # Jupiter's Hill radius is about 0.07 LU
        assert g.patch_state[1] < 0
        # its mirror image is the connection found on y > 0
        assert any(np.allclose(mirror(h.patch_state)[[0, 1, 4]], g.patch_state[[0, 1, 4]],
                               atol=1e-8) and np.allclose(-h.patch_state[3], g.patch_state[3],
                                                          atol=1e-8) for h in above)


@pytest.mark.parametrize("c, crossing, at_least", [(3.15, 1, 2), (3.12, 1, 3), (3.17, 2, 4)])
def test_earth_moon_homoclinic_in_the_earth_realm(c, crossing, at_least):
    """Earth's realm, U1, L1 Lyapunov orbits. At C = 3.17 the first cuts do not meet (nearest
    approach about 0.5 in x/vx) but the second ones do (four connections, about 17 TU)."""
    o = lyapunov(EM, "L1", c)
    legs, tu, ts = connect(o, o, "y=0,x<0", 200, t_max=10.0 * crossing + 10.0,
                           count=crossing, branch_a="exterior", branch_b="exterior",
                           max_candidates=8)
    assert len(legs) >= at_least
    assert tu.section_cut().closed and ts.section_cut().closed  # also for crossing >= 2
    # each connection once (several candidate crossings may refine to the same one)
    phases = {(round(g.details["phase_from"], 6), round(g.details["phase_to"], 6)) for g in legs}
    assert len(phases) == len(legs)
    for g in legs:
        check_leg(EM, o, g, c)
        # symmetric (vx = 0 on y = 0) or one of a mirror pair
        assert abs(g.patch_state[3]) < 1e-9 or any(
            np.allclose(mirror(h.patch_state), g.patch_state, atol=1e-8) for h in legs)


def test_earth_moon_homoclinic_in_the_moon_realm():
    """Moon's realm, U2 = {x = 1 - mu, y < 0}, first crossing, C = 3.17 (on the full plane
    x = 1 - mu the first crossing of most trajectories lies on y > 0, so this is a different
    cut from the full plane's)."""
    c = 3.17
    o = lyapunov(EM, "L1", c)
    legs, _, _ = connect(o, o, "x=1-mu,y<0", 200, t_max=12.0, max_candidates=4)
    assert legs
    for g in legs:
        check_leg(EM, o, g, c, reach=0.05)
        assert g.patch_state[1] < 0


def test_sun_jupiter_l2_homoclinic_in_the_exterior_realm():
    """Exterior realm, U4 = {y = 0, x < -1}, first crossing, C = 3.035, L2 Lyapunov orbit
    (Koon et al. 2000 construct these too, from memory): distinct connections only (each
    refined pair of phases once), symmetric ones in the middle of mirror pairs."""
    c = 3.035
    o = lyapunov(SJ, "L2", c)
    legs, _, _ = connect(o, o, "y=0,x<-1", 200, t_max=14.0, branch_a="exterior",
                         branch_b="exterior", max_candidates=8)
    assert len(legs) >= 2
    phases = {(round(g.details["phase_from"], 6), round(g.details["phase_to"], 6)) for g in legs}
    assert len(phases) == len(legs)
    for g in legs:
        check_leg(SJ, o, g, c)
        assert g.patch_state[0] < -1
    assert any(abs(g.patch_state[3]) < 1e-9 for g in legs)
