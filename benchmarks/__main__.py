"""``python -m benchmarks``: run every ``benchmarks/bench_<subject>.py`` and print its rows.

Minimal runner (the integrator engineer owns the full one). Each module exposes
``run() -> list of (name, seconds, baseline_name, baseline_seconds, target_text)``.
"""

import importlib
import pkgutil
import sys
from pathlib import Path


def main(argv=None) -> int:
    here = Path(__file__).parent
    only = (argv if argv is not None else sys.argv[1:])
    rows = []
    for m in sorted(pkgutil.iter_modules([str(here)]), key=lambda m: m.name):
        if not m.name.startswith("bench_") or (only and m.name[len("bench_"):] not in only):
            continue
        mod = importlib.import_module(f"benchmarks.{m.name}")
        rows += mod.run()
    print(f"{'benchmark':<42} {'s':>9} {'baseline':<34} {'s':>9} {'ratio':>7}  target")
    for name, s, bname, bs, target in rows:
        ratio = bs / s if s > 0 else float("inf")
        print(f"{name:<42} {s:9.3f} {bname:<34} {bs:9.3f} {ratio:6.1f}x  {target}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
