"""Eclipses on a quasi-periodic torus: ``librate shadow --torus`` and ``cr3bp.shadow(torus)``.

The trajectory placed at a date is the one ``librate torus --export`` writes
(:func:`cr3bp.tori.trajectory.sample`, Olikara & Scheeres, AAS 12-361, 2012, sec. II: the flow
moves the torus phases uniformly), read by cubic Hermite interpolation; moving its start by a
phase along the flow equals the trajectory sampled from the moved torus phase. The shadow
geometry itself is checked against the published eclipse canon
(tests/test_against_espenak_meeus_canon.py) and pyerfa (tests/test_against_pyerfa_shadow.py);
here the seams: the placed torus against the sampler, and the Python call against the command.
"""

import functools
import json
import math

import numpy as np
import pytest

import cr3bp
from cr3bp import system
from cr3bp.operations import placement
from cr3bp.tori import request as treq
from cr3bp.tori.trajectory import sample
from librate_cli.main import main

pytestmark = pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")

#: A small quasi-halo about an Earth-Moon L1 halo (as tests/test_scenario_tori.py).
REQUEST = "quasi-halo around halo L1 north az=10000km amplitude=300km"
EPOCH = "2031-03-01T00:00:00Z"
#: Interpolation tolerance of the placed trajectory (one kilometre is far under a shadow's edge
#: motion in a search step; measured below 1 m at 2000 samples a stroboscopic time).
ONE_KM = 1.0


@functools.lru_cache(maxsize=None)
def ring():
    return treq.solve(system("earth-moon"), REQUEST)


def test_the_placed_torus_is_the_sampled_trajectory():
    t = ring()
    s = t.system
    span = 30.0 / s.time_days
    pl = placement.place_torus(s, t, EPOCH, span, (30.0, 60.0))
    # at its own nodes: the sampler's states (to rounding: another output grid)
    ref = sample(t, pl.t_tu[:50], (math.radians(30.0), math.radians(60.0))).states
    assert np.max(np.abs(pl.rotating(pl.t_tu[:50]) - ref[:, :3])) * s.length_km < 1e-3     # 1 m
    # between the nodes: the sampler at those times, within a kilometre
    tt = np.linspace(0.0, span, 777)[1:]
    got = pl.rotating(tt)
    want = sample(t, np.concatenate([[0.0], tt]), (math.radians(30.0), math.radians(60.0))).states[1:, :3]
    assert np.max(np.linalg.norm(got - want, axis=1)) * s.length_km < ONE_KM


def test_a_phase_moves_the_start_along_the_flow():
    """Start moved by p deg of a stroboscopic time == the trajectory from (theta0 + p,
    theta1 + rho p / 360): the flow moves both phases uniformly (Olikara & Scheeres 2012)."""
    t = ring()
    s = t.system
    span = 20.0 / s.time_days
    pl = placement.place_torus(s, t, EPOCH, span, (0.0, 0.0))
    p = 100.0
    tt = np.linspace(0.0, span, 400)
    moved = sample(t, tt, (math.radians(p), t.rotation * p / 360.0)).states[:, :3]
    d_km = np.linalg.norm(pl.rotating(tt, p) - moved, axis=1) * s.length_km
    # the two re-start from the circle at different times: they differ by the invariance error
    assert d_km.max() < 5 * ONE_KM, d_km.max()


def test_times_outside_the_placed_trajectory_are_refused():
    t = ring()
    pl = placement.place_torus(t.system, t, EPOCH, 2.0 / t.system.time_days)
    with pytest.raises(cr3bp.errors.InputError, match="outside the placed torus trajectory"):
        pl.rotating([pl.t_tu[-1] + 1.0])


def test_the_python_call_matches_the_command(capsys):
    rc = main(["shadow", "--system", "earth-moon", "--torus", REQUEST, "--torus-phase", "30,60", "--epoch", EPOCH,
               "--span", "365d", "--step", "20min", "--avoid-eclipses", "--phases", "3", "--format", "json", "-q"])
    o = capsys.readouterr()
    assert rc == 0, o.err
    d = json.loads(o.out)
    scan = cr3bp.shadow(ring(), EPOCH, span="365d", step="20min", avoid_eclipses=True, phases=3,
                        torus_phase=(30.0, 60.0))
    assert all(h.passes for h in scan)                # Earth shadows in every phase: a scan to rank
    assert [h.phase_deg for h in scan] == [r["phase_deg"] for r in d["phase_scan"]]
    assert [h.total_min() for h in scan] == [r["shadow_total_min"] for r in d["phase_scan"]]
    assert [p.to_dict() for p in scan[0].passes] == d["passes"]
    one = cr3bp.shadow(ring(), EPOCH, span="365d", step="20min", phase=scan[0].phase_deg, torus_phase=(30.0, 60.0))
    assert [p.to_dict() for p in one.passes] == d["passes"]
    assert d["model"]["period_days"] == pytest.approx(ring().stroboscopic_period_days, rel=1e-12)


def test_the_command_table_names_the_torus(capsys):
    rc = main(["shadow", "--system", "earth-moon", "--torus", REQUEST, "--epoch", EPOCH, "--span", "3d",
               "--step", "30min"])
    o = capsys.readouterr()
    assert rc == 0, o.err
    assert "torus phase at the epoch" in o.out and "stroboscopic period (CR3BP)" in o.out
    assert "quasi-periodic torus" in o.out and "preliminary" in o.out.lower()
