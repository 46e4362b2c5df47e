"""Optimised orbit-to-orbit transfers (cr3bp.transfers.optimise) against the outside world.

Sources:

* Koon, Lo, Marsden & Ross, "Heteroclinic connections between periodic orbits and resonance
  transitions in celestial mechanics", Chaos 10, 2000, and Canalias & Masdemont, "Homoclinic
  and heteroclinic transfer trajectories between planar Lyapunov orbits in the Sun-Earth and
  Earth-Moon systems", Discrete Contin. Dyn. Syst. 14, 2006: planar Lyapunov orbits about L1
  and L2 at one Jacobi constant above the L2 value are joined by heteroclinic trajectories,
  which cost nothing. A transfer of finite time of flight between them costs a small Δv that
  tends to zero as the time grows: "a few m/s at most" is our bound for a month of flight.
* scipy's DOP853 (Hairer, Norsett & Wanner, Solving ODE I, 1993): independent re-propagation
  of each reported transfer's coasts closes on its burns and on the arrival orbit.
* Lawden, Optimal Trajectories for Space Navigation, 1963, ch. 3: the primer vector is the unit
  Δv direction at each impulse and |p| <= 1 on the coasts of an optimal transfer.
* The project's own numbers (the issue): the manifold patch L1 halo (Az 12 000 km) -> L2
  northern halo (Az 12 000 km) costs 384 m/s; the graph's two-impulse leg L1 halo -> 9:2 NRHO
  599-609 m/s. The optimiser must never cost more than the start it was given.
"""

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

import cr3bp
from cr3bp.errors import InputError
from cr3bp.transfers import optimise as O
from cr3bp.transfers.leg import Leg

#: Closure tolerance of a reported transfer re-propagated with scipy's DOP853 (km): 50 m. The
#: shooting boundaries join to about 1e-11 LU (4 mm), but one coast of ~19 days along the halos'
#: unstable directions amplifies that some 4000 times: measured 15.9 m at the end of the L1 -> L2
#: halo transfer's second coast (2026-12-03, after the merges), 0.1 m on its first coast. The
#: design reports the same number as ``details["closure_km"]``.
CLOSURE_TOL_KM = 0.05
#: The two-impulse targeted leg L1 halo -> 9:2 NRHO of the transfer graph (the issue's numbers).
GRAPH_NRHO_LEG_MPS = (599.0, 609.0)
#: The manifold patch L1 halo -> L2 northern halo (the issue's number; measured here too).
PATCH_HALO_MPS = 384.0


@pytest.fixture(scope="module")
def em():
    return cr3bp.system("earth-moon")


@pytest.fixture(scope="module")
def halo_transfer(em):
    """L1 northern halo (Az 12 000 km) -> L2 northern halo (Az 12 000 km), from the patch."""
    return cr3bp.optimise("halo L1 north az=12000km", "halo L2 north az=12000km", system=em, points=100)


@pytest.fixture(scope="module")
def lyapunov_transfer(em):
    """L1 -> L2 planar Lyapunov orbits at C = 3.15 (the heteroclinic case), from the patch."""
    return cr3bp.optimise("lyapunov L1 jacobi=3.15", "lyapunov L2 jacobi=3.15", system=em, points=60)


@pytest.fixture(scope="module")
def nrho_transfer(em):
    """L1 northern halo (Az 12 000 km) -> 9:2 L2 southern NRHO, from the phase sweep."""
    return cr3bp.optimise("halo L1 north az=12000km", "halo L2 south resonance=9:2", system=em, start="sweep")


def _scipy_end(system, state, dt):
    mu = system.mu

    def f(t, s):
        x, y, z, vx, vy, vz = s
        r1 = math.sqrt((x + mu) ** 2 + y * y + z * z)
        r2 = math.sqrt((x - 1 + mu) ** 2 + y * y + z * z)
        a = (1 - mu) / r1 ** 3
        b = mu / r2 ** 3
        return [vx, vy, vz, x + 2 * vy - a * (x + mu) - b * (x - 1 + mu), y - 2 * vx - a * y - b * y,
                -a * z - b * z]

    return solve_ivp(f, (0.0, dt), np.asarray(state, dtype=float), method="DOP853",
                     rtol=1e-12, atol=1e-12).y[:, -1]


def test_patch_start_improved_and_never_worse(halo_transfer):
    tr = halo_transfer
    assert tr.start.solution == "patch"
    assert tr.start.dv_mps == pytest.approx(PATCH_HALO_MPS, abs=5.0)     # the 384 m/s
    assert tr.optimised and tr.solution == "optimised"
    assert tr.dv_mps <= tr.start.dv_mps
    assert tr.dv_mps <= tr.details["start_flown_dv_mps"]
    assert tr.dv_mps < 0.6 * tr.start.dv_mps          # far below the patch
    assert tr.tof <= tr.max_tof * (1 + 1e-9)
    assert tr.iterations > 0
    assert [m["name"] for m in tr.maneuvers] == ["departure", "mid-course", "insertion"]
    # the energy gap alone needs some Δv: the optimiser did not cheat through a defect
    assert tr.details["defect_max"] <= O.DEFECT_TOL


def test_heteroclinic_near_zero(lyapunov_transfer):
    tr = lyapunov_transfer
    assert abs(tr.details["jacobi_from"] - tr.details["jacobi_to"]) < 1e-9
    assert tr.dv_mps < 3.0           # a few m/s at most (Koon et al. 2000; Canalias & Masdemont 2006)
    assert tr.dv_mps <= tr.details["start_flown_dv_mps"]


@pytest.mark.parametrize("which", ["halo_transfer", "lyapunov_transfer", "nrho_transfer"])
def test_dop853_closure(which, request, em):
    tr = request.getfixturevalue(which)
    worst = 0.0
    for (t0, s, dt), nxt in zip(tr.coasts(), tr.maneuvers[1:]):
        end = _scipy_end(em, s, dt)
        worst = max(worst, float(em.km(np.linalg.norm(end[:3] - nxt["position"]))))
    # the arrival orbit at the arrival phase, by scipy from the orbit's initial state
    on_orbit = _scipy_end(em, tr.orbit_to.state, tr.phase_to * tr.orbit_to.period)
    worst = max(worst, float(em.km(np.linalg.norm(on_orbit[:3] - tr.maneuvers[-1]["position"]))))
    on_start = _scipy_end(em, tr.orbit_from.state, tr.phase_from * tr.orbit_from.period)
    worst = max(worst, float(em.km(np.linalg.norm(on_start[:3] - tr.maneuvers[0]["position"]))))
    assert worst < CLOSURE_TOL_KM
    assert tr.details["closure_km"] < CLOSURE_TOL_KM


def test_nrho_against_the_two_impulse_leg(nrho_transfer):
    tr = nrho_transfer
    assert tr.start.solution == "first guess"
    assert tr.dv_mps <= tr.start.dv_mps
    assert tr.dv_mps < GRAPH_NRHO_LEG_MPS[0]


def test_primer_vector(halo_transfer, nrho_transfer):
    for tr in (halo_transfer, nrho_transfer):
        p = tr.primer
        assert p["max_norm_on_coasts"] is not None and p["max_norm_on_coasts"] >= 1.0 - 1e-9
        assert p["satisfied"] == (p["max_norm_on_coasts"] <= 1.0 + O.PRIMER_SLACK)


def test_leg_carries_the_solution(halo_transfer):
    leg = halo_transfer.leg()
    assert leg.optimised and leg.solution == "optimised"
    assert leg.start["solution"] == "patch"
    assert leg.dv_mps == pytest.approx(halo_transfer.dv_mps)
    d = leg.to_dict()
    assert d["optimised"] is True and d["solution"] == "optimised" and d["start"]["dv_mps"] > d["dv_mps"]


def test_leg_defaults_are_additive(em):
    leg = Leg(em, "a", "b", (), 0.0, 1.0, np.zeros(6), (), "test")
    assert leg.optimised is False and leg.solution == "patch" and leg.start == {}
    assert leg.to_dict()["start"] is None


def test_to_dict_fields(halo_transfer):
    d = halo_transfer.to_dict()
    for key in ("maneuvers", "dv_mps", "tof_days", "start_dv_mps", "optimised", "active_bounds", "model",
                "iterations", "primer"):
        assert key in d
    assert d["model"] == "cr3bp"
    assert sum(m["dv_mps"] for m in d["maneuvers"]) == pytest.approx(d["dv_mps"])
    for m in d["maneuvers"]:
        assert set(m) >= {"name", "t_days", "dv_mps", "position_km"}


def test_fallback_returns_the_start(em, monkeypatch):
    """When the optimiser cannot beat the start, the start comes back, marked as such."""
    oa = cr3bp.orbit(em, "lyapunov L1 jacobi=3.15")
    ob = cr3bp.orbit(em, "lyapunov L2 jacobi=3.15")
    pa, pb = O._OrbitPoints(oa), O._OrbitPoints(ob)
    start = O.two_impulse(em, pa, pb, 0.25, 0.75, 3.0)
    assert start is not None
    monkeypatch.setattr(O, "MAX_ITERATIONS", 0)
    tr = O.optimise_transfer(oa, ob, start, impulses=2)
    assert tr.solution == "first guess" and not tr.optimised
    assert tr.dv_mps == pytest.approx(start.dv_mps, rel=1e-9)
    assert "not_optimised" in tr.details


def test_bad_impulses(em):
    with pytest.raises(InputError, match="impulses = 4"):
        cr3bp.optimise("lyapunov L1 jacobi=3.15", "lyapunov L2 jacobi=3.15", system=em, impulses=4)
    with pytest.raises(InputError, match="parking orbit"):
        cr3bp.optimise("parking earth 200km", "lyapunov L2 jacobi=3.15", system=em)


def test_time_cap_binds_and_is_reported(em, nrho_transfer):
    """With a cap below the unconstrained optimum's time of flight (5.9 d), the cap binds, is
    reported among the active bounds, and costs more than the free optimum."""
    cap_days = 4.0
    assert nrho_transfer.tof_days > cap_days
    tr = cr3bp.optimise("halo L1 north az=12000km", "halo L2 south resonance=9:2", system=em, start="sweep",
                        max_tof=f"{cap_days}d")
    assert tr.tof_days <= cap_days * (1 + 1e-9)
    assert tr.optimised and "max_tof" in tr.active_bounds      # measured: 598.4 m/s in 4.0 d
    assert tr.dv_mps >= nrho_transfer.dv_mps - 1e-6
    assert "max_tof" not in nrho_transfer.active_bounds


def test_a_trial_point_inside_a_body_is_answered_not_raised(em):
    """SLSQP's line search may try a node inside a primary (measured on one machine: the L1 -> L2
    Lyapunov transfer above put one 978 km from the Earth's centre, and the optimisation ended in
    a StateError). The functions SLSQP sees answer such a point with a large objective and large
    defects, and the segment's propagation really refuses it."""
    from cr3bp.errors import StateError
    from cr3bp.transfers import optimise as opt
    with pytest.raises(StateError, match="inside earth"):
        cr3bp.propagate(em, [-em.mu + 1e-3, 0, 0, 0, 5.0, 0], 0.1)

    class Stub:
        nz = 3

        def evaluate(self, z):
            if z[0] > 1.0:
                raise opt._Infeasible("inside", 0, [], z)

        def fun(self, z):
            self.evaluate(z)
            return float(z @ z)

        def jac(self, z):
            self.evaluate(z)
            return 2 * z

        def eq(self, z):
            self.evaluate(z)
            return z[:2].copy()

        def eq_jac(self, z):
            self.evaluate(z)
            return np.eye(2, 3)

    pbm = Stub()
    fun, jac, eq, eq_jac = opt._guarded(pbm, np.zeros(3))
    bad = np.array([2.0, 0.0, 0.0])
    assert fun(bad) == opt.INFEASIBLE_VALUE and np.all(eq(bad) == opt.INFEASIBLE_VALUE) and eq(bad).shape == (2,)
    assert not np.any(jac(bad)) and eq_jac(bad).shape == (2, 3)
    assert fun(np.ones(3) * 0.5) == pytest.approx(0.75)
    assert opt._feasible(pbm, np.zeros(3)) and not opt._feasible(pbm, bad)
    assert opt._polish(pbm, bad, or_else="kept") == "kept"
