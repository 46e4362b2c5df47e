"""Ephemeris and time-scale speed: the Moon at 10^6 epochs from DE421 (target under 1 s).

The epochs are given in TT and converted to TDB, the tables' argument, inside the timing.
Baseline: pyerfa's moon98 (Meeus' lunar series in compiled C, vectorised over the array by
pyerfa's ufunc loop) on the same 10^6 epochs, when pyerfa (a test extra) is installed; and
our former default, the analytic series (``model="series"``), on the same epochs.

Times are CPU seconds of this process (``time.process_time``), best of a few runs: on the
shared development machine wall-clock time mostly measures other people's jobs. Both our
code and the baselines are single-threaded, so on an idle machine CPU time = wall time.
"""

import time

import numpy as np

from .timing import best_time

N = 1_000_000


def _best_cpu(f, repeat=3):
    return best_time(f, repeat, clock=time.process_time)


def run():
    from cr3bp.time import ephemeris as eph
    from cr3bp.time.scales import parse_iso

    t = parse_iso("2031-03-01T00:00:00 TDB") + np.linspace(0.0, 20 * 365.25 * 86400.0, N)
    eph.position("moon", t[:10])
    rows = []
    pos = _best_cpu(lambda: eph.position("moon", t))
    st = _best_cpu(lambda: eph.state("moon", t), repeat=1)
    try:
        import erfa
    except ImportError:
        erfa = None
    nan = float("nan")
    t1, t2 = t.two_part_jd("tt")
    base = _best_cpu(lambda: erfa.moon98(t1, t2), repeat=2) if erfa else nan
    name = "pyerfa moon98 (C, vectorised)" if erfa else "pyerfa not installed"
    rows.append(("Moon position (DE421), 1e6 epochs (CPU s)", pos, name, base, "< 1 s"))
    rows.append(("Moon position and velocity (DE421), 1e6 epochs (CPU s)", st, name, base, "none"))
    old = _best_cpu(lambda: eph.position("moon", t, model="series"), repeat=1)
    rows.append(("Moon position (DE421), 1e6 epochs (CPU s)", pos, "analytic series (model='series')", old,
                 "none"))
    few = t[:100_000]
    f1, f2 = few.two_part_jd("tdb")
    sun = _best_cpu(lambda: eph.position("sun", few, "earth"), repeat=1)
    # epv00 (thousands of terms) on 1e4 of the epochs, scaled by 10
    base = 10 * _best_cpu(lambda: erfa.epv00(f1[:10_000], f2[:10_000]), repeat=1) if erfa else nan
    rows.append(("Sun about Earth (DE421), 1e5 epochs (CPU s)", sun, "pyerfa epv00 (C; 1e4 x 10)" if erfa else name,
                 base, "none"))
    iso = _best_cpu(lambda: few.to_iso("tdb", 3), repeat=1)
    base = _best_cpu(lambda: erfa.d2dtf("TT", 3, f1, f2), repeat=1) if erfa else nan
    rows.append(("1e5 epochs to ISO 8601 TDB text (CPU s)", iso, "pyerfa d2dtf fields (C)" if erfa else name, base,
                 "none (export of 1e5 states)"))
    return rows
