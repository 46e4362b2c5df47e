"""The CLI's rejection of bad input: exit status 2, one line on stderr, no traceback, no file.

In-process through ``librate_cli.main.main`` (hypothesis, modest example counts) plus one
subprocess run for the real exit status. Values are passed as ``--option=VALUE`` so that a
junk value starting with '-' is still the option's value.
"""

import math
import re
import subprocess
import sys

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from cr3bp import system_names
from librate_cli.main import main

SETTINGS = settings(max_examples=40, deadline=None,
                    suppress_health_check=[HealthCheck.function_scoped_fixture])
NAMES = set(system_names())
COMPILING = ("librate: compiling the numerical kernels (first run only; later runs reuse the "
             "cache)...\n")


def _finite_float(text):
    try:
        return math.isfinite(float(text))
    except (ValueError, TypeError, OverflowError):
        return False


def _no_nul(s):
    return "\x00" not in s  # a NUL cannot be passed in a real argv


def check_rejected(capsys, tmp_path, argv):
    plot = tmp_path / "never.png"
    rc = main(list(argv) + [f"--plot={plot}"] if argv[0] == "zvc" else list(argv))
    out, err = capsys.readouterr()
    assert rc == 2, (argv, rc, err)
    # on a cold numba cache the CLI first says it is compiling (a progress line, not an error)
    lines = [ln for ln in err.strip().splitlines() if not ln.startswith("librate: compiling")]
    assert len(lines) == 1 and lines[0].startswith("librate: error: "), err
    assert "Traceback" not in err
    assert out == ""
    assert list(tmp_path.iterdir()) == []


junk_number = st.text(max_size=20).filter(lambda s: not _finite_float(s)).filter(_no_nul)


@SETTINGS
@given(value=st.one_of(junk_number, st.sampled_from(["nan", "inf", "-inf", "1e999", "3,1", "0x3"])))
def test_bad_jacobi(capsys, tmp_path, value):
    check_rejected(capsys, tmp_path, ["zvc", "--system=earth-moon", f"--jacobi={value}"])


velocity_junk = st.one_of(
    st.text(max_size=12).filter(lambda s: not re.fullmatch(r"\s*[+]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?\s*(m/s|km/s|VU|LU/TU)\s*", s, re.ASCII)).filter(_no_nul),
    st.builds(lambda v, u: f"-{v}{u}", st.floats(min_value=1e-6, max_value=1e6), st.sampled_from(["m/s", "km/s", "VU"])),
    st.builds(lambda v, u: f"{v}{u}", st.floats(min_value=0, max_value=1e6), st.sampled_from(["km", "d", "s", "LU", "m/ss"])),
    st.sampled_from(["nanm/s", "infm/s", "1e999m/s", "20", "20 m s", "m/s"]),
)


@SETTINGS
@given(value=velocity_junk, point=st.sampled_from(["L1", "L2", "l3", "L4"]))
def test_bad_dv(capsys, tmp_path, value, point):
    check_rejected(capsys, tmp_path, ["zvc", "--system=earth-moon", f"--above={point}", f"--dv={value}"])


@SETTINGS
@given(point=st.text(max_size=6).filter(lambda s: s.strip().upper() not in {"L1", "L2", "L3", "L4", "L5"}).filter(_no_nul))
def test_bad_point(capsys, tmp_path, point):
    check_rejected(capsys, tmp_path, ["zvc", "--system=earth-moon", f"--above={point}", "--dv=1m/s"])


mu_junk = st.one_of(
    junk_number,
    st.floats(allow_nan=False).filter(lambda m: not (0 < m <= 0.5)).map(repr),
    st.sampled_from(["0", "-0.1", "0.5000001", "1", "nan", "inf"]),
)


@SETTINGS
@given(value=mu_junk, command=st.sampled_from(["points", "zvc"]))
def test_bad_mu(capsys, tmp_path, value, command):
    extra = ["--jacobi=3.1"] if command == "zvc" else []
    check_rejected(capsys, tmp_path, [command, f"--mu={value}"] + extra)


def _normalised(s):
    return s.strip().lower().replace("_", "-").replace(" ", "-")


@SETTINGS
@given(name=st.text(min_size=1, max_size=15).filter(lambda s: _normalised(s) not in NAMES).filter(_no_nul),
       command=st.sampled_from(["points", "zvc"]))
def test_bad_system(capsys, tmp_path, name, command):
    extra = ["--jacobi=3.1"] if command == "zvc" else []
    check_rejected(capsys, tmp_path, [command, f"--system={name}"] + extra)


@pytest.mark.parametrize("argv", [
    ["zvc", "--system=earth-moon"],                                   # no level
    ["zvc", "--system=earth-moon", "--jacobi=3.1", "--above=L1"],      # two levels
    ["zvc", "--system=earth-moon", "--jacobi=3.1", "--dv=1m/s"],       # dv without a point
    ["zvc", "--mu=0.01", "--above=L1", "--dv=20m/s"],                  # m/s without units
    ["zvc", "--system=earth-moon", "--jacobi=3.1", "--extent=0,1,2"],
    ["zvc", "--system=earth-moon", "--jacobi=3.1", "--extent=1,0,0,1"],
    ["zvc", "--system=earth-moon", "--jacobi=3.1", "--extent=0,1,0,3d"],
    ["zvc", "--system=earth-moon", "--jacobi=3.1", "--resolution=ten"],
    ["zvc", "--system=earth-moon", "--jacobi=3.1", "--plane=yz"],
    ["zvc", "--system=earth-moon", "--jacobi=3.1", "--view=moon"],
    ["points", "--system=earth-moon", "--mu=0.1"],
    ["points"],
])
def test_bad_combinations(capsys, tmp_path, argv):
    check_rejected(capsys, tmp_path, argv)


def test_bad_curves_suffix_writes_nothing(capsys, tmp_path):
    rc = main(["zvc", "--system=earth-moon", "--jacobi=3.1", f"--curves={tmp_path / 'x.txt'}",
               f"--plot={tmp_path / 'x.png'}"])
    err = capsys.readouterr().err.replace(COMPILING, "")
    assert rc == 2 and err.count("\n") == 1 and list(tmp_path.iterdir()) == []


def test_bad_plot_suffix_writes_nothing(capsys, tmp_path):
    # one rule for every --plot (cli.common.PLOT_SUFFIXES): .png, .svg, .pdf; a .gif is refused
    rc = main(["zvc", "--system=earth-moon", "--jacobi=3.1", f"--plot={tmp_path / 'x.gif'}"])
    err = capsys.readouterr().err.replace(COMPILING, "")
    assert rc == 2 and err.count("\n") == 1 and list(tmp_path.iterdir()) == []


def test_subprocess_exit_status_and_no_traceback(tmp_path):
    plot = tmp_path / "z.png"
    p = subprocess.run([sys.executable, "-m", "librate_cli.main", "zvc", "--system", "earth-moon",
                        "--above", "L1", "--dv=-5m/s", "--plot", str(plot)],
                       capture_output=True, text=True, timeout=120)
    assert p.returncode == 2
    assert "Traceback" not in p.stderr
    assert [ln for ln in p.stderr.splitlines() if ln.startswith("librate: error:")] == \
        ["librate: error: dv '-5m/s' is negative; a speed must be >= 0"]
    assert not plot.exists()
