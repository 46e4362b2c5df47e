"""The scenario file format: a TOML document, keys of our own, checked before any computation.

The schema is data: each table lists its keys with (type, required, description). The checker
reports unknown keys, missing required keys and values of the wrong type with the file, line
and dotted key, all at once, before anything is computed.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass
from pathlib import Path

from .errors import InputError

# type names: "str", "float" (int accepted), "int", "bool", "quantity" (str with a unit, e.g. "200km"),
# "table", "list[str]"; "one-of:a|b|c" for enumerations
S, F, I, B, Q = "str", "float", "int", "bool", "quantity"

ORBIT_KEYS = {
    "family": ("one-of:lyapunov|halo|vertical|axial|dro|resonant", True, "orbit family"),
    "point": ("one-of:L1|L2|L3", False, "Lagrange point (not for dro/resonant)"),
    "branch": ("one-of:north|south|", False, "halo branch"),
    "period": (Q, False, "target period, e.g. '6.5626d'"),
    "jacobi": (F, False, "target Jacobi constant"),
    "ax": (Q, False, "target x amplitude"), "ay": (Q, False, "target y amplitude"),
    "az": (Q, False, "target z amplitude"),
    "perilune": (Q, False, "target closest approach to the smaller primary (radius)"),
    "perigee": (Q, False, "target closest approach to the larger primary (radius)"),
    "resonance": (S, False, "synodic resonance p:q, e.g. '9:2'"),
    "resonant": (S, False, "p:q of a resonant family"),
    "occurrence": (I, False, "which place along the family meeting the target, from its start (default 1)"),
    "checks": ("table", False, "constraints to check on the orbit"),
}
CHECK_KEYS = {
    "min_altitude_smaller": (Q, False, "least altitude over the smaller primary, e.g. '1000km'"),
    "min_altitude_larger": (Q, False, "least altitude over the larger primary"),
    "max_stability_index": (F, False, "largest allowed |stability index|"),
    "min_angle_at_earth_from_sun_deg": (F, False,
        "least Sun-Earth-spacecraft angle (vertex at the Earth), degrees"),
    "min_angle_at_earth_from_moon_deg": (F, False,
        "least Moon-Earth-spacecraft angle (vertex at the Earth), degrees"),
    "line_of_sight_to_larger": (B, False, "continuous line of sight to the larger primary past the smaller"),
    "max_period": (Q, False, "longest allowed period"),
}
#: Withdrawn check keys and what replaces them (the same text as cr3bp.checks.RENAMED_CHECKS).
RENAMED_CHECKS = {
    "min_angle_from_primaries_line_deg":
        "this check measured the angle at the larger primary (in Sun-Earth: at the Sun) and is "
        "withdrawn; use min_angle_at_earth_from_sun_deg (Sun-Earth-spacecraft angle) or "
        "min_angle_at_earth_from_moon_deg (Moon-Earth-spacecraft angle)",
}
TRANSFER_KEYS = {
    "name": (S, True, "name of the transfer"),
    "from": (S, True, "start: 'parking earth 200km' or the name of an orbit"),
    "to": (S, True, "end: the name of an orbit or a parking orbit"),
    "via": ("list[str]", False, "names of orbits to pass through, in order"),
    "max_dv": (Q, False, "cap on total delta-v"),
    "max_tof": (Q, False, "cap on time of flight"),
    "best": (I, False, "how many ranked routes to keep"),
}
EXPORT_KEYS = {
    "object": (S, True, "name of an orbit or transfer"),
    "format": ("one-of:oem|csv|json", True, "file format"),
    "frame": ("one-of:j2000-equator|j2000-ecliptic|rotating", False, "axes"),
    "center": ("one-of:earth|moon|barycenter|sun|primary|secondary", False, "origin"),
    "time_system": ("one-of:utc|tai|tt|tdb", False, "time scale of the epochs"),
    "anchor": ("one-of:ephemeris|circular", False, "how the rotating frame is tied to the date"),
    "span": (S, False, "how long: '3periods' or a time such as '20d'"),
    "step": (Q, False, "output step, e.g. '10min'"),
    "file": (S, False, "output file name (inside the run folder)"),
}
SCHEMA = {
    "mission": ("table", True, {
        "name": (S, True, "mission name"),
        "description": (S, False, "what the mission is for"),
        "issued": (S, False, "ISO 8601 date written as the files' creation date (reproducible output)"),
    }),
    "system": ("table", True, {
        "name": (S, False, "tabulated system, e.g. 'earth-moon'"),
        "mu": (F, False, "custom mass ratio instead of a name"),
        "epoch": (S, True, "ISO 8601 epoch that anchors the rotating frame, e.g. '2031-03-01T00:00:00Z'"),
    }),
    "orbits": ("table-of-tables", True, ORBIT_KEYS),
    "transfers": ("list-of-tables", False, TRANSFER_KEYS),
    "exports": ("list-of-tables", False, EXPORT_KEYS),
    "plots": ("table", False, {
        "orbits": (B, False, "draw each orbit"), "families": (B, False, "draw each orbit's family"),
        "hill_regions": (B, False, "draw the Hill region at each orbit's energy"),
        "corridors": (B, False, "draw the transfer corridors"),
        "formats": ("list[str]", False, "image formats, from png and svg"),
    }),
    "settings": ("table", False, {
        "family_members": (I, False, "members per family"), "tube_points": (I, False, "points per tube"),
        "workers": (I, False, "worker processes"),
    }),
}


@dataclass(frozen=True)
class Problem:
    file: str
    line: int
    key: str
    message: str

    def __str__(self):
        return f"{self.file}:{self.line}: {self.key}: {self.message}"


class ScenarioError(InputError):
    """One or more problems in a scenario file; ``problems`` lists them all."""

    def __init__(self, problems):
        self.problems = list(problems)
        first = self.problems[0]
        more = f" (and {len(self.problems) - 1} more)" if len(self.problems) > 1 else ""
        super().__init__(str(first) + more)


_HEADER = re.compile(r"^\s*(\[\[?)\s*([^\]]+?)\s*\]\]?\s*(#.*)?$")
_KEY = re.compile(r"^\s*([A-Za-z0-9_\-\"'.]+)\s*=")


def line_index(text: str) -> dict:
    """Map dotted keys (with list positions as ``name[i]``) to their line numbers (1-based)."""
    where: dict[str, int] = {}
    prefix = ""
    counts: dict[str, int] = {}
    for n, raw in enumerate(text.splitlines(), 1):
        m = _HEADER.match(raw)
        if m:
            name = m.group(2).replace('"', "").replace("'", "")
            if m.group(1) == "[[":
                i = counts.get(name, 0)
                counts[name] = i + 1
                prefix = f"{name}[{i}]"
            else:
                prefix = _with_list_index(name, counts)
            where.setdefault(prefix, n)
            continue
        k = _KEY.match(raw)
        if k:
            key = k.group(1).replace('"', "").replace("'", "")
            full = f"{prefix}.{key}" if prefix else key
            where.setdefault(full, n)
    return where


def _with_list_index(name, counts):
    # "exports.x" inside the latest [[exports]] entry
    head = name.split(".")[0]
    if head in counts:
        return f"{head}[{counts[head] - 1}]" + name[len(head):]
    return name


def load(path) -> dict:
    """Read and check a scenario file; raises ScenarioError listing every problem."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as e:
        raise InputError(f"cannot read scenario {path}: {e.strerror}") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        m = re.search(r"line (\d+)", str(e))
        raise ScenarioError([Problem(str(path), int(m.group(1)) if m else 0, "(syntax)", str(e))]) from None
    problems = check(data, line_index(text), str(path))
    if problems:
        raise ScenarioError(problems)
    return data


def check(data: dict, lines: dict, file: str, schema: dict | None = None) -> list[Problem]:
    """Every problem of ``data`` against ``schema`` (default: the scenario schema, with its
    cross-key rules). Other file formats (e.g. the node lists of :mod:`cr3bp.nodes`) pass
    their own schema and get the key, type and line checks only."""
    problems: list[Problem] = []

    def line(key):
        while key:
            if key in lines:
                return lines[key]
            key = key.rpartition(".")[0] if "." in key else ""
        return 1

    def check_table(table, keys, prefix):
        for k in table:
            if k not in keys:
                allowed = ", ".join(sorted(keys))
                why = RENAMED_CHECKS.get(k) if keys is CHECK_KEYS else None
                problems.append(Problem(file, line(f"{prefix}.{k}"), f"{prefix}.{k}",
                                        why or f"unknown key; allowed here: {allowed}"))
        for k, (typ, required, sub) in keys.items():
            full = f"{prefix}.{k}" if prefix else k
            if k not in table:
                if required:
                    problems.append(Problem(file, line(prefix) if prefix else 1, full, "missing required key"))
                continue
            check_value(table[k], typ, sub, full)

    def check_value(v, typ, sub, full):
        if typ == "table":
            if not isinstance(v, dict):
                return bad(full, v, "a table")
            if isinstance(sub, dict):
                check_table(v, sub, full)
            elif full.endswith(".checks"):
                check_table(v, CHECK_KEYS, full)
        elif typ == "table-of-tables":
            if not isinstance(v, dict) or not v:
                return bad(full, v, "a table of named tables, e.g. [orbits.relay]")
            for name, t in v.items():
                if not isinstance(t, dict):
                    bad(f"{full}.{name}", t, "a table")
                else:
                    check_table(t, sub, f"{full}.{name}")
        elif typ == "list-of-tables":
            if not isinstance(v, list) or not all(isinstance(t, dict) for t in v):
                return bad(full, v, f"a list of tables, written [[{full}]]")
            for i, t in enumerate(v):
                check_table(t, sub, f"{full}[{i}]")
        elif typ == S:
            if not isinstance(v, str):
                bad(full, v, "text")
        elif typ == F:
            if isinstance(v, bool) or not isinstance(v, (int, float)):
                bad(full, v, "a number")
        elif typ == I:
            if isinstance(v, bool) or not isinstance(v, int):
                bad(full, v, "a whole number")
        elif typ == B:
            if not isinstance(v, bool):
                bad(full, v, "true or false")
        elif typ == Q:
            from . import units
            if not isinstance(v, str):
                return bad(full, v, "text with a unit, e.g. '200km'")
            try:
                units.parse(v)
            except InputError as e:
                problems.append(Problem(file, line(full), full, str(e)))
        elif typ == "list[str]":
            if not isinstance(v, list) or not all(isinstance(x, str) for x in v):
                bad(full, v, "a list of text values")
        elif typ == "list[float]":
            if not isinstance(v, list) or not all(isinstance(x, (int, float)) and not isinstance(x, bool)
                                                  for x in v):
                bad(full, v, "a list of numbers")
        elif typ.startswith("one-of:"):
            options = typ[len("one-of:"):].split("|")
            if not isinstance(v, str) or v not in options:
                bad(full, v, "one of " + ", ".join(repr(o) for o in options if o))

    def bad(full, v, expected):
        problems.append(Problem(file, line(full), full, f"{v!r} is not {expected}"))

    if schema is not None:
        check_table(data, schema, "")
        return sorted(problems, key=lambda p: (p.line, p.key))
    check_table(data, SCHEMA, "")
    sysd = data.get("system", {})
    if isinstance(sysd, dict) and ("name" in sysd) == ("mu" in sysd):
        problems.append(Problem(file, line("system"), "system", "give exactly one of 'name' or 'mu'"))
    orbits = data.get("orbits", {})
    if isinstance(orbits, dict):
        targets = ("period", "jacobi", "ax", "ay", "az", "perilune", "perigee", "resonance")
        for name, t in orbits.items():
            if isinstance(t, dict):
                given = [k for k in targets if k in t]
                if len(given) != 1:
                    problems.append(Problem(file, line(f"orbits.{name}"), f"orbits.{name}",
                                            f"give exactly one target among {', '.join(targets)}"
                                            + (f" (got {', '.join(given)})" if given else "")))
    return sorted(problems, key=lambda p: (p.line, p.key))
