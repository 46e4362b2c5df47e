"""Facts of the trade about periodic orbits, each with its source or marked
"common practice" / "from memory".

* Sun–Earth L1 halos of the size flown since the late 1970s (Az ~ 110 000 km) have periods
  near six months, about 178 days (Farquhar et al. on the ISEE-3 halo orbit; Richardson 1980;
  common practice, from memory).
* The Earth–Moon L2 9:2 synodic-resonant southern near-rectilinear halo (period = 2/9 of a
  synodic month, ~6.56 d) has a perilune radius of a few thousand km (about 3 200-3 400 km),
  apolune radius near 70 000 km, and is nearly stable: stability indices of order 1
  (Zimovan, Howell & Davis, "Near rectilinear halo orbits and their application in cis-lunar
  space", 3rd IAA Conference on Dynamics and Control of Space Systems, 2017; from memory).
* Planar distant retrograde orbits in Earth–Moon are linearly stable over a wide range of
  sizes (Hénon 1969, family f; common practice).
* Halo families bifurcate from the planar Lyapunov families where the out-of-plane stability
  index reaches +1; in Earth–Moon this happens at Jacobi constant ~3.1743 (L1) and ~3.1521
  (L2) (Grebow, "Generating periodic orbits in the circular restricted three-body problem
  with applications to lunar south pole coverage", MSc thesis, Purdue, 2006; Doedel et al.,
  Int. J. Bifurcation and Chaos 17, 2007; from memory), with x-amplitude about 0.10 and 0.18
  in units of gamma (Richardson 1980's Ax_min, also checked in test_against_richardson_1980).
"""

import numpy as np
import pytest

from cr3bp import propagate, system
from cr3bp.orbits import continuation, families, targets
from cr3bp.orbits.request import solve_request

import _orbit_cache as cache

ONE_KM = 1.0


def test_sun_earth_l1_halo_period_near_six_months():
    se = system("sun-earth")
    o = solve_request(se, "halo L1 north az=110000km")
    assert o.amplitude_km["z"] == pytest.approx(110000.0, abs=ONE_KM)
    assert 172.0 < o.period_days < 184.0        # ~178 d (from memory)


def test_synodic_month():
    # mean synodic month 29.530589 d (Astronomical Almanac; from memory)
    assert targets.SYNODIC_MONTH_DAYS == pytest.approx(29.530589, abs=2e-5)
    assert targets.synodic_period_days(9, 2) == pytest.approx(6.5624, abs=1e-4)


def test_earth_moon_9_2_nrho():
    em = cache.em()
    o = cache.nrho_9_2()
    assert o.period_days == pytest.approx(2 * targets.SYNODIC_MONTH_DAYS / 9, abs=1e-9)
    assert o.branch == "south" and o.state[2] < 0          # apolune south of the plane
    perilune = o.closest_approach_km["moon"]
    assert 2500.0 < perilune < 4500.0                        # "a few thousand km"
    t = np.linspace(0.0, o.period, 4001)
    tr = propagate(em, o.state, o.period, t_eval=t).states
    apolune = np.linalg.norm(tr[:, :3] - [1 - em.mu, 0, 0], axis=1).max() * em.length_km
    assert 65000.0 < apolune < 76000.0                       # "near 70 000 km"
    nus = [abs(complex(v)) for v in o.stability_indices]
    assert max(nus) < 3.0                                    # order 1: nearly stable
    assert o.periodicity_error < 1e-10


def test_dro_linearly_stable_over_a_wide_range():
    fam = cache.dro()
    sizes = [m.state[0] - (1 - cache.em().mu) for m in fam.members]
    assert max(sizes) > 0.15 and min(sizes) < 0.05            # ~12 000 to > 58 000 km from the Moon
    for m in fam.members:
        assert m.stable, (m.state, m.stability_indices)


@pytest.mark.parametrize("point,jacobi,ax_gamma", [("L1", 3.1743, 0.10), ("L2", 3.1521, 0.18)])
def test_halo_bifurcation_on_lyapunov_family(point, jacobi, ax_gamma):
    from cr3bp.orbits._collinear import collinear_point
    fam = cache.lyapunov(point)
    bif = [b for b in fam.bifurcations if b.kind == "+1" and b.which == 1]
    assert len(bif) == 1
    o = bif[0].orbit
    assert o.jacobi == pytest.approx(jacobi, abs=5e-4)       # from memory, 4 digits
    g = collinear_point(cache.em().mu, point).gamma
    assert o.amplitude_lu[0] / g == pytest.approx(ax_gamma, abs=0.01)
    # at the located member the out-of-plane index is 1 to the solver's tolerance
    from cr3bp.orbits.stability import planar_indices
    assert planar_indices(o.monodromy)[1] == pytest.approx(1.0, abs=1e-8)


def test_halo_from_seed_and_from_branching_agree():
    """The L1 northern halo family reached from Richardson's seed and by branching at the
    Lyapunov bifurcation is the same family: members at equal z agree."""
    em = cache.em()
    branched, bif = families.branch_family(em, "halo", "L1", "north", stops=continuation.Stops(max_members=10),
                                           parent=cache.lyapunov("L1"))
    seeded = cache.halo("L1", "north")
    zs = [m.state[2] for m in branched.members]
    zlo = max(min(zs), min(m.state[2] for m in seeded.members))
    zhi = min(max(zs), max(m.state[2] for m in seeded.members))
    assert zhi > zlo, "the two computations must overlap in z"
    z = 0.5 * (zlo + zhi)
    a = continuation.solve_on_members(em, "xz", branched.members, "z", z)
    b = continuation.solve_on_members(em, "xz", seeded.members, "z", z)
    assert np.linalg.norm(a.state - b.state) < 1e-9
    assert a.period == pytest.approx(b.period, abs=1e-9)
