"""Continuation stops when a family closes on itself: two real families of the Earth-Moon system
whose continuation curves are loops, checked from the API and from ``librate family``.

Why these families close (symmetry of the problem, Szebehely, *Theory of Orbits*, 1967, §2.6:
the CR3BP is invariant under z -> -z and under (y, z, t) -> (-y, -z, -t)). Orbits symmetric
about the x axis are found with unknowns X = (x, vy, vz, T/2) at an x-axis crossing.

* The axial family leaves the planar Lyapunov family at its second out-of-plane branch point
  and meets the vertical family (Doedel et al., "Elemental periodic orbits associated with the
  libration points in the circular restricted 3-body problem", Int. J. Bifurcation and Chaos
  17, 2007, from memory). Past the vertical orbit the continuation runs through the z-mirror
  images, reaches the same Lyapunov orbit at its *other* x-axis crossing, and comes back by the
  mirror arcs to the first member: a closed curve in X. The check on the loop is that it does
  pass through that other crossing, whose position scipy gives independently.
* The vertical family runs from the Lagrange point out to a planar orbit (vz = 0 at the node),
  then back through its mirror images (vz < 0: the same orbits seen from their other passage
  through the node, since vertical orbits are symmetric about the x-y plane) to the first member.
"""

import json

import numpy as np
import pytest

from cr3bp.orbits import continuation, families, shooting
from librate_cli.main import main

import _independent_cr3bp as ind
import _orbit_cache as cache

SYM = shooting.symmetry("x-axis")
ONE_KM_LU = 1.0 / 384400.0           # Earth-Moon length unit 384 400 km (systems table)
ONE_CM_S_VU = 1e-5 / 1.024547        # velocity unit 1.024547 km/s
ONE_S_TU = 1.0 / (4.34248 * 86400)   # time unit 4.34248 d
AXIAL_MAX_STEP = 0.03                # steps the axial loop in ~110 members


def _unknowns(members):
    return np.array([shooting.pack(SYM, m.state, m.period / 2.0) for m in members])


def _check_stopped_at_the_return(fam):
    """The last member is the first one back within a step of the first member: it lies within
    one step of it, and no earlier member (past the first ten) came within half a step."""
    assert "closed" in fam.stop_reason
    X = _unknowns(fam.members)
    d = np.linalg.norm(X - X[0], axis=1)
    steps = np.r_[np.nan, np.linalg.norm(np.diff(X, axis=0), axis=1)]
    assert d[-1] < steps[-1]
    assert np.all(d[11:-1] > 0.5 * steps[11:-1])
    # the loop is not a short hop: it goes far from the first member before coming back
    assert d.max() > 20 * np.nanmax(steps)
    return X


@pytest.fixture(scope="module")
def axial_loop():
    return families.grow_family(cache.em(), "axial", "L1", stops=continuation.Stops(max_members=400),
                                max_step=AXIAL_MAX_STEP)


def test_axial_family_closes_through_the_other_crossing_of_its_lyapunov_orbit(axial_loop):
    fam = axial_loop
    X = _check_stopped_at_the_return(fam)
    vz = X[:, 2]
    # one pass through vz = 0 away from the ends: the Lyapunov orbit at its other crossing
    flips = [k for k in np.nonzero(np.sign(vz[1:]) != np.sign(vz[:-1]))[0] if 2 <= k < len(vz) - 3]
    assert len(flips) == 1
    k = flips[0]
    near = slice(k - 1, k + 3)
    at_zero = [np.polyval(np.polyfit(vz[near], X[near, c], 3), 0.0) for c in (0, 1, 3)]
    # the branch point of the Lyapunov family, propagated half a period by scipy (independent)
    lyap = cache.lyapunov("L1", branch_points=2, max_members=600)
    bp = [b for b in lyap.bifurcations if b.kind == "+1" and b.which == 1][1].orbit
    assert fam.members[0].state[0] == pytest.approx(bp.state[0], abs=1e-4)
    other = ind.propagate(cache.em().mu, bp.state, bp.period / 2.0, rtol=1e-13, atol=1e-13)
    assert abs(other[1]) < 1e-10 and abs(other[3]) < 1e-10     # a perpendicular x-axis crossing
    # cubic interpolation over steps of 0.03 (measured: 3e-8 LU = 12 m, 4e-7 VU = 0.4 mm/s,
    # 4e-8 TU = 0.015 s)
    assert at_zero[0] == pytest.approx(other[0], abs=1.0 * ONE_KM_LU)
    assert at_zero[1] == pytest.approx(other[4], abs=1.0 * ONE_CM_S_VU)
    assert at_zero[2] == pytest.approx(bp.period / 2.0, abs=1.0 * ONE_S_TU)
    # the far arc is the mirror image of the near one: the loop is traversed once
    assert np.min(vz) < -0.4 < 0.4 < np.max(vz)


def test_axial_family_closure_from_the_command_line(axial_loop, capsys):
    rc = main(["family", "--system", "earth-moon", "--family", "axial", "--point", "L1", "--members", "400",
               "--max-step", str(AXIAL_MAX_STEP), "--format", "json", "-q"])
    out = capsys.readouterr()
    assert rc == 0, out.err
    d = json.loads(out.out)
    assert "closed" in d["stop_reason"]
    assert len(d["members"]) == len(axial_loop.members)
    assert np.allclose(d["members"][-1]["state"], axial_loop.members[-1].state, atol=1e-10)
    assert d["stop_reason"] == axial_loop.stop_reason and d["until_reached"] is None


def test_until_a_value_the_loop_never_reaches_stops_at_the_closure(axial_loop, capsys):
    argv = ["family", "--system", "earth-moon", "--family", "axial", "--point", "L1", "--members", "400",
            "--max-step", str(AXIAL_MAX_STEP), "-q"]
    # the loop's Jacobi constants stay within 2.9918..3.0214: 2.5 is never reached
    rc = main(argv + ["--until", "jacobi=2.5", "--format", "json"])
    d = json.loads(capsys.readouterr().out)
    assert rc == 0 and "closed" in d["stop_reason"] and d["until_reached"] is False and d["target"] is None
    assert len(d["members"]) == len(axial_loop.members)
    rc = main(argv + ["--until", "jacobi=2.5"])
    out = capsys.readouterr().out
    lo = min(m.jacobi for m in axial_loop.members)
    hi = max(m.jacobi for m in axial_loop.members)
    assert f"--until jacobi=2.5 was not reached: the members cover jacobi from {lo:.10g} to {hi:.10g}" in out
    assert "CAUTION" in out
    # a value on the loop is reached first (going down from the first member's 3.0214), before the
    # loop closes, and solved exactly
    rc = main(argv + ["--until", "jacobi=3.0", "--format", "json"])
    d = json.loads(capsys.readouterr().out)
    assert rc == 0 and d["until_reached"] is True and "target jacobi" in d["stop_reason"]
    assert d["target"]["jacobi"] == pytest.approx(3.0, abs=1e-11)
    assert len(d["members"]) < len(axial_loop.members) // 2


def test_vertical_family_closes_through_its_planar_orbit_and_mirror_images():
    em = cache.em()
    fam = families.grow_family(em, "vertical", "L1", stops=continuation.Stops(max_members=600),
                               max_step=0.05, locate_bifurcations=False)
    X = _check_stopped_at_the_return(fam)
    vz = X[:, 2]
    assert vz[0] > 0
    # the family turns at a planar orbit (vz changes sign far from the first member)
    d = np.linalg.norm(X - X[0], axis=1)
    k = [k for k in np.nonzero(np.sign(vz[1:]) != np.sign(vz[:-1]))[0] if d[k] > 0.5 * d.max()]
    assert len(k) == 1
    k = k[0]
    near = slice(k - 1, k + 3)
    x0, vy0, tau = (np.polyval(np.polyfit(vz[near], X[near, c], 3), 0.0) for c in (0, 1, 3))
    planar = ind.propagate(em.mu, [x0, 0, 0, 0, vy0, 0], tau, rtol=1e-13, atol=1e-13)
    # a perpendicular crossing of the x axis at T/2: a planar periodic orbit (scipy, independent);
    # the bound is set by the interpolation in vz over steps of 0.05 (measured 3e-6 and 4e-6)
    assert abs(planar[1]) < 1e-5 and abs(planar[3]) < 1e-5
    # the return leg (vz < 0) is the mirror image: each member's state at T/2 is the z-mirror of
    # its initial state (scipy), so the family retraces its orbits and comes back to the first
    for m in (fam.members[5], fam.members[k // 2], fam.members[k + (len(vz) - k) // 2], fam.members[-5]):
        half = ind.propagate(em.mu, m.state, m.period / 2.0, rtol=1e-13, atol=1e-13)
        mirror = np.array(m.state) * np.array([1, 1, 1, 1, 1, -1])
        assert np.allclose(half, mirror, atol=1e-8)
    assert min(vz) < 0


def _closed_family_json(capsys, family, members, max_step):
    """`librate family` of an Earth-Moon L1 family with long steps, as JSON; it must close."""
    rc = main(["family", "--system", "earth-moon", "--family", family, "--point", "L1", "--members",
               members, "--max-step", max_step, "--step", "0.004", "--format", "json", "-q"])
    out = capsys.readouterr()
    assert rc == 0, out.err
    d = json.loads(out.out)
    assert "closed" in d["stop_reason"]
    return d


def test_long_steps_through_the_lagrange_point_do_not_land_on_the_point_itself(capsys):
    """Near the Lagrange point the vertical family shrinks to the point, where the half-period
    conditions also hold at rest for any T/2 (a line of equilibria crossing the family). With
    long steps the corrector used to land on that line and slide along it: members of zero size
    (1e-20 LU), T/2 falling to zero, and a stop on "half period became non-positive". Such a
    member is now refused like a failed step, and the family closes."""
    d = _closed_family_json(capsys, "vertical", "700", "0.045")
    sizes = [max(m["amplitude_lu"].values()) for m in d["members"]]
    assert min(sizes) == pytest.approx(sizes[0], rel=0.5)     # the first (smallest) member: 290 km
    X = np.array([[m["state"][0], m["state"][4], m["state"][5], m["period"] / 2] for m in d["members"]])
    assert np.linalg.norm(X[-1] - X[0]) < np.linalg.norm(X[-1] - X[-2])


def test_long_steps_across_the_vertical_junction_stay_on_the_axial_family(capsys):
    """The axial family crosses the vertical family at their junction (a branch point of the
    x-axis-symmetric orbits). A long step across it used to land on the vertical family and go
    on along it, silently, as "axial" members (with these options: 300 members, never closing).
    Now a step whose tangent turns by more than 60 degrees is refused and halved: the family
    stays axial and closes, and its path has no corner."""
    d = _closed_family_json(capsys, "axial", "300", "0.04")
    X = np.array([[m["state"][0], m["state"][4], m["state"][5], m["period"] / 2] for m in d["members"]])
    chords = np.diff(X, axis=0)
    chords /= np.linalg.norm(chords, axis=1)[:, None]
    assert np.min(np.sum(chords[1:] * chords[:-1], axis=1)) > 0.9
