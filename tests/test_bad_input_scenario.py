"""Bad input to `librate run` and `librate run --check-only`: about a hundred scenario files,
each the demo scenario (examples/farlight.toml) with one key or section mutated, plus
hypothesis-generated values for the numeric keys, plus bad output folders.

Every case must give exit status 2, one 'librate: error:' line per problem naming FILE:LINE
(no traceback), and write no file at all: none in --out, none beside or above it. The check
refuses them before any computation, so each case costs milliseconds. A few cases need a
real run (a staging folder, a full disk, stray files of a killed run); they share one small
scenario and one module-scoped catalogue.
"""

from __future__ import annotations

import errno
import math
import os
import re
import subprocess
import sys
import tempfile
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from librate_cli.main import main

ROOT = Path(__file__).resolve().parents[1]
BASE = (ROOT / "examples" / "farlight.toml").read_text(encoding="utf-8")
ERROR_LINE = re.compile(r"^librate: error: \S*s\.toml:\d+: ")


def R(old, new):
    """A mutation replacing the one occurrence of ``old`` in the demo scenario."""
    def mutate(text):
        assert text.count(old) == 1, f"{old!r} is not once in the demo scenario"
        return text.replace(old, new)
    return mutate


def A(extra):
    """A mutation appending ``extra`` to the demo scenario."""
    return lambda text: text + "\n" + extra + "\n"


TRANSFER = BASE[BASE.index("[[transfers]]"):BASE.index("[[exports]]")]
#: A second orbit (an L1 halo given by its z amplitude) appended to the demo, which has one, for
#: the orbit keys the relay does not use.
STAGING = '[orbits.staging]\nfamily = "halo"\npoint = "L1"\nbranch = "north"\naz = "12000km"\n'
BASE_S = BASE + "\n" + STAGING


def S(old, new):
    """A mutation of the appended staging orbit (STAGING), replacing its one ``old``."""
    def mutate(text):
        assert STAGING.count(old) == 1, f"{old!r} is not once in the staging orbit"
        return text + "\n" + STAGING.replace(old, new)
    return mutate
ORBIT_EXPORT = 'format = "oem"\nframe = "j2000-equator"\ncenter = "moon"'

# (id, mutation, text the message must contain: the key, or the value as written)
CASES = [
    # ---- mission --------------------------------------------------------------------------
    ("mission-name-number", R('name = "Farlight"', "name = 5"), "mission.name"),
    ("mission-name-control", R('name = "Farlight"', r'name = "Far\u0007light"'), "mission.name"),
    ("mission-name-newline", R('name = "Farlight"', r'name = "Far\nCCSDS_OEM_VERS = 9"'), "mission.name"),
    ("mission-description-huge", R('description = "Far-side', 'description = "' + "x" * 50_000 + ' Far-side'),
     "mission.description"),
    ("mission-issued-word", R('issued = "2026-12-01T00:00:00"', 'issued = "yesterday"'), "mission.issued"),
    ("mission-issued-month-13", R('issued = "2026-12-01T00:00:00"', 'issued = "2026-13-01T00:00:00"'),
     "mission.issued"),
    ("mission-unknown-key", R('name = "Farlight"', 'name = "Farlight"\nsponsor = "x"'), "mission.sponsor"),
    # ---- system ---------------------------------------------------------------------------
    ("epoch-2200", R("2031-03-01T00:00:00Z", "2200-03-01T00:00:00Z"), "system.epoch"),
    ("epoch-1800", R("2031-03-01T00:00:00Z", "1800-03-01T00:00:00Z"), "system.epoch"),
    ("epoch-feb-30", R("2031-03-01T00:00:00Z", "2031-02-30T00:00:00Z"), "system.epoch"),
    ("epoch-word", R("2031-03-01T00:00:00Z", "soon"), "system.epoch"),
    ("epoch-number", R('epoch = "2031-03-01T00:00:00Z"', "epoch = 2031"), "system.epoch"),
    ("system-unknown", R('name = "earth-moon"', 'name = "earth-mars"'), "system.name"),
    ("system-name-and-mu", R('name = "earth-moon"', 'name = "earth-moon"\nmu = 0.01'), "system"),
    ("system-mu-nan", R('name = "earth-moon"', "mu = nan"), "system.mu"),
    ("system-mu-1e309", R('name = "earth-moon"', "mu = 1e309"), "1e309"),
    ("system-mu-negative", R('name = "earth-moon"', "mu = -0.1"), "system.mu"),
    ("system-mu-too-big", R('name = "earth-moon"', "mu = 0.7"), "system.mu"),
    # ---- orbits ---------------------------------------------------------------------------
    ("orbit-name-traversal", S("[orbits.staging]", '[orbits."a/../../../../x/pwn"]'), "not allowed in file names"),
    ("orbit-name-hidden", S("[orbits.staging]", '[orbits.".hidden"]'), "not allowed in file names"),
    ("orbit-name-space", S("[orbits.staging]", '[orbits."a b"]'), "not allowed in file names"),
    ("orbit-name-backslash", S("[orbits.staging]", '[orbits."a\\\\b"]'), "not allowed in file names"),
    ("orbit-name-300", S("[orbits.staging]", f'[orbits.{"s" * 300}]'), "not allowed in file names"),
    ("az-negative", S('az = "12000km"', 'az = "-1000km"'), "'-1000km'"),
    ("az-zero", S('az = "12000km"', 'az = "0km"'), "'0km'"),
    ("az-nan", S('az = "12000km"', 'az = "nankm"'), "orbits.staging.az"),
    ("az-1e309", S('az = "12000km"', 'az = "1e309km"'), "'1e309km'"),
    ("az-no-unit", S('az = "12000km"', 'az = "12000"'), "orbits.staging.az"),
    ("az-wrong-dimension", S('az = "12000km"', 'az = "12000s"'), "orbits.staging.az"),
    ("az-bare-number", S('az = "12000km"', "az = 12000"), "orbits.staging.az"),
    ("jacobi-nan", S('az = "12000km"', "jacobi = nan"), "orbits.staging.jacobi"),
    ("jacobi-1e309", S('az = "12000km"', "jacobi = 1e309"), "1e309"),
    ("jacobi-minus-inf", S('az = "12000km"', "jacobi = -inf"), "-inf"),
    ("jacobi-text", S('az = "12000km"', 'jacobi = "high"'), "orbits.staging.jacobi"),
    ("period-negative", S('az = "12000km"', 'period = "-6d"'), "'-6d'"),
    ("period-zero", S('az = "12000km"', 'period = "0d"'), "'0d'"),
    ("perilune-negative", R('resonance = "9:2"', 'perilune = "-3000km"'), "'-3000km'"),
    ("occurrence-zero", S('az = "12000km"', 'az = "12000km"\noccurrence = 0'), "occurrence '0'"),
    ("occurrence-negative", S('az = "12000km"', 'az = "12000km"\noccurrence = -1'), "occurrence '-1'"),
    ("family-unknown", S('family = "halo"\npoint = "L1"', 'family = "spiral"\npoint = "L1"'),
     "orbits.staging.family"),
    ("point-unknown", S('point = "L1"', 'point = "L7"'), "orbits.staging.point"),
    ("two-targets", S('az = "12000km"', 'az = "12000km"\nperiod = "12d"'), "orbits.staging"),
    ("no-target", S('az = "12000km"\n', ""), "orbits.staging"),
    ("orbit-unknown-key", S('point = "L1"', 'point = "L1"\npiont = "L2"'), "orbits.staging.piont"),
    ("no-orbits", lambda t: t[:t.index("[orbits.relay]")] + t[t.index("[[transfers]]"):], "orbits"),
    # ---- checks ---------------------------------------------------------------------------
    ("altitude-negative", R('min_altitude_smaller = "1000km"', 'min_altitude_smaller = "-1000km"'), "'-1000km'"),
    ("altitude-1e309", R('min_altitude_smaller = "1000km"', 'min_altitude_smaller = "1e309km"'), "'1e309km'"),
    ("altitude-speed", R('min_altitude_smaller = "1000km"', 'min_altitude_smaller = "1000m/s"'),
     "min_altitude_smaller"),
    ("stability-nan", R("max_stability_index = 2.0", "max_stability_index = nan"), "max_stability_index"),
    ("stability-negative", R("max_stability_index = 2.0", "max_stability_index = -1"), "max_stability_index"),
    ("stability-1e309", R("max_stability_index = 2.0", "max_stability_index = 1e309"), "1e309"),
    ("max-period-negative", R("max_stability_index = 2.0", 'max_stability_index = 2.0\nmax_period = "-1d"'),
     "'-1d'"),
    ("sight-text", R("line_of_sight_to_larger = true", 'line_of_sight_to_larger = "yes"'),
     "line_of_sight_to_larger"),
    ("check-unknown", R("max_stability_index = 2.0", "max_stability_index = 2.0\nmax_wobble = 3"), "max_wobble"),
    # ---- transfers ------------------------------------------------------------------------
    ("transfer-name-traversal", R('name = "leo-to-relay"', 'name = "x/../../t"'), "not allowed in file names"),
    ("transfer-name-empty", R('name = "leo-to-relay"', 'name = ""'), "transfers[0].name"),
    ("transfer-name-is-orbit", R('name = "leo-to-relay"\n', 'name = "relay"\n'), "transfers[0].name"),
    ("transfer-duplicate", A(TRANSFER), "transfers[1].name"),
    ("parking-not-a-primary", R("parking earth 200km", "parking mars 200km"), "'mars'"),
    ("parking-negative", R("parking earth 200km", "parking earth -200km"), "'-200km'"),
    ("parking-no-unit", R("parking earth 200km", "parking earth 200"), "transfers[0].from"),
    ("parking-two-words", R("parking earth 200km", "parking earth"), "transfers[0].from"),
    ("parking-1e309", R("parking earth 200km", "parking earth 1e309km"), "transfers[0].from"),
    ("parking-speed", R("parking earth 200km", "parking earth 200m/s"), "transfers[0].from"),
    # an Earth parking orbit below 100 km (common practice: the atmosphere), or one a departure
    # path cannot leave (above 50 000 km): found by --check-only, not after minutes of design
    ("parking-below-atmosphere", R("parking earth 200km", "parking earth 60km"),
     "transfers[0].from: 'parking earth 60km': Earth parking orbit at 60 km: below 100 km"),
    ("parking-too-high-for-direct", R("parking earth 200km", "parking earth 60000km"),
     "Earth parking orbit at 60000 km for the 'direct' path; allowed: 100 km to 50000 km"),
    ("transfer-to-unknown", R('to = "relay"', 'to = "nowhere"'), "'nowhere'"),
    ("transfer-via-unknown", R('to = "relay"', 'to = "relay"\nvia = ["nowhere"]'), "'nowhere'"),
    ("transfer-to-itself", R('to = "relay"', 'to = "parking earth 200km"'), "transfers[0].to"),
    ("path-unknown", R('path = "direct"', 'path = "sideways"'), "transfers[0].path: 'sideways' is not one of"),
    ("path-number", R('path = "direct"', "path = 1"), "transfers[0].path"),
    ("path-from-the-moon", R("parking earth 200km", "parking moon 100km"),
     "transfers[0].path: path 'direct' is how a transfer leaves an Earth parking orbit"),
    ("path-from-an-orbit", lambda t: S("[orbits.staging]", "[orbits.staging]")(
        t.replace('from = "parking earth 200km"', 'from = "staging"')), "this one starts from 'staging'"),
    ("launch-latitude-95", R('path = "direct"', 'path = "direct"\nlaunch_latitude = 95.0'),
     "transfers[0].launch_latitude: 95.0 is not a latitude"),
    ("launch-latitude-text", R('path = "direct"', 'path = "direct"\nlaunch_latitude = "28deg"'),
     "transfers[0].launch_latitude"),
    ("launch-latitude-no-path", R('path = "direct"', 'launch_latitude = 28.5'),
     "transfers[0].launch_latitude: a launch site's latitude bounds a 'direct' or 'lunar-flyby' departure"),
    ("launch-latitude-low-energy", R('path = "direct"', 'path = "low-energy"\nlaunch_latitude = 28.5'),
     "transfers[0].launch_latitude"),
    ("max-dv-negative", R('max_dv = "4100m/s"', 'max_dv = "-5m/s"'), "'-5m/s'"),
    ("max-dv-zero", R('max_dv = "4100m/s"', 'max_dv = "0m/s"'), "'0m/s'"),
    ("max-dv-length", R('max_dv = "4100m/s"', 'max_dv = "1500km"'), "transfers[0].max_dv"),
    ("max-dv-nan", R('max_dv = "4100m/s"', 'max_dv = "nanm/s"'), "transfers[0].max_dv"),
    ("max-dv-number", R('max_dv = "4100m/s"', "max_dv = 1500"), "transfers[0].max_dv"),
    ("max-tof-negative", R('max_tof = "10d"', 'max_tof = "-60d"'), "'-60d'"),
    ("max-tof-zero", R('max_tof = "10d"', 'max_tof = "0d"'), "'0d'"),
    ("max-tof-length", R('max_tof = "10d"', 'max_tof = "60km"'), "transfers[0].max_tof"),
    ("best-zero", R("best = 1", "best = 0"), "transfers[0].best"),
    ("best-negative", R("best = 1", "best = -1"), "transfers[0].best"),
    ("best-fraction", R("best = 1", "best = 1.5"), "transfers[0].best"),
    ("transfer-missing-from", R('from = "parking earth 200km"\n', ""), "transfers[0].from"),
    # ---- exports --------------------------------------------------------------------------
    ("center-sun", R(ORBIT_EXPORT, ORBIT_EXPORT.replace("moon", "sun")), "exports[0].center"),
    ("center-mars", R(ORBIT_EXPORT, ORBIT_EXPORT.replace("moon", "mars")), "exports[0].center"),
    ("time-system-gps", R('time_system = "tdb"', 'time_system = "gps"'), "exports[0].time_system"),
    ("format-xml", R('format = "oem"', 'format = "xml"'), "exports[0].format"),
    ("oem-rotating", R('frame = "j2000-equator"\ncenter = "moon"\ntime_system = "tdb"',
                       'frame = "rotating"\ncenter = "moon"\ntime_system = "tdb"'), "exports[0].frame"),
    ("anchor-guess", R('anchor = "ephemeris"\nspan', 'anchor = "guess"\nspan'), "exports[0].anchor"),
    ("span-negative", R('span = "3periods"', 'span = "-3periods"'), "'-3periods'"),
    ("span-zero", R('span = "3periods"', 'span = "0periods"'), "'0periods'"),
    ("span-nan", R('span = "3periods"', 'span = "nanperiods"'), "exports[0].span"),
    ("span-unknown-unit", R('span = "3periods"', 'span = "3fortnights"'), "exports[0].span"),
    ("span-negative-time", R('span = "3periods"', 'span = "-20d"'), "'-20d'"),
    ("span-missing", R('span = "3periods"\n', ""), "span"),
    ("span-on-transfer", R('step = "1h"', 'step = "1h"\nspan = "20d"'), "exports[1].span"),
    ("step-negative", R('step = "10min"', 'step = "-10min"'), "'-10min'"),
    ("step-zero", R('step = "10min"', 'step = "0min"'), "'0min'"),
    ("step-length", R('step = "10min"', 'step = "10km"'), "exports[0].step"),
    ("step-too-fine", R('span = "3periods"\nstep = "10min"', 'span = "20d"\nstep = "1e-9s"'), "exports[0].step"),
    ("step-longer-than-span", R('span = "3periods"\nstep = "10min"', 'span = "20d"\nstep = "30d"'),
     "exports[0].step"),
    ("file-traversal", R('step = "10min"', 'step = "10min"\nfile = "../x.oem"'), "'../x.oem'"),
    ("file-absolute", R('step = "10min"', 'step = "10min"\nfile = "/tmp/x.oem"'), "'/tmp/x.oem'"),
    ("file-hidden", R('step = "10min"', 'step = "10min"\nfile = ".x.oem"'), "'.x.oem'"),
    ("file-subfolder", R('step = "10min"', 'step = "10min"\nfile = "a/b.oem"'), "'a/b.oem'"),
    ("file-part", R('step = "10min"', 'step = "10min"\nfile = "x.part"'), "'x.part'"),
    ("file-300", R('step = "10min"', 'step = "10min"\nfile = "' + "f" * 300 + '.oem"'), "exports[0].file"),
    ("file-orbits-csv", R('step = "10min"', 'step = "10min"\nfile = "orbits.csv"'), "'orbits.csv'"),
    ("file-report", R('step = "10min"', 'step = "10min"\nfile = "report.html"'), "'report.html'"),
    ("file-manifest", R('step = "10min"', 'step = "10min"\nfile = "manifest.json"'), "'manifest.json'"),
    ("file-figure", R('step = "10min"', 'step = "10min"\nfile = "orbit-relay.png"'), "'orbit-relay.png'"),
    ("file-case-blind", R('step = "10min"', 'step = "10min"\nfile = "Orbits.CSV"'), "'Orbits.CSV'"),
    ("file-maneuvers", R('step = "10min"', 'step = "10min"\nfile = "leo-to-relay.maneuvers.csv"'),
     "leo-to-relay.maneuvers.csv"),
    ("two-exports-one-file", lambda t: t.replace('step = "10min"', 'step = "10min"\nfile = "same.dat"')
     .replace('step = "1h"', 'step = "1h"\nfile = "same.dat"'), "exports[1].file"),
    ("same-export-twice", A(BASE[BASE.index("[[exports]]"):BASE.index("[[exports]]", BASE.index("[[exports]]") + 1)]),
     "exports[2].object"),
    ("export-unknown-object", R('object = "relay"', 'object = "nowhere"'), "'nowhere'"),
    # ---- plots and settings ---------------------------------------------------------------
    ("plot-format-gif", R('formats = ["png", "svg"]', 'formats = ["gif"]'), "plots.formats"),
    ("plot-flag-text", R("orbits = true", 'orbits = "yes"'), "plots.orbits"),
    ("settings-workers-zero", A("[settings]\nworkers = 0"), "settings.workers"),
    ("settings-members-huge", A("[settings]\nfamily_members = 99999999999"), "settings.family_members"),
    ("unknown-section", A("[extras]\nx = 1"), "extras"),
]

# whole files that are not scenarios at all: (id, bytes, text the message must contain)
FILES = [
    ("binary", b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR" + bytes(range(256)), "not a text file"),
    ("latin-1", BASE.replace("Farlight\"", "Far\u00e9light\"").encode("latin-1"), "not UTF-8"),
    ("deep-array", ("x = " + "[" * 5000 + "]" * 5000 + "\n" + BASE).encode(), "nested too deeply"),
    ("huge", ("# " + "y" * 2_000_000 + "\n" + BASE).encode(), "larger than"),
    ("huge-string", BASE.replace('name = "Farlight"', 'name = "' + "z" * 1_500_000 + '"').encode(), "larger than"),
    ("syntax", BASE.replace('resonance = "9:2"', 'resonance = "9:2').encode(), "(syntax)"),
    ("empty", b"", "missing required key"),
    ("utf16", BASE.encode("utf-16"), "not a text file"),
]


def _tree(root: Path) -> set:
    return {str(p.relative_to(root)) for p in root.rglob("*")}


def _refused(root: Path, scenario: Path, out: Path, check_only: bool, capsys, must_contain=None,
             file_line=True) -> list:
    """Run the command; assert exit 2, one 'librate: error:' line per problem, no traceback,
    and nothing written anywhere under ``root``. Returns the error lines."""
    before = _tree(root)
    argv = ["run", str(scenario), "--out", str(out), "--catalog", str(root / "never.sqlite"), "--quiet"]
    if check_only:
        argv.append("--check-only")
    rc = main(argv)
    captured = capsys.readouterr()
    err = [ln for ln in captured.err.splitlines() if not ln.startswith("librate: note:")]
    assert rc == 2, (rc, captured.err[-2000:])
    assert "Traceback" not in captured.err and "Traceback" not in captured.out
    assert err and all(ln.startswith("librate: error: ") for ln in err), err
    assert all(len(ln) < 1000 for ln in err), "a message line is not short"
    if file_line:
        assert all(ERROR_LINE.match(ln) for ln in err), err
    if must_contain is not None:
        assert any(must_contain in ln for ln in err), (must_contain, err)
    assert _tree(root) == before, sorted(_tree(root) - before)
    assert not out.exists()
    return err


def _place(tmp_path, data):
    """The scenario three folders deep, so that a name climbing out of --out would land
    inside tmp_path (where the test looks) rather than somewhere unseen."""
    work = tmp_path / "w1" / "w2" / "w3"
    work.mkdir(parents=True)
    s = work / "s.toml"
    if isinstance(data, bytes):
        s.write_bytes(data)
    else:
        s.write_text(data, encoding="utf-8")
    return s, work / "out"


@pytest.mark.parametrize("check_only", [True, False], ids=["check-only", "run"])
@pytest.mark.parametrize("case_id,mutate,contains", CASES, ids=[c[0] for c in CASES])
def test_mutated_scenario_is_refused_before_anything_is_written(tmp_path, capsys, case_id, mutate, contains,
                                                                check_only):
    s, out = _place(tmp_path, mutate(BASE))
    _refused(tmp_path, s, out, check_only, capsys, contains)


@pytest.mark.parametrize("check_only", [True, False], ids=["check-only", "run"])
@pytest.mark.parametrize("case_id,data,contains", FILES, ids=[c[0] for c in FILES])
def test_undecodable_or_hostile_file_is_one_line(tmp_path, capsys, case_id, data, contains, check_only):
    s, out = _place(tmp_path, data)
    err = _refused(tmp_path, s, out, check_only, capsys, contains)
    if case_id not in ("empty",):
        assert len(err) == 1


def test_several_problems_are_all_listed(tmp_path, capsys):
    """Six problems of meaning in one file: six lines, not the first and '(and 5 more)'."""
    text = BASE_S
    for old, new in [('az = "12000km"', 'az = "-1000km"'), ("parking earth 200km", "parking mars 200km"),
                     ('max_dv = "4100m/s"', 'max_dv = "-5m/s"'), ("best = 1", "best = 0"),
                     ('step = "10min"', 'step = "0min"\nfile = "report.html"'),
                     ('time_system = "utc"', 'time_system = "gps"')]:
        text = text.replace(old, new)
    s, out = _place(tmp_path, text)
    err = _refused(tmp_path, s, out, True, capsys)
    keys = ["orbits.staging.az", "transfers[0].from", "transfers[0].max_dv", "transfers[0].best",
            "exports[0].step", "exports[0].file", "exports[1].time_system"]
    for k in keys:
        assert sum(f": {k}: " in ln for ln in err) == 1, (k, err)
    assert len(err) == len(keys)
    assert not any("more)" in ln for ln in err)
    # and the type problems of a file are listed together too
    text = BASE_S.replace('az = "12000km"', "az = 12000").replace("best = 1", "best = 1.5") \
        .replace('point = "L1"', 'point = "L1"\npiont = "L2"')
    s.write_text(text)
    err = _refused(tmp_path, s, out, True, capsys)
    assert len(err) == 3, err


def test_names_never_reach_outside_the_output_folder(tmp_path, capsys):
    """An orbit named to climb out of --out (and used by the transfer): refused at check time,
    the one problem reported, nothing written up there."""
    text = BASE.replace('to = "relay"', 'to = "relay"\nvia = ["a/../../../../x/pwn"]') + "\n" + \
        STAGING.replace("[orbits.staging]", '[orbits."a/../../../../x/pwn"]')
    s, out = _place(tmp_path, text)
    err = _refused(tmp_path, s, out, False, capsys, "orbits.a/../../../../x/pwn")
    assert len(err) == 1
    assert not (tmp_path / "x").exists()


# ---- numeric keys: generated values ----------------------------------------------------------

def _toml_float(x: float) -> str:
    if math.isnan(x):
        return "nan"
    if math.isinf(x):
        return "inf" if x > 0 else "-inf"
    return repr(x)


def _check_only(text: str):
    """(exit status, error lines) of --check-only on ``text``; asserts nothing is written."""
    import contextlib
    import io
    with tempfile.TemporaryDirectory() as d:
        root = Path(d)
        s = root / "s.toml"
        s.write_text(text, encoding="utf-8")
        before = _tree(root)
        err = io.StringIO()
        with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
            rc = main(["run", str(s), "--out", str(root / "out"), "--check-only", "--quiet"])
        assert _tree(root) == before
    lines = [ln for ln in err.getvalue().splitlines() if not ln.startswith("librate: note:")]
    assert "Traceback" not in err.getvalue()
    if rc != 0:
        assert lines and all(ERROR_LINE.match(ln) for ln in lines), lines
    return rc, lines


NUMBERS = st.one_of(st.floats(allow_nan=True, allow_infinity=True),
                    st.sampled_from([0.0, -0.0, -1000.0, 1e309, -1e-300, 5e-324, 1e300]))
QUANTITY_KEYS = [('az = "12000km"', "az = \"{}km\"", "orbits.staging.az"),
                 ('max_dv = "4100m/s"', "max_dv = \"{}m/s\"", "transfers[0].max_dv"),
                 ('max_tof = "10d"', "max_tof = \"{}d\"", "transfers[0].max_tof"),
                 ('min_altitude_smaller = "1000km"', "min_altitude_smaller = \"{}km\"",
                  "orbits.relay.checks.min_altitude_smaller"),
                 ("parking earth 200km", "parking earth {}km", "transfers[0].from")]


@settings(max_examples=40, deadline=None)
@given(x=NUMBERS, which=st.integers(0, len(QUANTITY_KEYS) - 1))
def test_generated_quantities(x, which):
    old, pattern, key = QUANTITY_KEYS[which]
    written = repr(x) if x != 1e309 else "1e309"
    rc, err = _check_only(BASE_S.replace(old, pattern.format(written)))
    zero_ok = key.endswith("min_altitude_smaller")
    valid = math.isfinite(x) and (x > 0 or (zero_ok and x == 0))
    if key == "transfers[0].from":          # an Earth parking orbit left by the 'direct' path
        valid = math.isfinite(x) and 100.0 <= x <= 50_000.0
    if valid:
        assert rc == 0, err
    else:
        assert rc == 2 and any(f": {key}: " in ln for ln in err), (x, err)
        assert any(written in ln or "nan" in ln or "inf" in ln for ln in err), err


@settings(max_examples=30, deadline=None)
@given(x=NUMBERS, which=st.sampled_from(["jacobi", "max_stability_index", "mu"]))
def test_generated_numbers(x, which):
    value = _toml_float(x)
    if which == "jacobi":
        text, key = BASE_S.replace('az = "12000km"', f"jacobi = {value}"), "orbits.staging.jacobi"
        valid = math.isfinite(x)
    elif which == "max_stability_index":
        text, key = BASE.replace("max_stability_index = 2.0", f"max_stability_index = {value}"), \
            "orbits.relay.checks.max_stability_index"
        valid = math.isfinite(x) and x > 0
    else:                       # a custom mass ratio: no exports or transfers then
        # (and no angle at the Earth: a custom system has no ephemeris to place the Earth by)
        text = BASE[:BASE.index("[[transfers]]")].replace('name = "earth-moon"', f"mu = {value}")
        text = "\n".join(ln for ln in text.splitlines() if not ln.startswith("min_angle_at_earth"))
        key, valid = "system.mu", math.isfinite(x) and 0 < x <= 0.5
    rc, err = _check_only(text)
    if valid:
        assert rc == 0, (x, err)
    else:
        assert rc == 2 and any(f": {key}: " in ln for ln in err), (x, err)


# ---- the output folder ------------------------------------------------------------------------

@pytest.mark.parametrize("check_only", [True, False], ids=["check-only", "run"])
@pytest.mark.parametrize("case_id", ["empty", "scenario", "file", "under-file", "long-name", "catalogue",
                                     "folder-in-the-way", "control-character"])
def test_bad_output_folder(tmp_path, capsys, case_id, check_only):
    s, _ = _place(tmp_path, BASE)
    work = s.parent
    (work / "afile").write_text("keep me")
    catalog = work / "c.sqlite"
    out = {"empty": "", "scenario": str(s), "file": str(work / "afile"), "under-file": str(work / "afile" / "o"),
           "long-name": str(work / ("n" * 300)), "catalogue": str(catalog),
           "folder-in-the-way": str(work / "o"), "control-character": str(work / "o\nx")}[case_id]
    if case_id == "folder-in-the-way":
        (work / "o" / "report.html").mkdir(parents=True)
    before = _tree(tmp_path)
    argv = ["run", str(s), "--out", out, "--catalog", str(catalog), "--quiet"] + (["--check-only"] if check_only
                                                                                 else [])
    rc = main(argv)
    captured = capsys.readouterr()
    err = [ln for ln in captured.err.splitlines() if not ln.startswith("librate: note:")]
    assert rc == 2 and len(err) == 1 and err[0].startswith("librate: error: --out"), err
    assert _tree(tmp_path) == before
    assert (work / "afile").read_text() == "keep me"


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes into read-only folders")
def test_read_only_output_folder(tmp_path, capsys):
    s, _ = _place(tmp_path, BASE)
    ro = s.parent / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        rc = main(["run", str(s), "--out", str(ro / "o"), "--check-only", "--quiet"])
    finally:
        ro.chmod(0o755)
    err = [ln for ln in capsys.readouterr().err.splitlines() if not ln.startswith("librate: note:")]
    assert rc == 2 and len(err) == 1 and "not writable" in err[0]


def test_subprocess_gives_one_line_and_no_traceback(tmp_path):
    """The installed command, not the in-process call: a binary file and a deep array."""
    for name, data in [("bin", FILES[0][1]), ("deep", FILES[2][1])]:
        s = tmp_path / f"{name}.toml"
        s.write_bytes(data)
        r = subprocess.run([sys.executable, "-m", "librate_cli.main", "run", str(s), "--out", str(tmp_path / "o"),
                            "--quiet"], capture_output=True, text=True, timeout=120)
        lines = [ln for ln in r.stderr.splitlines() if not ln.startswith("librate: note:")]
        assert r.returncode == 2 and len(lines) == 1 and "Traceback" not in r.stderr, r.stderr
        assert not (tmp_path / "o").exists()


# ---- real runs: one small scenario, one catalogue ---------------------------------------------

SMALL = """
[mission]
name = "Small"
issued = "2026-12-01T00:00:00"

[system]
name = "earth-moon"
epoch = "2031-03-01T00:00:00Z"

[orbits.gate]
family = "lyapunov"
point = "L1"
jacobi = 3.17

[[exports]]
object = "gate"
format = "csv"
frame = "rotating"
span = "1periods"
step = "2h"

[plots]
orbits = true
formats = ["png"]
"""


@pytest.fixture(scope="module")
def catalog(tmp_path_factory):
    """A catalogue holding the family of SMALL (one real run fills it)."""
    d = tmp_path_factory.mktemp("bad-input-cat")
    cat = str(d / "catalog.sqlite")
    s = d / "s.toml"
    s.write_text(SMALL)
    assert main(["run", str(s), "--out", str(d / "first"), "--catalog", cat, "--quiet"]) == 0
    return cat


def test_span_in_periods_too_fine_is_refused_before_writing(tmp_path, capsys, catalog):
    """A span counted in periods is known only once the orbit is solved: still refused with
    FILE:LINE before the folder is made."""
    s = tmp_path / "s.toml"
    s.write_text(SMALL.replace('span = "1periods"', 'span = "1e7periods"'))
    out = tmp_path / "out"
    before = _tree(tmp_path)
    rc = main(["run", str(s), "--out", str(out), "--catalog", catalog, "--quiet"])
    err = [ln for ln in capsys.readouterr().err.splitlines() if not ln.startswith("librate: note:")]
    assert rc == 2 and len(err) == 1 and ERROR_LINE.match(err[0]) and "exports[0].step" in err[0], err
    assert _tree(tmp_path) == before


def test_disk_full_mid_run_leaves_the_folder_as_it_was(tmp_path, capsys, catalog, monkeypatch):
    """ENOSPC on the third file written: one line, exit 1, and the output folder holds what it
    held before (here one file of the user's) and nothing else."""
    from cr3bp.io import atomic
    real = atomic.writing
    calls = {"n": 0}

    def full(path, *a, **k):
        calls["n"] += 1
        if calls["n"] == 3:
            raise OSError(errno.ENOSPC, "No space left on device", str(path))
        return real(path, *a, **k)
    monkeypatch.setattr(atomic, "writing", full)
    s = tmp_path / "s.toml"
    s.write_text(SMALL)
    out = tmp_path / "out"
    out.mkdir()
    (out / "notes.txt").write_text("mine")
    rc = main(["run", str(s), "--out", str(out), "--catalog", catalog, "--quiet"])
    captured = capsys.readouterr()
    err = [ln for ln in captured.err.splitlines() if not ln.startswith("librate: note:")]
    assert rc == 1 and len(err) == 1 and "No space left on device" in err[0], captured.err
    assert "Traceback" not in captured.err
    assert sorted(p.name for p in out.iterdir()) == ["notes.txt"]
    # and a new folder is not left behind at all
    calls["n"] = 0
    rc = main(["run", str(s), "--out", str(tmp_path / "new" / "out"), "--catalog", catalog, "--quiet"])
    assert rc == 1 and not (tmp_path / "new").exists()


def test_stray_part_files_of_a_killed_run_are_removed(tmp_path, catalog):
    """What a killed run leaves (a staging folder of a dead process, a temporary file of an
    atomic write) is cleaned up by the next run into the same folder."""
    s = tmp_path / "s.toml"
    s.write_text(SMALL)
    out = tmp_path / "out"
    stage = out / ".librate-run-4194399-abcd.part"      # above the largest PID Linux hands out
    stage.mkdir(parents=True)
    (stage / "orbits.csv").write_text("half")
    (out / ".orbits.csv.x1y2z3.part").write_text("half")
    assert main(["run", str(s), "--out", str(out), "--catalog", catalog, "--quiet"]) == 0
    names = sorted(p.name for p in out.iterdir())
    assert not [n for n in names if n.endswith(".part")], names
    assert "manifest.json" in names and "gate.csv" in names


@pytest.mark.parametrize("extra", [["--workers=0"], ["--workers=257"], ["--workers=two"], ["--workers=1.5"],
                                   ["--catalog="]])
def test_run_options_read_like_every_command(tmp_path, capsys, extra):
    """--workers (cr3bp.validate.workers, 1..256) and --catalog [PATH] (an empty PATH refused) mean
    what they mean in every command: one line, exit 2, nothing written."""
    s = tmp_path / "s.toml"
    s.write_text(SMALL)
    before = _tree(tmp_path)
    rc = main(["run", str(s), "--out", str(tmp_path / "out"), "--quiet", *extra])
    err = [ln for ln in capsys.readouterr().err.splitlines() if not ln.startswith("librate: note:")]
    assert rc == 2 and len(err) == 1 and err[0].startswith("librate: error: "), err
    assert ("--workers" in err[0]) if "workers" in extra[0] else ("catalogue path is empty" in err[0]), err
    assert _tree(tmp_path) == before
