"""``python -m benchmarks`` (``make bench``): run every ``benchmarks/bench_*.py`` and print a table.

Each module exposes ``run() -> list of rows`` with a row
``(name, seconds, baseline_name, baseline_seconds, target_text)``. Speed is judged by ratios
against a baseline measured in the same run, never by absolute times in tests. The target
text is one of:

* ``">= 50x"`` or ``"at least 50x ..."``: the baseline takes at least 50 times as long
  (ratio = baseline / seconds);
* ``"no slower than ..."``: ratio >= 1; ``"faster than ..."``: ratio > 1;
* ``"< 0.5 s"``: the measured time itself is below 0.5 s (for wall-clock limits);
* anything else (or an empty text) is shown as information, not judged.

``seconds`` may be None for a row that was skipped (its target text says why). The command
exits 0 whatever the rows' verdicts (the table is a report, not a gate), and 1 when a benchmark
module itself raised: its row says FAILED with the error, and the other modules still run.

Each row also shows the machine's one-minute load average when its module started: on a
shared machine a wall-time goal can be missed for want of a core, not of speed, and the reader
needs to see that (the rows that matter also report processor time in their names or texts).
"""

from __future__ import annotations

import importlib
import os
import pkgutil
import re
import sys
import time
from pathlib import Path

_RATIO = re.compile(r"^\s*(?:>=|at least)\s*([0-9.]+)\s*x\b", re.IGNORECASE)
_NO_SLOWER = re.compile(r"^\s*no slower\b", re.IGNORECASE)
_FASTER = re.compile(r"^\s*faster\b", re.IGNORECASE)
_ABS = re.compile(r"^\s*<\s*([0-9.]+)\s*s\b")
#: The target and verdict of a benchmark module whose run() raised.
FAILED = "FAILED"


def judge(seconds, baseline_seconds, target):
    """(ratio, verdict) of one row; verdict is "MET", "NOT MET", "-" (not judged), "skipped" or
    "FAILED" (the module raised)."""
    if target == FAILED:
        return None, FAILED
    if seconds is None:
        return None, "skipped"
    ratio = baseline_seconds / seconds if baseline_seconds and seconds > 0 else None
    m = _RATIO.match(target or "")
    if m and ratio is not None:
        return ratio, "MET" if ratio >= float(m.group(1)) else "NOT MET"
    if ratio is not None and _NO_SLOWER.match(target or ""):
        return ratio, "MET" if ratio >= 1.0 else "NOT MET"
    if ratio is not None and _FASTER.match(target or ""):
        return ratio, "MET" if ratio > 1.0 else "NOT MET"
    m = _ABS.match(target or "")
    if m:
        return ratio, "MET" if seconds < float(m.group(1)) else "NOT MET"
    return ratio, "-"


def _fmt_s(v):
    if v is None:
        return "-"
    return f"{v * 1e3:.3f} ms" if v < 1 else f"{v:.3f} s"


def main(argv=None) -> int:
    here = Path(__file__).resolve().parent
    sys.path.insert(0, str(here.parent))
    names = sorted(m.name for m in pkgutil.iter_modules([str(here)]) if m.name.startswith("bench_"))
    only = (argv if argv is not None else sys.argv[1:])
    rows, failed = [], []
    for name in names:
        if only and not any(o in name for o in only):
            continue
        t0 = time.perf_counter()
        mod = importlib.import_module(f"benchmarks.{name}")
        load = os.getloadavg()[0]
        print(f"running {name} (load {load:.1f}) ...", file=sys.stderr, flush=True)
        try:
            for row in mod.run():
                rows.append((name, load, *row))
        except Exception as e:           # a broken benchmark is a row of the report, and the exit code
            failed.append(name)
            rows.append((name, load, f"{name}: {type(e).__name__}: {str(e)[:200]}", None, None, None, FAILED))
            print(f"  {name} FAILED: {type(e).__name__}: {e}", file=sys.stderr, flush=True)
            continue
        print(f"  {name} done in {time.perf_counter() - t0:.1f} s", file=sys.stderr, flush=True)
    header = ("benchmark", "seconds", "baseline", "baseline s", "ratio", "target", "met", "load")
    table = []
    for module, load, name, sec, base, base_sec, target in rows:
        ratio, verdict = judge(sec, base_sec, target)
        table.append((name, _fmt_s(sec), base or "-", _fmt_s(base_sec),
                      "-" if ratio is None else f"{ratio:.1f}x", target or "-", verdict, f"{load:.1f}"))
    widths = [max(len(str(r[i])) for r in [header] + table) for i in range(len(header))]
    print("  ".join(h.ljust(w) for h, w in zip(header, widths)))
    print("  ".join("-" * w for w in widths))
    for r in table:
        print("  ".join(str(c).ljust(w) for c, w in zip(r, widths)))
    print(f"\nTimes are medians of repeated runs on this machine ({os.cpu_count()} cores), after the "
          "first compile; the machine may be shared (the load column: its one-minute load average "
          "when the row's module started), so compare the ratios, which are measured in the same run.")
    if failed:
        print(f"FAILED (the benchmark itself raised): {', '.join(failed)}", file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
