"""The ahead-of-time built kernels (cr3bp.integrate.prebuilt) against numba's just-in-time
ones compiled from the same source: same results, used only while current, and a clean
fall-back otherwise. ``make test`` builds the module first (``make kernels``)."""

import ast
import sys
import types
import warnings
from pathlib import Path

import numpy as np
import pytest

from cr3bp import compiled, dynamics, system
from cr3bp.dynamics import kernels as jit_kernels
from cr3bp.integrate import dop853, events, prebuilt
from cr3bp.integrate.modes import MODE_STATE, MODE_STM
from cr3bp.integrate.propagate import integrator, propagate

EM = system("earth-moon")
HALO = np.array([1.0220325268769859, 0.0, -0.1821043666916314, 0.0, -0.10328034227137894, 0.0])
PERIOD = 1.511256281147235


@pytest.fixture
def fresh_lookup():
    compiled.reset()
    yield
    compiled.reset()


def _current():
    k = compiled.kernels()
    assert k is not None, ("no current prebuilt kernels: run 'make kernels' (and unset "
                           "LIBRATE_KERNELS=jit, which switches them off)")
    return k


def test_the_current_module_is_found_and_used_by_propagate():
    k = _current()
    assert compiled.find().name.startswith(compiled.module_name() + ".")
    assert integrator() is k.integrate


def _cases():
    mu = np.array([EM.mu])
    y42 = np.concatenate([HALO, np.eye(6).ravel()])
    none, no_t = np.zeros((0, 6)), np.empty(0)
    cross = events.table([events.plane("y", 0.0, terminal=True, count=2)])
    moon = events.table([events.impact(1, 0.002)])
    t_eval = np.linspace(0.0, PERIOD, 9)
    yield "state, record", (MODE_STATE, mu, HALO.copy(), 0.0, PERIOD, 1e-12, 1e-12, -1.0, np.inf, 10**6,
                            none, -1, no_t, True)
    yield "state+STM, backward", (MODE_STM, mu, y42.copy(), 0.0, -PERIOD, 1e-12, 1e-12, -1.0, np.inf,
                                  10**6, none, -1, no_t, True)
    yield "STM, second x-z crossing", (MODE_STM, mu, y42.copy(), 0.0, 3.0, 1e-12, 1e-12, -1.0, np.inf,
                                       10**6, cross, -1, no_t, False)
    yield "t_eval, max_step, first_step", (MODE_STATE, mu, HALO.copy(), 0.0, PERIOD, 1e-10, 1e-11, 1e-3,
                                           0.05, 10**6, none, 4, t_eval, False)
    yield "impact", (MODE_STATE, mu, np.array([1.05, 0.0, 0.0, 0.0, -0.05, 0.0]), 0.0, 5.0, 1e-12, 1e-12,
                     -1.0, np.inf, 10**6, moon, -1, no_t, True)
    yield "step limit", (MODE_STATE, mu, HALO.copy(), 0.0, PERIOD, 1e-12, 1e-12, -1.0, np.inf, 7, none,
                         -1, no_t, True)


@pytest.mark.parametrize("name,args", list(_cases()), ids=[c[0] for c in _cases()])
def test_prebuilt_integrator_gives_the_just_in_time_results(name, args):
    """Every output of the two builds of dop853.integrate: same status, step counts and event
    records, and values equal to round-off (both are compiled by LLVM for this processor
    from one source; they measured bitwise equal here, the bound allows for a different
    instruction choice)."""
    a = _current().integrate(*args)
    b = dop853.integrate(*args)
    assert len(a) == len(b) == 14
    for k, (u, v) in enumerate(zip(a, b)):
        if isinstance(v, np.ndarray):
            assert u.shape == v.shape and u.dtype == v.dtype, (name, k)
            assert np.allclose(u, v, rtol=1e-13, atol=1e-15), (name, k, np.abs(u - v).max())
        elif isinstance(v, float):
            assert u == pytest.approx(v, rel=1e-13, abs=1e-15), (name, k)
        else:
            assert int(u) == int(v), (name, k)
    if name == "impact":
        assert int(a[0]) == 2
    if name == "step limit":
        assert int(a[0]) == -1


def test_dynamics_functions_agree_between_builds(monkeypatch, fresh_lookup):
    rng = np.random.default_rng(7)
    states = np.column_stack([rng.uniform(0.7, 1.2, 20), rng.uniform(-0.2, 0.2, (20, 2)),
                              rng.uniform(-0.3, 0.3, (20, 3))])
    k = _current()
    pre = (dynamics.jacobi(EM.mu, states), [dynamics.acceleration(EM.mu, s) for s in states],
           [dynamics.gradient(EM.mu, s[:3]) for s in states], [dynamics.hessian(EM.mu, s[:3]) for s in states])
    assert dynamics._kernels() is k
    monkeypatch.setenv(compiled.ENV, "jit")
    compiled.reset()
    assert dynamics._kernels() is jit_kernels
    jit = (dynamics.jacobi(EM.mu, states), [dynamics.acceleration(EM.mu, s) for s in states],
           [dynamics.gradient(EM.mu, s[:3]) for s in states], [dynamics.hessian(EM.mu, s[:3]) for s in states])
    for u, v in zip(pre, jit):
        assert np.allclose(u, v, rtol=1e-14, atol=0.0)
    # and the gradient is the derivative of Omega (central differences, 1e-7 relative)
    h = 1e-6
    p = states[0, :3]
    fd = [(jit_kernels.omega(EM.mu, *(p + h * e)) - jit_kernels.omega(EM.mu, *(p - h * e))) / (2 * h)
          for e in np.eye(3)]
    assert np.allclose(dynamics.gradient(EM.mu, p), fd, rtol=1e-7, atol=1e-9)


def test_switched_off_absent_or_damaged_module_falls_back(monkeypatch, tmp_path, fresh_lookup):
    monkeypatch.setenv(compiled.ENV, "jit")
    assert compiled.kernels() is None and integrator() is dop853.integrate
    monkeypatch.delenv(compiled.ENV)
    compiled.reset()
    monkeypatch.setattr(compiled, "DIRECTORY", tmp_path)
    assert compiled.kernels() is None                       # absent (or stale: another key)
    compiled.reset()
    (tmp_path / (compiled.module_name() + ".cpython-311-x86_64-linux-gnu.so")).write_bytes(b"not a module")
    with pytest.warns(RuntimeWarning, match="could not be loaded"):
        assert compiled.kernels() is None
    arc = propagate(EM, HALO, PERIOD)     # still propagates, on numba's kernels
    assert np.abs(arc.state_end - HALO).max() < 1e-9


def test_the_key_changes_with_every_source(tmp_path):
    root = Path(prebuilt.__file__).resolve().parent.parent
    for rel in prebuilt.SOURCES:
        (tmp_path / rel).parent.mkdir(parents=True, exist_ok=True)
        (tmp_path / rel).write_bytes((root / rel).read_bytes())
    k0 = prebuilt.key(tmp_path)
    assert k0 == prebuilt.key()
    for rel in prebuilt.SOURCES:
        f = tmp_path / rel
        text = f.read_bytes()
        f.write_bytes(text + b"\n")
        assert prebuilt.key(tmp_path) != k0, rel
        f.write_bytes(text)
    assert prebuilt.key(tmp_path) == k0


def _top_level_names(path):
    tree = ast.parse(Path(path).read_text(encoding="utf-8"))
    names = set()
    for node in tree.body:
        targets = node.targets if isinstance(node, ast.Assign) else (
            [node.target] if isinstance(node, ast.AnnAssign) else [])
        for t in targets:
            for n in ast.walk(t):
                if isinstance(n, ast.Name):
                    names.add(n.id)
    return names


def test_sources_cover_everything_the_built_kernels_read():
    """Walk the compiled call graph from the exported kernels: every function's file, every
    cr3bp module it reads through an attribute, and the module that assigns each constant it
    reads, must be in prebuilt.SOURCES (else an edit there would not mark the build stale)."""
    from numba.core.dispatcher import Dispatcher
    from cr3bp.integrate import lanes
    roots = [dop853.integrate, dop853.integrate_rows, lanes._run_block, jit_kernels.eom, jit_kernels.grad_omega,
             jit_kernels.hessian_omega, jit_kernels._jacobi_many]
    package = Path(prebuilt.__file__).resolve().parent.parent
    mods = [m for n, m in sys.modules.items() if n.startswith("cr3bp") and getattr(m, "__file__", None)]
    needed, seen, todo = set(), set(), list(roots)
    while todo:
        py = todo.pop().py_func
        if py in seen:
            continue
        seen.add(py)
        needed.add(Path(py.__code__.co_filename).resolve())
        names, stack = set(), [py.__code__]
        while stack:
            c = stack.pop()
            names |= set(c.co_names)
            stack += [k for k in c.co_consts if isinstance(k, types.CodeType)]
        g = py.__globals__
        for n in names & set(g):
            v = g[n]
            if isinstance(v, Dispatcher):
                todo.append(v)
            elif isinstance(v, types.ModuleType) and v.__name__.startswith("cr3bp"):
                needed.add(Path(v.__file__).resolve())
                todo += [getattr(v, a) for a in names if isinstance(getattr(v, a, None), Dispatcher)]
            elif isinstance(v, (int, float, np.ndarray, tuple)):
                needed |= {Path(m.__file__).resolve() for m in mods
                           if getattr(m, n, None) is v and n in _top_level_names(m.__file__)}
    listed = {(package / rel).resolve() for rel in prebuilt.SOURCES}
    missing = sorted(str(p.relative_to(package)) for p in needed - listed)
    assert not missing, f"add to prebuilt.SOURCES: {missing}"
    assert (package / "integrate/coefficients.py").resolve() in needed   # the walk sees constants
    assert (package / "fidelity/forces.py").resolve() in needed          # and modules read by attribute
    assert (package / "integrate/lanes.py").resolve() in needed


def test_build_writes_a_loadable_module_and_removes_stale_ones(tmp_path, monkeypatch, fresh_lookup):
    stale = tmp_path / "_kernels_0000000000000000.cpython-311-x86_64-linux-gnu.so"
    stale.write_bytes(b"old")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        path = prebuilt.build(tmp_path)
    assert path.parent == tmp_path and path.name.startswith(compiled.module_name() + ".")
    assert not stale.exists() and not list(tmp_path.glob(".build-*"))
    monkeypatch.setattr(compiled, "DIRECTORY", tmp_path)
    compiled.reset()
    k = compiled.kernels()
    assert k is not None and k.__file__ == str(path)
    args = next(_cases())[1]
    assert np.array_equal(k.integrate(*args)[2], dop853.integrate(*args)[2])


def test_clearing_the_jit_cache_removes_every_numba_entry_and_nothing_else(tmp_path):
    # every cached numba function may inline a kernel (fidelity/segments.py inlines the
    # dynamics kernels), so a rebuild must drop all of them; a cached entry that refers to a
    # module since moved ended a station-keeping run with ModuleNotFoundError (found at a merge)
    for rel in ("integrate/__pycache__/dop853.integrate-401.py311.nbi",
                "integrate/__pycache__/dop853.integrate-401.py311.1.nbc",
                "dynamics/__pycache__/kernels.eom-62.py311.nbi",
                "fidelity/__pycache__/segments.integrate_segments-14.py311.1.nbc",  # inlines kernels
                "integrate/__pycache__/dop853.cpython-311.pyc"):      # byte code stays
        (tmp_path / rel).parent.mkdir(parents=True, exist_ok=True)
        (tmp_path / rel).write_bytes(b"x")
    assert prebuilt.clear_jit_cache(tmp_path) == 4
    left = sorted(str(p.relative_to(tmp_path)) for p in tmp_path.rglob("*") if p.is_file())
    assert left == ["integrate/__pycache__/dop853.cpython-311.pyc"]


def test_an_unknown_switch_value_is_named_and_ignored(monkeypatch, fresh_lookup):
    monkeypatch.setenv(compiled.ENV, "fast")
    with pytest.warns(RuntimeWarning, match="LIBRATE_KERNELS='fast' is not understood"):
        k = compiled.kernels()
    assert k is not None and integrator() is k.integrate      # treated as unset


def test_one_thread_batch_kernel_gives_the_parallel_results():
    """propagate_batch inside cr3bp.threads.serial runs the prebuilt loop integrate_rows (no
    numba start-up); outside it numba's parallel integrate_batch: same states, STMs, events,
    status and step counts (to round-off; dop853.integrate is the reference of both)."""
    from cr3bp.integrate import propagate_batch
    from cr3bp.integrate.propagate import batch_kernel
    from cr3bp.threads import serial
    rng = np.random.default_rng(3)
    states = HALO + 1e-4 * rng.standard_normal((9, 6))
    cross = [events.plane("y", 0.0, terminal=False, count=3)]
    k = _current()
    with serial(numba_threads=False):   # BLAS only (the optimiser): numba keeps its threads
        assert batch_kernel() is dop853.integrate_batch
    with serial():
        assert batch_kernel() is k.integrate_rows
        a = propagate_batch(EM, states, PERIOD, stm=True, events=cross, max_events=4)
    assert batch_kernel() is dop853.integrate_batch
    b = propagate_batch(EM, states, PERIOD, stm=True, events=cross, max_events=4)
    assert np.allclose(a.states, b.states, rtol=1e-13, atol=1e-15)
    assert np.allclose(a.stm, b.stm, rtol=1e-12, atol=1e-13)
    assert list(a.status) == list(b.status) and np.array_equal(a.nsteps, b.nsteps)
    for u, v in zip(a.event_t, b.event_t):
        assert u.shape == v.shape and np.allclose(u, v, rtol=1e-13, atol=1e-15)


def test_a_torus_computed_in_a_fresh_process_does_not_start_numba(tmp_path):
    """The tori compute on one thread (cr3bp.threads.serial): with the prebuilt module current
    the whole computation of a small Earth–Moon Lissajous torus runs without importing numba
    (its import and the load of the parallel kernel from numba's cache cost ~1 s of CPU)."""
    import subprocess
    _current()
    code = ("import sys\n"
            "from cr3bp import system\n"
            "from cr3bp.orbits.request import solve_request\n"
            "from cr3bp.tori import torus_around\n"
            "em = system('earth-moon')\n"
            "t = torus_around(solve_request(em, 'lyapunov L1 ax=2000km'), 300.0 / em.length_km)\n"
            "assert t.invariance_error < t.invariance_tolerance\n"
            "print('numba' in sys.modules)\n")
    import os
    env = {**os.environ, "LIBRATE_CATALOG": str(tmp_path / "catalog.sqlite")}
    env.pop("LIBRATE_KERNELS", None)
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env)
    assert done.returncode == 0, done.stderr[-2000:]
    assert done.stdout.strip() == "False"


# ---- batch blocks on Python threads (no numba) -------------------------------------------

def _batch_inputs(n, stm, seed=11):
    """Arguments and empty outputs of a batch of ``n`` trajectories near the halo, final times
    of both signs, with a counted plane event (a few crossings recorded)."""
    from cr3bp.integrate.modes import MODE_STATE, MODE_STM
    rng = np.random.default_rng(seed)
    s = HALO + 1e-3 * rng.standard_normal((n, 6))
    y0s = np.hstack([s, np.tile(np.eye(6).ravel(), (n, 1))]) if stm else s.copy()
    tf = rng.uniform(0.5, 3.0, n) * np.where(np.arange(n) % 5 == 0, -1.0, 1.0)
    tab = np.ascontiguousarray(events.table([events.plane("y", 0.0, count=3)]))
    m = 2
    args = (MODE_STM if stm else MODE_STATE, np.array([EM.mu]), np.ascontiguousarray(y0s), 0.0, tf,
            1e-11, 1e-12, np.inf, 10**6, tab, m)
    return args


def _outputs(n, dim, m=2):
    return (np.full((n, dim), np.nan), np.full(n, np.nan), np.zeros(n, dtype=np.int64),
            np.zeros(n, dtype=np.int64), np.zeros(n, dtype=np.int64), np.zeros((n, m)),
            np.zeros((n, m, 6)), np.zeros((n, m), dtype=np.int64), np.zeros(n, dtype=np.int64),
            np.zeros(n, dtype=np.int64))


@pytest.mark.parametrize("stm", [False, True])
def test_prebuilt_blocks_on_threads_equal_numbas_lanes_bit_for_bit(stm):
    """The prebuilt lane block (lanes._run_block built ahead of time, GIL released) run over
    1, 2 and 3 Python threads gives exactly numba's parallel lane kernel's outputs (bytes
    equal: same source, same compiler, same processor), whatever the split."""
    from cr3bp.integrate import lanes
    from cr3bp.integrate.propagate import _run_prebuilt
    k = _current()
    n = 37
    args = _batch_inputs(n, stm)
    dim = args[2].shape[1]
    ref = _outputs(n, dim)
    lanes.integrate_lanes(*args, 3, *ref)
    assert np.isfinite(ref[0]).all() and (ref[3] > 0).any()      # events were recorded
    for nthreads in (1, 2, 3):
        got = _outputs(n, dim)
        _run_prebuilt(k, args, got, nthreads=nthreads)
        for u, v in zip(got, ref):
            assert u.tobytes() == v.tobytes(), nthreads


def test_other_models_run_the_prebuilt_rows_on_threads_with_numbas_results():
    """A bicircular batch (not a lane model) runs integrate_rows over thread blocks: bytes
    equal to numba's parallel integrate_batch, for 1 and 2 threads."""
    from cr3bp.bicircular import _model, bicircular_system
    from cr3bp.integrate.propagate import _run_prebuilt
    k = _current()
    mode_state, _, params = _model(bicircular_system("earth-moon", sun_phase=0.3))
    n = 11
    args = (int(mode_state), np.ascontiguousarray(params),) + _batch_inputs(n, False)[2:]
    ref = _outputs(n, 6)
    dop853.integrate_batch(*args, False, *ref)
    for nthreads in (1, 2):
        got = _outputs(n, 6)
        _run_prebuilt(k, args, got, nthreads=nthreads)
        for u, v in zip(got, ref):
            assert u.tobytes() == v.tobytes(), nthreads


def test_the_block_split_is_the_lane_kernels():
    from cr3bp.integrate import lanes
    from cr3bp.integrate.propagate import _BLOCK, _LANES, _blocks
    assert (_LANES, _BLOCK) == (lanes.LANES, lanes.BLOCK)
    for n in (1, 7, 8, 9, 100, 513, 5000):
        for t in (1, 2, 8):
            assert _blocks(n, t) == max(1, min(max(1, -(-n // lanes.LANES)),
                                                    max(t, -(-n // lanes.BLOCK))))


def test_prebuilt_blocks_release_the_gil():
    """While one thread runs a long prebuilt block, the main thread keeps running Python code
    (a kernel holding the GIL would let it run at most a tick or two before and after)."""
    import threading
    import time
    k = _current()
    n = 64
    args = _batch_inputs(n, True)
    args = args[:4] + (np.full(n, 30.0),) + args[5:]
    outs = _outputs(n, 42)
    done = threading.Event()

    def run():
        k.lanes_block(*args, 0, n, *outs)
        done.set()

    th = threading.Thread(target=run)
    ticks = 0
    th.start()
    t_end = time.monotonic() + 60
    while not done.is_set() and time.monotonic() < t_end:
        ticks += 1             # pure Python: runs only while the kernel has let the GIL go
        time.sleep(0)
    th.join()
    assert ticks > 100


def test_batch_commands_start_without_numba(tmp_path):
    """A manifold and a section computed in a fresh process (the library calls behind
    ``librate manifold`` and ``librate section``) run on the prebuilt kernels: numba is
    never imported."""
    import os
    import subprocess
    _current()
    argv = [["manifold", "--system", "earth-moon", "--family", "lyapunov", "--point", "L1",
             "--jacobi", "3.17", "--unstable", "--points", "16", "-q", "--format", "json"],
            ["section", "--system", "earth-moon", "--tube", "lyapunov L1 jacobi=3.17 unstable",
             "--section", "x=1-mu", "--points", "16", "-q", "--format", "json"]]
    env = {**os.environ, "LIBRATE_CATALOG": str(tmp_path / "catalog.sqlite")}
    env.pop("LIBRATE_KERNELS", None)
    for a in argv:
        code = (f"import sys\nfrom librate_cli.main import main\nassert main({a!r}) == 0\n"
                "print('NUMBA', 'numba' in sys.modules)\n")
        done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env,
                              cwd=tmp_path)
        assert done.returncode == 0, done.stderr[-2000:]
        assert done.stdout.strip().splitlines()[-1] == "NUMBA False", a[0]


# ---- propagate(): one packed result array, same results ----------------------------------

@pytest.mark.parametrize("name,args", list(_cases())[:5], ids=[c[0] for c in list(_cases())[:5]])
def test_propagate_unpacks_exactly_the_integrators_results(name, args):
    """propagate() calls integrate_packed (one returned array: the ahead-of-time build hands
    each returned array to Python at ~1 us); the arc it builds holds exactly integrate()'s
    outputs (bytes equal), for recorded steps, t_eval, events, STM and an impact."""
    from cr3bp.integrate.arc import Arc
    k = _current()
    (mode, mu, y0, t0, tf, rtol, atol, h0, mstep, nmax, tab, _m, t_eval, record) = args
    ref = k.integrate(mode, mu, y0.copy(), t0, tf, rtol, atol, h0, mstep, nmax, tab, -1, t_eval, record)
    packed, jit = [f(mode, mu, y0.copy(), t0, tf, rtol, atol, h0, mstep, nmax, tab, -1, t_eval,
                     record, np.empty(0)) for f in (k.integrate_packed, dop853.integrate_packed)]
    assert packed is not None and packed.tobytes() == jit.tobytes()
    # the same results written into the caller's array when they fit (what propagate() passes)
    for f in (k.integrate_packed, dop853.integrate_packed):
        space = np.full(packed.size + 3, -7.0)
        assert f(mode, mu, y0.copy(), t0, tf, rtol, atol, h0, mstep, nmax, tab, -1, t_eval,
                 record, space) is None
        assert space[:packed.size].tobytes() == packed.tobytes() and np.all(space[packed.size:] == -7.0)
    ev = {"STM, second x-z crossing": [events.plane("y", 0.0, terminal=True, count=2)],
          "impact": [events.impact(1, 0.002)]}.get(name, [])
    arc = propagate(EM, y0[:6], tf, stm=(mode == MODE_STM), rtol=rtol, atol=atol, events=ev,
                    t_eval=None if record else t_eval, t0=t0, max_step=None if np.isinf(mstep) else mstep,
                    max_steps=nmax, first_step=None if h0 < 0 else h0)
    assert isinstance(arc, Arc)
    assert arc.t_end == ref[1] and arc.state_end.tobytes() == ref[2][:6].tobytes()
    if record:
        assert arc.t.tobytes() == ref[3].tobytes() and arc.states.tobytes() == ref[4].tobytes()
    else:
        assert arc.t.tobytes() == t_eval[:ref[10]].tobytes()
        assert arc.states.tobytes() == ref[9][:ref[10]].tobytes()
    assert (arc.stm is None) == (mode != MODE_STM)
    if arc.stm is not None:
        assert arc.stm.tobytes() == ref[2][6:].tobytes()
    assert [(h.event, h.t, h.state.tobytes()) for h in arc.events] == [
        (int(j), float(t), s.tobytes()) for t, s, j in zip(ref[5], ref[6], ref[7])]
    assert (arc.nfev, arc.nsteps) == (int(ref[11]), int(ref[12]))
    if name == "STM, second x-z crossing":
        assert len(arc.events) == 2 and arc.status == "event"
    if name == "impact":
        assert arc.status == "impact"


def test_the_state_check_refuses_as_before():
    """validate.state's fast path (called before every propagation) refuses exactly what the
    array check it replaced refused, with the same message."""
    from cr3bp import validate
    from cr3bp.errors import StateError

    def old(s, name="state"):
        s = np.asarray(s, dtype=float)
        if not np.isfinite(s).all():
            return f"{name} {s.tolist()} has a non-finite entry"
        try:
            validate._outside(EM, s[None, :], name)
        except StateError as e:
            return str(e)
        return None

    cases = [HALO]
    for i in range(6):
        for bad in (np.nan, np.inf, -np.inf):
            s = HALO.copy()
            s[i] = bad
            cases.append(s)
    cases += [np.array([-EM.mu, 0, 0, 0, 0, 0.0]), np.array([1 - EM.mu + 1e-4, 0, 0, 0, 1, 0.0]),
              np.array([1 - EM.mu, 0, 0, 0, 0, 0.0]), np.array([1e300, 1e300, 0, 1e308, 1e308, 0.0]),
              np.array([-EM.mu + 0.0166, 0, 0, 0, 0, 0.0])]
    for s in cases:
        want = old(s)
        try:
            validate.state(EM, s)
            got = None
        except StateError as e:
            got = str(e)
        assert got == want, s
    assert sum(old(s) is not None for s in cases) >= 20


def test_the_arc_built_without_its_constructor_is_the_constructors():
    """propagate() fills the Arc's fields directly (faster than the frozen dataclass's
    constructor); every field must be filled, with the constructor's values."""
    import dataclasses
    from cr3bp.integrate.arc import Arc
    from cr3bp.integrate.propagate import _arc
    t, s = np.array([0.0, 1.0]), np.vstack([HALO, HALO])
    args = (EM, t, s, None, "time", (), 12, 1, 1.0, HALO)
    fast = _arc(*args)
    slow = Arc(*args[:8], t_end=args[8], state_end=args[9])
    names = [f.name for f in dataclasses.fields(Arc)]
    assert sorted(vars(fast)) == sorted(names)
    assert all(getattr(fast, n) is getattr(slow, n) for n in names)
    with pytest.raises(dataclasses.FrozenInstanceError):
        fast.status = "event"


def test_batch_worker_threads_leave_signals_to_the_main_thread():
    """The threads that run prebuilt blocks block Ctrl-C and termination signals, so that a
    signal the main thread blocks for a while stays pending for it (graph build's pool start)."""
    import signal
    from cr3bp.integrate.propagate import _pool
    mask = _pool(1).submit(lambda: signal.pthread_sigmask(signal.SIG_BLOCK, set())).result()
    assert {signal.SIGINT, signal.SIGTERM} <= set(mask)


@pytest.mark.parametrize("stm", [False, True])
def test_a_strided_state_propagates_like_a_contiguous_one(stm):
    """The prebuilt kernels take contiguous arrays only (their wrapper does not check the
    strides): propagate() must hand them a contiguous copy of a column view."""
    grid = np.zeros((6, 3))
    grid[:, 1] = HALO
    view = grid[:, 1]
    assert not view.flags.c_contiguous
    a, b = propagate(EM, view, 0.5, stm=stm), propagate(EM, HALO.copy(), 0.5, stm=stm)
    assert a.state_end.tobytes() == b.state_end.tobytes()
