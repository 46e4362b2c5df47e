"""The scenario file format: a TOML document, keys of our own, checked before any computation.

The schema is data: each table lists its keys with (type, required, description). The checker
(:func:`cr3bp.io.toml_schema.check_document`, shared with the node lists) reports unknown keys,
missing required keys and values of the wrong type with the file, line and dotted key, all at
once, before anything is computed; :func:`check` adds the scenario's cross-key rules.
"""

from __future__ import annotations

import math
import re
from pathlib import Path
import copy

from ..errors import shown
from .. import vocabulary as words
# the file reading and key checking shared by every TOML input (names kept here for callers)
from ..io.toml_schema import (B, F, I, MAX_TEXT_CHARS, Q, S, Problem, ScenarioError,  # noqa: F401
                              check_document, key_parts, line_index, line_of, parse_toml, path_text,
                              read_text)
from ..io.toml_schema import MAX_FILE_BYTES as MAX_SCENARIO_BYTES  # noqa: F401
#: Names that become parts of file names (orbits, transfers): one plain character set, no
#: separators, no leading dot or dash, so no name can point outside the output folder.
NAME_PATTERN = re.compile(r"[A-Za-z0-9][A-Za-z0-9_-]{0,63}")
NAME_RULE = "1 to 64 letters, digits, '-' or '_', starting with a letter or digit"
#: Export file names: the name characters plus '.', no separators, not hidden.
FILE_PATTERN = re.compile(r"[A-Za-z0-9][A-Za-z0-9_.-]{0,99}")
FILE_RULE = "1 to 100 letters, digits, '-', '_' or '.', starting with a letter or digit"

#: The schema type of each kind of target value (cr3bp.vocabulary.TARGET_DIMENSIONS).
_TARGET_TYPES = {"time": Q, "length": Q, "number": F, "ratio": S}
ORBIT_KEYS = {
    "family": (words.one_of(words.FAMILIES), False, "periodic-orbit family (or give 'torus')"),
    "torus": (S, False, "a quasi-periodic torus instead of a periodic orbit: a torus request, e.g. "
                        "'quasi-halo around halo L2 south resonance=9:2 amplitude=2000km' or "
                        "'lissajous L2 ay=800000km az=500000km' (families: "
                        + ", ".join(words.TORUS_FAMILIES) + "; targets: "
                        + ", ".join(words.TORUS_TARGETS) + ")"),
    "torus_phase_deg": ("list[float]", False, "with 'torus': the torus phase [THETA0, THETA1] in "
                        "degrees (along the stroboscopic time, around the invariance circle) of "
                        "the exported trajectory's first state and of the angle checks' trajectory "
                        "at the epoch (default [0, 0])"),
    "point": (words.one_of(words.COLLINEAR_POINTS), False, "Lagrange point (not for dro/resonant)"),
    "branch": (words.one_of(words.HALO_BRANCHES, optional=True), False, "halo branch"),
    # the orbit targets, one key each (give exactly one)
    **{k: (_TARGET_TYPES[words.TARGET_DIMENSIONS[k]], False, "target " + words.TARGET_HELP[k][1])
       for k in words.ORBIT_TARGETS},
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
    "from": (S, True, "start: 'parking earth 200km' or the name of an orbit (a periodic orbit or a torus)"),
    "to": (S, True, "end: the name of an orbit (a periodic orbit or a torus) or a parking orbit (after a "
                    "torus: an Earth parking orbit in earth-moon, the return designed as a departure's "
                    "time-reverse)"),
    "via": ("list[str]", False, "names of orbits to pass through, in order"),
    "path": (words.one_of(("auto",) + words.DEPARTURE_PATHS), False,
             "with 'from' an Earth parking orbit (earth-moon): how the spacecraft leaves it, 'direct' "
             "(departure burn, coast, insertion burn), 'lunar-flyby' (departure burn, powered lunar "
             "flyby at 100 km or higher, insertion burn) or 'low-energy' (the Sun's pull, bicircular "
             "model, launched at the system epoch); 'auto' (the default): a manifold leg where one "
             "reaches the parking orbit, else 'direct'"),
    "launch_latitude": (F, False,
                        "with path 'direct' or 'lunar-flyby' to a periodic orbit: a launch site's latitude in "
                        "degrees (-90..90); the departure leaves at the system epoch with its parking orbit's "
                        "inclination to the Earth's equator at least that (cr3bp.transfers.departure)"),
    "max_dv": (Q, False, "cap on total delta-v"),
    "max_tof": (Q, False, "cap on time of flight"),
    "best": (I, False, "how many ranked routes to keep"),
}
EXPORT_KEYS = {
    "object": (S, True, "name of an orbit or transfer"),
    "format": (words.one_of(words.SCENARIO_EXPORT_FORMATS), True, "file format"),
    "frame": (words.one_of(words.FRAMES), False, "axes"),
    # checked against the system by the run's own resolver (cr3bp.time.frames.resolve_center)
    "center": (S, False, "origin: primary, secondary, barycenter or a body's name"),
    "time_system": (words.one_of(words.TIME_SYSTEMS), False, "time scale of the epochs"),
    "anchor": (words.one_of(words.ANCHORS), False, "how the rotating frame is tied to the date"),
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
        "interactive": (B, False, "interactive 3-D figures (plotly, inline) of each orbit and stitched route "
                                  "in report.html (default true; adds about 4.7 MB of plotly.js once)"),
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


#: Keys of a periodic orbit's table that a torus table refuses, and why.
NOT_FOR_TORI = {
    "family": "the torus request names its family",
    "point": "the torus request names its point",
    "branch": "the torus request names its orbit",
    "resonant": "the torus request names its orbit",
    "occurrence": "the torus request names its orbit",
    "phase_deg": "a torus's phase is two angles: use torus_phase_deg = [THETA0, THETA1]",
}
#: Checks a torus cannot be given, and why.
CHECKS_NOT_FOR_TORI = {
    "max_period": "a torus has two frequencies and no period; its stroboscopic period is in the "
                  "orbit table",
}


def torus_entry_problems(entry: dict) -> list[tuple[str, str]]:
    """``[(key, message)]`` of a torus table's keys that do not go with a torus (key relative
    to the table).

    Parameters
    ----------
    entry : dict
        An ``[orbits.NAME]`` table that holds a ``torus`` request.

    Returns
    -------
    list of (str, str)
        One ``(key, message)`` per problem, in table order: a periodic orbit's key
        (:data:`NOT_FOR_TORI`, the orbit targets), a ``torus_phase_deg`` that is not two finite
        angles in degrees, a check that is refused for tori (:data:`CHECKS_NOT_FOR_TORI`, key
        ``checks.NAME``). Empty when the table is fine.

    Raises
    ------
    None
        Problems are returned, not raised (the caller reports them all at once).

    Examples
    --------
    >>> torus_entry_problems({"torus": "quasi-halo", "torus_phase_deg": [0.0, 90.0]})
    []
    >>> [k for k, _ in torus_entry_problems({"torus": "quasi-halo", "family": "halo",
    ...                                      "checks": {"max_period": "14 d"}})]
    ['family', 'checks.max_period']

    References
    ----------
    Tom Preston-Werner et al., "TOML v1.0.0" (2021) (the scenario file's format); the keys
    are this project's own (common practice).
    """
    out = [(k, f"'{k}' does not go with 'torus': {why}") for k, why in NOT_FOR_TORI.items()
           if k in entry]
    for k in words.ORBIT_TARGETS:
        if k in entry:
            out.append((k, f"'{k}' does not go with 'torus': the torus request holds its targets"))
    ph = entry.get("torus_phase_deg")
    if ph is not None and (not isinstance(ph, list) or len(ph) != 2
                           or not all(isinstance(v, (int, float)) and not isinstance(v, bool)
                                      and math.isfinite(v) for v in ph)):
        out.append(("torus_phase_deg", f"{ph!r} must be two finite angles [THETA0, THETA1] in "
                                       "degrees"))
    for k in (entry.get("checks") or {}):
        if k in CHECKS_NOT_FOR_TORI:
            out.append((f"checks.{k}", CHECKS_NOT_FOR_TORI[k]))
    return out


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
    is one that cannot be done without (a required key, a whole section).

    Parameters
    ----------
    data : dict
        The parsed scenario.
    problems : list of Problem
        The schema's problems.

    Returns
    -------
    dict or None
        The copy, or None.

    Raises
    ------
    KeyError
        A problem naming a key the document does not hold.

    Examples
    --------
    >>> well_typed({"a": 1}, [])
    {'a': 1}

    References
    ----------
    TOML v1.0.0 (2021), https://toml.io/en/v1.0.0.
    """
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
    """Read and check a scenario file; raises ScenarioError listing every problem.

    Parameters
    ----------
    path : str or pathlib.Path
        The scenario file.

    Returns
    -------
    dict
        The checked document.

    Raises
    ------
    ScenarioError
        Every problem, each as ``FILE:LINE: key: message``.
    InputError
        A missing, unreadable or binary file.

    Examples
    --------
    >>> from pathlib import Path
    >>> import cr3bp
    >>> sorted(load(Path(cr3bp.__file__).parents[1] / "examples" / "farlight.toml"))[:2]
    ['exports', 'mission']

    References
    ----------
    TOML v1.0.0 (2021), https://toml.io/en/v1.0.0.
    """
    path = Path(path)
    text = read_text(path)
    data = parse_toml(text, path_text(path))
    problems = check(data, line_index(text), path_text(path), text=text)
    if problems:
        raise ScenarioError(problems)
    return data


def check(data: dict, lines: dict, file: str, schema: dict | None = None,
          text: str | None = None) -> list[Problem]:
    """Every problem of ``data`` against ``schema`` (default: the scenario schema, with its
    cross-key rules). Other file formats pass their own schema and get the key, type and line
    checks only (:func:`cr3bp.io.toml_schema.check_document`, which they may call directly).

    Parameters
    ----------
    data : dict
        The parsed document.
    lines : dict
        Dotted key -> line (:func:`cr3bp.io.toml_schema.line_index`).
    file : str
        The file as named in messages.
    schema : dict, optional
        Default: the scenario schema.
    text : str, optional
        The file's text (to quote values as written).

    Returns
    -------
    list of Problem
        Sorted by line.

    Raises
    ------
    KeyError
        A schema entry of an unknown type (a programming error).

    Examples
    --------
    >>> [p.key for p in check({"system": {"name": 3}}, {}, "x.toml")][:1]
    ['mission']

    References
    ----------
    TOML v1.0.0 (2021), https://toml.io/en/v1.0.0.
    """
    if schema is not None:
        return check_document(data, lines, file, schema, text)
    problems = check_document(data, lines, file, SCHEMA, text, subtables={"checks": CHECK_KEYS},
                              unknown_reason=_unknown_reason)

    def line(key):
        return line_of(lines, key)

    sysd = data.get("system", {})
    if isinstance(sysd, dict) and ("name" in sysd) == ("mu" in sysd):
        problems.append(Problem(file, line("system"), "system", "give exactly one of 'name' or 'mu'", "meaning"))
    orbits = data.get("orbits", {})
    if isinstance(orbits, dict):
        targets = words.ORBIT_TARGETS
        for name, t in orbits.items():
            if isinstance(t, dict) and "torus" in t:
                for key, why in torus_entry_problems(t):
                    problems.append(Problem(file, line(f"orbits.{name}.{key}"),
                                            f"orbits.{name}.{key}", why, "meaning"))
                continue
            if isinstance(t, dict) and "family" not in t:
                problems.append(Problem(file, line(f"orbits.{name}"), f"orbits.{name}",
                                        "give 'family' (a periodic orbit) or 'torus' (a torus "
                                        "request)", "meaning"))
                continue
            if isinstance(t, dict) and "torus_phase_deg" in t:
                problems.append(Problem(file, line(f"orbits.{name}.torus_phase_deg"),
                                        f"orbits.{name}.torus_phase_deg",
                                        "'torus_phase_deg' goes with 'torus'; a periodic orbit's "
                                        "phase is 'phase_deg'", "meaning"))
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
        if t.get("path") == "low-energy" and not (str(t.get("from", "")).startswith("parking earth ")
                                                  and (data.get("system") or {}).get("name") == "earth-moon"):
            problems.append(Problem(file, line(f"transfers[{i}].path"), f"transfers[{i}].path",
                                    "path 'low-energy' leaves an Earth parking orbit ('from = \"parking earth "
                                    "200km\"') in the earth-moon system", "meaning"))
    return sorted(problems, key=lambda p: (p.line, p.key))


def _unknown_reason(keys, prefix, key):
    """Why a withdrawn key is refused, and what replaces it (None: a plain unknown key)."""
    if keys is CHECK_KEYS:
        return RENAMED_CHECKS.get(key)
    return UNUSED_SETTINGS.get(key) if prefix == "settings" else None
