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

import hashlib
import json
import math
import os
import sqlite3
import time
from pathlib import Path

from .errors import InputError
from .plain import json_default

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


def default_path() -> Path:
    env = os.environ.get("LIBRATE_CATALOG")
    if env:
        return Path(env)
    return Path.home() / ".local" / "share" / "librate" / "catalog.sqlite"


def settings_hash(settings: dict) -> str:
    """A stable hash of JSON-serialisable settings (key order does not matter)."""
    text = json.dumps(settings, sort_keys=True, separators=(",", ":"), default=json_default)
    return hashlib.sha256(text.encode()).hexdigest()[:16]


def _dumps(obj) -> str:
    return json.dumps(obj, sort_keys=True, default=json_default, allow_nan=True)


def _system_key(system) -> tuple[str, float]:
    return system.name, float(system.mu)


class Catalog:
    """SQLite store of computed families and legs.

    Parameters
    ----------
    path : str or Path, optional
        Database file; default :func:`default_path`. Parent folders are created.

    Examples
    --------
    >>> cat = Catalog(":memory:")                       # doctest: +SKIP
    >>> fid = cat.begin_family(system, "halo", "L2", "south", {"step": 1e-3})
    >>> cat.add_members(fid, [{"index": 0, "state": [...], "period": 3.4}])
    """

    def __init__(self, path=None):
        self.path = str(path) if path is not None else str(default_path())
        if self.path != ":memory:":
            p = Path(self.path)
            if p.exists() and p.is_dir():
                raise InputError(f"catalogue path {self.path} is a folder; give a file path")
            try:
                p.parent.mkdir(parents=True, exist_ok=True)
            except OSError as e:
                raise InputError(f"cannot create the catalogue folder {p.parent}: {e.strerror}") from None
        try:
            self._db = sqlite3.connect(self.path, timeout=BUSY_TIMEOUT_S, isolation_level=None)
            self._db.execute("PRAGMA foreign_keys = ON")
            if self.path != ":memory:":
                self._db.execute("PRAGMA journal_mode = WAL")
            self._db.executescript(_SCHEMA)
            self._db.execute("INSERT OR IGNORE INTO meta VALUES ('schema_version', ?)", (str(SCHEMA_VERSION),))
        except sqlite3.DatabaseError as e:
            raise InputError(f"{self.path} is not a librate catalogue ({e})") from None

    def close(self):
        self._db.close()

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    # ---- families --------------------------------------------------------------------
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

    def finish_family(self, family_id: int, bifurcations: list[dict], complete: bool = True) -> None:
        with self._tx():
            self._db.execute("UPDATE families SET bifurcations=?, complete=?, updated=? WHERE id=?",
                             (_dumps(list(bifurcations)), 1 if complete else 0, time.time(), int(family_id)))

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

    def list_families(self) -> list[dict]:
        rows = self._db.execute(
            "SELECT f.id, f.system, f.mu, f.family, f.point, f.branch, f.complete, f.updated, "
            "(SELECT COUNT(*) FROM members m WHERE m.family_id = f.id) FROM families f ORDER BY f.id").fetchall()
        return [{"id": r[0], "system": r[1], "mu": r[2], "family": r[3], "point": r[4], "branch": r[5],
                 "complete": bool(r[6]), "updated": r[7], "members": r[8]} for r in rows]

    def remove_family(self, family_id: int) -> None:
        with self._tx():
            cur = self._db.execute("DELETE FROM families WHERE id=?", (int(family_id),))
            if cur.rowcount == 0:
                raise InputError(f"no family with id {family_id} in the catalogue {self.path}")

    # ---- legs (transfer graph) ---------------------------------------------------------
    def put_leg(self, key: str, system, data: dict) -> None:
        with self._tx():
            self._db.execute("INSERT OR REPLACE INTO legs (key, system, data, created) VALUES (?,?,?,?)",
                             (key, system.name, _dumps(data), time.time()))

    def put_legs(self, items) -> None:
        """Store many ``(key, system, data)`` legs in one transaction (one disk sync)."""
        now = time.time()
        with self._tx():
            self._db.executemany("INSERT OR REPLACE INTO legs (key, system, data, created) VALUES (?,?,?,?)",
                                 [(k, sys_.name, _dumps(d), now) for k, sys_, d in items])

    def get_leg(self, key: str):
        row = self._db.execute("SELECT data FROM legs WHERE key=?", (key,)).fetchone()
        return None if row is None else json.loads(row[0])

    def count_legs(self) -> int:
        return int(self._db.execute("SELECT COUNT(*) FROM legs").fetchone()[0])

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
        self.db.execute("ROLLBACK" if exc_type else "COMMIT")
        return False


def finite_or_none(v):
    """JSON has no NaN in strict readers: store non-finite floats as None."""
    return None if (isinstance(v, float) and not math.isfinite(v)) else v
