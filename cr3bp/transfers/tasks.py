"""Independent tasks run in parallel: a process pool (spawned workers that die with their
parent and leave Ctrl-C to it) or a dask.distributed cluster. Used by the transfer graph (one
task per leg, :func:`cr3bp.transfers.graph.compute_leg`) and by the station-keeping trials
(:func:`cr3bp.operations.keeping.run_trials`, with the pool helpers).

A task is plain data and its function a module-level function of that data alone, so it pickles
to a ``concurrent.futures.ProcessPoolExecutor`` or to a dask worker, and the same task gives the
same result wherever it runs.
"""

from __future__ import annotations

import math
import multiprocessing
import os
import signal
import sys
from concurrent.futures import ProcessPoolExecutor, as_completed as done_first

from .. import validate
from ..errors import InputError

#: Chunks of tasks per pool worker (progress is reported as each chunk completes).
CHUNKS_PER_WORKER = 4


def run_tasks(function, tasks, workers=None, scheduler=None, progress=None, *,
              chunks_per_worker=CHUNKS_PER_WORKER) -> list:
    """``[function(t) for t in tasks]``, in task order, computed in parallel.

    ``function`` must be a module-level function (it is pickled by reference) that never
    raises for a task that cannot be done (it returns the failure as data). Tasks go to a
    process pool of spawned workers in chunks (a few per worker), or to a dask.distributed
    cluster.

    Parameters
    ----------
    function : callable
        Module-level function of one task.
    tasks : list
        Plain, picklable tasks.
    workers : int, optional
        Pool size (default: the machine's cores; 1 runs in this process).
    scheduler : str or distributed.Client, optional
        Address of a dask.distributed scheduler, or a client (instead of the pool).
    progress : callable(done, total, result), optional
        Called as results arrive (in completion order).
    chunks_per_worker : int
        Chunks of tasks per pool worker.

    Returns
    -------
    list
        The results, in task order.

    Raises
    ------
    InputError
        ``workers`` below 1, or a scheduler given without dask.distributed installed.

    Examples
    --------
    >>> from cr3bp.transfers.tasks import run_tasks
    >>> run_tasks(abs, [-1, 2, -3], workers=1)
    [1, 2, 3]

    References
    ----------
    Python documentation, ``concurrent.futures.ProcessPoolExecutor`` and ``multiprocessing``
    (spawn start method); Rocklin, "Dask: parallel computation with blocked algorithms and task
    scheduling", Proc. 14th Python in Science Conference (SciPy 2015).
    """
    n = len(tasks)
    out = [None] * n
    done = 0

    def tick(i, leg):
        nonlocal done
        out[i] = leg
        done += 1
        if progress is not None:
            progress(done, n, leg)

    if n == 0:
        return []
    if scheduler is not None:
        try:
            from distributed import Client, as_completed   # lazy: heavy library (dask, an optional extra)
        except ImportError:
            raise InputError("--scheduler needs dask.distributed: pip install 'librate[cluster]'") from None
        client = scheduler if isinstance(scheduler, Client) else Client(scheduler, timeout="20s")
        try:
            futures = client.map(function, tasks, pure=False)
            index = {f.key: i for i, f in enumerate(futures)}
            for f in as_completed(futures):
                tick(index[f.key], f.result())
        finally:
            if client is not scheduler:
                client.close()
        return out
    workers = (os.cpu_count() or 1) if workers is None else validate.whole_number("--workers", workers, 1)
    if workers == 1 or n == 1:
        for i, t in enumerate(tasks):
            tick(i, function(t))
        return out
    # spawn, not fork: a forked child of a process whose compiled kernels have started their
    # thread pool (propagate_batch runs prange) may crash; a script that builds a graph with a
    # pool therefore needs the usual `if __name__ == "__main__":` guard
    ctx = multiprocessing.get_context("spawn")
    # legs take milliseconds with the compiled integrator: send them in chunks (a few per
    # worker) so that process start-up and pickling do not outweigh the work
    size = max(1, math.ceil(n / (chunks_per_worker * workers)))
    chunks = [list(range(a, min(a + size, n))) for a in range(0, n, size)]
    ex = ProcessPoolExecutor(max_workers=min(workers, len(chunks)), mp_context=ctx,
                             initializer=worker_init, initargs=(os.getpid(),))
    try:
        # the workers are started by the submissions, with SIGINT blocked until worker_init
        # ignores it
        with sigint_ignored():
            futs = {ex.submit(apply_chunk, function, [tasks[i] for i in c]): c for c in chunks}
        for f in done_first(futs):
            for i, leg in zip(futs[f], f.result()):
                tick(i, leg)
    except BaseException:
        # Ctrl-C or an error: stop the workers now instead of waiting for their chunks
        stop_pool(ex)
        raise
    ex.shutdown(wait=True)
    return out


def stop_pool(ex) -> None:
    """Stop a process pool at once (Ctrl-C or an error): cancel what has not started and terminate
    the workers instead of waiting for their chunks.

    Parameters
    ----------
    ex : concurrent.futures.ProcessPoolExecutor

    Returns
    -------
    None

    Raises
    ------
    None

    Examples
    --------
    >>> import multiprocessing
    >>> from concurrent.futures import ProcessPoolExecutor
    >>> from cr3bp.transfers.tasks import stop_pool
    >>> pool = ProcessPoolExecutor(1, mp_context=multiprocessing.get_context("spawn"))
    >>> stop_pool(pool)                 # nothing started: nothing to wait for

    References
    ----------
    Python documentation, ``concurrent.futures.ProcessPoolExecutor`` and ``multiprocessing``
    (spawn start method); Rocklin, "Dask: parallel computation with blocked algorithms and task
    scheduling", Proc. 14th Python in Science Conference (SciPy 2015).
    """
    procs = list((getattr(ex, "_processes", None) or {}).values())
    ex.shutdown(wait=False, cancel_futures=True)
    for p in procs:
        if p.is_alive():
            p.terminate()
    for p in procs:
        p.join(timeout=5)


class sigint_ignored:
    """A context manager: SIGINT blocked inside the block (POSIX; elsewhere a no-op). Processes
    started inside it inherit the blocked signal across exec, so a Ctrl-C while they import cannot
    make them print a traceback; one that arrived meanwhile is delivered to this process when the
    block ends.

    Examples
    --------
    >>> from cr3bp.transfers.tasks import sigint_ignored
    >>> with sigint_ignored():
    ...     pass

    References
    ----------
    POSIX ``pthread_sigmask`` (IEEE Std 1003.1) and Python's ``signal.pthread_sigmask``.
    """

    def __enter__(self):
        self.old = None
        if hasattr(signal, "pthread_sigmask"):
            self.old = signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGINT})
        return self

    def __exit__(self, *exc):
        if self.old is not None:
            signal.pthread_sigmask(signal.SIG_SETMASK, self.old)
        return False


#: Linux prctl option: the signal a process gets when its parent dies (linux/prctl.h).
PR_SET_PDEATHSIG = 1


def worker_init(parent_pid=None):
    """Initializer of every pool worker: die with the parent, and leave Ctrl-C to it.

    A worker ignores SIGINT (the terminal sends it to the whole process group; the parent
    reports the interruption once and stops the pool) and, on Linux, asks the kernel for
    SIGKILL when its parent dies (prctl PR_SET_PDEATHSIG, prctl(2)), so that a killed
    ``librate`` leaves no worker holding the terminal's pipes. If the parent is already gone
    when the worker starts, it exits at once.

    Parameters
    ----------
    parent_pid : int, optional
        The parent's process id.

    Returns
    -------
    None

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.transfers.tasks import worker_init
    >>> worker_init  # doctest: +ELLIPSIS
    <function worker_init at ...>

    (Not called here: it changes the calling process's signal handling; the pool calls it in
    each worker.)

    References
    ----------
    Linux ``prctl(2)`` (PR_SET_PDEATHSIG); Python documentation, ``signal``.
    """
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    if sys.platform.startswith("linux"):
        try:
            import ctypes   # lazy: Linux only
            libc = ctypes.CDLL(None, use_errno=True)
            libc.prctl(PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0)
        except (OSError, AttributeError):    # no prctl: workers end when the pool's pipes close
            pass
    if parent_pid is not None and os.getppid() != parent_pid:
        os._exit(1)


def apply_chunk(function, tasks: list) -> list:
    """``function`` over a chunk of tasks (one pool submission).

    Parameters
    ----------
    function : callable
    tasks : list

    Returns
    -------
    list

    Raises
    ------
    Exception
        Whatever ``function`` raises (task functions return failures as data instead).

    Examples
    --------
    >>> from cr3bp.transfers.tasks import apply_chunk
    >>> apply_chunk(str, [1, 2])
    ['1', '2']

    References
    ----------
    Python documentation, ``concurrent.futures.ProcessPoolExecutor`` and ``multiprocessing``
    (spawn start method); Rocklin, "Dask: parallel computation with blocked algorithms and task
    scheduling", Proc. 14th Python in Science Conference (SciPy 2015).
    """
    return [function(t) for t in tasks]
