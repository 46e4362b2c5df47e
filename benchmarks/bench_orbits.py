"""Orbit benchmarks.

1. The Earth–Moon L1 northern halo family from its bifurcation on the Lyapunov family toward
   the near-rectilinear region (>= 200 converged members), with ``cr3bp.propagate`` (the
   compiled integrator) against the same algorithm driven by scipy's ``solve_ivp``
   (``cr3bp.integrate.propagate_scipy``: the same shooting, continuation and geometry code,
   only the propagator swapped), measured in the same run. The scipy run covers the first
   ``SCIPY_SUBSET`` members and is scaled to the member count of the full run (stated in the
   row name). The two are timed in ``ROUNDS`` interleaved rounds (fast, scipy, fast, scipy,
   ...) and each side's median is reported, so a burst of load from other work on the
   machine falls on both and no single unlucky run decides the ratio. Target: under 3 s and
   >= 30x faster.
2. One ``librate orbit`` request for a catalogued family (the whole command, as a user runs it,
   in a fresh process): the median of ``REQUESTS`` requests for different periods, each in a
   new process. Target: under 1 s.
"""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import tempfile
import time
from contextlib import contextmanager

MEMBERS = 200
SCIPY_SUBSET = 20
ROUNDS = 3
REQUESTS = 5


@contextmanager
def _driven_by(prop):
    from cr3bp.orbits import geometry, multiple, shooting
    saved = [(m, m.propagate) for m in (shooting, geometry, multiple) if hasattr(m, "propagate")]
    try:
        for m, _ in saved:
            m.propagate = prop
        yield
    finally:
        for m, p in saved:
            m.propagate = p


def _family(n, parent):
    from cr3bp import system
    from cr3bp.orbits import continuation, families
    em = system("earth-moon")
    g = parent.members[0].system and families.collinear_point(em.mu, "L1").gamma
    fam, _ = families.branch_family(em, "halo", "L1", "north", parent=parent, max_step=0.025 * g,
                                    stops=continuation.Stops(max_members=n, altitude_km=100.0))
    return fam


def run():
    from cr3bp import system
    from cr3bp.integrate import propagate_scipy
    from cr3bp.orbits import continuation, families
    em = system("earth-moon")
    parent = families.grow_family(em, "lyapunov", "L1", stops=continuation.Stops(max_members=200, branch_points=1))
    _family(3, parent)                       # compile / warm up
    fast, slow = [], []
    for _ in range(ROUNDS):
        t0 = time.perf_counter()
        fam = _family(MEMBERS, parent)
        fast.append(time.perf_counter() - t0)
        with _driven_by(propagate_scipy):
            t0 = time.perf_counter()
            sub = _family(SCIPY_SUBSET, parent)
            slow.append(time.perf_counter() - t0)
    t_fast = statistics.median(fast)
    n = len(fam.members)
    t_scipy = statistics.median(slow) * n / len(sub.members)
    last = fam.members[-1]
    name = f"L1 north halo family, {n} members (to perilune {last.closest_approach_km['moon']:.0f} km)"
    rows = [(name, t_fast, f"solve_ivp, {len(sub.members)} members scaled to {n}", t_scipy, ">= 30x"),
            (name, t_fast, "wall-clock limit", 3.0, "< 3 s")]

    with tempfile.TemporaryDirectory() as d:
        cat = os.path.join(d, "cat.sqlite")
        exe = [sys.executable, "-m", "librate_cli.main"]
        base = ["orbit", "--system", "earth-moon", "--family", "halo", "--point", "L2", "--branch", "south",
                "--catalog", cat, "-q", "--format", "json"]
        subprocess.run(exe + base + ["--period", "6.5626d"], check=True, capture_output=True)
        times = []
        for k in range(REQUESTS):
            t0 = time.perf_counter()
            subprocess.run(exe + base + ["--period", f"{6.60 + 0.01 * k:.2f}d"], check=True, capture_output=True)
            times.append(time.perf_counter() - t0)
        t_req = statistics.median(times)
    rows.append((f"librate orbit from a catalogued family (fresh process, median of {REQUESTS})", t_req,
                 "budget", 1.0, "< 1 s"))
    return rows
