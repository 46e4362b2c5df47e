"""The integrator and the dynamics kernels built ahead of time, so that a short job does not
pay numba's start-up.

A process that calls a just-in-time kernel first imports numba and initialises its compiler
(its type registries, LLVM and, through its BLAS check, scipy.linalg) even when the machine
code comes from numba's cache: 0.4-1.1 s measured on this project's 2-core machine, more than
a whole catalogued orbit request needs for its numerics (~0.01 s). ``make`` therefore also
compiles the same source -- :func:`cr3bp.integrate.dop853.integrate` and the kernels
:mod:`cr3bp.dynamics` calls -- into an extension module with ``numba.pycc``, which loads
without numba in about a millisecond. :func:`cr3bp.integrate.propagate` and the functions of
:mod:`cr3bp.dynamics` use it when it is present and current; so does :func:`propagate_batch`:
the module holds the lane kernel's block (``lanes_block``, :func:`cr3bp.integrate.lanes._run_block`)
and the one-trajectory-per-row loop (``integrate_rows``), both compiled with the GIL released,
and :func:`propagate_batch` runs blocks of a batch on Python threads. The ephemeris model's
segment kernels stay just-in-time.

Finding the current module is :mod:`cr3bp.compiled`'s job (its names are re-exported
here). Current means built from exactly the source files in :data:`SOURCES`, for this Python, this
numpy and this processor (the module is compiled for the host processor, so a copy on a
machine with another processor is not used). The module's file name carries a key of all of
these; when the key differs -- an edited kernel, a new numpy -- the module is simply not
found and the just-in-time kernels are used until ``make`` (or ``python -m
cr3bp.integrate build``) builds it again. The environment variable
``LIBRATE_KERNELS=jit`` turns the prebuilt module off.

``numba.pycc`` is marked for deprecation by numba; if a numba without it is installed, the
build says so and everything runs on the just-in-time kernels.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import sys
import tempfile
import warnings
from pathlib import Path

from ..compiled import (DIRECTORY, ENV, NOGIL, SIGNATURES, SOURCES, find, kernels, key,  # noqa: F401
                        module_name, reset)

_PACKAGE = Path(__file__).resolve().parent.parent


class BuildError(RuntimeError):
    """The prebuilt module could not be built (no numba.pycc, no C compiler, ...).

    Examples
    --------
    >>> from cr3bp.integrate.prebuilt import BuildError
    >>> str(BuildError("/tmp/x is not writable"))
    '/tmp/x is not writable'

    References
    ----------
    .. [1] Python documentation, "Built-in Exceptions" (:class:`RuntimeError`).
    """


def build(directory: Path | None = None, progress=None) -> Path:
    """Compile the kernels of :data:`SIGNATURES` into ``directory`` (default
    :data:`DIRECTORY`) and remove the modules of other keys there. Returns the file.
    Raises BuildError.

    Parameters
    ----------
    directory : Path, optional
        Where the module goes (default :data:`DIRECTORY`).
    progress : callable(str), optional
        Receives one line before the (minute-long) compilation.

    Returns
    -------
    Path
        The module written.

    Raises
    ------
    BuildError
        The directory cannot be written, numba has no ``numba.pycc``, or compiling failed.

    Examples
    --------
    Compiling takes about a minute and writes the module, so the example is not run:

    >>> from cr3bp.integrate.prebuilt import build
    >>> build().name.startswith("_kernels_")   # doctest: +SKIP
    True

    References
    ----------
    .. [1] numba documentation, "Compiling code ahead of time" (``numba.pycc``).
    """
    d = DIRECTORY if directory is None else Path(directory)
    try:
        d.mkdir(parents=True, exist_ok=True)
    except OSError as e:
        raise BuildError(f"cannot create {d}: {e.strerror}") from None
    if not os.access(d, os.W_OK):
        raise BuildError(f"{d} is not writable")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            from numba.pycc import CC  # lazy: heavy library (numba), its failure handled here
        except ImportError:
            raise BuildError("this numba has no ahead-of-time compiler (numba.pycc); "
                             "the just-in-time kernels are used") from None
    # only the build compiles: the kernels' modules load numba, which a lookup must not
    from ..dynamics import kernels as dynamics_kernels  # lazy: heavy library (numba, via cr3bp.dynamics.kernels)
    from . import dop853  # lazy: heavy library (numba, via cr3bp.integrate.dop853)
    from . import lanes  # lazy: heavy library (numba, via cr3bp.integrate.lanes)
    funcs = {"integrate": dop853.integrate, "integrate_packed": dop853.integrate_packed,
             "integrate_rows": dop853.integrate_rows,
             "lanes_block": lanes._run_block, "eom": dynamics_kernels.eom,
             "grad_omega": dynamics_kernels.grad_omega, "hessian_omega": dynamics_kernels.hessian_omega,
             "_jacobi_many": dynamics_kernels._jacobi_many}
    name = module_name()
    if progress:
        progress(f"librate: building the prebuilt kernels {name} (once per change of their source)...")
    tmp = Path(tempfile.mkdtemp(prefix=".build-", dir=d))
    try:
        cc = CC(name)
        cc.output_dir = str(tmp)
        cc.target_cpu = "host"
        cc.verbose = False
        options = {}
        for export, sig in SIGNATURES.items():
            py = funcs[export].py_func
            cc.export(export, sig)(py)
            options[py] = (export in NOGIL, funcs[export].targetoptions.get("error_model"))
        with warnings.catch_warnings(), _export_options(options):
            warnings.simplefilter("ignore")
            try:
                cc.compile()
            except Exception as e:
                raise BuildError(f"numba.pycc could not build the kernels: {str(e).splitlines()[0] if str(e) else type(e).__name__}") from None
        built = [p for p in tmp.iterdir() if p.name.startswith(name + ".")]
        if len(built) != 1:
            raise BuildError(f"numba.pycc left {len(built)} files for {name} in {tmp}")
        target = d / built[0].name
        os.replace(built[0], target)          # atomic: a reader sees the old file or the new
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    for old in d.glob("_kernels_*"):
        if old != target and old.is_file():
            old.unlink(missing_ok=True)
    reset()
    return target


@contextlib.contextmanager
def _export_options(options):
    """``numba.pycc`` compiles every export with one set of flags (the GIL held, Python's error
    model); inside this block an export listed in ``options`` (its Python function ->
    ``(release the GIL, error model or None)``) is compiled with its own: the GIL released for
    :data:`NOGIL`, the error model of its just-in-time twin (``lanes._run_block`` uses numpy's:
    no division checks, which would keep its lanes from being vectorised)."""
    from numba.pycc import compiler as pycc_compiler  # lazy: heavy library (numba), build only
    plain = getattr(pycc_compiler, "compile_extra", None)
    if plain is None:
        raise BuildError("this numba.pycc has no compile_extra to compile the blocks with the GIL "
                         "released; the just-in-time kernels are used")

    def compile_extra(typingctx, targetctx, func, args, return_type, flags, *a, **kw):
        nogil, error_model = options.get(func, (False, None))
        if nogil or error_model:
            flags = flags.copy()
            flags.release_gil = bool(nogil)
            if error_model:
                flags.error_model = error_model
        return plain(typingctx, targetctx, func, args, return_type, flags, *a, **kw)

    pycc_compiler.compile_extra = compile_extra
    try:
        yield
    finally:
        pycc_compiler.compile_extra = plain


def clear_jit_cache(package: Path | None = None) -> int:
    """Remove numba's on-disk cache (every ``__pycache__/*.nbi|nbc`` under the package); returns
    the number of files removed. numba stamps a cache entry with its own module's source only,
    so after an edit to, say, ``dynamics/kernels.py`` it would still load ``dop853.py``'s kernels
    (or ``fidelity/segments.py``'s, which are not among :data:`SOURCES`) with the old right-hand
    side inlined, or with a reference to a module that has since moved. ``build`` from the
    command line calls this whenever it replaces a module of another key.

    Parameters
    ----------
    package : Path, optional
        The tree searched (default: the installed ``cr3bp`` package).

    Returns
    -------
    int
        Files removed.

    Raises
    ------
    OSError
        A cache file that exists but cannot be removed.

    Examples
    --------
    >>> import tempfile
    >>> from pathlib import Path
    >>> from cr3bp.integrate.prebuilt import clear_jit_cache
    >>> with tempfile.TemporaryDirectory() as d:
    ...     cache = Path(d, "__pycache__"); cache.mkdir()
    ...     _ = Path(cache, "kernels.eom-1.py311.nbi").write_text("")
    ...     clear_jit_cache(Path(d)), list(cache.iterdir())
    (1, [])

    References
    ----------
    .. [1] numba documentation, "Notes on caching" (the ``.nbi`` index and ``.nbc`` data files).
    """
    root = _PACKAGE if package is None else Path(package)
    n = 0
    for f in root.rglob("__pycache__/*.nb[ic]"):
        f.unlink(missing_ok=True)
        n += 1
    return n


def main(argv=None) -> int:
    """``python -m cr3bp.integrate [build [--if-stale] | status]``.

    Parameters
    ----------
    argv : list of str, optional
        Default ``sys.argv[1:]``.

    Returns
    -------
    int
        Exit status: 0 done, 1 the build failed (the just-in-time kernels are used), 2 a bad
        command line.

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.integrate.prebuilt import main
    >>> main(["status"])
    prebuilt kernels: ...
    0
    >>> main(["frobnicate"])
    2

    References
    ----------
    .. [1] Common practice: a ``python -m`` entry point returning its exit status.
    """
    args = list(sys.argv[1:] if argv is None else argv)
    cmd = args.pop(0) if args else "status"
    if cmd == "status" and not args:
        p = find()
        print(f"prebuilt kernels: {p} (current)" if p else
              f"prebuilt kernels: none current in {DIRECTORY} (key {key()}); the just-in-time "
              "kernels are used")
        return 0
    if cmd == "build" and args in ([], ["--if-stale"]):
        if args and find() is not None:
            return 0
        replaced = DIRECTORY.is_dir() and any(DIRECTORY.glob("_kernels_*"))
        try:
            p = build(progress=lambda m: print(m, file=sys.stderr, flush=True))
        except BuildError as e:
            print(f"librate: warning: {e}", file=sys.stderr)
            return 1
        print(f"prebuilt kernels: {p}", file=sys.stderr)
        if replaced and (n := clear_jit_cache()):
            print(f"removed {n} files of numba's on-disk cache (they may hold the old "
                  "code; numba compiles them again on first use)", file=sys.stderr)
        return 0
    print(f"usage: python -m cr3bp.integrate [build [--if-stale] | status]; got {' '.join([cmd] + args)!r}",
          file=sys.stderr)
    return 2
