"""Speed of the transition to the ephemeris model: the 12-revolution Earth-Moon L2 9:2 NRHO
from the CR3BP orbit to a converged Sun-Earth-Moon ephemeris trajectory (orbit solved before
timing; kernels warmed on a 1-revolution run). Baseline: scipy's DOP853 re-propagating the
converged trajectory once (state only, same right-hand side, rtol = atol = 1e-12)."""

import time
import warnings


def run():
    from scipy.integrate import solve_ivp

    from cr3bp import system
    from cr3bp.fidelity.transition import transition
    from cr3bp.orbits.request import solve_request

    warnings.simplefilter("ignore")
    orbit = solve_request(system("earth-moon"), "halo L2 south resonance=9:2")
    transition(orbit, "2031-03-01T00:00:00Z", 1, "sun,earth")          # warm the kernels
    t = time.perf_counter()
    tr = transition(orbit, "2031-03-01T00:00:00Z", 12, "sun,earth")
    t_tr = time.perf_counter() - t
    m = tr.model
    t = time.perf_counter()
    solve_ivp(m.acceleration, (tr.t_tu[0], tr.t_tu[-1]), tr.patches[0], method="DOP853",
              rtol=1e-12, atol=1e-12)
    t_sp = time.perf_counter() - t
    return [
        (f"NRHO 12 revolutions: CR3BP -> ephemeris ({tr.iterations} Newton iterations, "
         f"{len(tr.t_tu)} patch points)", t_tr, "scipy DOP853: one state-only pass", t_sp,
         "< 60 s on this 2-core machine"),
    ]
