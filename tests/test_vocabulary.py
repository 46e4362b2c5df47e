"""The doors agree with the run: every word one door accepts, the run behind it accepts, and the
other way round (cr3bp/vocabulary.py holds each list once).

Doors: the command line (``librate orbit``'s target options, the tube commands' orbit options,
``--frame``/``--time-system`` choices of ``librate export``), the scenario schema
(:func:`cr3bp.scenario.schema.check`) and the scenario's meaning check
(:func:`cr3bp.scenario.run.prepare`), the orbit-request parser. The run: the request parser
with :func:`cr3bp.orbits.targets.make_target` for orbit targets, :func:`cr3bp.time.frames.frame`
and :func:`cr3bp.time.frames.time_system` for frames and time systems.

The candidate words are the union of what every door names (so a word only one door knows is
tried at all of them) plus words of earlier versions (``perigee``). Common practice: no outside
source; these are the project's own words.
"""

import contextlib
import io
import tomllib

import pytest

from cr3bp import system, vocabulary
from cr3bp.errors import InputError
from cr3bp.orbits import targets
from cr3bp.orbits.request import parse_request
from cr3bp.scenario import run as scenario_run
from cr3bp.scenario import schema
from librate_cli.main import build_parser

EM = system("earth-moon")

#: A value each target word takes in a halo L2 south request (the run can read it).
VALUES = {"period": "12d", "jacobi": "3.05", "ax": "10000km", "ay": "20000km", "az": "30000km",
          "x": "1.1LU", "perilune": "3000km", "resonance": "9:2",
          "perigee": "30000km", "approach1": "30000km", "approach2": "3000km"}
#: Words of earlier versions, tried at every door.
OLD_WORDS = ("perigee", "approach1", "approach2")

_NON_TARGET_ORBIT_KEYS = {"family", "point", "branch", "resonant", "occurrence", "checks", "torus",
                          "torus_phase_deg"}
_NON_TARGET_TUBE_DESTS = {"orbit", "family", "point", "halo_branch", "state", "help"}


def _subparser(name):
    parser = build_parser()
    for action in parser._actions:                       # argparse keeps subparsers here
        if hasattr(action, "choices") and isinstance(action.choices, dict) and name in action.choices:
            return action.choices[name]
    raise AssertionError(f"no command {name}")


def _options(command, group_title):
    """The option names (without --) of one argument group of a command."""
    p = _subparser(command)
    for g in p._action_groups:
        if g.title and g.title.startswith(group_title):
            return {a.dest for a in g._group_actions}
    raise AssertionError(f"{command}: no group {group_title!r}")


def _parses(argv) -> bool:
    """True when the command line parses (argparse exits 2 on an unknown option)."""
    err = io.StringIO()
    with contextlib.redirect_stderr(err):
        try:
            build_parser().parse_args(argv)
        except SystemExit:
            return False
    return True


# ---- the doors, each a yes/no on one word --------------------------------------------------

def cli_orbit(word):
    return _parses(["orbit", "--system", "earth-moon", "--family", "halo", "--point", "L2",
                    "--branch", "south", f"--{word}", VALUES.get(word, "1")])


def cli_tube(word):
    return _parses(["manifold", "--system", "earth-moon", "--family", "halo", "--point", "L2",
                    "--halo-branch", "south", f"--{word}", VALUES.get(word, "1"), "--stable"])


def request(word):
    try:
        parse_request(f"halo L2 south {word}={VALUES.get(word, '1')}")
    except InputError:
        return False
    return True


def _scenario(tmp_path, key, value):
    text = (f'[mission]\nname = "words"\n[system]\nname = "earth-moon"\n'
            f'epoch = "2026-03-01T00:00:00Z"\n[orbits.o]\nfamily = "halo"\npoint = "L2"\n'
            f'branch = "south"\n{key} = {value if key == "jacobi" else repr(value)}\n')
    p = tmp_path / f"{key}.toml"
    p.write_text(text)
    return p


def scenario_schema(tmp_path, word):
    p = _scenario(tmp_path, word, VALUES.get(word, "1"))
    text = p.read_text()
    data = tomllib.loads(text)
    return not schema.check(data, schema.line_index(text), str(p), text=text)


def scenario_prepare(tmp_path, word):
    try:
        scenario_run.prepare(_scenario(tmp_path, word, VALUES.get(word, "1")))
    except InputError:
        return False
    return True


def the_run(word):
    """What the orbit computation accepts: the request read, the target made in the system."""
    try:
        spec = parse_request(f"halo L2 south {word}={VALUES.get(word, '1')}")
        targets.make_target(EM, spec.key, spec.value)
    except InputError:
        return False
    return True


def _target_words():
    words = set(vocabulary.ORBIT_TARGETS) | set(OLD_WORDS) | set(targets.KINDS)
    words |= set(schema.ORBIT_KEYS) - _NON_TARGET_ORBIT_KEYS
    words |= _options("orbit", "target")
    words |= _options("manifold", "periodic orbit") - _NON_TARGET_TUBE_DESTS
    return sorted(words)


TARGET_WORDS = _target_words()


@pytest.mark.parametrize("word", TARGET_WORDS)
def test_every_door_accepts_an_orbit_target_exactly_when_the_run_does(word, tmp_path):
    run = the_run(word)
    doors = {"librate orbit --WORD": cli_orbit(word), "librate manifold --WORD": cli_tube(word),
             "orbit request WORD=": request(word), "scenario schema": scenario_schema(tmp_path, word),
             "scenario check (prepare)": scenario_prepare(tmp_path, word)}
    wrong = {door: said for door, said in doors.items() if said != run}
    assert not wrong, f"target '{word}': the run {'accepts' if run else 'refuses'} it, but {wrong}"


def test_the_run_accepts_every_listed_target():
    assert [w for w in vocabulary.ORBIT_TARGETS if not the_run(w)] == []


# ---- frames and time systems ------------------------------------------------------------------

def _choices(command, dest):
    for a in _subparser(command)._actions:
        if a.dest == dest:
            return set(a.choices)
    raise AssertionError(f"{command}: no option {dest}")


def _schema_words(key):
    typ = schema.EXPORT_KEYS[key][0]
    assert typ.startswith("one-of:"), typ
    return {w for w in typ[len("one-of:"):].split("|") if w}


def _run_frame(word):
    from cr3bp.time import frames
    try:
        frames.frame(EM, "2026-03-01T00:00:00Z", axes=word, center="moon")
    except InputError:
        return False
    return True


def _run_time_system(word):
    from cr3bp.time import frames, scales
    try:
        frames.time_system(word)
        scales.parse_iso(f"2026-03-01T00:00:00 {word.upper()}")
    except InputError:
        return False
    return True


@pytest.mark.parametrize("word", sorted(set(vocabulary.FRAMES) | _schema_words("frame")
                                        | _choices("export", "frame") | _choices("route", "frame")))
def test_every_door_accepts_a_frame_exactly_when_the_run_does(word):
    run = _run_frame(word)
    doors = {"scenario": word in _schema_words("frame"), "export --frame": word in _choices("export", "frame"),
             "convert --frame": word in _choices("convert", "frame"),
             "route --frame": word in _choices("route", "frame")}
    assert {d: s for d, s in doors.items() if s != run} == {}, word


@pytest.mark.parametrize("word", sorted(set(vocabulary.TIME_SYSTEMS) | _schema_words("time_system")
                                        | _choices("export", "time_system") | {"gps", "ut1"}))
def test_every_door_accepts_a_time_system_exactly_when_the_run_does(word):
    run = _run_time_system(word)
    doors = {"scenario": word in _schema_words("time_system"),
             "export --time-system": word in _choices("export", "time_system"),
             "convert --time-system": word in _choices("convert", "time_system")}
    assert {d: s for d, s in doors.items() if s != run} == {}, word


def test_every_scenario_centre_is_one_the_run_resolves():
    """The scenario's centre goes to the run's resolver unchanged: each word the vocabulary
    lists resolves in at least one tabulated system, and the roles in every one."""
    from cr3bp.time import frames
    systems = [system("earth-moon"), system("sun-earth")]

    def resolves(s, w):
        try:
            frames.resolve_center(s, w)
        except InputError:
            return False
        return True
    assert [w for w in vocabulary.CENTERS if not any(resolves(s, w) for s in systems)] == []
    assert all(resolves(s, w) for s in systems for w in vocabulary.CENTER_ROLES)


def test_departure_paths_are_one_list():
    """The --path choices of `librate connect`, the paths the CR3BP departure design accepts and
    the low-energy path are the one list of cr3bp.vocabulary (found at merge: the command and
    the library each kept their own)."""
    from cr3bp.transfers import departure, low_energy
    from librate_cli.commands import _departure
    assert tuple(_departure.PATH_CHOICES) == vocabulary.DEPARTURE_PATHS
    assert tuple(departure.PATHS) + (low_energy.LowEnergyTransfer.path,) == vocabulary.DEPARTURE_PATHS
