"""What every command shares: system options, output formats, errors, progress, the caution."""

from __future__ import annotations

import csv
import io
import json
import os
import sys
from pathlib import Path

from cr3bp.vocabulary import IMAGE_FORMATS, OUTPUT_FORMATS

FORMATS = OUTPUT_FORMATS


# ---- options -------------------------------------------------------------------------

def add_system_options(p, required=True):
    g = p.add_argument_group("system (a tabulated name, or a custom mass ratio)")
    g.add_argument("--system", metavar="NAME", help="tabulated system, e.g. earth-moon (see 'librate systems')")
    g.add_argument("--mu", type=str, metavar="VALUE", help="custom system: mass ratio in (0, 0.5]")
    g.add_argument("--length-km", type=str, metavar="KM", help="custom system: length unit in km")
    g.add_argument("--time-s", type=str, metavar="S", help="custom system: time unit in seconds")
    p.set_defaults(_system_required=required)


def add_output_options(p, formats=FORMATS, default="table"):
    p.add_argument("--format", choices=formats, default=default, help=f"output format (default {default})")
    p.add_argument("--out", metavar="FILE", help="write the output to FILE instead of the screen")
    add_verbosity(p)


def add_verbosity(p):
    p.add_argument("--quiet", "-q", action="store_true", help="no progress messages")
    p.add_argument("--verbose", "-v", action="store_true", help="more detail in progress messages")


# ---- options with one meaning in every command ----------------------------------------
#
# --plot FILE      one figure; its suffix (.png, .svg, .pdf) chooses the format. (librate family
#                  draws two figures: its option is --plots PREFIX, --plot kept as its old spelling.)
# --catalog [PATH] use the orbit catalogue, at PATH or, bare, at the default path
#                  ($LIBRATE_CATALOG or ~/.local/share/librate/catalog.sqlite); --no-catalog: none.
#                  Commands differ only in whether they use it when neither is given.
# --workers N      worker processes, a whole number 1..MAX_WORKERS (cr3bp.validate.workers).

#: Suffixes of a figure file (``--plot FILE``); the suffix chooses the format.
PLOT_SUFFIXES = tuple("." + f for f in IMAGE_FORMATS)


def add_plot_option(p, what: str, metavar: str = "FILE"):
    """``--plot FILE``: ``what`` drawn to FILE, format by its suffix (checked by check_outputs)."""
    p.add_argument("--plot", metavar=metavar,
                   help=f"{what} to FILE ({', '.join(PLOT_SUFFIXES[:-1])} or {PLOT_SUFFIXES[-1]}, by its suffix)")
    p.set_defaults(_plot_prefix=False)


def add_plots_prefix_option(p, what: str):
    """``--plots PREFIX`` (old spelling ``--plot``): several figures named PREFIX-<what>.png."""
    p.add_argument("--plots", "--plot", dest="plot", metavar="PREFIX", help=what)
    p.set_defaults(_plot_prefix=True)


def plot_file(name: str, path) -> str:
    """A figure file name (of ``--plot``, ``--map``) whose suffix is one of PLOT_SUFFIXES (any
    case); InputError naming the option otherwise."""
    from cr3bp.errors import InputError, shown
    if not str(path).lower().endswith(PLOT_SUFFIXES):
        raise InputError(f"{name} '{shown(path)}': the file name must end in "
                         f"{', '.join(PLOT_SUFFIXES[:-1])} or {PLOT_SUFFIXES[-1]}")
    return str(path)


class _DefaultCatalog:
    """The value of a bare ``--catalog``: the default path (an empty ``--catalog=`` is refused)."""

    def __repr__(self):
        return "the default catalogue"


DEFAULT_CATALOG = _DefaultCatalog()


def add_catalog_options(p, *, used_by_default: bool, opt_out: bool = True,
                        what: str = "the orbit catalogue", note: str = ""):
    """``--catalog [PATH]``, and ``--no-catalog`` where the catalogue is used by default
    (``opt_out=False``: a command that always uses one, e.g. ``librate catalog``)."""
    from_default = (("used unless --no-catalog" if opt_out else "always used") if used_by_default
                    else "not used without this option")
    p.add_argument("--catalog", nargs="?", const=DEFAULT_CATALOG, default=None, metavar="PATH",
                   help=f"use {what} in the file PATH (bare --catalog: $LIBRATE_CATALOG or "
                        f"~/.local/share/librate/catalog.sqlite); {from_default}{note}")
    if used_by_default and opt_out:
        p.add_argument("--no-catalog", action="store_true", help="use no catalogue: compute everything, keep nothing")
    p.set_defaults(_catalog_by_default=used_by_default)


def catalog_file(args):
    """The catalogue file the options name (a str), or None when the command uses none."""
    from cr3bp.errors import InputError
    c = getattr(args, "catalog", None)
    if getattr(args, "no_catalog", False):
        if c is not None:
            raise InputError("give --catalog or --no-catalog, not both")
        return None
    if c is None and not getattr(args, "_catalog_by_default", False):
        return None
    if c is not None and c is not DEFAULT_CATALOG:
        return str(c)
    from cr3bp.catalog import default_path
    return str(default_path())


def open_catalog(args):
    """The Catalog the options name, or None."""
    path = catalog_file(args)
    if path is None:
        return None
    from cr3bp.catalog import Catalog
    return Catalog(path)


def add_scheduler_option(p, what: str):
    """``--scheduler ADDRESS``: ``what`` (e.g. "atlas: grow the families") on a dask.distributed
    scheduler or a local cluster started here."""
    p.add_argument("--scheduler", metavar="ADDRESS", help=f"{what} on a dask.distributed scheduler (e.g. "
                   "tcp://10.0.0.5:8786), or 'local:N' for a local cluster of N worker processes started and "
                   "stopped here ('local': --workers processes, default 2); needs librate[cluster]")


def add_workers_option(p, help_text: str = "worker processes (default: all cores; 1: no pool)"):
    p.add_argument("--workers", metavar="N", help=help_text)


def workers(args):
    """--workers as an int (cr3bp.validate.workers), or None when not given."""
    text = getattr(args, "workers", None)
    if text is None:
        return None
    from cr3bp.validate import workers as _workers
    return _workers("--workers", text)


def whole_number(name, text, lo, hi):
    """An option's whole number in lo..hi, or a one-line InputError naming it."""
    from cr3bp.validate import whole_number as _whole
    return _whole(name, text, lo, hi)


def output_file(args, name="--out", path=None, inputs=()):
    """Check an output file before any work (cr3bp.validate.output_file); None passes."""
    path = getattr(args, name.lstrip("-").replace("-", "_"), None) if path is None else path
    if path is None:
        return None
    from cr3bp.validate import output_file as _check
    return _check(name, path, inputs)


def output_folder(args, name="--out", path=None, inputs=()):
    path = getattr(args, name.lstrip("-").replace("-", "_"), None) if path is None else path
    if path is None:
        return None
    from cr3bp.validate import output_folder as _check
    return _check(name, path, inputs)


#: Options naming files a command reads (checked against its outputs).
_INPUT_OPTIONS = ("nodes", "input", "from_file", "route", "scenario")
#: Options naming files a command writes: (option, attribute).
_OUTPUT_OPTIONS = (("--out", "out"), ("--plot", "plot"), ("--curves", "curves"), ("--map", "map"),
                   ("--html", "html"), ("OUT", "output"))


def check_outputs(args):
    """Before any work: every output file or folder of the command can be written, is not one of
    its inputs (node list, trajectory file, route folder, catalogue) and no two outputs are one
    file (cr3bp.validate.output_file / output_folder). ``librate run`` checks its own."""
    from cr3bp.errors import InputError
    from cr3bp.validate import _same_path
    if args.command == "run":
        return
    inputs = [getattr(args, k, None) for k in _INPUT_OPTIONS]
    inputs = [str(x) for x in inputs if x is not None]
    if hasattr(args, "catalog"):
        c = catalog_file(args)
        if c is not None:
            inputs.append(c)
    outs = []
    for name, attr in _OUTPUT_OPTIONS:
        path = getattr(args, attr, None)
        if path is None:
            continue
        path = str(path)
        if not path.strip():
            raise InputError(f"{name} is empty; give a {'folder' if args.command == 'route' and attr == 'out' else 'file name'}")
        if args.command == "route" and attr == "out":
            output_folder(args, name, path, inputs)
            continue
        if attr == "plot" and getattr(args, "_plot_prefix", False):
            for tag in ("family", "stability"):
                output_file(args, "--plots", f"{path}-{tag}.png", inputs)
            continue
        if attr == "plot":
            plot_file(name, path)
        output_file(args, name, path, inputs)
        for other_name, other in outs:
            if _same_path(path, other):
                raise InputError(f"{name} and {other_name} name the same file '{path}'")
        outs.append((name, path))


def resolve_system(args):
    """The System named by --system, or the custom one of --mu [--length-km --time-s]
    (cr3bp.api.system)."""
    from cr3bp.api import system
    from cr3bp.errors import InputError
    if args.system and args.mu:
        raise InputError("give --system or --mu, not both")
    if args.mu is not None:
        from cr3bp.validate import finite_number
        lk = None if args.length_km is None else finite_number("--length-km", args.length_km)
        ts = None if args.time_s is None else finite_number("--time-s", args.time_s)
        return system(mu=finite_number("--mu", args.mu), length_km=lk, time_s=ts)
    if args.length_km is not None or args.time_s is not None:
        raise InputError("--length-km and --time-s go with --mu")
    if not args.system:
        raise InputError("give --system NAME (see 'librate systems') or --mu VALUE")
    return system(args.system)


# ---- messages ------------------------------------------------------------------------

def add_orbit_at_date(group, epoch_help: str, span_help: str, required: bool = True) -> None:
    """``--orbit REQUEST``, ``--epoch ISO`` and ``--span SPAN`` (default 365d): the options of the
    commands that follow a periodic orbit placed at a date (shadow, keep). ``required=False``:
    the command has another source (shadow's ``--trajectory``) and checks the pair itself; the
    span's default is then None (the caller's, 365d for an orbit)."""
    group.add_argument("--orbit", metavar="SPEC", required=required,
                       help='periodic-orbit request, e.g. "halo L2 south resonance=9:2"')
    group.add_argument("--epoch", metavar="ISO", required=required,
                       help=f"{epoch_help}, ISO 8601 (Z = UTC, or a trailing TDB/TT/TAI/UTC)")
    group.add_argument("--span", metavar="SPAN", default="365d" if required else None,
                       help=f"{span_help}: a time (365d) or Nperiods (default 365d)")


def folder_exists(option: str, path) -> None:
    """The folder a file will be written into exists (InputError naming the option otherwise)."""
    from cr3bp.errors import InputError
    d = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(d):
        raise InputError(f"{option} {path}: folder {d} does not exist")


def caution_footer(model: str = "cr3bp") -> str:
    from cr3bp.cautions import caution_lines
    return "\n" + "\n".join(caution_lines(model=model)) + "\n"


def progress(args, message: str, verbose_only=False):
    if getattr(args, "quiet", False):
        return
    if verbose_only and not getattr(args, "verbose", False):
        return
    print(message, file=sys.stderr, flush=True)


#: Compiled kernels whose cache decides the first-run notice: (module, function).
COMPILED_KERNELS = (("cr3bp.integrate.dop853", "integrate"),
                    ("cr3bp.integrate.lanes", "integrate_lanes"))


#: Kernels that :mod:`cr3bp.integrate.prebuilt` builds ahead of time (``propagate``, the
#: functions of :mod:`cr3bp.dynamics` and ``propagate_batch``'s lane blocks use the prebuilt
#: ones when current: numba's lane kernel is then never compiled, so it gives no notice).
PREBUILT_KERNELS = frozenset([("cr3bp.integrate.dop853", "integrate"), ("cr3bp.integrate.lanes", "integrate_lanes")] + [
    ("cr3bp.dynamics.kernels", name) for name in ("eom", "grad_omega", "hessian_omega", "_jacobi_many")])
#: What the dynamics functions compile (the Lagrange points, Jacobi constants, ...).
DYNAMICS_KERNELS = (("cr3bp.dynamics.kernels", "_jacobi_many"), ("cr3bp.dynamics.kernels", "grad_omega"),
                    ("cr3bp.dynamics.kernels", "hessian_omega"))


def _prebuilt_current() -> bool:
    from cr3bp import compiled
    return compiled.kernels() is not None


def _numba_cache_folders(source: Path) -> list:
    """Where numba keeps the cache of the kernels of ``source`` (numba's documented places:
    below ``NUMBA_CACHE_DIR`` when set, else the ``__pycache__`` folder beside the module or,
    when that is not writable, the per-user cache folder)."""
    env = os.environ.get("NUMBA_CACHE_DIR")
    if env:
        return [Path(env)]
    beside = source.parent / "__pycache__"
    if os.access(beside if beside.is_dir() else source.parent, os.W_OK):
        return [beside]
    return [Path(os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache") / "numba"]


def kernels_cached(kernels=COMPILED_KERNELS) -> bool:
    """True when numba's on-disk cache holds an entry for every kernel in ``kernels`` that is
    not older than the kernel's source file.

    numba (``cache=True``) writes an index file ``<module>.<function>-<line>.py<ver>.nbi`` (plus
    ``.nbc`` data) for each kernel into the folders :func:`_numba_cache_folders` lists, and
    recompiles when the module's source changed after the index was written. This looks for
    those files by name and compares modification times; it reads nothing of numba's own
    (no import of the kernel modules, no private attribute), so it is a judgement for a
    notice, not a promise: a wrong guess costs one progress line. The kernels of
    :data:`PREBUILT_KERNELS` count as cached when their current ahead-of-time build is present
    (then numba's are not used).
    """
    import importlib.util
    for module, func in kernels:
        if (module, func) in PREBUILT_KERNELS and _prebuilt_current():
            continue        # the ahead-of-time build replaces it: nothing to compile
        spec = importlib.util.find_spec(module)
        if spec is None or not spec.origin:
            return False
        src = Path(spec.origin)
        made = src.stat().st_mtime
        pattern = f"{src.stem}.{func}-*.nbi"
        found = False
        for folder in _numba_cache_folders(src):
            if not folder.is_dir():
                continue
            hits = folder.glob(pattern) if folder.name == "__pycache__" else folder.rglob(pattern)
            if any(h.stat().st_mtime >= made for h in hits):
                found = True
                break
        if not found:
            return False
    return True


def compile_notice(args, kernels=None):
    """Say on screen when the compiled kernels are about to be built (first run only).

    ``kernels`` (a command module's ``KERNELS``) are checked exactly with
    :func:`kernels_cached`; without it, any numba index file of the library counts.
    """
    if kernels is not None:
        cold = not kernels_cached(kernels)
    else:
        import importlib.util
        root = Path(importlib.util.find_spec("cr3bp").origin).parent
        cold = not (list((root / "__pycache__").glob("*.nbi"))
                    or list((root / "integrate" / "__pycache__").glob("*.nbi")))
    if cold:
        progress(args, "librate: compiling the numerical kernels (first run only; later runs "
                       "reuse the cache)...")


def _one_line_warnings():
    """Warnings (e.g. the leap-second table's end of validity) as one 'librate: note:' line
    each, shown once per kind of warning, instead of Python's two-line form."""
    import warnings
    seen = set()

    def show(message, category, filename, lineno, file=None, line=None):
        text = str(message)
        key = category if issubclass(category, UserWarning) and category is not UserWarning else text
        if key not in seen:                    # one note per kind of warning
            seen.add(key)
            print(f"librate: note: {text}", file=sys.stderr)
    warnings.showwarning = show


#: OSError numbers that mean the output place is not usable (bad input: exit status 2);
#: any other (a full disk, an I/O error) is a failure of the environment (exit status 1).
_BAD_PLACE = {"EACCES", "EPERM", "EROFS", "EISDIR", "ENOTDIR", "ENAMETOOLONG", "ENOENT", "EEXIST",
              "ELOOP", "EINVAL"}


def os_error_message(e) -> tuple[str, int]:
    """(one-line message, exit status) for an OSError that reached the command."""
    import errno
    from cr3bp.errors import shown
    name = errno.errorcode.get(e.errno or 0, "")
    what = e.strerror or str(e)
    where = f" '{shown(e.filename)}'" if e.filename else ""
    status = 2 if name in _BAD_PLACE else 1
    if name in ("ENOSPC", "EDQUOT"):
        what += " (the file system is full; nothing was written)"
    return f"cannot use{where}: {what}", status


def one_line(message) -> str:
    """A message as one line: any character that is not printable (a line break, a record
    separator that splitlines() breaks on) is escaped; nothing is cut."""
    t = str(message)
    if t.isprintable():
        return t
    return "".join(c if c.isprintable() else c.encode("unicode_escape").decode("ascii") for c in t)


def run_command(args) -> int:
    import os
    from cr3bp.errors import LibrateError, shown
    _one_line_warnings()
    try:
        if args.command not in ("systems",):
            # a command module may name the compiled kernels it uses (KERNELS)
            mod = sys.modules.get(getattr(args._run, "__module__", ""), None)
            check_outputs(args)
            compile_notice(args, getattr(mod, "KERNELS", None))
        else:
            check_outputs(args)
        return int(args._run(args) or 0)
    except LibrateError as e:
        # a scenario or node list with several problems: one line each (FILE:LINE: key: message)
        for problem in getattr(e, "problems", None) or [e]:
            print(f"librate: error: {one_line(problem)}", file=sys.stderr)
        return e.exit_status
    except KeyboardInterrupt:
        print("librate: interrupted", file=sys.stderr)
        return 130
    except OSError as e:
        if os.environ.get("LIBRATE_DEBUG"):
            raise
        text, status = os_error_message(e)
        print(f"librate: error: {one_line(text)}", file=sys.stderr)
        return status
    except RecursionError:
        if os.environ.get("LIBRATE_DEBUG"):
            raise
        print("librate: error: an input is nested too deeply to read", file=sys.stderr)
        return 2
    except MemoryError:
        print("librate: error: out of memory (an input asks for more than this machine has)", file=sys.stderr)
        return 1
    except Exception as e:   # a bug: one line, not a traceback (LIBRATE_DEBUG=1 shows it)
        if os.environ.get("LIBRATE_DEBUG"):
            raise
        print(f"librate: error: internal error ({type(e).__name__}: {one_line(shown(e))}); please report it "
              "with the command line (LIBRATE_DEBUG=1 shows the traceback)", file=sys.stderr)
        return 1


# ---- output --------------------------------------------------------------------------

def format_table(headers, rows, title=None) -> str:
    cells = [[_cell(v) for v in row] for row in rows]
    widths = [max([len(h)] + [len(r[i]) for r in cells]) for i, h in enumerate(headers)]
    lines = []
    if title:
        lines += [title, ""]
    lines.append("  ".join(h.rjust(w) for h, w in zip(headers, widths)))
    lines.append("  ".join("-" * w for w in widths))
    lines += ["  ".join(c.rjust(w) for c, w in zip(r, widths)) for r in cells]
    return "\n".join(lines) + "\n"


def _cell(v):
    if v is None:
        return "-"
    if isinstance(v, float):
        if v != v:
            return "-"
        if v == 0 or 1e-3 <= abs(v) < 1e7:
            return f"{v:.6f}".rstrip("0").rstrip(".") if abs(v) < 1e3 else f"{v:,.1f}"
        return f"{v:.6e}"
    return str(v)


def csv_text(headers, rows, comments=(), model: str = "cr3bp") -> str:
    from cr3bp.cautions import caution_lines
    buf = io.StringIO()
    for line in list(comments) + caution_lines(model=model):
        buf.write(f"# {line}\n" if not line.startswith("#") else line + "\n")
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(headers)
    for r in rows:
        w.writerow([repr(v) if isinstance(v, float) else v for v in r])
    return buf.getvalue()


def json_text(payload: dict, model: str = "cr3bp") -> str:
    from cr3bp.cautions import caution
    from cr3bp.io.plain import json_default
    body = dict(payload)
    body.setdefault("caution", caution(model))
    return json.dumps(body, indent=2, default=json_default) + "\n"


def emit(args, *, payload: dict, headers=None, rows=None, table: str | None = None, comments=(),
         model: str = "cr3bp"):
    """Write the result in the chosen format, to --out (atomically) or to the screen.

    ``table`` is the human text (the caution for ``model`` is appended); ``headers``/``rows``
    feed CSV; ``payload`` feeds JSON.
    """
    fmt = args.format
    if fmt == "json":
        text = json_text(payload, model)
    elif fmt == "csv":
        if headers is None:
            from cr3bp.errors import InputError
            raise InputError("this command has no CSV form; use --format table or json")
        text = csv_text(headers, rows, comments, model)
    else:
        if table is None:
            table = format_table(headers, rows)
        text = table + caution_footer(model)
    if args.out:
        from cr3bp.io.atomic import write_text
        write_text(args.out, text)
        progress(args, f"wrote {args.out}")
    else:
        sys.stdout.write(text)
