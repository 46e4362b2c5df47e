"""Orbit-to-orbit transfers at different energies through one manoeuvre on a common section.

At a point on the section both trajectories share 2 Omega, so |v1|^2 - |v2|^2 = C2 - C1 and
any patch needs |dv| >= ||v1| - |v2|| = |C2 - C1| / (|v1| + |v2|) (the energy identity of
systems.py); the minimum-dv patch, where the velocities are nearly parallel, comes close to
that bound. Positions must match exactly.
"""

import numpy as np
import pytest

from cr3bp import system
from cr3bp.connections import connect

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
    assert 5.0 < best.dv_mps < 15.0
