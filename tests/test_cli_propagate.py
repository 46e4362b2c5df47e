"""`librate propagate` end to end: formats, files written atomically, bad input."""

import csv
import json
import subprocess
import sys

import numpy as np
import pytest

from cr3bp import CAUTION, propagate, system
from cr3bp.dynamics import jacobi
from librate_cli.main import main

HALO_GUESS = "0.8234,0,0.0224,0,0.1343,0"


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_json_keys_and_values(capsys):
    code, out, _ = run(capsys, "propagate", "--system", "earth-moon", "--state", HALO_GUESS,
                       "--time", "12d", "--stm", "--format", "json", "-q")
    assert code == 0
    d = json.loads(out)
    for key in ("system", "status", "t_final", "t_final_days", "final_state", "jacobi_initial",
                "jacobi_final", "stm", "events", "caution"):
        assert key in d, key
    em = system("earth-moon")
    assert d["t_final_days"] == pytest.approx(12.0, rel=1e-14)
    arc = propagate(em, [float(v) for v in HALO_GUESS.split(",")], 12.0 / em.time_days, stm=True)
    np.testing.assert_allclose(d["final_state"], arc.final_state, rtol=0, atol=1e-14)
    np.testing.assert_allclose(d["stm"], arc.stm, rtol=1e-14, atol=1e-14)
    assert d["jacobi_final"] == pytest.approx(jacobi(em.mu, arc.final_state), abs=1e-15)
    assert abs(d["jacobi_final"] - d["jacobi_initial"]) < 1e-11
    assert d["caution"] == CAUTION


def test_table_has_caution_and_jacobi(capsys):
    code, out, _ = run(capsys, "propagate", "--system", "earth-moon", "--state", HALO_GUESS,
                       "--time", "36h", "-q")
    assert code == 0
    assert "Jacobi constant" in out and "status time" in out
    assert "CAUTION" in out and "steps:" in out


def test_km_state_is_converted(capsys):
    em = system("earth-moon")
    s = np.array([float(v) for v in HALO_GUESS.split(",")])
    km = list(s[:3] * em.length_km) + list(s[3:] * em.velocity_kms)
    code, out, _ = run(capsys, "propagate", "--system", "earth-moon", "--km", "--state",
                       ",".join(repr(float(v)) for v in km), "--time", "2TU", "--format", "json", "-q")
    assert code == 0
    d = json.loads(out)
    np.testing.assert_allclose(d["initial_state"], s, rtol=1e-14, atol=1e-16)


def test_csv_with_step_and_plot(tmp_path, capsys):
    out_csv = tmp_path / "arc.csv"
    out_png = tmp_path / "arc.png"
    code, _, _ = run(capsys, "propagate", "--system", "earth-moon", "--state", HALO_GUESS,
                     "--time", "-2d", "--step", "6h", "--format", "csv", "--out", str(out_csv),
                     "--plot", str(out_png), "-q")
    assert code == 0
    text = out_csv.read_text()
    assert "CAUTION" in text
    rows = list(csv.reader(line for line in text.splitlines() if not line.startswith("#")))
    assert rows[0][:9] == ["t_tu", "t_days", "x_lu", "y_lu", "z_lu", "vx_vu", "vy_vu", "vz_vu",
                           "jacobi"]
    days = [float(r[1]) for r in rows[1:]]
    np.testing.assert_allclose(days, -0.25 * np.arange(9), atol=1e-12)
    assert out_png.stat().st_size > 10_000
    assert not list(tmp_path.glob(".*.part"))


@pytest.mark.parametrize("argv, needle", [
    (["--state", "-0.01215,0,0,0,0,0"], "inside earth"),
    (["--state", "0.8,0,0,0,0.1"], "six numbers"),
    (["--state", "0.8,0,0,zero,0.1,0"], "not a number"),
    (["--rtol", "1e-20"], "allowed range"),
    (["--time", "12 fortnights"], "unknown unit"),
    (["--time", "12"], "no unit"),
    (["--step", "0h"], "positive"),
    (["--plot", "figure.gif"], "must end in"),
    (["--system", "earth-mars"], "unknown system"),
])
def test_bad_input_exit_2_one_line_no_file(tmp_path, capsys, argv, needle):
    base = {"--system": "earth-moon", "--state": HALO_GUESS, "--time": "1d"}
    args = ["propagate"]
    for k, v in base.items():
        if k not in argv:
            args += [k, v]
    out = tmp_path / "x.csv"
    args += argv + ["--out", str(out), "--format", "csv", "-q"]
    code, stdout, err = run(capsys, *args)
    assert code == 2
    lines = [line for line in err.splitlines()
             if line.strip() and not line.startswith("librate: compiling")]
    assert len(lines) == 1 and lines[0].startswith("librate: error:")
    assert needle in lines[0]
    assert list(tmp_path.iterdir()) == []


def test_subprocess_end_to_end(tmp_path):
    out = tmp_path / "r.json"
    p = subprocess.run([sys.executable, "-m", "librate_cli.main", "propagate", "--system",
                        "earth-moon", "--state", HALO_GUESS, "--time", "1d", "--format", "json",
                        "--out", str(out)], capture_output=True, text=True, timeout=300)
    assert p.returncode == 0, p.stderr
    assert json.loads(out.read_text())["status"] == "time"
    bad = subprocess.run([sys.executable, "-m", "librate_cli.main", "propagate", "--system",
                          "earth-moon", "--state", "1,2", "--time", "1d"], capture_output=True,
                         text=True, timeout=300)
    assert bad.returncode == 2 and "Traceback" not in bad.stderr


def test_later_processes_reuse_the_kernel_cache(tmp_path):
    # on numba's just-in-time kernels (the prebuilt module switched off), the second process
    # must load every integrator kernel from numba's cache, not compile
    import os
    env = dict(os.environ, NUMBA_DEBUG_CACHE="1", LIBRATE_KERNELS="jit")
    cmd = [sys.executable, "-m", "librate_cli.main", "propagate", "--system", "earth-moon",
           "--state", HALO_GUESS, "--time", "1d", "--stm", "--format", "json",
           "--out", str(tmp_path / "a.json")]
    subprocess.run(cmd, capture_output=True, text=True, timeout=600, env=env, check=True)
    second = subprocess.run(cmd, capture_output=True, text=True, timeout=600, env=env, check=True)
    log = second.stdout + second.stderr
    assert "dop853.integrate_packed-" in log and "data loaded" in log   # what propagate() runs
    assert "data saved" not in log, [ln for ln in log.splitlines() if "saved" in ln]
    assert "compiling the numerical kernels" not in second.stderr


def test_with_the_prebuilt_kernels_a_process_does_not_touch_numba(tmp_path):
    import os
    from cr3bp.integrate import prebuilt
    assert prebuilt.find() is not None, "no current prebuilt kernels: run 'make kernels'"
    env = {k: v for k, v in os.environ.items() if k != "LIBRATE_KERNELS"}
    env["NUMBA_DEBUG_CACHE"] = "1"
    p = subprocess.run([sys.executable, "-c", "import sys\nfrom librate_cli.main import main\n"
                        f"rc = main(['propagate', '--system', 'earth-moon', '--state', '{HALO_GUESS}', "
                        f"'--time', '1d', '--stm', '--format', 'json', '--out', '{tmp_path / 'a.json'}'])\n"
                        "print('NUMBA' if 'numba' in sys.modules else 'NO-NUMBA'); sys.exit(rc)"],
                       capture_output=True, text=True, timeout=600, env=env)
    assert p.returncode == 0, p.stderr
    assert "NO-NUMBA" in p.stdout and "data loaded" not in p.stdout + p.stderr
    assert "compiling the numerical kernels" not in p.stderr
    assert json.loads((tmp_path / "a.json").read_text())["status"] == "time"


def test_first_run_notice_follows_the_kernels_a_command_really_compiles(tmp_path):
    """With an empty numba cache: on the prebuilt kernels `librate points` compiles nothing
    and says nothing; on the just-in-time ones it compiles the dynamics kernels and says so."""
    import os
    base = {k: v for k, v in os.environ.items() if k != "LIBRATE_KERNELS"}
    cmd = [sys.executable, "-m", "librate_cli.main", "points", "--system", "earth-moon", "--format", "json"]
    pre = subprocess.run(cmd, capture_output=True, text=True, timeout=600,
                         env=dict(base, NUMBA_CACHE_DIR=str(tmp_path / "a")))
    assert pre.returncode == 0, pre.stderr
    assert "compiling the numerical kernels" not in pre.stderr
    assert not (tmp_path / "a").exists()                     # numba never ran
    jit = subprocess.run(cmd, capture_output=True, text=True, timeout=600,
                         env=dict(base, NUMBA_CACHE_DIR=str(tmp_path / "b"), LIBRATE_KERNELS="jit"))
    assert jit.returncode == 0, jit.stderr
    assert "compiling the numerical kernels" in jit.stderr
    assert json.loads(pre.stdout)["points"] == json.loads(jit.stdout)["points"]
