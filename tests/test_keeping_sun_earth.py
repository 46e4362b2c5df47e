"""Station-keeping budgets of Sun-Earth libration-point orbits (cr3bp.operations.keeping,
``librate keep --system sun-earth``): a maneuver every 30 days aimed at the next x-z plane
crossing near the Earth side (``--interval 30d --target-revs 1``); once a revolution (six
months) is far longer than the orbits' e-folding time (about 23 days at Sun-Earth L1) and lets
trials leave the orbit.

Outside check (order of magnitude, from memory): Sun-Earth L1/L2 halo missions flew a few m/s
per year of station keeping (SOHO and ACE, with momentum unloading and flight navigation), and
analyses of L1 halo station keeping with navigation errors of about a kilometre and a cm/s find
tenths of a m/s to a few m/s per year (Howell & Pernicka, "Station-keeping method for
libration point trajectories", J. Guidance 16(1), 1993; from memory). The test asks for 0.05 to
5 m/s per year at 1 km, 1 cm/s navigation and 1 %, 1 mm/s execution errors (1-sigma). Also:
zero errors give a near-zero budget, and doubling every error raises the budget monotonically.
"""

import functools
import json
import warnings

import numpy as np
import pytest

from cr3bp import system
from cr3bp.operations import keeping as kp
from cr3bp.orbits.request import solve_request
from librate_cli.main import main

from fidelity_cases import EPOCH, sel1_halo

pytestmark = pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")

NOMINAL = kp.Errors(1.0, 0.01, 0.01, 0.001)     # 1 km, 1 cm/s; 1 %, 1 mm/s (1-sigma per axis)
SPAN_DAYS = 180.0


@functools.lru_cache(maxsize=None)
def se_orbit(point):
    return sel1_halo() if point == "L1" else solve_request(system("sun-earth"), "halo L2 north az=200000km")


@functools.lru_cache(maxsize=None)
def ref(point="L1"):
    o = se_orbit(point)
    td = o.system.time_days
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return kp.reference(o, EPOCH, SPAN_DAYS / td, bodies=("sun", "earth", "moon"), target_revs=1,
                            interval_tu=30.0 / td)


def _budget(errors, point="L1", trials=12, seed=5):
    r = ref(point)
    return kp.Budget(r, errors, seed, 0.0, kp.run_trials(r, errors, trials, seed, workers=1))


@pytest.mark.parametrize("point", ["L1", "L2"])
def test_annual_budget_is_of_the_published_order(point):
    b = _budget(NOMINAL, point)
    s = b.summary()
    assert s["lost_trials"] == 0
    assert 0.05 < s["dv_per_year_mps"]["mean"] < 5.0, s["dv_per_year_mps"]
    assert s["maneuver_slots"] == 6                                 # every 30 d over 180 d


def test_zero_errors_give_a_near_zero_budget():
    s = _budget(kp.Errors(), trials=3).summary()
    assert s["dv_per_year_mps"]["max"] < 0.005, s["dv_per_year_mps"]     # under 5 mm/s a year
    assert s["deviation_at_maneuvers_km"]["max"] < 1.0


def test_doubling_the_errors_raises_the_budget_monotonically():
    means = [_budget(NOMINAL.scaled(k)).summary()["dv_per_year_mps"]["mean"] for k in (0.5, 1.0, 2.0, 4.0)]
    assert all(b > a for a, b in zip(means, means[1:])), means
    assert means[-1] > 4.0 * means[0]


def test_cli_sun_earth_end_to_end(tmp_path):
    out = tmp_path / "k.json"
    rc = main(["keep", "--system", "sun-earth", "--orbit", "halo L1 north az=200000km", "--epoch", EPOCH,
               "--span", "180d", "--interval", "30d", "--target-revs", "1", "--bodies", "sun,earth,moon",
               "--trials", "12", "--seed", "5", "--format", "json", "--out", str(out), "-q"])
    assert rc == 0
    got = json.loads(out.read_text())
    want = _budget(NOMINAL).summary()
    assert got["summary"]["dv_per_year_mps"]["mean"] == pytest.approx(want["dv_per_year_mps"]["mean"], rel=1e-6)
    assert "CAUTION" in got["caution"]


# ---- the trials on a dask cluster (same numbers as in this process) ----------------------------

def test_trials_on_a_dask_cluster_equal_the_trials_here():
    distributed = pytest.importorskip("distributed")
    r = ref("L1")
    here = kp.run_trials(r, NOMINAL, 6, 5, workers=1)
    with distributed.LocalCluster(processes=False, n_workers=2, threads_per_worker=1,
                                  dashboard_address=None) as cluster, distributed.Client(cluster) as client:
        there = kp.run_trials(r, NOMINAL, 6, 5, scheduler=client)
    for key in ("dv_mps", "states", "lost"):
        assert np.array_equal(here[key], there[key]), key
    # a local cluster of worker processes started and stopped for the run
    local = kp.run_trials(r, NOMINAL, 6, 5, scheduler="local", workers=1)
    for key in ("dv_mps", "states", "lost"):
        assert np.array_equal(here[key], local[key]), key


def test_cli_scheduler_address(tmp_path):
    distributed = pytest.importorskip("distributed")
    out = tmp_path / "k.json"
    with distributed.LocalCluster(processes=False, n_workers=1, threads_per_worker=1,
                                  dashboard_address=None) as cluster:
        rc = main(["keep", "--system", "sun-earth", "--orbit", "halo L1 north az=200000km", "--epoch", EPOCH,
                   "--span", "180d", "--interval", "30d", "--target-revs", "1", "--bodies", "sun,earth,moon",
                   "--trials", "12", "--seed", "5", "--format", "json", "--out", str(out), "-q",
                   "--scheduler", cluster.scheduler_address])
    assert rc == 0
    got = json.loads(out.read_text())
    want = _budget(NOMINAL).summary()
    assert got["summary"]["dv_per_year_mps"] == want["dv_per_year_mps"]


def test_cli_unreachable_scheduler_is_refused_before_any_work(tmp_path, capsys):
    pytest.importorskip("distributed")
    import time
    t = time.perf_counter()
    rc = main(["keep", "--system", "sun-earth", "--orbit", "halo L1 north az=200000km", "--epoch", EPOCH,
               "--span", "180d", "--trials", "2", "--scheduler", "tcp://127.0.0.1:1", "--out",
               str(tmp_path / "k.json")])
    err = capsys.readouterr().err
    assert rc == 2 and "cannot reach the dask scheduler at 'tcp://127.0.0.1:1'" in err
    assert "solving orbit" not in err and list(tmp_path.iterdir()) == []
    assert time.perf_counter() - t < kp.CONNECT_TIMEOUT_S + 20
