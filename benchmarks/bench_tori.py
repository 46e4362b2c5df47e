"""Tori speed (issue 16): one observatory-size Sun–Earth L2 Lissajous torus from the shell
(``librate torus --family lissajous``, wall time of the whole command, process start
included) against the 5 s goal; the issue's example (``librate orbit --family lissajous``,
Ay 800000 km, Az 500000 km) from the shell, timed as information; and a family of 100 tori
(pseudo-arclength, Jacobi constant held, from the Lyapunov orbit's torus) against the 1 minute
goal.
"""

from __future__ import annotations

import subprocess
import sys
import time


def run():
    from cr3bp import system
    from cr3bp.orbits.request import solve_request
    from cr3bp.tori import continue_family, torus_around
    cmd = [sys.executable, "-m", "librate_cli.main", "torus", "--system", "sun-earth",
           "--family", "lissajous", "--point", "L2", "--ay", "300000km", "--az", "150000km",
           "--format", "json", "-q"]
    t0 = time.perf_counter()
    done = subprocess.run(cmd, capture_output=True, text=True)
    t_shell = time.perf_counter() - t0
    rows = [("Sun-Earth L2 Lissajous Ay 300000 km, Az 150000 km, from the shell",
             t_shell if done.returncode == 0 else None, "", None,
             "< 5 s" if done.returncode == 0 else f"failed: {done.stderr.strip()[:80]}")]
    cmd = [sys.executable, "-m", "librate_cli.main", "orbit", "--system", "sun-earth",
           "--family", "lissajous", "--point", "L2", "--ay", "800000km", "--az", "500000km",
           "--format", "json", "-q"]
    t0 = time.perf_counter()
    done = subprocess.run(cmd, capture_output=True, text=True)
    t_big = time.perf_counter() - t0
    rows.append(("Sun-Earth L2 Lissajous Ay 800000 km, Az 500000 km (issue example), shell",
                 t_big if done.returncode == 0 else None, "", None,
                 "information" if done.returncode == 0 else f"failed: {done.stderr.strip()[:80]}"))
    em = system("earth-moon")
    orbit = solve_request(em, "lyapunov L1 ax=2000km")
    start = torus_around(orbit, 300.0 / em.length_km)
    t0 = time.perf_counter()
    fam = continue_family(start, "jacobi", members=100)
    t_fam = time.perf_counter() - t0
    rows.append((f"family of {len(fam.members) - 1} tori, Earth-Moon L1 Lissajous, Jacobi held",
                 t_fam, "", None, "< 60 s"))
    return rows
