"""Run small dense linear algebra and small batch propagations on one thread.

Used by the torus solver and by the transfer optimiser (SLSQP on a few hundred unknowns:
measured 3.3 s against 0.56 s for the same 40 iterations on two busy cores). The torus solver
works on matrices of a few hundred rows (``6 N + 4``, N the circle's points)
and propagates batches of 15 to ~100 trajectories. At these sizes the start-up and
synchronisation of worker threads cost more than the work: measured on this project's 2-core
machine under a load of ~7 (2026-12-03), numpy's least squares on a 94 x 92 matrix took
0.13 s with OpenBLAS's two threads and 0.006 s with one; a 15-point propagation with STMs
over one stroboscopic time 0.028 s with numba's two threads and 0.009 s with one.
:func:`serial` limits both to one thread for the duration of a torus computation and restores
them afterwards. OpenBLAS's thread count is set through its ``*_set_num_threads`` entry point
(found in the process's loaded libraries; nothing is changed when it is not there).
"""

from __future__ import annotations

import contextlib
import ctypes
import functools
import os
import sys
import threading

_LOCK = threading.Lock()
_BLAS = {}
#: How many :func:`serial` blocks limiting numba too (``numba_threads=True``) are open.
_DEPTH = [0]


def one_thread() -> bool:
    """True inside :func:`serial` with ``numba_threads``: :func:`cr3bp.integrate.propagate_batch`
    then runs on one thread (the prebuilt kernels, no numba start-up, or numba's kernels
    limited to one thread).

    Returns
    -------
    bool

    Raises
    ------
    None

    Examples
    --------
    >>> one_thread()
    False
    >>> with serial():
    ...     one_thread()
    True

    References
    ----------
    Common practice (one thread per process when processes already use every core).
    """
    return _DEPTH[0] > 0


def count() -> int:
    """Threads a batch propagation may run on: 1 inside :func:`serial` (with ``numba_threads``),
    else numba's setting when numba is loaded (``numba.set_num_threads``), else the
    ``NUMBA_NUM_THREADS`` environment variable when it is a positive whole number (the same
    limit as numba's kernels), else the processors this process may run on. numba is not
    imported for this.

    Returns
    -------
    int
        At least 1.

    Raises
    ------
    None
        A ``NUMBA_NUM_THREADS`` that is not a positive whole number is ignored.

    Examples
    --------
    >>> count() >= 1
    True
    >>> with serial():
    ...     count()
    1

    References
    ----------
    numba documentation, "Setting the Number of Threads" (``NUMBA_NUM_THREADS``); Python
    documentation, :func:`os.sched_getaffinity`. One thread per processor is common practice.
    """
    if _DEPTH[0] > 0:
        return 1
    numba = sys.modules.get("numba")
    if numba is not None and hasattr(numba, "get_num_threads"):    # loaded anyway: its setting
        try:
            return max(1, int(numba.get_num_threads()))
        except Exception:       # its threading layer cannot start: our own count
            pass
    value = os.environ.get("NUMBA_NUM_THREADS", "").strip()
    if value.isdigit() and int(value) > 0:
        return int(value)
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def _openblas():
    """``(get, set)`` of every OpenBLAS loaded (numpy's and scipy's wheels each bring their own),
    a list, possibly empty; looked for again when modules have been imported since (a library
    comes with the module that loads it)."""
    if _BLAS.get("modules") == len(sys.modules):
        return _BLAS["libs"]
    try:
        with open("/proc/self/maps") as f:
            paths = tuple(sorted({line.split()[-1] for line in f if "openblas" in line.lower()}))
    except OSError:
        paths = ()
    _BLAS["modules"] = len(sys.modules)
    if _BLAS.get("paths") == paths:
        return _BLAS["libs"]
    found = []
    for p in paths:
        try:
            lib = ctypes.CDLL(p)
        except OSError:
            continue
        pair = None
        for suffix in ("64_", ""):
            for prefix in ("scipy_openblas", "openblas"):
                get = getattr(lib, f"{prefix}_get_num_threads{suffix}", None)
                put = getattr(lib, f"{prefix}_set_num_threads{suffix}", None)
                if get is not None and put is not None:
                    pair = (get, put)
                    break
            if pair:
                break
        if pair:
            found.append(pair)
    _BLAS["paths"], _BLAS["libs"] = paths, found
    return found


@contextlib.contextmanager
def serial(numba_threads: bool = True):
    """One BLAS thread in every OpenBLAS loaded (numpy's and scipy's; and, with ``numba_threads``,
    one numba thread) inside the block, all restored on exit. Linux only (the loaded libraries are read from ``/proc/self/maps``);
    elsewhere the BLAS part does nothing. numba is not imported for this: with
    ``numba_threads`` batch propagations inside the block run the prebuilt one-thread kernel
    (:func:`one_thread`), and numba, if it is loaded later, is limited where it runs.

    Parameters
    ----------
    numba_threads : bool, optional
        Also run numba's parallel kernels on one thread (default True).

    Returns
    -------
    contextlib.AbstractContextManager

    Raises
    ------
    None
        A BLAS library it does not know is left as it is.

    Examples
    --------
    >>> import numpy as np
    >>> with serial():
    ...     float(np.ones((3, 3)).sum())
    9.0

    References
    ----------
    .. [1] OpenBLAS, ``openblas_set_num_threads`` / ``openblas_get_num_threads`` (its C
       interface); numba's ``set_num_threads`` (Numba documentation, "Setting the Number of
       Threads"). One thread per process when processes already use every core is common
       practice.
    """
    import numpy  # noqa: F401  # lazy: the BLAS library must be loaded to be found (kept beside its use)
    old_blas, old_numba = [], None
    with _LOCK:
        for blas in _openblas():
            try:
                old_blas.append((blas, int(blas[0]())))
                blas[1](1)
            except Exception:       # a foreign BLAS build: leave it as it is
                pass
        try:
            # numba not loaded yet: nothing to limit (propagate_batch limits it if it loads it)
            if numba_threads and "numba" in sys.modules:
                import numba   # lazy: heavy library, only when a torus is computed
                old_numba = numba.get_num_threads()
                numba.set_num_threads(1)
        except Exception:
            old_numba = None
        if numba_threads:
            _DEPTH[0] += 1
    try:
        yield
    finally:
        with _LOCK:
            if numba_threads:
                _DEPTH[0] -= 1
            for blas, n in old_blas:
                blas[1](n)
            if old_numba is not None:
                import numba   # lazy: heavy library
                numba.set_num_threads(old_numba)


def serial_call(fn):
    """Decorator: ``fn`` runs inside :func:`serial`.

    Parameters
    ----------
    fn : callable

    Returns
    -------
    callable
        ``fn`` wrapped, same name and docstring.

    Raises
    ------
    None

    Examples
    --------
    >>> @serial_call
    ... def total(n):
    ...     return sum(range(n))
    >>> total(4)
    6

    References
    ----------
    .. [1] OpenBLAS, ``openblas_set_num_threads`` / ``openblas_get_num_threads`` (its C
       interface); numba's ``set_num_threads`` (Numba documentation, "Setting the Number of
       Threads"). One thread per process when processes already use every core is common
       practice.
    """

    @functools.wraps(fn)
    def call(*a, **kw):
        with serial():
            return fn(*a, **kw)
    return call
