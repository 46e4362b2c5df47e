"""[settings] of a scenario: every key is read or refused, none silently ignored; and a file with
several problems is reported one 'librate: error:' line per problem by every command."""

from __future__ import annotations

from pathlib import Path

import pytest

from cr3bp.scenario import run as mission
from librate_cli.main import main

ROOT = Path(__file__).resolve().parents[1]
DEMO = (ROOT / "examples" / "farlight.toml").read_text(encoding="utf-8")


def _write(tmp_path, extra: str) -> Path:
    p = tmp_path / "s.toml"
    p.write_text(DEMO + "\n" + extra, encoding="utf-8")
    return p


@pytest.mark.parametrize("key", ["family_members", "tube_points"])
def test_settings_never_read_are_refused(tmp_path, capsys, key):
    p = _write(tmp_path, f"[settings]\n{key} = 50\n")
    assert main(["run", str(p), "--check-only", "--out", str(tmp_path / "out")]) == 2
    err = [ln for ln in capsys.readouterr().err.strip().splitlines() if "error" in ln]
    assert len(err) == 1 and "s.toml:" in err[0] and f"settings.{key}" in err[0] and "remove the key" in err[0]


def test_settings_workers_is_the_default_of_the_run(tmp_path, monkeypatch):
    """settings.workers reaches the leg computation when the caller gives none; an explicit
    value wins."""
    p = _write(tmp_path, "[settings]\nworkers = 3\n")
    plan = mission.prepare(p)
    seen = []

    def stop(plan, orbits, out, catalog, workers, *a, **k):
        seen.append(workers)
        raise RuntimeError("stop here")

    monkeypatch.setattr(mission, "solve_orbits", lambda plan, catalog, progress: {})
    monkeypatch.setattr(mission, "check_spans", lambda plan, orbits: None)
    monkeypatch.setattr(mission, "_run_stages", stop)
    for given, expected in ((None, 3), (1, 1)):
        with pytest.raises(RuntimeError):
            mission.run(plan, tmp_path / f"out{expected}", workers=given, catalog=object())
    assert seen == [3, 1]


def test_several_problems_in_a_node_list_one_line_each(tmp_path, capsys):
    nodes = tmp_path / "nodes.toml"
    nodes.write_text('system = "earth-moon"\n[settings]\npatches = 99\ntof = "-1d"\n'
                     '[[node]]\nname = "a"\nkind = "orbit"\norbit = "lyapunov L1 jacobi=3.17"\n', encoding="utf-8")
    assert main(["graph", "build", "--system", "earth-moon", "--nodes", str(nodes), "--no-catalog",
                 "--quiet"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) >= 2, err
    assert all(line.startswith("librate: error: ") and "nodes.toml:" in line for line in err), err
