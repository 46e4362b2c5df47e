"""The vertical and axial families reached both ways, and the two ways agree.

Source of the family connections: Doedel, Romanov, Paffenroth, Keller, Dichmann, Galán-Vioque &
Vanderbauwhede, "Elemental periodic orbits associated with the libration points in the circular
restricted 3-body problem", Int. J. Bifurcation and Chaos 17 (2007) (from memory): the axial
family connects the planar Lyapunov family (at its second out-of-plane branch point) with the
vertical family (at a branch point of the vertical family).

* vertical by branching: Lyapunov -> axial -> (junction) -> vertical, compared with the vertical
  family grown from its linear seed at equal Jacobi constants;
* axial from the seed: linear vertical seed -> vertical family -> (+1 crossing) -> axial,
  compared with the axial family branched from the Lyapunov family at equal Jacobi constants.
"""

import numpy as np
import pytest

from cr3bp.orbits import continuation, families

import _orbit_cache as cache

#: agreement of two independently reached members after correction (LU, LU/TU and TU)
AGREE = 1e-9


def _same_member(em, fam_a, fam_b, C):
    """The member of fam_a at Jacobi C and the closest member of fam_b at C (families may fold in C)."""
    a = continuation.solve_on_members(em, "x-axis", fam_a.members, "jacobi", C)
    best = None
    ms = fam_b.members
    for k in range(len(ms) - 1):
        if (ms[k].jacobi - C) * (ms[k + 1].jacobi - C) <= 0:
            b = continuation.solve_on_members(em, "x-axis", ms[k:k + 2], "jacobi", C)
            if best is None or np.linalg.norm(b.state - a.state) < np.linalg.norm(best.state - a.state):
                best = b
    assert best is not None, f"the second family does not reach C = {C}"
    return a, best


@pytest.mark.parametrize("point", ["L1", "L2"])
def test_vertical_by_branching_matches_the_seeded_vertical_family(point):
    em = cache.em()
    vb, junction = families.vertical_by_branching(em, point, axial=cache.axial_from_lyapunov(point),
                                                  stops=continuation.Stops(max_members=25))
    seeded = cache.vertical_to_branch_point(point)
    # the junction is a vertical orbit: both axis crossings at the same point (z -> -z symmetry)
    assert abs(families._x_half_gap(em, junction)) < 1e-9
    # every branched member is vertical, not axial
    for m in vb.members:
        assert abs(families._x_half_gap(em, m)) < 1e-9
        assert m.periodicity_error < 1e-10
    cs = [m.jacobi for m in vb.members]
    lo = max(min(cs), min(m.jacobi for m in seeded.members))
    hi = min(max(cs), max(m.jacobi for m in seeded.members))
    assert hi > lo + 1e-3, "the two computations must overlap in Jacobi constant"
    for C in (lo + 0.25 * (hi - lo), lo + 0.75 * (hi - lo)):
        a, b = _same_member(em, vb, seeded, C)
        assert np.linalg.norm(a.state - b.state) < AGREE
        assert a.period == pytest.approx(b.period, abs=AGREE)


@pytest.mark.parametrize("point", ["L1", "L2"])
def test_axial_from_the_vertical_seed_matches_the_lyapunov_branch(point):
    em = cache.em()
    av, bif = families.axial_from_vertical(em, point, vertical=cache.vertical_to_branch_point(point),
                                           stops=continuation.Stops(max_members=30))
    assert bif.kind == "+1"
    # axial, not vertical: the two axis crossings are at different points
    for m in av.members[5:]:
        assert abs(families._x_half_gap(em, m)) > 1e-4
        assert m.periodicity_error < 1e-10
    lyap_axial = cache.axial_from_lyapunov(point)
    for C in (av.members[12].jacobi, av.members[-2].jacobi):
        a, b = _same_member(em, av, lyap_axial, C)
        assert np.linalg.norm(a.state - b.state) < AGREE
        assert a.period == pytest.approx(b.period, abs=AGREE)


def test_axial_from_the_vertical_seed_ends_at_the_lyapunov_branch_point():
    """Grown to vz = 0 at the node, the axial family from the vertical side is planar again: it
    is the Lyapunov orbit at the second out-of-plane branch point (Doedel et al. 2007, from
    memory). That branch point is located by the index crossing +1, whose accuracy near a
    branch point is ~1e-7 in Jacobi constant (two multipliers meet at 1); tolerance 1e-6."""
    em = cache.em()
    av, _ = families.axial_from_vertical(em, "L1", vertical=cache.vertical_to_branch_point("L1"),
                                         stops=continuation.Stops(max_members=400, target=("vz", 0.0)))
    assert av.target is not None, av.stop_reason
    bp = [b for b in cache.lyapunov("L1", branch_points=2, max_members=600).bifurcations
          if b.kind == "+1" and b.which == 1][1]
    assert av.target.jacobi == pytest.approx(bp.orbit.jacobi, abs=1e-6)
    assert np.max(np.abs(av.target.state - bp.orbit.state)) < 1e-6
