"""One module per subcommand, found automatically. Each defines ``NAME``, ``HELP``, ``EXAMPLE``,
``ORDER`` (its place in the guide printed by a bare ``librate``), ``add_arguments(parser)`` and
``run(args) -> int``. Modules import the library inside ``run`` so ``librate --help`` stays fast.
"""

import importlib
import pkgutil


def module_named(name):
    """The command module called ``name`` alone (None if there is none), so running one command
    imports one command module instead of all of them."""
    if not isinstance(name, str) or not name.isidentifier() or name.startswith("_"):
        return None
    if not any(m.name == name for m in pkgutil.iter_modules(__path__)):
        return None
    mod = importlib.import_module(f"{__name__}.{name}")
    return mod if getattr(mod, "NAME", None) == name else None


def modules():
    mods = [importlib.import_module(f"{__name__}.{m.name}") for m in pkgutil.iter_modules(__path__)
            if not m.name.startswith("_")]
    return sorted(mods, key=lambda m: (getattr(m, "ORDER", 100), m.NAME))
