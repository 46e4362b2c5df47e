"""The documentation site (docs/): it builds offline with warnings as errors, its generated
pages cover every command option and every scenario key (they are written from the argparse
parsers and the schema code, so they cannot drift), the README stays short, and its Python
example runs."""

import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
DOCS = ROOT / "docs"

import sphinx  # noqa: E402,F401  (the [docs] extra: make test and make docs install it)

sys.path.insert(0, str(DOCS / "_ext"))
import librate_docs  # noqa: E402


@pytest.fixture(scope="module")
def site(tmp_path_factory):
    """The site built as `make docs` builds it (-W: any warning fails), the gallery's scripts run."""
    out = tmp_path_factory.mktemp("site")
    env = dict(os.environ, LIBRATE_DOCS_RERUN="1", MPLBACKEND="Agg")
    r = subprocess.run([sys.executable, "-m", "sphinx", "-W", "--keep-going", "-q", "-b", "html",
                        "-d", str(out / "doctrees"), str(DOCS), str(out / "html")],
                       capture_output=True, text=True, env=env, cwd=ROOT, timeout=1800)
    assert r.returncode == 0, r.stderr[-4000:]
    return out / "html"


def test_site_builds_with_every_part(site):
    for page in ("index", "getting-started", "tutorial", "user-guide", "cli", "scenario-format", "formats",
                 "api", "bibliography", "cautions", "history", "gallery/index", "guide/python-api",
                 "manual/orbit", "manual/run", "generated/cr3bp.orbit", "generated/cr3bp.manifold"):
        assert (site / f"{page}.html").exists(), page
    api = (site / "generated" / "cr3bp.orbit.html").read_text(encoding="utf-8")
    for part in ("Parameters", "Returns", "Raises", "Examples", "References"):
        assert part in api
    images = list((site / "_images").glob("sphx_glr_plot_*.png"))
    assert len(images) >= 4                       # every gallery script ran and drew its figure
    from cr3bp.cautions import caution
    assert caution("ephemeris") in (site / "cautions.html").read_text(encoding="utf-8")
    tutorial = (site / "tutorial.html").read_text(encoding="utf-8")
    assert "halo" in tutorial and "resonance" in tutorial       # the demo scenario, included from the file


def _options(parser):
    """Every option string of a parser and of its actions' own parsers (librate catalog list ...)."""
    for action in parser._actions:
        yield from (o for o in action.option_strings if o not in ("-h", "--help"))
        if action.__class__.__name__ == "_SubParsersAction":
            for sp in action.choices.values():
                yield from _options(sp)


def test_cli_reference_has_every_option():
    from librate_cli.commands import modules
    from librate_cli.main import build_parser
    for mod in modules():
        text = "\n".join(librate_docs.command_lines(mod))
        parser = build_parser(mod)
        sub = next(a for a in parser._actions if a.__class__.__name__ == "_SubParsersAction")
        for opt in _options(sub.choices[mod.NAME]):
            assert f"``{opt}" in text or f", {opt}" in text, f"librate {mod.NAME}: {opt} missing from the reference"
        assert f"librate {mod.NAME}" in text and mod.EXAMPLE in text
    assert "librate catalog find" in "\n".join(librate_docs.command_lines(
        next(m for m in modules() if m.NAME == "catalog")))


def test_scenario_page_has_every_key():
    from cr3bp.scenario import schema
    d = librate_docs.SchemaDirective.__new__(librate_docs.SchemaDirective)
    text = "\n".join(d.lines())
    for table, (_, _, keys) in schema.SCHEMA.items():
        assert table in text
        for k in keys:
            assert f"``{k}``" in text, f"{table}.{k}"
    for k in schema.CHECK_KEYS:
        assert f"``{k}``" in text, k


def test_readme_is_short_and_keeps_the_demo_block():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    assert len(text.encode("utf-8")) < 10_000
    assert "make demo" in text and "make test" in text and "import cr3bp" in text


def test_readme_python_example_runs(tmp_path, monkeypatch):
    """The README's Python example, run as written (the scenario run line aside: a whole
    mission; tests/test_api.py runs cr3bp.run against the command on a small scenario)."""
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    code = re.search(r"```python\n(.*?)```", text, re.S).group(1)
    lines = [ln for ln in code.splitlines() if "cr3bp.run(" not in ln]
    assert len(lines) >= 9
    monkeypatch.chdir(tmp_path)
    monkeypatch.setenv("MPLBACKEND", "Agg")
    ns = {}
    exec(compile("\n".join(lines), "README.md", "exec"), ns)
    assert (tmp_path / "nrho.oem").stat().st_size > 10_000
    assert ns["cut"].n_trajectories == 100
