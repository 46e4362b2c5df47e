"""The families are one table of recipes (cr3bp/orbits/recipes.py): the orbit code reads the
row and never asks which family it is, so adding a family is adding a row."""

from __future__ import annotations

import ast
from dataclasses import replace
from pathlib import Path

import pytest

from cr3bp.orbits import families, recipes, request
from cr3bp.systems import system

ROOT = Path(__file__).resolve().parent.parent / "cr3bp" / "orbits"
#: Modules that must not compare a family name with a family word.
READERS = ("families.py", "shooting.py", "request.py", "continuation.py", "seeds.py", "_collinear.py")
#: Functions that are one family's own start or route (the rows name them), allowed to say its word.
OWN_WAYS = {"_resonant_first", "grow_resonant", "vertical_junction", "vertical_by_branching",
            "axial_from_vertical"}


def _family_comparisons(path):
    tree = ast.parse(path.read_text())
    found = []

    def walk(node, inside):
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            inside = node.name
        if isinstance(node, ast.Compare) and inside not in OWN_WAYS:
            parts = [node.left, *node.comparators]
            words = [p.value for p in parts if isinstance(p, ast.Constant) and p.value in recipes.FAMILIES]
            words += [e.value for p in parts if isinstance(p, (ast.Tuple, ast.List, ast.Set))
                      for e in p.elts if isinstance(e, ast.Constant) and e.value in recipes.FAMILIES]
            if words:
                found.append(f"{path.name}:{node.lineno} ({inside}) compares with {words}")
        for child in ast.iter_child_nodes(node):
            walk(child, inside)

    walk(tree, "")
    return found


def test_no_family_word_comparisons_in_the_orbit_code():
    found = [f for name in READERS for f in _family_comparisons(ROOT / name)]
    assert not found, "; ".join(found)


def test_every_row_is_complete():
    for name, r in recipes.RECIPES.items():
        assert r.name == name
        assert r.start in families.STARTS, name
        assert r.start != "seed" or r.seed is not None, name
        assert r.start != "branch" or r.branching is not None, name
        assert all(way in families.WAYS for _, way in r.routes), name
        for point, over in r.at.items():
            assert point in r.points and set(over) <= set(r.__dataclass_fields__), name
        assert set(r.targets) <= set(request.targets.KINDS), name


def test_adding_a_family_is_adding_a_row(monkeypatch):
    """A new row (here the planar Lyapunov recipe under another name, L1 only) is parsed,
    checked, seeded, corrected and grown with no other change."""
    row = replace(recipes.RECIPES["lyapunov"], name="planar-test", points=("L1",), at={})
    monkeypatch.setitem(recipes.RECIPES, "planar-test", row)
    monkeypatch.setattr(recipes, "FAMILIES", tuple(recipes.RECIPES))
    monkeypatch.setattr(families, "FAMILIES", tuple(recipes.RECIPES))
    spec = request.parse_request("planar-test L1 jacobi=3.18")
    assert (spec.family, spec.point) == ("planar-test", "L1")
    with pytest.raises(request.InputError, match="offered at L1 only"):
        request.parse_request("planar-test L2 jacobi=3.18")
    fam = families.grow_family(system("earth-moon"), "planar-test", "L1",
                               stops=families.continuation.Stops(max_members=3))
    ref = families.grow_family(system("earth-moon"), "lyapunov", "L1",
                               stops=families.continuation.Stops(max_members=3))
    assert fam.family == "planar-test" and len(fam.members) == 3
    assert [m.state.tolist() for m in fam.members] == [m.state.tolist() for m in ref.members]


def test_the_recipe_rows_are_the_vocabulary_s_families():
    # one list of family words (cr3bp/vocabulary.py): the recipe table has a row for each word
    # and no other, and each row's targets are words of the one target list
    from cr3bp import vocabulary
    from cr3bp.orbits import recipes
    assert tuple(recipes.RECIPES) == vocabulary.FAMILIES
    for name, row in recipes.RECIPES.items():
        assert set(row.targets) <= set(vocabulary.ORBIT_TARGETS), name
