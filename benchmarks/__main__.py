"""Run every ``benchmarks/bench_<subject>.py`` and print its rows (minimal runner; each module
exposes ``run() -> list of (name, seconds, baseline_name, baseline_seconds, target_text)``)."""

import importlib
import pkgutil
import sys
from pathlib import Path


def main():
    here = Path(__file__).resolve().parent
    sys.path.insert(0, str(here.parent))
    for m in sorted(pkgutil.iter_modules([str(here)]), key=lambda m: m.name):
        if not m.name.startswith("bench_"):
            continue
        mod = importlib.import_module(f"benchmarks.{m.name}")
        for name, t, base, tb, target in mod.run():
            ratio = tb / t if t > 0 else float("inf")
            print(f"{m.name[6:]:<12} {name:<55} {t * 1e3:10.3f} ms  vs {base} {tb * 1e3:10.3f} ms"
                  f"  ({ratio:7.1f}x; target: {target})")


if __name__ == "__main__":
    main()
