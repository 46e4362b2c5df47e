"""README.md shows the demo scenario exactly as examples/farlight.toml is (docs/sync_readme.py
copies it; this compares the two files' current content, whatever either says)."""

import subprocess
import sys
from importlib.machinery import SourceFileLoader
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sync = SourceFileLoader("sync_readme", str(ROOT / "docs" / "sync_readme.py")).load_module()


def test_readme_block_is_the_scenario_file():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    scenario = (ROOT / "examples" / "farlight.toml").read_text(encoding="utf-8")
    shown = sync.current(readme)
    inner = shown.split("```toml\n", 1)[1].rsplit("```", 1)[0]
    assert inner == scenario, "README.md's demo scenario differs: run python docs/sync_readme.py"


def test_check_mode_notices_a_difference(tmp_path):
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    edited = sync.synced(readme, "[mission]\nname = \"other\"\n")
    assert sync.current(edited) != sync.current(readme)
    assert sync.synced(edited, (ROOT / "examples" / "farlight.toml").read_text(encoding="utf-8")) == readme
    r = subprocess.run([sys.executable, str(ROOT / "docs" / "sync_readme.py"), "--check"], capture_output=True)
    assert r.returncode == 0, r.stdout
