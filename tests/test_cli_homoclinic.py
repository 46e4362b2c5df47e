"""librate connect for a homoclinic connection on a half-plane section, end to end (in
process), and the half-plane text rejected with exit 2 when malformed."""

import json

import numpy as np

from cr3bp import system
from cr3bp.cautions import CAUTION
from librate_cli.main import main

SJ = system("sun-jupiter")


def _run(argv):
    try:
        return main(argv)
    except SystemExit as e:
        return e.code


def test_connect_homoclinic_on_a_half_plane_json(tmp_path):
    out = tmp_path / "legs.json"
    req = "lyapunov L1 jacobi=3.037"
    rc = _run(["connect", "--system", "sun-jupiter", "--from", req, "--to", req,
               "--section", "y=0,x<0", "--from-branch", "exterior", "--to-branch", "exterior",
               "--time", "12", "--format", "json", "--out", str(out), "-q"])
    assert rc == 0
    d = json.loads(out.read_text())
    assert CAUTION.split()[0] in json.dumps(d["caution"])
    legs = d["legs"]
    assert len(legs) >= 2
    for leg in legs:
        assert leg["kind"] == "homoclinic" and leg["from"] == leg["to"] == "lyapunov L1 C=3.037000"
        assert leg["dv_mps"] < 1e-3                      # zero to a millimetre per second
        p = leg["patch_state"]
        assert abs(p[1]) < 1e-12 and p[0] < 0            # on the half-plane y = 0, x < 0
        assert leg["details"]["residuals"][-1] < 1e-10
    # at least one symmetric connection (vx = 0 at the patch on y = 0)
    assert any(abs(leg["patch_state"][3]) < 1e-9 for leg in legs)


def test_connect_half_plane_table_names_the_section(capsys):
    req = "lyapunov L1 jacobi=3.037"
    rc = _run(["connect", "--system", "sun-jupiter", "--from", req, "--to", req,
               "--section", "x=1-mu,y<0", "--time", "12", "--candidates", "2", "-q"])
    assert rc == 0
    text = capsys.readouterr().out
    assert "cut by x=1-mu,y<0" in text and "homoclinic" in text


def test_bad_half_plane_exit_2(capsys):
    rc = _run(["connect", "--system", "sun-jupiter", "--from", "lyapunov L1 jacobi=3.037",
               "--to", "lyapunov L1 jacobi=3.037", "--section", "y=0,x=0", "-q"])
    assert rc == 2
    err = capsys.readouterr().err
    assert "bound 'x=0'" in err and "Traceback" not in err
