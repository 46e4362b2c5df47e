"""Station-keeping Monte Carlo speed: 200 trials over one year of the Earth-Moon L2 9:2 NRHO
from 2031-03-01 (Sun, Earth and Moon point masses; 1 km, 1 cm/s navigation and 1 %, 1 mm/s
execution errors, 1-sigma), including the reference's multiple shooting over 60 revolutions,
on a process pool of 2 workers (orbit solved and kernels warmed before timing).

Target: under 3 minutes on 2 cores (issue 17). Scale-out rows (issue 19): the trials alone,
in chunks of several trials per task (``keeping.chunks``), on a process pool of 2 workers
started and warmed before timing (as ``keeping.budget`` does: it starts the pool while the
reference is computed, so the workers' start-up overlaps that serial work), then on a pool
started for the trials (its start-up timed), and on a local dask.distributed cluster of 2
worker processes (started before timing, then with its start-up), each against ONE process
computing on ONE thread (the unit a worker is): goal at least 1.6x. Beside them, for information, the default in-process run, whose compiled
propagation spreads the trials over every core by threads. Every row names the load average
(1 min) at its measurement: the machine is shared, and a loaded machine has no second core to
give. Worse, with the kernel's session autogroups (``/proc/sys/kernel/sched_autogroup_enabled``
= 1) a benchmark's processes share ONE group's slice of the machine however many they are, so
under load two workers get no more processor than one: the wall-clock ratio then says nothing
about scale-out. The last rows therefore also account processor time (``getrusage``: this
process, and the pool's workers once reaped) and give the speed-up those seconds imply on an
idle 2-core machine -- a projection from measured processor seconds, labelled as such, not a
measurement. The results of all backends are compared byte for byte (a row says if they differ).
"""

from __future__ import annotations

import os
import resource
import time
import warnings


def _load() -> str:
    return f"load {os.getloadavg()[0]:.1f}"


def _cpu(who) -> float:
    r = resource.getrusage(who)
    return r.ru_utime + r.ru_stime


def run():
    import numba

    from cr3bp import system
    from cr3bp.operations import keeping as kp
    from cr3bp.orbits.request import solve_request
    warnings.simplefilter("ignore")
    em = system("earth-moon")
    orbit = solve_request(em, "halo L2 south resonance=9:2")
    errors = kp.Errors(1.0, 0.01, 0.01, 0.001)
    kp.budget(orbit, "2031-03-01T00:00:00Z", 14.0 / em.time_days, errors, 2, workers=1)   # warm the kernels
    load_all = _load()
    t = time.perf_counter()
    b = kp.budget(orbit, "2031-03-01T00:00:00Z", 365.0 / em.time_days, errors, 200, seed=1, workers=2)
    t_all = time.perf_counter() - t
    s = b.summary()["dv_per_year_mps"]
    ref = b.reference

    def timed(fn):
        load = _load()
        t0 = time.perf_counter()
        out = fn()
        return time.perf_counter() - t0, out, load

    threads = numba.get_num_threads()
    numba.set_num_threads(1)
    try:
        c0 = _cpu(resource.RUSAGE_SELF)
        t_one, one, load_one = timed(lambda: kp.run_trials(ref, errors, 200, 1, workers=1))
        cpu_one = _cpu(resource.RUSAGE_SELF) - c0
    finally:
        numba.set_num_threads(threads)
    t_thr, thr, load_thr = timed(lambda: kp.run_trials(ref, errors, 200, 1, workers=1))
    c0, k0 = _cpu(resource.RUSAGE_SELF), _cpu(resource.RUSAGE_CHILDREN)
    t_cold, cold, load_cold = timed(lambda: kp.run_trials(ref, errors, 200, 1, workers=2))
    cpu_parent, cpu_workers = _cpu(resource.RUSAGE_SELF) - c0, _cpu(resource.RUSAGE_CHILDREN) - k0
    # as budget() runs it: the pool started and its workers warmed while the reference is
    # computed (here: before the timer), the trials then sent to the warm pool
    from cr3bp.transfers import tasks
    ex = tasks.start_pool(2, warm=kp._warm_worker)
    try:
        kp.run_trials(ref, errors, 2, 1, workers=2, executor=ex)      # as the dask row: workers warmed
        t_pool, pool, load_pool = timed(lambda: kp.run_trials(ref, errors, 200, 1, workers=2, executor=ex))
    finally:
        ex.shutdown()
    # idle 2-core projection: the workers' processor seconds (their start-up included) spread
    # over two cores, plus the parent's
    proj_pool = cpu_workers / 2.0 + cpu_parent

    def same(res):
        return all(res[k].tobytes() == one[k].tobytes() for k in one)

    base = f"the same trials in one process on one thread ({load_one})"
    rows = [
        (f"station keeping, 9:2 NRHO, 200 trials x 1 year, pool of 2 (mean {s['mean']:.3g}, "
         f"p95 {s['p95']:.3g} m/s a year; {load_all})", t_all, "", None, "< 180 s"),
        (f"station keeping: the 200 trials alone, warm pool of 2 (started during the reference, as budget() "
         f"does; {load_pool}; {'identical' if same(pool) else 'RESULTS DIFFER'})", t_pool, base, t_one, ">= 1.6x"),
        (f"station keeping: the 200 trials alone, pool of 2 started for them ({load_cold}; "
         f"{'identical' if same(cold) else 'RESULTS DIFFER'})", t_cold, base, t_one, "information"),
        (f"station keeping: the 200 trials alone, one process on {threads} threads ({load_thr}; "
         f"{'identical' if same(thr) else 'RESULTS DIFFER'})", t_thr, base, t_one, "information"),
        (f"station keeping: pool of 2, PROJECTED for an idle 2-core machine from processor seconds "
         f"(workers {cpu_workers:.1f} s incl. start-up, parent {cpu_parent:.1f} s)", proj_pool,
         "processor seconds of one process on one thread", cpu_one, "information (projection, not measured)"),
    ]
    try:
        import logging

        import distributed
    except ImportError:
        return rows + [("station keeping: the 200 trials on a local dask cluster of 2", None, "", None,
                        "skipped: dask.distributed not installed")]
    t = time.perf_counter()
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None,
                                  silence_logs=logging.ERROR) as cluster, distributed.Client(cluster) as client:
        t_start = time.perf_counter() - t
        kp.run_trials(ref, errors, 4, 1, scheduler=client)          # warm the workers
        t_dask, dask_res, load_dask = timed(lambda: kp.run_trials(ref, errors, 200, 1, scheduler=client))
    return rows + [
        (f"station keeping: the 200 trials alone, local dask cluster of 2, running ({load_dask}; "
         f"{'identical' if same(dask_res) else 'RESULTS DIFFER'})", t_dask, base, t_one, ">= 1.6x"),
        ("station keeping: the same, with the cluster's start-up", t_dask + t_start, base, t_one, "information"),
    ]
