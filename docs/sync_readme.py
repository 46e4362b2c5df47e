"""Copy examples/farlight.toml into README.md's demo-scenario block (between the two marker
comments), so the README shows the demo scenario exactly as it is.

    python docs/sync_readme.py          # rewrite the block
    python docs/sync_readme.py --check  # exit 1 when the block differs from the file

tests/test_readme_scenario.py runs the check.
"""

from __future__ import annotations

import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
README = ROOT / "README.md"
SCENARIO = ROOT / "examples" / "farlight.toml"
BEGIN = "<!-- begin examples/farlight.toml: copied by docs/sync_readme.py, edit the file, not this block -->"
END = "<!-- end examples/farlight.toml -->"


def block(scenario_text: str) -> str:
    """The README block for ``scenario_text`` (markers and the toml fence included)."""
    body = scenario_text if scenario_text.endswith("\n") else scenario_text + "\n"
    return f"{BEGIN}\n```toml\n{body}```\n{END}"


def current(readme_text: str) -> str:
    """The block as it stands in ``readme_text`` (ValueError when the markers are missing)."""
    a = readme_text.index(BEGIN)
    b = readme_text.index(END, a) + len(END)
    return readme_text[a:b]


def synced(readme_text: str, scenario_text: str) -> str:
    return readme_text.replace(current(readme_text), block(scenario_text))


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    readme = README.read_text(encoding="utf-8")
    scenario = SCENARIO.read_text(encoding="utf-8")
    new = synced(readme, scenario)
    if "--check" in argv:
        if new != readme:
            print("README.md's copy of examples/farlight.toml is out of date: run python docs/sync_readme.py")
            return 1
        return 0
    if new != readme:
        tmp = README.with_name(README.name + ".part")
        tmp.write_text(new, encoding="utf-8")
        tmp.replace(README)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
