"""Which compiled kernels this process uses: the module built ahead of time by ``make``
(:mod:`cr3bp.integrate.prebuilt` builds it) when it is present and current, else numba's
just-in-time kernels.

The lookup sits here, below both :mod:`cr3bp.dynamics` and :mod:`cr3bp.integrate`, because
both use it and the integrator's package sits above the dynamics: looking the module up
must not import either package (nor numba). It reads files and imports nothing compiled.

Current means built from exactly the source files in :data:`SOURCES`, for this Python, this
numpy and this processor (the module is compiled for the host processor, so a copy on a
machine with another processor is not used). The module's file name carries a key of all of
these; when the key differs -- an edited kernel, a new numpy -- the module is simply not
found and the just-in-time kernels are used until ``make`` (or ``python -m
cr3bp.integrate build``) builds it again. The environment variable
``LIBRATE_KERNELS=jit`` turns the prebuilt module off.
"""

from __future__ import annotations

import hashlib
import importlib.util
import os
import platform
import sys
import warnings
from pathlib import Path

import numpy

#: Files (relative to the ``cr3bp`` package) whose code or constants the built kernels
#: contain; ``tests/test_prebuilt.py`` checks that nothing the kernels read is missing.
SOURCES = ("integrate/dop853.py", "integrate/coefficients.py", "integrate/status.py",
           "integrate/modes.py", "integrate/dispatch.py", "integrate/lanes.py",
           "dynamics/kernels.py", "fidelity/forces.py", "bicircular_kernels.py")
#: Where the module is written (inside the package; ignored by git).
DIRECTORY = Path(__file__).resolve().parent / "integrate" / "_prebuilt"
#: Environment variable: ``jit`` turns the prebuilt module off (``auto`` or unset: use it).
ENV = "LIBRATE_KERNELS"

_F1 = "float64[::1]"
_F2 = "float64[:, ::1]"
#: Exported kernels and their only signatures (the types every caller passes).
#: ``lanes_block`` is :func:`cr3bp.integrate.lanes._run_block` (one block of trajectories in
#: lockstep lanes); it and ``integrate_rows`` run with the GIL released (:data:`NOGIL`), so
#: :func:`cr3bp.integrate.propagate_batch` runs blocks on Python threads without numba.
SIGNATURES = {
    "integrate": (
        f"Tuple((int64, float64, {_F1}, {_F1}, {_F2}, {_F1}, {_F2}, int64[::1], int64, {_F2}, "
        f"int64, int64, int64, int64))"
        f"(int64, {_F1}, {_F1}, float64, float64, float64, float64, float64, float64, int64, "
        f"{_F2}, int64, {_F1}, boolean)"),
    "integrate_packed": (
        f"optional({_F1})(int64, {_F1}, {_F1}, float64, float64, float64, float64, float64, "
        f"float64, int64, {_F2}, int64, {_F1}, boolean, {_F1})"),
    "integrate_rows": (
        f"void(int64, {_F1}, {_F2}, float64, {_F1}, float64, float64, float64, int64, {_F2}, "
        f"int64, boolean, {_F2}, {_F1}, int64[::1], int64[::1], int64[::1], {_F2}, "
        f"float64[:, :, ::1], int64[:, ::1], int64[::1], int64[::1])"),
    "lanes_block": (
        f"void(int64, {_F1}, {_F2}, float64, {_F1}, float64, float64, float64, int64, {_F2}, "
        f"int64, int64, int64, {_F2}, {_F1}, int64[::1], int64[::1], int64[::1], {_F2}, "
        f"float64[:, :, ::1], int64[:, ::1], int64[::1], int64[::1])"),
    "eom": f"void(float64, {_F1}, float64, {_F1})",
    "grad_omega": f"void(float64, float64, float64, float64, {_F1})",
    "hessian_omega": f"void(float64, float64, float64, float64, {_F2})",
    "_jacobi_many": f"void(float64, {_F2}, {_F1})",
}

#: Exports compiled with the GIL released: called from several Python threads at once, each on
#: its own rows. (Every export is compiled with its just-in-time twin's error model.)
NOGIL = ("lanes_block", "integrate_rows")

_PACKAGE = Path(__file__).resolve().parent
_state = {"done": False, "module": None}


def _processor() -> str:
    try:
        with open("/proc/cpuinfo", encoding="ascii", errors="replace") as f:
            keep = [ln for ln in f.read(65536).splitlines()
                    if ln.startswith(("model name", "flags", "vendor_id", "cpu family", "model\t"))]
        if keep:
            return "\n".join(sorted(set(keep)))
    except OSError:
        pass
    return f"{platform.machine()} {platform.processor()}"


def key(package: Path | None = None) -> str:
    """The key of the kernel sources, Python, numpy and processor (16 hex digits): a prebuilt
    module is current when its name carries the key of the sources in use.

    Parameters
    ----------
    package : pathlib.Path, optional
        The package folder whose sources are hashed (default: this ``cr3bp``).

    Returns
    -------
    str
        16 hexadecimal digits.

    Raises
    ------
    OSError
        A kernel source cannot be read.

    Examples
    --------
    >>> k = key()
    >>> len(k), k == key()
    (16, True)

    References
    ----------
    .. [1] S. K. Lam, A. Pitrou, S. Seibert, "Numba: a LLVM-based Python JIT compiler", LLVM-HPC
       2015 (ahead-of-time compilation of the same kernels). Keying a build by the hash of its
       sources is common practice.
    """
    root = _PACKAGE if package is None else Path(package)
    h = hashlib.sha256()
    for rel in SOURCES:
        h.update(rel.encode())
        h.update((root / rel).read_bytes())
    h.update(f"{sys.version}|{numpy.__version__}|{_processor()}|{sorted(SIGNATURES.items())}".encode())
    return h.hexdigest()[:16]


def module_name(package: Path | None = None) -> str:
    """Name of the prebuilt module for the sources in use: ``_kernels_<key>``.

    Parameters
    ----------
    package : pathlib.Path, optional
        The package folder (default: this ``cr3bp``).

    Returns
    -------
    str

    Raises
    ------
    OSError
        A kernel source cannot be read.

    Examples
    --------
    >>> module_name().startswith("_kernels_")
    True

    References
    ----------
    .. [1] S. K. Lam, A. Pitrou, S. Seibert, "Numba: a LLVM-based Python JIT compiler", LLVM-HPC
       2015 (ahead-of-time compilation of the same kernels). Keying a build by the hash of its
       sources is common practice.
    """
    return f"_kernels_{key(package)}"


def find(directory: Path | None = None) -> Path | None:
    """The current prebuilt module's file, or None.

    Parameters
    ----------
    directory : pathlib.Path, optional
        Where to look (default: :data:`DIRECTORY`).

    Returns
    -------
    pathlib.Path or None

    Raises
    ------
    OSError
        A kernel source cannot be read.

    Examples
    --------
    >>> from pathlib import Path
    >>> find(Path("no-such-folder")) is None
    True

    References
    ----------
    .. [1] S. K. Lam, A. Pitrou, S. Seibert, "Numba: a LLVM-based Python JIT compiler", LLVM-HPC
       2015 (ahead-of-time compilation of the same kernels). Keying a build by the hash of its
       sources is common practice.
    """
    d = DIRECTORY if directory is None else Path(directory)
    if not d.is_dir():
        return None
    name = module_name()
    for p in d.glob(name + ".*"):
        if p.suffix in (".so", ".pyd"):
            return p
    return None


def kernels():
    """The current prebuilt module (attributes named as in :data:`SIGNATURES`), or None
    when it is absent, stale, switched off by ``LIBRATE_KERNELS=jit`` or fails to load (a
    warning then says why). Looked up once per process.

    Returns
    -------
    module or None

    Raises
    ------
    None
        A module that fails to load gives a ``RuntimeWarning`` and None.

    Examples
    --------
    >>> k = kernels()
    >>> k is None or all(hasattr(k, n) for n in SIGNATURES)
    True

    References
    ----------
    .. [1] S. K. Lam, A. Pitrou, S. Seibert, "Numba: a LLVM-based Python JIT compiler", LLVM-HPC
       2015 (ahead-of-time compilation of the same kernels). Keying a build by the hash of its
       sources is common practice.
    """
    if _state["done"]:
        return _state["module"]
    _state["done"] = True
    choice = os.environ.get(ENV, "").strip().lower()
    if choice == "jit":
        return None
    if choice not in ("", "auto"):
        warnings.warn(f"{ENV}={os.environ[ENV]!r} is not understood (allowed: jit, auto or unset); "
                      "using the prebuilt kernels when current", RuntimeWarning, stacklevel=2)
    path = find()
    if path is None:
        return None
    try:
        spec = importlib.util.spec_from_file_location(path.name.split(".")[0], path)
        mod = importlib.util.module_from_spec(spec)
        spec.loader.exec_module(mod)
        missing = [n for n in SIGNATURES if not hasattr(mod, n)]
        if missing:
            raise ImportError(f"it lacks {', '.join(missing)}")
    except Exception as e:  # a damaged file: the just-in-time kernels give the same numbers
        warnings.warn(f"the prebuilt kernels {path} could not be loaded ({e}); using numba's "
                      "just-in-time kernels (rebuild: python -m cr3bp.integrate build)",
                      RuntimeWarning, stacklevel=2)
        return None
    _state["module"] = mod
    return mod


def reset():
    """Forget the lookup (tests, and after a build in the same process).

    Returns
    -------
    None

    Raises
    ------
    None

    Examples
    --------
    >>> reset()
    >>> _state["done"]
    False

    References
    ----------
    Common practice (a module-level cache with a reset for tests).
    """
    _state.update(done=False, module=None)
