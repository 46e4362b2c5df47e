"""Insertion dispersion speed: 2000 trials of a 6-day stable-manifold coast onto the Earth-Moon
L2 9:2 NRHO with two corrections (1 km, 1 cm/s navigation; 1 %, 1 mm/s execution; 20 m/s last
maneuver), with the linear covariance estimate, against the linear covariance alone (orbit
solved and kernels warmed before timing). No target in the issue: information.

Issue 19: the same 2000 trials on a process pool of 2 (pieces of
cr3bp.operations.dispersion.PIECE_TRIALS trials, start-up included) against one process, with
the load average and processor seconds beside the wall clock (information).
"""

from __future__ import annotations

import os
import resource
import time


def run():
    from cr3bp import system
    from cr3bp.operations import dispersion as dp
    from cr3bp.operations.keeping import Errors
    from cr3bp.orbits.request import solve_request
    em = system("earth-moon")
    orbit = solve_request(em, "halo L2 south resonance=9:2")
    nom = dp.manifold_insertion(orbit, 0.0, 6.0 / em.time_days, 20.0)
    corr = [1.0 / em.time_days, 4.0 / em.time_days]
    errors = Errors(1.0, 0.01, 0.01, 0.001)
    dp.dispersion(nom, corr, errors, 4)                                   # warm the kernels
    t = time.perf_counter()
    d = dp.dispersion(nom, corr, errors, 2000, seed=1)
    t_all = time.perf_counter() - t
    t = time.perf_counter()
    dp.linear_covariance(nom, corr, errors)
    t_lin = time.perf_counter() - t
    s = d.summary()["total_correction_mps"]
    return [(f"insertion dispersion, 2000 trials, 2 corrections (mean {s['monte_carlo_mean']:.3g}, p95 "
             f"{s['monte_carlo_p95']:.3g} m/s; linear mean {s['linear_mean']:.3g} m/s)", t_all,
             "linear covariance alone", t_lin, "information"),
            pool_row(nom, corr, errors)]


def _cpu(who) -> float:
    r = resource.getrusage(who)
    return r.ru_utime + r.ru_stime


def pool_row(nom, corr, errors):
    """The 2000 trials on a pool of 2 against one process (both timed here, with their load and
    processor seconds)."""
    from cr3bp.operations import dispersion as dp
    from cr3bp.transfers.tasks import run_tasks

    def runner(function, items):
        return run_tasks(function, items, 2)
    load_one, c0, t = os.getloadavg()[0], _cpu(resource.RUSAGE_SELF), time.perf_counter()
    here = dp.dispersion(nom, corr, errors, 2000, seed=1)
    t_one, cpu_one = time.perf_counter() - t, _cpu(resource.RUSAGE_SELF) - c0
    load_pool = os.getloadavg()[0]
    c0, k0, t = _cpu(resource.RUSAGE_SELF), _cpu(resource.RUSAGE_CHILDREN), time.perf_counter()
    pool = dp.dispersion(nom, corr, errors, 2000, seed=1, runner=runner)
    t_pool = time.perf_counter() - t
    cpu_parent, cpu_workers = _cpu(resource.RUSAGE_SELF) - c0, _cpu(resource.RUSAGE_CHILDREN) - k0
    same = all(here.mc[k].tobytes() == pool.mc[k].tobytes() for k in ("dv", "final", "lost"))
    return (f"insertion dispersion, 2000 trials on a pool of 2, start-up included (load {load_pool:.1f}; workers "
            f"{cpu_workers:.1f} CPU s, parent {cpu_parent:.1f} s; {'identical' if same else 'RESULTS DIFFER'})",
            t_pool, f"one process (load {load_one:.1f}; {cpu_one:.1f} CPU s)", t_one, "information")
