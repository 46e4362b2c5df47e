"""End-to-end reruns of the demo scenario (``librate run examples/farlight.toml``) from the
shell: what a user waits for after changing nothing. Two rows, each with its baseline measured
in the same run, sides interleaved:

1. The unchanged rerun into the same folder (the earlier run is verified by its manifest's
   SHA-256 and reported: ``cr3bp/scenario/reuse.py``), against the same rerun with
   ``--recompute`` (everything computed again from a warm catalogue, figures reused).
   Target (issue: faster where users wait): under 3 s.
2. A rerun into a new folder with a catalogue that holds the families, legs and figures
   (figures reused by content), against the same rerun with the catalogue's figure files
   removed, so every figure is drawn again (the behaviour before figures were reused).
   Target: faster than drawing every figure.
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
        same, recomputed = [], []
        for i in range(REPEAT):
            same.append(_librate("run", SCENARIO, "--out", d / "first", "--catalog", warm, "--quiet"))
            recomputed.append(_librate("run", SCENARIO, "--out", d / "first", "--catalog", warm,
                                       "--quiet", "--recompute"))
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
    return [("demo scenario rerun, unchanged, same folder (run reused), from the shell", min(same),
             "the same rerun with --recompute", min(recomputed), "< 3 s"),
            ("demo scenario rerun into a new folder (figures reused), from the shell", min(reused),
             "the same rerun drawing every figure", min(drawn), "faster")]
