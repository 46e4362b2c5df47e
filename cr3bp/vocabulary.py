"""The words librate accepts, each list once.

Every door that takes one of these words -- the command line (argparse choices and help), the
scenario schema, the orbit-request parser, the exporters, the frame and time code -- reads the
list from here, so a word accepted at one door is accepted by the run behind it and no list
drifts out of step with another (``tests/test_vocabulary.py`` checks the doors against these
lists). Only plain data here: no imports of the library, so any module may import it.
"""

from __future__ import annotations

__all__ = [
    "ORBIT_TARGETS", "TARGET_HELP", "TARGET_DIMENSIONS", "LENGTH_TARGETS", "FAMILY_STOPS",
    "FAMILIES", "FAMILY_ALIASES", "POINT_FAMILIES", "COLLINEAR_POINTS", "LAGRANGE_POINTS",
    "HALO_BRANCHES", "TORUS_FAMILIES", "TORUS_TARGETS",
    "FRAMES", "INERTIAL_FRAMES", "ANCHORS", "CENTER_ROLES", "CENTER_BODIES", "CENTERS",
    "TIME_SYSTEMS", "EXPORT_FORMATS", "OEM_FORMATS", "SCENARIO_EXPORT_FORMATS", "OUTPUT_FORMATS",
    "IMAGE_FORMATS", "SCENARIO_IMAGE_FORMATS", "TUBE_BRANCHES", "STABILITIES", "one_of",
]

# ---- periodic orbits ------------------------------------------------------------------------

#: The properties an orbit may be picked by out of its family (the request's ``KEY=VALUE``,
#: the CLI's ``--KEY``, the scenario's orbit keys). See :mod:`cr3bp.orbits.targets`.
ORBIT_TARGETS = ("period", "jacobi", "ax", "ay", "az", "x", "perilune", "resonance")

#: (metavar, help) of each target, for the command line and the scenario schema.
TARGET_HELP = {
    "period": ("TIME", "orbit period, e.g. 6.5626d or 3.41TU"),
    "jacobi": ("C", "Jacobi constant (nondimensional)"),
    "ax": ("LENGTH", "x amplitude (half the x extent), e.g. 20000km"),
    "ay": ("LENGTH", "y amplitude (half the y extent)"),
    "az": ("LENGTH", "out-of-plane amplitude (largest |z|), e.g. 12000km"),
    "x": ("LENGTH", "x of the initial (far) crossing, LU unless a unit is given"),
    "perilune": ("LENGTH", "closest approach to the smaller primary's centre, e.g. 3500km"),
    "resonance": ("P:Q", "synodic resonance (earth-moon): P periods in Q synodic months, e.g. 9:2"),
}

#: What kind of value each target takes: a dimension of :mod:`cr3bp.units`, "number" or "ratio".
TARGET_DIMENSIONS = {"period": "time", "jacobi": "number", "ax": "length", "ay": "length",
                     "az": "length", "x": "length", "perilune": "length", "resonance": "ratio"}

#: Targets that are lengths which must be positive (``x`` is a coordinate: any sign).
LENGTH_TARGETS = ("ax", "ay", "az", "perilune")

#: The targets a family may be grown until (``librate family --until KEY=VALUE``).
FAMILY_STOPS = ("jacobi", "period", "az", "ax", "perilune")

#: Periodic-orbit families (:mod:`cr3bp.orbits.families`).
FAMILIES = ("lyapunov", "halo", "vertical", "axial", "dro", "resonant")
#: Other words for a family, accepted in requests.
FAMILY_ALIASES = {"nrho": "halo", "lyap": "lyapunov", "planar": "lyapunov"}
#: Families about a collinear Lagrange point (they need ``point``).
POINT_FAMILIES = ("lyapunov", "halo", "vertical", "axial")
COLLINEAR_POINTS = ("L1", "L2", "L3")
LAGRANGE_POINTS = ("L1", "L2", "L3", "L4", "L5")
#: Halo branches: z > 0 (north) or z < 0 (south) at the crossing farther from the smaller primary.
HALO_BRANCHES = ("north", "south")

# ---- quasi-periodic tori ------------------------------------------------------------------

#: Torus families of a torus request (:mod:`cr3bp.tori.request`; the scenario's ``torus`` key).
TORUS_FAMILIES = ("lissajous", "quasi-halo")
#: The targets of a torus request (``KEY=VALUE`` after the family or the orbit).
TORUS_TARGETS = ("ay", "az", "amplitude", "jacobi", "period", "frequency-ratio")

# ---- departures from a parking orbit -------------------------------------------------------

#: Paths of a departure from an Earth parking orbit (``librate connect --path``): the two
#: designed in the CR3BP (:mod:`cr3bp.transfers.departure`) and the low-energy one designed in
#: the bicircular model (:mod:`cr3bp.transfers.low_energy`).
CR3BP_DEPARTURE_PATHS = ("direct", "lunar-flyby")
DEPARTURE_PATHS = CR3BP_DEPARTURE_PATHS + ("low-energy",)
#: Altitudes (km) of an Earth parking orbit a departure path is designed from. Below about
#: 100 km no orbit lasts (the atmosphere; common practice), so no Earth parking orbit is lower;
#: above 50 000 km the departure's first guesses (a near-Hohmann arc from a low orbit) do not
#: apply, so the departure paths refuse it (a manifold leg may still reach a higher orbit).
DEPARTURE_ALTITUDE_KM = (100.0, 50_000.0)

# ---- frames, centres, time -----------------------------------------------------------------

#: Axes of exported states: J2000 mean equator (EME2000), J2000 mean ecliptic, or the CR3BP
#: rotating axes (in km).
FRAMES = ("j2000-equator", "j2000-ecliptic", "rotating")
#: The inertial ones (the only ones an OEM may carry).
INERTIAL_FRAMES = ("j2000-equator", "j2000-ecliptic")
#: How the rotating frame is tied to a date.
ANCHORS = ("ephemeris", "circular")
#: Origins named by their role in the system.
CENTER_ROLES = ("primary", "secondary", "barycenter")
#: Origins named by a body (in a system whose primaries they are, or, for the Earth and the
#: Moon in Sun-Earth, placed in the Earth-Moon barycentre by the ephemeris).
CENTER_BODIES = ("earth", "moon", "sun")
CENTERS = CENTER_ROLES + CENTER_BODIES
#: Time systems of dates read and written (lower case; CCSDS writes them upper case).
TIME_SYSTEMS = ("tdb", "tt", "tai", "utc")

# ---- files -----------------------------------------------------------------------------------

#: Trajectory files (``xml`` = OEM in XML).
EXPORT_FORMATS = ("oem", "xml", "csv", "json")
#: The CCSDS OEM forms among them (keyword-value text and XML): inertial frames only.
OEM_FORMATS = ("oem", "xml")
#: The trajectory formats a scenario's ``[[exports]]`` may ask for.
SCENARIO_EXPORT_FORMATS = ("oem", "csv", "json")
#: What a command prints or writes with ``--format``.
OUTPUT_FORMATS = ("table", "json", "csv")
#: Figure files (the suffix of every command's ``--plot FILE``).
IMAGE_FORMATS = ("png", "svg", "pdf")
#: The figure formats a scenario's ``plots.formats`` may ask for.
SCENARIO_IMAGE_FORMATS = ("png", "svg")

# ---- tubes -----------------------------------------------------------------------------------

#: Half-manifolds: stepping toward the smaller primary (interior) or away from it.
TUBE_BRANCHES = ("interior", "exterior")
#: Stable (arrivals, propagated backward) or unstable (departures) manifolds.
STABILITIES = ("stable", "unstable")


def one_of(words, *, optional: bool = False) -> str:
    """The scenario schema's enumeration type for ``words`` (``"one-of:a|b|c"``); ``optional``
    adds the empty text.

    Parameters
    ----------
    words : iterable of str
        The allowed words.
    optional : bool, optional
        Also allow the empty text.

    Returns
    -------
    str

    Raises
    ------
    TypeError
        ``words`` is not iterable.

    Examples
    --------
    >>> one_of(("north", "south"))
    'one-of:north|south'
    >>> one_of(("a",), optional=True)
    'one-of:a|'

    References
    ----------
    Common practice (one list of words, read by every door that takes them).
    """
    return "one-of:" + "|".join(tuple(words) + (("",) if optional else ()))
