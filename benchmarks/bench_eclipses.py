"""Eclipse history speed: a year of the 9:2 NRHO's shadow passes (Earth and Moon, umbra and
penumbra) at a 5-minute search step, from the placed orbit (Sun, Moon and frame sampled
included; the orbit solve is not timed), against a baseline that evaluates the same geometry
one epoch at a time over the first ten days (scaled to the year).

Target: a year of eclipse history under 5 s (issue 17).
"""

from __future__ import annotations

import warnings

import numpy as np

from .timing import best_time


def run():
    from cr3bp import system
    from cr3bp.operations import eclipses, phasing, placement
    from cr3bp.orbits.request import solve_request
    warnings.simplefilter("ignore")
    em = system("earth-moon")
    orbit = solve_request(em, "halo L2 south resonance=9:2")
    pl = placement.place(em, orbit, "2031-03-01T00:00:00Z")

    def year():
        sk = phasing.sky(pl, 365 * 86400.0, 300.0)
        return phasing.history(pl, sk, 0.0)
    year()
    t_year = best_time(year, repeat=2)
    sk = phasing.sky(pl, 10 * 86400.0, 300.0)
    geo = phasing.geometry(pl, sk, 0.0)
    r = eclipses.radii_km()

    def one_by_one():
        for t in sk.tdb_s:
            pos = geo(np.array([t, t + 1.0]))
            eclipses.visible_fraction(pos["spacecraft"], pos["sun"], pos["earth"], r["earth"], r["sun"])
    t_naive = best_time(one_by_one, repeat=1) * 36.5
    return [("eclipse history, 9:2 NRHO, 1 year at 5 min", t_year,
             "epoch-by-epoch geometry (10 d, scaled to 1 year)", t_naive, "< 5 s")]
