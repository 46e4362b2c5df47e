"""Speed of the compiled propagator against scipy's solve_ivp (DOP853, numpy right-hand side),
against heyoka at matched final-state accuracy, and the start-up time of ``librate --help``.
"""

from __future__ import annotations

import statistics
import subprocess
import sys
import time

import numpy as np

from cr3bp import propagate, propagate_batch, system
from cr3bp.integrate import propagate_scipy

from .seeds import earth_moon_l1_halo
from .timing import cpu_time, median_time

TOL = 1e-12
BATCH_N = 1000
BATCH_T = 5.0
SCIPY_LOOP_SUBSET = 40


def _halo_rows(em, s0, period):
    propagate(em, s0, period, stm=True, rtol=TOL, atol=TOL)            # compile / load cache
    ours = median_time(lambda: propagate(em, s0, period, stm=True, rtol=TOL, atol=TOL), 20)
    ref = median_time(lambda: propagate_scipy(em, s0, period, stm=True, rtol=TOL, atol=TOL), 3)
    rows = [("halo period + STM, rtol=atol=1e-12", ours, "scipy solve_ivp DOP853", ref, ">= 50x")]
    rows.append(_heyoka_row(em, s0, period))
    return rows


def _interleaved_medians(fa, fb, rounds=41, calls=5):
    """Median times of ``fa()`` and ``fb()`` measured in alternation: each round times
    ``calls`` calls of one, then of the other, so that a change of machine load during the
    run weighs on both sides alike (the 2 cores here are shared)."""
    ta, tb = [], []
    for r in range(rounds):
        for f, out in ((fa, ta), (fb, tb)) if r % 2 == 0 else ((fb, tb), (fa, ta)):
            t0 = time.perf_counter()
            for _ in range(calls):
                f()
            out.append((time.perf_counter() - t0) / calls)
    return statistics.median(ta), statistics.median(tb)


def _heyoka_row(em, s0, period):
    name = "halo period + STM vs heyoka (matched accuracy)"
    try:
        import heyoka as hy
    except ImportError:
        return (name, None, "heyoka", None, "heyoka not installed (test extra): row skipped")
    mu = em.mu
    x, y, z, vx, vy, vz = hy.make_vars("x", "y", "z", "vx", "vy", "vz")
    r1_3 = ((x + mu) ** 2 + y**2 + z**2) ** -1.5
    r2_3 = ((x - 1.0 + mu) ** 2 + y**2 + z**2) ** -1.5
    dyn = [(x, vx), (y, vy), (z, vz),
           (vx, 2.0 * vy + x - (1.0 - mu) * (x + mu) * r1_3 - mu * (x - 1.0 + mu) * r2_3),
           (vy, -2.0 * vx + y - (1.0 - mu) * y * r1_3 - mu * y * r2_3),
           (vz, -(1.0 - mu) * z * r1_3 - mu * z * r2_3)]
    # reference final state: heyoka at machine precision (state only)
    ta = hy.taylor_adaptive(dyn, np.array(s0, float), tol=2.2e-16)
    ta.propagate_until(period)
    truth = ta.state.copy()

    def ours():
        return propagate(em, s0, period, stm=True, rtol=TOL, atol=TOL)
    ours_err = np.max(np.abs(ours().final_state - truth))
    var = hy.var_ode_sys(dyn, hy.var_args.vars, order=1)
    y0 = np.concatenate([np.array(s0, float), np.eye(6).ravel()])
    chosen = None
    for tol in (1e-6, 1e-7, 1e-8, 1e-9, 1e-10, 1e-11, 1e-12, 1e-13, 1e-14, 1e-15):  # loosest first
        tv = hy.taylor_adaptive(var, y0, tol=tol)

        def once(tv=tv):
            tv.time = 0.0
            tv.state[:] = y0
            tv.propagate_until(period)
        once()
        err = np.max(np.abs(tv.state[:6] - truth))
        if err <= ours_err:
            chosen = (tol, err, once)
            break
    if chosen is None:
        return (name, None, "heyoka (no tolerance reached our accuracy)", None, "-")
    tol, err, once = chosen
    ours_s, theirs_s = _interleaved_medians(ours, once)
    return (f"{name}: ours err {ours_err:.1e} LU, heyoka tol {tol:g} err {err:.1e} LU "
            "(timed in alternation)",
            ours_s, "heyoka taylor_adaptive + variational", theirs_s, ">= 1x")


def _batch_row(em, s0):
    rng = np.random.default_rng(2026)
    states = np.array(s0) + rng.normal(scale=1e-4, size=(BATCH_N, 6))
    propagate_batch(em, states[:4], BATCH_T, rtol=TOL, atol=TOL)       # compile / load cache
    ours = median_time(lambda: propagate_batch(em, states, BATCH_T, rtol=TOL, atol=TOL), 3)
    sub = states[:SCIPY_LOOP_SUBSET]

    def loop():
        for s in sub:
            propagate_scipy(em, s, BATCH_T, rtol=TOL, atol=TOL)
    ref = median_time(loop, 1, min_total=0.0) * (BATCH_N / SCIPY_LOOP_SUBSET)
    ours_cpu = min(cpu_time(lambda: propagate_batch(em, states, BATCH_T, rtol=TOL, atol=TOL))
                   for _ in range(3))
    ref_cpu = cpu_time(loop) * (BATCH_N / SCIPY_LOOP_SUBSET)
    # the same batch on one thread: shows what the parallel loop adds on this machine
    import numba
    threads = numba.get_num_threads()
    numba.set_num_threads(1)
    try:
        one = median_time(lambda: propagate_batch(em, states, BATCH_T, rtol=TOL, atol=TOL), 3)
    finally:
        numba.set_num_threads(threads)
    return [(f"propagate_batch {BATCH_N} x {BATCH_T:g} TU (state only, {threads} threads)", ours,
             f"scipy loop ({SCIPY_LOOP_SUBSET} timed, scaled x{BATCH_N // SCIPY_LOOP_SUBSET})",
             ref, ">= 200x"),
            (f"propagate_batch {BATCH_N} x {BATCH_T:g} TU, processor time summed over threads",
             ours_cpu, "scipy loop, processor time (scaled likewise)", ref_cpu,
             "information: work per trajectory, load-independent"),
            (f"propagate_batch {BATCH_N} x {BATCH_T:g} TU (one thread)", one,
             f"the same on {threads} threads", ours,
             "information: parallel speed-up = 1/ratio")]


def _help_row():
    def once():
        subprocess.run([sys.executable, "-m", "librate_cli.main", "--help"], check=True,
                       capture_output=True)
    secs = median_time(once, 5, min_total=0.0)
    return ("librate --help (subprocess wall time)", secs, "", None, "< 0.5 s")


def run():
    em = system("earth-moon")
    s0, period = earth_moon_l1_halo(em)
    rows = _halo_rows(em, s0, period)
    rows.extend(_batch_row(em, s0))
    rows.append(_help_row())
    return rows
