"""`librate refine --route` on a low-energy route (issue 15): the bicircular design (200 km
parking circle -> the 9:2 southern L2 NRHO, undated, refined at a launch date that brings the
ephemeris's Sun to the design's phase) carried into the ephemeris point-mass model
(cr3bp.fidelity.low_energy), inserting on the NRHO at its first arrival.

Outside checks:

* every segment of the converged trajectory, re-propagated by scipy's ``solve_ivp`` (DOP853;
  Hairer, Nørsett & Wanner, *Solving ODE I*, 2nd ed., 1993, section II.10, scipy's own
  implementation) on the model's right-hand side, lands on the next patch point within 1 m and
  1 mm/s (the continuity tolerance is 0.38 m and 1 mm/s; common practice for the margin);
* the departure starts on the 200 km parking circle (the project's 6371.0084 km Earth radius +
  200 km = 6571.0 km) and its burn is measured from the circular speed
  sqrt(GM/r) (Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed., 2013, eq. 2-51
  (circular speed), from memory), written out here;
* the departure Δv is within 100 m/s of the design's (the bound we state: measured +64 m/s,
  the real Sun and Moon against the model's circles); the published order of a ballistic lunar
  transfer's departure, 3.1-3.3 km/s from a low parking orbit (Parker & Anderson, *Low-Energy
  Lunar Trajectory Design*, 2013, ch. 3, from memory), holds;
* the trajectory ends on the NRHO's point converted to the ephemeris model, within 1 km (the
  conversion recomputed here through cr3bp.time.frames);
* the seam: the CLI's JSON equals the API's result.
"""

import json
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from cr3bp import CAUTION, system
from cr3bp.transfers import low_energy as le
from librate_cli.main import main

pytestmark = pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")

EM = system("earth-moon")
LU, VU = EM.length_km, EM.velocity_kms
NODES = '''system = "earth-moon"
[[node]]
name = "leo"
kind = "parking"
body = "earth"
altitude = "200km"
[[node]]
name = "relay"
kind = "orbit"
orbit = "halo L2 south resonance=9:2"
[[edge]]
from = "leo"
to = "relay"
path = "low-energy"
'''
#: GM of the Earth, km^3/s^2 (IERS Conventions 2010, table 1.1, from memory).
GM_EARTH = 398600.4418
#: The Earth's mean radius used by the project (data/systems.toml) plus the 200 km altitude.
R_PARK_KM = 6371.0084 + 200.0


@pytest.fixture(scope="module")
def refined(tmp_path_factory):
    from cr3bp import api
    from cr3bp.time.frames import epoch_from_text
    d = tmp_path_factory.mktemp("le-refine")
    (d / "le.toml").write_text(NODES)
    out = d / "route"
    assert main(["route", "--system=earth-moon", f"--nodes={d / 'le.toml'}", "--from=leo", "--to=relay",
                 "--workers=1", f"--catalog={d / 'cat.sqlite'}", f"--out={out}", "--quiet"]) == 0
    rec = json.loads((out / "route.json").read_text())["stitched"]["model_record"]
    t0 = epoch_from_text("2027-03-01T00:00:00Z")
    dates, _, _ = le._phase_dates(t0, t0 + 30 * 86400.0, rec["sun_phase_rad"], EM)
    date = le.iso_utc(dates[0])
    tr = api.refine(out, date, system=EM)
    return out, date, tr


def test_the_route_converges_with_named_maneuvers(refined):
    _, _, tr = refined
    assert [m["kind"] for m in tr.maneuvers] == ["departure", "correction", "insertion"]
    assert tr.continuity_km < 1e-3 and tr.continuity_mps < 1e-3
    ins = tr.maneuvers[-1]
    # the insertion moved to the first arrival, before the design's insertion after its shadowing revolutions
    assert ins["t_days"] < ins["t_cr3bp_days"]
    assert tr.options["arrival"]["design_miss_km"] <= 10_000.0
    assert tr.dv_total_mps == pytest.approx(sum(m["dv_mps"] for m in tr.maneuvers), rel=1e-12)


def test_the_cheapest_of_the_correction_leads_is_kept(refined):
    """Every lead of cr3bp.fidelity.low_energy.CORRECTION_LEADS_DAYS is solved and the converged
    solution of least total kept, and the note and options say which and what the others cost.
    Why: with one lead of 10 days, two designs equal to 1e-6 m/s refined to 3 521 and 4 234 m/s
    (Newton ends at the ephemeris solution nearest its first guess); the least of 10, 20 and 30
    days gave 3 444 and 3 420 m/s (measured 2026-12-04)."""
    from cr3bp.fidelity import low_energy as fle
    _, _, tr = refined
    tried = tr.options["correction_leads_tried"]
    assert list(tried) == [f"{v:g}" for v in fle.CORRECTION_LEADS_DAYS]
    totals = [v for v in tried.values() if isinstance(v, float)]
    assert totals and tr.dv_total_mps == pytest.approx(min(totals), abs=1e-3)
    assert tried[f"{tr.options['correction_lead_days']:g}"] == pytest.approx(tr.dv_total_mps, abs=1e-3)
    cor = next(m for m in tr.maneuvers if m["kind"] == "correction")
    ins = next(m for m in tr.maneuvers if m["kind"] == "insertion")
    assert (ins["t_days"] - cor["t_days"]) == pytest.approx(tr.options["correction_lead_days"], abs=1.0)
    assert f"correction {tr.options['correction_lead_days']:g} d before insertion" in tr.note
    # the published order of a ballistic lunar transfer's total from a low parking orbit,
    # 3.1-3.6 km/s with its corrections (Parker & Anderson 2013, ch. 3, from memory)
    assert 3100.0 <= tr.dv_total_mps <= 3600.0


def test_each_segment_closes_under_scipy_dop853(refined):
    _, _, tr = refined
    m, X, t, arc = tr.model, tr.patches, tr.t_tu, tr.arc_of
    worst_km = worst_mps = 0.0
    for k in range(t.size - 1):
        if arc[k] != arc[k + 1]:
            continue
        sol = solve_ivp(m.acceleration, (t[k], t[k + 1]), X[k], method="DOP853", rtol=1e-12, atol=1e-12)
        assert sol.success
        gap = sol.y[:, -1] - X[k + 1]
        worst_km = max(worst_km, float(np.linalg.norm(gap[:3]) * LU))
        worst_mps = max(worst_mps, float(np.linalg.norm(gap[3:]) * VU * 1000))
    assert worst_km < 1e-3, worst_km          # 1 m
    assert worst_mps < 1e-3, worst_mps        # 1 mm/s
    # across the correction only the velocity jumps
    j = int(np.flatnonzero(arc[:-1] != arc[1:])[0])
    assert np.linalg.norm(X[j, :3] - X[j + 1, :3]) * LU < 1e-3


def test_the_departure_leaves_the_parking_circle_at_the_design_cost(refined):
    _, _, tr = refined
    dep = tr.maneuvers[0]
    before = np.array(dep["state_before_km"])
    after = np.array(dep["state_after_km"])
    r = np.linalg.norm(before[:3])
    assert r == pytest.approx(R_PARK_KM, abs=1e-3)                       # 1 m
    assert np.linalg.norm(after[:3] - before[:3]) < 1e-6
    assert np.linalg.norm(before[3:]) == pytest.approx(math.sqrt(GM_EARTH / r), rel=1e-6)
    assert abs(before[:3] @ before[3:]) < 1e-9 * r                       # circular: velocity across the radius
    assert np.linalg.norm(after[3:] - before[3:]) * 1000 == pytest.approx(dep["dv_mps"], rel=1e-9)
    assert abs(dep["dv_mps"] - dep["dv_cr3bp_mps"]) <= 100.0
    assert 3100.0 <= dep["dv_mps"] <= 3300.0


def test_the_trajectory_ends_on_the_converted_nrho(refined):
    from cr3bp.fidelity import model as fm
    from cr3bp.time import ephemeris, frames
    _, date, tr = refined
    arr = tr.options["arrival"]
    ins = tr.maneuvers[-1]
    t_ins = ins["t_tu"]
    spec = frames.frame(EM, date, anchor="ephemeris", axes="j2000-equator", center="secondary")
    tdb, km = frames.to_frame(spec, np.array([t_ins]), np.array([arr["target_rotating"]]))
    moon = np.asarray(ephemeris.state("moon", frames._epoch(tdb), "earth", "j2000-equator"))
    want = km[0] + moon.reshape(-1)
    X, t = tr.patches, tr.t_tu
    end = fm.propagate(tr.model, X[-2], t[-2], t[-1]).state_end * np.array([LU] * 3 + [VU] * 3)
    assert np.linalg.norm(end[:3] - want[:3]) < 1.0                      # 1 km
    assert np.linalg.norm(np.array(ins["state_after_km"]) - want) < 1e-6
    dv = np.linalg.norm(want[3:] - end[3:]) * 1000
    assert dv == pytest.approx(ins["dv_mps"], abs=1e-3)


def test_cli_json_equals_the_api_result(refined, capsys, tmp_path):
    out, date, tr = refined
    oem = tmp_path / "le.oem"
    rc = main(["refine", "--system", "earth-moon", "--route", str(out), "--epoch", date, "--format", "json", "-q",
               "--out", str(oem)])
    d = json.loads(capsys.readouterr().out)
    assert rc == 0
    assert d["caution"] == CAUTION and d["design_model"] == "bicircular"
    assert d["dv_total_mps"] == pytest.approx(tr.dv_total_mps, rel=1e-9)
    for a, b in zip(d["maneuvers"], tr.maneuvers):
        assert a["kind"] == b["kind"] and a["dv_mps"] == pytest.approx(b["dv_mps"], rel=1e-9)
        assert a["t_days"] == pytest.approx(b["t_days"], rel=1e-12)
    assert d["options"]["arrival"]["t_days"] == pytest.approx(tr.options["arrival"]["t_days"], rel=1e-12)
    text = oem.read_text()
    assert "LIBRATE REFINED ROUTE" in text and text.count("MANEUVER") >= 3


def test_another_central_body_is_refused_before_any_work(refined, capsys, tmp_path):
    from cr3bp import api
    from cr3bp.errors import InputError
    out, date, _ = refined
    with pytest.raises(InputError, match="central 'earth'"):
        api.refine(out, date, system=EM, central="moon")
    rc = main(["refine", "--system", "earth-moon", "--route", str(out), "--epoch", date, "--central", "moon",
               "--out", str(tmp_path / "x.oem")])
    err = capsys.readouterr().err
    assert rc == 2 and "central 'earth'" in err and "Traceback" not in err
    assert not (tmp_path / "x.oem").exists()


def test_the_figure_names_the_design_model(refined):
    import matplotlib
    matplotlib.use("Agg")
    from cr3bp.plotting.fidelity import transition_figure
    _, _, tr = refined
    fig = transition_figure(tr)
    labels = [t.get_text() for ax in fig.axes if ax.get_legend() for t in ax.get_legend().get_texts()]
    labels += [ln.get_label() for ax in fig.axes for ln in ax.get_lines()]
    assert "bicircular design" in labels and "CR3BP design" not in labels
