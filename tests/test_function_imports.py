"""Imports inside function bodies say why they are there.

The library imports at module top (the layering test, tests/test_import_layers.py, keeps that
free of circles). An import stays inside a function only for a reason worth a comment on its
own line: a heavy library a light caller must not load (``# lazy: heavy library (numba)``),
the start-up of ``import cr3bp`` (``cr3bp/__init__.py`` and ``cr3bp/api.py`` load on first
use), or a guarded import whose failure is handled there. This test walks the syntax tree of
every module under ``cr3bp/`` and fails on a function-level import whose line (or, for an
import spread over several lines, one of its lines) carries no ``# lazy: <reason>`` comment.
It prints how many function-level imports there are and how many are exempt.
"""

from __future__ import annotations

import ast
import re
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = ROOT / "cr3bp"

#: Files whose function-level imports are not checked yet (a debt, not a permission): the
#: transfer layer and the catalogue were being reworked by another branch while the rest of
#: the library was hoisted; remove an entry when that file's imports carry their reasons.
NOT_YET: tuple = ()

REASON = re.compile(r"#.*\blazy:\s*\S")


def function_level_imports(path: Path):
    """(line number, statement text) of every import statement inside a function body."""
    source = path.read_text(encoding="utf-8")
    lines = source.splitlines()
    tree = ast.parse(source, filename=str(path))
    found = []

    def visit(node, in_function):
        for child in ast.iter_child_nodes(node):
            inside = in_function or isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda))
            if isinstance(child, (ast.Import, ast.ImportFrom)) and inside:
                text = lines[child.lineno - 1:child.end_lineno]
                found.append((child.lineno, text))
            visit(child, inside)

    visit(tree, False)
    return found


def unexplained(path: Path):
    """Function-level imports of ``path`` without a ``# lazy: <reason>`` comment."""
    return [(n, text[0].strip()) for n, text in function_level_imports(path)
            if not any(REASON.search(line) for line in text)]


def test_the_walker_sees_imports_in_functions_and_their_reasons(tmp_path):
    f = tmp_path / "m.py"
    f.write_text("import os\n\n"
                 "def f():\n"
                 "    import json\n"
                 "    from math import (sin,\n"
                 "                      cos)  # lazy: heavy library (demo)\n"
                 "    def g():\n"
                 "        import numpy  # lazy: start-up\n"
                 "        import csv  # not a reason\n"
                 "    return g\n\n"
                 "class C:\n"
                 "    import re\n"
                 "    def m(self):\n"
                 "        from . import x\n")
    assert [n for n, _ in function_level_imports(f)] == [4, 5, 8, 9, 15]
    assert [n for n, _ in unexplained(f)] == [4, 9, 15]


def test_every_function_level_import_gives_its_reason(capsys):
    files = sorted(PACKAGE.rglob("*.py"))
    total = exempt = 0
    bad = []
    for path in files:
        rel = path.relative_to(ROOT).as_posix()
        found = function_level_imports(path)
        total += len(found)
        if rel.startswith(NOT_YET):
            exempt += len(found)
            continue
        bad += [f"{rel}:{n}: {text}" for n, text in unexplained(path)]
    with capsys.disabled():
        print(f"\nfunction-level imports in cr3bp/: {total} ({exempt} in files not checked yet: "
              f"{', '.join(NOT_YET)})")
    assert not bad, ("function-level imports without a '# lazy: <reason>' comment (hoist them to "
                     "the module top, or say why they must stay):\n" + "\n".join(bad))
