"""Tori and torus families in the orbit catalogue (:class:`cr3bp.catalog.Catalog`).

A torus is kept as a one-member catalogue family named ``"torus"`` keyed by the system, the
point and the request that produced it (its settings: the request's words and values in
nondimensional units, and :data:`RECIPE`); a family of tori as a family named ``"torus
family"`` keyed by its start torus (a digest of its circle, stroboscopic time and rotation),
the held quantity and the step settings, one member per torus, written as each converges
together with the continuation's state after it (the tangent and the next step), so that a
later call asking for more members goes on from the last stored one exactly as an
uninterrupted run would have. Every float goes through JSON as ``repr`` and comes back
bit for bit. No new catalogue tables: the families/members tables hold these records.
"""

from __future__ import annotations

import hashlib

import numpy as np

from .torus import Torus
from ..io.plain import plain
from ..threads import serial

#: Version of the torus numerics the records were computed with; a record of another version
#: is recomputed (it is keyed by this number).
RECIPE = 2
TORUS = "torus"
TORUS_FAMILY = "torus family"

_FIELDS = ("stroboscopic_time", "rotation", "jacobi", "jacobi_spread", "invariance_error",
           "invariance_tolerance", "family", "point", "branch", "around", "amplitude_lu",
           "holds", "iterations", "stability", "extra")


def _plain(v):
    return plain(v)


def record(t: Torus) -> dict:
    """Everything needed to rebuild ``t`` (:func:`from_record`), JSON-ready.

    Parameters
    ----------
    t : Torus

    Returns
    -------
    dict
        Plain values only (lists, floats, strings), the circle as a nested list.

    Raises
    ------
    AttributeError
        ``t`` is not a :class:`Torus`.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> u = np.tile([0.8369, 0, 0, 0, 0, 0], (5, 1)) + 1e-3 * np.eye(5, 6)  # a hand-made circle
    >>> t = Torus(system=em, circle=u, stroboscopic_time=2.7, rotation=0.3, jacobi=3.18,
    ...           jacobi_spread=0.0, invariance_error=0.0, point="L1")
    >>> from cr3bp.tori.store import record
    >>> rec = record(t)
    >>> rec["stroboscopic_time"], len(rec["circle"])
    (2.7, 5)

    References
    ----------
    Common practice (a content-keyed cache; floats through JSON by ``repr``, exact round trip).
    """
    d = {k: _plain(getattr(t, k)) for k in _FIELDS}
    d["circle"] = np.asarray(t.circle).tolist()
    d["closest_approach_lu"] = [float(v) for v in t.closest_approach_lu]
    d["extent_lu"] = {k: [float(a) for a in v] for k, v in t.extent_lu.items()}
    return d


def from_record(system, d: dict) -> Torus:
    """The :class:`Torus` a :func:`record` describes, in ``system``.

    Parameters
    ----------
    system : System
    d : dict
        A :func:`record`.

    Returns
    -------
    Torus
        Bit for bit the torus recorded.

    Raises
    ------
    KeyError
        A field of the record is missing.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> u = np.tile([0.8369, 0, 0, 0, 0, 0], (5, 1)) + 1e-3 * np.eye(5, 6)  # a hand-made circle
    >>> t = Torus(system=em, circle=u, stroboscopic_time=2.7, rotation=0.3, jacobi=3.18,
    ...           jacobi_spread=0.0, invariance_error=0.0, point="L1")
    >>> from cr3bp.tori.store import from_record, record
    >>> back = from_record(em, record(t))
    >>> bool((back.circle == t.circle).all()), back.rotation == t.rotation
    (True, True)

    References
    ----------
    Common practice (a content-keyed cache; floats through JSON by ``repr``, exact round trip).
    """
    kw = {k: d[k] for k in _FIELDS}
    return Torus(system=system, circle=np.array(d["circle"], dtype=float),
                 closest_approach_lu=tuple(d["closest_approach_lu"]),
                 extent_lu={k: tuple(v) for k, v in d["extent_lu"].items()}, **kw)


def digest(t: Torus) -> str:
    """A short digest of a torus's unknowns (circle, T, rho): the key of families from it.

    Parameters
    ----------
    t : Torus

    Returns
    -------
    str
        24 hexadecimal digits of the SHA-256 of the circle, T and rho.

    Raises
    ------
    AttributeError
        ``t`` is not a :class:`Torus`.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> u = np.tile([0.8369, 0, 0, 0, 0, 0], (5, 1)) + 1e-3 * np.eye(5, 6)  # a hand-made circle
    >>> t = Torus(system=em, circle=u, stroboscopic_time=2.7, rotation=0.3, jacobi=3.18,
    ...           jacobi_spread=0.0, invariance_error=0.0, point="L1")
    >>> from cr3bp.tori.store import digest
    >>> len(digest(t)), digest(t) == digest(t)
    (24, True)

    References
    ----------
    SHA-256: FIPS PUB 180-4 (NIST, 2015).
    """
    h = hashlib.sha256()
    h.update(np.ascontiguousarray(t.circle, dtype=float).tobytes())
    h.update(np.array([t.stroboscopic_time, t.rotation], dtype=float).tobytes())
    return h.hexdigest()[:24]


def load_torus(catalog, system, point: str, request: dict):
    """The catalogued torus for this request, or None.

    Parameters
    ----------
    catalog : cr3bp.catalog.Catalog or None
    system : System
    point : str
        The point of the torus ("L1", ...).
    request : dict
        The request's words and values (nondimensional), the key.

    Returns
    -------
    Torus or None
        None without a catalogue or a complete record.

    Raises
    ------
    sqlite3.Error
        The catalogue cannot be read.

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.catalog import Catalog
    >>> from cr3bp.tori.store import load_torus
    >>> load_torus(Catalog(":memory:"), system("earth-moon"), "L1", {"kind": "test"}) is None
    True

    References
    ----------
    Common practice (a content-keyed cache; floats through JSON by ``repr``, exact round trip).
    """
    if catalog is None:
        return None
    rec = catalog.load_family(system, TORUS, point, "", {"request": request, "recipe": RECIPE})
    if rec is None or not rec.get("complete") or not rec.get("members"):
        return None
    return from_record(system, rec["members"][0]["torus"])


def save_torus(catalog, system, point: str, request: dict, t: Torus) -> None:
    """Keep ``t`` as the answer to this request (a read-only catalogue is left as it is).

    Parameters
    ----------
    catalog : cr3bp.catalog.Catalog or None
        Nothing is kept without one.
    system : System
    point : str
    request : dict
        The key (see :func:`load_torus`).
    t : Torus

    Returns
    -------
    None

    Raises
    ------
    sqlite3.Error
        The catalogue cannot be written.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> u = np.tile([0.8369, 0, 0, 0, 0, 0], (5, 1)) + 1e-3 * np.eye(5, 6)  # a hand-made circle
    >>> t = Torus(system=em, circle=u, stroboscopic_time=2.7, rotation=0.3, jacobi=3.18,
    ...           jacobi_spread=0.0, invariance_error=0.0, point="L1")
    >>> from cr3bp.catalog import Catalog
    >>> from cr3bp.tori.store import load_torus, save_torus
    >>> cat = Catalog(":memory:")
    >>> save_torus(cat, em, "L1", {"kind": "test"}, t)
    >>> load_torus(cat, em, "L1", {"kind": "test"}).rotation
    0.3

    References
    ----------
    Common practice (a content-keyed cache; floats through JSON by ``repr``, exact round trip).
    """
    if catalog is None or getattr(catalog, "read_only", False):
        return
    fid = catalog.begin_family(system, TORUS, point, "", {"request": request, "recipe": RECIPE})
    catalog.add_members(fid, [{"index": 0, "torus": record(t)}])
    catalog.finish_family(fid, [], complete=True)


def cached_torus(catalog, system, point: str, request: dict, compute):
    """The catalogued torus for ``request``, else ``compute()`` stored and returned.

    Parameters
    ----------
    catalog : cr3bp.catalog.Catalog or None
    system : System
    point : str
    request : dict
        The key (see :func:`load_torus`).
    compute : callable() -> Torus
        Called only when the catalogue has no answer.

    Returns
    -------
    Torus

    Raises
    ------
    NoSolutionError, ConvergenceError
        From ``compute``.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> u = np.tile([0.8369, 0, 0, 0, 0, 0], (5, 1)) + 1e-3 * np.eye(5, 6)  # a hand-made circle
    >>> t = Torus(system=em, circle=u, stroboscopic_time=2.7, rotation=0.3, jacobi=3.18,
    ...           jacobi_spread=0.0, invariance_error=0.0, point="L1")
    >>> from cr3bp.catalog import Catalog
    >>> from cr3bp.tori.store import cached_torus
    >>> cat = Catalog(":memory:")
    >>> cached_torus(cat, em, "L1", {"kind": "test"}, lambda: t) is t        # computed
    True
    >>> cached_torus(cat, em, "L1", {"kind": "test"}, None).rotation          # read back
    0.3

    References
    ----------
    Common practice (a content-keyed cache; floats through JSON by ``repr``, exact round trip).
    """
    t = load_torus(catalog, system, point, request)
    if t is None:
        with serial():      # computing: one thread (cr3bp.threads); read-backs skip numba
            t = compute()
        save_torus(catalog, system, point, request, t)
    return t


class FamilyStore:
    """The catalogue record of one torus family (see the module notes).

    Parameters
    ----------
    catalog : cr3bp.catalog.Catalog
    start : Torus
        The family's start torus (its digest is part of the key).
    settings : dict
        The continuation settings (held quantity, steps, direction), part of the key.

    Examples
    --------
    >>> import numpy as np
    >>> from cr3bp import system
    >>> from cr3bp.tori.torus import Torus
    >>> em = system("earth-moon")
    >>> u = np.tile([0.8369, 0, 0, 0, 0, 0], (5, 1)) + 1e-3 * np.eye(5, 6)  # a hand-made circle
    >>> t = Torus(system=em, circle=u, stroboscopic_time=2.7, rotation=0.3, jacobi=3.18,
    ...           jacobi_spread=0.0, invariance_error=0.0, point="L1")
    >>> from cr3bp.catalog import Catalog
    >>> from cr3bp.tori.store import FamilyStore
    >>> fs = FamilyStore(Catalog(":memory:"), t, {"hold": "jacobi"})
    >>> fs.load()
    ([], [], None)
    >>> fs.add(1, t, np.zeros(32), 0.02)
    >>> members, states, stop = fs.load()
    >>> len(members), states[0][1], stop
    (1, 0.02, None)

    References
    ----------
    Common practice (a content-keyed cache; floats through JSON by ``repr``, exact round trip).
    """

    def __init__(self, catalog, start: Torus, settings: dict):
        self.catalog = catalog
        self.system = start.system
        self.point = start.point or ""
        self.branch = start.branch or ""
        self.settings = {**settings, "start": digest(start), "recipe": RECIPE}
        self.fid = None

    def load(self):
        """``(members, states, stop)`` stored so far: the tori after the start, the
        continuation state ``(tangent, step)`` after each, and the stop reason when the
        continuation ended by itself (else None)."""
        rec = self.catalog.load_family(self.system, TORUS_FAMILY, self.point, self.branch,
                                       self.settings)
        if rec is None:
            return [], [], None
        members, states = [], []
        for m in rec["members"]:
            members.append(from_record(self.system, m["torus"]))
            states.append((np.array(m["tangent"], dtype=float), float(m["step"])))
        stop = None
        if rec.get("complete"):
            marks = rec.get("bifurcations") or [{}]
            stop = marks[0].get("stop")
        return members, states, stop

    def _id(self):
        if self.fid is None:
            self.fid = self.catalog.begin_family(self.system, TORUS_FAMILY, self.point,
                                                 self.branch, self.settings)
        return self.fid

    def add(self, index: int, t: Torus, tangent, step: float) -> None:
        if getattr(self.catalog, "read_only", False):
            return
        self.catalog.add_members(self._id(), [{"index": index, "torus": record(t),
                                               "tangent": np.asarray(tangent).tolist(),
                                               "step": float(step)}])

    def finish(self, stop: str) -> None:
        """The continuation ended by itself (not by the member count): keep why."""
        if getattr(self.catalog, "read_only", False):
            return
        self.catalog.finish_family(self._id(), [{"stop": stop}], complete=True)
