"""No import circles inside the library: every import of every module under ``cr3bp/`` (at
module level and inside functions, relative and absolute) is an edge of one graph, and the
graph must have no cycle. A circle means two rooms each need the other, so neither can be read,
tested or moved alone; the fix is to move what both need into a third module they both import.
"""

from __future__ import annotations

import ast
from pathlib import Path

import networkx as nx
import pytest

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = "cr3bp"

#: Circles known today, each to be broken by a named next step (an entry here is a debt, not a
#: permission: remove it when the step lands; a new circle still fails the test).
KNOWN_CYCLES: set[frozenset[str]] = set()


def module_name(path: Path, root: Path) -> str:
    parts = list(path.relative_to(root).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def import_graph(root: Path = ROOT, package: str = PACKAGE) -> nx.DiGraph:
    """Module -> imported module, for every ``import`` statement anywhere in each file.

    ``from .x import y`` counts as an import of ``x.y`` when ``y`` is itself a module, else of
    ``x``; ``from . import y`` likewise. Importing ``a.b.c`` also runs the ``__init__`` of the
    packages ``a.b`` and ``a``, so each enclosing package of an imported module is an edge too
    (except the importer's own enclosing packages, which are already loaded). Only edges inside
    ``package`` are kept.
    """
    files = sorted((root / package).rglob("*.py"))
    modules = {module_name(p, root) for p in files}
    graph = nx.DiGraph()
    for path in files:
        here = module_name(path, root)
        graph.add_node(here)
        is_package = path.name == "__init__.py"
        for node in ast.walk(ast.parse(path.read_text(), filename=str(path))):
            targets = []
            if isinstance(node, ast.ImportFrom):
                if node.level:
                    base = here.split(".") if is_package else here.split(".")[:-1]
                    base = base[:len(base) - (node.level - 1)]
                    target = ".".join(base + ([node.module] if node.module else []))
                else:
                    target = node.module or ""
                for alias in node.names:
                    sub = f"{target}.{alias.name}"
                    targets.append(sub if sub in modules else target)
            elif isinstance(node, ast.Import):
                targets = [alias.name for alias in node.names]
            for t in targets:
                # (``from . import name`` in a package's __init__ names the package itself:
                # no edge)
                if (t == package or t.startswith(package + ".")) and t != here:
                    graph.add_edge(here, t)
                    parts = t.split(".")
                    for i in range(2, len(parts)):
                        parent = ".".join(parts[:i])
                        if parent != here and not here.startswith(parent + "."):
                            graph.add_edge(here, parent)
    return graph


def cycles(graph: nx.DiGraph) -> list[list[str]]:
    """Every elementary circle of the graph, each as a list of module names."""
    return [sorted(c) for c in nx.simple_cycles(graph)]


def test_the_parser_sees_relative_absolute_and_function_level_imports(tmp_path):
    pkg = tmp_path / "pkg"
    (pkg / "sub").mkdir(parents=True)
    (pkg / "__init__.py").write_text("")
    (pkg / "sub" / "__init__.py").write_text("")
    (pkg / "a.py").write_text("from .sub import b\n")
    (pkg / "sub" / "b.py").write_text("def f():\n    from ..c import x\n")
    (pkg / "c.py").write_text("import pkg.a\n")
    g = import_graph(tmp_path, "pkg")
    assert g.has_edge("pkg.a", "pkg.sub.b")
    assert g.has_edge("pkg.sub.b", "pkg.c")
    assert g.has_edge("pkg.c", "pkg.a")
    assert cycles(g) == [["pkg.a", "pkg.c", "pkg.sub.b"]]


def test_the_parser_sees_the_packages_an_import_loads(tmp_path):
    # importing pkg.low.k runs pkg/low/__init__.py: if that package's __init__ needs pkg.high,
    # which needs pkg.low.k, the two rooms need each other although no module names the other
    pkg = tmp_path / "pkg"
    for sub in ("low", "high"):
        (pkg / sub).mkdir(parents=True)
    (pkg / "__init__.py").write_text("")
    (pkg / "low" / "__init__.py").write_text("def f():\n    from ..high import h\n")
    (pkg / "low" / "k.py").write_text("")
    (pkg / "high" / "__init__.py").write_text("")
    (pkg / "high" / "h.py").write_text("from ..low import k\n")
    g = import_graph(tmp_path, "pkg")
    assert g.has_edge("pkg.high.h", "pkg.low")            # the package pkg.low/__init__ runs too
    assert ["pkg.high.h", "pkg.low"] in cycles(g)


def test_no_import_cycles_in_the_library():
    found = cycles(import_graph())
    new = [c for c in found if frozenset(c) not in KNOWN_CYCLES]
    assert not new, "import circles in cr3bp/: " + "; ".join(" <-> ".join(c) for c in new)


@pytest.mark.parametrize("known", sorted(sorted(c) for c in KNOWN_CYCLES))
def test_known_circles_are_still_there(known):
    """An entry of KNOWN_CYCLES that no longer exists is removed from the list (so the list
    stays the honest record of what is left)."""
    assert known in cycles(import_graph()), f"{known} is gone: remove it from KNOWN_CYCLES"
