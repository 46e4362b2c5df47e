"""Public functions and classes of the documented modules carry numpydoc docstrings, and their
examples run.

(a) Every public function (defined in the module, name without a leading underscore) has the
numpydoc sections Parameters (when it takes any), Returns, Raises, Examples and References;
every public class has Parameters (when its constructor takes any), Examples and References.
The sections are found by their numpydoc form, a title line underlined with dashes (numpydoc's
"Docstring Standard", common practice for scientific Python); a small parser of our own does
this, so the test needs no package beyond the standard library.
(b) The examples of these modules run under the standard library's :mod:`doctest`.

Besides the modules listed by name, every module of the packages in :data:`PACKAGES` (the
scenario, input/output, time, fidelity, operations, tube, plotting and torus rooms) is checked.

Names still without the sections are listed in :data:`NOT_YET` (a debt, not a permission:
remove a name when its docstring lands; a new public name without them still fails).
"""

from __future__ import annotations

import doctest
import importlib
import inspect
import pkgutil
import re

import pytest

MODULES = [
    "cr3bp.orbits.recipes",
    "cr3bp.orbits.families",
    "cr3bp.orbits.seeds",
    "cr3bp.orbits.shooting",
    "cr3bp.orbits.continuation",
    "cr3bp.orbits.orbit",
    "cr3bp.orbits.request",
    "cr3bp.orbits.targets",
    "cr3bp.orbits.stability",
    "cr3bp.orbits.geometry",
    "cr3bp.orbits.multiple",
    "cr3bp.orbits._collinear",
    "cr3bp.equilibria",
    "cr3bp.energy",
    "cr3bp.propagation",
    "cr3bp.systems",
    "cr3bp.units",
    "cr3bp.catalog",
    "cr3bp.tubes.manifolds",
    "cr3bp.tubes.sections",
    "cr3bp.transfers.leg",
    "cr3bp.transfers.nodes",
    "cr3bp.transfers.targeting",
    "cr3bp.transfers.lambert",
    "cr3bp.transfers.departure",
    "cr3bp.transfers.departure_common",
    "cr3bp.transfers.returns",
    "cr3bp.transfers.graph",
    "cr3bp.transfers.tasks",
    "cr3bp.transfers.search",
    "cr3bp.transfers.stitch",
    "cr3bp.transfers.design",
    "cr3bp.tori.circle",
    "cr3bp.tori.trajectory",
    "cr3bp.validate",
    "cr3bp.errors",
    "cr3bp.cautions",
    "cr3bp.dynamics",
    "cr3bp.compiled",
    "cr3bp.threads",
    "cr3bp.vocabulary",
    "cr3bp.display",
    "cr3bp.integrate.arc",
    "cr3bp.integrate.events",
    "cr3bp.integrate.reference",
    "cr3bp.integrate.batch",
    "cr3bp.integrate.propagate",
    "cr3bp.integrate.prebuilt",
    "cr3bp.integrate.lanes",
    "cr3bp.integrate.coefficients",
    "cr3bp.integrate.dispatch",
    "cr3bp.integrate.dop853",
    "cr3bp.integrate.modes",
    "cr3bp.integrate.status",
    "cr3bp.bicircular",
    "cr3bp.api",
    "cr3bp.transfers.low_energy",
    "cr3bp.transfers.optimise",
]

#: Packages whose every module is checked, found by walking the package (so a module added
#: later is checked without being listed here).
PACKAGES = ["cr3bp.scenario", "cr3bp.io", "cr3bp.time", "cr3bp.fidelity", "cr3bp.operations", "cr3bp.tubes",
            "cr3bp.plotting", "cr3bp.tori"]


def package_modules(names=PACKAGES):
    """Every module of the packages ``names`` (one level: these packages have no subpackages)."""
    out = []
    for pkg in names:
        path = importlib.import_module(pkg).__path__
        out += [f"{pkg}.{m.name}" for m in pkgutil.iter_modules(path) if not m.ispkg]
    return sorted(out)


MODULES = MODULES + [m for m in package_modules() if m not in MODULES]

#: Modules with no public function or class of their own (constants, compiled kernels, package
#: front doors), checked all the same so that one added later is caught.
MODULES += [m for m in ("cr3bp.constants", "cr3bp.bicircular_kernels", "cr3bp.dynamics.kernels",
                        "cr3bp.fidelity", "cr3bp.integrate", "cr3bp.io", "cr3bp.operations",
                        "cr3bp.orbits", "cr3bp.plotting", "cr3bp.scenario", "cr3bp.time",
                        "cr3bp.tori", "cr3bp.transfers", "cr3bp.tubes") if m not in MODULES]


def test_every_module_of_the_package_is_checked():
    """A module added anywhere in cr3bp/ is checked (the command-line entry points excepted)."""
    import cr3bp
    every = {m.name for m in pkgutil.walk_packages(cr3bp.__path__, "cr3bp.")
             if not m.name.endswith("__main__")}
    assert sorted(every - set(MODULES)) == []

#: Public names whose docstrings do not yet have the sections (module -> names). Each entry is
#: a debt, not a permission: remove a name when its docstring lands (the test says when); a
#: new public name without the sections still fails.
NOT_YET: dict[str, set[str]] = {}

SECTION = re.compile(r"^[ \t]*([A-Z][A-Za-z ]+)[ \t]*\n[ \t]*-{3,}[ \t]*$", re.MULTILINE)


def sections(doc: str | None) -> set[str]:
    """Titles of the numpydoc sections in ``doc`` (a title line underlined with dashes)."""
    return {m.group(1).strip() for m in SECTION.finditer(doc or "")}


def takes_parameters(obj) -> bool:
    try:
        sig = inspect.signature(obj)
    except (TypeError, ValueError):
        return False
    names = [p for p in sig.parameters if p not in ("self", "cls")]
    return bool(names)


def public_names(module):
    for name, obj in sorted(vars(module).items()):
        if name.startswith("_"):
            continue
        if not (inspect.isfunction(obj) or inspect.isclass(obj)):
            continue
        if getattr(obj, "__module__", None) != module.__name__:
            continue
        yield name, obj


def missing_sections(obj) -> list[str]:
    found = sections(inspect.getdoc(obj))
    if inspect.isclass(obj):
        need = ["Examples", "References"]
        if takes_parameters(obj):
            need.insert(0, "Parameters")
    else:
        need = ["Returns", "Raises", "Examples", "References"]
        if takes_parameters(obj):
            need.insert(0, "Parameters")
    return [s for s in need if s not in found]


def test_section_parser():
    doc = "Summary.\n\nParameters\n----------\nx : int\n\nReturns\n-------\nint\n"
    assert sections(doc) == {"Parameters", "Returns"}
    assert sections("Parameters: none\nReturns an int") == set()


@pytest.mark.parametrize("modname", MODULES)
def test_public_names_have_numpydoc_sections(modname):
    module = importlib.import_module(modname)
    owed = NOT_YET.get(modname, set())
    bad = []
    for name, obj in public_names(module):
        miss = missing_sections(obj)
        if miss and name not in owed:
            bad.append(f"{name}: no {', '.join(miss)}")
    assert not bad, f"{modname}: " + "; ".join(bad)
    stale = sorted(n for n in owed if hasattr(module, n) and not missing_sections(getattr(module, n)))
    assert not stale, f"{modname}: documented now, remove from NOT_YET: {', '.join(stale)}"


@pytest.mark.parametrize("modname", MODULES)
def test_examples_run(modname):
    module = importlib.import_module(modname)
    finder = doctest.DocTestFinder()
    runner = doctest.DocTestRunner(optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    tests = [t for t in finder.find(module) if t.examples]
    for t in tests:
        runner.run(t)
    result = runner.summarize(verbose=False)
    documented = [n for n, _ in public_names(module) if n not in NOT_YET.get(modname, set())]
    assert result.attempted > 0 or not documented, f"{modname}: no examples found"
    assert result.failed == 0, f"{modname}: {result.failed} of {result.attempted} examples failed"
