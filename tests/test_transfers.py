"""Orbit-to-orbit transfers at different energies through one manoeuvre on a common section.

At a point on the section both trajectories share 2 Omega, so |v1|^2 - |v2|^2 = C2 - C1 and
any patch needs |dv| >= ||v1| - |v2|| = |C2 - C1| / (|v1| + |v2|) (the energy identity of
systems.py); the minimum-dv patch, where the velocities are nearly parallel, comes close to
that bound. Positions must match exactly.
"""

import numpy as np
import pytest

from cr3bp import system
from cr3bp.tubes.connections import connect

from _orbit_fixtures import lyapunov

EM = system("earth-moon")


def test_planar_transfer_between_energies():
    a, b = lyapunov(EM, "L1", 3.15), lyapunov(EM, "L2", 3.14)
    legs, tu, ts = connect(a, b, "x=1-mu", 30, max_candidates=3)
    best = legs[0]
    assert best.kind == "transfer"
    assert best.details["position_mismatch"] * EM.length_km < 1e-3   # under a metre
    t, s = best.trajectory(200)
    m = best.maneuvers[0]
    pa = best.patch_state
    v1 = np.linalg.norm(pa[3:6])
    v2 = np.linalg.norm(pa[3:6] + m.dv)
    bound = abs(3.15 - 3.14) / (v1 + v2)
    assert v1**2 - v2**2 == pytest.approx(3.14 - 3.15, abs=1e-9)
    dv = np.linalg.norm(m.dv)
    assert bound <= dv <= 1.05 * bound
    assert best.dv_mps == pytest.approx(EM.mps(dv))
    assert 5.0 < best.dv_mps < 10.0


def test_spatial_halo_to_halo_position_matched_patch():
    # Earth-Moon L1 and L2 halos at one energy (C = 3.15): the tubes' cuts on x = 1 - mu are
    # curves in 4-D; where their (y, z) projections cross, Newton on the two departure phases
    # matches the positions, and the velocity mismatch left is the patch dv, minimised by
    # moving the patch plane. Candidates come back in increasing dv.
    from cr3bp.dynamics import jacobi

    from _orbit_fixtures import halo_jacobi
    a = halo_jacobi(EM, "L1", 3.15)
    b = halo_jacobi(EM, "L2", 3.15)
    assert abs(a.state[2]) > 0.01 and abs(b.state[2]) > 0.01
    legs, tu, ts = connect(a, b, "x=1-mu", 30, max_candidates=1)
    dvs = [g.dv_mps for g in legs]
    assert dvs == sorted(dvs)
    for g in legs:
        assert g.details["matched"] == ["y", "z"]
        assert g.details["position_mismatch"] * EM.length_km < 1e-3
        assert g.kind == "transfer" and g.dv_mps > 1.0
        assert g.dv_mps <= g.details["dv_mps_on_given_plane"]
        assert abs(g.patch_state[0] - g.details["patch_plane_value"]) < 1e-12
        m = g.maneuvers[0]
        assert g.dv_mps == pytest.approx(EM.mps(np.linalg.norm(m.dv)))
        t, s = g.trajectory(100)
        assert np.max(np.abs(jacobi(EM.mu, s) - 3.15)) < 1e-9
