"""Low-energy transfer from a 200 km Earth parking orbit to the Earth-Moon L2 9:2 NRHO
(``librate connect --path low-energy``), searched over a year of Sun phases (one synodic
month of Sun-Earth-Moon geometries holds them all in the bicircular model), from the shell: a
fresh process, orbit solved, backward sweep, correction, JSON written. Kernels built and
warmed by one run before timing.

Target: under 2 minutes on 2 cores (issue 15). The second row is the processor time of that
process (on a machine shared with other work the wall clock exceeds it); the third the sweep
alone (its trajectories and their count in the row name), in this process.
"""

from __future__ import annotations

import json
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
    exe = [sys.executable, "-m", "librate_cli.main"]
    with tempfile.TemporaryDirectory() as d:
        out = os.path.join(d, "le.json")
        argv = exe + ["connect", "--system", "earth-moon", "--from", "parking earth 200km", "--to",
                      "halo L2 south resonance=9:2", "--path", "low-energy", "--format", "json", "--quiet",
                      "--out", out]
        # warm-up: numba's compiled kernels cached on disk
        subprocess.run(argv[:-2] + ["--out", os.path.join(d, "warm.json")], check=True, capture_output=True)
        c0 = _child_cpu()
        t0 = time.perf_counter()
        subprocess.run(argv, check=True, capture_output=True)
        t_shell = time.perf_counter() - t0
        cpu = _child_cpu() - c0
        leg = json.loads(open(out, encoding="utf-8").read())["legs"][0]
    det = leg["details"]
    name = (f"low-energy transfer 200 km -> 9:2 NRHO over a year of Sun phases, from the shell (bicircular "
            f"total {leg['dv_mps']:.0f} m/s, insertion {leg['insertion_dv_mps']:.2f} m/s, {leg['tof_days']:.1f} d)")
    return [(name, t_shell, "", None, "< 120 s"),
            ("the same: processor time of the process", cpu, "", None, "information"),
            (f"its sweep alone ({det['sweep_trajectories']} backward trajectories in the bicircular model)",
             det["sweep_seconds"], "", None, "information")]
