"""The orbit catalogue: computed families (and later transfer legs) kept in SQLite.

A family is keyed by (system, family, point, branch, settings): the same request with the
same settings reads back what was computed instead of recomputing it. Members are written in
their own transactions as they converge, so a run interrupted midway keeps the members
already computed and resumes from them. SQLite's write-ahead log and a busy timeout let two
processes write at once without corrupting the file (SQLite documentation, "Write-Ahead
Logging"; common practice).

The default path is ``$LIBRATE_CATALOG`` if set, else ``~/.local/share/librate/catalog.sqlite``.
"""

from __future__ import annotations

import functools
import hashlib
import json
import math
import os
import sqlite3
import time
from pathlib import Path
from urllib.parse import quote

from .errors import InputError, LibrateError
from .io.plain import json_default
from .transfers.leg import Leg

SCHEMA_VERSION = 1
BUSY_TIMEOUT_S = 30.0

_SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS families (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    system TEXT NOT NULL,
    mu REAL NOT NULL,
    family TEXT NOT NULL,
    point TEXT NOT NULL,
    branch TEXT NOT NULL,
    settings TEXT NOT NULL,
    settings_hash TEXT NOT NULL,
    complete INTEGER NOT NULL DEFAULT 0,
    bifurcations TEXT NOT NULL DEFAULT '[]',
    created REAL NOT NULL,
    updated REAL NOT NULL,
    UNIQUE (system, mu, family, point, branch, settings_hash)
);
CREATE TABLE IF NOT EXISTS members (
    family_id INTEGER NOT NULL REFERENCES families(id) ON DELETE CASCADE,
    idx INTEGER NOT NULL,
    data TEXT NOT NULL,
    PRIMARY KEY (family_id, idx)
);
CREATE TABLE IF NOT EXISTS legs (
    key TEXT PRIMARY KEY,
    system TEXT NOT NULL,
    data TEXT NOT NULL,
    created REAL NOT NULL
);
"""

#: The files of drawn figures by content key (:func:`cr3bp.plotting.fingerprint.fingerprint`)
#: and format; made when first written, so catalogues of the same schema version made before
#: it stay readable. Only the :data:`FIGURES_KEPT` most recently used are kept.
_FIGURES = """
CREATE TABLE IF NOT EXISTS figures (
    key TEXT NOT NULL,
    format TEXT NOT NULL,
    data BLOB NOT NULL,
    used REAL NOT NULL,
    PRIMARY KEY (key, format)
)"""
FIGURES_KEPT = 400


def default_path() -> Path:
    """The default catalogue file.

    ``$LIBRATE_CATALOG`` if set, else ``~/.local/share/librate/catalog.sqlite`` (the XDG data
    folder; common practice).

    Returns
    -------
    pathlib.Path

    Raises
    ------
    None

    References
    ----------
    .. [1] SQLite documentation, "Write-Ahead Logging" and "The SQLite Database File Format"
       (the store and its concurrent writers; common practice).
    .. [2] freedesktop.org, "XDG Base Directory Specification" (the data folder; from memory).

    Examples
    --------
    >>> import os
    >>> from cr3bp.catalog import default_path
    >>> before = os.environ.get("LIBRATE_CATALOG")
    >>> os.environ["LIBRATE_CATALOG"] = "/tmp/cat.sqlite"
    >>> str(default_path())
    '/tmp/cat.sqlite'
    >>> _ = os.environ.pop("LIBRATE_CATALOG")
    >>> os.environ.update({} if before is None else {"LIBRATE_CATALOG": before})
    """
    env = os.environ.get("LIBRATE_CATALOG")
    if env:
        return Path(env)
    return Path.home() / ".local" / "share" / "librate" / "catalog.sqlite"


def settings_hash(settings: dict) -> str:
    """A stable hash of JSON-serialisable settings (key order does not matter).

    The first 16 hexadecimal digits of the SHA-256 of the settings' canonical JSON.

    Parameters
    ----------
    settings : dict

    Returns
    -------
    str

    Raises
    ------
    TypeError
        A value JSON cannot hold.

    References
    ----------
    .. [1] NIST, FIPS 180-4, *Secure Hash Standard*, 2015 (SHA-256).

    Examples
    --------
    >>> from cr3bp.catalog import settings_hash
    >>> settings_hash({"a": 1, "b": 2}) == settings_hash({"b": 2, "a": 1})
    True
    """
    text = json.dumps(settings, sort_keys=True, separators=(",", ":"), default=json_default)
    return hashlib.sha256(text.encode()).hexdigest()[:16]


def _dumps(obj) -> str:
    return json.dumps(obj, sort_keys=True, default=json_default, allow_nan=True)


def _system_key(system) -> tuple[str, float]:
    return system.name, float(system.mu)


def _looks_like_sqlite(p: Path) -> bool:
    try:
        with open(p, "rb") as f:
            return f.read(16) == b"SQLite format 3\x00"
    except OSError:
        return True        # unreadable: let SQLite say so


def _is_read_only_problem(e) -> bool:
    t = str(e).lower()
    return "readonly" in t or "read-only" in t or "unable to open" in t


def _guarded(fn):
    """Map SQLite and JSON failures inside a catalogue call to one-line librate errors: a damaged
    file or member (InputError, status 2), a read-only catalogue asked to write (InputError),
    a full disk (CatalogWriteError, status 1; the transaction is rolled back, so the catalogue
    keeps what it held)."""

    @functools.wraps(fn)
    def call(self, *a, **kw):
        try:
            return fn(self, *a, **kw)
        except sqlite3.DatabaseError as e:
            t = str(e).lower()
            if "full" in t:
                raise CatalogWriteError(f"cannot write to the catalogue {self.path}: the disk is full "
                                        "(nothing of this write was kept; the catalogue is intact)") from None
            if _is_read_only_problem(e):
                raise InputError(f"the catalogue {self.path} is read-only; it can be read but not "
                                 "written (give another --catalog)") from None
            raise InputError(f"the catalogue {self.path} is damaged ({e}); move it aside or give "
                             "another --catalog") from None
        except (json.JSONDecodeError, UnicodeDecodeError, TypeError, KeyError) as e:
            raise InputError(f"the catalogue {self.path} holds a record that is not librate data "
                             f"({type(e).__name__}); move it aside or give another --catalog") from None
    return call


class CatalogWriteError(LibrateError):
    """The catalogue could not be written (a full disk): exit status 1, the file intact.

    References
    ----------
    .. [1] SQLite documentation, "Write-Ahead Logging" and "The SQLite Database File Format"
       (the store and its concurrent writers; common practice).

    Examples
    --------
    >>> from cr3bp.catalog import CatalogWriteError
    >>> from cr3bp.errors import LibrateError
    >>> issubclass(CatalogWriteError, LibrateError)
    True
    """


class Catalog:
    """SQLite store of computed families and legs.

    Parameters
    ----------
    path : str or Path, optional
        Database file; default :func:`default_path`. Parent folders are created.

    Raises
    ------
    InputError
        An empty path, a folder, a file that is not a librate catalogue, or a catalogue of
        another schema version.

    References
    ----------
    .. [1] SQLite documentation, "Write-Ahead Logging" and "The SQLite Database File Format"
       (the store and its concurrent writers; common practice).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> cat = Catalog(":memory:")
    >>> fid = cat.begin_family(system("earth-moon"), "halo", "L2", "south", {"step": 1e-3})
    >>> cat.add_members(fid, [{"index": 0, "state": [1.18, 0, -0.004, 0, -0.156, 0], "period": 3.4}])
    >>> cat.finish_family(fid, [])
    >>> len(cat.family(fid)["members"])
    1
    """

    def __init__(self, path=None):
        self.path = str(path) if path is not None else str(default_path())
        self.read_only = False
        if self.path != ":memory:":
            p = Path(self.path)
            if not self.path.strip():
                raise InputError("the catalogue path is empty; give a file path")
            if p.exists() and p.is_dir():
                raise InputError(f"catalogue path {self.path} is a folder; give a file path")
            if not p.exists():
                try:
                    p.parent.mkdir(parents=True, exist_ok=True)
                except OSError as e:
                    raise InputError(f"cannot create the catalogue folder {p.parent}: {e.strerror}") from None
                if not os.access(p.parent, os.W_OK | os.X_OK):
                    raise InputError(f"cannot create the catalogue {self.path}: its folder is not writable")
            elif p.is_file() and p.stat().st_size and not _looks_like_sqlite(p):
                raise InputError(f"{self.path} is not a librate catalogue (not an SQLite file)")
        try:
            self._open_read_write()
        except sqlite3.DatabaseError as e:
            if self.path == ":memory:" or not _is_read_only_problem(e):
                raise InputError(f"{self.path} is not a librate catalogue ({e})") from None
            self._open_read_only()
            try:
                self._check_version()
            except InputError:
                self._db.close()
                raise

    def _open_read_write(self):
        self._db = sqlite3.connect(self.path, timeout=BUSY_TIMEOUT_S, isolation_level=None)
        try:
            self._db.execute("PRAGMA foreign_keys = ON")
            existing = self._has_tables()
            if existing:
                self._check_version()          # a catalogue of another version is not touched
            if self.path != ":memory:":
                self._db.execute("PRAGMA journal_mode = WAL")
            if not existing:
                self._db.executescript(_SCHEMA)
                self._db.execute("INSERT OR IGNORE INTO meta VALUES ('schema_version', ?)",
                                 (str(SCHEMA_VERSION),))
        except (sqlite3.DatabaseError, InputError):
            self._db.close()
            raise

    def _open_read_only(self):
        """A catalogue in a read-only file or folder: read it (writes give a one-line refusal)."""
        uri = "file:" + quote(str(Path(self.path).resolve()))
        last = None
        for query in ("?mode=ro", "?mode=ro&immutable=1"):
            try:
                self._db = sqlite3.connect(uri + query, uri=True, timeout=BUSY_TIMEOUT_S, isolation_level=None)
                if not self._has_tables():
                    raise InputError(f"{self.path} is not a librate catalogue (no tables) and is read-only")
                self.read_only = True
                return
            except sqlite3.DatabaseError as e:
                last = e
        raise InputError(f"cannot read the catalogue {self.path} ({last})") from None

    def _has_tables(self) -> bool:
        names = {r[0] for r in self._db.execute("SELECT name FROM sqlite_master WHERE type='table'")}
        if names and "meta" not in names:
            raise InputError(f"{self.path} is an SQLite file but not a librate catalogue (no meta table)")
        return {"meta", "families", "members", "legs"} <= names

    def _check_version(self):
        try:
            row = self._db.execute("SELECT value FROM meta WHERE key='schema_version'").fetchone()
        except sqlite3.DatabaseError as e:
            raise InputError(f"{self.path} is not a librate catalogue ({e})") from None
        if row is None or str(row[0]) != str(SCHEMA_VERSION):
            found = "none" if row is None else repr(str(row[0]))[:40]
            raise InputError(f"catalogue {self.path} has schema version {found}; this librate reads "
                             f"version {SCHEMA_VERSION} (use another --catalog file)")

    def close(self):
        self._db.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    # ---- families --------------------------------------------------------------------
    @_guarded
    def begin_family(self, system, family: str, point: str, branch: str, settings: dict) -> int:
        """Id of the family with this key and settings, creating it if new."""
        name, mu = _system_key(system)
        h = settings_hash(settings)
        now = time.time()
        with self._tx():
            self._db.execute(
                "INSERT OR IGNORE INTO families (system, mu, family, point, branch, settings, "
                "settings_hash, created, updated) VALUES (?,?,?,?,?,?,?,?,?)",
                (name, mu, family, point or "", branch or "", _dumps(settings), h, now, now))
            row = self._db.execute(
                "SELECT id FROM families WHERE system=? AND mu=? AND family=? AND point=? AND branch=? "
                "AND settings_hash=?", (name, mu, family, point or "", branch or "", h)).fetchone()
        return int(row[0])

    @_guarded
    def add_members(self, family_id: int, members: list[dict]) -> None:
        """Store members (idempotent on their ``index``) in one transaction."""
        rows = []
        for m in members:
            if "index" not in m:
                raise InputError("every catalogue member needs an 'index'")
            rows.append((int(family_id), int(m["index"]), _dumps(m)))
        with self._tx():
            self._db.executemany("INSERT OR REPLACE INTO members (family_id, idx, data) VALUES (?,?,?)", rows)
            self._db.execute("UPDATE families SET updated=? WHERE id=?", (time.time(), int(family_id)))

    @_guarded
    def finish_family(self, family_id: int, bifurcations: list[dict], complete: bool = True) -> None:
        with self._tx():
            self._db.execute("UPDATE families SET bifurcations=?, complete=?, updated=? WHERE id=?",
                             (_dumps(list(bifurcations)), 1 if complete else 0, time.time(), int(family_id)))

    @_guarded
    def load_family(self, system, family: str, point: str, branch: str, settings: dict | None = None):
        """The stored family as a dict, or None. Without ``settings``: the most recently updated
        complete one (else the most recent incomplete one)."""
        name, mu = _system_key(system)
        q = ("SELECT id, settings, complete, bifurcations, updated FROM families WHERE system=? AND mu=? "
             "AND family=? AND point=? AND branch=?")
        args = [name, mu, family, point or "", branch or ""]
        if settings is not None:
            q += " AND settings_hash=?"
            args.append(settings_hash(settings))
        q += " ORDER BY complete DESC, updated DESC LIMIT 1"
        row = self._db.execute(q, args).fetchone()
        if row is None:
            return None
        return self._family_dict(row[0])

    @_guarded
    def family(self, family_id: int) -> dict:
        row = self._db.execute("SELECT id FROM families WHERE id=?", (int(family_id),)).fetchone()
        if row is None:
            raise InputError(f"no family with id {family_id} in the catalogue {self.path}")
        return self._family_dict(int(family_id))

    def _family_dict(self, fid: int) -> dict:
        r = self._db.execute(
            "SELECT id, system, mu, family, point, branch, settings, complete, bifurcations, created, "
            "updated FROM families WHERE id=?", (fid,)).fetchone()
        members = [json.loads(d) for (d,) in self._db.execute(
            "SELECT data FROM members WHERE family_id=? ORDER BY idx", (fid,))]
        return {"id": r[0], "system": r[1], "mu": r[2], "family": r[3], "point": r[4], "branch": r[5],
                "settings": json.loads(r[6]), "complete": bool(r[7]), "bifurcations": json.loads(r[8]),
                "created": r[9], "updated": r[10], "members": members}

    @_guarded
    def list_families(self) -> list[dict]:
        rows = self._db.execute(
            "SELECT f.id, f.system, f.mu, f.family, f.point, f.branch, f.complete, f.updated, "
            "(SELECT COUNT(*) FROM members m WHERE m.family_id = f.id) FROM families f ORDER BY f.id").fetchall()
        return [{"id": r[0], "system": r[1], "mu": r[2], "family": r[3], "point": r[4], "branch": r[5],
                 "complete": bool(r[6]), "updated": r[7], "members": r[8]} for r in rows]

    @_guarded
    def remove_family(self, family_id: int) -> None:
        with self._tx():
            cur = self._db.execute("DELETE FROM families WHERE id=?", (int(family_id),))
            if cur.rowcount == 0:
                raise InputError(f"no family with id {family_id} in the catalogue {self.path}")

    # ---- legs (transfer graph) ---------------------------------------------------------
    @_guarded
    def put_leg(self, key: str, system, leg) -> None:
        """Store one :class:`cr3bp.transfers.leg.Leg` under ``key`` (as its leg record, JSON)."""
        with self._tx():
            self._db.execute("INSERT OR REPLACE INTO legs (key, system, data, created) VALUES (?,?,?,?)",
                             (key, system.name, _dumps(_leg_record(leg)), time.time()))

    @_guarded
    def put_legs(self, items) -> None:
        """Store many ``(key, system, leg)`` legs in one transaction (one disk sync); each
        :class:`cr3bp.transfers.leg.Leg` is stored as its leg record (JSON)."""
        now = time.time()
        with self._tx():
            self._db.executemany("INSERT OR REPLACE INTO legs (key, system, data, created) VALUES (?,?,?,?)",
                                 [(k, sys_.name, _dumps(_leg_record(d)), now) for k, sys_, d in items])

    @_guarded
    def get_leg(self, key: str, system=None):
        """The :class:`cr3bp.transfers.leg.Leg` stored under ``key`` (None: none), read from its
        leg record (:meth:`cr3bp.transfers.leg.Leg.from_record`; a damaged record raises
        RecordError naming the key); ``system`` is the system it belongs to."""
        row = self._db.execute("SELECT data FROM legs WHERE key=?", (key,)).fetchone()
        if row is None:
            return None
        return Leg.from_record(json.loads(row[0]), system)

    @_guarded
    def count_legs(self) -> int:
        return int(self._db.execute("SELECT COUNT(*) FROM legs").fetchone()[0])

    # ---- figures (the files of a figure, reused by a rerun that would draw it again) ------
    @_guarded
    def get_figure(self, key: str, fmt: str) -> bytes | None:
        """The stored file of figure ``key`` in format ``fmt`` (``png``, ``svg``, ``pdf``), or
        None. A catalogue that never stored a figure has no table yet: None."""
        names = {r[0] for r in self._db.execute("SELECT name FROM sqlite_master WHERE type='table'")}
        if "figures" not in names:
            return None
        row = self._db.execute("SELECT data FROM figures WHERE key=? AND format=?", (key, fmt)).fetchone()
        if row is None:
            return None
        if not self.read_only:
            with self._tx():
                self._db.execute("UPDATE figures SET used=? WHERE key=? AND format=?",
                                 (time.time(), key, fmt))
        return bytes(row[0])

    @_guarded
    def put_figure(self, key: str, fmt: str, data: bytes) -> None:
        """Store the file of figure ``key`` in format ``fmt``; keeps the
        :data:`FIGURES_KEPT` most recently used files."""
        with self._tx():
            self._db.execute(_FIGURES)
            self._db.execute("INSERT OR REPLACE INTO figures (key, format, data, used) VALUES (?,?,?,?)",
                             (key, fmt, sqlite3.Binary(data), time.time()))
            self._db.execute("DELETE FROM figures WHERE rowid NOT IN (SELECT rowid FROM figures "
                             "ORDER BY used DESC LIMIT ?)", (FIGURES_KEPT,))

    # ---- internals ---------------------------------------------------------------------
    def _tx(self):
        return _Transaction(self._db)


class _Transaction:
    """BEGIN IMMEDIATE ... COMMIT, rolled back on error (writers queue on the busy timeout)."""

    def __init__(self, db):
        self.db = db

    def __enter__(self):
        self.db.execute("BEGIN IMMEDIATE")
        return self.db

    def __exit__(self, exc_type, exc, tb):
        if exc_type is None:
            self.db.execute("COMMIT")
        elif self.db.in_transaction:      # SQLite may have rolled back already (a full disk)
            try:
                self.db.execute("ROLLBACK")
            except sqlite3.DatabaseError:
                pass
        return False


def finite_or_none(v):
    """A non-finite float as None (JSON has no NaN in strict readers); anything else unchanged.

    Parameters
    ----------
    v : object

    Returns
    -------
    object

    Raises
    ------
    None

    References
    ----------
    .. [1] T. Bray (ed.), RFC 8259, *The JavaScript Object Notation (JSON) Data Interchange
       Format*, 2017 (numbers exclude NaN and infinity).

    Examples
    --------
    >>> from cr3bp.catalog import finite_or_none
    >>> finite_or_none(float("nan")), finite_or_none(2.5)
    (None, 2.5)
    """
    return None if (isinstance(v, float) and not math.isfinite(v)) else v


def _leg_record(leg) -> dict:
    """The stored form of a leg: its leg record (a plain dict is stored as it is)."""
    return leg.record() if hasattr(leg, "record") else leg
