"""Station-keeping Monte Carlo speed: 200 trials over one year of the Earth-Moon L2 9:2 NRHO
from 2031-03-01 (Sun, Earth and Moon point masses; 1 km, 1 cm/s navigation and 1 %, 1 mm/s
execution errors, 1-sigma), including the reference's multiple shooting over 60 revolutions,
on a process pool of 2 workers (orbit solved and kernels warmed before timing).

Target: under 3 minutes on 2 cores (issue 17). Second row: the trials alone on the pool
against the same trials in this process (the compiled propagation there runs its own threads).
Third and fourth rows: the same trials on a local dask.distributed cluster of 2 worker
processes (started before timing; then with its start-up and shutdown), against this process.
"""

from __future__ import annotations

import time
import warnings


def run():
    from cr3bp import system
    from cr3bp.operations import keeping as kp
    from cr3bp.orbits.request import solve_request
    warnings.simplefilter("ignore")
    em = system("earth-moon")
    orbit = solve_request(em, "halo L2 south resonance=9:2")
    errors = kp.Errors(1.0, 0.01, 0.01, 0.001)
    kp.budget(orbit, "2031-03-01T00:00:00Z", 14.0 / em.time_days, errors, 2, workers=1)   # warm the kernels
    t = time.perf_counter()
    b = kp.budget(orbit, "2031-03-01T00:00:00Z", 365.0 / em.time_days, errors, 200, seed=1, workers=2)
    t_all = time.perf_counter() - t
    s = b.summary()["dv_per_year_mps"]
    t = time.perf_counter()
    kp.run_trials(b.reference, errors, 200, 1, workers=2)
    t_pool = time.perf_counter() - t
    t = time.perf_counter()
    kp.run_trials(b.reference, errors, 200, 1, workers=1)
    t_one = time.perf_counter() - t
    rows_dask = []
    try:
        import distributed
    except ImportError:
        rows_dask = [("station keeping: the 200 trials on a local dask cluster of 2", None, "", None,
                      "skipped: dask.distributed not installed")]
    else:
        t = time.perf_counter()
        with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                      dashboard_address=None) as cluster, distributed.Client(cluster) as client:
            t_start = time.perf_counter() - t
            kp.run_trials(b.reference, errors, 4, 1, scheduler=client)          # warm the workers
            t = time.perf_counter()
            kp.run_trials(b.reference, errors, 200, 1, scheduler=client)
            t_dask = time.perf_counter() - t
        rows_dask = [("station keeping: the 200 trials on a local dask cluster of 2 (running)", t_dask,
                      "the same trials in one process", t_one, "information"),
                     ("station keeping: starting the local dask cluster of 2", t_start, "", None, "information")]
    return [
        (f"station keeping, 9:2 NRHO, 200 trials x 1 year, pool of 2 (mean {s['mean']:.3g}, "
         f"p95 {s['p95']:.3g} m/s a year)", t_all, "", None, "< 180 s"),
        ("station keeping: the 200 trials alone, pool of 2", t_pool, "the same trials in one process",
         t_one, "information"),
    ] + rows_dask
