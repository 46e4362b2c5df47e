"""Speed of the energy stage: Hill-region grids and Lagrange points, as ratios against
baselines measured in the same run."""

import numpy as np

from .timing import best_time

N = 201


def run():
    from scipy.optimize import brentq

    from cr3bp import dynamics, system
    from cr3bp.energy import hill_region, two_omega
    from cr3bp.equilibria import jacobi_constants

    em = system("earth-moon")
    u = np.linspace(-1.5, 1.5, N)
    uu, vv = np.meshgrid(u, u)

    def grid_vectorised():
        two_omega(em, uu, vv)

    def grid_loop():  # one scalar kernel call per grid point: what vectorising saves
        out = np.empty(uu.shape)
        for i in range(N):
            for j in range(N):
                out[i, j] = 2.0 * dynamics.omega(em.mu, uu[i, j], vv[i, j], 0.0)

    grid_vectorised()
    hill_region(em, 3.17, resolution=N)

    def points():
        jacobi_constants(em)

    def points_brentq():
        mu = em.mu

        def f(x):
            return x - (1 - mu) * (x + mu) / abs(x + mu) ** 3 - mu * (x - 1 + mu) / abs(x - 1 + mu) ** 3
        brentq(f, -mu + 1e-9, 1 - mu - 1e-9)
        brentq(f, 1 - mu + 1e-9, 3.0)
        brentq(f, -3.0, -mu - 1e-9)

    t_vec = best_time(grid_vectorised)
    t_loop = best_time(grid_loop, repeat=1)
    t_hill = best_time(lambda: hill_region(em, 3.17, resolution=N))
    t_pts = best_time(points, repeat=20)
    t_brq = best_time(points_brentq, repeat=20)
    return [
        (f"2 Omega on a {N}x{N} grid (numpy)", t_vec, "per-point kernel calls", t_loop,
         "at least 20x faster than per-point calls"),
        (f"hill_region {N}x{N} (grid, contours, refinement)", t_hill, "per-point kernel calls", t_loop,
         "faster than evaluating the grid point by point"),
        ("Jacobi constants of L1..L5 (Newton on the quintic)", t_pts, "scipy brentq on dOmega/dx", t_brq,
         "no slower than three brentq solves"),
    ]
