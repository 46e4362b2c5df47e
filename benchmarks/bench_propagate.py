"""Speed of the compiled propagator against scipy's solve_ivp (DOP853, numpy right-hand side),
against heyoka at matched final-state accuracy (single trajectory, and heyoka's batch mode
against the batch), of the lockstep-lane batch against the per-thread kernel it replaced, and
the start-up time of ``librate --help``.
"""

from __future__ import annotations

import math
import statistics
import subprocess
import sys
import time

import numpy as np

from cr3bp import propagate, propagate_batch, system
from cr3bp.integrate import propagate_scipy

from .seeds import earth_moon_l1_halo
from .timing import median_time

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


def _batch_states(s0, n):
    rng = np.random.default_rng(2026)
    return np.array(s0) + rng.normal(scale=1e-4, size=(n, 6))


def _old_batch(em, states, t):
    """The per-thread kernel propagate_batch ran before the lanes (one trajectory per thread
    iteration), called directly with the same arguments."""
    from cr3bp.integrate import dop853  # lazy: heavy library (numba kernels)
    from cr3bp.integrate.modes import MODE_STATE  # lazy: beside the kernel it names
    n = states.shape[0]
    y0s = np.ascontiguousarray(states)
    tf = np.full(n, float(t))
    tab = np.zeros((0, 6))
    out = [np.empty((n, 6)), np.empty(n), np.empty(n, np.int64), np.zeros(n, np.int64),
           np.zeros(n, np.int64), np.empty((n, 1)), np.empty((n, 1, 6)), np.empty((n, 1), np.int64),
           np.zeros(n, np.int64), np.zeros(n, np.int64)]
    dop853.integrate_batch(MODE_STATE, np.array([em.mu]), y0s, 0.0, tf, TOL, TOL, math.inf,
                           10**6, tab, 0, False, *out)
    return out[0]


def _interleaved_wall_cpu(fns, rounds, calls=1):
    """Median wall and processor times of each function of ``fns``, called in alternation
    (round r starts at function r mod len(fns)), so that a change of machine load weighs on
    every side alike. Processor time (``time.process_time``, summed over the process's
    threads) is the fairer figure for one-thread rows on a shared machine; wall time is the
    figure for the rows that use both cores. Returns ([wall], [cpu]) medians in seconds."""
    k = len(fns)
    wall = [[] for _ in fns]
    cpu = [[] for _ in fns]
    for r in range(rounds):
        for q in range(k):
            i = (r + q) % k
            w0 = time.perf_counter()
            c0 = time.process_time()
            for _ in range(calls):
                fns[i]()
            cpu[i].append((time.process_time() - c0) / calls)
            wall[i].append((time.perf_counter() - w0) / calls)
    return [statistics.median(x) for x in wall], [statistics.median(x) for x in cpu]


def _batch_rows(em, s0):
    import numba  # lazy: heavy library (thread count of the batch kernels)
    states = _batch_states(s0, BATCH_N)
    propagate_batch(em, states[:16], BATCH_T, rtol=TOL, atol=TOL)      # compile / load cache
    _old_batch(em, states[:16], BATCH_T)
    threads = numba.get_num_threads()
    rows = []
    # one thread: the lanes against the previous kernel, timed in alternation; judged on
    # processor time (one thread, so it is the time the work took on a core)
    numba.set_num_threads(1)
    try:
        (new_w, old_w), (new1, old1) = _interleaved_wall_cpu(
            [lambda: propagate_batch(em, states, BATCH_T, rtol=TOL, atol=TOL),
             lambda: _old_batch(em, states, BATCH_T)], rounds=9)
    finally:
        numba.set_num_threads(threads)
    rows.append((f"propagate_batch {BATCH_N} x {BATCH_T:g} TU state only, one thread, CPU time "
                 f"({new1 / BATCH_N * 1e6:.0f} us per trajectory; wall ratio {old_w / new_w:.1f}x; "
                 "medians of 9, in alternation)", new1,
                 "the per-thread kernel before the lanes, one thread", old1, ">= 3x"))
    sub = states[:SCIPY_LOOP_SUBSET]

    def loop():
        for s in sub:
            propagate_scipy(em, s, BATCH_T, rtol=TOL, atol=TOL)
    for n in (BATCH_N, 10 * BATCH_N):
        big = _batch_states(s0, n)
        (ours_w, loop_w), (ours_c, loop_c) = _interleaved_wall_cpu(
            [lambda: propagate_batch(em, big, BATCH_T, rtol=TOL, atol=TOL), loop], rounds=5)
        scale = n / SCIPY_LOOP_SUBSET
        # the CPU figure: scipy's processor time against ours spread over the threads, i.e. the
        # ratio on otherwise idle cores if the threads scaled perfectly (an estimate)
        cpu_ratio = loop_c * scale / (ours_c / threads)
        rows.append((f"propagate_batch {n} x {BATCH_T:g} TU (state only, {threads} threads, wall; "
                     f"CPU-time estimate for {threads} idle cores {cpu_ratio:.0f}x; medians of 5)",
                     ours_w, f"scipy loop ({SCIPY_LOOP_SUBSET} timed in alternation, scaled "
                     f"x{n // SCIPY_LOOP_SUBSET})", loop_w * scale, ">= 1000x"))
    rows.append(_heyoka_batch_row(em, states))
    return rows


def _heyoka_batch_row(em, states):
    """heyoka's batch mode (Taylor method, 4 trajectories per SIMD batch, one thread) at the
    accuracy of ours. Both errors are measured against heyoka at machine precision on a subset
    of the batch (the largest final-state error in LU). heyoka's time at exactly our error is
    interpolated (log time against log error) between the two heyoka tolerances whose errors
    bracket ours, both timed in alternation with ours (processor time, one thread); where even
    heyoka's loosest tolerance is more accurate than ours its time is used as is (that favours
    ours, and the row says so)."""
    name = f"propagate_batch {BATCH_N} x {BATCH_T:g} TU, one thread, vs heyoka batch mode (matched accuracy)"
    try:
        import heyoka as hy
    except ImportError:
        return (name, None, "heyoka", None, "heyoka not installed (test extra): row skipped")
    import numba  # lazy: heavy library (thread count of the batch kernels)
    mu = em.mu
    x, y, z, vx, vy, vz = hy.make_vars("x", "y", "z", "vx", "vy", "vz")
    r1_3 = ((x + mu) ** 2 + y**2 + z**2) ** -1.5
    r2_3 = ((x - 1.0 + mu) ** 2 + y**2 + z**2) ** -1.5
    dyn = [(x, vx), (y, vy), (z, vz),
           (vx, 2.0 * vy + x - (1.0 - mu) * (x + mu) * r1_3 - mu * (x - 1.0 + mu) * r2_3),
           (vy, -2.0 * vx + y - (1.0 - mu) * y * r1_3 - mu * y * r2_3),
           (vz, -(1.0 - mu) * z * r1_3 - mu * z * r2_3)]
    width = 4
    n = states.shape[0] - states.shape[0] % width
    states = states[:n]
    check = states[:64]
    truth = np.empty_like(check)
    for i, s in enumerate(check):
        ta = hy.taylor_adaptive(dyn, np.array(s, float), tol=2.2e-16)
        ta.propagate_until(BATCH_T)
        truth[i] = ta.state
    ours_err = np.max(np.abs(propagate_batch(em, check, BATCH_T, rtol=TOL, atol=TOL).states - truth))

    def make(tol):
        tb = hy.taylor_adaptive_batch(dyn, np.ascontiguousarray(states[:width].T), tol=tol)

        def run(rows=states):
            out = np.empty_like(rows)
            for k in range(0, rows.shape[0], width):
                tb.set_time(0.0)
                tb.state[:] = rows[k:k + width].T
                tb.propagate_until(BATCH_T)
                out[k:k + width] = tb.state.T
            return out
        return run
    looser = None
    tighter = None
    for tol in (1e-8, 1e-9, 1e-10, 1e-11, 1e-12, 1e-13, 1e-14, 1e-15):      # loosest first
        run = make(tol)
        err = np.max(np.abs(run(check) - truth))
        if err <= ours_err:
            tighter = (tol, err, run)
            break
        looser = (tol, err, run)
    if tighter is None:
        return (name, None, "heyoka (no tolerance reached our accuracy)", None, "-")
    threads = numba.get_num_threads()
    numba.set_num_threads(1)
    sides = [lambda: propagate_batch(em, states, BATCH_T, rtol=TOL, atol=TOL), tighter[2]]
    if looser is not None:
        sides.append(looser[2])
    try:
        wall, cpu = _interleaved_wall_cpu(sides, rounds=7)
    finally:
        numba.set_num_threads(threads)
    ours = cpu[0]
    if looser is None:
        theirs = cpu[1]
        how = (f"heyoka tol {tighter[0]:g} err {tighter[1]:.1e} LU, its loosest: more accurate "
               "than ours, time not interpolated")
    else:
        # log-log interpolation of heyoka's time at our error between its two bracketing runs
        la, lb = math.log(looser[1]), math.log(tighter[1])
        w = (math.log(ours_err) - la) / (lb - la)
        theirs = math.exp(math.log(cpu[2]) + w * (math.log(cpu[1]) - math.log(cpu[2])))
        how = (f"heyoka interpolated between tol {looser[0]:g} (err {looser[1]:.1e}) and "
               f"{tighter[0]:g} (err {tighter[1]:.1e})")
    return (f"{name}: ours err {ours_err:.1e} LU, {how}; CPU time, medians of 7 in "
            f"alternation (wall ratio at tol {tighter[0]:g}: {wall[1] / wall[0]:.2f}x)", ours,
            f"heyoka taylor_adaptive_batch (width {width}) at our error", theirs,
            "no slower than heyoka batch mode")


def _overhead_row(em, s0):
    """Per-call cost of propagate() outside the integration: a call whose final time is its
    start time (the kernel returns at once), against a one-period state-only propagation."""
    propagate(em, s0, 0.0)
    zero, full = _interleaved_medians(lambda: propagate(em, s0, 0.0),
                                      lambda: propagate(em, s0, 1.511), rounds=21, calls=20)
    return (f"propagate() per-call overhead ({zero * 1e6:.1f} us; t_final = t0)", zero,
            "one halo period, state only", full, "< 0.00001 s")


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
    rows.extend(_batch_rows(em, s0))
    rows.append(_overhead_row(em, s0))
    rows.append(_help_row())
    rows.extend(_call_cost_rows(em, s0))
    rows.extend(_prebuilt_thread_rows(em, s0))
    rows.extend(_startup_rows())
    return rows


# ---- prebuilt kernels: call overhead, batch blocks on Python threads, start-up without numba

_CALL_COST_SPAN = 1e-6

_CALL_COST_PROBE = """
import json, statistics, sys, time
from cr3bp import propagate, system
em = system("earth-moon")
s0, span = json.loads(sys.argv[1]), float(sys.argv[2])
propagate(em, s0, span)
walls, cpus = [], []
for _ in range(25):
    for _ in range(40):
        t0 = time.perf_counter()
        propagate(em, s0, span)
        walls.append(time.perf_counter() - t0)
    c0 = time.thread_time()
    for _ in range(200):
        propagate(em, s0, span)
    cpus.append((time.thread_time() - c0) / 200)
print("PROBE", statistics.median(walls), statistics.median(cpus))
"""


def _call_cost_rows(em, s0):
    """Cost of one propagate() call over a trivial 1e-6 TU span (one step: validation, the
    kernel call, the Arc): median wall time of single calls, and processor time of the calling
    thread per call over runs of 200 calls (it does not count waiting for the shared cores, nor
    other threads of the process); in a fresh process (``import cr3bp`` only: what a user's
    script pays) and in this one, after the rows above (heyoka's libraries and worker threads,
    the batch's threads, a larger heap). After importing heyoka the call executes the same
    number of instructions (valgrind's callgrind) yet took 1.1-1.7x the processor time on this
    machine (docs/history.md, Propagator), hence both figures."""
    import json  # lazy: only this row hands the state to a probe process
    out = subprocess.run([sys.executable, "-c", _CALL_COST_PROBE, json.dumps(list(map(float, s0))),
                          repr(_CALL_COST_SPAN)], capture_output=True, text=True, check=True).stdout
    fwall, fcpu = (float(v) for v in [ln for ln in out.splitlines() if ln.startswith("PROBE ")][-1].split()[1:])
    propagate(em, s0, _CALL_COST_SPAN)
    walls, cpus = [], []
    for _ in range(25):
        for _ in range(40):
            t0 = time.perf_counter()
            propagate(em, s0, _CALL_COST_SPAN)
            walls.append(time.perf_counter() - t0)
        c0 = time.thread_time()
        for _ in range(200):
            propagate(em, s0, _CALL_COST_SPAN)
        cpus.append((time.thread_time() - c0) / 200)
    wall, cpu = statistics.median(walls), statistics.median(cpus)
    return [(f"propagate() per call, 1e-6 TU span, fresh process, wall median ({fwall * 1e6:.1f} us)",
             fwall, "", None, "< 0.00001 s"),
            (f"propagate() per call, 1e-6 TU span, fresh process, thread processor time "
             f"({fcpu * 1e6:.1f} us)", fcpu, "", None, "< 0.00001 s"),
            (f"propagate() per call, 1e-6 TU span, in this benchmark process, wall median "
             f"({wall * 1e6:.1f} us)", wall, "", None, "< 0.00001 s"),
            (f"propagate() per call, 1e-6 TU span, in this benchmark process, thread processor "
             f"time ({cpu * 1e6:.1f} us)", cpu, "", None, "< 0.00001 s")]


def _prebuilt_thread_rows(em, s0):
    """The batch on the prebuilt lane blocks over Python threads (what propagate_batch runs
    when ``make kernels`` built the module) against numba's parallel lane kernel, same inputs,
    same thread count, timed in alternation; wall and processor time."""
    from cr3bp import compiled, threads  # lazy: beside the kernels this row compares
    from cr3bp.integrate import lanes  # lazy: heavy library (numba kernels)
    from cr3bp.integrate.modes import MODE_STATE  # lazy: beside the kernel it names
    from cr3bp.integrate.propagate import _run_prebuilt  # lazy: the function measured
    k = compiled.kernels()
    if k is None:
        return [("propagate_batch on prebuilt blocks over threads", None, "", None,
                 "skipped: no current prebuilt module (make kernels)")]
    n = BATCH_N
    states = np.ascontiguousarray(_batch_states(s0, n))
    args = (MODE_STATE, np.array([em.mu]), states, 0.0, np.full(n, BATCH_T), TOL, TOL, math.inf,
            10**6, np.zeros((0, 6)), 0)

    def outs():
        return (np.zeros((n, 6)), np.zeros(n), np.zeros(n, np.int64), np.zeros(n, np.int64),
                np.zeros(n, np.int64), np.zeros((n, 1)), np.zeros((n, 1, 6)),
                np.zeros((n, 1), np.int64), np.zeros(n, np.int64), np.zeros(n, np.int64))
    nthreads = threads.count()
    a, b = outs(), outs()
    _run_prebuilt(k, args, a, nthreads)
    lanes.integrate_lanes(*args, lanes.blocks(n), *b)
    same = all(u.tobytes() == v.tobytes() for u, v in zip(a, b))
    cpu = {"pre": [], "jit": []}

    def timed(key, fn):
        def run():
            c0 = time.process_time()
            fn()
            cpu[key].append(time.process_time() - c0)
        return run
    pre, jit = _interleaved_medians(timed("pre", lambda: _run_prebuilt(k, args, outs(), nthreads)),
                                    timed("jit", lambda: lanes.integrate_lanes(*args, lanes.blocks(n), *outs())),
                                    rounds=9, calls=1)
    cpu_pre, cpu_jit = statistics.median(cpu["pre"]), statistics.median(cpu["jit"])
    tag = "bytes equal" if same else "RESULTS DIFFER"
    return [(f"propagate_batch {n} x {BATCH_T:g} TU state only, prebuilt blocks on {nthreads} Python "
             f"threads, wall ({tag})", pre, f"numba's parallel lanes, {nthreads} threads", jit,
             ">= 0.9x"),
            (f"  same, processor time summed over threads (prebuilt {cpu_pre:.3f} s, numba "
             f"{cpu_jit:.3f} s)", cpu_pre, "numba's parallel lanes", cpu_jit, ">= 0.9x")]


_STARTUP_PROBE = """
import os, resource, sys, time
t0 = time.perf_counter()
from librate_cli.main import main
code = main(sys.argv[1:])
wall = time.perf_counter() - t0
cpu = time.process_time()
rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
print(f"PROBE {code} {wall:.4f} {cpu:.4f} {rss:.1f} {'numba' in sys.modules}")
"""


def _startup_rows():
    """``librate manifold`` and ``librate section`` (16 points, a fresh catalogue) in fresh
    processes: on the prebuilt module (numba never loaded) against the same command with
    ``LIBRATE_KERNELS=jit`` (numba's kernels, as every batch command ran before), run in
    alternation; wall time of the whole command in the process, processor time, peak memory."""
    import os  # lazy: only this row starts processes with their own environment
    import tempfile  # lazy: only this row needs a scratch catalogue
    from cr3bp import compiled  # lazy: beside the check it makes
    if compiled.kernels() is None:
        return [("librate manifold / section start-up", None, "", None,
                 "skipped: no current prebuilt module (make kernels)")]
    commands = {
        "manifold": ["manifold", "--system", "earth-moon", "--family", "lyapunov", "--point", "L1",
                     "--jacobi", "3.17", "--unstable", "--points", "16", "-q", "--format", "json"],
        "section": ["section", "--system", "earth-moon", "--tube", "lyapunov L1 jacobi=3.17 unstable",
                    "--section", "x=1-mu", "--points", "16", "-q", "--format", "json"]}
    rows = []
    with tempfile.TemporaryDirectory() as d:
        for name, argv in commands.items():
            results = {"auto": [], "jit": []}
            for r in range(5):
                for kernels in (("auto", "jit") if r % 2 == 0 else ("jit", "auto")):
                    env = {**os.environ, "LIBRATE_KERNELS": kernels,
                           "LIBRATE_CATALOG": os.path.join(d, f"{name}-{r}-{kernels}.sqlite")}
                    out = subprocess.run([sys.executable, "-c", _STARTUP_PROBE, *argv], env=env,
                                         capture_output=True, text=True, cwd=d, check=True).stdout
                    probe = [ln for ln in out.splitlines() if ln.startswith("PROBE ")][-1].split()
                    results[kernels].append((float(probe[2]), float(probe[3]), float(probe[4]),
                                             probe[5] == "True"))
            med = {k: [statistics.median(v[i] for v in vals) for i in range(3)] + [vals[0][3]]
                   for k, vals in results.items()}
            a, j = med["auto"], med["jit"]
            rows.append((f"librate {name} --points 16 in a fresh process, prebuilt (numba loaded: "
                         f"{'yes' if a[3] else 'no'}; peak RSS {a[2]:.0f} MB, processor {a[1]:.2f} s)",
                         a[0], f"numba's kernels (numba loaded: {'yes' if j[3] else 'no'}; peak RSS "
                         f"{j[2]:.0f} MB, processor {j[1]:.2f} s)", j[0], "faster than numba's"))
    return rows
