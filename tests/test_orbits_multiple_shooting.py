"""Multiple shooting: converges from perturbed patch points, agrees with single shooting, and
handles starts off any symmetry plane."""

import numpy as np
import pytest

from cr3bp.errors import ConvergenceError, InputError
from cr3bp.orbits import multiple
from cr3bp.orbits.stability import stability_indices

import _orbit_cache as cache


def test_nrho_from_perturbed_patches():
    em = cache.em()
    o = cache.nrho_9_2()
    P, d = multiple.patches_from_trajectory(em, o.state, o.period, 8)
    rng = np.random.default_rng(1)
    P = P + rng.normal(0, 1e-5, P.shape)
    d = d * (1 + rng.normal(0, 1e-4, d.shape))
    P[0, 1] = 0.0
    m = multiple.correct_multiple(em, P, d, phase=("y", 0.0), hold=("period", o.period))
    assert m.periodicity_error < 1e-10
    assert max(m.extra["defects"]) < 1e-11
    assert m.period == pytest.approx(o.period, abs=1e-12)
    assert np.linalg.norm(m.state - o.state) < 1e-9
    for a, b in zip(stability_indices(m.monodromy), o.stability_indices):
        assert complex(a).real == pytest.approx(complex(b).real, abs=1e-6)


def test_asymmetric_start_jacobi_held():
    """Patch 0 placed a quarter period along a halo (off the symmetry plane), phase held in x."""
    em = cache.em()
    o = cache.halo("L2", "south").members[8]
    P, d = multiple.patches_from_trajectory(em, o.state, o.period, 6)
    P, d = np.roll(P, -1, axis=0), np.roll(d, -1)
    P = P * (1 + 1e-6)
    m = multiple.correct_multiple(em, P, d, phase=("x", float(P[0, 0])), hold=("jacobi", o.jacobi))
    assert m.periodicity_error < 1e-10
    assert m.period == pytest.approx(o.period, abs=1e-9)
    assert m.jacobi == pytest.approx(o.jacobi, abs=1e-12)
    assert np.linalg.det(m.monodromy) == pytest.approx(1.0, abs=1e-8)


def test_bad_input_and_non_convergence():
    em = cache.em()
    with pytest.raises(InputError):
        multiple.correct_multiple(em, np.zeros((1, 6)), [1.0])
    o = cache.halo("L1", "north").members[2]
    P, d = multiple.patches_from_trajectory(em, o.state, o.period, 4)
    with pytest.raises(ConvergenceError) as e:
        multiple.correct_multiple(em, P + 0.05, d, max_iter=1)
    assert e.value.iterations >= 1 and e.value.residuals


def test_residual_floor_accepted_and_recorded():
    """A tolerance below what double precision and the 1e-13 integration allow: the Newton stalls
    at the floor (below multiple.FLOOR) and says so instead of failing or looping."""
    em = cache.em()
    o = cache.halo("L2", "south").members[8]
    P, d = multiple.patches_from_trajectory(em, o.state, o.period, 6)
    m = multiple.correct_multiple(em, P * (1 + 1e-6), d, hold=("jacobi", o.jacobi), tol=1e-18)
    assert m.extra["stalled_at"] < multiple.FLOOR
    assert m.periodicity_error < 1e-10
