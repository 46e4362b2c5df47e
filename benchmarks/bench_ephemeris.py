"""Ephemeris and time-scale speed: the Moon at 10^6 epochs (target under 1 s).

Baseline: pyerfa's moon98 (the same lunar series, in compiled C, vectorised over the array
by pyerfa's ufunc loop) on the same 10^6 epochs, when pyerfa (a test extra) is installed.
"""

import time

import numpy as np

N = 1_000_000


def _best(f, repeat=3):
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        f()
        best = min(best, time.perf_counter() - t0)
    return best


def run():
    from cr3bp import ephemeris as eph
    from cr3bp.timescales import parse_iso

    t = parse_iso("2031-03-01T00:00:00 TDB") + np.linspace(0.0, 20 * 365.25 * 86400.0, N)
    eph.position("moon", t[:10])
    rows = []
    pos = _best(lambda: eph.position("moon", t))
    st = _best(lambda: eph.state("moon", t), repeat=1)
    try:
        import erfa
        t1, t2 = t.two_part_jd("tt")
        base = _best(lambda: erfa.moon98(t1, t2))
        base_name = "pyerfa moon98 (C, vectorised)"
    except ImportError:
        base, base_name = None, "pyerfa not installed"
    rows.append(("ephemeris: Moon position, 1e6 epochs", pos, base_name, base, "< 1 s"))
    rows.append(("ephemeris: Moon state, 1e6 epochs", st, base_name, base, "(position+velocity)"))
    sun = _best(lambda: eph.position("sun", t[:100_000], "earth"), repeat=1)
    rows.append(("ephemeris: Sun about Earth, 1e5 epochs", sun, "", None, "(Moon + EMB Kepler)"))
    iso = _best(lambda: t[:100_000].to_iso("tdb", 3), repeat=1)
    rows.append(("timescales: 1e5 epochs to ISO TDB text", iso, "", None, "(export of 1e5 states)"))
    return rows
