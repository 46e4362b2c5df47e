"""A rerun of an unchanged scenario into the same folder reports the earlier run instead of
computing it again (cr3bp.scenario.reuse), and anything that could change a result runs again:
the scenario's bytes or name, the code, a package version, an output file changed or missing,
--recompute. The reused answer is the earlier one, number for number (a seam: run -> rerun)."""

import json
import re
import tomllib
from pathlib import Path

import pytest

import cr3bp
from cr3bp.scenario import reuse
from librate_cli.main import main

SCENARIO = """
[mission]
name = "Reuse"
issued = "2026-12-01T00:00:00"

[system]
name = "earth-moon"
epoch = "2031-03-01T00:00:00Z"

[orbits.gate]
family = "lyapunov"
point = "L1"
jacobi = 3.17

[orbits.gate.checks]
max_period = "20d"

[plots]
orbits = true
hill_regions = false
formats = ["png"]
"""


def _cli(scenario, out, catalog, *extra):
    return main(["run", str(scenario), "--out", str(out), "--catalog", str(catalog), *extra])


def _state(out):
    return {p.name: (p.stat().st_mtime_ns, p.read_bytes()) for p in sorted(Path(out).iterdir())}


@pytest.fixture
def first(tmp_path, capsys):
    s = tmp_path / "reuse.toml"
    s.write_text(SCENARIO)
    out, cat = tmp_path / "out", tmp_path / "catalog.sqlite"
    assert _cli(s, out, cat) == 0
    printed = capsys.readouterr()
    assert "nothing to compute" not in printed.err
    return s, out, cat, printed.out


def test_an_unchanged_rerun_computes_nothing_writes_nothing_and_says_so(first, capsys, monkeypatch):
    s, out, cat, printed = first
    before = _state(out)
    # any computation would have to solve the orbit: make that impossible
    import cr3bp.scenario.run as mission
    monkeypatch.setattr(mission, "run", lambda *a, **k: pytest.fail("the rerun computed"))
    assert _cli(s, out, cat) == 0
    again = capsys.readouterr()
    assert "nothing to compute" in again.err and "--recompute" in again.err
    assert _state(out) == before                               # not one file touched
    strip = lambda t: re.sub(r"done in [0-9.]+ s", "done", t)   # noqa: E731
    assert strip(again.out) == strip(printed)                  # same summary, same file count


def test_the_reused_answer_is_the_earlier_one(first):
    s, out, cat, _ = first
    r = cr3bp.run(s, out, catalog=cat)
    assert r.reused is True
    stored = json.loads((out / "orbits.json").read_text())["orbits"]
    assert r.to_dict()["orbits"] == stored
    assert [c.to_dict() for c in r.checks["gate"]] == json.loads((out / "checks.json").read_text())["checks"]["gate"]
    assert r.checks["gate"][0].passed and r.report == out / "report.html"
    assert sorted(p.name for p in r.files) == sorted(p.name for p in out.iterdir())


def test_reuse_false_runs_again(first):
    s, out, cat, _ = first
    r = cr3bp.run(s, out, catalog=cat, reuse=False)
    assert r.reused is False


@pytest.mark.parametrize("change", ["scenario", "output", "missing", "recompute", "code", "package"])
def test_anything_that_could_change_a_result_runs_again(first, capsys, monkeypatch, change):
    s, out, cat, _ = first
    extra = []
    if change == "scenario":
        s.write_text(SCENARIO + "\n# a comment\n")
    elif change == "output":
        (out / "orbits.csv").write_text("damaged\n")
    elif change == "missing":
        (out / "orbit-gate.png").unlink()
    elif change == "recompute":
        extra = ["--recompute"]
    elif change == "code":
        monkeypatch.setattr(reuse, "_code_digest", "0" * 64)
    elif change == "package":
        monkeypatch.setattr(reuse, "_versions", lambda: "numpy=0.0")
    assert _cli(s, out, cat, *extra) == 0
    assert "nothing to compute" not in capsys.readouterr().err
    assert (out / "orbits.csv").read_text() != "damaged\n"
    assert (out / "orbit-gate.png").is_file()


def test_the_key_sees_the_scenario_name_and_the_sampling(tmp_path):
    a, b = tmp_path / "a.toml", tmp_path / "b.toml"
    a.write_text(SCENARIO)
    b.write_text(SCENARIO)
    assert reuse.run_key(a) == reuse.run_key(a)
    assert reuse.run_key(a) != reuse.run_key(b)                 # the report names the file
    assert reuse.run_key(a) != reuse.run_key(a, reduced=True)


def test_a_damaged_manifest_runs_again(first, capsys):
    s, out, cat, _ = first
    (out / "manifest.json").write_text("{not json")
    assert _cli(s, out, cat) == 0
    assert "nothing to compute" not in capsys.readouterr().err
    assert json.loads((out / "manifest.json").read_text())["reuse"]["key"] == reuse.run_key(s)


def test_the_key_covers_every_run_time_dependency():
    # the packages whose versions enter the key are the run-time dependencies (pyproject.toml)
    deps = tomllib.loads((Path(__file__).parents[1] / "pyproject.toml").read_text())["project"]["dependencies"]
    names = {re.split(r"[<>=!~\[; ]", d, maxsplit=1)[0].lower() for d in deps}
    assert names == set(reuse.RUN_PACKAGES)
