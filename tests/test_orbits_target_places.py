"""A target met at more than one place along a family: every place is found and listed, the
chosen one (occurrence, default the first from the family's start) is solved, and asking for
a place that does not exist says how many there are.

The case: the Earth–Moon L2 southern halo family's Jacobi constant falls from its
bifurcation on the Lyapunov family to a minimum (C ~ 3.015) and rises again toward the
near-rectilinear orbits (from memory; common practice in the halo-family literature), so
C = 3.05 is met twice: a large halo (period ~13.3 d) and a near-rectilinear one (~6.4 d).
"""

import json
import subprocess
import sys

import numpy as np
import pytest

from cr3bp import system
from cr3bp.catalog import Catalog
from cr3bp.errors import InputError, NoSolutionError
from cr3bp.orbits.continuation import target_brackets
from cr3bp.orbits.request import parse_request, solve_request, spec_from_options

EM = system("earth-moon")


@pytest.mark.parametrize("vals,value,expected", [
    ([1.0, 2.0, 3.0], 2.5, [1]),                 # monotone: one place
    ([3.0, 2.0, 1.0, 2.0, 3.0], 1.5, [1, 2]),    # down and up again: two places
    ([3.0, 2.0, 1.0, 2.0, 3.0], 2.0, [0, 2]),    # exact hits at members 1 and 3, each once
    ([3.0, 2.0, 3.0], 2.0, [0]),                 # touches the value and turns back: once
    ([1.0, 2.0, 3.0], 5.0, []),                  # never
])
def test_target_brackets(vals, value, expected):
    assert target_brackets(vals, value) == expected


@pytest.fixture(scope="module")
def both():
    return [solve_request(EM, f"halo L2 south jacobi=3.05 occurrence={k}") for k in (1, 2)]


def test_both_places_are_found_solved_and_listed(both):
    first, second = both
    for k, o in enumerate(both, 1):
        assert o.jacobi == pytest.approx(3.05, abs=1e-10)
        assert o.periodicity_error < 1e-10
        tm = o.to_dict()["target_matches"]
        assert tm["count"] == 2 and tm["occurrence"] == k and tm["quantity"] == "jacobi"
        # the solved orbit is the listed place it was asked for (the listed period is
        # interpolated between the bracketing members: within 1 %)
        assert tm["places"][k - 1]["period_days"] == pytest.approx(o.period_days, rel=1e-2)
    assert first.period_days == pytest.approx(13.3, abs=0.2)
    assert second.period_days == pytest.approx(6.4, abs=0.2)
    assert np.abs(first.state - second.state).max() > 0.05           # two different orbits


def test_catalogued_and_computed_requests_pick_the_same_place(both, tmp_path):
    with Catalog(tmp_path / "c.sqlite") as cat:
        fresh = solve_request(EM, "halo L2 south jacobi=3.05 occurrence=2", catalog=cat)
        again = solve_request(EM, "halo L2 south jacobi=3.05 occurrence=2", catalog=cat)   # read back
    for o in (fresh, again):
        assert np.abs(o.state - both[1].state).max() < 1e-9


def test_a_place_that_does_not_exist_and_bad_occurrences():
    with pytest.raises(NoSolutionError, match=r"at 2 places; occurrence 3 does not exist \(allowed: 1 to 2\)"):
        solve_request(EM, "halo L2 south jacobi=3.05 occurrence=3")
    for bad in ("0", "-1", "x", "1.5"):
        with pytest.raises(InputError, match="must be a whole number >= 1"):
            parse_request(f"halo L2 south jacobi=3.05 occurrence={bad}")
    assert parse_request("halo L2 south jacobi=3.05 occurrence=2").occurrence == 2
    assert spec_from_options("halo", "L2", "south", occurrence="2", jacobi="3.05").occurrence == 2
    assert "occurrence" not in parse_request("halo L2 south jacobi=3.05").to_dict()   # keys unchanged


def test_a_monotone_target_has_one_place():
    o = solve_request(EM, "halo L2 south period=6.5626d")
    assert o.to_dict()["target_matches"]["count"] == 1


def _librate(*argv):
    return subprocess.run([sys.executable, "-m", "librate_cli.main", "orbit", "--system", "earth-moon",
                           "--family", "halo", "--point", "L2", "--branch", "south", *argv],
                          capture_output=True, text=True, timeout=600)


def test_cli_lists_the_places_and_says_so():
    r = _librate("--jacobi", "3.05", "--occurrence", "2", "--format", "json", "-q")
    assert r.returncode == 0, r.stderr
    d = json.loads(r.stdout)
    assert d["target_matches"]["count"] == 2 and d["target_matches"]["occurrence"] == 2
    assert d["period_days"] == pytest.approx(6.4, abs=0.2)
    notes = [ln for ln in r.stderr.splitlines() if ln.startswith("librate: note:")]
    assert len(notes) == 1 and "2 places" in notes[0] and "--occurrence N" in notes[0]
    t = _librate("--jacobi", "3.05", "-q")
    assert t.returncode == 0 and "target met at        2 places" in t.stdout
    assert "<- this orbit" in t.stdout.splitlines()[t.stdout.splitlines().index(
        next(ln for ln in t.stdout.splitlines() if ln.startswith("target met at"))) + 1]
    bad = _librate("--jacobi", "3.05", "--occurrence", "3", "-q")
    assert bad.returncode == 3 and bad.stderr.strip().count("\n") == 0
    assert "allowed: 1 to 2" in bad.stderr and "Traceback" not in bad.stderr


def test_scenario_occurrence_is_checked_with_file_and_line(tmp_path):
    from pathlib import Path

    from cr3bp.scenario import run as mission
    from cr3bp.scenario.schema import ScenarioError
    text = (Path(__file__).parent.parent / "examples" / "farlight.toml").read_text()
    bad = tmp_path / "s.toml"
    bad.write_text(text.replace('resonance = "9:2"', 'resonance = "9:2"\noccurrence = 0'))
    with pytest.raises(ScenarioError, match=r"s\.toml:\d+: orbits\.relay: occurrence '0' must be a whole number"):
        mission.prepare(bad)
    good = tmp_path / "g.toml"
    good.write_text(text.replace('resonance = "9:2"', 'resonance = "9:2"\noccurrence = 1'))
    assert mission.prepare(good).orbit_specs["relay"].occurrence == 1


def test_the_report_says_which_place_was_used(both):
    from cr3bp.scenario.report import places_note
    text = places_note(both[1].to_dict())
    assert "met at 2 places" in text and "this is place 2" in text and "'occurrence'" in text
    assert places_note(solve_request(EM, "halo L2 south period=6.5626d").to_dict()) == ""
