"""Independent tasks run in parallel: a process pool (spawned workers that die with their
parent and leave Ctrl-C to it) or a dask.distributed cluster. Used by the transfer graph (one
task per leg, :func:`cr3bp.transfers.graph.compute_leg`) and by the station-keeping trials
(:func:`cr3bp.operations.keeping.run_trials`, with the pool helpers).

A task is plain data and its function a module-level function of that data alone, so it pickles
to a ``concurrent.futures.ProcessPoolExecutor`` or to a dask worker, and the same task gives the
same result wherever it runs.
"""

from __future__ import annotations

import heapq
import logging
import multiprocessing
import os
import re
import signal
import sys
from concurrent.futures import ProcessPoolExecutor, as_completed as done_first

from .. import validate
from ..errors import InputError

#: Chunks of tasks per pool worker (progress is reported as each chunk completes).
CHUNKS_PER_WORKER = 4


def run_tasks(function, tasks, workers=None, scheduler=None, progress=None, *,
              chunks_per_worker=CHUNKS_PER_WORKER, executor=None, cost=None) -> list:
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
        Pool size (default: the machine's cores; 1 runs in this process); with
        ``scheduler="local"`` the local cluster's size.
    scheduler : str or distributed.Client, optional
        Address of a dask.distributed scheduler, ``"local"`` / ``"local:N"`` (a local cluster
        started and stopped here, :func:`dask_client`), or a client (instead of the pool). The
        tasks go there in chunks too (a few per worker of the cluster).
    progress : callable(done, total, result), optional
        Called as results arrive (in completion order).
    chunks_per_worker : int
        Chunks of tasks per pool worker.
    executor : concurrent.futures.ProcessPoolExecutor, optional
        A pool already started (:func:`start_pool`, ``workers`` its size): used, and left
        running for its owner to shut down.
    cost : list of float, optional
        Each task's estimated cost (any unit): the tasks are then dealt longest first
        (:func:`deal`) and the heaviest chunks submitted first, instead of round robin
        (:func:`split`). Changes only where and when a task runs, never its result.

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
    if cost is not None and len(cost) != n:
        raise InputError(f"cost has {len(cost)} values for {n} tasks")
    if scheduler is not None:
        _on_dask(function, tasks, scheduler, workers, tick, chunks_per_worker, cost)
        return out
    workers = pool_size(workers)
    if workers == 1 or n == 1:
        for i, t in enumerate(tasks):
            tick(i, function(t))
        return out
    # spawn, not fork: a forked child of a process whose compiled kernels have started their
    # thread pool (propagate_batch runs prange) may crash; a script that builds a graph with a
    # pool therefore needs the usual `if __name__ == "__main__":` guard
    # legs take milliseconds with the compiled integrator: send them in chunks (a few per
    # worker) so that process start-up and pickling do not outweigh the work
    chunks = split(n, workers, chunks_per_worker) if cost is None else deal(cost, workers, chunks_per_worker)
    # each worker's compiled kernels get their share of the cores (no more threads than cores)
    ex = executor if executor is not None else start_pool(min(workers, len(chunks)))
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
    if executor is None:
        ex.shutdown(wait=True)
    return out


def pool_size(workers=None) -> int:
    """The pool size ``workers`` means: the machine's cores when None, else the whole number
    given (at least 1).

    Parameters
    ----------
    workers : int, optional

    Returns
    -------
    int

    Raises
    ------
    InputError
        ``workers`` not a whole number of at least 1.

    Examples
    --------
    >>> from cr3bp.transfers.tasks import pool_size
    >>> pool_size(3), pool_size(None) >= 1
    (3, True)

    References
    ----------
    Python documentation, ``os.cpu_count`` (common practice).
    """
    return (os.cpu_count() or 1) if workers is None else validate.whole_number("--workers", workers, 1)


def start_pool(workers: int, warm=None):
    """A process pool of ``workers`` spawned workers, started now (each worker dies with this
    process and leaves Ctrl-C to it, :func:`worker_init`), optionally warmed by running ``warm()``
    once per worker: a caller with serial work of its own to do first (a station-keeping
    reference, a graph's orbits) starts the pool before it, so that the workers' start-up
    (interpreter, imports, compiled kernels loaded from their cache) overlaps that work instead
    of delaying the tasks. Pass it as ``executor`` to :func:`run_tasks` (or
    :func:`cr3bp.operations.keeping.run_trials`); the caller shuts it down (``shutdown()``, or
    :func:`stop_pool` on an error).

    Parameters
    ----------
    workers : int
        Worker processes (at least 2: one worker is better served by this process).
    warm : callable, optional
        A module-level function of no arguments run once in each worker (its result is dropped).

    Returns
    -------
    concurrent.futures.ProcessPoolExecutor

    Raises
    ------
    InputError
        ``workers`` not a whole number of at least 1.

    Examples
    --------
    >>> from cr3bp.transfers.tasks import run_tasks, start_pool
    >>> pool = start_pool(2)                                           # doctest: +SKIP
    >>> run_tasks(abs, [-1, 2], workers=2, executor=pool)              # doctest: +SKIP
    [1, 2]
    >>> pool.shutdown()                                                # doctest: +SKIP

    References
    ----------
    Python documentation, ``concurrent.futures.ProcessPoolExecutor`` and ``multiprocessing``
    (spawn start method).
    """
    workers = validate.whole_number("workers", workers, 1)
    ctx = multiprocessing.get_context("spawn")
    ex = ProcessPoolExecutor(max_workers=workers, mp_context=ctx, initializer=worker_init,
                             initargs=(os.getpid(), max(1, (os.cpu_count() or 1) // workers)))
    with sigint_ignored():
        for _ in range(workers):
            ex.submit(warm if warm is not None else _nothing)
    return ex


def _nothing():
    return None


def split(n: int, workers: int, chunks_per_worker: int = CHUNKS_PER_WORKER) -> list:
    """Task indices ``0..n-1`` dealt into about ``chunks_per_worker`` chunks per worker, round
    robin (chunk ``c`` holds ``c, c + k, c + 2k, ...``): the round trips are few, and tasks of
    very different cost that sit together in the list (a graph's parking legs take a thousand
    times as long as its targeted arcs, and come first) are spread over every chunk instead of
    landing in one. Results are put back in task order, so the split changes no result.

    Parameters
    ----------
    n : int
        Number of tasks.
    workers : int
        Number of workers (a value below 1 counts as 1).
    chunks_per_worker : int
        Chunks per worker.

    Returns
    -------
    list of list of int
        At most ``chunks_per_worker * workers`` (and at most ``n``) non-empty chunks, covering
        ``0..n-1`` once; sizes differ by at most one.

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.transfers.tasks import split
    >>> split(10, 2, 2)
    [[0, 4, 8], [1, 5, 9], [2, 6], [3, 7]]
    >>> split(3, 8)
    [[0], [1], [2]]

    References
    ----------
    Dask documentation, "Dask Best Practices" (a few tasks per worker, each large enough to
    outweigh its scheduling cost; common practice); round-robin (cyclic) distribution of loop
    iterations, as OpenMP's ``schedule(static, 1)`` (OpenMP API specification 5.2, 2021, §11.5.3).
    """
    k = max(1, min(n, max(1, chunks_per_worker) * max(1, int(workers))))
    return [list(range(c, n, k)) for c in range(k)]


def deal(cost, workers: int, chunks_per_worker: int = CHUNKS_PER_WORKER) -> list:
    """Task indices dealt longest first: tasks taken in order of falling estimated ``cost`` (ties
    in task order), each into the chunk whose estimated total is least so far (ties: the first
    such chunk), and the chunks returned heaviest first, so that a pool, which starts chunks in
    the order they are submitted, starts the longest work first and fills in with the short
    (longest-processing-time-first list scheduling). Same chunk count as :func:`split`; results
    are put back in task order, so the dealing changes no result.

    Parameters
    ----------
    cost : sequence of float
        Each task's estimated cost (any unit; only the order and sums matter).
    workers : int
        Number of workers (a value below 1 counts as 1).
    chunks_per_worker : int
        Chunks per worker.

    Returns
    -------
    list of list of int
        At most ``chunks_per_worker * workers`` (and at most ``len(cost)``) non-empty chunks,
        covering every index once, each chunk's indices in increasing order; chunks in order of
        falling estimated total.

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.transfers.tasks import deal
    >>> deal([1, 1, 1, 1, 9, 1], 1, 2)
    [[4], [0, 1, 2, 3, 5]]
    >>> deal([5, 4, 3, 3, 2, 1], 1, 2)
    [[0, 3, 5], [1, 2, 4]]

    References
    ----------
    Graham, R. L., "Bounds on multiprocessing timing anomalies", SIAM Journal on Applied
    Mathematics 17(2), 416-429 (1969) (longest-processing-time-first; from memory).
    """
    n = len(cost)
    k = max(1, min(n, chunks_per_worker * max(1, int(workers))))
    if n == 0:
        return []
    order = sorted(range(n), key=lambda i: (-float(cost[i]), i))
    totals = [(0.0, c) for c in range(k)]
    heapq.heapify(totals)
    chunks = [[] for _ in range(k)]
    for i in order:
        total, c = heapq.heappop(totals)
        chunks[c].append(i)
        heapq.heappush(totals, (total + float(cost[i]), c))
    weight = {c: t for t, c in totals}
    ranked = sorted(range(k), key=lambda c: (-weight[c], c))
    return [sorted(chunks[c]) for c in ranked if chunks[c]]


def _on_dask(function, tasks, scheduler, workers, tick, chunks_per_worker, cost=None):
    """run_tasks on a dask cluster: the tasks in chunks (as the pool's), one future a chunk."""
    client, cluster = dask_client(scheduler, workers)     # an InputError without dask.distributed
    from distributed import as_completed   # lazy: heavy library (dask, an optional extra)
    try:
        k = max(1, len(client.scheduler_info().get("workers", {})) or 1)
        chunks = split(len(tasks), k, chunks_per_worker) if cost is None else deal(cost, k, chunks_per_worker)
        # heaviest chunks first: submission order and a falling priority (dask runs higher first)
        futures = [client.submit(apply_chunk, function, [tasks[i] for i in c], pure=False,
                                 priority=len(chunks) - j if cost is not None else 0)
                   for j, c in enumerate(chunks)]
        index = {f.key: c for f, c in zip(futures, chunks)}
        for f in as_completed(futures):
            for i, r in zip(index[f.key], f.result()):
                tick(i, r)
    finally:
        if client is not scheduler:
            close_dask(client, cluster)


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


def worker_init(parent_pid=None, threads=None):
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
    threads : int, optional
        Threads of the compiled kernels in this worker (``NUMBA_NUM_THREADS``, set before numba
        loads): the pool's share of the cores, so that workers do not oversubscribe them.

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
    if threads is not None and "numba" not in sys.modules:
        os.environ["NUMBA_NUM_THREADS"] = str(int(threads))
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


#: Seconds to reach a dask scheduler before giving up.
CONNECT_TIMEOUT_S = 10
#: Most worker processes of a local cluster (``local:N``).
MAX_LOCAL_WORKERS = 64
#: The local scheduler's HTTP address: this machine only, a free port.
LOCAL_HTTP_ADDRESS = "127.0.0.1:0"


def local_workers(scheduler) -> int | None:
    """N of ``"local:N"`` (None for ``"local"``); InputError for a bad N. Not a local cluster:
    ValueError.

    Parameters
    ----------
    scheduler : str
        The ``--scheduler`` text: ``"local"``, ``"local:N"`` or a scheduler's address.

    Returns
    -------
    int or None
        The number of local worker processes N (1..:data:`MAX_LOCAL_WORKERS`), or None for a
        plain ``"local"`` (the default count).

    Raises
    ------
    InputError
        ``"local:N"`` with N not a whole number in 1..:data:`MAX_LOCAL_WORKERS`.
    ValueError
        Text that does not name a local cluster (the caller treats it as an address).

    Examples
    --------
    >>> local_workers("local:3"), local_workers("local")
    (3, None)
    >>> local_workers("local:0")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: scheduler 'local:0': local:N takes a whole number of workers N in 1..64

    References
    ----------
    None: a text convention of this project (common practice).
    """
    text = str(scheduler).strip()
    if text == "local":
        return None
    if not text.startswith("local:"):
        raise ValueError(text)
    n = text[len("local:"):].strip()
    if not n.isdigit() or not 1 <= int(n) <= MAX_LOCAL_WORKERS:
        raise InputError(f"scheduler '{text}': local:N takes a whole number of workers N in 1..{MAX_LOCAL_WORKERS}")
    return int(n)


def dask_client(scheduler, workers: int | None = None):
    """``(client, cluster)`` for ``scheduler`` (see :func:`run_trials`).

    Parameters
    ----------
    scheduler : distributed.Client or str
        A client, a scheduler's address, or ``"local"``.
    workers : int, optional
        Processes of a local cluster (default 2).

    Returns
    -------
    client : distributed.Client
        The client.
    cluster : distributed.LocalCluster or None
        The local cluster started here (None otherwise). The caller closes both.

    Raises
    ------
    InputError
        dask.distributed missing, or the scheduler cannot be reached.

    Examples
    --------
    >>> client, cluster = dask_client("local", 2)          # doctest: +SKIP

    References
    ----------
    Rocklin, M., "Dask: Parallel computation with blocked algorithms and task scheduling",
    Proceedings of the 14th Python in Science Conference (2015).
    """
    try:
        from distributed import Client, LocalCluster  # lazy: optional dependency (distributed), its absence handled here
    except ImportError:
        raise InputError("--scheduler needs dask.distributed: pip install 'librate[cluster]'") from None
    if isinstance(scheduler, Client):
        return scheduler, None
    try:
        n_local = local_workers(scheduler)
        local = True
    except ValueError:
        local = False
    if local:
        n = n_local or (2 if workers is None else validate.whole_number("workers", workers, 1))
        # processes with one thread each, as the pool's workers (each chunk sets numba to one thread).
        # Quiet: no dashboard, and the scheduler's HTTP routes on a free local port (the default
        # 8787 may be taken by another cluster: a warning otherwise); the workers' and scheduler's
        # logs only at CRITICAL, so the heartbeat a worker still sends while the scheduler stops
        # (logged with its traceback at ERROR) stays out of the terminal. A task's own failure
        # still reaches here as the exception of its future.
        cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True,
                               dashboard_address=LOCAL_HTTP_ADDRESS, scheduler_kwargs={"dashboard": False},
                               silence_logs=logging.CRITICAL)
        return Client(cluster), cluster
    try:
        return Client(str(scheduler), timeout=f"{CONNECT_TIMEOUT_S}s"), None
    except (OSError, TimeoutError) as e:
        raise InputError(f"cannot reach the dask scheduler at '{scheduler}' ({type(e).__name__})") from None


def close_dask(client, cluster=None) -> None:
    """Close what :func:`dask_client` opened, quietly: the client first (no reconnection
    attempts to a scheduler that is going away), then the local cluster (its workers before
    its scheduler).

    Parameters
    ----------
    client : distributed.Client
        The client.
    cluster : distributed.LocalCluster, optional
        The local cluster started by :func:`dask_client` (None: a remote one, left running).

    Returns
    -------
    None

    Raises
    ------
    Exception
        What the client's or the cluster's close raises (rare; the cluster is closed even when
        the client's close fails).

    Examples
    --------
    >>> client, cluster = dask_client("local:2")     # doctest: +SKIP
    >>> close_dask(client, cluster)                  # doctest: +SKIP

    References
    ----------
    Dask.distributed documentation, "LocalCluster" and "Client.close" (common practice).
    """
    try:
        client.close()
    finally:
        if cluster is not None:
            cluster.close()


def check_scheduler(scheduler, workers=None) -> None:
    """Refuse a ``--scheduler`` text before any work: ``"local"``, ``"local:N"`` or an address
    ``tcp://host:port`` (also tls, inproc, ws, wss); ``workers`` only with ``"local"`` (a
    remote cluster has its own workers, ``local:N`` names its own).

    Parameters
    ----------
    scheduler : str
        The ``--scheduler`` text.
    workers : int, optional
        The ``--workers`` value given with it.

    Returns
    -------
    None

    Raises
    ------
    InputError
        Text that is neither a local cluster nor an address; ``workers`` with an address or
        with ``local:N``.

    Examples
    --------
    >>> from cr3bp.transfers.tasks import check_scheduler
    >>> check_scheduler("local:2")
    >>> check_scheduler("my-cluster")
    Traceback (most recent call last):
    ...
    cr3bp.errors.InputError: --scheduler 'my-cluster' must be 'local', 'local:N' or an address such as tcp://10.0.0.5:8786

    References
    ----------
    Dask.distributed documentation, "Client" (scheduler addresses; common practice).
    """
    text = str(scheduler).strip()
    try:
        n_local, local = local_workers(text), True
    except ValueError:
        n_local, local = None, False
    if not local and not re.fullmatch(r"(tcp|tls|inproc|ws|wss)://\S+", text):
        raise InputError(f"--scheduler '{scheduler}' must be 'local', 'local:N' or an address such as "
                         "tcp://10.0.0.5:8786")
    if not local and workers is not None:
        raise InputError("--workers goes with --scheduler local (a remote cluster has its own workers)")
    if n_local is not None and workers is not None:
        raise InputError(f"--scheduler '{text}' sets the workers; leave out --workers")
