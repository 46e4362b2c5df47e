"""Packaging: every sub-package is listed in pyproject.toml (else a non-editable install would
silently miss it), and the console script points at the CLI."""

import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def test_every_subpackage_is_listed():
    cfg = tomllib.loads((ROOT / "pyproject.toml").read_text())
    listed = set(cfg["tool"]["setuptools"]["packages"])
    found = {".".join(p.parent.relative_to(ROOT).parts) for p in (ROOT / "cr3bp").rglob("__init__.py")}
    found |= {"librate_cli" + "".join("." + x for x in p.parent.relative_to(ROOT / "cli").parts)
              for p in (ROOT / "cli").rglob("__init__.py")}
    found.add("cr3bp.data")
    missing = found - listed
    assert not missing, f"add to [tool.setuptools] packages in pyproject.toml: {sorted(missing)}"


def test_console_script():
    cfg = tomllib.loads((ROOT / "pyproject.toml").read_text())
    assert cfg["project"]["scripts"]["librate"] == "librate_cli.main:main"
