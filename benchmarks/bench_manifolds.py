"""Speed of the manifold stage, as ratios against baselines measured in the same run.

1. A 400-trajectory unstable tube of an Earth–Moon L1 halo grown to the section x = 1 - mu
   (eigenvectors carried along the orbit and the batch propagation; after a first call that
   compiles the kernels). Baseline: a Python loop of scipy ``solve_ivp`` calls (DOP853, the
   same tolerances and section event) over a 40-trajectory subset of the same start states,
   scaled by 10 to 400 trajectories. Target: under 0.5 s and at least 100x faster.
2. A planar L1–L2 heteroclinic search at C = 3.15 with 300-point tubes, refinement of the
   candidates included. Baseline: growing the two tubes alone with the scipy loop over a
   30-trajectory subset scaled by 10. Target: under 3 s.

The orbits come from ``cr3bp.orbits.request.solve_request``.
"""

import numpy as np

from .timing import best_time


def _orbits(em):
    from cr3bp.orbits.request import solve_request
    return (solve_request(em, "halo L1 north az=12000km"), solve_request(em, "lyapunov L1 jacobi=3.15"),
            solve_request(em, "lyapunov L2 jacobi=3.15"))


def _scipy_loop(system, starts, t_final, section):
    from cr3bp.integrate import propagate_scipy
    ev = section.event(system, np.sign(t_final), True, 1)
    for s in starts:
        propagate_scipy(system, s, t_final, events=[ev])


def run():
    from cr3bp import system
    from cr3bp.tubes.connections import connect
    from cr3bp.tubes.manifolds import grow_tube, manifold_starts, parse_until
    from cr3bp.tubes.sections import parse_section

    em = system("earth-moon")
    halo, l1, l2 = _orbits(em)
    stop = parse_until(["section:x=1-mu", "time:6.283TU"], em)
    rows = []

    grow_tube(halo, "unstable", "interior", 400, stop)  # compile
    t_tube = best_time(lambda: grow_tube(halo, "unstable", "interior", 400, stop), repeat=3)
    _, _, _, starts, *_ = manifold_starts(halo, "unstable", "interior", 400)
    sec = parse_section("x=1-mu", em)
    t_base = best_time(lambda: _scipy_loop(em, starts[::10], stop.t_max, sec), repeat=1) * 10
    rows.append(("400-trajectory L1 halo tube to x=1-mu", t_tube, "scipy solve_ivp loop (40, x10)", t_base,
                 "< 0.5 s and >= 100x"))

    connect(l1, l2, "x=1-mu", 30)  # compile the refinement path
    t_conn = best_time(lambda: connect(l1, l2, "x=1-mu", 300), repeat=1)
    _, _, _, s1, *_ = manifold_starts(l1, "unstable", "interior", 300)
    _, _, _, s2, *_ = manifold_starts(l2, "stable", "interior", 300)
    t_b2 = best_time(lambda: (_scipy_loop(em, s1[::10], stop.t_max, sec),
                          _scipy_loop(em, s2[::10], -stop.t_max, sec)), repeat=1) * 10
    rows.append(("planar L1-L2 heteroclinic search, 300-point tubes + refinement", t_conn,
                 "scipy loop, tubes only (30, x10)", t_b2, "< 3 s"))
    return rows
