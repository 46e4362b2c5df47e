"""Run every ``benchmarks/bench_<subject>.py`` and print its rows (minimal runner).

Each module exposes ``run() -> list of (name, seconds, baseline_name, baseline_seconds,
target_text)``. Ratios are against baselines measured in the same run.
"""

import importlib
import pkgutil
import sys
from pathlib import Path


def main(argv=None) -> int:
    names = sys.argv[1:] if argv is None else argv
    here = Path(__file__).resolve().parent
    mods = sorted(m.name for m in pkgutil.iter_modules([str(here)]) if m.name.startswith("bench_"))
    if names:
        mods = [m for m in mods if any(n in m for n in names)]
    print(f"{'benchmark':44s} {'seconds':>9s}  {'baseline':34s} {'seconds':>9s} {'ratio':>7s}  target")
    for mod in mods:
        for name, sec, base_name, base_sec, target in importlib.import_module(f"benchmarks.{mod}").run():
            ratio = f"{base_sec / sec:7.2f}" if base_sec and sec else "      -"
            base = f"{base_sec:9.3f}" if base_sec else "        -"
            print(f"{name:44s} {sec:9.3f}  {base_name or '-':34s} {base} {ratio}  {target}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
