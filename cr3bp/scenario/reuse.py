"""Reuse of a finished run: an unchanged scenario run again into the same folder.

A scenario run is a pure function of the scenario file, the code of :mod:`cr3bp`, the data
files it ships and the versions of the packages it runs on (results are byte-identical whatever
the worker count, the scheduler or the catalogue's content: tested). The manifest of a run
records a *run key*, a SHA-256 hash of all of these. A later run of the same scenario into the
same folder whose key is equal, and whose every listed output file is still there with the
SHA-256 the manifest recorded, has nothing to compute: it reports the stored results instead of
recomputing them and writes nothing. Any difference (one byte of the scenario, of the code, of a
package version, of an output file) runs everything again.

This module is light on purpose (standard library only): the check must cost less than the
imports a run needs.
"""

from __future__ import annotations

import hashlib
import json
import time
from dataclasses import dataclass
from pathlib import Path

__all__ = ["RUN_PACKAGES", "run_key", "reusable", "try_reuse", "ReusedRun", "StoredOrbit", "StoredCheck"]

#: Distributions whose versions enter the run key (the run-time dependencies of pyproject.toml;
#: a test keeps the two equal).
RUN_PACKAGES = ("numpy", "scipy", "matplotlib", "networkx", "numba", "skyfield-data", "plotly")

#: Version of the key's recipe: change it when what enters the key changes.
KEY_RECIPE = "1"

_code_digest: str | None = None


def code_digest() -> str:
    """SHA-256 of every ``.py`` file of :mod:`cr3bp` and every file of the project's ``data/``
    folder, with their relative paths; computed once per process.

    Returns
    -------
    str
        64 hexadecimal digits.

    Raises
    ------
    OSError
        A source file cannot be read.

    Examples
    --------
    >>> len(code_digest())
    64

    References
    ----------
    .. [1] NIST FIPS 180-4, *Secure Hash Standard*, 2015 (SHA-256).
    """
    global _code_digest
    if _code_digest is None:
        h = hashlib.sha256()
        pkg = Path(__file__).resolve().parent.parent
        files = [(p, p.relative_to(pkg.parent)) for p in sorted(pkg.rglob("*.py"))]
        data = pkg.parent / "data"
        if data.is_dir():
            files += [(p, p.relative_to(pkg.parent)) for p in sorted(data.rglob("*"))
                      if p.is_file() and "__pycache__" not in p.parts]
        for p, rel in files:
            h.update(str(rel).encode())
            h.update(b"\0")
            h.update(p.read_bytes())
            h.update(b"\0")
        _code_digest = h.hexdigest()
    return _code_digest


def _versions() -> str:
    from importlib import metadata  # lazy: a few ms, only when a run is started
    out = []
    for name in RUN_PACKAGES:
        try:
            out.append(f"{name}={metadata.version(name)}")
        except metadata.PackageNotFoundError:
            out.append(f"{name}=absent")
    return ";".join(out)


def run_key(scenario, *, reduced: bool = False) -> str:
    """The key of a run of ``scenario``: SHA-256 of the scenario's name and bytes, :func:`code_digest`,
    the run-time packages' versions and the sampling (``reduced``).

    Parameters
    ----------
    scenario : str or pathlib.Path
        The scenario file.
    reduced : bool, optional
        Smaller samples (tests).

    Returns
    -------
    str
        64 hexadecimal digits.

    Raises
    ------
    OSError
        The scenario cannot be read.

    Examples
    --------
    >>> from pathlib import Path
    >>> import cr3bp
    >>> demo = Path(cr3bp.__file__).parents[1] / "examples" / "farlight.toml"
    >>> run_key(demo) == run_key(demo) != run_key(demo, reduced=True)
    True

    References
    ----------
    .. [1] NIST FIPS 180-4, *Secure Hash Standard*, 2015 (SHA-256).
    """
    h = hashlib.sha256(f"librate run key {KEY_RECIPE}\0".encode())
    h.update(str(Path(scenario)).encode() + b"\0")   # the report and manifest name the file
    h.update(Path(scenario).read_bytes())
    h.update(b"\0" + code_digest().encode() + b"\0" + _versions().encode())
    h.update(b"\0reduced" if reduced else b"\0full")
    return h.hexdigest()


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for chunk in iter(lambda: f.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def reusable(folder, key: str) -> dict | None:
    """The manifest of the run in ``folder`` when it can stand for a new run with ``key``.

    It can when the manifest records the same run key and every output it lists is in the
    folder with the recorded size and SHA-256. Anything else (no folder, no manifest, a damaged
    manifest, another key, a file missing or changed) gives None: run again.

    Parameters
    ----------
    folder : str or pathlib.Path
        The output folder.
    key : str
        :func:`run_key` of the new run.

    Returns
    -------
    dict or None
        The manifest, or None.

    Raises
    ------
    None

    Examples
    --------
    >>> reusable("no-such-folder", "0" * 64) is None
    True

    References
    ----------
    Common practice (a build is skipped when its inputs' hashes are unchanged).
    """
    folder = Path(folder)
    try:
        manifest = json.loads((folder / "manifest.json").read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    reuse = manifest.get("reuse") if isinstance(manifest, dict) else None
    if not isinstance(reuse, dict) or reuse.get("key") != key:
        return None
    outputs = manifest.get("outputs")
    if not isinstance(outputs, list) or not outputs:
        return None
    for entry in outputs:
        try:
            p = folder / entry["file"]
            if Path(entry["file"]).name != entry["file"] or not p.is_file():
                return None
            if p.stat().st_size != entry["bytes"] or _sha256(p) != entry["sha256"]:
                return None
        except (KeyError, TypeError, OSError):
            return None
    return manifest


@dataclass(frozen=True)
class StoredOrbit:
    """An orbit of a reused run, as its run stored it (``orbits.json``).

    Parameters
    ----------
    name : str
        The scenario's name for the orbit.
    record : dict
        Its stored description (what ``to_dict()`` of the computed orbit gave).

    Examples
    --------
    >>> StoredOrbit("relay", {"family": "halo"}).to_dict()
    {'family': 'halo'}

    References
    ----------
    Common practice.
    """

    name: str
    record: dict

    def to_dict(self) -> dict:
        """The stored description.

        Returns
        -------
        dict
            A copy of the record.

        Raises
        ------
        None

        Examples
        --------
        >>> StoredOrbit("a", {"x": 1}).to_dict()
        {'x': 1}

        References
        ----------
        Common practice.
        """
        return json.loads(json.dumps(self.record))

    def __repr__(self) -> str:
        r = self.record
        return (f"StoredOrbit({self.name!r}: {r.get('family', '?')} {r.get('point', '')} "
                f"{r.get('branch', '')}, stored by an earlier run)").replace("  ", " ")


@dataclass(frozen=True)
class StoredCheck:
    """A constraint check of a reused run, as its run stored it (``checks.json``).

    Parameters
    ----------
    name, description : str
        The check and what it measures.
    required, actual, margin : float
        The limit, the value, how far inside the limit (negative: outside).
    unit : str
        Unit of the three numbers.
    passed : bool
        Whether the constraint is met.

    Examples
    --------
    >>> StoredCheck("max_period", "period", 10.0, 6.5, 3.5, "d", True).passed
    True

    References
    ----------
    Common practice.
    """

    name: str
    description: str
    required: float
    actual: float
    margin: float
    unit: str
    passed: bool

    def to_dict(self) -> dict:
        """The stored record.

        Returns
        -------
        dict
            Keys as in ``checks.json``.

        Raises
        ------
        None

        Examples
        --------
        >>> StoredCheck("a", "b", 1.0, 2.0, 1.0, "km", True).to_dict()["actual"]
        2.0

        References
        ----------
        Common practice.
        """
        return {"actual": self.actual, "description": self.description, "margin": self.margin,
                "name": self.name, "passed": self.passed, "required": self.required, "unit": self.unit}


@dataclass(frozen=True)
class ReusedRun:
    """A run that computed nothing: the stored results of an earlier run of the same scenario,
    code and packages into the same folder (see the module's text). Same attributes as
    :class:`cr3bp.scenario.run.RunResult`, plus ``finished_utc`` of the run it reuses.

    Parameters
    ----------
    folder, report, manifest : pathlib.Path
        The output folder, its report and its manifest.
    orbits : dict
        Name -> :class:`StoredOrbit`.
    checks : dict
        Orbit name -> list of :class:`StoredCheck`.
    routes : dict
        The transfers' records, as the run stored them.
    files : tuple of pathlib.Path
        Every file of the run (each verified by its SHA-256).
    seconds : float
        Time this call took.
    finished_utc : str
        When the reused run finished (ISO 8601).

    Examples
    --------
    >>> try_reuse("no-such.toml", "no-such-folder") is None
    True

    References
    ----------
    Common practice.
    """

    folder: Path
    report: Path
    manifest: Path
    orbits: dict
    checks: dict
    routes: dict
    files: tuple
    seconds: float
    finished_utc: str
    reused: bool = True

    def to_dict(self) -> dict:
        """The same keys as a computed run's ``to_dict()``, plus ``reused`` and ``finished_utc``.

        Returns
        -------
        dict

        Raises
        ------
        None

        Examples
        --------
        >>> r = ReusedRun(Path("o"), Path("o/report.html"), Path("o/manifest.json"), {}, {}, {},
        ...               (), 0.1, "2031-01-01T00:00:00Z")
        >>> r.to_dict()["reused"]
        True

        References
        ----------
        Common practice.
        """
        return {"folder": str(self.folder), "report": str(self.report), "manifest": str(self.manifest),
                "orbits": {k: v.to_dict() for k, v in self.orbits.items()},
                "checks": {k: [c.to_dict() for c in v] for k, v in self.checks.items()},
                "routes": self.routes, "files": [str(f) for f in self.files], "seconds": self.seconds,
                "reused": True, "finished_utc": self.finished_utc}


def try_reuse(scenario, folder, *, reduced: bool = False) -> ReusedRun | None:
    """The earlier run of ``scenario`` in ``folder`` if nothing it depends on changed, else None.

    Reads and hashes only: writes nothing. A scenario that cannot be read gives None (the
    normal run then reports it).

    Parameters
    ----------
    scenario : str or pathlib.Path
        The scenario file.
    folder : str or pathlib.Path
        The output folder of the new run.
    reduced : bool, optional
        Smaller samples (tests).

    Returns
    -------
    ReusedRun or None

    Raises
    ------
    None

    Examples
    --------
    >>> try_reuse("no-such.toml", "out") is None
    True

    References
    ----------
    Common practice (a build is skipped when its inputs' hashes are unchanged).
    """
    started = time.perf_counter()
    try:
        key = run_key(scenario, reduced=reduced)
    except OSError:
        return None
    folder = Path(folder)
    manifest = reusable(folder, key)
    if manifest is None:
        return None
    try:
        orbits = json.loads((folder / "orbits.json").read_text(encoding="utf-8"))["orbits"]
        checks = json.loads((folder / "checks.json").read_text(encoding="utf-8"))["checks"]
        checks = {k: [StoredCheck(**{f: c[f] for f in StoredCheck.__dataclass_fields__}) for c in v]
                  for k, v in checks.items()}
    except (OSError, ValueError, KeyError, TypeError):
        return None
    files = tuple(folder / e["file"] for e in manifest["outputs"] if e["file"] != "manifest.json")
    return ReusedRun(folder, folder / "report.html", folder / "manifest.json",
                     {k: StoredOrbit(k, v) for k, v in orbits.items()}, checks,
                     manifest["reuse"].get("routes", {}), files + (folder / "manifest.json",),
                     time.perf_counter() - started, str(manifest.get("finished_utc", "")))
