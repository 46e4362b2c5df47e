"""Scenario files: every error class is reported with file, line and key before any computation."""

import pytest

from cr3bp.scenario.schema import ScenarioError, load

GOOD = """
[mission]
name = "Test"

[system]
name = "earth-moon"
epoch = "2031-03-01T00:00:00Z"

[orbits.relay]
family = "halo"
point = "L2"
branch = "south"
period = "6.5626d"

[[exports]]
object = "relay"
format = "oem"
step = "10min"
"""


def write(tmp_path, text):
    p = tmp_path / "s.toml"
    p.write_text(text)
    return p


def test_demo_scenario_is_valid():
    from pathlib import Path
    data = load(Path(__file__).parent.parent / "examples" / "farlight.toml")
    assert "relay" in data["orbits"]


def test_good(tmp_path):
    assert load(write(tmp_path, GOOD))["orbits"]["relay"]["period"] == "6.5626d"


def test_unknown_key_has_line(tmp_path):
    text = GOOD.replace('branch = "south"', 'branch = "south"\nbranhc = "north"')
    with pytest.raises(ScenarioError) as e:
        load(write(tmp_path, text))
    p = e.value.problems[0]
    assert p.line == 13 and p.key == "orbits.relay.branhc" and "unknown key" in p.message
    assert str(e.value).startswith(f"{tmp_path / 's.toml'}:13: orbits.relay.branhc: unknown key")


def test_missing_key(tmp_path):
    text = GOOD.replace('epoch = "2031-03-01T00:00:00Z"\n', "")
    with pytest.raises(ScenarioError, match=r"s.toml:5: system.epoch: missing required key"):
        load(write(tmp_path, text))


def test_wrong_type(tmp_path):
    text = GOOD.replace('period = "6.5626d"', "period = 6.5626")
    with pytest.raises(ScenarioError, match=r":13: orbits.relay.period: 6.5626 is not text with a unit"):
        load(write(tmp_path, text))


def test_bad_unit_and_enum_and_export_index(tmp_path):
    text = GOOD.replace('step = "10min"', 'step = "10 fortnights"').replace('format = "oem"', 'format = "pdf"')
    with pytest.raises(ScenarioError) as e:
        load(write(tmp_path, text))
    keys = {p.key: p for p in e.value.problems}
    assert keys["exports[0].format"].line == 17 and "one of 'oem'" in keys["exports[0].format"].message
    assert keys["exports[0].step"].line == 18 and "unknown unit" in keys["exports[0].step"].message


def test_two_targets_and_syntax(tmp_path):
    with pytest.raises(ScenarioError, match="exactly one target"):
        load(write(tmp_path, GOOD.replace('period = "6.5626d"', 'period = "6.5626d"\njacobi = 3.05')))
    with pytest.raises(ScenarioError, match=r"s.toml:2: \(syntax\)"):
        load(write(tmp_path, "[mission]\nname = \n"))
