"""The lockstep-lane batch integrator (cr3bp.integrate.lanes) against the scalar integrator
(cr3bp.integrate.dop853.integrate, the kernel of ``propagate``) on the same inputs, against
scipy's DOP853 (``scipy.integrate.solve_ivp``; E. Hairer, S. P. Norsett & G. Wanner, *Solving
Ordinary Differential Equations I*, 2nd ed., Springer, 1993, section II.5, code dop853), and
for results that do not depend on the blocks or threads.

Tolerances of the checks against the scalar integrator: states 1e-12 relative, event times
1e-10 TU (the lanes perform the scalar integrator's arithmetic; they measured bitwise equal
on this project's machine).
"""

import math

import numba
import numpy as np
import pytest

from cr3bp import impact, plane, propagate_batch, system
from cr3bp.integrate import dop853, events as ev, lanes, propagate_scipy
from cr3bp.integrate.modes import MODE_STATE, MODE_STM

EM = system("earth-moon")
HALO = np.array([1.0220325268769859, 0.0, -0.1821043666916314, 0.0, -0.10328034227137894, 0.0])
PERIOD = 1.511256281147235
STATE_REL = 1e-12
EVENT_TIME_TU = 1e-10


def _starts(n, seed=7):
    rng = np.random.default_rng(seed)
    s = HALO + rng.normal(scale=2e-4, size=(n, 6))
    # a trajectory towards the Moon (impact) and one started at its final time
    s[3] = [1.05, 0.0, 0.0, 0.0, -0.05, 0.0]
    return s


def _times(n):
    tf = np.full(n, 5.0)
    tf[::4] = -2.5           # mixed directions in one block
    tf[5] = 0.0              # nothing to do
    tf[6] = 0.7
    return tf


def _run_lanes(mode, y0s, tf, tab, m, nblocks, max_steps=10**6):
    n, dim = y0s.shape
    out = [np.empty((n, dim)), np.empty(n), np.empty(n, np.int64), np.zeros(n, np.int64),
           np.zeros(n, np.int64), np.zeros((n, max(m, 1))), np.zeros((n, max(m, 1), 6)),
           np.zeros((n, max(m, 1)), np.int64), np.zeros(n, np.int64), np.zeros(n, np.int64)]
    lanes.integrate_lanes(mode, np.array([EM.mu]), y0s, 0.0, tf, 1e-12, 1e-12, math.inf,
                          max_steps, tab, m, nblocks, *out)
    return out


def _y0s(stm, n):
    s = _starts(n)
    if stm:
        return np.ascontiguousarray(np.hstack([s, np.tile(np.eye(6).ravel(), (n, 1))]))
    return np.ascontiguousarray(s)


TABLE = ev.table([plane("y", 0.0, terminal=True, count=3), plane("x", 1.0, direction=1),
                  impact(1, 0.002)])


@pytest.mark.parametrize("stm", [False, True], ids=["state", "stm"])
def test_every_lane_gets_the_scalar_integrators_result(stm):
    n = 21 if stm else 37            # not a multiple of the lane width: idle lanes at the end
    mode = MODE_STM if stm else MODE_STATE
    y0s = _y0s(stm, n)
    tf = _times(n)
    m = 3
    out_y, out_t, status, nev, seen, ev_t, ev_y, ev_k, nfev, nsteps = _run_lanes(
        mode, y0s, tf, TABLE, m, 2)
    for i in range(n):
        (code, t_end, y_end, _ts, _ys, et, ey, ek, n_seen, _e, _ne, f, st, _r) = dop853.integrate(
            mode, np.array([EM.mu]), y0s[i].copy(), 0.0, tf[i], 1e-12, 1e-12, -1.0, math.inf,
            10**6, TABLE, m, np.empty(0), False)
        assert status[i] == code and nsteps[i] == st and nfev[i] == f, i
        scale = np.maximum(np.abs(y_end), 1.0)
        assert np.all(np.abs(out_y[i] - y_end) <= STATE_REL * scale), i
        assert abs(out_t[i] - t_end) <= EVENT_TIME_TU, i
        assert nev[i] == len(et) and seen[i] == n_seen, i
        assert np.all(np.abs(ev_t[i, :nev[i]] - et) <= EVENT_TIME_TU), i
        assert np.all(np.abs(ev_y[i, :nev[i]] - ey) <= STATE_REL * np.maximum(np.abs(ey), 1.0)), i
        assert np.array_equal(ev_k[i, :nev[i]], ek), i
    # the cases the inputs were built for did occur
    names = set(status.tolist())
    assert {0, 1, 2} <= names, names


def test_failures_are_the_scalar_integrators():
    """A step limit hit by some lanes (and not others) is reported per trajectory."""
    y0s = _y0s(False, 9)
    tf = np.full(9, 5.0)
    tf[2] = 0.01                      # finishes within the limit
    out = _run_lanes(MODE_STATE, y0s, tf, np.zeros((0, 6)), 0, 1, max_steps=40)
    for i in range(9):
        code, t_end, y_end, *_rest = dop853.integrate(
            MODE_STATE, np.array([EM.mu]), y0s[i].copy(), 0.0, tf[i], 1e-12, 1e-12, -1.0,
            math.inf, 40, np.zeros((0, 6)), 0, np.empty(0), False)
        assert out[2][i] == code and out[1][i] == t_end
        assert np.array_equal(out[0][i], y_end)
    assert out[2][2] == 0 and out[2][0] == -1


@pytest.mark.parametrize("stm", [False, True], ids=["state", "stm"])
def test_results_do_not_depend_on_blocks_or_threads(stm):
    mode = MODE_STM if stm else MODE_STATE
    n = 29
    y0s = _y0s(stm, n)
    tf = _times(n)
    ref = _run_lanes(mode, y0s, tf, TABLE, 2, 1)
    threads = numba.get_num_threads()
    try:
        for nblocks, nthreads in ((3, threads), (7, 1), (n, threads), (2, 1)):
            numba.set_num_threads(nthreads)
            got = _run_lanes(mode, y0s, tf, TABLE, 2, nblocks)
            for a, b in zip(ref, got):
                assert np.array_equal(a, b), (nblocks, nthreads)
    finally:
        numba.set_num_threads(threads)


def test_propagate_batch_runs_on_the_lanes_and_keeps_its_results():
    """propagate_batch (the public entry point) equals the lane kernel and, trajectory by
    trajectory, the previous per-thread kernel (dop853.integrate_batch)."""
    s = _starts(13)
    tf = _times(13)
    res = propagate_batch(EM, s, tf, events=[plane("y", 0.0, terminal=True, count=3),
                                             impact(1, 0.002)], max_events=2)
    tab = ev.table([plane("y", 0.0, terminal=True, count=3), impact(1, 0.002)])
    n = 13
    out = [np.empty((n, 6)), np.empty(n), np.empty(n, np.int64), np.zeros(n, np.int64),
           np.zeros(n, np.int64), np.zeros((n, 2)), np.zeros((n, 2, 6)), np.zeros((n, 2), np.int64),
           np.zeros(n, np.int64), np.zeros(n, np.int64)]
    dop853.integrate_batch(MODE_STATE, np.array([EM.mu]), np.ascontiguousarray(s), 0.0, tf,
                           1e-12, 1e-12, math.inf, 10**6, tab, 2, False, *out)
    assert np.all(np.abs(res.states - out[0]) <= STATE_REL * np.maximum(np.abs(out[0]), 1.0))
    assert np.all(np.abs(res.t_final - out[1]) <= EVENT_TIME_TU)
    assert np.array_equal(res.nsteps, out[9])
    for i in range(n):
        assert np.all(np.abs(res.event_t[i] - out[5][i, :out[3][i]]) <= EVENT_TIME_TU)


def test_batch_with_stm_agrees_with_scipy_dop853():
    """Hairer, Norsett & Wanner (1993), DOP853 as transcribed by scipy's solve_ivp: the same
    method implemented independently. The halo is unstable (monodromy eigenvalue ~ 2e3), so
    the bound allows the amplified round-off as tests/test_against_scipy.py does."""
    rng = np.random.default_rng(3)
    s = HALO + rng.normal(scale=1e-5, size=(5, 6))
    res = propagate_batch(EM, s, PERIOD, rtol=1e-13, atol=1e-13, stm=True)
    for i in range(5):
        ref = propagate_scipy(EM, s[i], PERIOD, stm=True, rtol=1e-13, atol=1e-13)
        assert np.max(np.abs(res.states[i] - ref.final_state)) < 1e-9
        assert np.max(np.abs(res.stm[i] - ref.stm)) / np.max(np.abs(ref.stm)) < 1e-9


def test_plane_crossings_agree_with_scipy_event_location():
    """Event times of a batch against scipy's event location on its DOP853 dense output."""
    s = np.array([HALO + [0.0, 1e-4, 0, 0, 0, 0], HALO + [0.0, 2e-4, 0, 0, 0, 0]])  # off y = 0
    evs = [plane("y", direction=0)]
    res = propagate_batch(EM, s, 2.5 * PERIOD, events=evs, rtol=1e-13, atol=1e-13, max_events=8)
    for i in range(2):
        ref = propagate_scipy(EM, s[i], 2.5 * PERIOD, events=evs, rtol=1e-13, atol=1e-13)
        ref_t = np.array([h.t for h in ref.events])
        assert len(ref_t) == len(res.event_t[i]) >= 4
        assert np.max(np.abs(res.event_t[i] - ref_t)) < 1e-10


def test_blocks_cover_the_batch():
    for n in (1, 7, 8, 9, 100, 1000, 10_000):
        b = lanes.blocks(n)
        assert 1 <= b <= max(1, -(-n // lanes.LANES))
        assert b >= min(numba.get_num_threads(), -(-n // lanes.LANES))


def test_the_written_out_stages_are_the_methods():
    """The lane step writes its stages out one by one; they must be the method's stages
    (Hairer, Norsett & Wanner 1993, section II.5: DOP853 has 12 stages, the last one FSAL)."""
    from cr3bp.integrate import coefficients
    assert lanes._STAGES_WRITTEN_OUT == coefficients.N_STAGES == 12


def test_stabilised_step_control_is_as_accurate_as_scipys_for_less_work():
    """The stabilised step control (dop853.STEP_BETA; Hairer, Norsett & Wanner 1993, section
    II.4, and the BETA option of their code dop853) against scipy's DOP853 with its plain
    controller (solve_ivp, same method and error estimate): on eight perturbed halo states over
    5 TU at rtol = atol = 1e-11, the final-state error against scipy at its tightest tolerance
    is about scipy's (measured 1.19e-9 against 1.16e-9 LU) for fewer right-hand-side
    evaluations (measured 32 704 against 34 876; 32 656 with STEP_BETA 0.04 before it became 5/128)."""
    from scipy.integrate import solve_ivp
    mu = EM.mu

    def f(t, s):
        x, y, z, vx, vy, vz = s
        r1 = ((x + mu) ** 2 + y * y + z * z) ** 1.5
        r2 = ((x - 1.0 + mu) ** 2 + y * y + z * z) ** 1.5
        return [vx, vy, vz, 2.0 * vy + x - (1.0 - mu) * (x + mu) / r1 - mu * (x - 1.0 + mu) / r2,
                -2.0 * vx + y - (1.0 - mu) * y / r1 - mu * y / r2,
                -(1.0 - mu) * z / r1 - mu * z / r2]
    rng = np.random.default_rng(2026)
    s = HALO + rng.normal(scale=1e-4, size=(8, 6))
    ours = propagate_batch(EM, s, 5.0, rtol=1e-11, atol=1e-11)
    err_ours = err_scipy = 0.0
    nfev_scipy = 0
    for i in range(8):
        ref = solve_ivp(f, (0.0, 5.0), s[i], method="DOP853", rtol=2.3e-14, atol=1e-14).y[:, -1]
        sp = solve_ivp(f, (0.0, 5.0), s[i], method="DOP853", rtol=1e-11, atol=1e-11)
        err_scipy = max(err_scipy, np.max(np.abs(sp.y[:, -1] - ref)))
        err_ours = max(err_ours, np.max(np.abs(ours.states[i] - ref)))
        nfev_scipy += sp.nfev
    assert err_ours <= 1.25 * err_scipy
    assert ours.nfev.sum() < nfev_scipy
