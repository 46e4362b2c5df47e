"""Insertion dispersion (cr3bp.operations.dispersion, librate disperse) on a manifold insertion
onto the Earth-Moon L2 9:2 NRHO.

Outside check: the Monte Carlo (nonlinear CR3BP trials) against the linear covariance
formulation of D. K. Geller, "Linear covariance techniques for orbital rendezvous analysis and
autonomous onboard mission planning", J. Guidance, Control, and Dynamics 29(6), 2006 (from
memory): for small errors the two must agree to within the Monte Carlo's sampling error
(the standard error of a standard deviation from n samples is about 1/sqrt(2n) of it; 2000
trials: 1.6 %; we allow 6 %). The mean magnitude of a Gaussian vector (the linear estimate of
a correction's mean) is checked against the closed form for an isotropic one, the chi
distribution's mean sqrt(2) Gamma(2)/Gamma(3/2) sigma (any statistics handbook).
"""

import functools
import json
import math

import numpy as np
import pytest

from cr3bp.errors import InputError
from cr3bp.operations import dispersion as dp
from cr3bp.operations.keeping import Errors
from librate_cli.main import main

from _orbit_cache import nrho_9_2

SMALL = Errors(0.1, 0.001, 0.01, 0.0001)      # 100 m, 1 mm/s; 1 %, 0.1 mm/s (1-sigma per axis)
GAUSSIAN = Errors(0.1, 0.001, 0.0, 0.0001)    # no proportional error: every error is Gaussian
TOL_SIGMA = 0.06


@functools.lru_cache(maxsize=None)
def nominal(coast_days=6.0, burn_mps=20.0, phase=0.0):
    o = nrho_9_2()
    return dp.manifold_insertion(o, phase, coast_days / o.system.time_days, burn_mps)


def _tu(days):
    return days / nrho_9_2().system.time_days


def test_mean_norm_against_chi_distribution():
    # isotropic 3-D Gaussian: E|v| = sigma * sqrt(2) * Gamma(2) / Gamma(1.5) = sigma * sqrt(8/pi)
    for sigma in (1e-6, 1.0, 3.0):
        assert dp.mean_norm(np.eye(3) * sigma ** 2) == pytest.approx(sigma * math.sqrt(8 / math.pi), rel=1e-8)
    # one axis only: E|x| = sigma sqrt(2/pi) (half-normal mean)
    assert dp.mean_norm(np.diag([4.0, 0.0, 0.0])) == pytest.approx(2.0 * math.sqrt(2 / math.pi), rel=1e-8)
    # anisotropic: against a large sample
    c = np.diag([1.0, 0.25, 0.01])
    z = np.random.default_rng(0).standard_normal((400000, 3)) * np.sqrt(np.diag(c))
    assert dp.mean_norm(c) == pytest.approx(np.linalg.norm(z, axis=1).mean(), rel=3e-3)


def test_zero_errors_zero_correction():
    d = dp.dispersion(nominal(), [_tu(1.0), _tu(3.0)], Errors(), trials=5, seed=1)
    assert np.all(d.mc["dv"] == 0.0)
    assert np.all(d.mc["final"] == 0.0)
    s = d.summary()
    assert s["total_correction_mps"]["monte_carlo_p95"] == 0.0
    assert s["total_correction_mps"]["linear_mean"] == 0.0
    assert s["insertion_position_km"]["linear_rss_1sigma"] == 0.0


def test_monte_carlo_agrees_with_linear_covariance_for_small_errors():
    d = dp.dispersion(nominal(), [_tu(1.0), _tu(4.0)], GAUSSIAN, trials=2000, seed=7)
    s = d.summary()
    assert s["lost_trials"] == 0
    for c in s["corrections"]:
        assert c["monte_carlo_rms_mps"] == pytest.approx(c["linear_rms_mps"], rel=TOL_SIGMA), c
        assert c["monte_carlo_mean_mps"] == pytest.approx(c["linear_mean_mps"], rel=TOL_SIGMA), c
    p, v = s["insertion_position_km"], s["insertion_velocity_mps"]
    assert p["monte_carlo_rss_1sigma"] == pytest.approx(p["linear_rss_1sigma"], rel=TOL_SIGMA), p
    assert v["monte_carlo_rss_1sigma"] == pytest.approx(v["linear_rss_1sigma"], rel=TOL_SIGMA), v
    t = s["total_correction_mps"]
    assert t["monte_carlo_mean"] == pytest.approx(t["linear_mean"], rel=TOL_SIGMA), t


def test_proportional_errors_second_moments_still_agree():
    # a proportional error makes a correction's error a product of Gaussians: the linear
    # estimate's second moments stay exact (rms, dispersion), its Gaussian mean need not
    d = dp.dispersion(nominal(), [_tu(1.0), _tu(4.0)], SMALL, trials=2000, seed=7)
    s = d.summary()
    for c in s["corrections"]:
        assert c["monte_carlo_rms_mps"] == pytest.approx(c["linear_rms_mps"], rel=TOL_SIGMA), c
    p, v = s["insertion_position_km"], s["insertion_velocity_mps"]
    assert p["monte_carlo_rss_1sigma"] == pytest.approx(p["linear_rss_1sigma"], rel=TOL_SIGMA), p
    assert v["monte_carlo_rss_1sigma"] == pytest.approx(v["linear_rss_1sigma"], rel=TOL_SIGMA), v
    # the corrections do their job: the miss at insertion (1 % of a 20 m/s maneuver left alone)
    # is far below the uncorrected one
    assert p["linear_rss_1sigma"] < 0.05 * p["linear_rss_1sigma_without_corrections"]


def test_no_corrections_dispersion_is_the_propagated_insertion_error():
    d = dp.dispersion(nominal(), [], SMALL, trials=1500, seed=3)
    s = d.summary()
    p = s["insertion_position_km"]
    assert s["corrections"] == []
    assert p["linear_rss_1sigma"] == p["linear_rss_1sigma_without_corrections"]
    assert p["monte_carlo_rss_1sigma"] == pytest.approx(p["linear_rss_1sigma"], rel=TOL_SIGMA)


def test_larger_last_maneuver_larger_dispersion():
    a = dp.dispersion(nominal(burn_mps=0.0), [], SMALL, trials=2, seed=0).summary()
    b = dp.dispersion(nominal(burn_mps=200.0), [], SMALL, trials=2, seed=0).summary()
    assert b["insertion_position_km"]["linear_rss_1sigma"] > 1.5 * a["insertion_position_km"]["linear_rss_1sigma"]


def test_refusals():
    nom = nominal()
    with pytest.raises(InputError, match="correction at"):
        dp.dispersion(nom, [_tu(7.0)], SMALL, trials=2)
    with pytest.raises(InputError, match="increasing"):
        dp.dispersion(nom, [_tu(2.0), _tu(1.0)], SMALL, trials=2)
    with pytest.raises(InputError, match="trials"):
        dp.dispersion(nom, [], SMALL, trials=0)
    with pytest.raises(InputError, match="coast"):
        dp.manifold_insertion(nrho_9_2(), 0.0, -1.0, 0.0)


def test_cli_end_to_end(capsys, tmp_path):
    out = tmp_path / "d.json"
    rc = main(["disperse", "--system", "earth-moon", "--orbit", "halo L2 south resonance=9:2", "--coast", "6d",
               "--burn", "20m/s", "--corrections", "1d,4d", "--nav-error", "100m,1mm/s", "--burn-error",
               "1%,0.1mm/s", "--trials", "300", "--seed", "7", "--format", "json", "--out", str(out), "-q"])
    assert rc == 0
    got = json.loads(out.read_text())
    # the same numbers as the Python call with the same inputs (a seam: CLI -> library)
    ref = dp.dispersion(nominal(), [_tu(1.0), _tu(4.0)], SMALL, trials=300, seed=7).summary()
    assert got["summary"]["total_correction_mps"]["monte_carlo_mean"] == pytest.approx(
        ref["total_correction_mps"]["monte_carlo_mean"], rel=1e-9)
    assert "CAUTION" in got["caution"]
    rc = main(["disperse", "--system", "earth-moon", "--orbit", "halo L2 south resonance=9:2", "--coast", "6d",
               "--corrections", "2d", "--trials", "20"])
    text = capsys.readouterr().out
    assert rc == 0
    assert "CR3BP" in text and "CAUTION" in text and "linear covariance" in text


def test_after_the_last_maneuver_of_a_leg():
    """Seam (leg -> dispersion): the nominal starts at the leg's last maneuver and ends at its
    arrival; the heteroclinic L1 -> L2 Lyapunov leg at C = 3.15 (Koon, Lo, Marsden & Ross 2000,
    the case of tests/test_against_koon_heteroclinic.py)."""
    from cr3bp import system
    from cr3bp.integrate import propagate
    from cr3bp.tubes.connections import connect
    from _orbit_fixtures import lyapunov
    em = system("earth-moon")
    legs, _, _ = connect(lyapunov(em, "L1", 3.15), lyapunov(em, "L2", 3.15), "x=1-mu", 60)
    leg = min(legs, key=lambda lg: lg.dv_mps)
    nom = dp.after_last_maneuver(leg)
    last = leg.maneuvers[-1]
    assert nom.burn_mps == last.dv_mps
    assert nom.tf_tu == pytest.approx(leg.tof_arrival - last.t, rel=1e-12)
    t, states = leg.trajectory(2000)
    k = np.nonzero(np.abs(t - last.t) <= 1e-12)[0][-1]      # the first sample after the maneuver
    assert np.allclose(nom.x0, states[k], atol=1e-9)
    end = propagate(em, nom.x0, nom.tf_tu, rtol=1e-12, atol=1e-12).states[-1]
    want = propagate(em, states[k], leg.tof_arrival - t[k], rtol=1e-12, atol=1e-12).states[-1]
    assert np.allclose(end, want, atol=1e-8)
    s = dp.dispersion(nom, [0.3 * nom.tf_tu], GAUSSIAN, trials=1500, seed=2).summary()
    c = s["corrections"][0]
    assert c["monte_carlo_rms_mps"] == pytest.approx(c["linear_rms_mps"], rel=TOL_SIGMA)
    p = s["insertion_position_km"]
    assert p["monte_carlo_rss_1sigma"] == pytest.approx(p["linear_rss_1sigma"], rel=TOL_SIGMA)


ROUTE_NODES = """system = "earth-moon"
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


@pytest.fixture(scope="module")
def route_json(tmp_path_factory):
    d = tmp_path_factory.mktemp("route")
    (d / "nodes.toml").write_text(ROUTE_NODES)
    rc = main(["route", "--system", "earth-moon", "--nodes", str(d / "nodes.toml"), "--from", "p0", "--to", "p1",
               "--workers", "1", "--no-catalog", "--out", str(d / "out"), "-q"])
    assert rc == 0
    return d / "out" / "route.json"


def test_route_end_dispersion_end_to_end(route_json, tmp_path):
    """Seam (librate route -> librate disperse --route): the nominal is the stitched route's
    coast from its last maneuver before the end, the state just after that maneuver, and it
    reaches the route's last sample (trajectory.csv beside route.json); the Monte Carlo agrees
    with the linear covariance (Geller 2006) for small errors."""
    from cr3bp import system
    from cr3bp.integrate import propagate
    em = system("earth-moon")
    route = json.loads(route_json.read_text())
    st = route["stitched"]
    before = [m for m in st["maneuvers"] if m["t_days"] < st["tof_days"] - 1e-9]
    nom = dp.after_route_maneuver(route_json)
    assert nom.burn_mps == before[-1]["dv_mps"]
    assert nom.tf_tu * em.time_days == pytest.approx(st["tof_days"] - before[-1]["t_days"], rel=1e-12)
    data = np.loadtxt(route_json.parent / "trajectory.csv", delimiter=",", comments="#", skiprows=5)
    end = propagate(em, nom.x0, nom.tf_tu, rtol=1e-12, atol=1e-12).states[-1]
    assert np.allclose(end[:3], data[-1, 3:6], atol=1e-8)       # LU (0.004 km): the stitched route's own seams
    out = tmp_path / "d.json"
    rc = main(["disperse", "--route", str(route_json), "--corrections", "0.25d,0.6d", "--nav-error", "100m,1mm/s",
               "--burn-error", "0%,0.1mm/s", "--trials", "2000", "--seed", "3", "--format", "json",
               "--out", str(out), "-q"])
    assert rc == 0
    got = json.loads(out.read_text())
    assert got["route_file"] == str(route_json)
    s = got["summary"]
    assert s["lost_trials"] == 0
    for c in s["corrections"]:
        assert c["monte_carlo_rms_mps"] == pytest.approx(c["linear_rms_mps"], rel=TOL_SIGMA)
    p = s["insertion_position_km"]
    assert p["monte_carlo_rss_1sigma"] == pytest.approx(p["linear_rss_1sigma"], rel=TOL_SIGMA)
    # the CLI gives the library's numbers (seam CLI -> library)
    ref = dp.dispersion(nom, [0.25 / em.time_days, 0.6 / em.time_days], Errors(0.1, 0.001, 0.0, 0.0001),
                        2000, 3).summary()
    assert s["total_correction_mps"]["monte_carlo_mean"] == pytest.approx(
        ref["total_correction_mps"]["monte_carlo_mean"], rel=1e-9)
    assert "CAUTION" in got["caution"]


def test_route_end_dispersion_refusals(route_json, tmp_path, capsys):
    bad = tmp_path / "bad.json"
    bad.write_text('{"system": {"name": "earth-moon"}, "stitched": null}')
    with pytest.raises(InputError, match="not stitched"):
        dp.after_route_maneuver(bad)
    old = json.loads(route_json.read_text())
    for m in old["stitched"]["maneuvers"]:
        m.pop("state_after_lu")
    with pytest.raises(InputError, match="older"):
        dp.after_route_maneuver(old)
    for extra, words in ((["--coast", "1d"], "--coast goes with --orbit"),
                         (["--orbit", "halo L2 south resonance=9:2"], "not both"),
                         (["--corrections", "2d"], "before the insertion")):
        assert main(["disperse", "--route", str(route_json), "--trials", "2"] + extra) == 2
        assert words in capsys.readouterr().err
