"""Every physical constant is written once, in ``cr3bp/constants.py``, and every right-hand-side
mode number once, in ``cr3bp/integrate/modes.py``: a second copy of a value drifts out of step
with the first (the house issue found the astronomical unit three times and the obliquity
twice). These checks read the source files, so a new copy fails here before it can drift.
"""

from __future__ import annotations

import ast
import io
import re
import tokenize
from pathlib import Path

import pytest

from cr3bp import constants
from cr3bp.integrate import modes

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = ROOT / "cr3bp"
CONSTANTS = PACKAGE / "constants.py"
MODES = PACKAGE / "integrate" / "modes.py"

#: Values that must not appear anywhere outside constants.py, not even in prose (a docstring
#: that quotes the number is a second copy for the reader): name -> pattern.
ANYWHERE = {
    "astronomical unit (km)": r"149\s?597\s?870",
    "J2000 obliquity (arcsec)": r"84\s?381\.\d",
    "J2000 obliquity (deg)": r"23\.439",
    "J2000 obliquity (rad)": r"0\.409092",
    "GM of the Earth": r"398\s?600\.4|3\.986004",
    "GM of the Moon": r"4902\.8|4\.9028",
    "GM of the Sun": r"132\s?712\s?440|1\.32712",
}

#: Values that must not appear as a number in code outside constants.py (prose that defines
#: a time scale may name them): name -> the constant.
IN_CODE = {
    "J2000_JD": constants.J2000_JD,
    "MJD_ZERO_JD": constants.MJD_ZERO_JD,
    "DAYS_PER_JULIAN_CENTURY": constants.DAYS_PER_JULIAN_CENTURY,
    "DAYS_PER_JULIAN_MILLENNIUM": constants.DAYS_PER_JULIAN_MILLENNIUM,
    "TT_MINUS_TAI_S": constants.TT_MINUS_TAI_S,
    "SIDEREAL_MONTH_DAYS": constants.SIDEREAL_MONTH_DAYS,
    "SIDEREAL_YEAR_DAYS": constants.SIDEREAL_YEAR_DAYS,
    "SOLAR_PRESSURE_1AU": constants.SOLAR_PRESSURE_1AU,
    **{f"GM_KM3_S2_DE430[{k!r}]": v for k, v in constants.GM_KM3_S2_DE430.items()},
}


def _sources(root: Path = PACKAGE):
    return sorted(p for p in root.rglob("*") if p.is_file() and p.suffix in (".py", ".toml", ".json",
                                                                               ".txt", ".csv")
                  and "__pycache__" not in p.parts and "_prebuilt" not in p.parts)


def literal_copies(root: Path = PACKAGE, skip: Path = CONSTANTS) -> list[str]:
    """``file:line: name`` for every copy of a constant outside ``skip``."""
    found = []
    for path in _sources(root):
        if path.resolve() == Path(skip).resolve():
            continue
        text = path.read_text(encoding="utf-8", errors="replace")
        for lineno, line in enumerate(text.splitlines(), 1):
            for name, pattern in ANYWHERE.items():
                if re.search(pattern, line):
                    found.append(f"{path.relative_to(root.parent)}:{lineno}: {name}")
        if path.suffix != ".py":
            continue
        for tok in tokenize.generate_tokens(io.StringIO(text).readline):
            if tok.type != tokenize.NUMBER:
                continue
            try:
                value = float(tok.string.replace("_", ""))
            except ValueError:
                continue
            for name, const in IN_CODE.items():
                if value == const:
                    found.append(f"{path.relative_to(root.parent)}:{tok.start[0]}: {name}")
    return found


def test_the_constants_file_holds_each_value_with_its_source():
    """Every constant of constants.py has its own source comment (``#: ...``) right above it,
    and the patterns above find the values there (so the search below would find a copy)."""
    text = CONSTANTS.read_text()
    for name in ("astronomical unit (km)", "J2000 obliquity (arcsec)"):
        assert re.search(ANYWHERE[name], text), name
    lines = text.splitlines()
    names = []
    for i, line in enumerate(lines):
        m = re.match(r"([A-Z][A-Z0-9_]*) = ", line)
        if m:
            names.append(m.group(1))
            assert i > 0 and lines[i - 1].startswith("#:"), f"{m.group(1)}: no source comment above it"
    assert len(names) == len(set(names)) >= 10


def test_no_physical_constant_is_written_outside_constants_py():
    copies = literal_copies()
    assert not copies, ("write these as imports from cr3bp.constants:\n" + "\n".join(copies))


def test_the_search_finds_a_planted_copy(tmp_path):
    """The check can fail: a module quoting the AU, one with J2000 as a number, and a docstring
    quoting the obliquity are each found; the same text in the skipped file is not."""
    pkg = tmp_path / "cr3bp"
    (pkg / "time").mkdir(parents=True)
    (pkg / "a.py").write_text("AU = 149597870.7\n")
    (pkg / "time" / "b.py").write_text('"""Rotated by 84381.406 arcsec."""\nT0 = 2451545.0\n')
    (pkg / "c.py").write_text('"""JD 2451545.0 in prose is allowed."""\nX = 1.0\n')
    (pkg / "constants.py").write_text("AU_KM = 149597870.7\nJ2000_JD = 2451545.0\n")
    found = literal_copies(pkg, pkg / "constants.py")
    assert found == ["cr3bp/a.py:1: astronomical unit (km)",
                     "cr3bp/time/b.py:1: J2000 obliquity (arcsec)",
                     "cr3bp/time/b.py:2: J2000_JD"]


# ---- right-hand-side modes ------------------------------------------------------------------

#: Functions whose first argument is a right-hand-side mode.
MODE_TAKERS = {"integrate", "integrate_batch", "integrate_lanes", "integrate_segments", "rhs", "rk_step"}


def bare_modes(root: Path = PACKAGE, modes_file: Path = MODES) -> list[str]:
    """``file:line: what`` for every mode written as a number: a ``MODE_*`` name assigned
    outside modes.py, ``mode == <int>``, or an int literal as the mode argument of a kernel."""
    found = []
    for path in sorted(root.rglob("*.py")):
        if path.resolve() == Path(modes_file).resolve() or "__pycache__" in path.parts:
            continue
        rel = path.relative_to(root.parent)
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, (ast.Assign, ast.AnnAssign)):
                targets = node.targets if isinstance(node, ast.Assign) else [node.target]
                for t in targets:
                    if isinstance(t, ast.Name) and re.fullmatch(r"_?MODE(_[A-Z0-9]+)*", t.id) \
                            and isinstance(node.value, ast.Constant) and isinstance(node.value.value, int):
                        found.append(f"{rel}:{node.lineno}: {t.id} defined outside integrate/modes.py")
            elif isinstance(node, ast.Compare):
                sides = [node.left, *node.comparators]
                if any(isinstance(s, ast.Name) and s.id == "mode" for s in sides) and any(
                        isinstance(s, ast.Constant) and type(s.value) is int for s in sides):
                    found.append(f"{rel}:{node.lineno}: mode compared with a number")
            elif isinstance(node, ast.Call) and node.args:
                f = node.func
                name = f.attr if isinstance(f, ast.Attribute) else getattr(f, "id", "")
                a = node.args[0]
                if name in MODE_TAKERS and isinstance(a, ast.Constant) and type(a.value) is int:
                    found.append(f"{rel}:{node.lineno}: {name}() called with mode {a.value}")
    return found


def test_mode_numbers_are_defined_once_and_never_written_bare():
    """In the library, the CLI and the tests."""
    found = [f for root in (PACKAGE, ROOT / "cli", ROOT / "tests") for f in bare_modes(root)]
    assert not found, "use the names of cr3bp.integrate.modes:\n" + "\n".join(found)


def test_the_mode_check_finds_planted_numbers(tmp_path):
    pkg = tmp_path / "cr3bp"
    (pkg / "integrate").mkdir(parents=True)
    (pkg / "integrate" / "modes.py").write_text("MODE_STATE = 0\n")
    (pkg / "m.py").write_text("_MODE = 2\nMODE_BICIRCULAR_STM = 5\nif mode == 4:\n    pass\n"
                              "rhs(3, t, s, p, o)\nrhs(MODE_STATE, t, s, p, o)\n")
    assert bare_modes(pkg, pkg / "integrate" / "modes.py") == [
        "cr3bp/m.py:1: _MODE defined outside integrate/modes.py",
        "cr3bp/m.py:2: MODE_BICIRCULAR_STM defined outside integrate/modes.py",
        "cr3bp/m.py:3: mode compared with a number",
        "cr3bp/m.py:5: rhs() called with mode 3",
    ]


def test_the_modes_are_distinct_and_every_one_is_dispatched():
    """Six distinct numbers, and the dispatcher names every mode but the last (its ``else``)."""
    values = [getattr(modes, n) for n in modes.__all__ if n.startswith("MODE_")]
    assert len(values) == len(set(values)) == 6
    text = (PACKAGE / "integrate" / "dispatch.py").read_text()
    for n in ("MODE_STATE", "MODE_STM", "MODE_EPHEMERIS", "MODE_EPHEMERIS_STM", "MODE_BICIRCULAR"):
        assert f"mode == {n}" in text, n
