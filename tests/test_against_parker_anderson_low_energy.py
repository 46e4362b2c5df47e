"""Low-energy (ballistic) lunar transfers with the Sun's pull, against published ones and against
an independent re-propagation with scipy.

Sources (all from memory):

* J. S. Parker & R. L. Anderson, *Low-Energy Lunar Trajectory Design*, JPL Deep Space
  Communications and Navigation Series, 2013, ch. 3: transfers from low Earth orbit with a
  departure burn of about 3.1-3.2 km/s (C3 about -0.7 km^2/s^2), 70-130 days of flight, out to
  about 1-1.5 million km, and a lunar-orbit insertion of tens of m/s or less (nearly ballistic).
* E. A. Belbruno & J. K. Miller, "Sun-perturbed Earth-to-Moon transfers with ballistic
  capture", J. Guid. Control Dyn. 16 (1993): apogee near 1.4 million km, about 3-4 months.
* The equations of motion of the bicircular model in the form of Simo, Gomez, Jorba &
  Masdemont, "The bicircular model near the triangular libration points of the RTBP" (1995):
  the Sun at ``(a_s cos(w t + p), -a_s sin(w t + p))`` with ``w`` the synodic rate (positive),
  direct pull ``-m_s (r - r_s)/|r - r_s|^3`` and the indirect term ``-m_s r_s / a_s^3``;
  written out below in plain numpy, independently of the project's kernels.
"""

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from cr3bp import systems
from cr3bp.orbits.request import solve_request
from cr3bp.transfers import low_energy as le

EM = systems.system("earth-moon")
KM = 1.0 / EM.length_km          # one km in LU
ONE_KM = KM


@pytest.fixture(scope="module")
def transfer():
    orbit = solve_request(EM, "halo L2 south resonance=9:2")
    # four Sun phases instead of the full sweep: enough to find one transfer, and quick
    return le.design_low_energy(orbit, 200.0, sun_phases=np.arange(4) * (np.pi / 2))


def simo_rhs(t, s, mu, m_s, a_s, w, p):
    """The bicircular model in the form of Simo et al. (1995), written out here: the Sun at
    ``a_s (cos(w t + p), -sin(w t + p))``, ``w > 0``."""
    x, y, z, vx, vy, vz = s
    xs, ys = a_s * math.cos(w * t + p), -a_s * math.sin(w * t + p)
    r1 = math.sqrt((x + mu) ** 2 + y * y + z * z)
    r2 = math.sqrt((x - 1 + mu) ** 2 + y * y + z * z)
    rs = math.sqrt((x - xs) ** 2 + (y - ys) ** 2 + z * z)
    ax = x - (1 - mu) * (x + mu) / r1 ** 3 - mu * (x - 1 + mu) / r2 ** 3 - m_s * (x - xs) / rs ** 3 - m_s * xs / a_s ** 3
    ay = y - (1 - mu) * y / r1 ** 3 - mu * y / r2 ** 3 - m_s * (y - ys) / rs ** 3 - m_s * ys / a_s ** 3
    az = -(1 - mu) * z / r1 ** 3 - mu * z / r2 ** 3 - m_s * z / rs ** 3
    return [vx, vy, vz, ax + 2 * vy, ay - 2 * vx, az]


def _simo_args(model):
    # our theta(t) = theta_0 + omega_s t with omega_s < 0 is Simo's -(w t + p): w = -omega_s, p = -theta_0
    return (model.system.mu, model.sun_mass_ratio, model.sun_distance, -model.sun_rate, -model.sun_phase)


def test_published_order_of_a_low_energy_transfer(transfer):
    """Parker & Anderson (2013, ch. 3) and Belbruno & Miller (1993), from memory."""
    tr = transfer
    assert 3100.0 <= tr.departure_dv_mps <= 3200.0
    assert tr.insertion_dv_mps <= 50.0                 # tens of m/s or less
    assert 70.0 <= tr.tof_days <= 130.0               # three to four months
    assert 1.0e6 <= tr.max_distance_km <= 1.6e6        # about 1-1.5 million km
    assert -0.9 <= tr.c3_km2_s2 <= -0.4                # just short of escape
    d = tr.to_dict()
    assert [m["name"] for m in d["maneuvers"]] == ["departure", "insertion"]
    assert all(m["model"] == "bicircular (Sun–Earth–Moon)" for m in d["maneuvers"])
    assert d["model"] == "bicircular (Sun–Earth–Moon)"
    assert d["dv_mps"] == pytest.approx(sum(m["dv_mps"] for m in d["maneuvers"]))


def test_departure_is_a_tangential_burn_from_the_200km_parking_orbit(transfer):
    """Vallado (2013, section 6.3): dv = |v_inertial| - sqrt(GM_E / r) at the perigee."""
    tr = transfer
    before = tr.maneuvers[0]["state_before"]
    after = tr.departure_state
    r_e = np.array([-EM.mu, 0.0, 0.0])
    rel = after[:3] - r_e
    r = np.linalg.norm(rel)
    assert EM.km(r) - EM.primary.radius_km == pytest.approx(200.0, abs=0.01)
    w = np.array([-rel[1], rel[0], 0.0])
    v_after, v_before = after[3:] + w, before[3:] + w
    assert np.linalg.norm(v_before) == pytest.approx(math.sqrt((1 - EM.mu) / r), rel=1e-12)
    assert float(rel @ v_after) == pytest.approx(0.0, abs=1e-8)        # at the perigee
    assert np.linalg.norm(np.cross(v_after, v_before)) < 1e-12           # tangential
    assert EM.mps(np.linalg.norm(v_after) - np.linalg.norm(v_before)) == pytest.approx(tr.departure_dv_mps, rel=1e-9)


def test_scipy_dop853_on_the_simo_equations_closes_every_coast(transfer):
    """Each coast of the reported transfer, re-propagated by scipy's DOP853 on the equations
    written out above, lands on the next patch point, the last on the target orbit's point
    before the insertion burn, within the stated tolerance (``CLOSURE_TOL_KM``)."""
    tr = transfer
    args = _simo_args(tr.model)
    segs = tr.segments()
    ends = [s[1] for s in segs[1:]] + [tr.maneuvers[-1]["state_before"]]
    worst = 0.0
    for (t0, s0, dt), end in zip(segs, ends):
        sol = solve_ivp(simo_rhs, (t0, t0 + dt), s0, method="DOP853", rtol=1e-12, atol=1e-12, args=args)
        assert sol.success
        worst = max(worst, EM.km(np.linalg.norm(sol.y[:3, -1] - np.asarray(end)[:3])))
    assert worst <= le.CLOSURE_TOL_KM, worst
    # and the state before insertion plus the burn is the target orbit's state there
    ins = tr.maneuvers[-1]
    on_orbit = np.asarray(ins["state_before"]) + np.r_[0, 0, 0, ins["dv_vector"]]
    from cr3bp.integrate import propagate
    s_orbit = propagate(EM, tr.orbit.state, tr.insertion_phase * tr.orbit.period).final_state
    assert np.linalg.norm(on_orbit - s_orbit) < 1e-9


def test_the_sun_raises_the_perigee(transfer):
    """Without the Sun (the same departure state in the CR3BP) the trajectory does not come back
    to the Moon: the Sun's pull at apogee is what the transfer needs (Belbruno & Miller 1993)."""
    from cr3bp.integrate import propagate
    tr = transfer
    arc = propagate(EM, tr.departure_state, tr.tof, rtol=1e-12, atol=1e-12)
    miss_km = EM.km(np.linalg.norm(arc.final_state[:3] - np.asarray(tr.maneuvers[-1]["position"])))
    assert miss_km > 50_000.0


def test_sun_phase_and_dates_with_a_launch_date():
    """With a launch date the Sun's phase at departure is the date's, from the ephemeris."""
    from cr3bp.bicircular import sun_phase_at
    orbit = solve_request(EM, "halo L2 south resonance=9:2")
    epoch = "2027-03-01T00:00:00Z"
    ph = sun_phase_at(epoch)
    tr = le.design_low_energy(orbit, 200.0, epoch=epoch,
                              sun_phases=(np.arange(6) * (np.pi / 3)) + 0.0)
    assert math.radians(tr.sun_phase_deg) == pytest.approx(ph, abs=1e-12)
    assert tr.departure_epoch == "2027-03-01T00:00:00Z"
    theta_ins = tr.model.sun_angle(tr.tof)
    assert math.radians(tr.details["sun_phase_at_insertion_deg"]) == pytest.approx(theta_ins % (2 * math.pi), abs=1e-8)
    assert 70.0 <= tr.tof_days <= 130.0
