"""Properties of the compiled propagator: STM, symplecticity, Jacobi constant, events,
backward time, dense output, batches and typed errors."""

import numpy as np
import pytest

from cr3bp import ConvergenceError, InputError, escape, impact, plane, propagate, propagate_batch, system
from cr3bp.dynamics import jacobi
from cr3bp.errors import StateError
from orbits_for_tests import dro, em, halo

# Canonical symplectic form (positions, momenta).
J6 = np.block([[np.zeros((3, 3)), np.eye(3)], [-np.eye(3), np.zeros((3, 3))]])
# Canonical momenta of the rotating frame, p = v + omega x r with omega = z-hat:
# (px, py, pz) = (vx - y, vy + x, vz), i.e. (r, p) = M (r, v).
M = np.eye(6)
M[3, 1], M[4, 0] = -1.0, 1.0
# The same form in (r, v): M^T J M = [[2 Omega, I], [-I, 0]], Omega = [[0,-1,0],[1,0,0],[0,0,0]].
JV = M.T @ J6 @ M


def test_velocity_form_is_the_coriolis_form():
    expected = np.zeros((6, 6))
    expected[0:3, 3:6] = np.eye(3)
    expected[3:6, 0:3] = -np.eye(3)
    expected[0, 1], expected[1, 0] = -2.0, 2.0
    np.testing.assert_array_equal(JV, expected)


@pytest.mark.parametrize("which", ["dro", "halo"])
def test_stm_against_central_differences(which):
    s0, period = dro() if which == "dro" else halo()
    t = 0.5 * period
    arc = propagate(em(), s0, t, stm=True, rtol=1e-13, atol=1e-13)
    h = 1e-6
    fd = np.empty((6, 6))
    for j in range(6):
        dp = np.array(s0, float)
        dm = np.array(s0, float)
        dp[j] += h
        dm[j] -= h
        fp = propagate(em(), dp, t, rtol=1e-13, atol=1e-13).final_state
        fm = propagate(em(), dm, t, rtol=1e-13, atol=1e-13).final_state
        fd[:, j] = (fp - fm) / (2 * h)
    scale = np.max(np.abs(arc.stm))
    assert np.max(np.abs(arc.stm - fd)) / scale < 1e-7


@pytest.mark.parametrize("which", ["dro", "halo"])
def test_stm_is_symplectic_and_unimodular(which):
    s0, period = dro() if which == "dro" else halo()
    phi = propagate(em(), s0, period, stm=True, rtol=1e-13, atol=1e-13).stm
    psi = M @ phi @ np.linalg.inv(M)          # the STM in canonical coordinates
    scale = max(1.0, np.max(np.abs(phi))) ** 2
    assert np.max(np.abs(psi.T @ J6 @ psi - J6)) / scale < 1e-9 / (1.0 if which == "dro" else 1e3)
    assert np.max(np.abs(phi.T @ JV @ phi - JV)) / scale < 1e-9
    assert np.linalg.det(phi) == pytest.approx(1.0, abs=1e-9 * scale)
    if which == "dro":
        assert np.max(np.abs(psi.T @ J6 @ psi - J6)) < 1e-9   # absolute, entries ~ 1


def test_monodromy_of_the_stable_dro_has_unit_eigenvalues():
    s0, period = dro()
    phi = propagate(em(), s0, period, stm=True, rtol=1e-13, atol=1e-13).stm
    assert np.allclose(np.abs(np.linalg.eigvals(phi)), 1.0, atol=1e-4)


@pytest.mark.parametrize("which, tol", [("dro", 1e-12), ("halo", 1e-13)])
def test_jacobi_constant_conserved_over_ten_periods(which, tol):
    # the halo is unstable: after a few periods the trajectory leaves it and passes near
    # the Moon, where the default 1e-12 gives a drift of ~3e-11; at 1e-13 it stays < 1e-11
    s0, period = dro() if which == "dro" else halo()
    arc = propagate(em(), s0, 10.0 * period, rtol=tol, atol=tol)
    c = jacobi(em().mu, arc.states)
    assert np.max(np.abs(c - c[0])) < 1e-11


def test_backward_propagation_retraces_forward():
    s0, period = dro()
    fwd = propagate(em(), s0, 2.0 * period, stm=True)
    back = propagate(em(), fwd.final_state, -2.0 * period, stm=True)
    assert back.t_final == -2.0 * period
    assert np.max(np.abs(back.final_state - s0)) < 1e-11
    np.testing.assert_allclose(back.stm @ fwd.stm, np.eye(6), atol=1e-9)
    assert np.all(np.diff(back.t) < 0)


def test_t_eval_matches_integration_to_those_times():
    s0, period = halo()
    grid = np.linspace(0.0, period, 37)
    arc = propagate(em(), s0, period, t_eval=grid)
    np.testing.assert_array_equal(arc.t, grid)
    for k in (5, 13, 22, 36):
        direct = propagate(em(), s0, grid[k]).final_state
        assert np.max(np.abs(arc.states[k] - direct)) < 1e-11
    # backward t_eval too
    back = propagate(em(), s0, -0.5 * period, t_eval=-grid[:19])
    direct = propagate(em(), s0, -grid[11]).final_state
    assert np.max(np.abs(back.states[11] - direct)) < 1e-11


def test_dense_output_of_the_stm_at_a_terminal_event():
    s0, period = halo()
    arc = propagate(em(), s0, 10.0, stm=True, events=[plane("y", direction=-1, terminal=True)])
    direct = propagate(em(), s0, arc.t_final, stm=True)
    assert np.max(np.abs(arc.stm - direct.stm)) / np.max(np.abs(direct.stm)) < 1e-10


def test_escape_is_reported():
    s0 = [1.1, 0.0, 0.0, 0.5, 0.5, 0.0]
    arc = propagate(em(), s0, 50.0, events=[escape(3.0)])
    assert arc.status == "escape"
    assert np.linalg.norm(arc.final_state[:3]) == pytest.approx(3.0, abs=1e-12)
    assert arc.events[-1].name == "escape"


def test_impact_is_reported_backward_too():
    mu = em().mu
    s0 = [1.0 - mu - 0.05, 0.0, 0.0, 0.0, 0.0, 0.0]
    arc = propagate(em(), s0, -5.0, events=[impact(1, em().radii[1])])
    assert arc.status == "impact" and arc.t_final < 0


def test_max_steps_guard():
    s0, period = dro()
    with pytest.raises(ConvergenceError, match="after 10 steps"):
        propagate(em(), s0, 100 * period, max_steps=10)


def test_non_terminal_events_are_all_recorded_in_time_order():
    s0, period = dro()
    arc = propagate(em(), s0, 4.25 * period, events=[plane("y"), plane("x", 1.0 - em().mu)])
    ts = [e.t for e in arc.events]
    assert ts == sorted(ts) and len(ts) == 16
    assert arc.status == "time"


@pytest.mark.parametrize("bad", [
    dict(state=[-0.0121505856, 0, 0, 0, 0, 0]),        # centre of the Earth
    dict(state=[1, 2, 3]),
    dict(state=[0.8, 0, 0, np.nan, 0, 0]),
    dict(rtol=1e-16), dict(atol=1e-2), dict(rtol="tight"),
    dict(t_final=np.inf),
    dict(t_eval=[0.0, 2.0]),          # beyond t_final = 1
    dict(t_eval=[0.5, 0.2]),          # not sorted
    dict(events=["y"]),
    dict(max_steps=0),
])
def test_bad_input_raises_input_error(bad):
    args = dict(state=[0.8, 0, 0, 0, 0.5, 0], t_final=1.0)
    args.update(bad)
    with pytest.raises(InputError):
        propagate(em(), args.pop("state"), args.pop("t_final"), **args)


def test_state_inside_the_moon_names_it():
    mu = em().mu
    with pytest.raises(StateError, match="inside moon"):
        propagate(em(), [1 - mu + 0.001, 0, 0, 0, 0, 0], 1.0)


def test_impact_event_already_true_at_start_is_input_error():
    with pytest.raises(InputError, match="impact radius"):
        propagate(em(), [0.9, 0, 0, 0, 0, 0], 1.0, events=[impact(1, 0.2)])


# ---- batches --------------------------------------------------------------------------

def _fan(n=12):
    s0, _ = dro()
    rng = np.random.default_rng(7)
    return np.array(s0) + rng.normal(scale=1e-3, size=(n, 6)) * [1, 1, 1, 1, 1, 1]


def test_batch_agrees_with_single_propagations():
    states = _fan()
    tf = np.linspace(1.0, 6.0, len(states))
    tf[::3] *= -1.0                             # some backward
    ev = [plane("y", direction=1)]
    res = propagate_batch(em(), states, tf, events=ev, stm=True, max_events=4)
    for i, s in enumerate(states):
        arc = propagate(em(), s, tf[i], events=ev, stm=True)
        assert res.status[i] == arc.status
        assert res.t_final[i] == arc.t_final
        assert np.max(np.abs(res.states[i] - arc.final_state)) < 1e-12
        assert np.max(np.abs(res.stm[i] - arc.stm)) < 1e-12 * np.max(np.abs(arc.stm))
        n = min(4, len(arc.events))
        assert res.events_seen[i] == len(arc.events)
        np.testing.assert_allclose(res.event_t[i], [e.t for e in arc.events[:n]], rtol=0, atol=1e-12)
        assert res.event_states[i].shape == (n, 6)


def test_batch_terminal_events_and_status():
    mu = em().mu
    states = np.array([[1.0 - mu - 0.05, 0, 0, 0, 0, 0],     # falls onto the Moon
                       [1.1, 0.0, 0.0, 0.5, 0.5, 0.0],        # escapes
                       list(dro()[0])])                       # stays
    res = propagate_batch(em(), states, 20.0, events=[impact(1, em().radii[1]), escape(3.0)])
    assert list(res.status) == ["impact", "escape", "time"]
    assert res.t_final[2] == 20.0


def test_batch_failures_raise_or_are_marked():
    states = _fan(4)
    with pytest.raises(ConvergenceError, match="trajectory 0 of 4"):
        propagate_batch(em(), states, 50.0, max_steps=20)
    res = propagate_batch(em(), states, np.array([50.0, 0.1, 50.0, 0.1]), max_steps=20,
                          on_failure="mark")
    assert list(res.status) == ["max-steps", "time", "max-steps", "time"]


def test_batch_bad_input():
    with pytest.raises(InputError):
        propagate_batch(em(), np.zeros((3, 5)), 1.0)
    with pytest.raises(InputError):
        propagate_batch(em(), _fan(3), [1.0, 2.0])
    with pytest.raises(InputError):
        propagate_batch(em(), _fan(3), 1.0, on_failure="ignore")


def test_cr3bp_step_kernels_equal_the_generic_step():
    """The CR3BP step kernels (stage loop specialised, the STM one written out stage by stage)
    compute the same Dormand-Prince step as the generic kernel through ``integrate.dispatch.rhs``: all
    twelve stages and the new state, to round-off."""
    from cr3bp.integrate import dop853
    from cr3bp.integrate.modes import MODE_STATE, MODE_STM
    s0 = np.array(halo()[0], dtype=float)
    params = np.array([em().mu])
    for mode, y, kernel in ((MODE_STATE, s0.copy(), dop853.step_state),
                            (MODE_STM, np.concatenate([s0, np.eye(6).ravel()]), dop853.step_stm)):
        n = y.shape[0]
        k_gen, k_fast = np.zeros((16, n)), np.zeros((16, n))
        dop853.rhs(mode, 0.0, y, params, k_gen[0])
        k_fast[0] = k_gen[0]
        new_gen, new_fast = np.empty(n), np.empty(n)
        dop853.rk_step(mode, params, 0.0, y, 0.05, k_gen, np.empty(n), new_gen)
        kernel(params, 0.0, y, 0.05, k_fast, np.empty(n), new_fast)
        scale = np.abs(k_gen[:13]).max()
        assert np.abs(k_fast[:13] - k_gen[:13]).max() <= 1e-14 * scale
        assert np.abs(new_fast - new_gen).max() <= 1e-15 * max(1.0, np.abs(new_gen).max())
