"""Timing helpers shared by the benchmark modules (one place, so every row is timed alike)."""

from __future__ import annotations

import statistics
import time


def best_time(fn, repeat=3, clock=time.perf_counter):
    """Least time of ``repeat`` calls of ``fn()`` on ``clock`` (wall time by default;
    ``time.process_time`` for processor time)."""
    best = float("inf")
    for _ in range(repeat):
        t0 = clock()
        fn()
        best = min(best, clock() - t0)
    return best


def median_time(fn, repeat, min_total=0.2):
    """Median wall time of ``fn()`` over ``repeat`` calls (more while under ``min_total`` s)."""
    times = []
    start = time.perf_counter()
    while len(times) < repeat or (time.perf_counter() - start < min_total and len(times) < 200):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def cpu_time(fn):
    """Processor time of one ``fn()`` call, summed over all threads (insensitive to how many
    other programs share the machine, unlike wall time)."""
    t0 = time.process_time()
    fn()
    return time.process_time() - t0
