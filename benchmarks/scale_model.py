"""A simulated run on many workers, from measured times: how a parallel run's time splits
between the client (this process) and the workers.

Not a benchmark row (nothing here is timed): a model fed with what the benchmarks measure --
each task's processor time in one process, the bytes that go out and come back per task, the
time one chunk costs in round trips and (de)serialisation, the workers' start-up, and the
client's own serial work (solving a graph's orbits, computing a station-keeping reference).
The tasks are dealt into chunks exactly as :func:`cr3bp.transfers.tasks.split` deals them
(round robin, four chunks per worker) and the chunks are given to whichever worker is free
first (list scheduling, as a pool or a dask scheduler does with equal workers).

    wall = client serial work + max(start-up - client serial work, 0)   (start-up overlapped)
           + makespan of the chunks on W workers, each chunk paying its round trip
           + the client's handling of the results (deserialising, merging, catalogue)

With ``client_parallel_s`` (a graph's families, solved on the workers before its legs) the
serial part is instead: the workers' start-up, then those pieces' makespan on W workers, then
the client's own serial work (planning). With ``estimate`` the chunks are dealt longest first
(:func:`deal`, as :func:`cr3bp.transfers.tasks.deal`) from the planner's estimate of each task
(a class cost: ``above`` for a task whose measured time is at least ``threshold_s``, else
``below``; the planner knows a parking leg from a targeted arc, not its exact time).

Run ``python -m benchmarks.scale_model benchmarks/scale_model_inputs.json``: the file holds the
times measured on the 2-core development machine (how: its "source" entries);
docs/guide/scale-out.rst quotes the table.
"""

from __future__ import annotations

import heapq
import json
import sys

CHUNKS_PER_WORKER = 4


def split(n: int, workers: int, chunks_per_worker: int = CHUNKS_PER_WORKER) -> list:
    """The chunks of :func:`cr3bp.transfers.tasks.split` (round robin)."""
    k = max(1, min(n, chunks_per_worker * max(1, workers)))
    return [list(range(c, n, k)) for c in range(k)]


def deal(cost, workers: int, chunks_per_worker: int = CHUNKS_PER_WORKER) -> list:
    """The chunks of :func:`cr3bp.transfers.tasks.deal` (longest first, heaviest chunk first)."""
    n = len(cost)
    k = max(1, min(n, chunks_per_worker * max(1, workers)))
    if n == 0:
        return []
    totals = [(0.0, c) for c in range(k)]
    chunks = [[] for _ in range(k)]
    for i in sorted(range(n), key=lambda i: (-cost[i], i)):
        total, c = heapq.heappop(totals)
        chunks[c].append(i)
        heapq.heappush(totals, (total + cost[i], c))
    weight = {c: t for t, c in totals}
    return [sorted(chunks[c]) for c in sorted(range(k), key=lambda c: (-weight[c], c)) if chunks[c]]


def simulate(task_s, workers, *, client_serial_s=0.0, startup_s=0.0, chunk_trip_s=0.0,
             per_task_client_s=0.0, per_task_worker_s=0.0, chunks_per_worker=CHUNKS_PER_WORKER,
             estimate_s=None, client_parallel_s=None) -> dict:
    """The modelled wall time of one run and its split.

    Parameters
    ----------
    task_s : list of float
        Each task's processor seconds on one worker (measured in one process, one thread).
    workers : int
    client_serial_s : float
        The client's own work before the tasks can start (orbits, a reference).
    startup_s : float
        A worker's start-up (interpreter, imports, kernels), overlapped with the client's work.
    chunk_trip_s : float
        Round trip of one chunk (submit, schedule, result back), apart from its tasks.
    per_task_client_s, per_task_worker_s : float
        Serialisation and handling per task, in the client and in the worker.
    estimate_s : list of float, optional
        Each task's estimated cost as the planner knows it: the chunks are then dealt longest
        first (:func:`deal`) instead of round robin.
    client_parallel_s : list of float, optional
        Independent pieces of the client's serial work (a graph's families) that go to the
        workers first: the serial part becomes their makespan on W workers (list scheduling,
        longest first) instead of their sum; ``client_serial_s`` is the rest.

    Returns
    -------
    dict
        ``wall_s``, ``client_s`` (serial work + round trips + result handling: time the
        workers wait on the client), ``workers_busy_s`` (sum over workers), ``makespan_s``,
        ``efficiency`` (busy / (workers x makespan)).
    """
    pre = None
    if client_parallel_s:        # the workers start, take these pieces, then the client's own work
        lanes = [0.0] * max(1, workers)
        for w in sorted(client_parallel_s, reverse=True):
            heapq.heappush(lanes, heapq.heappop(lanes) + w)
        pre = (startup_s if workers > 1 else 0.0) + max(lanes) + client_serial_s
    chunks = (split(len(task_s), workers, chunks_per_worker) if estimate_s is None
              else deal(estimate_s, workers, chunks_per_worker))
    free = [0.0] * workers
    heapq.heapify(free)
    busy = 0.0
    for c in chunks:
        work = sum(task_s[i] for i in c) + len(c) * per_task_worker_s
        start = heapq.heappop(free)
        heapq.heappush(free, start + work + chunk_trip_s)
        busy += work
    makespan = max(free)
    client = len(task_s) * per_task_client_s
    wait = max(startup_s - client_serial_s, 0.0)
    wall = (client_serial_s + wait if pre is None else pre) + makespan + client
    if pre is not None:
        client_serial_s = pre
    return {"workers": workers, "wall_s": wall, "client_serial_s": client_serial_s, "client_tasks_s": client,
            "round_trips_s": len(chunks) * chunk_trip_s, "makespan_s": makespan, "workers_busy_s": busy,
            "efficiency": busy / (workers * makespan) if makespan > 0 else 1.0, "chunks": len(chunks)}


def table(name, measured, counts=(1, 2, 4, 8, 16)) -> str:
    """A text table of :func:`simulate` for each worker count (speed-up against one worker)."""
    kw = {k: measured[k] for k in ("client_serial_s", "startup_s", "chunk_trip_s", "per_task_client_s",
                                   "per_task_worker_s", "client_parallel_s") if k in measured}
    if "estimate" in measured:           # the planner's estimate: a class cost by a threshold on the task
        e = measured["estimate"]
        kw["estimate_s"] = [e["above"] if t >= e["threshold_s"] else e["below"] for t in measured["task_s"]]
    rows = [simulate(measured["task_s"], w, **kw) for w in counts]
    one = (measured.get("client_serial_s", 0.0) + sum(measured.get("client_parallel_s", ()))
           + sum(measured["task_s"]))     # one process, no pool
    lines = [f"{name}: {len(measured['task_s'])} tasks, {sum(measured['task_s']):.1f} s of task work; one process "
             f"{one:.1f} s (speed-up against it)",
             f"{'workers':>7} {'wall s':>8} {'speed-up':>8} {'client serial':>13} {'client/tasks':>12} "
             f"{'makespan':>9} {'efficiency':>10}"]
    for r in rows:
        lines.append(f"{r['workers']:>7} {r['wall_s']:>8.1f} {one / r['wall_s']:>8.2f} {r['client_serial_s']:>13.1f} "
                     f"{r['client_tasks_s']:>12.2f} {r['makespan_s']:>9.1f} {r['efficiency']:>10.2f}")
    return "\n".join(lines)


if __name__ == "__main__":
    data = json.load(open(sys.argv[1]))
    for name, measured in data.items():
        if name == "source":
            continue
        base = measured.get("same_as")
        if base is not None:
            measured = dict(data[base], **{k: v for k, v in measured.items() if k != "same_as"})
        print(table(name, measured))
        print()
