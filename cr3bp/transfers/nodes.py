"""Nodes of the transfer graph and the node-list file that declares them.

A node is a place a spacecraft can be: a periodic orbit (named by the orbit request text of
:mod:`cr3bp.orbits`), a circular parking orbit about a primary, a fixed state in the rotating
frame (a patch point, a rendezvous point), or a capture / escape condition about a body. Each
is a frozen dataclass with a stable string ``id`` (the same declaration always gives the same
id, whatever it is called in the file) and ``to_dict()``.

The node list is a TOML file with keys of our own (user guide, docs/manual/node-lists.md)::

    system = "earth-moon"
    [settings]
    tof = "6d"                       # default time of flight of a targeted leg
    [[node]]
    name = "gate"
    kind = "state"
    state = [0.80, 0.0, 0.0, 0.0, 0.35, 0.0]
    [[edge]]
    from = "gate"
    to = "relay"
    maneuvers = "ends"               # ends | none
    tof = "4d"
    max_patch_dv = "300m/s"

It is checked with the TOML schema checker (:func:`cr3bp.io.toml_schema.check_document`): every unknown,
missing or mistyped key is reported with file, line and dotted key before anything is computed.
"""

from __future__ import annotations

import hashlib
import math
import re
import tomllib
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..io import toml_schema as schema_mod
from .. import units, validate
from ..errors import InputError, UnitError, shown
from ..orbits.request import parse_request
from ..vocabulary import CR3BP_DEPARTURE_PATHS, DEPARTURE_PATHS, HALO_BRANCHES

#: Largest node list read (characters): far above any real one, it keeps a hostile file cheap.
MAX_NODE_LIST_CHARS = 2_000_000
KINDS = ("orbit", "parking", "state", "capture", "escape")
MANEUVERS = ("ends", "none")
#: How a leg from a parking orbit is made: "auto" (a manifold leg through periapsis, else a
#: direct departure), "direct" or "lunar-flyby" (cr3bp.transfers.departure, the CR3BP) or
#: "low-energy" (cr3bp.transfers.low_energy, the bicircular model).
PARKING_PATHS = ("auto",) + DEPARTURE_PATHS

NODE_KEYS = {
    "name": ("str", True, "name of the node, used by edges and --from/--to"),
    "kind": ("one-of:" + "|".join(KINDS), True, "what sort of place"),
    "orbit": ("str", False, "orbit request text, e.g. 'halo L2 south period=6.5626d' (kind orbit)"),
    "body": ("str", False, "primary, e.g. 'earth' (kinds parking, capture, escape)"),
    "altitude": ("quantity", False, "altitude of the circular parking orbit or the capture periapsis"),
    "inclination": ("float", False, "inclination of the parking orbit to the primaries' plane, degrees "
                                   "(default: free, the design chooses it)"),
    "radius": ("quantity", False, "distance from the body at which the escape condition holds"),
    "state": ("list[float]", False, "x, y, z, vx, vy, vz in LU and LU/TU (kind state)"),
}
EDGE_KEYS = {
    "from": ("str", True, "name of the departure node"),
    "to": ("str", True, "name of the arrival node"),
    "maneuvers": ("one-of:" + "|".join(MANEUVERS), False,
                  "'ends': impulses allowed at both ends; 'none': ballistic only"),
    "max_patch_dv": ("quantity", False, "largest Δv accepted for this leg, e.g. '300m/s'"),
    "sections": ("list[str]", False, "Poincaré sections to patch on, e.g. ['x=1-mu'] (connections)"),
    "tof": ("quantity", False, "time of flight of a targeted leg, e.g. '4d'"),
    "both_ways": ("bool", False, "also compute the leg in the other direction (default true)"),
    "path": ("one-of:" + "|".join(PARKING_PATHS), False,
             "from an Earth parking orbit to an Earth-Moon orbit: 'auto' (manifold or direct departure), "
             "'direct' or 'lunar-flyby' (departures designed in the CR3BP) or 'low-energy' (the Sun's pull, "
             "bicircular model)"),
    "launch": ("str", False, "with path = 'low-energy': the launch date, ISO 8601 (default: the Sun's phase "
                             "is searched)"),
}
SCHEMA = {
    "system": ("str", False, "tabulated system, e.g. 'earth-moon' (must match --system)"),
    "settings": ("table", False, {
        "tof": ("quantity", False, "default time of flight of a targeted leg"),
        "patches": ("int", False, "patch points per leg kept for stitching (2..50)"),
        "all_pairs": ("bool", False, "attempt a leg between every pair (default true); false: edges only"),
    }),
    "node": ("list-of-tables", True, NODE_KEYS),
    "edge": ("list-of-tables", False, EDGE_KEYS),
}
REQUIRED_BY_KIND = {"orbit": ("orbit",), "parking": ("body", "altitude"), "state": ("state",),
                    "capture": ("body", "altitude"), "escape": ("body", "radius")}

#: A node list of two fixed states, ``a`` and ``b``, in Earth-Moon: the one example the
#: docstrings of :mod:`cr3bp.transfers` build their graphs, routes and stitches from.
EXAMPLE_NODE_LIST = """\
system = "earth-moon"
[settings]
tof = "3d"
patches = 2
[[node]]
name = "a"
kind = "state"
state = [0.80, 0.0, 0.0, 0.0, 0.35, 0.0]
[[node]]
name = "b"
kind = "state"
state = [0.85, 0.05, 0.0, 0.05, 0.30, 0.0]
"""


def _fmt(v: float) -> str:
    return repr(float(v))


@dataclass(frozen=True)
class OrbitNode:
    """A periodic orbit named by its request text ("halo L2 south period=6.5626d").

    Parameters
    ----------
    name : str
        The name the node list gives it.
    system : str
        The system's name.
    orbit : str
        Orbit request text (:mod:`cr3bp.orbits.request`).
    kind : str
        "orbit".

    Examples
    --------
    >>> from cr3bp.transfers.nodes import OrbitNode
    >>> n = OrbitNode("relay", "earth-moon", "Halo L2 South  period = 6.5626d")
    >>> n.id, n.point, n.branch
    ('orbit/earth-moon/halo l2 south period=6.5626d', 'L2', 'south')

    References
    ----------
    Orbit families (halo, Lyapunov...): Koon, Lo, Marsden & Ross, *Dynamical Systems, the
    Three-Body Problem and Space Mission Design*, 2011, ch. 2 and 4 (from memory).
    """

    name: str
    system: str
    orbit: str
    kind: str = "orbit"

    @property
    def id(self) -> str:
        return f"orbit/{self.system}/{normalise(self.orbit)}"

    @property
    def words(self) -> list[str]:
        return normalise(self.orbit).split()

    @property
    def family(self) -> str:
        return self.words[0] if self.words else ""

    @property
    def point(self) -> str:
        return next((w.upper() for w in self.words if re.fullmatch(r"l[1-5]", w)), "")

    @property
    def branch(self) -> str:
        return next((w for w in self.words if w in HALO_BRANCHES), "")

    @property
    def is_torus(self) -> bool:
        """A torus request (cr3bp.tori.request) rather than a periodic orbit's."""
        return bool(self.words) and self.words[0] in ("lissajous", "quasi-halo", "quasihalo", "qh", "liss")

    @property
    def selector(self) -> str:
        return " ".join(w for w in self.words if "=" in w)

    def to_dict(self) -> dict:
        return {"id": self.id, "name": self.name, "kind": self.kind, "system": self.system,
                "orbit": self.orbit, "family": self.family, "point": self.point,
                "branch": self.branch, "selector": self.selector}


@dataclass(frozen=True)
class ParkingNode:
    """A circular orbit about a primary.

    Parameters
    ----------
    name : str
    system : str
        The system's name.
    body : str
        The primary's name, lower case.
    altitude_km : float
    inclination_deg : float
        To the primaries' plane.
    path : str, optional
        How legs leave it for an Earth-Moon periodic orbit (``"direct"``, ``"lunar-flyby"``:
        :func:`cr3bp.transfers.departure.design_departure`); None: the graph's choice (a manifold
        leg where one may reach the parking orbit, else the direct departure). Set by a scenario
        transfer's ``path``.
    kind : str
        "parking".
    launch_latitude_deg : float, optional
        With ``path``: a launch site's latitude bounding the departure's inclination to the
        Earth's equator below (:func:`cr3bp.transfers.departure.design_departure`), the
        departure dated ``launch_tdb_s``. Set by a scenario transfer's ``launch_latitude``.
    launch_tdb_s : float, optional
        The departure date, TDB seconds since J2000 (with ``launch_latitude_deg``).

    Examples
    --------
    >>> from cr3bp.transfers.nodes import ParkingNode
    >>> ParkingNode("leo", "earth-moon", "earth", 200.0).id
    'parking/earth-moon/earth/200km'

    References
    ----------
    Circular parking orbits as departure points: Vallado, *Fundamentals of Astrodynamics and
    Applications*, 4th ed., 2013, ch. 6 (from memory).
    """

    name: str
    system: str
    body: str
    altitude_km: float
    inclination_deg: float | None = None    # None: free (the design chooses the plane)
    kind: str = "parking"
    path: str | None = None                 # None: the graph's choice (see the docstring)
    launch_latitude_deg: float | None = None
    launch_tdb_s: float | None = None

    @property
    def id(self) -> str:
        base = f"parking/{self.system}/{self.body}/{self.altitude_km:g}km"
        if self.launch_latitude_deg is not None:
            base += f"/site{self.launch_latitude_deg:g}deg@{self.launch_tdb_s:.3f}"
        return base if self.inclination_deg is None else f"{base}/{self.inclination_deg:g}deg"

    def to_dict(self) -> dict:
        d = {"id": self.id, "name": self.name, "kind": self.kind, "system": self.system,
             "body": self.body, "altitude_km": self.altitude_km,
             "inclination_deg": self.inclination_deg}
        if self.path is not None:
            d["path"] = self.path
        if self.launch_latitude_deg is not None:
            d.update(launch_latitude_deg=self.launch_latitude_deg, launch_tdb_s=self.launch_tdb_s)
        return d


@dataclass(frozen=True)
class StateNode:
    """A fixed state in the rotating frame (LU, LU/TU): a patch point, a rendezvous point.

    Parameters
    ----------
    name : str
    system : str
        The system's name.
    state : tuple of 6 float
    kind : str
        "state".

    Examples
    --------
    >>> from cr3bp.transfers.nodes import StateNode
    >>> StateNode("gate", "earth-moon", (0.8, 0.0, 0.0, 0.0, 0.35, 0.0)).id.startswith("state/earth-moon/")
    True

    References
    ----------
    Nodes and edges of a transfer graph: Dijkstra, "A note on two problems in connexion with
    graphs", *Numerische Mathematik* 1, 269-271, 1959; node lists are TOML (TOML v1.0.0, open
    standard).
    """

    name: str
    system: str
    state: tuple
    kind: str = "state"

    @property
    def id(self) -> str:
        text = ",".join(_fmt(v) for v in self.state)
        return f"state/{self.system}/{hashlib.sha256(text.encode()).hexdigest()[:12]}"

    def to_dict(self) -> dict:
        return {"id": self.id, "name": self.name, "kind": self.kind, "system": self.system,
                "state": [float(v) for v in self.state]}


@dataclass(frozen=True)
class BoundaryNode:
    """A capture (periapsis altitude about a body) or escape (distance from a body) condition.

    Parameters
    ----------
    name : str
    system : str
        The system's name.
    kind : {"capture", "escape"}
    body : str
        The primary's name, lower case.
    distance_km : float
        Capture: periapsis altitude; escape: distance from the body's centre.

    Examples
    --------
    >>> from cr3bp.transfers.nodes import BoundaryNode
    >>> BoundaryNode("away", "earth-moon", "escape", "earth", 600000.0).id
    'escape/earth-moon/earth/600000km'

    References
    ----------
    Capture and escape along manifolds: Koon, Lo, Marsden & Ross, 2011, ch. 3 and 7 (from memory).
    """

    name: str
    system: str
    kind: str
    body: str
    distance_km: float

    @property
    def id(self) -> str:
        return f"{self.kind}/{self.system}/{self.body}/{self.distance_km:g}km"

    def to_dict(self) -> dict:
        return {"id": self.id, "name": self.name, "kind": self.kind, "system": self.system,
                "body": self.body, "distance_km": self.distance_km}


@dataclass(frozen=True)
class EdgeHint:
    """What a node list says about the leg(s) between two named nodes.

    Parameters
    ----------
    source, target : str
        Node names.
    maneuvers : {"ends", "none"}
        Impulses allowed at both ends, or a ballistic leg only.
    max_patch_dv_mps : float, optional
        Largest Δv accepted for the leg, m/s.
    sections : tuple of str
        Poincaré sections to patch on (manifold connections).
    tof_days : float, optional
        Time of flight of a targeted leg.
    both_ways : bool
        Also the leg in the other direction.
    path : {"auto", "low-energy"}
        How a leg from a parking orbit is made (:data:`PARKING_PATHS`).
    launch_tdb_s : float, optional
        With ``path = "low-energy"``: the launch date, TDB seconds since J2000.

    Examples
    --------
    >>> from cr3bp.transfers.nodes import EdgeHint
    >>> EdgeHint("gate", "relay", maneuvers="none").to_dict()["maneuvers"]
    'none'

    References
    ----------
    Nodes and edges of a transfer graph: Dijkstra, "A note on two problems in connexion with
    graphs", *Numerische Mathematik* 1, 269-271, 1959; node lists are TOML (TOML v1.0.0, open
    standard).
    """

    source: str
    target: str
    maneuvers: str = "ends"
    max_patch_dv_mps: float | None = None
    sections: tuple = ()
    tof_days: float | None = None
    both_ways: bool = True
    path: str = "auto"
    launch_tdb_s: float | None = None

    def to_dict(self) -> dict:
        return {"from": self.source, "to": self.target, "maneuvers": self.maneuvers,
                "max_patch_dv_mps": self.max_patch_dv_mps, "sections": list(self.sections),
                "tof_days": self.tof_days, "both_ways": self.both_ways, "path": self.path,
                "launch_tdb_s": self.launch_tdb_s}


@dataclass(frozen=True)
class NodeList:
    """A checked node list: the nodes (in file order), edge hints and settings.

    Parameters
    ----------
    system : str or None
        The system the file names.
    nodes : tuple
    hints : tuple of EdgeHint
    tof_days : float
        Default time of flight of a targeted leg.
    patches : int
        Shooting segments per leg.
    all_pairs : bool
        Attempt a leg between every ordered pair (False: the hinted ones).
    file : str

    Examples
    --------
    >>> from cr3bp.transfers.nodes import NodeList, StateNode
    >>> nl = NodeList("earth-moon", (StateNode("gate", "earth-moon", (0.8, 0, 0, 0, 0.35, 0)),))
    >>> list(nl.by_name())
    ['gate']

    References
    ----------
    Nodes and edges of a transfer graph: Dijkstra, "A note on two problems in connexion with
    graphs", *Numerische Mathematik* 1, 269-271, 1959; node lists are TOML (TOML v1.0.0, open
    standard).
    """

    system: str | None
    nodes: tuple
    hints: tuple = ()
    tof_days: float = 6.0
    patches: int = 4
    all_pairs: bool = True
    file: str = ""

    def by_name(self) -> dict:
        return {n.name: n for n in self.nodes}

    def to_dict(self) -> dict:
        return {"file": self.file, "system": self.system, "tof_days": self.tof_days,
                "patches": self.patches, "all_pairs": self.all_pairs,
                "nodes": [n.to_dict() for n in self.nodes], "hints": [h.to_dict() for h in self.hints]}


def normalise(text: str) -> str:
    """Lower-case words separated by single spaces, ``key = value`` written ``key=value``.

    Parameters
    ----------
    text : str

    Returns
    -------
    str

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.transfers.nodes import normalise
    >>> normalise("  Halo L2   South period = 6.5626d")
    'halo l2 south period=6.5626d'

    References
    ----------
    Common practice (a canonical form so equal requests give equal ids).
    """
    t = re.sub(r"\s*=\s*", "=", str(text).strip())
    return " ".join(w if "=" in w else w.lower() for w in t.split())


def load_nodes(path, system) -> NodeList:
    """Read and check a node list for ``system``.

    Parameters
    ----------
    path : str or Path
    system : System

    Returns
    -------
    NodeList

    Raises
    ------
    InputError
        The file cannot be read or is not UTF-8.
    ScenarioError (an InputError)
        Every problem at once, each as ``file:line: key: message``.

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import load_nodes
    >>> load_nodes("no-such-file.toml", system("earth-moon"))  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: cannot read node list no-such-file.toml: No such file or directory

    References
    ----------
    TOML v1.0.0 (open standard); Nodes and edges of a transfer graph: Dijkstra, "A note on two problems in connexion with
    graphs", *Numerische Mathematik* 1, 269-271, 1959; node lists are TOML (TOML v1.0.0, open
    standard).
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except UnicodeDecodeError as e:
        raise InputError(f"node list {shown(path)} is not UTF-8 text (byte {e.start}); a node list "
                         "is a TOML file") from None
    except OSError as e:
        raise InputError(f"cannot read node list {shown(path)}: {e.strerror}") from None
    return parse_nodes(text, system, str(path))


def parse_nodes(text: str, system, file: str = "<nodes>") -> NodeList:
    """Check the TOML ``text`` of a node list and build its nodes (see :func:`load_nodes`).

    Parameters
    ----------
    text : str
    system : System
    file : str
        Named in the problems.

    Returns
    -------
    NodeList

    Raises
    ------
    ScenarioError (an InputError)
        Every problem at once, each as ``file:line: key: message``.
    InputError
        The text is too long or nested too deeply to read.

    Examples
    --------
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> from cr3bp.transfers.nodes import parse_nodes
    >>> nl = parse_nodes('''
    ... [[node]]
    ... name = "gate"
    ... kind = "state"
    ... state = [0.8, 0.0, 0.0, 0.0, 0.35, 0.0]
    ... ''', em)
    >>> [n.name for n in nl.nodes], nl.tof_days, nl.patches
    (['gate'], 6.0, 4)

    References
    ----------
    TOML v1.0.0 (open standard).
    """
    P = schema_mod.Problem
    if len(text) > MAX_NODE_LIST_CHARS:
        raise InputError(f"node list {shown(file)} has {len(text)} characters; at most "
                         f"{MAX_NODE_LIST_CHARS} are read")
    try:
        data = tomllib.loads(text)
    except RecursionError:
        raise InputError(f"node list {shown(file)} is nested too deeply to read (a TOML array or "
                         "table inside thousands of others)") from None
    except tomllib.TOMLDecodeError as e:
        m = re.search(r"line (\d+)", str(e))
        raise schema_mod.ScenarioError([P(file, int(m.group(1)) if m else 0, "(syntax)", str(e))]) from None
    lines = schema_mod.line_index(text)
    problems = schema_mod.check_document(data, lines, file, SCHEMA)
    if problems:
        raise schema_mod.ScenarioError(problems)

    def line(key):
        while key and key not in lines:
            key = key.rpartition(".")[0]
        return lines.get(key, 1)

    if data.get("system") is not None and system is not None and data["system"] != system.name:
        problems.append(P(file, line("system"), "system",
                          f"the list is for '{data['system']}' but the system is '{system.name}'"))
    nodes, names = [], {}
    for i, t in enumerate(data["node"]):
        where = f"node[{i}]"
        for k in REQUIRED_BY_KIND[t["kind"]]:
            if k not in t:
                problems.append(P(file, line(where), f"{where}.{k}", f"missing; kind '{t['kind']}' needs it"))
        if t["name"] in names:
            problems.append(P(file, line(f"{where}.name"), f"{where}.name",
                              f"name '{shown(t['name'])}' is already used by node[{names[t['name']]}]"))
        names.setdefault(t["name"], i)
        if any(k not in t for k in REQUIRED_BY_KIND[t["kind"]]):
            continue
        try:
            nodes.append(_node(t, system))
        except InputError as e:
            key = {"state": "state", "parking": "altitude", "capture": "body", "escape": "body",
                   "orbit": "orbit"}.get(t["kind"], "kind")
            problems.append(P(file, line(f"{where}.{key}"), f"{where}.{key}", str(e)))
    hints = []
    for i, t in enumerate(data.get("edge", [])):
        where = f"edge[{i}]"
        for end in ("from", "to"):
            if t[end] not in names:
                problems.append(P(file, line(f"{where}.{end}"), f"{where}.{end}",
                                  f"no node is named '{shown(t[end])}'"))
        if t["from"] == t["to"]:
            problems.append(P(file, line(f"{where}.to"), f"{where}.to", "a leg joins two different nodes"))
        try:
            dv = units.velocity(t["max_patch_dv"], system) if "max_patch_dv" in t else None
            tof = (validate.quantity("tof", t["tof"], "time", system, sign="positive")
                   if "tof" in t else None)
        except UnitError as e:
            problems.append(P(file, line(where), where, str(e)))
            continue
        except InputError as e:  # a tof that is not positive: reported on its own line
            problems.append(P(file, line(f"{where}.tof"), f"{where}.tof", str(e)))
        path, launch = t.get("path", "auto"), None
        try:
            launch = low_energy_ends(system, nodes, names, t, path)
        except InputError as e:
            problems.append(P(file, line(f"{where}.{'launch' if 'launch' in t else 'path'}"),
                              f"{where}.{'launch' if 'launch' in t else 'path'}", str(e)))
        hints.append(EdgeHint(t["from"], t["to"], t.get("maneuvers", "ends"),
                              None if dv is None else system.mps(dv), tuple(t.get("sections", ())),
                              None if tof is None else system.days(tof), t.get("both_ways", True),
                              path, launch))
    settings = data.get("settings", {})
    tof_days = 6.0
    if "tof" in settings:
        try:
            tof_days = system.days(validate.quantity("tof", settings["tof"], "time", system,
                                                     sign="positive"))
        except UnitError:
            raise
        except InputError as e:  # a tof that is not positive: one of the problems listed
            problems.append(P(file, line("settings.tof"), "settings.tof", str(e)))
    patches = settings.get("patches", 4)
    try:
        validate.whole_number("patches", patches, 2, 50)
    except InputError as e:
        problems.append(P(file, line("settings.patches"), "settings.patches", str(e)))
    if problems:
        raise schema_mod.ScenarioError(sorted(problems, key=lambda p: (p.line, p.key)))
    return NodeList(data.get("system"), tuple(nodes), tuple(hints), tof_days, patches,
                    settings.get("all_pairs", True), file)


def low_energy_ends(system, nodes, names, edge: dict, path: str):
    """Check an edge's ``path`` and ``launch``: a low-energy leg leaves an Earth parking orbit for
    an Earth-Moon periodic orbit; a launch date only with it, inside the ephemeris.

    Parameters
    ----------
    system : System
    nodes : list
        The nodes built so far (in file order).
    names : dict
        Node name -> index in the file.
    edge : dict
        The edge's table (``from``, ``to``, ``path``, ``launch``).
    path : str
        One of :data:`PARKING_PATHS`.

    Returns
    -------
    float or None
        The launch date, TDB seconds since J2000 (None: none given).

    Raises
    ------
    InputError
        The ends are not an Earth parking orbit and an Earth-Moon periodic orbit or torus (low-energy;
        'direct' and 'lunar-flyby': an Earth-Moon orbit, and a parking altitude the path can
        leave), or a launch date without the low-energy path or outside the ephemeris.

    Examples
    --------
    >>> from cr3bp import system
    >>> from cr3bp.transfers.nodes import low_energy_ends
    >>> low_energy_ends(system("earth-moon"), [], {}, {"from": "a", "to": "b"}, "auto") is None
    True

    References
    ----------
    Parker & Anderson, *Low-Energy Lunar Trajectory Design*, 2013, ch. 3 (from memory).
    """
    if path in CR3BP_DEPARTURE_PATHS:
        _departure_ends(system, nodes, edge, path)
    if path != "low-energy":
        if "launch" in edge:
            raise InputError("'launch' goes with path = 'low-energy' only (a launch date sets the Sun's phase)")
        return None
    byname = {n.name: n for n in nodes}
    a, b = byname.get(edge["from"]), byname.get(edge["to"])
    if a is None or b is None:
        return None                               # reported on its own line
    if not (isinstance(a, ParkingNode) and a.body == "earth" and system.name == "earth-moon"
            and isinstance(b, OrbitNode)):
        raise InputError(f"path 'low-energy' leaves an Earth parking orbit for an Earth-Moon periodic orbit or torus "
                         f"(earth-moon system); not {a.kind} '{shown(a.name)}' -> {b.kind} '{shown(b.name)}'")
    if "launch" not in edge:
        return None
    from ..bicircular import sun_phase_at     # lazy: the ephemeris, only for a dated low-energy leg
    from ..time.frames import epoch_from_text  # lazy: the ephemeris, only for a dated low-energy leg
    epoch = epoch_from_text(edge["launch"])
    sun_phase_at(epoch, system)                # a date outside the ephemeris is refused here
    return float(epoch)


def _departure_ends(system, nodes, edge, path):
    """An edge's 'direct' or 'lunar-flyby' path leaves an Earth parking orbit (Earth-Moon) that
    the path can leave, for an Earth-Moon orbit (InputError otherwise)."""
    byname = {n.name: n for n in nodes}
    a, b = byname.get(edge["from"]), byname.get(edge["to"])
    if a is None or b is None:
        return                                    # reported on its own line
    if not (isinstance(a, ParkingNode) and a.body == "earth" and system.name == "earth-moon"
            and isinstance(b, OrbitNode)):
        raise InputError(f"path '{path}' leaves an Earth parking orbit for an Earth-Moon orbit "
                         f"(earth-moon system); not {a.kind} '{shown(a.name)}' -> {b.kind} '{shown(b.name)}'")
    validate.parking_altitude_km(a.body, a.altitude_km, path)


def _node(t: dict, system):
    kind, name = t["kind"], t["name"]
    if kind == "orbit":
        return orbit_node(name, system, t["orbit"])
    if kind == "state":
        s = validate.state(system, t["state"], "state")
        return StateNode(name, system.name, tuple(float(v) for v in s))
    if kind == "parking":
        return parking_node(name, system, t["body"], t["altitude"], t.get("inclination"))
    body = _body(system, t["body"])
    dist = validate.positive_number(f"the distance (km) of the {kind} condition",
                                    units.parse(t["altitude" if kind == "capture" else "radius"], "length").si())
    return BoundaryNode(name, system.name, kind, body, dist)


def orbit_node(name: str, system, orbit: str) -> OrbitNode:
    """The node of the periodic orbit that the request text ``orbit`` names.

    A torus request (:mod:`cr3bp.tori.request`, e.g. "quasi-halo around halo L1 north
    az=10000km amplitude=300km") names a torus node: its reference state is the torus at phase
    (0, 0), the first point of its invariance circle.

    Parameters
    ----------
    name : str
    system : System
    orbit : str
        Orbit request text (:mod:`cr3bp.orbits.request`).

    Returns
    -------
    OrbitNode

    Raises
    ------
    InputError
        A bad word of the request, or no target (period=, jacobi=, az=...).

    Examples
    --------
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> from cr3bp.transfers.nodes import orbit_node
    >>> orbit_node("relay", em, "halo L2 south period=6.5626d").family
    'halo'

    References
    ----------
    Orbit families: Koon, Lo, Marsden & Ross, 2011, ch. 2 and 4 (from memory).
    """
    from ..tori.request import is_torus_request  # lazy: only for tori
    if is_torus_request(orbit):
        from ..tori import request as treq  # lazy: only for tori
        treq.checked(system, orbit)      # InputError names the bad word or value
        return OrbitNode(name, system.name, orbit)
    spec = parse_request(orbit)          # InputError names the bad word
    if not spec.key:
        raise InputError(f"orbit '{shown(orbit)}' has no target; add e.g. period=, jacobi=, az=")
    return OrbitNode(name, system.name, orbit)


def parking_node(name: str, system, body: str, altitude, inclination=None, path=None, launch_latitude=None,
                 launch_tdb_s=None) -> ParkingNode:
    """The node of a circular parking orbit about ``body``.

    Parameters
    ----------
    name : str
    system : System
    body : str
        A primary's name.
    altitude : str
        Text with a length unit, e.g. ``"200km"``.
    inclination : float or None
        Degrees to the primaries' plane, 0..180; None: free (the departure chooses it).
    path : str or None
        The departure path of legs from this orbit (one of
        :data:`cr3bp.vocabulary.CR3BP_DEPARTURE_PATHS`; an Earth parking orbit in the Earth-Moon
        system only); None: the graph's choice.
    launch_latitude : float or None
        With ``path`` and ``launch_tdb_s``: a launch site's latitude, degrees -90..90 (not with
        ``inclination``).
    launch_tdb_s : float or None
        The departure date, TDB seconds since J2000.

    Returns
    -------
    ParkingNode

    Raises
    ------
    InputError
        Not a primary, an altitude that is not a positive length (or an Earth parking orbit
        below 100 km, or above 50 000 km for a departure path), an inclination outside
        0..180 degrees, or a path that is not a departure path or not from the Earth.

    Examples
    --------
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> from cr3bp.transfers.nodes import parking_node
    >>> parking_node("leo", em, "Earth", "200km").altitude_km
    200.0
    >>> parking_node("leo", em, "earth", "200km", path="direct").path
    'direct'

    References
    ----------
    Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed., 2013, ch. 6 (from memory).
    """
    body = _body(system, body)
    alt = units.parse(altitude, "length").si()
    if not alt > 0:
        raise InputError(f"altitude {shown(altitude)} must be positive")
    validate.parking_altitude_km(body, alt, path)
    if path is not None:
        if path not in CR3BP_DEPARTURE_PATHS:
            raise InputError(f"departure path '{shown(path)}' is not one of {', '.join(CR3BP_DEPARTURE_PATHS)}")
        if system.name != "earth-moon" or body != "earth":
            raise InputError(f"departure path '{path}' leaves an Earth parking orbit in the earth-moon "
                             f"system, not a parking orbit about the {body} in {system.name}")
    site = {}
    if launch_latitude is not None:
        if path is None or launch_tdb_s is None or inclination is not None:
            raise InputError(f"launch latitude {shown(launch_latitude)}: needs a departure path and a date, and "
                             "no inclination")
        site = {"launch_latitude_deg": validate.number_in("launch latitude (degrees)", launch_latitude, -90.0, 90.0),
                "launch_tdb_s": float(launch_tdb_s)}
    if inclination is None:
        return ParkingNode(name, system.name, body, alt, None, path=path, **site)
    inc = validate.number_in("inclination (degrees)", inclination, 0.0, 180.0)
    return ParkingNode(name, system.name, body, alt, inc, path=path)


def _body(system, text) -> str:
    names = [n.lower() for n in system.names]
    b = str(text).strip().lower()
    if b not in names:
        raise InputError(f"body '{shown(text)}' is not a primary of {system.name}; allowed: {', '.join(names)}")
    return b


def find_node(nodes, text: str):
    """The node that ``text`` names: its name, its id, its orbit text, or ``"parking BODY ALTITUDE"``
    (e.g. ``"parking earth 200km"``).

    Parameters
    ----------
    nodes : sequence of nodes
    text : str

    Returns
    -------
    node

    Raises
    ------
    InputError
        Nothing matches, or several do (the message lists the names).

    Examples
    --------
    >>> from cr3bp.transfers.nodes import ParkingNode, find_node
    >>> leo = ParkingNode("leo", "earth-moon", "earth", 200.0)
    >>> find_node([leo], "parking earth 200km").name
    'leo'

    References
    ----------
    Common practice (look-up by name, then by id or description).
    """
    t = normalise(text)
    hits = [n for n in nodes if n.name == text or n.id == text]
    if not hits:
        hits = [n for n in nodes if isinstance(n, OrbitNode) and normalise(n.orbit) == t]
    if not hits:
        m = re.fullmatch(r"\s*parking\s+(\w+)\s+(\S+)\s*", str(text), re.IGNORECASE)
        if m:
            try:
                alt = units.parse(m.group(2), "length").si()
            except InputError:
                alt = None
            hits = [n for n in nodes if isinstance(n, ParkingNode) and n.body == m.group(1).lower()
                    and alt is not None and abs(n.altitude_km - alt) < 1e-6]
    if len(hits) == 1:
        return hits[0]
    names = ", ".join(f"'{n.name}'" for n in nodes)
    if not hits:
        raise InputError(f"no node matches '{shown(text)}'; the nodes are {names}")
    raise InputError(f"'{shown(text)}' matches several nodes: {', '.join(n.name for n in hits)}")


def node_state(system, node) -> np.ndarray | None:
    """The rotating-frame state at which legs leave or reach ``node``, when known without computing
    an orbit: a state node's state, or the point of a parking orbit on the primaries' line on the
    side away from the other primary (phase 0), moving prograde (circular speed in the inertial
    frame, minus the frame's rotation). Orbit nodes are solved by
    :func:`cr3bp.transfers.graph.resolve_orbits` (None here).

    Parameters
    ----------
    system : System
    node : node

    Returns
    -------
    ndarray (6,) or None

    Raises
    ------
    ValueError
        A parking node whose body is not a primary of ``system``.

    Examples
    --------
    >>> from cr3bp import system
    >>> em = system("earth-moon")
    >>> from cr3bp.transfers.nodes import StateNode, node_state
    >>> node_state(em, StateNode("gate", "earth-moon", (0.8, 0, 0, 0, 0.35, 0))).tolist()
    [0.8, 0.0, 0.0, 0.0, 0.35, 0.0]

    References
    ----------
    The rotating frame's velocity transformation (v_rot = v_in - omega x r): Szebehely, *Theory of
    Orbits*, 1967, ch. 1 (from memory).
    """
    if isinstance(node, StateNode):
        return np.array(node.state, dtype=float)
    if isinstance(node, ParkingNode):
        k = [n.lower() for n in system.names].index(node.body)
        gm = (1.0 - system.mu) if k == 0 else system.mu
        bodyr = system.radii[k]
        r = bodyr + node.altitude_km / system.length_km
        xc = system.positions[k]
        side = -1.0 if k == 0 else 1.0
        v_in = math.sqrt(gm / r)
        inc = math.radians(node.inclination_deg or 0.0)
        # inertial circular velocity, minus the frame's rotation (omega x r, omega = z)
        pos = np.array([xc + side * r, 0.0, 0.0])
        v = np.array([0.0, side * v_in * math.cos(inc), side * v_in * math.sin(inc)])
        v[1] -= pos[0]
        return np.concatenate([pos, v])
    return None
