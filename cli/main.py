"""Entry point of the ``librate`` command."""

from __future__ import annotations

import argparse
import re
import sys

from .commands import module_named as _module_named
from .commands import modules as _modules

EXIT_CODES = """exit status:
  0  done
  2  bad input (a value that is not allowed; nothing is written)
  3  no solution (the request is well formed but nothing satisfies it)
  4  did not converge (an iteration gave up; the message says how far it got)
  1  could not finish (the file system refused a write, e.g. a full disk; nothing partial is left)
  130 interrupted (Ctrl-C)
"""

GUIDE_HEAD = "librate: preliminary mission design in the circular restricted three-body problem.\n\ncommands:\n"


class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors: 'librate: error: ...' and exit status 2, no usage dump."""

    def error(self, message):
        from .common import one_line
        sys.stderr.write(f"librate: error: {one_line(message)} (see '{self.prog} --help')\n")
        sys.exit(2)


_NEGATIVE = re.compile(r"^-[0-9.]")


def _join_negative_values(argv):
    """Let option values start with a minus sign ('--time -3d', '--state -0.5,0,...'): argparse
    would take them for options, so they are joined as '--time=-3d'."""
    out = []
    i = 0
    while i < len(argv):
        a = argv[i]
        if a.startswith("--") and "=" not in a and i + 1 < len(argv) and _NEGATIVE.match(argv[i + 1]):
            out.append(f"{a}={argv[i + 1]}")
            i += 2
            continue
        out.append(a)
        i += 1
    return out


def build_parser(only=None) -> argparse.ArgumentParser:
    """The parser of every command, or of the one command module ``only`` (what ``main`` builds
    when the first word names a command: the other command modules are then not imported)."""
    parser = _Parser(
        prog="librate",
        description="Preliminary spacecraft mission design in the circular restricted three-body problem.",
        epilog=EXIT_CODES, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--version", action="version", version="librate 0.1.0")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for mod in ([only] if only is not None else _modules()):
        p = sub.add_parser(mod.NAME, help=mod.HELP, description=mod.HELP,
                           epilog=f"example:\n  {mod.EXAMPLE}\n\n{EXIT_CODES}",
                           formatter_class=argparse.RawDescriptionHelpFormatter)
        mod.add_arguments(p)
        p.set_defaults(_run=mod.run)
    return parser


def guide() -> str:
    rows = [f"  {m.NAME:<11} {m.HELP}\n              e.g. {m.EXAMPLE}" for m in _modules()]
    return (GUIDE_HEAD + "\n".join(rows) +
            "\n\n'librate COMMAND --help' shows a command's options.\n")


def main(argv=None) -> int:
    """Run one command; Ctrl-C anywhere gives one line and exit status 130."""
    try:
        return _main(argv)
    except KeyboardInterrupt:
        sys.stderr.write("librate: interrupted\n")
        return 130


def _main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else list(argv)
    if not argv:
        from .common import caution_footer
        sys.stdout.write(guide() + caution_footer())
        return 0
    parser = build_parser(_module_named(argv[0]))
    args = parser.parse_args(_join_negative_values(argv))
    if args.command is None:
        parser.print_help()
        return 0
    from .common import run_command
    return run_command(args)


if __name__ == "__main__":
    sys.exit(main())
