"""Scenario eclipse checks: an orbit's ``phase_deg`` and the ``[orbits.NAME.checks]`` keys
``max_eclipse_duration`` and ``max_eclipse_per_year``, and the report's eclipse timeline.

Seam (scenario -> check): the values a scenario's checks report are those ``librate shadow``
gives for the same orbit, epoch and phase (itself checked against the published eclipse canon
and pyerfa positions in tests/test_against_espenak_meeus_canon.py and
tests/test_against_pyerfa_shadow.py).
"""

import json
import re

import pytest

from cr3bp import system
from cr3bp.scenario import run as mission
from cr3bp.scenario.checks import run_checks
from librate_cli.main import main

from _orbit_cache import nrho_9_2

pytestmark = pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")

SCENARIO = """
[mission]
name = "Shadows"

[system]
name = "{system}"
epoch = "2031-03-01T00:00:00Z"

[orbits.relay]
family = "halo"
point = "L2"
branch = "south"
{target}
phase_deg = {phase}

[orbits.relay.checks]
max_eclipse_duration = "{longest}"
max_eclipse_per_year = "{per_year}"
"""
NRHO = 'resonance = "9:2"'


def _shadow_cli(capsys, phase):
    rc = main(["shadow", "--system", "earth-moon", "--orbit", "halo L2 south resonance=9:2", "--epoch",
               "2031-03-01T00:00:00Z", "--span", "365.25d", "--phase", f"{phase}deg", "--format", "json", "-q"])
    assert rc == 0
    d = json.loads(capsys.readouterr().out)
    longest = max((p["duration_min"] for p in d["passes"] if p["kind"] == "penumbra"), default=0.0)
    per_year = sum(v["per_year_min"] for k, v in d["totals"].items() if k.endswith("penumbra"))
    return longest, per_year


@pytest.mark.parametrize("phase", [0.0, 200.0])
def test_scenario_eclipse_checks_equal_the_shadow_command(tmp_path, capsys, phase):
    p = tmp_path / "s.toml"
    p.write_text(SCENARIO.format(system="earth-moon", target=NRHO, phase=phase, longest="60min", per_year="5h"))
    plan = mission.prepare(p)
    entry = plan.data["orbits"]["relay"]
    res = {r.name: r for r in run_checks(nrho_9_2(), entry["checks"], epoch=plan.epoch,
                                         phase_deg=entry["phase_deg"])}
    longest, per_year = _shadow_cli(capsys, phase)
    assert res["max_eclipse_duration"].actual == pytest.approx(longest, abs=0.01)
    assert res["max_eclipse_per_year"].actual == pytest.approx(per_year, abs=0.05)
    assert res["max_eclipse_duration"].passed == (longest <= 60.0)
    assert res["max_eclipse_duration"].unit == "min"
    assert f"phase {phase:g} deg" in res["max_eclipse_duration"].description


def test_phase_changes_the_check():
    o = nrho_9_2()
    a = run_checks(o, {"max_eclipse_per_year": "0min"}, epoch="2031-03-01T00:00:00Z", phase_deg=0.0)[0]
    b = run_checks(o, {"max_eclipse_per_year": "0min"}, epoch="2031-03-01T00:00:00Z", phase_deg=200.0)[0]
    assert a.actual != b.actual


@pytest.mark.parametrize("sysname,target,value,pattern", [
    ("jupiter-europa", 'az = "5000km"', "60min",
     r"s.toml:\d+: orbits.relay.checks.max_eclipse_duration: eclipse checks are computed for earth-moon and "
     r"sun-earth only"),
    ("earth-moon", NRHO, "60km", r"s.toml:\d+: orbits.relay.checks.max_eclipse_duration: .*"),
    ("earth-moon", NRHO, "-5min", r"s.toml:\d+: orbits.relay.checks.max_eclipse_duration: .*zero or more"),
])
def test_scenario_eclipse_check_refused_before_writing(tmp_path, capsys, sysname, target, value, pattern):
    p = tmp_path / "s.toml"
    p.write_text(SCENARIO.format(system=sysname, target=target, phase=0.0, longest=value, per_year="5h"))
    assert main(["run", str(p), "--check-only", "--out", str(tmp_path / "out")]) == 2
    assert re.search(pattern, capsys.readouterr().err)
    assert not (tmp_path / "out").exists()


def test_scenario_phase_must_be_a_number(tmp_path, capsys):
    p = tmp_path / "s.toml"
    p.write_text(SCENARIO.format(system="earth-moon", target=NRHO, phase='"east"', longest="60min", per_year="5h"))
    assert main(["run", str(p), "--check-only", "--out", str(tmp_path / "out")]) == 2
    assert "orbits.relay.phase_deg" in capsys.readouterr().err


def test_run_writes_the_checks_and_the_timeline_into_the_report(tmp_path, capsys):
    p = tmp_path / "s.toml"
    p.write_text(SCENARIO.format(system="earth-moon", target=NRHO, phase=0.0, longest="60min", per_year="5h")
                 + "\n[plots]\norbits = false\n")
    out = tmp_path / "out"
    rc = main(["run", str(p), "--out", str(out), "--catalog", str(tmp_path / "cat.sqlite"), "-q"])
    assert rc == 0, capsys.readouterr().err
    checks = json.loads((out / "checks.json").read_text())["checks"]["relay"]
    assert {c["name"] for c in checks} == {"max_eclipse_duration", "max_eclipse_per_year"}
    assert (out / "eclipses-relay.png").exists()
    html = (out / "report.html").read_text()
    assert "shadow passes of &#x27;relay&#x27;" in html or "shadow passes of 'relay'" in html
