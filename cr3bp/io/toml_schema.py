"""Checking a TOML file against a schema written as data, all problems at once.

A schema is a dict ``key -> (type, required, description or sub-schema)``; the types are
``"str"``, ``"float"`` (int accepted), ``"int"``, ``"bool"``, ``"quantity"`` (text with a unit,
e.g. ``"200km"``), ``"table"``, ``"table-of-tables"``, ``"list-of-tables"``, ``"list[str]"``,
``"list[float]"`` and ``"one-of:a|b|c"``. :func:`check_document` reports every unknown key,
missing required key and mistyped value as a :class:`Problem` naming the file, the line and the
dotted key. The scenario format (:mod:`cr3bp.scenario.schema`) and the transfer graph's node
lists (:mod:`cr3bp.transfers.nodes`) are both read through it.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass
from pathlib import Path

from ..errors import InputError, shown
from .. import units
from ..validate import finite_number

__all__ = ["Problem", "ScenarioError", "check_document", "line_index", "line_of", "key_parts", "path_text",
           "read_text", "parse_toml", "MAX_FILE_BYTES", "MAX_TEXT_CHARS",
           "S", "F", "I", "B", "Q"]

#: Largest file read (a scenario or node list is a few kilobytes; this keeps a hostile file cheap).
MAX_FILE_BYTES = 1 << 20
#: Longest text value (mission names, descriptions, requests); names of files are shorter.
MAX_TEXT_CHARS = 2000

# type names: "str", "float" (int accepted), "int", "bool", "quantity" (str with a unit, e.g. "200km"),
# "table", "list[str]"; "one-of:a|b|c" for enumerations
S, F, I, B, Q = "str", "float", "int", "bool", "quantity"


@dataclass(frozen=True)
class Problem:
    """One problem of a file: where it is (file, line, key) and what is wrong.

    Parameters
    ----------
    file : str
        The file as named in messages.
    line : int
        1-based line.
    key : str
        Dotted key (``exports[1].step``).
    message : str
        What is wrong and what is allowed.
    kind : {"type", "meaning"}, optional
        A value that cannot be read, or a readable value that is not allowed here.

    Examples
    --------
    >>> str(Problem("farlight.toml", 3, "system.name", "unknown system 'x'"))
    "farlight.toml:3: system.name: unknown system 'x'"

    References
    ----------
    TOML v1.0.0 (2021), https://toml.io/en/v1.0.0.
    """
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
    """One or more problems in a scenario file or a node list; ``problems`` lists them all.

    Parameters
    ----------
    problems : iterable of Problem
        Every problem found; the message has one line per problem.

    Examples
    --------
    >>> e = ScenarioError([Problem("a.toml", 1, "x", "bad"), Problem("a.toml", 2, "y", "worse")])
    >>> str(e).splitlines()
    ['a.toml:1: x: bad', 'a.toml:2: y: worse']

    References
    ----------
    TOML v1.0.0 (2021), https://toml.io/en/v1.0.0.
    """

    def __init__(self, problems):
        self.problems = list(problems)
        # every problem, one line each (FILE:LINE: key: message), not the first alone
        super().__init__("\n".join(str(p) for p in self.problems))


_HEADER = re.compile(r"^\s*(\[\[?)\s*([^\]]+?)\s*\]\]?\s*(#.*)?$")
_KEY = re.compile(r"^\s*([A-Za-z0-9_\-\"'.]+)\s*=")


def line_index(text: str) -> dict:
    """Map dotted keys (with list positions as ``name[i]``) to their line numbers (1-based).

    Parameters
    ----------
    text : str
        TOML text.

    Returns
    -------
    dict
        Dotted key -> line.

    Raises
    ------
    TypeError
        ``text`` is not text.

    Examples
    --------
    >>> line_index("[system]\\nname = 'earth-moon'\\n")["system.name"]
    2

    References
    ----------
    TOML v1.0.0 (2021), https://toml.io/en/v1.0.0 (tables, arrays of tables).
    """
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
    """``"exports[1].step"`` -> ``["exports", 1, "step"]``.

    Parameters
    ----------
    key : str
        A dotted key with list positions.

    Returns
    -------
    list
        Names and list indices.

    Raises
    ------
    ValueError
        A malformed list position.

    Examples
    --------
    >>> key_parts("exports[1].step")
    ['exports', 1, 'step']

    References
    ----------
    TOML v1.0.0 (2021), https://toml.io/en/v1.0.0 (dotted keys).
    """
    return [int(i) if i else k for k, i in _PART.findall(key)]


def path_text(path) -> str:
    """A file path as it goes into a FILE:LINE message.

    Whole, with any control character escaped (so a message stays one line).

    Parameters
    ----------
    path : str or pathlib.Path
        The path.

    Returns
    -------
    str
        The printable path.

    Raises
    ------
    TypeError
        Not a path.

    Examples
    --------
    >>> path_text("a\\nb.toml")
    'a\\\\nb.toml'

    References
    ----------
    Common practice (the FILE:LINE: form of compiler messages).
    """
    t = str(path)
    return t if t.isprintable() else t.encode("unicode_escape").decode("ascii")


def read_text(path, what: str = "scenario") -> str:
    """The text of a scenario-like file, checked.

    At most :data:`MAX_FILE_BYTES`, UTF-8, no NUL bytes; otherwise one InputError line naming
    the file.

    Parameters
    ----------
    path : str or pathlib.Path
        The file.
    what : str, optional
        What the file is, for messages.

    Returns
    -------
    str
        The text.

    Raises
    ------
    InputError
        A missing, unreadable, too large, non-UTF-8 or binary file.

    Examples
    --------
    >>> read_text("no-such-file.toml")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: ...

    References
    ----------
    RFC 3629, "UTF-8, a transformation format of ISO 10646" (2003).
    """
    path = Path(path)
    where = path_text(path)
    try:
        if path.is_dir():
            raise InputError(f"{what} {where} is a folder, not a file")
        with open(path, "rb") as f:
            raw = f.read(MAX_FILE_BYTES + 1)
    except OSError as e:
        raise InputError(f"cannot read {what} {where}: {e.strerror or e}") from None
    if len(raw) > MAX_FILE_BYTES:
        raise InputError(f"{where}:1: the {what} is larger than {MAX_FILE_BYTES // 1024} KiB; "
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
    """TOML text -> dict; a syntax error or an absurdly nested value is one ScenarioError.

    Parameters
    ----------
    text : str
        TOML text.
    file : str
        The file as named in messages.

    Returns
    -------
    dict
        The document.

    Raises
    ------
    ScenarioError
        A syntax error (with its line) or nesting too deep.

    Examples
    --------
    >>> parse_toml("a = 1", "x.toml")
    {'a': 1}

    References
    ----------
    TOML v1.0.0 (2021), https://toml.io/en/v1.0.0.
    """
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as e:
        m = re.search(r"line (\d+)", str(e))
        raise ScenarioError([Problem(file, int(m.group(1)) if m else 0, "(syntax)", str(e))]) from None
    except RecursionError:
        raise ScenarioError([Problem(file, 1, "(syntax)", "values nested too deeply to be a scenario "
                                     "(arrays or tables inside each other hundreds of levels deep)")]) from None


def line_of(lines: dict, key: str) -> int:
    """The line of ``key`` or of the nearest table holding it (1 when none is known).

    Parameters
    ----------
    lines : dict
        :func:`line_index` of the file.
    key : str
        A dotted key.

    Returns
    -------
    int
        1-based line.

    Raises
    ------
    ValueError
        A malformed key.

    Examples
    --------
    >>> line_of({"system": 1, "system.name": 2}, "system.mu")
    1

    References
    ----------
    TOML v1.0.0 (2021), https://toml.io/en/v1.0.0.
    """
    while key:
        if key in lines:
            return lines[key]
        key = key.rpartition(".")[0] if "." in key else ""
    return 1


def check_document(data: dict, lines: dict, file: str, schema: dict, text: str | None = None, *,
                   subtables: dict | None = None, unknown_reason=None) -> list[Problem]:
    """Every problem of ``data`` (read from ``file``) against ``schema``, sorted by line.

    Parameters
    ----------
    data : dict
        The parsed TOML (:func:`parse_toml`).
    lines : dict
        Dotted key -> line number (:func:`line_index`).
    file : str
        The file as named in messages (:func:`path_text`).
    schema : dict
        ``key -> (type, required, description or sub-schema)`` (module notes).
    text : str, optional
        The file's text, to quote a value as written (TOML reads ``1e309`` as ``inf``).
    subtables : dict, optional
        Key name -> schema of a ``"table"`` whose entry holds a description instead of its
        keys (the scenario's ``checks`` tables).
    unknown_reason : callable(keys, prefix, key) -> str or None, optional
        A better message for an unknown key (a withdrawn key and what replaces it).

    Returns
    -------
    list of Problem
        Sorted by line; empty when the document fits the schema.

    Raises
    ------
    KeyError
        A schema entry of an unknown type (a programming error).

    Examples
    --------
    >>> check_document({"a": "x"}, {"a": 1}, "f.toml", {"a": ("int", True, "a count")})[0].key
    'a'

    References
    ----------
    TOML v1.0.0 (2021), https://toml.io/en/v1.0.0.
    """
    problems: list[Problem] = []
    text_lines = text.splitlines() if text is not None else None

    def line(key):
        return line_of(lines, key)

    def check_table(table, keys, prefix):
        for k in table:
            if k not in keys:
                allowed = ", ".join(sorted(keys))
                why = unknown_reason(keys, prefix, k) if unknown_reason is not None else None
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
            elif subtables and full.rpartition(".")[2] in subtables:
                check_table(v, subtables[full.rpartition(".")[2]], full)
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
            else:
                try:
                    finite_number(full, v)
                except InputError:  # named as the user wrote it (TOML reads 1e309 as inf)
                    problems.append(Problem(file, line(full), full,
                                            f"{written(full, v)} is not a finite number"))
        elif typ == I:
            if isinstance(v, bool) or not isinstance(v, int):
                bad(full, v, "a whole number")
        elif typ == B:
            if not isinstance(v, bool):
                bad(full, v, "true or false")
        elif typ == Q:
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

    check_table(data, schema, "")
    return sorted(problems, key=lambda p: (p.line, p.key))
