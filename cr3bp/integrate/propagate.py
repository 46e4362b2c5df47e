"""Public propagation entry points on the compiled Dormand-Prince 8(5,3) integrator.

:func:`propagate` integrates one state (optionally with its state transition matrix) and
returns an :class:`~cr3bp.integrate.arc.Arc`; :func:`propagate_batch` integrates many states
in parallel inside compiled code and returns a :class:`BatchResult`. Both validate their
input with :mod:`cr3bp.validate` and raise only the typed errors of :mod:`cr3bp.errors`.
The kernels are in :mod:`.dop853` and :mod:`.lanes`; both entry points run the ahead-of-time
build of them when it is current (:mod:`cr3bp.compiled` finds the module :mod:`.prebuilt`
builds: no numba start-up; :func:`propagate_batch` runs its blocks over Python threads), else
numba's just-in-time ones.
:func:`~cr3bp.integrate.reference.propagate_scipy` is the same interface on scipy for
cross-checks.

Event directions follow the order of integration (as scipy's ``solve_ivp`` does): in a
backward propagation, ``direction=+1`` selects crossings where g increases as the
integration proceeds, i.e. decreases in time.
"""

from __future__ import annotations

import math
import os
import signal
import threading
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass

import numpy as np

from .. import validate
from ..errors import ConvergenceError, InputError
from .. import compiled, threads
from .arc import Arc, EventHit
from .events import ESCAPE, IMPACT, table
from .modes import MODE_STATE, MODE_STM, MODEL_MODES
from .status import DEFAULT_MAX_STEPS, STATUS_NAMES

#: Status names of a finished trajectory (``STATUS_NAMES``); these three are failures.
FAILED = ("max-steps", "stalled", "non-finite")
_IDENTITY_FLAT = np.eye(6).ravel()
_NO_TIMES = np.empty(0)
_NO_EVENTS = np.zeros((0, 6))
_PARAMS: dict = {}
_TOL_LO, _TOL_HI = validate.RTOL_RANGE
_HUGE = math.inf
_new = object.__new__
_HEAD = 8       # counts at the head of the packed result (dop853.PACKED_HEAD)
# Length of the array propagate() hands the kernel for its results: 1 KiB, which numpy serves
# from its cache of small blocks; it holds a state-only arc of up to 16 recorded steps (the
# head, t_end, the state, 7 numbers a step) or an STM arc of up to 11; longer arcs come back in
# an array of the kernel's (about 1 us more, against their >= 10 us of integration).
_SPACE = 128


@dataclass(frozen=True)
class BatchResult:
    """Final states and event records of a batch propagation.

    Attributes
    ----------
    t_final : ndarray (N,)        time each trajectory stopped
    states : ndarray (N, 6)       state there
    status : ndarray (N,) of str  "time", "event", "impact", "escape", or a failure
                                  ("max-steps", "stalled", "non-finite") when
                                  ``on_failure="mark"``
    event_t, event_states, event_index : per-trajectory lists of the recorded events
                                  (at most ``max_events`` each), arrays (e,), (e, 6), (e,)
    stm : ndarray (N, 6, 6) or None   final state transition matrices when asked for
    events_seen : ndarray (N,)    events that occurred (may exceed ``max_events``)
    nfev, nsteps : ndarray (N,)   right-hand-side evaluations and accepted steps

    Parameters
    ----------
    t_final, states, status, event_t, event_states, event_index, stm, events_seen, nfev, nsteps
        The attributes above (built by :func:`propagate_batch`, not by hand).

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.integrate import propagate_batch
    >>> res = propagate_batch(system("earth-moon"), [[0.8, 0, 0, 0, 0.3, 0], [0.82, 0, 0, 0, 0.3, 0]], 1.0)
    >>> len(res), res.status.tolist(), res.states.shape
    (2, ['time', 'time'], (2, 6))

    References
    ----------
    .. [1] Common practice: the final states and events of many trajectories as arrays.
    """

    t_final: np.ndarray
    states: np.ndarray
    status: np.ndarray
    event_t: list
    event_states: list
    event_index: list
    stm: np.ndarray | None = None
    events_seen: np.ndarray | None = None
    nfev: np.ndarray | None = None
    nsteps: np.ndarray | None = None

    def __len__(self) -> int:
        return int(self.states.shape[0])

    def to_dict(self) -> dict:
        return {
            "t_final": self.t_final.tolist(),
            "states": self.states.tolist(),
            "status": [str(s) for s in self.status],
            "events": [{"t": t.tolist(), "states": s.tolist(), "index": k.tolist()}
                       for t, s, k in zip(self.event_t, self.event_states, self.event_index)],
            "stm": None if self.stm is None else self.stm.tolist(),
        }


# ---- helpers --------------------------------------------------------------------------

def integrator():
    """The integration kernel :func:`propagate` calls: the prebuilt one when it is current,
    else :func:`cr3bp.integrate.dop853.integrate` (same source, same arguments and results).

    Returns
    -------
    callable
        The kernel.

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp.integrate.propagate import integrator
    >>> integrator().__name__
    'integrate'

    References
    ----------
    .. [1] E. Hairer, S. P. Norsett and G. Wanner, *Solving Ordinary Differential Equations I*,
       2nd ed., Springer, 1993, §II.5 (the Dormand-Prince 8(5,3) method, code dop853) and §II.6
       (dense output; from memory).
    """
    k = compiled.kernels()
    if k is not None:
        return k.integrate
    from . import dop853  # lazy: heavy library (numba, via cr3bp.integrate.dop853)
    return dop853.integrate


def _packed():
    """:func:`cr3bp.integrate.dop853.integrate_packed` of the prebuilt module when current,
    else numba's (what :func:`propagate` calls: one returned array instead of eight)."""
    k = compiled.kernels()
    if k is not None:
        return k.integrate_packed
    from . import dop853  # lazy: heavy library (numba, via cr3bp.integrate.dop853)
    return dop853.integrate_packed


def batch_kernel():
    """The one-trajectory-per-row kernel :func:`propagate_batch` runs for models other than the
    CR3BP when the prebuilt module is not current (with it, :func:`propagate_batch` runs the
    prebuilt kernels over threads itself). Same arguments as
    :func:`cr3bp.integrate.dop853.integrate_batch`, same results: inside
    :func:`cr3bp.threads.serial` the prebuilt one-thread loop ``integrate_rows`` when the
    prebuilt module is current (no numba start-up), else numba's parallel kernel (limited to
    one thread inside :func:`cr3bp.threads.serial`).

    Returns
    -------
    callable
        ``kernel(mode, params, y0s, t0, tf, rtol, atol, max_step, max_steps, table, n_events,
        dense, out_y, out_t, out_status, out_nev, out_seen, ev_t, ev_y, ev_k, out_nfev,
        out_nsteps)``, writing into the ``out_*`` arrays.

    Raises
    ------
    None

    Examples
    --------
    >>> from cr3bp import threads
    >>> with threads.serial():
    ...     callable(batch_kernel())
    True

    References
    ----------
    .. [1] E. Hairer, S. P. Nørsett, G. Wanner, *Solving Ordinary Differential Equations I*,
       2nd ed., Springer, 1993, §II.5 (the DOP853 method every kernel runs).
    """
    if threads.one_thread():
        k = compiled.kernels()
        if k is not None:
            return k.integrate_rows
    from . import dop853  # lazy: heavy library (numba, via cr3bp.integrate.dop853)
    if not threads.one_thread():
        return dop853.integrate_batch

    def one_thread(*args):
        with threads.serial():      # numba may have been loaded just now: one thread
            dop853.integrate_batch(*args)
    return one_thread


#: Width and greatest block of the lane kernel (``cr3bp.integrate.lanes.LANES`` and ``BLOCK``,
#: written here because importing that module loads numba; tests/test_prebuilt.py checks that
#: they agree). They only split the work: no result depends on them.
_LANES = 8
_BLOCK = 256
_POOL_LOCK = threading.Lock()
_POOL = {"pool": None, "workers": 0, "pid": 0}


def _blocks(n: int, nthreads: int) -> int:
    """Blocks of consecutive trajectories for ``n`` trajectories on ``nthreads`` threads (the
    split of :func:`cr3bp.integrate.lanes.blocks`)."""
    per_lanes = max(1, -(-n // _LANES))
    return max(1, min(per_lanes, max(nthreads, -(-n // _BLOCK))))


def _pool(workers: int) -> ThreadPoolExecutor:
    """The process's worker threads for batch blocks (made again after a fork: a child process
    inherits the pool object but not its threads)."""
    with _POOL_LOCK:
        p = _POOL
        if p["pool"] is None or p["workers"] != workers or p["pid"] != os.getpid():
            if p["pool"] is not None and p["pid"] == os.getpid():
                p["pool"].shutdown(wait=False)
            p.update(pool=ThreadPoolExecutor(workers, thread_name_prefix="librate-batch",
                                             initializer=_block_signals),
                     workers=workers, pid=os.getpid())
        return p["pool"]


def _block_signals():
    """Worker threads leave the process's signals (Ctrl-C, termination) to the main thread: a
    signal the main thread blocks for a while (:class:`cr3bp.transfers.tasks.sigint_ignored`)
    must stay pending until it unblocks it, not be taken by a worker thread meanwhile."""
    if hasattr(signal, "pthread_sigmask"):
        wanted = ("SIGINT", "SIGTERM", "SIGHUP", "SIGQUIT", "SIGALRM", "SIGCHLD", "SIGUSR1", "SIGUSR2")
        signal.pthread_sigmask(signal.SIG_BLOCK, {getattr(signal, n) for n in wanted if hasattr(signal, n)})


def _run_prebuilt(k, args, outs, nthreads=None):
    """The batch on the prebuilt module's kernels, whose GIL-free blocks run on Python threads
    (up to :func:`cr3bp.threads.count`; the calling thread takes blocks too): the CR3BP in
    lockstep lanes (``lanes_block``, :func:`cr3bp.integrate.lanes._run_block` built ahead of
    time), other models one trajectory per row (``integrate_rows``). Every block writes its own
    rows only, so the results do not depend on the split nor on the number of threads."""
    mode, y0s = args[0], args[2]
    n = y0s.shape[0]
    nthreads = threads.count() if nthreads is None else nthreads
    nblocks = _blocks(n, nthreads)
    if mode in (MODE_STATE, MODE_STM):
        def block(b):
            k.lanes_block(*args, (n * b) // nblocks, (n * (b + 1)) // nblocks, *outs)
    else:
        head, rest = args[:4], args[5:]

        def block(b):
            r = slice((n * b) // nblocks, (n * (b + 1)) // nblocks)
            k.integrate_rows(*head[:2], y0s[r], head[3], args[4][r], *rest, False,
                             *(o[r] for o in outs))
    workers = min(nthreads, nblocks)
    if workers <= 1:
        for b in range(nblocks):
            block(b)
        return
    todo = iter(range(nblocks))
    lock = threading.Lock()
    stop = []

    def work():
        while not stop:
            with lock:
                b = next(todo, None)
            if b is None:
                return
            block(b)

    pool = _pool(workers - 1)
    futures = [pool.submit(work) for _ in range(workers - 1)]
    try:
        work()
    except BaseException:       # Ctrl-C in the calling thread: the workers end their blocks, no more
        stop.append(True)
        raise
    finally:
        for f in futures:
            f.result()


def _params(system) -> np.ndarray:
    """The CR3BP kernels' parameter vector ``[mu]``, one array per mass ratio (the kernels only
    read it)."""
    mu = float(system.mu)
    p = _PARAMS.get(mu)
    if p is None:
        if len(_PARAMS) > 64:       # many custom systems: keep the cache small
            _PARAMS.clear()
        p = _PARAMS[mu] = np.array([mu], dtype=np.float64)
    return p


def _model(system, model, stm):
    """The integrator's mode and parameter vector: the CR3BP of ``system`` or ``model``."""
    if model is None:
        return (MODE_STM if stm else MODE_STATE), _params(system)
    mode_state, mode_stm, params = model
    if (mode_state, mode_stm) not in MODEL_MODES:
        raise InputError(f"model modes {mode_state}, {mode_stm}; allowed: "
                         f"{', '.join(f'{a}, {b}' for a, b in MODEL_MODES)}")
    params = np.ascontiguousarray(params, dtype=np.float64)
    if params.ndim != 1 or params.size == 0 or params[0] != system.mu:
        raise InputError("model parameters must be a vector starting with the system's mu")
    return int(mode_stm if stm else mode_state), params


def _max_step(value) -> float:
    """The largest step, TU: a positive time, or None / inf for no limit."""
    if value is None or (isinstance(value, float) and math.isinf(value) and value > 0):
        return math.inf
    return validate.positive_number("max_step (TU)", validate.finite_time("max_step", value))


def _max_steps(value) -> int:
    return validate.whole_number("max_steps", value, 1)


def _check_events_start(system, tab, s0, name="state"):
    """Impact/escape events whose condition already holds at the start are input errors."""
    mu = system.mu
    centres = {-1: 0.0, 0: -mu, 1: 1.0 - mu}
    s0 = np.atleast_2d(s0)
    for k, row in enumerate(tab):
        kind = int(row[0])
        if kind not in (IMPACT, ESCAPE):
            continue
        d = np.sqrt((s0[:, 0] - centres[int(row[1])]) ** 2 + s0[:, 1] ** 2 + s0[:, 2] ** 2)
        bad = d <= row[2] if kind == IMPACT else d >= row[2]
        if np.any(bad):
            i = int(np.argmax(bad))
            where = f" row {i}" if s0.shape[0] > 1 else ""
            what = "inside the impact radius" if kind == IMPACT else "beyond the escape radius"
            raise InputError(f"{name}{where} already lies {what} of event {k} "
                             f"({d[i]:.6g} LU, radius {row[2]:.6g} LU)")


def _failure_message(code, t, t0, t_final, nsteps, max_steps):
    name = STATUS_NAMES[int(code)]
    if name == "max-steps":
        return (f"propagation stopped after {max_steps} steps at t = {t:.9g} TU of "
                f"[{t0:g}, {t_final:g}]; raise max_steps or loosen the tolerances")
    if name == "stalled":
        return (f"step size fell below round-off at t = {t:.9g} TU after {nsteps} steps "
                "(the trajectory is probably colliding with a primary; add an impact event)")
    return f"the solution became non-finite at t = {t:.9g} TU after {nsteps} steps"


# ---- entry points ---------------------------------------------------------------------

def propagate(system, state, t_final, stm=False, rtol=1e-12, atol=1e-12, events=(),
              t_eval=None, *, t0=0.0, max_step=None, max_steps=DEFAULT_MAX_STEPS,
              first_step=None, model=None) -> Arc:
    """Propagate one state in the CR3BP of ``system``, optionally with its STM.

    Adaptive Dormand-Prince 8(5,3) with dense output (Hairer, Norsett & Wanner, *Solving
    Ordinary Differential Equations I*, 2nd ed., 1993, section II.5, code dop853), events
    located on the interpolant with Brent's method.

    Parameters
    ----------
    system : System
    state : array_like (6,)
        Initial state, nondimensional, barycentric rotating frame.
    t_final : float
        Final time in TU (negative: backward in time). Integration starts at ``t0``.
    stm : bool
        Also integrate the variational equations; ``Arc.stm`` is Phi(t_end, t0).
        The error control then covers all 42 components.
    rtol, atol : float
        Relative and absolute tolerances, each in [1e-14, 1e-3].
    events : sequence of Event
        From :func:`~cr3bp.integrate.events.plane`, ``impact``, ``escape``.
    t_eval : array_like, optional
        Output times (monotone in the direction of integration, within [t0, t_final]),
        filled from the dense output. Without it the arc holds every accepted step.
    t0 : float
        Initial time (the CR3BP is autonomous; it only shifts the time axis; a
        time-dependent ``model`` reads it).
    max_step : float, optional
        Greatest step size in TU.
    max_steps : int
        Guard against runaway integrations: more steps raise ConvergenceError.
    first_step : float, optional
        Initial step size in TU (default: Hairer's automatic choice).
    model : (mode, stm_mode, params), optional
        Another right-hand side of the integrator (modes of
        :func:`cr3bp.integrate.dispatch.rhs`, ``params[0]`` = mu of ``system``) with its
        parameter vector; :func:`cr3bp.bicircular.propagate` passes the bicircular model's.
        Default: the CR3BP of ``system``. ``system`` still checks the state and places the
        primaries for the events.

    Returns
    -------
    Arc
        ``status`` is "time", "event", "impact" or "escape"; ``t_end``/``state_end`` (and
        ``t_final``/``final_state``) are where the integration stopped.

    Raises
    ------
    InputError
        Bad state, tolerance, time, events or t_eval.
    ConvergenceError
        The step limit was hit, the step size fell below round-off (e.g. a collision with a
        point-mass primary) or the solution became non-finite.

    Examples
    --------
    Half a period of a planar Lyapunov orbit about L1 ends on the x axis again:

    >>> import numpy as np
    >>> from cr3bp.systems import system
    >>> from cr3bp.orbits import seeds, shooting
    >>> from cr3bp.integrate import propagate
    >>> em = system("earth-moon")
    >>> sd = seeds.linear_lyapunov(em.mu, "L1", 1e-3)
    >>> orbit = shooting.correct(em, sd.state, sd.half_period, sd.symmetry)
    >>> arc = propagate(em, orbit.state, orbit.period / 2, stm=True)
    >>> arc.status, bool(abs(arc.final_state[1]) < 1e-9), arc.stm.shape
    ('time', True, (6, 6))

    References
    ----------
    .. [1] E. Hairer, S. P. Norsett and G. Wanner, *Solving Ordinary Differential Equations I*,
       2nd ed., Springer, 1993, §II.5 (the Dormand-Prince 8(5,3) method, code dop853) and §II.6
       (dense output; from memory).
    """
    s0 = validate.state(system, state)
    # fast paths: a float in range needs no call (nan and inf fail the comparisons)
    if not (type(rtol) is float and _TOL_LO <= rtol <= _TOL_HI):
        rtol = validate.tolerance("rtol", rtol)
    if not (type(atol) is float and _TOL_LO <= atol <= _TOL_HI):
        atol = validate.tolerance("atol", atol)
    if not (type(t0) is float and -_HUGE < t0 < _HUGE):
        t0 = validate.finite_time("t0", t0)
    tf = t_final
    if not (type(tf) is float and -_HUGE < tf < _HUGE):
        tf = validate.finite_time("t_final", t_final)
    events = tuple(events) if events else ()
    if events:
        tab = table(events)
        _check_events_start(system, tab, s0)
    else:
        tab = _NO_EVENTS
    if t_eval is None:
        te = _NO_TIMES
        record = True
    else:
        te = _t_eval(t_eval, t0, tf, 1.0 if tf >= t0 else -1.0)
        record = False
    mstep = _HUGE if max_step is None else _max_step(max_step)
    # fast path: a whole number of at least 1 needs no check
    nmax = max_steps if type(max_steps) is int and max_steps >= 1 else _max_steps(max_steps)
    h0 = -1.0 if first_step is None else abs(validate.finite_time("first_step", first_step))
    if model is None:
        mode, params = (MODE_STM if stm else MODE_STATE), _params(system)
    else:
        mode, params = _model(system, model, stm)
    if stm:
        y0 = np.empty(42)
        y0[:6] = s0
        y0[6:] = _IDENTITY_FLAT
    else:
        y0 = s0.copy()          # contiguous: the prebuilt kernel reads a strided view wrongly

    # the results land in `space` when they fit (a short arc), else in an array returned
    space = np.empty(_SPACE)
    out = _packed()(mode, params, y0, t0, tf, rtol, atol, h0, mstep, nmax, tab, -1, te, record,
                    space)
    if out is None:
        out = space
    # the counts, then t_end (dop853.integrate_packed's layout: _HEAD counts first)
    code, k, e, _seen, n_eval, nfev, nsteps, _nrej, t_end = out[:_HEAD + 1].tolist()
    code, k, e, n_eval, nfev, nsteps = int(code), int(k), int(e), int(n_eval), int(nfev), int(nsteps)
    n = y0.shape[0]
    o = _HEAD + 1
    y_end = out[o:o + n]
    if code < 0:
        raise ConvergenceError(_failure_message(code, t_end, t0, tf, nsteps, nmax),
                               iterations=nsteps, last=np.array(y_end[:6]))
    o += n
    if record:
        t_out = out[o:o + k]
        s_out = out[o + k:o + 7 * k].reshape(k, 6)
    o += 7 * k
    if e:
        ev_y = out[o + e:o + 7 * e].reshape(e, 6)
        hits = tuple(EventHit(int(j), events[int(j)].name, t, np.array(ev_y[i]))
                     for i, (t, j) in enumerate(zip(out[o:o + e].tolist(), out[o + 7 * e:o + 8 * e].tolist())))
    else:
        hits = ()
    if not record:
        o += 8 * e
        t_out, s_out = te[:n_eval].copy(), out[o:o + 6 * n_eval].reshape(n_eval, 6)
    phi = y_end[6:].reshape(6, 6) if stm else None
    return _arc(system, t_out, s_out, phi, STATUS_NAMES[code], hits, nfev, nsteps, t_end,
                y_end[:6])


def _arc(system, t, states, stm, status, events, nfev, nsteps, t_end, state_end) -> Arc:
    """``Arc(system, t, states, stm, status, events, nfev, nsteps, t_end=, state_end=)`` without
    the frozen dataclass's ten ``object.__setattr__`` calls (1.9 us of a 10 us call; the fields
    are filled directly, tests/test_prebuilt.py checks the result equals the constructor's)."""
    arc = _new(Arc)
    arc.__dict__.update(system=system, t=t, states=states, stm=stm, status=status, events=events,
                        nfev=nfev, nsteps=nsteps, t_end=t_end, state_end=state_end)
    return arc


def _t_eval(t_eval, t0, tf, direction) -> np.ndarray:
    try:
        te = np.asarray(t_eval, dtype=np.float64).ravel()
    except (TypeError, ValueError):
        raise InputError("t_eval is not an array of times") from None
    if not np.all(np.isfinite(te)):
        raise InputError("t_eval has a non-finite entry")
    lo, hi = min(t0, tf), max(t0, tf)
    if te.size and (te.min() < lo or te.max() > hi):
        raise InputError(f"t_eval must lie within [{lo:g}, {hi:g}] TU")
    if te.size > 1 and np.any(np.diff(te) * direction < 0):
        raise InputError("t_eval must be sorted in the direction of integration")
    return np.ascontiguousarray(te)


def propagate_batch(system, states, t_final, rtol=1e-12, atol=1e-12, events=(), *, stm=False,
                    max_events=8, max_step=None, max_steps=DEFAULT_MAX_STEPS,
                    on_failure="raise", t0=0.0, model=None) -> BatchResult:
    """Propagate many states in parallel, in compiled code.

    Same method as :func:`propagate` (Hairer et al. 1993, section II.5, code dop853), run on
    every row of ``states`` with no Python loop over trajectories. For the CR3BP (no
    ``model``) the trajectories advance in lockstep vector lanes (:mod:`.lanes`: each keeps
    its own step size, error control and events, and gets the scalar integrator's result);
    other models run one trajectory per row. When the prebuilt module is current (``make
    kernels``) the batch runs on its kernels, which release the GIL, in blocks of consecutive
    trajectories over Python threads (:func:`cr3bp.threads.count` of them: one inside
    :func:`cr3bp.threads.serial`), without importing numba; otherwise on numba's parallel
    kernels (``numba.prange``). The results are the same bytes either way, whatever the number
    of threads.

    Parameters
    ----------
    system : System
    states : array_like (N, 6)
    t_final : float or array_like (N,)
        Final time of every trajectory, or one per trajectory (signs may differ).
    rtol, atol : float
    events : sequence of Event
    stm : bool
        Also integrate the STMs and return the final ones in ``BatchResult.stm``.
    max_events : int
        Events recorded per trajectory (the first ``max_events``; ``events_seen`` counts all).
    on_failure : {"raise", "mark"}
        A trajectory that hits the step limit, stalls or goes non-finite raises
        ConvergenceError ("raise"), or is returned with that status ("mark").
    model : (mode, stm_mode, params), optional
        Another right-hand side, as for :func:`propagate`.

    Returns
    -------
    BatchResult

    Raises
    ------
    InputError
        Bad states, tolerances, times, events or options.
    ConvergenceError
        A trajectory failed and ``on_failure`` is "raise".

    Examples
    --------
    >>> from cr3bp.systems import system
    >>> from cr3bp.integrate import plane, propagate_batch
    >>> em = system("earth-moon")
    >>> res = propagate_batch(em, [[0.8, 0, 0, 0, 0.3, 0]] * 3, [1.0, 2.0, 3.0])
    >>> res.t_final.tolist()
    [1.0, 2.0, 3.0]

    References
    ----------
    .. [1] E. Hairer, S. P. Norsett and G. Wanner, *Solving Ordinary Differential Equations I*,
       2nd ed., Springer, 1993, §II.5 (the Dormand-Prince 8(5,3) method, code dop853) and §II.6
       (dense output; from memory).
    .. [2] numba documentation, "Automatic parallelization with @jit" (``prange``).
    """
    s = validate.states(system, states)
    n = s.shape[0]
    rtol = validate.tolerance("rtol", rtol)
    atol = validate.tolerance("atol", atol)
    t0 = validate.finite_time("t0", t0)
    tf = np.asarray(t_final, dtype=np.float64) if not isinstance(t_final, str) else None
    if tf is None or (tf.ndim == 0 and not np.isfinite(tf)):
        raise InputError(f"t_final = {t_final!r} is not a finite time")
    tf = np.full(n, float(tf)) if tf.ndim == 0 else np.ascontiguousarray(tf.ravel())
    if tf.shape != (n,):
        raise InputError(f"t_final has {tf.size} entries for {n} states")
    if not np.all(np.isfinite(tf)):
        raise InputError("t_final has a non-finite entry")
    if on_failure not in ("raise", "mark"):
        raise InputError(f"on_failure = {on_failure!r}; allowed: raise, mark")
    max_events = validate.whole_number("max_events", max_events, 0)
    events = tuple(events or ())
    tab = np.ascontiguousarray(table(events), dtype=np.float64)
    _check_events_start(system, tab, s, "states")
    mstep = _max_step(max_step)
    nmax = _max_steps(max_steps)
    mode, params = _model(system, model, stm)
    if stm:
        y0s = np.hstack([s, np.tile(np.eye(6).ravel(), (n, 1))])
    else:
        y0s = s.copy()
    y0s = np.ascontiguousarray(y0s, dtype=np.float64)
    dim = y0s.shape[1]
    m = max(max_events, 0)
    out_y = np.empty((n, dim))
    out_t = np.empty(n)
    out_status = np.empty(n, dtype=np.int64)
    out_nev = np.zeros(n, dtype=np.int64)
    out_seen = np.zeros(n, dtype=np.int64)
    ev_t = np.empty((n, max(m, 1)))
    ev_y = np.empty((n, max(m, 1), 6))
    ev_k = np.empty((n, max(m, 1)), dtype=np.int64)
    out_nfev = np.zeros(n, dtype=np.int64)
    out_nsteps = np.zeros(n, dtype=np.int64)
    args = (int(mode), params, y0s, float(t0), tf, float(rtol), float(atol), float(mstep),
            int(nmax), tab, int(m))
    outs = (out_y, out_t, out_status, out_nev, out_seen, ev_t, ev_y, ev_k, out_nfev, out_nsteps)
    k = compiled.kernels()
    if k is not None:
        _run_prebuilt(k, args, outs)
    elif mode in (MODE_STATE, MODE_STM):
        from . import lanes  # lazy: heavy library (numba, via cr3bp.integrate.lanes)
        if threads.one_thread():
            with threads.serial():      # numba may have been loaded just now: one thread
                lanes.integrate_lanes(*args, lanes.blocks(n), *outs)
        else:
            lanes.integrate_lanes(*args, lanes.blocks(n), *outs)
    else:
        batch_kernel()(*args, False, *outs)
    failed = out_status < 0
    if failed.any() and on_failure == "raise":
        i = int(np.argmax(failed))
        raise ConvergenceError(f"trajectory {i} of {n}: " + _failure_message(
            out_status[i], out_t[i], t0, tf[i], out_nsteps[i], nmax), iterations=int(out_nsteps[i]),
            last=out_y[i, :6].copy())
    names = np.array([STATUS_NAMES[c] for c in range(-3, 4)])
    status = names[out_status + 3]
    if out_nev.any():
        event_t = [ev_t[i, :out_nev[i]].copy() for i in range(n)]
        event_states = [ev_y[i, :out_nev[i]].copy() for i in range(n)]
        event_index = [ev_k[i, :out_nev[i]].copy() for i in range(n)]
    else:
        # no event anywhere: one empty array per list, shared (nothing in it can change; three
        # copies per trajectory were 15 % of a 1 000-trajectory batch, measured)
        event_t, event_states, event_index = ([np.empty((0,) + a.shape[2:], a.dtype)] * n
                                              for a in (ev_t, ev_y, ev_k))
    return BatchResult(
        t_final=out_t, states=np.ascontiguousarray(out_y[:, :6]), status=status,
        event_t=event_t, event_states=event_states, event_index=event_index,
        stm=out_y[:, 6:].reshape(n, 6, 6).copy() if stm else None,
        events_seen=out_seen, nfev=out_nfev, nsteps=out_nsteps)
