"""The main job end to end: a scenario file in, a folder of tables, plots, exports, a report and
a manifest out.

Stages (each reads the plain objects the library returns and writes through the same
writers the commands use): check the scenario (everything, before any computation) ->
orbits (from the catalogue when known) -> constraint checks -> transfers (transfer graph,
route search, stitching) -> exports -> figures -> report -> manifest.

Reproducibility: tables and exports depend only on the scenario and the library version
(OEM CREATION_DATE comes from ``mission.issued`` in the scenario, else SOURCE_DATE_EPOCH, else
the clock). An interrupted run resumes: families and legs already in the catalogue are not
recomputed, and every file is written atomically.
"""

from __future__ import annotations

import errno
import hashlib
import os
import shutil
import tempfile
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .. import __version__, units, validate
from ..systems import system as make_system
from . import schema
from ..io.atomic import write_text
from ..cautions import CAUTION
from ..errors import InputError, shown, OutputError, NoSolutionError
from ..validate import MAX_WORKERS
from ..vocabulary import CR3BP_DEPARTURE_PATHS, SCENARIO_IMAGE_FORMATS, INERTIAL_FRAMES, LENGTH_TARGETS, ORBIT_TARGETS
from .outputs import csv_text, json_text, save_figures, say
from .reuse import run_key
from .schema import Problem, ScenarioError, FILE_PATTERN, FILE_RULE
from ..catalog import Catalog
from ..energy import hill_region
from ..integrate import propagate
from ..io import export
from ..io.export import span_periods, MAX_SAMPLES, dv_warning
from ..orbits.request import spec_from_options, solve_request
from ..time import frames
from ..time.scales import parse_iso
from .checks import run_checks, sample, eclipse_figures, plan_problems
from .report import write_report, places_note
from .transfers import design_transfers, write_route_tables, transfer_trajectory
from ..operations.along import route_section

TARGET_KEYS = ORBIT_TARGETS


@dataclass(frozen=True)
class Plan:
    """A checked scenario: what to compute, nothing computed yet.

    Parameters
    ----------
    path : pathlib.Path
        The scenario file.
    data : dict
        The checked document.
    system : System
        The scenario's system.
    epoch : str or float
        The scenario's epoch.
    orbit_specs : dict
        Orbit name -> its request.
    sha256 : str
        Hash of the file (the manifest records it).

    Examples
    --------
    >>> from pathlib import Path
    >>> import cr3bp
    >>> plan = prepare(Path(cr3bp.__file__).parents[1] / "examples" / "farlight.toml")
    >>> plan.system.name
    'earth-moon'

    References
    ----------
    TOML v1.0.0 (2021), https://toml.io/en/v1.0.0.
    """

    path: Path
    data: dict
    system: object
    epoch: str
    orbit_specs: dict        # name -> OrbitSpec
    sha256: str

    @property
    def name(self) -> str:
        return self.data["mission"]["name"]


@dataclass
class Outputs:
    """The files a run writes into its folder, in the order they are named.

    Parameters
    ----------
    folder : pathlib.Path
        The (staging) folder.
    files : list of pathlib.Path
        Paths handed out so far.
    figures : Catalog or None
        The catalogue that keeps drawn figures for reuse (None: draw every figure).

    Examples
    --------
    >>> o = Outputs(Path("out"))
    >>> o.path("report.html").as_posix(), len(o.files)
    ('out/report.html', 1)

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    folder: Path
    files: list = field(default_factory=list)
    figures: object = None

    def path(self, name: str) -> Path:
        p = self.folder / name
        self.files.append(p)
        return p


def _spec_for(entry: dict):
    target = {k: entry[k] for k in TARGET_KEYS if k in entry}
    target = {k: (str(v) if not isinstance(v, str) else v) for k, v in target.items()}
    res = entry.get("resonant")
    return spec_from_options(entry["family"], entry.get("point"), entry.get("branch") or None,
                             resonance_family=res, occurrence=entry.get("occurrence"), **target)


def prepare(path) -> Plan:
    """Read and check a scenario; nothing is computed or written.

    First the schema (file, line, key), then the meaning of each value (system, epoch, orbit
    requests, references between sections).

    Parameters
    ----------
    path : str or pathlib.Path
        The scenario file (TOML).

    Returns
    -------
    Plan
        The checked scenario.

    Raises
    ------
    ScenarioError
        Every problem, each as ``FILE:LINE: key: message``.

    Examples
    --------
    >>> from pathlib import Path
    >>> import cr3bp
    >>> plan = prepare(Path(cr3bp.__file__).parents[1] / "examples" / "farlight.toml")
    >>> sorted(plan.orbit_specs)
    ['relay']

    References
    ----------
    TOML v1.0.0 (2021), https://toml.io/en/v1.0.0.
    """
    path = Path(path)
    file = schema.path_text(path)
    text = schema.read_text(path)
    data = schema.parse_toml(text, file)
    lines = schema.line_index(text)
    found = schema.check(data, lines, file, text=text)
    if found:
        # the meaning of every value that could be read is checked too: all problems at once
        data = schema.well_typed(data, found)
        if data is None:
            raise ScenarioError(found)
    problems = []

    def add(key, exc):
        k = key
        while k and k not in lines:
            k = k.rpartition(".")[0] if "." in k else k.partition("[")[0] if "[" in k else ""
        problems.append(Problem(file, lines.get(k, 1), key, str(exc)))

    sysd = data["system"]
    system = None
    try:
        if "name" in sysd or "mu" in sysd:
            system = make_system(sysd["name"]) if "name" in sysd else make_system(mu=sysd["mu"])
    except InputError as e:
        add("system.name" if "name" in sysd else "system.mu", e)
    try:
        parse_iso(sysd["epoch"])
    except InputError as e:
        add("system.epoch", e)
    if "issued" in data["mission"]:
        try:
            parse_iso(data["mission"]["issued"])
        except InputError as e:
            add("mission.issued", e)
    specs = {}
    tori = {name for name, entry in data["orbits"].items() if "torus" in entry}
    for name, entry in data["orbits"].items():
        try:
            if name in tori:
                from .tori import spec_for  # lazy: only for tori
                specs[name] = spec_for(system, entry)
            elif "family" not in entry:
                continue                  # said by the schema check: 'family' or 'torus'
            else:
                specs[name] = _spec_for(entry)
        except InputError as e:
            add(f"orbits.{name}.torus" if name in tori else f"orbits.{name}", e)
        if system is not None and isinstance(entry.get("checks"), dict):
            for key, why in plan_problems(system, entry["checks"], sysd["epoch"]):
                add(f"orbits.{name}.checks.{key}", InputError(why))
    known = set(data["orbits"])
    transfers = data.get("transfers", [])
    for i, t in enumerate(transfers):
        for key in ("from", "to"):
            v = t[key]
            if v not in known and not v.startswith("parking "):
                add(f"transfers[{i}].{key}", InputError(
                    f"'{v}' is neither an orbit of this scenario ({', '.join(sorted(known))}) nor "
                    "'parking BODY ALTITUDE'"))
        for v in t.get("via", []):
            if v not in known:
                add(f"transfers[{i}].via", InputError(f"'{v}' is not an orbit of this scenario"))
    objects = known | {t["name"] for t in transfers}
    for i, ex in enumerate(data.get("exports", [])):
        if ex["object"] not in objects:
            add(f"exports[{i}].object", InputError(
                f"'{ex['object']}' is not an orbit or transfer of this scenario ({', '.join(sorted(objects))})"))
        if ex["object"] in known and "span" not in ex:
            add(f"exports[{i}]", InputError("an orbit export needs 'span' (e.g. '3periods')"))
        if ex["format"] == "oem" and ex.get("frame") == "rotating":
            add(f"exports[{i}].frame", InputError(f"OEM needs inertial axes ({' or '.join(INERTIAL_FRAMES)})"))
    fmts = data.get("plots", {}).get("formats", ["png"])
    for f in fmts:
        if f not in SCENARIO_IMAGE_FORMATS:
            add("plots.formats", InputError(f"image format '{f}' is not one of {', '.join(SCENARIO_IMAGE_FORMATS)}"))
    if system is not None and not system.dimensional and (data.get("exports") or transfers):
        add("system", InputError("exports and transfers need a system with dimensional units"))
    _check_values(data, system, add)
    _check_files(data, add)
    if found or problems:
        known = [p.key for p in found]

        def said(key):              # a problem of this key (or of its table) is reported already
            return any(key == k or key.startswith(k + ".") or key.startswith(k + "[") for k in known)
        problems = list(found) + [p for p in problems if not said(p.key)]
        raise ScenarioError(sorted(problems, key=lambda p: (p.line, p.key)))
    sha = hashlib.sha256(text.encode("utf-8")).hexdigest()
    return Plan(path, data, system, sysd["epoch"], specs, sha)


#: Files every run writes, whatever the scenario.
FIXED_FILES = ("orbits.json", "orbits.csv", "checks.csv", "checks.json", "report.html", "manifest.json")
#: Whole-number settings and their allowed ranges.
INT_RANGES = {"best": (1, 100), "workers": (1, MAX_WORKERS)}
#: Quantity keys of orbits, checks, transfers and exports: (dimension, least allowed, rule).
QUANTITY_RULES = {
    "period": ("time", "positive"), **{k: ("length", "positive") for k in LENGTH_TARGETS},
    "x": ("length", "any sign"),
    "min_altitude_smaller": ("length", "zero or more"), "min_altitude_larger": ("length", "zero or more"),
    "max_period": ("time", "positive"), "max_dv": ("velocity", "positive"), "max_tof": ("time", "positive"),
    "step": ("time", "positive"),
}
EXAMPLES = {"length": "'12000km'", "time": "'6.5d'", "velocity": "'1500m/s'"}


def _quantity(key, text, dimension, rule, system, add):
    """The value of a quantity key in the system's units (TU, LU, ...) or None (problem added)."""
    try:
        q = units.parse(text, dimension)
        value = q.nondim(system) if system is not None and system.dimensional else q.value
    except InputError as e:
        add(key, e)
        return None
    ok = q.value > 0 if rule == "positive" else True if rule == "any sign" else q.value >= 0
    if not ok:
        add(key, InputError(f"'{text}' is not allowed; a {dimension} that is {rule} is needed, "
                            f"e.g. {EXAMPLES[dimension]}"))
        return None
    return value


def _check_values(data, system, add):
    """The meaning of each value: signs, ranges, units of each key; parking orbits, caps and
    export options as the run will read them. Every problem goes to ``add``."""
    for name, entry in data["orbits"].items():
        for k, v in entry.items():
            if k in QUANTITY_RULES and isinstance(v, str):
                _quantity(f"orbits.{name}.{k}", v, *QUANTITY_RULES[k], system, add)
        for k, v in (entry.get("checks") or {}).items():
            if k in QUANTITY_RULES and isinstance(v, str):
                _quantity(f"orbits.{name}.checks.{k}", v, *QUANTITY_RULES[k], system, add)
        mx = (entry.get("checks") or {}).get("max_stability_index")
        if isinstance(mx, (int, float)) and not mx > 0:
            add(f"orbits.{name}.checks.max_stability_index",
                InputError(f"{mx!r} is not allowed; a positive number is needed (|index| is at least 1)"))
    for k, v in (data.get("settings") or {}).items():
        _int_range(f"settings.{k}", v, add)
    transfers = data.get("transfers", [])
    for i, t in enumerate(transfers):
        for k in ("max_dv", "max_tof"):
            if k in t:
                _quantity(f"transfers[{i}].{k}", t[k], *QUANTITY_RULES[k], system, add)
        _int_range(f"transfers[{i}].best", t.get("best"), add)
        if t["from"] == t["to"]:
            add(f"transfers[{i}].to", InputError(f"'{shown(t['to'])}' is also where the transfer starts"))
        for k in ("from", "to"):
            if t[k].startswith("parking "):
                _check_parking(f"transfers[{i}].{k}", t[k], system, add, t.get("path") if k == "from" else None)
        if t.get("path") in CR3BP_DEPARTURE_PATHS:    # 'low-energy': scenario.schema says it
            _check_departure_path(f"transfers[{i}].path", t, system, add)
        if "launch_latitude" in t:
            _check_launch_latitude(f"transfers[{i}].launch_latitude", t,
                                   {n for n, e in data["orbits"].items() if "torus" in e}, add)
    exports = data.get("exports", [])
    if not exports or system is None or not system.dimensional:
        return
    orbit_names = set(data["orbits"])
    transfer_names = {t["name"] for t in transfers}
    epoch = data["system"]["epoch"]
    epoch_ok = True
    for i, ex in enumerate(exports):
        key = f"exports[{i}]"
        ok = True
        try:
            frames.resolve_center(system, ex.get("center", "primary"))
        except InputError as e:
            add(f"{key}.center", e)
            ok = False
        try:
            frames.time_system(ex.get("time_system", "tdb"))
        except InputError as e:
            add(f"{key}.time_system", e)
            ok = False
        if ok and epoch_ok:
            try:
                frames.frame(system, epoch, anchor=ex.get("anchor", "ephemeris"),
                             axes=ex.get("frame", "j2000-equator"), center=ex.get("center", "primary"),
                             time_scale=ex.get("time_system", "tdb").upper())
            except InputError as e:
                if "epoch" in str(e).lower() or "ephemeris" in str(e).lower():
                    add("system.epoch", InputError(f"'{shown(epoch)}' cannot anchor the export of "
                                                   f"{key}: {e}"))
                    epoch_ok = False
                else:
                    add(key, e)
        step = _quantity(f"{key}.step", ex.get("step", "10min"), "time", "positive", system, add) \
            if isinstance(ex.get("step", "10min"), str) else None
        if "span" in ex:
            if ex["object"] not in orbit_names:
                if ex["object"] not in transfer_names:
                    continue                  # an unknown object: said above
                add(f"{key}.span", InputError(f"'{shown(ex['span'])}': a transfer export covers the whole "
                                              "transfer; 'span' goes with orbit exports only"))
                continue
            span = _span(f"{key}.span", ex["span"], system, add)
            if span is not None and step is not None and span is not True:
                _samples(key, span, step, ex, add)


def _span(key, text, system, add):
    """A span in TU, ``True`` for a count of periods (checked once the period is known), or None."""
    try:
        if span_periods(text) is not None:
            return True
    except InputError as e:
        add(key, e)
        return None
    return _quantity(key, text, "time", "positive", system, add)


def _samples(key, span_tu, step_tu, ex, add):
    if step_tu > span_tu * (1 + 1e-12):
        add(f"{key}.step", InputError(f"'{shown(ex.get('step', '10min'))}' is longer than the span "
                                      f"'{shown(ex['span'])}'; give a shorter step"))
        return
    n = span_tu / step_tu + 1
    if n > MAX_SAMPLES:
        add(f"{key}.step", InputError(f"'{shown(ex.get('step', '10min'))}' over '{shown(ex['span'])}' gives "
                                      f"{n:.3g} samples, more than {MAX_SAMPLES}; give a larger step"))


def _int_range(key, v, add):
    name = key.rpartition(".")[2]
    if name not in INT_RANGES or not isinstance(v, int) or isinstance(v, bool):
        return
    lo, hi = INT_RANGES[name]
    if not lo <= v <= hi:
        add(key, InputError(f"{v} is outside the allowed range {lo}..{hi}"))


def _check_launch_latitude(key, transfer, tori, add):
    """'launch_latitude': -90..90 degrees, with a 'path' of 'direct' or 'lunar-flyby' (whose checks
    say the rest of the start) whose first leg reaches a periodic orbit."""
    v = transfer["launch_latitude"]
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not -90.0 <= float(v) <= 90.0:
        add(key, InputError(f"{shown(v)} is not a latitude in degrees from -90 to 90"))
        return
    if transfer.get("path") not in CR3BP_DEPARTURE_PATHS:
        add(key, InputError(f"a launch site's latitude bounds a 'direct' or 'lunar-flyby' departure; give "
                            f"path = \"direct\" or \"lunar-flyby\" (this transfer's path: "
                            f"'{shown(transfer.get('path', 'auto'))}')"))
        return
    first = [*transfer.get("via", []), transfer["to"]][0]
    if first in tori:
        add(key, InputError(f"the first leg reaches the torus '{first}': a dated departure to a torus is not "
                            "designed yet (to a periodic orbit it is)"))


def _check_departure_path(key, transfer, system, add):
    """A transfer's 'path' needs 'from' an Earth parking orbit in the earth-moon system."""
    start = str(transfer.get("from", ""))
    parts = start.split()
    if len(parts) >= 2 and parts[0] == "parking" and system is not None \
            and parts[1].lower() not in [n.lower() for n in system.names]:
        return                      # not a primary: said by the parking check
    earth = len(parts) == 3 and parts[0] == "parking" and parts[1].lower() == "earth"
    if not earth or (system is not None and system.name != "earth-moon"):
        where = "" if system is None or system.name == "earth-moon" else f" in {system.name}"
        add(key, InputError(f"path '{shown(transfer['path'])}' is how a transfer leaves an Earth parking orbit "
                            f"in the earth-moon system; this one starts from '{shown(start)}'{where} "
                            "(remove 'path', or start from e.g. 'parking earth 200km')"))


def _check_parking(key, text, system, add, path=None):
    """'parking BODY ALTITUDE': three words, a primary of the system, a positive length, an
    altitude the orbit can have and its departure ``path`` can leave
    (:func:`cr3bp.validate.parking_altitude_km`)."""
    parts = text.split()
    if len(parts) != 3:
        add(key, InputError(f"'{shown(text)}' must read 'parking BODY ALTITUDE', e.g. 'parking earth 200km'"))
        return
    if system is not None:
        names = [n.lower() for n in system.names]
        if parts[1].lower() not in names:
            add(key, InputError(f"body '{shown(parts[1])}' in '{shown(text)}' is not a primary of "
                                f"{system.name}; allowed: {', '.join(names)}"))
            return
    if _quantity(key, parts[2], "length", "positive", system, add) is None or system is None \
            or not system.dimensional:
        return
    try:
        validate.parking_altitude_km(parts[1].lower(), units.parse(parts[2], "length").si(), path)
    except InputError as e:
        add(key, InputError(f"'{shown(text)}': {e}"))


def planned_files(data) -> dict:
    """Every file name a run of ``data`` writes -> the scenario key that makes it.

    Parameters
    ----------
    data : dict
        A checked scenario document (:attr:`Plan.data`).

    Returns
    -------
    dict
        File name -> key.

    Raises
    ------
    KeyError
        A document that was not checked.

    Examples
    --------
    >>> from pathlib import Path
    >>> import cr3bp
    >>> plan = prepare(Path(cr3bp.__file__).parents[1] / "examples" / "farlight.toml")
    >>> "checks.csv" in planned_files(plan.data)
    True

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    fmts = [f for f in data.get("plots", {}).get("formats", ["png"]) if f in SCENARIO_IMAGE_FORMATS]
    plots = data.get("plots", {})
    planned = {}

    def plan(name, key):
        planned.setdefault(name, []).append(key)

    for f in FIXED_FILES:
        plan(f, "(every run)")
    for name in data.get("orbits", {}):
        for flag, default, stem in (("orbits", True, "orbit"), ("hill_regions", False, "hill-region"),
                                    ("families", False, "family")):
            if plots.get(flag, default):
                for f in fmts:
                    plan(f"{stem}-{name}.{f}", f"orbits.{name}")
    for i, t in enumerate(data.get("transfers", [])):
        n = t.get("name")
        for suffix in (".json", "-trajectory.csv", "-maneuvers.csv"):
            plan(f"route-{n}{suffix}", f"transfers[{i}].name")
        if plots.get("corridors", True):
            # departure-NAME: a route that starts with a departure from a parking orbit;
            # pareto-NAME: more than one route found (the names are kept either way)
            for stem in ("corridor", "pareto", "departure"):
                for f in fmts:
                    plan(f"{stem}-{n}.{f}", f"transfers[{i}].name")
    transfers = {t.get("name") for t in data.get("transfers", [])}
    for i, ex in enumerate(data.get("exports", [])):
        name = export_file_name(ex)
        key = f"exports[{i}].file" if "file" in ex else f"exports[{i}].object"
        plan(name, key)
        if ex.get("format") == "csv" and ex.get("object") in transfers:
            plan(name.rpartition(".")[0] + ".maneuvers.csv" if "." in name else name + ".maneuvers.csv", key)
    return planned


def export_file_name(ex) -> str:
    """The file name of one ``[[exports]]`` entry: its ``file`` or ``OBJECT.FORMAT``.

    Parameters
    ----------
    ex : dict
        The entry.

    Returns
    -------
    str
        The file name.

    Raises
    ------
    KeyError
        An entry without ``file`` and without ``object`` or ``format``.

    Examples
    --------
    >>> export_file_name({"object": "relay", "format": "oem"})
    'relay.oem'

    References
    ----------
    CCSDS 502.0-B-3, "Orbit Data Messages" (2023).
    """
    return ex.get("file") or f"{ex['object']}.{ex['format']}"


def _check_files(data, add):
    """Export file names: plain, and no two outputs of one run under one name (case-blind)."""
    for i, ex in enumerate(data.get("exports", [])):
        if "file" in ex:
            f = ex["file"]
            if not FILE_PATTERN.fullmatch(f) or f.lower().endswith(".part"):
                add(f"exports[{i}].file", InputError(f"file name '{shown(f)}' is not allowed; use {FILE_RULE} "
                                                     "(a plain name inside the run folder, not ending in .part)"))
    seen = {}
    for name, keys in planned_files(data).items():
        for key in keys:
            low = name.lower()
            if low in seen and seen[low][1] != key:
                first_name, first_key = seen[low]
                what = "a file every run writes" if first_key == "(every run)" else f"the file of {first_key}"
                add(key, InputError(f"output file '{shown(name)}' would overwrite {what} ('{shown(first_name)}'); "
                                    "give this one another name"))
            seen.setdefault(low, (name, key))


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for chunk in iter(lambda: f.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()






def creation_date(plan: Plan) -> str:
    """The creation date written into the run's files: the scenario's, else now (UTC).

    Parameters
    ----------
    plan : Plan
        The checked scenario.

    Returns
    -------
    str
        ISO 8601 text.

    Raises
    ------
    KeyError
        A plan without its document.

    Examples
    --------
    >>> from pathlib import Path
    >>> import cr3bp
    >>> plan = prepare(Path(cr3bp.__file__).parents[1] / "examples" / "farlight.toml")
    >>> creation_date(plan)
    '2026-12-01T00:00:00'

    References
    ----------
    ISO 8601-1:2019; CCSDS 502.0-B-3, "Orbit Data Messages" (2023) (CREATION_DATE).
    """
    issued = plan.data["mission"].get("issued")
    if issued:
        return issued
    sde = os.environ.get("SOURCE_DATE_EPOCH")
    if sde and sde.isdigit():
        return time.strftime("%Y-%m-%dT%H:%M:%S", time.gmtime(int(sde)))
    return time.strftime("%Y-%m-%dT%H:%M:%S", time.gmtime())


ORBIT_COLUMNS = ["name", "family", "point", "branch", "period_days", "jacobi", "stability_index_1",
                 "stability_index_2", "periodicity_error", "ax_km", "ay_km", "az_km",
                 "closest_larger_km", "closest_smaller_km", "x0_lu", "y0_lu", "z0_lu", "vx0_vu",
                 "vy0_vu", "vz0_vu"]


def orbit_row(name, orbit) -> list:
    """One row of the run's orbit table: name, request, period, Jacobi constant, stability.

    Parameters
    ----------
    name : str
        The scenario's orbit name.
    orbit : PeriodicOrbit
        The solved orbit.

    Returns
    -------
    list
        The row.

    Raises
    ------
    AttributeError
        Not a periodic orbit.

    Examples
    --------
    >>> row = orbit_row("relay", nrho)        # doctest: +SKIP

    References
    ----------
    Szebehely, V., "Theory of Orbits", Academic Press (1967) (the CR3BP and its units).
    """
    d = orbit.to_dict()
    nu = [float(np.real(v)) for v in orbit.stability_indices]
    amp = d.get("amplitude_km") or {}
    close = d.get("closest_approach_km") or {}
    names = orbit.system.names
    return [name, orbit.family, orbit.point, orbit.branch, float(orbit.period_days), float(orbit.jacobi),
            nu[0], nu[1], float(orbit.periodicity_error), amp.get("x"), amp.get("y"), amp.get("z"),
            close.get(names[0]), close.get(names[1])] + [float(v) for v in orbit.state]


@dataclass(frozen=True)
class RunResult:
    """What a run wrote: the folder, the report, the manifest and the results.

    Parameters
    ----------
    folder, report, manifest : pathlib.Path
        The output folder, its HTML report and its manifest.
    orbits : dict
        Name -> PeriodicOrbit.
    checks : dict
        Orbit name -> list of CheckResult.
    routes : dict
        Transfer name -> summary.
    files : tuple of pathlib.Path
        Every file written.
    seconds : float
        Wall time.

    Examples
    --------
    >>> result = cr3bp.run("examples/farlight.toml", out="out")     # doctest: +SKIP
    >>> result.report.name                                           # doctest: +SKIP
    'report.html'

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    folder: Path
    report: Path
    manifest: Path
    orbits: dict
    checks: dict
    routes: dict
    files: tuple
    seconds: float
    reused: bool = False

    def to_dict(self) -> dict:
        return {"folder": str(self.folder), "report": str(self.report), "manifest": str(self.manifest),
                "orbits": {k: v.to_dict() for k, v in self.orbits.items()},
                "checks": {k: [c.to_dict() for c in v] for k, v in self.checks.items()},
                "routes": self.routes, "files": [str(f) for f in self.files], "seconds": self.seconds}




def run(plan: Plan, folder, *, catalog=None, workers=None, scheduler=None, progress=None,
        reduced: bool = False) -> RunResult:
    """Run a checked scenario into ``folder``.

    Parameters
    ----------
    plan : Plan (from :func:`prepare`)
    folder : path of the output folder (created)
    catalog : cr3bp.catalog.Catalog, optional (default: the per-user catalogue)
    workers, scheduler : leg computation in a process pool / on a dask cluster (workers: the
        scenario's ``settings.workers`` when not given)
    progress : callable(str), optional: one line per step
    reduced : smaller samples (tests)

    Returns
    -------
    RunResult
        What was written.

    Raises
    ------
    InputError
        An unusable output folder (:func:`check_output_folder`).
    ScenarioError
        Spans too long once the periods are known, targets outside their family.
    OutputError
        A file cannot be written; the folder is left as it was.

    Examples
    --------
    >>> from pathlib import Path
    >>> import cr3bp
    >>> plan = prepare(Path(cr3bp.__file__).parents[1] / "examples" / "farlight.toml")
    >>> result = run(plan, "out")                 # doctest: +SKIP

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    started = time.time()
    key = run_key(plan.path, reduced=reduced)
    if workers is None:
        workers = (plan.data.get("settings") or {}).get("workers")
    folder = Path(folder)
    catalog = catalog if catalog is not None else Catalog()
    check_output_folder(folder, plan.path, getattr(catalog, "path", None), planned_files(plan.data))

    # ---- orbits -----------------------------------------------------------------------
    # solved before the folder exists: an impossible target is a scenario error (exit 2) and
    # leaves nothing behind
    orbits = solve_orbits(plan, catalog, progress)
    check_spans(plan, orbits)
    # everything is written into a hidden staging folder inside ``folder`` and moved into
    # place at the end: a failure or a full disk part-way leaves the folder as it was
    missing = [p for p in (folder, *folder.parents) if not p.exists()]
    try:
        folder.mkdir(parents=True, exist_ok=True)
        remove_stale_parts(folder)
        stage = Path(tempfile.mkdtemp(prefix=f"{STAGE_PREFIX}{os.getpid()}-", suffix=".part", dir=folder))
    except OSError as e:
        _remove_created(missing)
        raise _output_error(e, folder) from None
    try:
        out = Outputs(stage, figures=catalog if getattr(catalog, "read_only", True) is False else None)
        result = _run_stages(plan, orbits, out, catalog, workers, scheduler, progress, reduced, started,
                             key)
        for name in sorted(os.listdir(stage)):
            os.replace(stage / name, folder / name)
        stage.rmdir()
    except BaseException as e:
        shutil.rmtree(stage, ignore_errors=True)
        _remove_created(missing)
        if isinstance(e, OSError):
            raise _output_error(e, folder) from None
        raise
    report, manifest, checks, routes, seconds = result
    return RunResult(folder, folder / report.name, folder / manifest.name, orbits, checks, routes,
                     tuple(dict.fromkeys([*(folder / p.name for p in out.files), folder / manifest.name])),
                     seconds)


#: Name of the staging folder a run writes into (inside the output folder): prefix PID- ... suffix.
STAGE_PREFIX = ".librate-run-"


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:
        return True
    return True


def remove_stale_parts(folder: Path) -> list:
    """Remove what an interrupted (killed) run left in ``folder``.

    Staging folders of runs whose process is gone and temporary ``.NAME.XXXX.part`` files of
    atomic writes.

    Parameters
    ----------
    folder : str or pathlib.Path
        The output folder.

    Returns
    -------
    list of str
        The names removed.

    Raises
    ------
    OSError
        A leftover that cannot be removed.

    Examples
    --------
    >>> import tempfile
    >>> remove_stale_parts(tempfile.mkdtemp())
    []

    References
    ----------
    IEEE Std 1003.1-2017 (POSIX), ``rename()`` and ``access()``.
    """
    removed = []
    for p in Path(folder).iterdir():
        name = p.name
        if not (name.startswith(".") and name.endswith(".part")):
            continue
        if name.startswith(STAGE_PREFIX) and p.is_dir() and not p.is_symlink():
            pid = name[len(STAGE_PREFIX):].partition("-")[0]
            if pid.isdigit() and int(pid) != os.getpid() and _pid_alive(int(pid)):
                continue                      # another run is writing there now
            shutil.rmtree(p, ignore_errors=True)
            removed.append(name)
        elif p.is_file() or p.is_symlink():
            p.unlink(missing_ok=True)
            removed.append(name)
    return removed


def _remove_created(missing):
    for p in missing:                     # deepest first; only empty folders we made
        try:
            p.rmdir()
        except OSError:
            break


#: OS errors that say the output place is unusable (a bad --out: exit 2); others (disk full,
#: I/O) are an OutputError (exit 1).
_USER_ERRNOS = {errno.EACCES, errno.EPERM, errno.EROFS, errno.ENAMETOOLONG, errno.ENOTDIR,
                errno.EISDIR, errno.EEXIST, errno.ELOOP}


def _output_error(e: OSError, folder):
    what = f"{e.strerror or e}" + (f" ({shown(Path(e.filename).name)})" if e.filename else "")
    text = f"cannot write the results in {shown(folder)}: {what}; nothing was kept"
    return InputError(text) if e.errno in _USER_ERRNOS else OutputError(text)


def check_output_folder(folder, scenario=None, catalog=None, names=()) -> Path:
    """Refuse an output folder a run cannot use, before anything is computed or written.

    Empty, equal to the scenario or the catalogue, an existing file, a name longer than the file
    system allows, under a file, or not writable.

    Parameters
    ----------
    folder : str or pathlib.Path
        The output folder.
    scenario : pathlib.Path
        The scenario file.
    catalog : pathlib.Path, optional
        The catalogue file.
    names : iterable of str, optional
        The files the run writes.

    Returns
    -------
    None

    Raises
    ------
    InputError
        The folder cannot be used (the message names it and why).

    Examples
    --------
    >>> check_output_folder("", Path("a.toml"))
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: ...

    References
    ----------
    IEEE Std 1003.1-2017 (POSIX), ``rename()`` and ``access()``.
    """
    text = os.fspath(folder) if not isinstance(folder, str) else folder
    if not text.strip():
        raise InputError("--out is empty; give the folder for the results, e.g. --out results")
    if not text.isprintable():
        raise InputError(f"--out '{shown(text)}' holds a control character; give a plain folder name")
    folder = Path(text)
    name_max = 255
    for part in folder.parts:
        if len(os.fsencode(part)) > name_max:
            raise InputError(f"--out '{shown(text)}': the name '{shown(part)}' is {len(os.fsencode(part))} "
                             f"bytes long; the file system allows at most {name_max}")
    resolved = folder.resolve()
    for what, other in (("the scenario file", scenario), ("the catalogue", catalog)):
        if other and str(other) != ":memory:" and Path(other).resolve() == resolved:
            raise InputError(f"--out '{shown(text)}' is {what}; give a separate folder for the results")
    if folder.exists() or folder.is_symlink():
        if not folder.is_dir():
            raise InputError(f"--out '{shown(text)}' exists and is not a folder; give a folder "
                             "(new or existing) for the results")
        if not os.access(folder, os.W_OK | os.X_OK):
            raise InputError(f"--out '{shown(text)}' is not writable")
        for name in names:
            if (folder / name).is_dir():
                raise InputError(f"--out '{shown(text)}' holds a folder named '{shown(name)}' where the "
                                 "run writes that file; move it away or choose another --out")
    else:
        anc = resolved.parent
        while not anc.exists() and anc != anc.parent:
            anc = anc.parent
        if not anc.is_dir():
            raise InputError(f"--out '{shown(text)}' cannot be created: '{shown(anc)}' is a file")
        if not os.access(anc, os.W_OK | os.X_OK):
            raise InputError(f"--out '{shown(text)}' cannot be created: '{shown(anc)}' is not writable")
    return folder


def check_spans(plan, orbits) -> None:
    """Refuse spans counted in periods that hold too many samples, now the periods are known.

    Parameters
    ----------
    plan : Plan
        The checked scenario.
    orbits : dict
        Name -> solved PeriodicOrbit.

    Returns
    -------
    None

    Raises
    ------
    ScenarioError
        With FILE:LINE, before anything is written.

    Examples
    --------
    >>> check_spans(plan, orbits)                  # doctest: +SKIP

    References
    ----------
    Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    problems = []
    lines = schema.line_index(schema.read_text(plan.path))

    def add(key, exc):
        k = key
        while k and k not in lines:
            k = k.rpartition(".")[0] if "." in k else ""
        problems.append(Problem(schema.path_text(plan.path), lines.get(k, 1), key, str(exc)))

    system = plan.system
    for i, ex in enumerate(plan.data.get("exports", [])):
        if ex["object"] in orbits and str(ex.get("span", "")).strip().lower().endswith(("period", "periods")):
            try:
                span = export.parse_span(ex["span"], system, _period(orbits[ex["object"]]))
                step = units.time(ex.get("step", "10min"), system)
            except InputError as e:
                add(f"exports[{i}].span", e)
                continue
            _samples(f"exports[{i}]", span, step, ex, add)
    if problems:
        raise ScenarioError(problems)


def _period(obj) -> float:
    """A periodic orbit's period, or a torus's stroboscopic time (TU): what 'Nperiods' counts."""
    from .tori import is_torus  # lazy: only for tori
    return float(obj.stroboscopic_time if is_torus(obj) else obj.period)


def _row(name, obj) -> list:
    from .tori import is_torus, orbit_row as torus_row  # lazy: only for tori
    return torus_row(name, obj) if is_torus(obj) else orbit_row(name, obj)


def _run_stages(plan, orbits, out, catalog, workers, scheduler, progress, reduced, started, key):
    """Write every output of the run into ``out`` (the staging folder)."""
    system = plan.system
    created = creation_date(plan)
    formats = plan.data.get("plots", {}).get("formats", ["png"])
    plots = plan.data.get("plots", {})
    write_text(out.path("orbits.json"), json_text({"system": system.to_dict(), "caution": CAUTION,
                                               "orbits": {k: v.to_dict() for k, v in orbits.items()}}))
    notes = [f"librate {__version__}: orbits of scenario {plan.name}",
             "lengths km, times days, states nondimensional (rotating, barycentric); circular "
             "restricted three-body model"]
    from .tori import is_torus  # lazy: only for tori
    if any(is_torus(o) for o in orbits.values()):
        notes.append("a torus's row: period_days is its stroboscopic period, stability_index_1 the "
                     "stability index of its discretised stroboscopic map, periodicity_error its "
                     "invariance error, the state the first point of its invariance circle")
    write_text(out.path("orbits.csv"), csv_text(ORBIT_COLUMNS, [_row(k, v) for k, v in orbits.items()],
                                            notes))

    # ---- checks -----------------------------------------------------------------------
    from . import tori as _tori  # lazy: only for tori
    samples = {name: (_tori.surface_states(o, reduced) if is_torus(o) else
                      sample(o, 1000 if reduced else 4000)) for name, o in orbits.items()}
    checks = {}
    for name, entry in plan.data["orbits"].items():
        if entry.get("checks"):
            say(progress, f"checks on '{name}'")
            if is_torus(orbits[name]):
                checks[name] = _tori.run_checks(orbits[name], entry["checks"], samples[name],
                                                plan.epoch, _tori.phase_rad(entry), reduced)
                continue
            checks[name] = run_checks(orbits[name], entry["checks"], samples[name], epoch=plan.epoch,
                                      phase_deg=float(entry.get("phase_deg", 0.0)))
    rows = [[name, c.name, c.required, c.actual, c.margin, c.unit, "pass" if c.passed else "FAIL"]
            for name, cs in checks.items() for c in cs]
    write_text(out.path("checks.csv"), csv_text(["orbit", "check", "required", "actual", "margin", "unit", "result"],
                                            rows, [f"librate {__version__}: constraint checks of {plan.name}"]))
    write_text(out.path("checks.json"), json_text({"caution": CAUTION, "checks": {
        k: [c.to_dict() for c in v] for k, v in checks.items()}}))

    # ---- transfers --------------------------------------------------------------------
    routes, stitched = {}, {}
    if plan.data.get("transfers"):
        routes, stitched, transfer_figures = design_transfers(
            plan, orbits, out, catalog=catalog, workers=workers, scheduler=scheduler,
            progress=progress, reduced=reduced)

    if routes and plan.epoch is not None:      # eclipses along each stitched route at the epoch
        for name in routes:
            sec = route_section(stitched.get(name), plan.epoch)
            if sec is not None:
                routes[name]["eclipses"] = sec

    # ---- exports ----------------------------------------------------------------------
    exports = []
    for i, ex in enumerate(plan.data.get("exports", [])):
        path, man = _export(plan, ex, orbits, stitched, out, created)
        exports.append({"object": ex["object"], "format": ex["format"], "file": path.name,
                        "frame": ex.get("frame", "j2000-equator"), "center": ex.get("center", "primary"),
                        "time_system": ex.get("time_system", "tdb").upper(),
                        "anchor": ex.get("anchor", "ephemeris"), "maneuvers": man})
        say(progress, f"export {path.name}")
        if dv_warning(man):
            say(progress, f"{path.name}: {dv_warning(man)}")
    if routes:     # the route tables again, now with the exported Δv beside the design's
        for name in routes:
            write_route_tables(plan, name, routes[name], out, stitched[name],
                               [e for e in exports if e["object"] == name])

    # ---- figures ----------------------------------------------------------------------
    figures = _figures(plan, orbits, samples, out, formats, plots, catalog, reduced, progress)
    figures.update(eclipse_figures(plan, orbits, out, formats))
    if plan.data.get("transfers"):
        figures.update(transfer_figures)

    # ---- report and manifest ----------------------------------------------------------
    report = write_report(plan, orbits, checks, routes, exports, figures, out, stitched)
    seconds = time.time() - started
    manifest = _manifest(plan, out, seconds, {"key": key, "routes": routes})
    return report, manifest, checks, routes, seconds


def solve_orbits(plan, catalog, progress=None) -> dict:
    """Every orbit of the plan (from the catalogue when there).

    Parameters
    ----------
    plan : Plan
        The checked scenario.
    catalog : Catalog
        The catalogue.
    progress : callable(str), optional
        One line per step.

    Returns
    -------
    dict
        Name -> PeriodicOrbit.

    Raises
    ------
    ScenarioError
        A target outside its family, naming the file, line and key, with the range the family
        covers.

    Examples
    --------
    >>> orbits = solve_orbits(plan, catalog)       # doctest: +SKIP

    References
    ----------
    Howell, K. C., "Three-dimensional, periodic, 'halo' orbits", Celestial Mechanics 32, 53
    (1984) (continuation of families, from memory).
    """
    lines = schema.line_index(schema.read_text(plan.path))
    orbits = {}
    for name, spec in plan.orbit_specs.items():
        if "torus" in plan.data["orbits"][name]:
            from .tori import solve  # lazy: only for tori
            text = plan.data["orbits"][name]["torus"]
            say(progress, f"torus '{name}': {text}")
            try:
                orbits[name] = solve(plan.system, spec, catalog=catalog)
            except NoSolutionError as e:
                key = f"orbits.{name}.torus"
                raise ScenarioError([Problem(str(plan.path), lines.get(key, lines.get(f"orbits.{name}", 1)),
                                             key, f"impossible torus: {e}")]) from None
            continue
        say(progress, f"orbit '{name}': {spec.family} {spec.point} {spec.branch} {spec.key}={spec.value}")
        try:
            orbits[name] = solve_request(plan.system, spec, catalog=catalog, progress=None)
            note = places_note(orbits[name].to_dict())
            if note:
                say(progress, f"note: orbit '{name}': {note}")
        except NoSolutionError as e:
            key = f"orbits.{name}.{spec.key}"
            raise ScenarioError([Problem(str(plan.path), lines.get(key, lines.get(f"orbits.{name}", 1)),
                                         key, f"impossible target: {e}")]) from None
    return orbits


def _export(plan, ex, orbits, stitched, out, created):
    system = plan.system
    fmt = ex["format"]
    suffix = {"oem": "oem", "csv": "csv", "json": "json"}[fmt]
    name = ex.get("file") or f"{ex['object']}.{suffix}"
    if "/" in name or name.startswith("."):
        raise InputError(f"export file name '{name}' must be a plain file name inside the run folder")
    ts = ex.get("time_system", "tdb").upper()
    spec = frames.frame(system, plan.epoch, anchor=ex.get("anchor", "ephemeris"),
                        axes=ex.get("frame", "j2000-equator"), center=ex.get("center", "primary"),
                        time_scale=ts)
    q = units.parse(ex.get("step", "10min"), "time")
    step_s = q.nondim(system) * system.time_s if q.unit == "TU" else q.si()
    model = {"scenario": plan.name, "scenario sha256": plan.sha256}
    from .tori import export_trajectory, is_torus  # lazy: only for tori
    if ex["object"] in orbits and is_torus(orbits[ex["object"]]):
        traj = export_trajectory(plan, orbits[ex["object"]], plan.data["orbits"][ex["object"]], ex,
                                 spec, ts, step_s, model, ex["object"])
    elif ex["object"] in orbits:
        orbit = orbits[ex["object"]]
        span_tu = export.parse_span(ex["span"], system, float(orbit.period))
        grid = export.epoch_grid(spec, ts, span_tu, step_s)
        seg = export.sample(system, orbit, grid)
        model.update({"orbit": f"{orbit.family} {orbit.point} {orbit.branch}".strip(),
                      "period": f"{orbit.period!r} TU = {orbit.period_days:.9f} d",
                      "jacobi": repr(float(orbit.jacobi))})
        traj = export.Trajectory(spec, (seg,), ts, (), ex["object"].upper(), "NONE", model)
    else:
        traj = transfer_trajectory(plan, stitched[ex["object"]], spec, ts, step_s, ex, model)
    path = out.path(name)
    export.write(path, traj, fmt, creation_date=created)
    if fmt == "csv" and traj.maneuvers:
        out.files.append(export.maneuvers_path(path))
    return path, export.maneuver_table(traj)


def _figures(plan, orbits, samples, out, formats, plots, catalog, reduced, progress) -> dict:
    from ..plotting.orbits import plot_orbit  # lazy: heavy library (matplotlib, via cr3bp.plotting.orbits)
    from .tori import figure as torus_figure, is_torus  # lazy: only for tori
    figs = {}
    for name, orbit in orbits.items():
        if is_torus(orbit) and plots.get("orbits", True):
            say(progress, f"figure: torus '{name}'")
            fig = torus_figure(plan, name, orbit, samples[name])
            figs[f"orbit-{name}"] = save_figures(
                fig, out, f"orbit-{name}", formats,
                f"{plan.name}: torus '{name}' (trajectories of its invariance circle's points over one "
                "stroboscopic period), rotating frame of the circular restricted three-body model.")
        elif plots.get("orbits", True):
            say(progress, f"figure: orbit '{name}'")
            fig = plot_orbit(orbit, samples[name])
            figs[f"orbit-{name}"] = save_figures(fig, out, f"orbit-{name}", formats,
                                              f"{plan.name}: orbit '{name}' over one period.")
        if plots.get("hill_regions", False):
            from ..plotting.energy import default_view, plot_hill_region  # lazy: heavy library (matplotlib, via cr3bp.plotting.energy)
            region = hill_region(orbit.system, float(orbit.jacobi), resolution=201 if reduced else 601,
                                 view=default_view(orbit.system, orbit.point))
            ax = plot_hill_region(region)
            figs[f"hill-{name}"] = save_figures(ax.figure, out, f"hill-region-{name}", formats,
                                             f"{plan.name}: Hill region at the Jacobi constant of '{name}'.")
        if plots.get("families", False) and not is_torus(orbit):
            fam = catalog.load_family(orbit.system, orbit.family, orbit.point, orbit.branch)
            if fam and fam.get("members"):
                from ..plotting.orbits import plot_family  # lazy: heavy library (matplotlib, via cr3bp.plotting.orbits)
                members = fam["members"]
                pick = np.unique(np.linspace(0, len(members) - 1, min(len(members), 12 if reduced else 40))
                                 .round().astype(int))
                trajs = [propagate(orbit.system, members[k]["state"], members[k]["period"],
                                   t_eval=np.linspace(0, members[k]["period"], 300)).states for k in pick]
                fig = plot_family(orbit.system, trajs, [members[k]["jacobi"] for k in pick],
                                  title=f"{orbit.family} {orbit.point} {orbit.branch} family (catalogued members)")
                figs[f"family-{name}"] = save_figures(fig, out, f"family-{name}", formats,
                                                   f"{plan.name}: the family of '{name}'.")
    return figs




def _manifest(plan, out, seconds, reuse) -> Path:
    outputs = []
    for p in sorted(set(out.files)):
        if p.exists():
            outputs.append({"file": p.name, "sha256": _sha256(p), "bytes": p.stat().st_size})
    manifest = {
        "tool": "librate", "version": __version__,
        "scenario": {"file": str(plan.path), "sha256": plan.sha256},
        "inputs": [{"file": str(plan.path), "sha256": plan.sha256}],
        "outputs": outputs,
        "run_seconds": round(seconds, 3),
        # what a later run of the same scenario, code and packages reads back instead of
        # recomputing (scenario/reuse.py)
        "reuse": reuse,
        "finished_utc": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime()),
        "caution": CAUTION,
    }
    path = out.folder / "manifest.json"
    write_text(path, json_text(manifest))
    return path
