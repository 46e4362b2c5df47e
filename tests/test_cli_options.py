"""Options with one meaning in every command (cli/common.py): --plot, --catalog, --workers.

The project's own conventions (common practice); no outside source.
"""

import argparse

import pytest

from cr3bp.catalog import default_path
from cr3bp.errors import InputError
from librate_cli import common
from librate_cli.main import build_parser


def _commands():
    parser = build_parser()
    for action in parser._actions:                       # argparse keeps subparsers here
        if isinstance(action, argparse._SubParsersAction):
            return action.choices
    raise AssertionError("no subcommands")


def _leaves(p):
    """The parsers that take options (catalog's actions are subparsers of their own)."""
    subs = [a for a in p._actions if isinstance(a, argparse._SubParsersAction)]
    if not subs:
        return [p]
    return [leaf for s in subs for q in s.choices.values() for leaf in _leaves(q)]


def _with(option):
    out = []
    for name, p in _commands().items():
        for leaf in _leaves(p):
            for a in leaf._actions:
                if option in a.option_strings:
                    out.append((name, leaf, a))
    return out


def _defaults(leaf):
    """The values a command's options take when not given (with its set_defaults)."""
    return {**{a.dest: a.default for a in leaf._actions}, **leaf._defaults}


PLOT = _with("--plot")
CATALOG = _with("--catalog")
WORKERS = _with("--workers")


def test_the_shared_options_are_where_they_were():
    assert {n for n, _, _ in PLOT} >= {"orbit", "family", "propagate", "zvc", "graph", "route", "manifold",
                                       "section", "connect", "torus", "keep", "shadow", "refine"}
    assert {n for n, _, _ in CATALOG} == {"orbit", "family", "torus", "graph", "route", "catalog", "run"}
    assert {n for n, _, _ in WORKERS} == {"graph", "route", "run", "keep", "family", "manifold", "section", "disperse",
                                          "torus"}


@pytest.mark.parametrize("name, leaf, action", PLOT, ids=[n for n, _, _ in PLOT])
def test_every_plot_option_takes_one_figure_with_the_same_suffixes(name, leaf, action, tmp_path):
    args = argparse.Namespace(**_defaults(leaf))
    if name == "family":                         # two figures: --plots PREFIX (old spelling --plot)
        assert "--plots" in action.option_strings and args._plot_prefix
        return
    assert args._plot_prefix is False
    for suffix in (".png", ".svg", ".pdf", ".PNG"):
        assert common.plot_file("--plot", tmp_path / f"a{suffix}") == str(tmp_path / f"a{suffix}")
    for bad in ("a.gif", "a.jpg", "a", "a.png.txt"):
        with pytest.raises(InputError, match=r"must end in \.png, \.svg or \.pdf"):
            common.plot_file("--plot", tmp_path / bad)


@pytest.mark.parametrize("name, leaf, action", CATALOG, ids=[n for n, _, _ in CATALOG])
def test_every_catalog_option_means_the_catalogue_file(name, leaf, action, tmp_path):
    """``--catalog PATH``: that file; bare: the default one; without it: the default or none,
    as the command always did; ``--no-catalog`` (where offered) none."""
    assert action.nargs == "?" and action.const is common.DEFAULT_CATALOG
    base = _defaults(leaf)
    given = argparse.Namespace(**dict(base, catalog=str(tmp_path / "c.sqlite")))
    bare = argparse.Namespace(**dict(base, catalog=common.DEFAULT_CATALOG))
    assert common.catalog_file(given) == str(tmp_path / "c.sqlite")
    assert common.catalog_file(bare) == str(default_path())
    absent = common.catalog_file(argparse.Namespace(**base))
    assert absent == (str(default_path()) if name in ("graph", "route", "run", "catalog") else None)
    if "no_catalog" in base:
        assert common.catalog_file(argparse.Namespace(**dict(base, no_catalog=True))) is None
        with pytest.raises(InputError, match="not both"):
            common.catalog_file(argparse.Namespace(**dict(base, no_catalog=True, catalog="x.sqlite")))


@pytest.mark.parametrize("name, leaf, action", WORKERS, ids=[n for n, _, _ in WORKERS])
def test_every_workers_option_has_one_parser(name, leaf, action):
    assert action.type is None                    # text, read by cr3bp.validate.workers
    ns = argparse.Namespace(workers="4")
    assert common.workers(ns) == 4
    messages = set()
    for bad in ("0", "257", "1.5", "two", "nan"):
        with pytest.raises(InputError) as e:
            common.workers(argparse.Namespace(workers=bad))
        messages.add(str(e.value).split("'")[0].split(" ")[0])
    assert messages == {"--workers"}


def test_the_first_run_notice_reads_no_private_attribute_of_numba():
    import inspect
    src = inspect.getsource(common.kernels_cached) + inspect.getsource(common._numba_cache_folders)
    assert "._cache" not in src and "_load_index" not in src


def test_kernels_cached_follows_the_cache_folder(tmp_path, monkeypatch):
    """An empty NUMBA_CACHE_DIR holds nothing; an index file newer than the source counts, an
    older one does not (numba recompiles then)."""
    import importlib.util
    import os
    monkeypatch.setenv("NUMBA_CACHE_DIR", str(tmp_path))
    monkeypatch.setattr(common, "_prebuilt_current", lambda: False)
    kernels = (("cr3bp.integrate.dop853", "integrate"),)
    assert common.kernels_cached(kernels) is False
    src = importlib.util.find_spec("cr3bp.integrate.dop853").origin
    index = tmp_path / "integrate_0123" / "dop853.integrate-400.py311.nbi"
    index.parent.mkdir()
    index.write_bytes(b"")
    made = os.stat(src).st_mtime
    os.utime(index, (made - 10, made - 10))
    assert common.kernels_cached(kernels) is False
    os.utime(index, (made + 10, made + 10))
    assert common.kernels_cached(kernels) is True
