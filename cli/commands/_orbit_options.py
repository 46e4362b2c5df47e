"""Options shared by the orbit, family and catalog commands (family selection, targets)."""

from __future__ import annotations

TARGETS = (
    ("period", "TIME", "orbit period, e.g. 6.5626d or 3.41TU"),
    ("jacobi", "C", "Jacobi constant (nondimensional)"),
    ("ax", "LENGTH", "x amplitude (half the x extent), e.g. 20000km"),
    ("ay", "LENGTH", "y amplitude (half the y extent)"),
    ("az", "LENGTH", "out-of-plane amplitude (largest |z|), e.g. 12000km"),
    ("x", "LENGTH", "x of the initial (far) crossing, LU unless a unit is given"),
    ("perilune", "LENGTH", "closest approach to the smaller primary's centre, e.g. 3500km"),
    ("resonance", "P:Q", "synodic resonance (earth-moon): P periods in Q synodic months, e.g. 9:2"),
)


def add_family_options(p, need_branch_help=True):
    g = p.add_argument_group("family")
    g.add_argument("--family", required=True, metavar="NAME",
                   help="lyapunov, halo (alias nrho), vertical, axial, dro or resonant")
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


def add_catalog_option(p, help_text="use the orbit catalogue at PATH (default path when PATH is "
                       "omitted: $LIBRATE_CATALOG or ~/.local/share/librate/catalog.sqlite)"):
    p.add_argument("--catalog", nargs="?", const="", default=None, metavar="PATH", help=help_text)


def open_catalog(args):
    if getattr(args, "catalog", None) is None:
        return None
    from cr3bp.catalog import Catalog
    return Catalog(args.catalog or None)


def progress_printer(args, what):
    from . import _orbit_options  # noqa: F401  (keeps the import local to the CLI)
    from .. import common

    def report(i, n, orbit):
        if i == 1 or i % 10 == 0:
            extra = f", period {orbit.period_days:.4f} d" if orbit.system.dimensional else ""
            common.progress(args, f"{what}: member {i} (up to {n}), Jacobi constant {orbit.jacobi:.6f}{extra}")
    return report
