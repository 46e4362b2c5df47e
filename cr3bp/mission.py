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

import hashlib
import json
import os
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from . import __version__, scenario_schema
from .atomic import write_text
from .cautions import CAUTION
from .errors import InputError
from .scenario_schema import Problem, ScenarioError

TARGET_KEYS = ("period", "jacobi", "ax", "ay", "az", "perilune", "perigee", "resonance")


@dataclass(frozen=True)
class Plan:
    """A checked scenario: what to compute, nothing computed yet."""

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
    folder: Path
    files: list = field(default_factory=list)

    def path(self, name: str) -> Path:
        p = self.folder / name
        self.files.append(p)
        return p


def _spec_for(entry: dict):
    from .orbits.request import spec_from_options
    target = {k: entry[k] for k in TARGET_KEYS if k in entry}
    if "perigee" in target:
        raise InputError("target 'perigee' is not offered yet; use perilune, period, jacobi or an amplitude")
    target = {k: (str(v) if not isinstance(v, str) else v) for k, v in target.items()}
    res = entry.get("resonant")
    return spec_from_options(entry["family"], entry.get("point"), entry.get("branch") or None,
                             resonance_family=res, occurrence=entry.get("occurrence"), **target)


def prepare(path) -> Plan:
    """Read and check a scenario: the schema (file, line, key), then the meaning of each value
    (system, epoch, orbit requests, references between sections). Raises ScenarioError listing
    every problem; nothing is computed or written."""
    from . import system as make_system
    from .timescales import parse_iso
    path = Path(path)
    data = scenario_schema.load(path)
    lines = scenario_schema.line_index(path.read_text(encoding="utf-8"))
    problems = []
    file = str(path)

    def add(key, exc):
        k = key
        while k and k not in lines:
            k = k.rpartition(".")[0]
        problems.append(Problem(file, lines.get(k, 1), key, str(exc)))

    sysd = data["system"]
    system = None
    try:
        system = make_system(sysd["name"]) if "name" in sysd else make_system(mu=sysd["mu"])
    except InputError as e:
        add("system.name" if "name" in sysd else "system.mu", e)
    try:
        parse_iso(sysd["epoch"])
    except InputError as e:
        add("system.epoch", e)
    specs = {}
    for name, entry in data["orbits"].items():
        try:
            specs[name] = _spec_for(entry)
        except InputError as e:
            add(f"orbits.{name}", e)
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
            add(f"exports[{i}].frame", InputError("OEM needs inertial axes (j2000-equator or j2000-ecliptic)"))
    fmts = data.get("plots", {}).get("formats", ["png"])
    for f in fmts:
        if f not in ("png", "svg"):
            add("plots.formats", InputError(f"image format '{f}' is not one of png, svg"))
    if system is not None and not system.dimensional and (data.get("exports") or transfers):
        add("system", InputError("exports and transfers need a system with dimensional units"))
    if problems:
        raise ScenarioError(sorted(problems, key=lambda p: (p.line, p.key)))
    sha = hashlib.sha256(path.read_bytes()).hexdigest()
    return Plan(path, data, system, sysd["epoch"], specs, sha)


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for chunk in iter(lambda: f.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def _json(obj) -> str:
    from .plain import json_default
    return json.dumps(obj, indent=2, sort_keys=True, default=json_default) + "\n"


def _csv(headers, rows, comments=()) -> str:
    import csv
    import io
    from .cautions import caution_lines
    buf = io.StringIO()
    for c in list(comments) + caution_lines():
        buf.write(f"# {c}\n")
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(headers)
    for r in rows:
        w.writerow([repr(float(v)) if isinstance(v, (float, np.floating)) else v for v in r])
    return buf.getvalue()


def creation_date(plan: Plan) -> str:
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
    folder: Path
    report: Path
    manifest: Path
    orbits: dict
    checks: dict
    routes: dict
    files: tuple
    seconds: float

    def to_dict(self) -> dict:
        return {"folder": str(self.folder), "report": str(self.report), "manifest": str(self.manifest),
                "orbits": {k: v.to_dict() for k, v in self.orbits.items()},
                "checks": {k: [c.to_dict() for c in v] for k, v in self.checks.items()},
                "routes": self.routes, "files": [str(f) for f in self.files], "seconds": self.seconds}


def _say(progress, text):
    if progress is not None:
        progress(text)


def run(plan: Plan, folder, *, catalog=None, workers=None, scheduler=None, progress=None,
        reduced: bool = False) -> RunResult:
    """Run a checked scenario into ``folder``.

    Parameters
    ----------
    plan : Plan (from :func:`prepare`)
    folder : path of the output folder (created)
    catalog : cr3bp.catalog.Catalog, optional (default: the per-user catalogue)
    workers, scheduler : leg computation in a process pool / on a dask cluster
    progress : callable(str), optional: one line per step
    reduced : smaller samples (tests)
    """
    from .catalog import Catalog
    started = time.time()
    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise InputError(f"--out {folder} exists and is not a folder")
    catalog = catalog if catalog is not None else Catalog()
    system = plan.system
    created = creation_date(plan)
    formats = plan.data.get("plots", {}).get("formats", ["png"])
    plots = plan.data.get("plots", {})

    # ---- orbits -----------------------------------------------------------------------
    # solved before the folder exists: an impossible target is a scenario error (exit 2) and
    # leaves nothing behind
    orbits = solve_orbits(plan, catalog, progress)
    folder.mkdir(parents=True, exist_ok=True)
    out = Outputs(folder)
    write_text(out.path("orbits.json"), _json({"system": system.to_dict(), "caution": CAUTION,
                                               "orbits": {k: v.to_dict() for k, v in orbits.items()}}))
    write_text(out.path("orbits.csv"), _csv(ORBIT_COLUMNS, [orbit_row(k, v) for k, v in orbits.items()],
                                            [f"librate {__version__}: orbits of scenario {plan.name}",
                                             "lengths km, times days, states nondimensional (rotating, barycentric)"]))

    # ---- checks -----------------------------------------------------------------------
    from .checks import run_checks, sample
    samples = {name: sample(o, 1000 if reduced else 4000) for name, o in orbits.items()}
    checks = {}
    for name, entry in plan.data["orbits"].items():
        if entry.get("checks"):
            _say(progress, f"checks on '{name}'")
            checks[name] = run_checks(orbits[name], entry["checks"], samples[name])
    rows = [[name, c.name, c.required, c.actual, c.margin, c.unit, "pass" if c.passed else "FAIL"]
            for name, cs in checks.items() for c in cs]
    write_text(out.path("checks.csv"), _csv(["orbit", "check", "required", "actual", "margin", "unit", "result"],
                                            rows, [f"librate {__version__}: constraint checks of {plan.name}"]))
    write_text(out.path("checks.json"), _json({"caution": CAUTION, "checks": {
        k: [c.to_dict() for c in v] for k, v in checks.items()}}))

    # ---- transfers --------------------------------------------------------------------
    routes, stitched = {}, {}
    if plan.data.get("transfers"):
        from .mission_transfers import design_transfers
        routes, stitched = design_transfers(plan, orbits, out, catalog=catalog, workers=workers,
                                            scheduler=scheduler, progress=progress, reduced=reduced)

    # ---- exports ----------------------------------------------------------------------
    exports = []
    for i, ex in enumerate(plan.data.get("exports", [])):
        path = _export(plan, ex, orbits, stitched, out, created)
        exports.append({"object": ex["object"], "format": ex["format"], "file": path.name,
                        "frame": ex.get("frame", "j2000-equator"), "center": ex.get("center", "primary"),
                        "time_system": ex.get("time_system", "tdb").upper(),
                        "anchor": ex.get("anchor", "ephemeris")})
        _say(progress, f"export {path.name}")

    # ---- figures ----------------------------------------------------------------------
    figures = _figures(plan, orbits, samples, out, formats, plots, catalog, reduced, progress)
    if plan.data.get("transfers"):
        figures.update(design_transfers.figures)

    # ---- report and manifest ----------------------------------------------------------
    from .mission_report import write_report
    report = write_report(plan, orbits, checks, routes, exports, figures, out)
    seconds = time.time() - started
    manifest = _manifest(plan, out, seconds)
    return RunResult(folder, report, manifest, orbits, checks, routes, tuple(out.files), seconds)


def solve_orbits(plan, catalog, progress=None) -> dict:
    """Every orbit of the plan; a target outside its family becomes a ScenarioError naming the
    file, line and key, with the range the family covers."""
    from .errors import NoSolutionError
    from .mission_report import places_note
    from .orbits.request import solve_request
    lines = scenario_schema.line_index(plan.path.read_text(encoding="utf-8"))
    orbits = {}
    for name, spec in plan.orbit_specs.items():
        _say(progress, f"orbit '{name}': {spec.family} {spec.point} {spec.branch} {spec.key}={spec.value}")
        try:
            orbits[name] = solve_request(plan.system, spec, catalog=catalog, progress=None)
            note = places_note(orbits[name].to_dict())
            if note:
                _say(progress, f"note: orbit '{name}': {note}")
        except NoSolutionError as e:
            key = f"orbits.{name}.{spec.key}"
            raise ScenarioError([Problem(str(plan.path), lines.get(key, lines.get(f"orbits.{name}", 1)),
                                         key, f"impossible target: {e}")]) from None
    return orbits


def _export(plan, ex, orbits, stitched, out, created):
    from . import export, frames, units
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
    if ex["object"] in orbits:
        orbit = orbits[ex["object"]]
        span_tu = export.parse_span(ex["span"], system, float(orbit.period))
        grid = export.epoch_grid(spec, ts, span_tu, step_s)
        seg = export.sample(system, orbit, grid)
        model.update({"orbit": f"{orbit.family} {orbit.point} {orbit.branch}".strip(),
                      "period": f"{orbit.period!r} TU = {orbit.period_days:.9f} d",
                      "jacobi": repr(float(orbit.jacobi))})
        traj = export.Trajectory(spec, (seg,), ts, (), ex["object"].upper(), "NONE", model)
    else:
        from .mission_transfers import transfer_trajectory
        traj = transfer_trajectory(plan, stitched[ex["object"]], spec, ts, step_s, ex, model)
    path = out.path(name)
    export.write(path, traj, fmt, creation_date=created)
    if fmt == "csv" and traj.maneuvers:
        out.files.append(export.maneuvers_path(path))
    return path


def _figures(plan, orbits, samples, out, formats, plots, catalog, reduced, progress) -> dict:
    from .plotting import save
    from .plotting.orbits import plot_orbit
    figs = {}
    for name, orbit in orbits.items():
        if plots.get("orbits", True):
            _say(progress, f"figure: orbit '{name}'")
            fig = plot_orbit(orbit, samples[name])
            figs[f"orbit-{name}"] = _save_all(fig, out, f"orbit-{name}", formats,
                                              f"{plan.name}: orbit '{name}' over one period.")
        if plots.get("hill_regions", False):
            from .energy import hill_region
            from .plotting.energy import default_view, plot_hill_region
            region = hill_region(orbit.system, float(orbit.jacobi), resolution=201 if reduced else 601,
                                 view=default_view(orbit.system, orbit.point))
            ax = plot_hill_region(region)
            figs[f"hill-{name}"] = _save_all(ax.figure, out, f"hill-region-{name}", formats,
                                             f"{plan.name}: Hill region at the Jacobi constant of '{name}'.")
        if plots.get("families", False):
            fam = catalog.load_family(orbit.system, orbit.family, orbit.point, orbit.branch)
            if fam and fam.get("members"):
                from .integrate import propagate
                from .plotting.orbits import plot_family
                members = fam["members"]
                pick = np.unique(np.linspace(0, len(members) - 1, min(len(members), 12 if reduced else 40))
                                 .round().astype(int))
                trajs = [propagate(orbit.system, members[k]["state"], members[k]["period"],
                                   t_eval=np.linspace(0, members[k]["period"], 300)).states for k in pick]
                fig = plot_family(orbit.system, trajs, [members[k]["jacobi"] for k in pick],
                                  title=f"{orbit.family} {orbit.point} {orbit.branch} family (catalogued members)")
                figs[f"family-{name}"] = _save_all(fig, out, f"family-{name}", formats,
                                                   f"{plan.name}: the family of '{name}'.")
    return figs


def _save_all(fig, out, stem, formats, caption):
    """Save ``fig`` in every format (SVG without a date, for reproducible files); the PNG path."""
    import matplotlib.pyplot as plt
    from .atomic import save_figure
    from .plotting.base import caption as add_caption
    add_caption(fig, caption)
    first = None
    for f in formats:
        p = out.path(f"{stem}.{f}")
        save_figure(fig, p, dpi=130, metadata={"Date": None} if f == "svg" else None)
        first = first or p
    plt.close(fig)
    return {"path": first, "caption": caption}


def _manifest(plan, out, seconds) -> Path:
    from . import __version__ as version
    outputs = []
    for p in sorted(set(out.files)):
        if p.exists():
            outputs.append({"file": p.name, "sha256": _sha256(p), "bytes": p.stat().st_size})
    manifest = {
        "tool": "librate", "version": version,
        "scenario": {"file": str(plan.path), "sha256": plan.sha256},
        "inputs": [{"file": str(plan.path), "sha256": plan.sha256}],
        "outputs": outputs,
        "run_seconds": round(seconds, 3),
        "finished_utc": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime()),
        "caution": CAUTION,
    }
    path = out.folder / "manifest.json"
    write_text(path, _json(manifest))
    return path
