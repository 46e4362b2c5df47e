"""One module per subcommand, found automatically. Each defines ``NAME``, ``HELP``, ``EXAMPLE``,
``ORDER`` (its place in the guide printed by a bare ``librate``), ``add_arguments(parser)`` and
``run(args) -> int``. Modules import the library inside ``run`` so ``librate --help`` stays fast.
"""

import importlib
import pkgutil


def modules():
    mods = [importlib.import_module(f"{__name__}.{m.name}") for m in pkgutil.iter_modules(__path__)
            if not m.name.startswith("_")]
    return sorted(mods, key=lambda m: (getattr(m, "ORDER", 100), m.NAME))
