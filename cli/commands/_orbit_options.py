"""Options shared by the orbit, family and catalog commands (family selection, targets)."""

from __future__ import annotations

from cr3bp.vocabulary import FAMILIES, ORBIT_TARGETS, TARGET_HELP

#: (option name, metavar, help) of each orbit target (cr3bp.vocabulary.ORBIT_TARGETS).
TARGETS = tuple((name, *TARGET_HELP[name]) for name in ORBIT_TARGETS)


def add_family_options(p, need_branch_help=True):
    g = p.add_argument_group("family")
    g.add_argument("--family", required=True, metavar="NAME",
                   help=f"{', '.join(FAMILIES)} (halo also as nrho)")
    g.add_argument("--point", metavar="L1|L2|L3", help="collinear Lagrange point (lyapunov, halo, vertical, axial)")
    g.add_argument("--branch", metavar="north|south", help="halo branch (z > 0 or < 0 at the crossing "
                   "farther from the smaller primary)")
    g.add_argument("--ratio", metavar="P:Q", help="resonant family: P orbits about the larger primary "
                   "in Q revolutions of the primaries")


def add_target_options(p):
    g = p.add_argument_group("target (give exactly one)")
    for name, meta, text in TARGETS:
        g.add_argument(f"--{name}", metavar=meta, help=text)


def targets_given(args):
    return {name: getattr(args, name) for name, _, _ in TARGETS if getattr(args, name, None) is not None}


def add_catalog_option(p, note=""):
    """``--catalog [PATH]`` (cli.common.add_catalog_options): not used unless given."""
    from .. import common
    common.add_catalog_options(p, used_by_default=False, note=note)


def open_catalog(args):
    from .. import common
    return common.open_catalog(args)


def progress_printer(args, what):
    from . import _orbit_options  # noqa: F401  (keeps the import local to the CLI)
    from .. import common

    def report(i, n, orbit):
        if i == 1 or i % 10 == 0:
            extra = f", period {orbit.period_days:.4f} d" if orbit.system.dimensional else ""
            common.progress(args, f"{what}: member {i} (up to {n}), Jacobi constant {orbit.jacobi:.6f}{extra}")
    return report
