"""The scenario file format: a TOML document, keys of our own, checked before any computation.

The schema is data: each table lists its keys with (type, required, description). The checker
reports unknown keys, missing required keys and values of the wrong type with the file, line
and dotted key, all at once, before anything is computed.
"""

from __future__ import annotations

import math
import re
import tomllib
from dataclasses import dataclass
from pathlib import Path

from ..errors import InputError, shown

#: Largest scenario file read (a scenario is a few kilobytes; this keeps a hostile file cheap).
MAX_SCENARIO_BYTES = 1 << 20
#: Longest text value (mission names, descriptions, requests); names of files are shorter.
MAX_TEXT_CHARS = 2000
#: Names that become parts of file names (orbits, transfers): one plain character set, no
#: separators, no leading dot or dash, so no name can point outside the output folder.
NAME_PATTERN = re.compile(r"[A-Za-z0-9][A-Za-z0-9_-]{0,63}")
NAME_RULE = "1 to 64 letters, digits, '-' or '_', starting with a letter or digit"
#: Export file names: the name characters plus '.', no separators, not hidden.
FILE_PATTERN = re.compile(r"[A-Za-z0-9][A-Za-z0-9_.-]{0,99}")
FILE_RULE = "1 to 100 letters, digits, '-', '_' or '.', starting with a letter or digit"

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
    "phase_deg": (F, False, "phase of the orbit at the epoch, degrees of its period from its initial state "
                            "(default 0; the eclipse checks read it)"),
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
    "max_eclipse_duration": (Q, False, "longest allowed shadow pass over a year from the epoch, e.g. '90min'"),
    "max_eclipse_per_year": (Q, False, "most shadow time per year from the epoch, e.g. '10h'"),
}
#: Withdrawn check keys and what replaces them (the same text as cr3bp.scenario.checks.RENAMED_CHECKS).
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
        "workers": (I, False, "worker processes for transfer legs (when --workers is not given)"),
    }),
}
#: Settings of earlier versions that no run ever read: refused with the reason, not ignored.
UNUSED_SETTINGS = {
    "family_members": "librate run grows each family whole (its own continuation stops) and has no "
                      "member count to set; remove the key",
    "tube_points": "librate run chooses the points of each tube by the kind of leg (see the node "
                   "list's hints in the user guide, docs/manual/node-lists.md); remove the key",
}


@dataclass(frozen=True)
class Problem:
    file: str
    line: int
    key: str
    message: str
    #: "type" (a key, type or format problem: the value cannot be read) or "meaning" (a
    #: readable value that is not allowed here)
    kind: str = "type"

    def __str__(self):
        return f"{self.file}:{self.line}: {self.key}: {self.message}"


class ScenarioError(InputError):
    """One or more problems in a scenario file; ``problems`` lists them all."""

    def __init__(self, problems):
        self.problems = list(problems)
        # every problem, one line each (FILE:LINE: key: message), not the first alone
        super().__init__("\n".join(str(p) for p in self.problems))


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


_PART = re.compile(r"([^.\[\]]+)|\[(\d+)\]")


def key_parts(key: str) -> list:
    """``"exports[1].step"`` -> ``["exports", 1, "step"]``."""
    return [int(i) if i else k for k, i in _PART.findall(key)]


def _schema_entry(parts):
    """(type, required) of the key at ``parts`` in the scenario schema, or None if unknown."""
    if not parts or parts[0] not in SCHEMA:
        return None
    typ, req, sub = SCHEMA[parts[0]]
    rest = parts[1:]
    if typ == "table-of-tables":
        rest = rest[1:]
    elif typ == "list-of-tables":
        if not rest or not isinstance(rest[0], int):
            return (typ, req) if not rest else None
        rest = rest[1:]
    if not rest:
        return (typ, req)
    if len(rest) == 2 and rest[0] == "checks":
        e = CHECK_KEYS.get(rest[1])
        return None if e is None else (e[0], e[1])
    e = sub.get(rest[0]) if isinstance(sub, dict) and len(rest) == 1 else None
    return None if e is None else (e[0], e[1])


def well_typed(data: dict, problems: list):
    """A copy of ``data`` without the optional values the schema refused (so the meaning of
    everything else can still be checked and reported at once), or None when a refused value
    is one that cannot be done without (a required key, a whole section)."""
    import copy
    d = copy.deepcopy(data)
    for p in problems:
        if p.kind == "meaning":
            continue
        parts = key_parts(p.key)
        if not parts or p.message == "missing required key":
            return None
        c = d
        try:
            for part in parts[:-1]:
                c = c[part]
        except (KeyError, IndexError, TypeError):
            return None
        leaf = parts[-1]
        entry = _schema_entry(parts)
        if entry is not None and (entry[1] or entry[0] in ("table", "table-of-tables", "list-of-tables")):
            return None
        if not isinstance(c, dict) or leaf not in c:
            return None
        del c[leaf]
    return d


def load(path) -> dict:
    """Read and check a scenario file; raises ScenarioError listing every problem."""
    path = Path(path)
    text = read_text(path)
    data = parse_toml(text, path_text(path))
    problems = check(data, line_index(text), path_text(path), text=text)
    if problems:
        raise ScenarioError(problems)
    return data


def path_text(path) -> str:
    """A file path as it goes into a FILE:LINE message: whole, with any control character
    escaped (so a message stays one line)."""
    t = str(path)
    return t if t.isprintable() else t.encode("unicode_escape").decode("ascii")


def read_text(path, what: str = "scenario") -> str:
    """The text of a scenario-like file: at most MAX_SCENARIO_BYTES, UTF-8, no NUL bytes;
    otherwise one InputError line naming the file."""
    path = Path(path)
    where = path_text(path)
    try:
        if path.is_dir():
            raise InputError(f"{what} {where} is a folder, not a file")
        with open(path, "rb") as f:
            raw = f.read(MAX_SCENARIO_BYTES + 1)
    except OSError as e:
        raise InputError(f"cannot read {what} {where}: {e.strerror or e}") from None
    if len(raw) > MAX_SCENARIO_BYTES:
        raise InputError(f"{where}:1: the {what} is larger than {MAX_SCENARIO_BYTES // 1024} KiB; "
                         "a scenario is a short TOML text file")
    if b"\0" in raw:
        line = raw[:raw.index(b"\0")].count(b"\n") + 1
        raise InputError(f"{where}:{line}: the {what} is not a text file (it holds NUL bytes); "
                         "expected TOML text")
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError as e:
        line = raw[:e.start].count(b"\n") + 1
        raise InputError(f"{where}:{line}: byte 0x{raw[e.start]:02x} is not UTF-8 text; "
                         f"save the {what} as UTF-8 TOML") from None


def parse_toml(text: str, file: str) -> dict:
    """TOML text -> dict; a syntax error or an absurdly nested value is one ScenarioError."""
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        m = re.search(r"line (\d+)", str(e))
        raise ScenarioError([Problem(file, int(m.group(1)) if m else 0, "(syntax)", str(e))]) from None
    except RecursionError:
        raise ScenarioError([Problem(file, 1, "(syntax)", "values nested too deeply to be a scenario "
                                     "(arrays or tables inside each other hundreds of levels deep)")]) from None


def check(data: dict, lines: dict, file: str, schema: dict | None = None,
          text: str | None = None) -> list[Problem]:
    """Every problem of ``data`` against ``schema`` (default: the scenario schema, with its
    cross-key rules). Other file formats (e.g. the node lists of :mod:`cr3bp.transfers.nodes`) pass
    their own schema and get the key, type and line checks only."""
    problems: list[Problem] = []
    text_lines = text.splitlines() if text is not None else None

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
                why = (RENAMED_CHECKS.get(k) if keys is CHECK_KEYS
                       else UNUSED_SETTINGS.get(k) if prefix == "settings" else None)
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
            else:
                plain_text(v, full)
        elif typ == F:
            if isinstance(v, bool) or not isinstance(v, (int, float)):
                bad(full, v, "a number")
            elif not math.isfinite(v):
                problems.append(Problem(file, line(full), full,
                                        f"{written(full, v)} is not a finite number"))
        elif typ == I:
            if isinstance(v, bool) or not isinstance(v, int):
                bad(full, v, "a whole number")
        elif typ == B:
            if not isinstance(v, bool):
                bad(full, v, "true or false")
        elif typ == Q:
            from .. import units
            if not isinstance(v, str):
                return bad(full, v, "text with a unit, e.g. '200km'")
            if not plain_text(v, full):
                return
            try:
                units.parse(v)
            except InputError as e:
                problems.append(Problem(file, line(full), full, str(e)))
        elif typ == "list[str]":
            if not isinstance(v, list) or not all(isinstance(x, str) for x in v):
                bad(full, v, "a list of text values")
            else:
                for x in v:
                    if not plain_text(x, full):
                        break
        elif typ == "list[float]":
            if not isinstance(v, list) or not all(isinstance(x, (int, float)) and not isinstance(x, bool)
                                                  for x in v):
                bad(full, v, "a list of numbers")
        elif typ.startswith("one-of:"):
            options = typ[len("one-of:"):].split("|")
            if not isinstance(v, str) or v not in options:
                bad(full, v, "one of " + ", ".join(repr(o) for o in options if o))

    def bad(full, v, expected):
        problems.append(Problem(file, line(full), full, f"{shown(repr(v))} is not {expected}"))

    def written(full, v):
        # the value as the user wrote it on its line (TOML reads 1e309 as inf)
        n = lines.get(full)
        if n and text_lines and n <= len(text_lines):
            raw = text_lines[n - 1].partition("=")[2].split("#")[0].strip()
            if raw:
                return shown(raw)
        return shown(repr(v))

    def plain_text(v, full):
        if len(v) > MAX_TEXT_CHARS:
            problems.append(Problem(file, line(full), full, f"text of {len(v)} characters "
                                    f"({shown(v)}); at most {MAX_TEXT_CHARS} are allowed"))
            return False
        if not v.isprintable():
            problems.append(Problem(file, line(full), full, f"'{shown(v)}' holds a control character "
                                    "(line break, tab, ...); plain one-line text is allowed"))
            return False
        return True

    if schema is not None:
        check_table(data, schema, "")
        return sorted(problems, key=lambda p: (p.line, p.key))
    check_table(data, SCHEMA, "")
    sysd = data.get("system", {})
    if isinstance(sysd, dict) and ("name" in sysd) == ("mu" in sysd):
        problems.append(Problem(file, line("system"), "system", "give exactly one of 'name' or 'mu'", "meaning"))
    orbits = data.get("orbits", {})
    if isinstance(orbits, dict):
        targets = ("period", "jacobi", "ax", "ay", "az", "perilune", "perigee", "resonance")
        for name, t in orbits.items():
            if isinstance(t, dict):
                given = [k for k in targets if k in t]
                if len(given) != 1:
                    problems.append(Problem(file, line(f"orbits.{name}"), f"orbits.{name}",
                                            f"give exactly one target among {', '.join(targets)}"
                                            + (f" (got {', '.join(given)})" if given else ""), "meaning"))
    names_seen: dict = {}
    for name in (orbits if isinstance(orbits, dict) else {}):
        if not NAME_PATTERN.fullmatch(name):
            problems.append(Problem(file, line(f"orbits.{name}"), f"orbits.{shown(name)}",
                                    f"orbit name '{shown(name)}' is not allowed in file names; use {NAME_RULE}", "meaning"))
        names_seen[name] = f"orbits.{name}"
    transfers = data.get("transfers", [])
    for i, t in enumerate(transfers if isinstance(transfers, list) else []):
        name = t.get("name") if isinstance(t, dict) else None
        if not isinstance(name, str):
            continue
        key = f"transfers[{i}].name"
        if not NAME_PATTERN.fullmatch(name):
            problems.append(Problem(file, line(key), key,
                                    f"transfer name '{shown(name)}' is not allowed in file names; use {NAME_RULE}", "meaning"))
        elif name in names_seen:
            problems.append(Problem(file, line(key), key, f"name '{name}' is already used by "
                                    f"{names_seen[name]}; orbits and transfers need distinct names", "meaning"))
        names_seen.setdefault(name, key.removesuffix(".name"))
    return sorted(problems, key=lambda p: (p.line, p.key))
