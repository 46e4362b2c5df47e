"""``librate shadow`` beyond Earth-Moon: Sun-Earth orbits (the Earth's shadow at Sun-Earth L1/L2,
the Sun-Earth-spacecraft angle), and the choice of the start epoch in a window.

Outside checks (published radii: IAU 2015 Resolution B3 nominal solar radius 695 700 km and
nominal equatorial Earth radius 6378.1 km; distances: Sun-Earth L1/L2 about 1.5 million km from
the Earth, common practice):

- at Sun-Earth L2 the Earth's umbra has ended (its length R_E AU / (R_sun - R_E) is about
  1.38 million km), so a spacecraft held at L2 sits in the Earth's penumbra all the time,
  never its umbra, and sees the fraction 1 - (rho_E / rho_sun)^2 of the Sun's disc (an annular
  eclipse; rho the angular radii), computed here from the published radii;
- at L1 the Sun-Earth-spacecraft angle stays near 0 deg and at L2 near 180 deg (the Earth moves
  about the Earth-Moon barycentre by at most ~4 700 km, i.e. < 0.2 deg seen from 1.5e6 km).
"""

import json
import types
import warnings

import numpy as np
import pytest

from cr3bp import system
from cr3bp.equilibria import lagrange_point
from cr3bp.io import export
from cr3bp.operations import phasing, placement
from cr3bp.orbits.request import solve_request
from cr3bp.time import frames
from librate_cli.main import main

pytestmark = pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")
SE = system("sun-earth")
EM = system("earth-moon")
EPOCH = "2031-03-01T00:00:00Z"
R_SUN_KM = 695700.0       # IAU 2015 Resolution B3, nominal solar radius
R_EARTH_KM = 6378.1       # IAU 2015 Resolution B3, nominal equatorial Earth radius
AU_KM = 149597870.7       # IAU 2012 Resolution B2


def _held_at(point):
    """A 'periodic orbit' that stays on a Lagrange point (an equilibrium, any period)."""
    x = lagrange_point(SE, point).position
    return types.SimpleNamespace(state=np.array([x[0], 0.0, 0.0, 0.0, 0.0, 0.0]), period=1.0)


def test_sun_earth_placement_matches_the_export_pipeline_centred_on_the_earth():
    """Seam: positions of the eclipse search are what the export pipeline writes with
    ``--center earth`` in Sun-Earth (the Earth placed in the Earth-Moon barycentre by DE421)."""
    orbit = solve_request(SE, "halo L2 north az=200000km")
    pl = placement.place(SE, orbit, EPOCH)
    spec = frames.frame(SE, EPOCH, anchor="ephemeris", axes="j2000-equator", center="earth")
    grid = export.epoch_grid(spec, "UTC", float(orbit.period), 86400.0)      # one period
    seg = export.sample(SE, orbit, grid)
    tdb, want = frames.to_frame(spec, seg.t_tu, seg.states)
    got = pl.geocentric(tdb, 0.0)
    assert np.max(np.linalg.norm(got - want[:, :3], axis=1)) < 1.0      # km (interpolation)
    # and not the barycentre: the Earth's offset is there (up to ~4 700 km)
    bary = frames.to_frame(frames.with_(spec, center="secondary"), seg.t_tu, seg.states)[1]
    assert np.max(np.linalg.norm(bary[:, :3] - want[:, :3], axis=1)) > 3000.0


def test_at_sun_earth_l2_the_earth_gives_a_permanent_annular_eclipse():
    pl = placement.place(SE, _held_at("L2"), EPOCH)
    span = 30 * 86400.0
    sk = phasing.sky(pl, span, 3600.0)
    h = phasing.history(pl, sk, 0.0, bodies=("earth",))
    assert h.total_min("umbra") == 0.0
    assert h.total_min("penumbra") == pytest.approx(span / 60.0, rel=1e-9)
    # depth: the visible fraction of the Sun's disc, from the published radii
    r = np.linalg.norm(pl.geocentric(sk.tdb_s, 0.0), axis=1)
    d_sun = np.linalg.norm(sk.sun - pl.geocentric(sk.tdb_s, 0.0), axis=1)
    frac = 1.0 - (np.arcsin(R_EARTH_KM / r) / np.arcsin(R_SUN_KM / d_sun)) ** 2
    assert R_EARTH_KM * AU_KM / (R_SUN_KM - R_EARTH_KM) < r.min()          # beyond the umbra's tip
    (p,) = [q for q in h.passes if q.kind == "penumbra"]
    assert p.depth == pytest.approx(frac.min(), abs=0.01)


@pytest.mark.parametrize("point,lo,hi", [("L1", 0.0, 0.3), ("L2", 179.7, 180.0)])
def test_sun_earth_spacecraft_angle_at_l1_and_l2(point, lo, hi):
    pl = placement.place(SE, _held_at(point), EPOCH)
    sk = phasing.sky(pl, 60 * 86400.0, 6 * 3600.0)
    a = phasing.earth_angles(pl, sk, 0.0)
    assert lo <= a["sun_earth_spacecraft_deg"].min() and a["sun_earth_spacecraft_deg"].max() <= hi
    assert 1.45e6 < a["range_km"].min() and a["range_km"].max() < 1.56e6


def test_cli_sun_earth_halo(capsys):
    rc = main(["shadow", "--system", "sun-earth", "--orbit", "halo L2 north az=200000km", "--epoch", EPOCH,
               "--span", "200d", "--step", "1h", "--format", "json", "-q"])
    assert rc == 0
    d = json.loads(capsys.readouterr().out)
    a = d["angles"]["sun_earth_spacecraft_deg"]
    assert 140.0 < a["min"] <= a["max"] <= 180.0
    assert 1.0e6 < d["angles"]["range_to_earth_km"]["min"]


def test_epoch_scan_picks_the_least_shadow_and_reports_it(capsys):
    o = solve_request(EM, "halo L2 south resonance=9:2")
    pl = placement.place(EM, o, EPOCH)
    t0 = frames.epoch_from_text(EPOCH)
    epochs = t0 + np.arange(4) * 7 * 86400.0
    span = 60 * 86400.0
    got = phasing.scan_epochs(pl, epochs, span, 600.0)
    assert sorted(c.epoch_tdb_s for c in got) == list(epochs)
    # each epoch's history is the same as placing the orbit there from scratch
    for c in got:
        alone = placement.place(EM, o, c.epoch_tdb_s)
        h = phasing.history(alone, phasing.sky(alone, span, 600.0), 0.0)
        assert h.total_min() == pytest.approx(c.best.total_min(), abs=0.05)
    totals = [c.best.total_min() for c in got]
    assert totals == sorted(totals)
    # a maximum pass duration ranks first the epochs that meet it
    cap = min(c.best.longest_min() for c in got) + 0.01
    capped = phasing.scan_epochs(pl, epochs, span, 600.0, max_pass_min=cap)
    assert capped[0].best.longest_min() <= cap
    rc = main(["shadow", "--system", "earth-moon", "--orbit", "halo L2 south resonance=9:2", "--epoch", EPOCH,
               "--until-epoch", "2031-03-22T00:00:00Z", "--epochs", "4", "--span", "60d", "--step", "10min",
               "--format", "json", "-q"])
    assert rc == 0
    d = json.loads(capsys.readouterr().out)
    assert len(d["epoch_scan"]) == 4
    assert d["model"]["epoch_utc"] == d["epoch_scan"][0]["epoch_utc"]
    assert d["epoch_scan"][0]["shadow_total_min"] == pytest.approx(totals[0], abs=0.05)
