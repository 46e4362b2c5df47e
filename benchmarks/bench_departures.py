"""Departure from a 200 km Earth parking orbit to the Earth-Moon L2 9:2 NRHO, direct path
(``librate connect --path direct``), from the shell: a fresh process, orbit solved, first
guesses and optimisation, JSON written. Kernels built and warmed by one run before timing.

Target: under 10 s from the shell (issue 15). The second row is the processor time of that
process (on a machine shared with other work the wall clock exceeds it); the third the design
alone, in this process.
"""

from __future__ import annotations

import os
import resource
import subprocess
import sys
import tempfile
import time


def _child_cpu():
    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    return r.ru_utime + r.ru_stime


def run():
    from cr3bp import system
    from cr3bp.orbits.request import solve_request
    from cr3bp.transfers.departure import design_departure
    exe = [sys.executable, "-m", "librate_cli.main"]
    with tempfile.TemporaryDirectory() as d:
        argv = exe + ["connect", "--system", "earth-moon", "--from", "parking earth 200km", "--to",
                      "halo L2 south resonance=9:2", "--path", "direct", "--format", "json", "--quiet",
                      "--out", os.path.join(d, "dep.json")]
        subprocess.run(argv, check=True, capture_output=True)
        c0 = _child_cpu()
        t0 = time.perf_counter()
        subprocess.run(argv, check=True, capture_output=True)
        t_shell = time.perf_counter() - t0
        cpu = _child_cpu() - c0
    em = system("earth-moon")
    orbit = solve_request(em, "halo L2 south resonance=9:2")
    t0 = time.perf_counter()
    dep = design_departure(orbit, 200.0, path="direct")
    t_design = time.perf_counter() - t0
    name = (f"direct departure 200 km -> 9:2 NRHO from the shell (CR3BP total {dep.dv_mps:.0f} m/s, "
            f"{dep.tof_days:.2f} d)")
    return [(name, t_shell, "", None, "< 10 s"),
            ("the same: processor time of the process", cpu, "", None, "information"),
            ("the design alone (design_departure, in this process)", t_design, "", None, "information")]
