"""What every command shares: system options, output formats, errors, progress, the caution."""

from __future__ import annotations

import csv
import io
import json
import math
import sys
from pathlib import Path

FORMATS = ("table", "json", "csv")


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


def whole_number(name, text, lo, hi):
    """An option's whole number in lo..hi, or a one-line InputError naming it."""
    from cr3bp.errors import InputError
    try:
        v = int(text)
    except (TypeError, ValueError):
        raise InputError(f"{name} {text!r} is not a whole number") from None
    if not lo <= v <= hi:
        raise InputError(f"{name} {v} is outside {lo}..{hi}")
    return v


def _float_arg(name, text):
    from cr3bp.errors import InputError
    try:
        v = float(text)
    except (TypeError, ValueError):
        raise InputError(f"{name} {text!r} is not a number") from None
    if not math.isfinite(v):
        raise InputError(f"{name} {text!r} is not finite")
    return v


def resolve_system(args):
    """The System named by --system, or the custom one of --mu [--length-km --time-s]."""
    from cr3bp import system
    from cr3bp.errors import InputError
    if args.system and args.mu:
        raise InputError("give --system or --mu, not both")
    if args.mu is not None:
        lk = None if args.length_km is None else _float_arg("--length-km", args.length_km)
        ts = None if args.time_s is None else _float_arg("--time-s", args.time_s)
        try:
            mu = float(args.mu)
        except ValueError:
            raise InputError(f"--mu {args.mu!r} is not a number; allowed range (0, 0.5]") from None
        return system(mu=mu, length_km=lk, time_s=ts)
    if args.length_km is not None or args.time_s is not None:
        raise InputError("--length-km and --time-s go with --mu")
    if not args.system:
        raise InputError("give --system NAME (see 'librate systems') or --mu VALUE")
    return system(args.system)


# ---- messages ------------------------------------------------------------------------

def caution_footer() -> str:
    from cr3bp.cautions import caution_lines
    return "\n" + "\n".join(caution_lines()) + "\n"


def progress(args, message: str, verbose_only=False):
    if getattr(args, "quiet", False):
        return
    if verbose_only and not getattr(args, "verbose", False):
        return
    print(message, file=sys.stderr, flush=True)


#: Compiled kernels whose cache decides the first-run notice: (module, function).
COMPILED_KERNELS = (("cr3bp.integrate.dop853", "integrate"),
                    ("cr3bp.integrate.dop853", "integrate_batch"))


#: Kernels that :mod:`cr3bp.integrate.prebuilt` builds ahead of time (``propagate`` and the
#: functions of :mod:`cr3bp.dynamics` use the prebuilt ones when current).
PREBUILT_KERNELS = frozenset([("cr3bp.integrate.dop853", "integrate")] + [
    ("cr3bp.dynamics_kernels", name) for name in ("eom", "grad_omega", "hessian_omega", "_jacobi_many")])
#: What the dynamics functions compile (the Lagrange points, Jacobi constants, ...).
DYNAMICS_KERNELS = (("cr3bp.dynamics_kernels", "_jacobi_many"), ("cr3bp.dynamics_kernels", "grad_omega"),
                    ("cr3bp.dynamics_kernels", "hessian_omega"))


def _prebuilt_current() -> bool:
    from cr3bp.integrate import prebuilt
    return prebuilt.kernels() is not None


def kernels_cached(kernels=COMPILED_KERNELS) -> bool:
    """True when numba's on-disk cache holds a fresh entry for every kernel in ``kernels``.

    numba (``cache=True``) writes ``<module>.<function>-<line>.py<ver>.nbi`` index files
    (plus ``.nbc`` data) into the ``__pycache__`` folder beside the module, or below
    ``NUMBA_CACHE_DIR`` when that is set or the package folder is read-only. An index is
    used only while the SHA-256 stamp of the module's source stored in it matches the
    file, otherwise numba compiles again. The check asks each dispatcher's own cache, so it
    looks exactly where numba will look. The kernels of :data:`PREBUILT_KERNELS` count as
    cached when their current ahead-of-time build is present (then numba's are not used).
    """
    import importlib
    for module, func in kernels:
        if (module, func) in PREBUILT_KERNELS and _prebuilt_current():
            continue        # the ahead-of-time build replaces it: nothing to compile
        try:
            disp = getattr(importlib.import_module(module), func)
            cache_file = disp._cache._cache_file
            if not cache_file._load_index():
                return False
        except Exception:  # a numba without this layout: look for index files instead
            mod = importlib.import_module(module)
            src = Path(mod.__file__)
            if not list((src.parent / "__pycache__").glob(f"{src.stem}.{func}-*.nbi")):
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


def run_command(args) -> int:
    from cr3bp.errors import LibrateError
    _one_line_warnings()
    try:
        if args.command not in ("systems",):
            # a command module may name the compiled kernels it uses (KERNELS)
            mod = sys.modules.get(getattr(args._run, "__module__", ""), None)
            compile_notice(args, getattr(mod, "KERNELS", None))
        return int(args._run(args) or 0)
    except LibrateError as e:
        print(f"librate: error: {e}", file=sys.stderr)
        return e.exit_status
    except KeyboardInterrupt:
        print("librate: interrupted", file=sys.stderr)
        return 130


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


def csv_text(headers, rows, comments=()) -> str:
    from cr3bp.cautions import caution_lines
    buf = io.StringIO()
    for line in list(comments) + caution_lines():
        buf.write(f"# {line}\n" if not line.startswith("#") else line + "\n")
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(headers)
    for r in rows:
        w.writerow([repr(v) if isinstance(v, float) else v for v in r])
    return buf.getvalue()


def json_text(payload: dict) -> str:
    from cr3bp.cautions import CAUTION
    from cr3bp.plain import json_default
    body = dict(payload)
    body.setdefault("caution", CAUTION)
    return json.dumps(body, indent=2, default=json_default) + "\n"


def emit(args, *, payload: dict, headers=None, rows=None, table: str | None = None, comments=()):
    """Write the result in the chosen format, to --out (atomically) or to the screen.

    ``table`` is the human text (the caution is appended); ``headers``/``rows`` feed CSV;
    ``payload`` feeds JSON.
    """
    fmt = args.format
    if fmt == "json":
        text = json_text(payload)
    elif fmt == "csv":
        if headers is None:
            from cr3bp.errors import InputError
            raise InputError("this command has no CSV form; use --format table or json")
        text = csv_text(headers, rows, comments)
    else:
        if table is None:
            table = format_table(headers, rows)
        text = table + caution_footer()
    if args.out:
        from cr3bp.atomic import write_text
        write_text(args.out, text)
        progress(args, f"wrote {args.out}")
    else:
        sys.stdout.write(text)
