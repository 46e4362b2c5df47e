"""The command frame: the guide, one-line argparse errors, values that start with a minus sign."""

import subprocess
import sys

from cr3bp.cautions import CAUTION
from librate_cli.main import _join_negative_values, main


def test_bare_command_prints_guide_with_caution(capsys):
    assert main([]) == 0
    out = capsys.readouterr().out
    assert "commands:" in out and "librate points" in out
    assert " ".join(out.split()).endswith(" ".join(CAUTION.split()))


def test_argparse_errors_are_one_line_exit_2():
    r = subprocess.run([sys.executable, "-m", "librate_cli.main", "points", "--format", "bad"],
                       capture_output=True, text=True)
    assert r.returncode == 2
    assert len(r.stderr.strip().splitlines()) == 1 and "invalid choice: 'bad'" in r.stderr
    assert "Traceback" not in r.stderr


def test_negative_values_are_joined():
    assert _join_negative_values(["zvc", "--dv", "-5m/s", "--plot", "a.png"]) == ["zvc", "--dv=-5m/s", "--plot", "a.png"]
    assert _join_negative_values(["x", "--state", "-.5,0,0,0,1,0"]) == ["x", "--state=-.5,0,0,0,1,0"]
    assert _join_negative_values(["x", "--quiet", "--format", "json"]) == ["x", "--quiet", "--format", "json"]
