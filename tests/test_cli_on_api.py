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
L2 = "lyapunov L2 jacobi=3.15"
HALO = "halo L1 north az=10000km"
#: a two-node list (states cut from one CR3BP arc) for graph and route
NODES = """system = "earth-moon"
[settings]
tof = "2d"
patches = 2
[[node]]
name = "p0"
kind = "state"
state = [1.087849416, 0.0, 0.0, 0.0, -0.4, 0.0]
[[node]]
name = "p1"
kind = "state"
state = [1.070077685, -0.022077171, 0.001640139, 0.010708666, -0.423167028, 0.008927491]
[[edge]]
from = "p0"
to = "p1"
"""
#: a planar orbit-like stand-in for the calls that come before the one replaced
ORBIT = types.SimpleNamespace(family="lyapunov", point="L1", branch="", jacobi=3.15, period=2.69, period_days=11.7)


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
    (["shadow", "--trajectory", "{in}/good.oem"], "shadow_along", {}),
    (["convert", "{in}/good.oem", "{tmp}/good.csv", "--frame", "j2000-ecliptic"], "read_trajectory", {}),
    (["export", "--from", "{in}/good.oem", "--span", "6h", "--step", "1h", "--out", "{tmp}/x.csv"],
     "read_trajectory", {}),
    # connect: every path (orbit to orbit, a parking orbit at either end, --optimise, --path ...)
    (["connect", *EM, "--from", L1, "--to", L2, "--points", "4"], "connect", {"orbit": ORBIT}),
    (["connect", *EM, "--from", L1, "--to", L2, "--points", "4", "--arrival-within", "5000km"], "connect",
     {"orbit": ORBIT}),
    (["connect", *EM, "--from", "parking moon 100km", "--to", L2, "--points", "4"], "connect", {"orbit": ORBIT}),
    (["connect", *EM, "--from", L2, "--to", "parking moon 100km", "--points", "4"], "connect", {"orbit": ORBIT}),
    (["connect", *EM, "--from", L1, "--to", L2, "--points", "4", "--optimise"], "optimise",
     {"orbit": ORBIT, "connect": ["a leg"]}),
    (["connect", *EM, "--from", L1, "--to", L2, "--optimise", "--start", "sweep"], "optimise", {"orbit": ORBIT}),
    (["connect", *EM, "--from", "parking earth 200km", "--to", HALO, "--path", "direct"], "departure",
     {"orbit": ORBIT}),
    (["connect", *EM, "--from", "parking earth 200km", "--to", HALO, "--path", "lunar-flyby"], "departure",
     {"orbit": ORBIT}),
    (["connect", *EM, "--from", "parking earth 200km", "--to", HALO, "--path", "low-energy", "--epoch", "2027-03-01T00:00:00Z"],
     "low_energy_transfer", {"orbit": ORBIT}),
    (["connect", *EM, "--from", "parking earth 200km", "--to", HALO, "--path", "low-energy", "--window",
      "2027-03-01T00:00:00Z/2027-04-01T00:00:00Z"], "launch_window", {"orbit": ORBIT}),
    # graph and route over a node list; refine of an orbit and of a route
    (["graph", "build", *EM, "--nodes", "{in}/nodes.toml", "--workers", "1", "--no-catalog"], "graph", {}),
    (["graph", "show", *EM, "--nodes", "{in}/nodes.toml", "--workers", "1", "--no-catalog"], "graph", {}),
    (["route", *EM, "--nodes", "{in}/nodes.toml", "--from", "p0", "--to", "p1", "--workers", "1", "--no-catalog"],
     "design_route", {}),
    (["refine", *EM, "--orbit", "halo L2 south period=6.5626d", "--epoch", EPOCH, "--revs", "1"], "orbit", {}),
    (["refine", *EM, "--orbit", "halo L2 south period=6.5626d", "--epoch", EPOCH, "--revs", "1"], "refine",
     {"orbit": ORBIT}),
    (["refine", *EM, "--route", "{in}/route", "--epoch", EPOCH], "refine", {}),
    (["connect", *EM, "--from", HALO, "--to", "parking earth 200km", "--path", "direct"], "return_transfer",
     {"orbit": ORBIT}),
]


@pytest.fixture(scope="module")
def inputs(tmp_path_factory):
    """A trajectory file for convert (written by librate export), a node list, a route folder (the
    two files librate route --out writes, by hand: a short CR3BP arc with no maneuvers)."""
    import json
    d = tmp_path_factory.mktemp("inputs")
    (d / "nodes.toml").write_text(NODES)
    (d / "route").mkdir()
    (d / "route" / "trajectory.csv").write_text("t_tu,x_lu,y_lu,z_lu,vx_vu,vy_vu,vz_vu\n"
                                                "0,1.087849416,0,0,0,-0.4,0\n"
                                                "0.01,1.087849,-0.004,0,-0.0001,-0.4,0\n")
    (d / "route" / "route.json").write_text(json.dumps({"system": {"name": "earth-moon"},
                                                        "stitched": {"model": "CR3BP", "maneuvers": []}}))
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


TORUS_A = "quasi-halo around halo L1 north jacobi=3.14 amplitude=300km"
TORUS_B = "quasi-halo around halo L2 north jacobi=3.14 amplitude=300km"
#: a torus-like stand-in for the solve of a torus request (cr3bp.tori.request.solve)
TORUS = types.SimpleNamespace(family="quasi-halo", point="L1", branch="north", jacobi=3.14, stroboscopic_time=2.7,
                              stroboscopic_period_days=11.7, rotation=0.1)
TORUS_CASES = [
    (["connect", *EM, "--from", TORUS_A, "--to", TORUS_B], "connect", {}),
    (["connect", *EM, "--from", TORUS_A, "--to", L2], "connect", {"orbit": ORBIT}),
    (["connect", *EM, "--from", "parking earth 200km", "--to", TORUS_A, "--path", "direct"], "departure", {}),
    (["refine", *EM, "--torus", TORUS_A, "--span", "1periods", "--epoch", EPOCH], "refine", {}),
]


@pytest.mark.parametrize("argv,call,before", TORUS_CASES, ids=[f"{c[0][0]}-{c[1]}-torus-{i}"
                                                                for i, c in enumerate(TORUS_CASES)])
def test_torus_paths_go_through_their_api_call(argv, call, before, capsys, monkeypatch, tmp_path):
    """With a torus at one end (or refined), the torus request is solved (a stand-in here) and
    the command reaches the call."""
    from cr3bp.tori import request as treq
    capsys.readouterr()
    calls = []
    monkeypatch.setattr(treq, "solve", _returning(TORUS, "tori.request.solve", calls))
    for name, value in before.items():
        monkeypatch.setattr(api, name, _returning(value, name, calls))
    monkeypatch.setattr(api, call, _marked(call, calls))
    rc = main(argv + ["--quiet"])
    err = capsys.readouterr().err
    assert rc == 3, (argv, rc, err)
    assert err.strip() == f"librate: error: marked: cr3bp.api.{call} was called", err
    assert calls[-1][0] == call
    assert TORUS in calls[-1][1]                               # the solved torus reaches the call


def test_connect_and_route_get_the_options(capsys, monkeypatch, inputs):
    """connect's, route's and refine's options reach their calls as keywords."""
    calls = []
    monkeypatch.setattr(api, "orbit", _returning(ORBIT, "orbit", calls))
    monkeypatch.setattr(api, "connect", _marked("connect", calls))
    main(["connect", *EM, "--from", L1, "--to", L2, "--points", "7", "--section", "x=1-mu,y>0", "--crossing", "2",
          "--time", "3TU", "--step-off", "30km", "--candidates", "4", "--from-branch", "exterior",
          "--arrival-within", "5000km", "--quiet"])
    _, args, kw = calls[-1]
    assert args == (ORBIT, ORBIT)
    assert {k: kw[k] for k in ("points", "section", "crossing", "time", "step_off", "candidates", "from_branch",
                               "to_branch", "arrival_within")} == {
        "points": 7, "section": "x=1-mu,y>0", "crossing": 2, "time": "3TU", "step_off": "30km", "candidates": 4,
        "from_branch": "exterior", "to_branch": None, "arrival_within": "5000km"}
    calls.clear()                                 # --optimise starts from connect's best leg
    monkeypatch.setattr(api, "connect", _returning(["the best leg", "another"], "connect", calls))
    monkeypatch.setattr(api, "optimise", _marked("optimise", calls))
    main(["connect", *EM, "--from", L1, "--to", L2, "--points", "7", "--optimise", "--impulses", "2", "--quiet"])
    assert [c[0] for c in calls] == ["orbit", "orbit", "connect", "optimise"]
    assert calls[-1][2]["start"] == "the best leg" and calls[-1][2]["impulses"] == 2
    monkeypatch.setattr(api, "departure", _marked("departure", calls))
    main(["connect", *EM, "--from", "parking earth 300km", "--to", HALO, "--path", "lunar-flyby", "--max-tof", "20d",
          "--inclination", "28.5deg", "--min-flyby-altitude", "200km", "--quiet"])
    _, args, kw = calls[-1]
    assert args == (ORBIT, "parking earth 300km")
    assert kw.pop("path") == "lunar-flyby"
    assert {k: kw.pop(k) for k in ("epoch", "equator_inclination", "launch_latitude")} == {
        "epoch": None, "equator_inclination": None, "launch_latitude": None}
    assert kw == pytest.approx({"inclination": 28.5, "max_tof": 20.0, "min_flyby_altitude": 200.0}, rel=1e-12)
    main(["connect", *EM, "--from", "parking earth 300km", "--to", HALO, "--path", "direct",
          "--epoch", "2031-03-01T00:00:00Z", "--launch-latitude", "-28.5deg", "--quiet"])
    kw = calls[-1][2]
    assert (kw["epoch"], kw["launch_latitude"], kw["equator_inclination"], kw["inclination"]) == (
        "2031-03-01T00:00:00Z", -28.5, None, None)
    monkeypatch.setattr(api, "design_route", _marked("design_route", calls))
    main(["route", *EM, "--nodes", str(inputs / "nodes.toml"), "--from", "p0", "--to", "p1", "--workers", "1",
          "--no-catalog", "--max-dv", "900m/s", "--max-tof", "9d", "--best", "2", "--pareto", "--objective", "tof",
          "--quiet"])
    _, args, kw = calls[-1]
    assert args[2:] == ("p0", "p1")
    assert {k: kw[k] for k in ("max_dv", "max_tof", "best", "pareto", "objective", "stitch", "workers")} == {
        "max_dv": "900m/s", "max_tof": "9d", "best": 2, "pareto": True, "objective": "tof", "stitch": True,
        "workers": 1}
    capsys.readouterr()


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
