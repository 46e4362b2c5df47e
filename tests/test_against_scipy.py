"""The compiled propagator against scipy (``scipy.integrate.solve_ivp``, method DOP853, scipy's
own transcription of Hairer, Norsett & Wanner's code dop853) as an independent
implementation of the same method, driven through ``cr3bp.integrate.propagate_scipy`` with
a plain numpy right-hand side.
"""

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.integrate._ivp import dop853_coefficients as scipy_dop853

from cr3bp import impact, plane, propagate
from cr3bp.integrate import coefficients, propagate_scipy
from cr3bp.integrate.reference import eom_numpy
from orbits_for_tests import dro, em, halo

# Tolerances. One LU of Earth-Moon is 384 400 km, so 1e-10 LU is about 4 cm.
STATE_AGREEMENT_LU = 1e-10
TIME_AGREEMENT_TU = 1e-10       # about 40 microseconds in Earth-Moon units


@pytest.mark.parametrize("name", ["A", "B", "C", "D", "E3", "E5"])
def test_coefficients_are_scipys(name):
    np.testing.assert_array_equal(getattr(coefficients, name), getattr(scipy_dop853, name))


def test_stage_counts_are_scipys():
    assert coefficients.N_STAGES == scipy_dop853.N_STAGES
    assert coefficients.N_STAGES_EXTENDED == scipy_dop853.N_STAGES_EXTENDED
    assert coefficients.INTERPOLATOR_POWER == scipy_dop853.INTERPOLATOR_POWER


def _scipy_states(s0, t_grid, tol):
    sol = solve_ivp(eom_numpy, (0.0, t_grid[-1]), np.asarray(s0, float), method="DOP853",
                    rtol=tol, atol=tol, args=(em().mu,), t_eval=t_grid)
    return sol.y.T


def test_dro_five_periods_agrees_with_scipy():
    s0, period = dro()
    grid = np.linspace(0.0, 5.0 * period, 51)
    ours = propagate(em(), s0, grid[-1], rtol=1e-13, atol=1e-13, t_eval=grid).states
    ref = _scipy_states(s0, grid, 1e-13)
    assert np.max(np.abs(ours - ref)) < STATE_AGREEMENT_LU


def test_halo_stm_one_period_agrees_with_scipy():
    s0, period = halo()
    ours = propagate(em(), s0, period, stm=True, rtol=1e-13, atol=1e-13)
    ref = propagate_scipy(em(), s0, period, stm=True, rtol=1e-13, atol=1e-13)
    # the halo is unstable (monodromy eigenvalue ~ 2e3): allow the amplified error
    assert np.max(np.abs(ours.final_state - ref.final_state)) < 1e-9
    assert np.max(np.abs(ours.stm - ref.stm)) / np.max(np.abs(ref.stm)) < 1e-9


def test_plane_crossings_agree_with_scipy_event_location():
    s0, period = dro()
    ev = [plane("y", direction=0), plane("x", value=1.0 - em().mu, direction=1)]
    ours = propagate(em(), s0, 2.75 * period, events=ev, rtol=1e-13, atol=1e-13)
    ref = propagate_scipy(em(), s0, 2.75 * period, events=ev, rtol=1e-13, atol=1e-13)
    # the orbit starts on y = 0: scipy reports that as a crossing at t = 0, we do not (a
    # crossing needs g to change sign, or to reach zero, after the start)
    ref_hits = [h for h in ref.events if h.t > 0.0]
    assert len(ref.events) == len(ref_hits) + 1
    assert len(ours.events) == len(ref_hits) >= 8
    for a, b in zip(ours.events, ref_hits):
        assert a.event == b.event
        assert abs(a.t - b.t) < TIME_AGREEMENT_TU
        assert np.max(np.abs(a.state - b.state)) < STATE_AGREEMENT_LU
    # the located crossings lie on their planes to full precision
    for h in ours.events:
        coord, target = (1, 0.0) if h.event == 0 else (0, 1.0 - em().mu)
        assert abs(h.state[coord] - target) < 1e-14


def test_terminal_crossing_count_agrees_with_scipy():
    s0, period = halo()
    ev = [plane("y", direction=-1, terminal=True, count=1)]
    ours = propagate(em(), s0, 10.0, events=ev)
    ref = propagate_scipy(em(), s0, 10.0, events=ev)
    assert ours.status == ref.status == "event"
    assert abs(ours.t_final - ref.t_final) < TIME_AGREEMENT_TU
    assert abs(ours.t_final - period / 2) < 1e-9
    ev2 = [plane("y", direction=0, terminal=True, count=2)]
    ours2 = propagate(em(), s0, 10.0, events=ev2)
    assert ours2.status == "event" and abs(ours2.t_final - period) < 1e-8
    assert len(ours2.events) == 2


def test_impact_agrees_with_scipy():
    # from rest 0.05 LU (19 000 km) inside the Moon's position it falls onto the Moon
    mu = em().mu
    s0 = [1.0 - mu - 0.05, 0.0, 0.0, 0.0, 0.0, 0.0]
    r_moon = em().radii[1]
    ev = [impact(1, r_moon)]
    ours = propagate(em(), s0, 5.0, events=ev)
    ref = propagate_scipy(em(), s0, 5.0, events=ev)
    assert ours.status == ref.status == "impact"
    assert abs(ours.t_final - ref.t_final) < TIME_AGREEMENT_TU
    d = np.linalg.norm(ours.final_state[:3] - [1.0 - mu, 0.0, 0.0])
    assert d == pytest.approx(r_moon, abs=1e-13)


def test_long_arc_with_many_steps_and_events_agrees_with_scipy():
    """The step history and the event storage start small and grow by doubling (a short arc
    allocates little): an arc of thousands of steps (the history grows from 32 rows more than
    six times) with more than 16 events kept (the event storage grows twice) still agrees with
    scipy's DOP853 at every recorded step and every crossing."""
    s0, period = dro()
    tf = 10.25 * period        # not a whole number of periods: the end is not on y = 0
    ev = [plane("y", direction=0), plane("x", value=1.0 - em().mu, direction=1)]
    ours = propagate(em(), s0, tf, events=ev, rtol=1e-13, atol=1e-13, max_step=period / 400)
    assert ours.status == "time" and ours.t[-1] == tf and len(ours.t) > 32 * 2 ** 6
    assert np.all(np.diff(ours.t) > 0.0)
    assert ours.states[-1].tobytes() == ours.final_state.tobytes()
    ref = solve_ivp(eom_numpy, (0.0, tf), np.asarray(s0, float), method="DOP853", rtol=1e-13,
                    atol=1e-13, args=(em().mu,), t_eval=ours.t)
    assert np.max(np.abs(ours.states - ref.y.T)) < STATE_AGREEMENT_LU
    ref_ev = [h for h in propagate_scipy(em(), s0, tf, events=ev, rtol=1e-13, atol=1e-13).events
              if h.t > 0.0]         # scipy reports the start on y = 0 as a crossing; we do not
    assert len(ours.events) == len(ref_ev) > 16
    for a, b in zip(ours.events, ref_ev):
        assert a.event == b.event
        assert abs(a.t - b.t) < TIME_AGREEMENT_TU
        assert np.max(np.abs(a.state - b.state)) < STATE_AGREEMENT_LU
