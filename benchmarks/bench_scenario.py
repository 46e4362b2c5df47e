"""End-to-end rerun of the demo scenario (``librate run examples/farlight.toml``) from the
shell, with a catalogue that already holds its families, legs and figures: what a user
waits for after changing nothing. Baseline, measured in the same run with the two sides
interleaved: the same rerun with the catalogue's figure files removed, so every figure is
drawn again (the behaviour before figures were reused).

Target (issue: faster where users wait): an unchanged rerun in under 3 s.
"""

from __future__ import annotations

import sqlite3
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
SCENARIO = ROOT / "examples" / "farlight.toml"
REPEAT = 3


def _librate(*args) -> float:
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-m", "librate_cli.main", *map(str, args)], check=True,
                   stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    return time.perf_counter() - t0


def run():
    with tempfile.TemporaryDirectory(prefix="librate-bench-") as d:
        d = Path(d)
        warm = d / "warm.sqlite"
        _librate("run", SCENARIO, "--out", d / "first", "--catalog", warm, "--quiet")
        cold = d / "no-figures.sqlite"
        reused, drawn = [], []
        for i in range(REPEAT):
            reused.append(_librate("run", SCENARIO, "--out", d / f"reused-{i}", "--catalog", warm,
                                   "--quiet"))
            cold.unlink(missing_ok=True)
            with sqlite3.connect(warm) as src, sqlite3.connect(cold) as db:
                src.backup(db)                    # a consistent copy (the catalogue is in WAL mode)
                db.execute("DELETE FROM figures")
            drawn.append(_librate("run", SCENARIO, "--out", d / f"drawn-{i}", "--catalog", cold,
                                  "--quiet"))
    return [("demo scenario rerun, unchanged (figures reused), from the shell", min(reused),
             "the same rerun drawing every figure", min(drawn), "< 3 s")]
