"""Departure from a 200 km Earth parking orbit to the Earth-Moon L2 9:2 NRHO, direct path
(``librate connect --path direct``), from the shell: a fresh process, orbit solved, first
guesses and optimisation, JSON written. Kernels built and warmed by one run before timing.

Target: under 10 s from the shell (issue 15), for the direct path and for the lunar-flyby path
(periapsis scan, then optimisation; 90-106 s before its batch scan and analytic gradients), and
for the lunar-flyby path to a 300 km quasi-halo about that NRHO (the torus solved too). The
rows after each are the processor time of that process (on a machine shared with other work the
wall clock exceeds it) and the design alone, in this process. The last row is the transfer
graph's leg from a 200 km parking node to the same orbit, which goes straight to the direct
departure (no manifold of the orbit reaches low Earth orbit), against the former order (the
periapsis search over the orbit's manifold first, the departure as its fallback) measured in
the same run.
"""

from __future__ import annotations

import json
import os
import resource
import subprocess
import sys
import tempfile
import time


#: The torus of the torus row (issue 16).
TORUS = "quasi-halo around halo L2 south resonance=9:2 amplitude=300km"


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
    leg_now, leg_before = _graph_leg()
    with tempfile.TemporaryDirectory() as d:
        argv_fb = exe + ["connect", "--system", "earth-moon", "--from", "parking earth 200km", "--to",
                         "halo L2 south resonance=9:2", "--path", "lunar-flyby", "--format", "json", "--quiet",
                         "--out", os.path.join(d, "fb.json")]
        c0 = _child_cpu()
        t0 = time.perf_counter()
        subprocess.run(argv_fb, check=True, capture_output=True)
        t_flyby = time.perf_counter() - t0
        cpu_fb = _child_cpu() - c0
    t0 = time.perf_counter()
    fb = design_departure(orbit, 200.0, path="lunar-flyby")
    t_fb_design = time.perf_counter() - t0
    with tempfile.TemporaryDirectory() as d:
        # the torus solved in that process too (its own catalogue), then the flyby from its base orbit
        argv_t = exe + ["connect", "--system", "earth-moon", "--from", "parking earth 200km", "--to", TORUS,
                        "--path", "lunar-flyby", "--format", "json", "--quiet", "--out", os.path.join(d, "t.json")]
        env = dict(os.environ, LIBRATE_CATALOG=os.path.join(d, "c.db"))
        c0 = _child_cpu()
        t0 = time.perf_counter()
        subprocess.run(argv_t, check=True, capture_output=True, env=env)
        t_torus = time.perf_counter() - t0
        cpu_t = _child_cpu() - c0
        with open(os.path.join(d, "t.json")) as f:
            leg = json.load(f)["legs"][0]
    return [(name, t_shell, "", None, "< 10 s"),
            ("the same: processor time of the process", cpu, "", None, "information"),
            ("the design alone (design_departure, in this process)", t_design, "", None, "information"),
            (f"lunar-flyby departure 200 km -> 9:2 NRHO from the shell (CR3BP total {fb.dv_mps:.0f} m/s, "
             f"{fb.tof_days:.2f} d, optimised {fb.optimised})", t_flyby, "", None, "< 10 s"),
            ("the same: processor time of the process", cpu_fb, "", None, "information"),
            ("the design alone (batch periapsis scan, then optimisation)", t_fb_design, "", None, "information"),
            (f"lunar-flyby departure 200 km -> 300 km quasi-halo about the 9:2 NRHO from the shell, torus "
             f"solved (CR3BP total {leg['dv_mps']:.1f} m/s, {leg['tof_days']:.2f} d, optimised {leg['optimised']})",
             t_torus, "", None, "< 10 s"),
            ("the same: processor time of the process", cpu_t, "", None, "information"),
            ("graph leg parking earth 200km -> 9:2 NRHO (no manifold search)", leg_now,
             "the search first, then the departure", leg_before, "faster than the search-first order")]


def _graph_leg():
    """Seconds of the graph's parking leg as it is, and with the manifold search run first."""
    from cr3bp import system
    from cr3bp.transfers import graph
    from cr3bp.transfers.nodes import parse_nodes
    text = ('system = "earth-moon"\n[[node]]\nname = "leo"\nkind = "parking"\nbody = "earth"\n'
            'altitude = "200km"\n[[node]]\nname = "relay"\nkind = "orbit"\norbit = "halo L2 south resonance=9:2"\n')
    em = system("earth-moon")
    tasks, _ = graph.plan(em, parse_nodes(text, em))
    (task,) = [t for t in tasks if t["from"]["name"] == "leo"]
    graph.compute_leg(task)                    # warm
    t0 = time.perf_counter()
    graph.compute_leg(task)
    now = time.perf_counter() - t0
    keep = graph.manifold_may_reach
    graph.manifold_may_reach = lambda *a: True
    try:
        t0 = time.perf_counter()
        graph.compute_leg(task)
        before = time.perf_counter() - t0
    finally:
        graph.manifold_may_reach = keep
    return now, before
