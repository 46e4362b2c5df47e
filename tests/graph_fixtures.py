"""Hand-made transfer-graph inputs for the tests: states cut from one propagated CR3BP arc.

The base arc is a ballistic loop about the Moon (Earth-Moon system, from x = 1 - mu + 0.1 LU
at rest in y, vy = -0.4 LU/TU), sampled every 2 days; it neither strikes a primary nor leaves
the Moon's neighbourhood in 6 days (checked by the tests that use it).
"""

import numpy as np

from cr3bp import propagate, system

EARTH_MOON = "earth-moon"
STEP_DAYS = 2.0


def arc_states(n=4, step_days=STEP_DAYS):
    s = system(EARTH_MOON)
    dt = step_days / s.time_days
    a = propagate(s, [1 - s.mu + 0.1, 0, 0, 0, -0.4, 0], (n - 1) * dt, t_eval=np.arange(n) * dt)
    return s, a.states.copy()


def perturbed_states(n=4, seed=1, dv=0.02, dr=0.003):
    """The arc's interior states nudged (position by ~dr LU, velocity by ~dv LU/TU) so legs cost Δv."""
    s, st = arc_states(n)
    rng = np.random.default_rng(seed)
    st[1:-1, 3:] += rng.normal(scale=dv, size=(n - 2, 3))
    st[1:-1, :3] += rng.normal(scale=dr, size=(n - 2, 3))
    return s, st


def node_list_text(states, chain=True, tof="2d", patches=3, all_pairs=False, extra=""):
    nodes = "\n".join(f'[[node]]\nname = "p{i}"\nkind = "state"\nstate = {[float(v) for v in s]}\n'
                      for i, s in enumerate(states))
    edges = ""
    if chain:
        edges = "\n".join(f'[[edge]]\nfrom = "p{i}"\nto = "p{i + 1}"\ntof = "{tof}"\nboth_ways = false\n'
                          for i in range(len(states) - 1))
    return (f'system = "earth-moon"\n[settings]\nall_pairs = {str(all_pairs).lower()}\npatches = {patches}\n'
            f'tof = "{tof}"\n' + extra + nodes + edges)
