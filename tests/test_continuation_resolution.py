"""What the continuation finds does not depend on its step size: two crossings of a stability
index within one step are not stepped over, and a family ends at its limit (a primary's
surface, a bound), not wherever the last long step happened to land.

The case is the Earth–Moon L2 southern halo family, whose out-of-plane index touches -1 twice
near 12 d (0.04 d of period apart): with the default steps both crossings fell inside one
step and went unseen, and the family ended at 6.11 d or 5.96 d depending on the steps before.
The reference is the same family at a six times smaller largest step (a property test: step
refinement must not change what is found beyond tolerance).
"""

import numpy as np
import pytest

from cr3bp import system
from cr3bp.orbits import continuation, families
from cr3bp.orbits.continuation import _hidden_pair

EM = system("earth-moon")


def _nu(f):
    return lambda s: (complex(f(s)), complex(0.4))


@pytest.mark.parametrize("f,expected", [
    (lambda s: -1 + (s - 1.3) ** 2 - 0.01, True),    # dips through -1 between the last two
    (lambda s: -1 + (s - 1.3) ** 2 + 0.01, False),   # comes within 0.01 of -1 and turns back
    (lambda s: 1 - (s - 1.3) ** 2 + 0.01, True),     # the same at +1, from below
    (lambda s: -1 + (s - 0.6) ** 2 - 0.01, False),   # the dip lies before the middle member
    (lambda s: -1 + 0.3 * s + 0.5, False),           # monotone
])
def test_hidden_pair_on_parabolas(f, expected):
    nu = _nu(f)
    assert _hidden_pair((nu(0.0), nu(1.0), nu(2.0)), 1.0, 1.0) is expected


def test_complex_indices_are_left_to_the_discriminant():
    z = (complex(-0.9, 0.1), complex(0.4))
    assert _hidden_pair((z, z, z), 1.0, 1.0) is False


@pytest.fixture(scope="module")
def l2_south():
    default = families.grow_family(EM, "halo", "L2", "south")
    fine = families.grow_family(EM, "halo", "L2", "south", max_step=0.008)
    return default, fine


def test_default_steps_find_what_fine_steps_find(l2_south):
    default, fine = l2_south
    assert len(fine.members) > 2 * len(default.members)          # the reference really is finer
    kinds = [b.kind for b in default.bifurcations]
    assert kinds == [b.kind for b in fine.bifurcations]
    assert kinds.count("-1") >= 4                                # the close pair included
    pair = [b for b in default.bifurcations if b.kind == "-1" and abs(b.orbit.period_days - 12.0) < 0.1]
    assert len(pair) == 2 and abs(pair[0].orbit.period_days - pair[1].orbit.period_days) < 0.1
    for a, b in zip(default.bifurcations, fine.bifurcations):
        assert a.orbit.jacobi == pytest.approx(b.orbit.jacobi, abs=1e-7)
        assert np.abs(a.orbit.state - b.orbit.state).max() < 1e-6


def test_the_family_ends_at_the_surface_whatever_the_steps(l2_south):
    moon_km = EM.radii[1] * EM.length_km
    for fam in l2_south:
        assert fam.stop_reason.startswith("next member passes below its surface of moon")
        end = fam.members[-1]
        assert moon_km < end.closest_approach_km["moon"] < moon_km + 20.0
    assert l2_south[0].members[-1].period_days == pytest.approx(l2_south[1].members[-1].period_days, abs=0.02)


def test_a_bound_is_approached_before_the_family_stops():
    # measured: without the halving the last member lay 1.5e-3 above the bound, with it 3.2e-5
    stops = continuation.Stops(max_members=400, bounds={"jacobi": (3.02, None)})
    fam = families.grow_family(EM, "halo", "L2", "south", stops=stops)
    assert fam.stop_reason == "next member leaves the bound on jacobi"
    assert 3.02 <= fam.members[-1].jacobi < 3.02 + 2e-4
