"""The ``librate`` commands are built on the public calls of ``cr3bp.api``: each rebuilt command
reaches its stage's call (not a library internal beside it).

Each case replaces one call of :mod:`cr3bp.api` with a stand-in that records its arguments and
raises a marked ``NoSolutionError``; the command must end with that error (exit status 3, the
marked one-line message), so a command that goes around the call (and computes on its own)
fails here. Calls the command needs before the replaced one are answered by light stand-ins,
so no case computes an orbit. That the numbers of a call and of its command agree is
tests/test_api.py's job; that the command's output did not change when it moved onto the
calls was checked by comparing the output of the same runs before and after (see the commit
message).
"""

import types

import pytest

from cr3bp import api
from cr3bp.errors import NoSolutionError
from librate_cli.main import main

EM = ["--system", "earth-moon"]
SE = ["--system", "sun-earth"]
LISSAJOUS = "lissajous L2 ay=300000km az=150000km"
EPOCH = "2031-03-01T00:00:00Z"
L1 = "lyapunov L1 jacobi=3.15"
#: a planar orbit-like stand-in for the calls that come before the one replaced
ORBIT = types.SimpleNamespace(family="lyapunov", point="L1", branch="", jacobi=3.15, period=2.69)


def _marked(name, calls):
    def stand_in(*args, **kwargs):
        calls.append((name, args, kwargs))
        raise NoSolutionError(f"marked: cr3bp.api.{name} was called")
    return stand_in


def _returning(value, name, calls):
    def stand_in(*args, **kwargs):
        calls.append((name, args, kwargs))
        return value
    return stand_in


CASES = [
    # (command line, the call that must be reached, calls answered before it)
    (["systems"], "system", {}),
    (["points", *EM], "points", {}),
    (["points", *EM], "system", {}),                          # --system goes through cr3bp.api.system
    (["orbit", *EM, "--family", "lyapunov", "--point", "L1", "--jacobi", "3.15"], "orbit_request", {}),
    (["orbit", *EM, "--family", "lyapunov", "--point", "L1", "--jacobi", "3.15"], "orbit", {}),
    (["family", *EM, "--family", "lyapunov", "--point", "L1", "--members", "4"], "family", {}),
    (["manifold", *EM, "--orbit", L1, "--unstable", "--points", "4"], "orbit", {}),
    (["manifold", *EM, "--orbit", L1, "--unstable", "--points", "4"], "manifold", {"orbit": ORBIT}),
    (["manifold", *EM, "--state", "0.8369,0,0,0,0.1,0", "--period", "2.69TU", "--unstable", "--points", "4"],
     "orbit", {}),
    (["manifold", *EM, "--lagrange", "L1", "--unstable"], "manifold", {}),
    (["section", *EM, "--tube", f"{L1} unstable", "--section", "x=1-mu", "--points", "4"], "orbit", {}),
    (["section", *EM, "--tube", f"{L1} unstable", "--section", "x=1-mu", "--points", "4"], "section",
     {"orbit": ORBIT}),
    (["section", *EM, "--tube", f"{L1} stable", "--section", "periapsis:moon", "--points", "4"], "section",
     {"orbit": ORBIT}),
    (["export", *EM, "--orbit", L1, "--epoch", EPOCH, "--span", "1d", "--step", "6h", "--out", "{tmp}/x.csv"],
     "orbit", {}),
    (["export", *EM, "--orbit", L1, "--epoch", EPOCH, "--span", "1d", "--step", "6h", "--out", "{tmp}/x.csv"],
     "trajectory", {"orbit": ORBIT}),
    (["export", *EM, "--state", "1.1805031,0,-0.02,0,-0.1581343,0", "--epoch", EPOCH, "--span", "1d", "--step",
      "6h", "--out", "{tmp}/x.oem"], "export", {}),
    (["run", "examples/farlight.toml", "--out", "{tmp}/out", "--check-only", "--catalog", "{tmp}/c.sqlite"],
     "run", {}),
    (["convert", "{in}/good.oem", "{tmp}/good.csv", "--frame", "j2000-ecliptic"], "export", {}),
    (["catalog", "find", *EM, "--family", "lyapunov", "--point", "L1", "--period", "12d", "--catalog",
      "{in}/cat.sqlite"], "orbit_request", {}),
    # tori, operations at a date, propagation, energy, the catalogue
    (["torus", *SE, "--request", LISSAJOUS], "torus", {}),
    (["torus", *SE, "--family", "lissajous", "--point", "L2", "--ay", "300000km", "--az", "150000km"], "torus", {}),
    (["torus", *EM, "--around", L1, "--amplitude", "2000km"], "torus", {}),
    (["shadow", *EM, "--orbit", L1, "--epoch", EPOCH, "--span", "10d"], "orbit", {}),
    (["shadow", *SE, "--torus", LISSAJOUS, "--epoch", EPOCH, "--span", "10d"], "torus", {}),
    (["shadow", *EM, "--orbit", L1, "--epoch", EPOCH, "--span", "10d"], "shadow", {"orbit": ORBIT}),
    (["shadow", *EM, "--orbit", L1, "--epoch", EPOCH, "--span", "10d", "--until-epoch", "2031-04-01T00:00:00Z",
      "--epochs", "2", "--avoid-eclipses", "--phases", "2"], "shadow", {"orbit": ORBIT}),
    (["keep", *EM, "--orbit", L1, "--epoch", EPOCH, "--span", "2periods", "--trials", "2"], "orbit", {}),
    (["keep", *EM, "--orbit", L1, "--epoch", EPOCH, "--span", "2periods", "--trials", "2"], "keep", {"orbit": ORBIT}),
    (["disperse", *EM, "--orbit", L1, "--coast", "2d", "--trials", "5"], "orbit", {}),
    (["disperse", *EM, "--orbit", L1, "--coast", "2d", "--trials", "5"], "disperse", {"orbit": ORBIT}),
    (["propagate", *EM, "--state", "0.8234,0,0.0224,0,0.1343,0", "--time", "1d"], "propagate_state", {}),
    (["propagate", *EM, "--state", "0.8234,0,0.0224,0,0.1343,0", "--time", "1d", "--model", "bicircular"],
     "propagate_state", {}),
    (["zvc", *EM, "--jacobi", "3.1"], "zvc", {}),
    (["zvc", *EM, "--above", "L1", "--dv", "20m/s", "--curves", "{tmp}/c.csv", "--resolution", "41"], "zvc", {}),
    (["catalog", "list", "--catalog", "{in}/cat.sqlite"], "catalog_list", {}),
    (["catalog", "show", "1", "--catalog", "{in}/cat.sqlite"], "catalog_show", {}),
    (["catalog", "remove", "1", "--catalog", "{in}/cat.sqlite"], "catalog_remove", {}),
    # trajectory files read back
    (["convert", "{in}/good.oem", "{tmp}/good.csv", "--frame", "j2000-ecliptic"], "read_trajectory", {}),
    (["export", "--from", "{in}/good.oem", "--span", "6h", "--step", "1h", "--out", "{tmp}/x.csv"],
     "read_trajectory", {}),
]


@pytest.fixture(scope="module")
def inputs(tmp_path_factory):
    """A trajectory file for convert (written by librate export)."""
    d = tmp_path_factory.mktemp("inputs")
    assert main(["export", *EM, "--state", "1.1805031,0,-0.02,0,-0.1581343,0", "--epoch", EPOCH, "--span", "1d",
                 "--step", "6h", "--out", str(d / "good.oem"), "--quiet"]) == 0
    return d


@pytest.mark.parametrize("argv,call,before", CASES, ids=[f"{c[0][0]}-{c[1]}-{i}" for i, c in enumerate(CASES)])
def test_command_goes_through_its_api_call(argv, call, before, capsys, monkeypatch, tmp_path, inputs):
    from pathlib import Path
    monkeypatch.chdir(Path(__file__).resolve().parent.parent)
    capsys.readouterr()
    calls = []
    for name, value in before.items():
        monkeypatch.setattr(api, name, _returning(value, name, calls))
    monkeypatch.setattr(api, call, _marked(call, calls))
    rc = main([a.replace("{tmp}", str(tmp_path)).replace("{in}", str(inputs)) for a in argv] + ["--quiet"])
    err = capsys.readouterr().err
    assert rc == 3, (argv, rc, err)
    assert err.strip() == f"librate: error: marked: cr3bp.api.{call} was called", err
    assert calls[-1][0] == call
    assert list(tmp_path.iterdir()) == []                    # refused before anything is written


def test_the_calls_get_the_options(capsys, monkeypatch):
    """The options reach the call as its keywords (the same vocabulary)."""
    calls = []
    monkeypatch.setattr(api, "orbit", _returning(ORBIT, "orbit", calls))
    monkeypatch.setattr(api, "manifold", _marked("manifold", calls))
    main(["manifold", *EM, "--orbit", L1, "--stable", "--branch", "exterior", "--points", "7", "--spacing", "arc",
          "--step-off", "20km", "--until", "time:3d", "--quiet"])
    capsys.readouterr()
    name, args, kw = calls[-1]
    assert args == (ORBIT, "stable")
    assert {k: kw[k] for k in ("branch", "points", "until", "spacing", "step_off")} == {
        "branch": "exterior", "points": 7, "until": ["time:3d"], "spacing": "arc", "step_off": "20km"}
    calls.clear()
    monkeypatch.setattr(api, "family", _marked("family", calls))
    main(["family", *EM, "--family", "halo", "--point", "L2", "--branch", "south", "--members", "9",
          "--until", "period=8d", "--max-step", "0.01", "--quiet"])
    capsys.readouterr()
    name, args, kw = calls[-1]
    assert args[1] == "halo" and kw["point"] == "L2" and kw["branch"] == "south"
    assert kw["members"] == 9 and kw["until"] == "period=8d" and kw["max_step"] == 0.01
