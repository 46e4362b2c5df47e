"""Transit and non-transit orbits (Conley, "Low energy transit orbits in the restricted
three-body problem", SIAM J. Appl. Math. 16, 1968; Koon, Lo, Marsden & Ross, *Dynamical
Systems, the Three-Body Problem and Space Mission Design*, 2011, §2.6 and §3.3).

Conley's theorem: at an energy just above that of L1 (Jacobi constant just below C(L1)), the
orbits that pass through the neck about L1 between the Earth's and the Moon's realms are
exactly those inside the tube formed by the stable manifold of the L1 Lyapunov orbit; those
just outside it bounce back. The test cuts the tube on a plane across the neck on the Earth
side, puts states just inside and just outside the cut at the same energy, and checks with
the integrator which ones pass into the Moon's realm — and that ``transit.transit``
classifies each one the same way.
"""

import numpy as np
import pytest

from cr3bp import plane, propagate, system
from cr3bp.tubes.transit import necks_open, transit
from cr3bp.dynamics import omega
from cr3bp.errors import NoSolutionError
from cr3bp.tubes.manifolds import grow_tube

from _orbit_fixtures import collinear_x, lyapunov, point_jacobi

EM = system("earth-moon")
OFFSET = 0.03  # LU either side of L1: the neck's two mouths


@pytest.fixture(scope="module")
def cut():
    c = point_jacobi(EM.mu, "L1") - 0.003   # energy just above L1's
    xl = collinear_x(EM.mu, "L1")
    orbit = lyapunov(EM, "L1", c)
    tube = grow_tube(orbit, "stable", "exterior", 40, [f"section:x={xl - OFFSET}:+", "time:6TU"])
    cut = tube.section_cut()
    assert cut.closed
    return c, xl, cut


def _states(c, x, pts):
    vy = pts[:, 1]
    v2 = 2 * np.array([omega(EM.mu, x, y, 0.0) for y in pts[:, 0]]) - c - vy**2
    ok = v2 > 0
    s = np.zeros((int(ok.sum()), 6))
    s[:, 0], s[:, 1], s[:, 3], s[:, 4] = x, pts[ok, 0], np.sqrt(v2[ok]), vy[ok]
    return s


def _passes(c, xl, s):
    arc = propagate(EM, s, 10.0, events=[plane("x", xl + OFFSET, 1, True),
                                         plane("x", xl - OFFSET, -1, True)])
    return arc.events[-1].event == 0  # reached the Moon side of the neck first


@pytest.mark.parametrize("scale, expect", [(0.5, True), (0.9, True), (1.1, False), (1.5, False)])
def test_inside_the_tube_transits_outside_does_not(cut, scale, expect):
    c, xl, k = cut
    poly = k.polygon()
    centre = poly.mean(axis=0)
    pts = centre + scale * (poly[::3] - centre)
    states = _states(c, xl - OFFSET, pts)
    assert len(states) >= 5
    assert np.all(transit(k, states) == expect)
    for s in states:
        assert _passes(c, xl, s) == expect


def test_no_transit_below_the_neck_energy():
    # Below L1's energy (C above C(L1)) the neck is closed: nothing passes (Koon et al. 2011, §2.4)
    with pytest.raises(NoSolutionError, match="neck"):
        necks_open(EM, point_jacobi(EM.mu, "L1") + 1e-3, ("L1",))
    necks_open(EM, point_jacobi(EM.mu, "L2") - 1e-3, ("L1", "L2"))
