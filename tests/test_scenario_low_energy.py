"""A scenario transfer with ``path = "low-energy"`` from a 200 km Earth parking orbit to the 9:2
L2 southern NRHO, run end to end (the scenario -> design -> export seam): the route is the
low-energy leg designed in the bicircular model for the scenario's epoch as launch date, its
maneuver table says so, and the exported trajectory, re-propagated by scipy's DOP853 on the
bicircular equations written out in the form of Simó, Gómez, Jorba & Masdemont (1995)
(tests/test_against_parker_anderson_low_energy.py), reaches the insertion point.

Sources: Parker & Anderson, *Low-Energy Lunar Trajectory Design*, 2013, ch. 3 (the published
order, from memory); scipy.integrate.solve_ivp, DOP853 (Hairer, Nørsett & Wanner, *Solving ODE
I*, 2nd ed., 1993, section II.10).
"""

import csv
import io
import json
from pathlib import Path

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from cr3bp import system
from cr3bp.transfers import low_energy as le
from librate_cli.main import main
from test_against_parker_anderson_low_energy import _simo_args, simo_rhs

pytestmark = pytest.mark.slow

EM = system("earth-moon")
NAME = "leo-to-relay"
SCENARIO = f'''[mission]
name = "Lamplight"
description = "A fictional relay launched on a low-energy transfer (an example of our own)"
issued = "2026-12-03T00:00:00"

[system]
name = "earth-moon"
epoch = "2027-03-01T00:00:00Z"

[orbits.relay]
family = "halo"
point = "L2"
branch = "south"
resonance = "9:2"

[[transfers]]
name = "{NAME}"
from = "parking earth 200km"
to = "relay"
path = "low-energy"
best = 1
'''


def _rows(path):
    text = "".join(line for line in path.read_text(encoding="utf-8").splitlines(True) if not line.startswith("#"))
    return list(csv.DictReader(io.StringIO(text)))


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    d = tmp_path_factory.mktemp("le-scenario")
    (d / "s.toml").write_text(SCENARIO)
    mp = pytest.MonkeyPatch()
    mp.setattr(le, "SWEEP_SUN_PHASES", 4)       # the same search over fewer Sun phases: quicker
    try:
        assert main(["run", str(d / "s.toml"), f"--out={d}/run", "--workers=1", "--quiet"]) == 0
    finally:
        mp.undo()
    return d / "run"


def test_the_route_is_the_low_energy_leg_launched_at_the_scenario_epoch(run):
    from cr3bp.time.frames import epoch_from_text
    route = json.loads((run / f"route-{NAME}.json").read_text())
    st = route["stitched"]
    assert "bicircular restricted four-body model" in route["caution"]
    assert st["model"] == "bicircular"
    assert st["model_record"]["epoch_tdb_s"] == pytest.approx(epoch_from_text("2027-03-01T00:00:00Z"), abs=1e-6)
    dep, ins = route["maneuvers"]
    assert (dep["name"], ins["name"]) == ("departure", "insertion")
    assert 3100.0 <= dep["dv_mps"] <= 3200.0                      # Parker & Anderson 2013 (from memory)
    assert 70.0 <= st["tof_days"] <= 130.0
    table = (run / f"route-{NAME}-maneuvers.csv").read_text(encoding="utf-8")
    note = table.split("# dv_design_mps: ", 1)[1].splitlines()[0]
    assert "bicircular" in note and "CR3BP design" not in note


def test_the_route_trajectory_closes_under_scipy_in_the_bicircular_model(run):
    """The route's own samples (TU, rotating frame; the trajectory CSV of the run): each coast,
    re-propagated by scipy's DOP853 on Simó et al.'s equations from its first sample, lands on its
    last within the design's closure tolerance."""
    from cr3bp.bicircular import model_from_record
    route = json.loads((run / f"route-{NAME}.json").read_text())
    model = model_from_record(EM, route["stitched"]["model_record"])
    rows = _rows(run / f"route-{NAME}-trajectory.csv")
    t = np.array([float(r["t_tu"]) for r in rows])
    seg = np.array([int(r["segment"]) for r in rows])
    x = np.array([[float(r[k]) for k in ("x_lu", "y_lu", "z_lu", "vx_vu", "vy_vu", "vz_vu")] for r in rows])
    assert len(set(seg)) == le.SEGMENTS
    worst = 0.0
    for k in sorted(set(seg)):
        i = np.flatnonzero(seg == k)
        sol = solve_ivp(simo_rhs, (t[i[0]], t[i[-1]]), x[i[0]], method="DOP853", rtol=1e-12, atol=1e-12,
                        args=_simo_args(model))
        assert sol.success
        worst = max(worst, EM.km(np.linalg.norm(sol.y[:3, -1] - x[i[-1], :3])))
    assert worst < le.CLOSURE_TOL_KM, worst
    # and the coasts join: each starts where the last ended (within the same tolerance)
    for k in sorted(set(seg))[1:]:
        a, b = np.flatnonzero(seg == k - 1)[-1], np.flatnonzero(seg == k)[0]
        assert EM.km(np.linalg.norm(x[a, :3] - x[b, :3])) < le.CLOSURE_TOL_KM
