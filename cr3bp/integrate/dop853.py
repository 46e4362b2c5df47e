"""Compiled Dormand-Prince 8(5,3) integrator with dense output and event location.

The method, its error estimator, its step-size controller, its initial step and its 7th-order
continuous extension are those of Hairer, Norsett & Wanner, *Solving Ordinary Differential
Equations I*, 2nd ed., 1993, section II.5 and their code ``dop853`` (subroutines DP86CO and
HINIT), the step-size controller with the stabilisation (BETA) option of that code switched on
(``STEP_BETA``, section II.4); the coefficients live in the data-only module
:mod:`.coefficients`. Event roots are
located on the dense interpolant with Brent's method (R. P. Brent, *Algorithms for
Minimization without Derivatives*, 1973, ch. 4, procedure ``zero``).

Every function is ``numba.njit(cache=True)``. The right-hand side is
:func:`cr3bp.integrate.dispatch.rhs` ``(mode, t, s, params, out)``; a new force model is a new
``mode`` there (numbers in :mod:`cr3bp.integrate.modes`) and nothing changes here (the CR3BP
modes ``MODE_STATE``/``MODE_STM`` have specialised steps below; the ephemeris model of
:mod:`cr3bp.fidelity.forces` and the bicircular model of :mod:`cr3bp.bicircular_kernels` run
through the dispatcher -- this line also renews numba's cache stamp of this module, which
does not notice a change of ``rhs`` in another file). Arguments are always passed with the same types
(int64 / float64 scalars, C-contiguous float64 arrays, one bool) so that each kernel has
exactly one compiled specialisation.

Status codes returned by :func:`integrate` (``STATUS_NAMES`` maps them to text):

====  ==========  ============================================================
code  name        meaning
====  ==========  ============================================================
0     time        reached ``t_final``
1     event       a terminal plane crossing reached its count
2     impact      an impact event (distance to a primary below a radius)
3     escape      an escape event (distance above a bound)
-1    max-steps   the maximum number of steps was taken before ``t_final``
-2    stalled     the step size fell below the round-off of ``t`` (a singularity)
-3    non-finite  the solution became non-finite and no smaller step helped
====  ==========  ============================================================
"""

from __future__ import annotations

import numpy as np
from numba import njit, prange

from ..dynamics.kernels import eom, eom_stm
from .coefficients import A, B, C, D, E3, E5, N_STAGES, N_STAGES_EXTENDED, ERROR_ORDER
from .dispatch import rhs
from .modes import MODE_STATE, MODE_STM
from .status import (DEFAULT_MAX_STEPS, STATUS_ESCAPE, STATUS_EVENT, STATUS_IMPACT,  # noqa: F401
                     STATUS_MAX_STEPS, STATUS_NAMES, STATUS_NONFINITE, STATUS_STALLED,
                     STATUS_TIME)

# ---- tuning constants (Hairer et al. 1993, code dop853: SAFE, FAC1, FAC2) ---------------
SAFETY = 0.9             # safety factor on the optimal step
MIN_FACTOR = 1.0 / 3.0   # least ratio new step / old step (dop853 FAC1 = 0.333)
MAX_FACTOR = 6.0         # greatest ratio new step / old step (dop853 FAC2 = 6)
# Stabilised (proportional-integral) step control, Hairer et al. (1993), section II.4 (the
# BETA option of their codes; Gustafsson, ACM Trans. Math. Software 17, 1991, for the
# control-theory view): the new step is SAFETY * err**ERROR_EXPONENT * err_prev**STEP_BETA times
# the old, err_prev the previous accepted step's error (at least PREV_ERROR_MIN). dop853 sets
# ERROR_EXPONENT = -(1/8 - 0.2 BETA); BETA = 0 is the plain controller. 0.04 measured on the
# batch benchmark's tubes (1 000 perturbed halo states x 5 TU at 1e-12): rejected trial steps
# fell from 20 % to 8 %, trial steps by 9 % and the final-state error by 5x. It is taken as
# 5/128 = 0.039, so that both powers are dyadic: ERROR_EXPONENT = -15/128, and
# :func:`step_powers` computes them with seven square roots, which vectorise over the batch's
# lanes and are correctly rounded (the scalar integrator and the lanes get the same bits). Two
# calls of pow per step were 18 % of a state-only batch (perf, this project's machine).
STEP_BETA = 5.0 / 128.0
ERROR_EXPONENT = -(1.0 / (ERROR_ORDER + 1.0) - 0.2 * STEP_BETA)   # err ~ h^8 (8(5,3) estimator)
PREV_ERROR_MIN = 1e-4    # least previous error in the controller (dop853 FACOLD = 1e-4)
EPS = 2.220446049250313e-16   # double-precision unit round-off (dop853 UROUND)
STALL_FACTOR = 10.0      # stop when 0.1 |h| <= |t| * EPS (dop853's "step size too small")
LAST_STEP_STRETCH = 1.01 # take t_final if it is within 1 % beyond the next step (dop853)
MAX_BRENT_ITERATIONS = 200
RECORD_START = 32         # steps the history holds before it first grows (doubling)
PACKED_HEAD = 8           # counts at the head of integrate_packed's array
EVENTS_START = 16         # events kept before their storage first grows (doubling)

@njit(cache=True, inline="always", error_model="numpy")
def step_powers(err):
    """``(err**ERROR_EXPONENT, err**STEP_BETA)`` = ``(err**(-15/128), err**(5/128))`` from the
    chain of square roots err**(1/2), ..., err**(1/128) (exact exponents; each root correctly
    rounded, so every caller gets the same bits).

    >>> from cr3bp.integrate.dop853 import step_powers
    >>> [float(v) for v in step_powers(2.0 ** 128)]
    [3.0517578125e-05, 32.0]
    """
    r2 = np.sqrt(err)
    r4 = np.sqrt(r2)
    r8 = np.sqrt(r4)
    r16 = np.sqrt(r8)
    r32 = np.sqrt(r16)
    r64 = np.sqrt(r32)
    r128 = np.sqrt(r64)
    return r128 / r8, r32 * r128


#: PREV_ERROR_MIN ** STEP_BETA, by :func:`step_powers` (the controller's floor on err_prev)
PREV_POWER_MIN = float(step_powers.py_func(PREV_ERROR_MIN)[1])

_NS = N_STAGES            # 12 stages of the method
_NX = N_STAGES_EXTENDED   # 16 stages with the FSAL stage and three for dense output
_NP = 7                   # interpolant coefficient vectors


# ---- one step -------------------------------------------------------------------------
# The step kernels below are the hot path of every propagation. Measured on this project's
# benchmarks (numba 0.68, x86-64), three things matter: (1) calling the CR3BP equations
# directly in the stage loop -- through the generic ``rhs`` dispatcher a stage costs about
# twice as much; (2) as few compiled-function layers per step as possible (each call passes
# its arrays with reference counting); (3) the loop order: one dot product over the stages
# per component, with the number of stages a compile-time constant for long vectors (see
# :func:`step_stm`), or one sweep over the components per stage where it is not. Hence one
# step kernel per right-hand side, chosen once per step by :func:`integrate`, sharing the
# inlined combination helpers. Two compilations of the same source differ by up to ~15 % on
# this machine (code placement), so a variant was kept only where it won in every one of
# several interleaved runs against separately compiled copies of the current code.

@njit(cache=True, inline="always")
def _combine_dot(coef, m, y, h, K, out):
    """out = y + h sum_{j<m} coef[j] K[j], one dot product over the stages per component."""
    for i in range(y.shape[0]):
        acc = 0.0
        for j in range(m):
            acc += coef[j] * K[j, i]
        out[i] = y[i] + h * acc


@njit(cache=True, inline="always")
def _combine_sweep(coef, m, y, h, K, out):
    """The same sweeping all components once per stage, skipping zero coefficients."""
    n = y.shape[0]
    for i in range(n):
        out[i] = 0.0
    for j in range(m):
        c = coef[j]
        if c != 0.0:
            for i in range(n):
                out[i] += c * K[j, i]
    for i in range(n):
        out[i] = y[i] + h * out[i]


@njit(cache=True, inline="always")
def _combine(coef, m, y, h, K, out):
    if y.shape[0] <= 6:
        _combine_dot(coef, m, y, h, K, out)
    else:
        _combine_sweep(coef, m, y, h, K, out)


@njit(cache=True)
def step_state(params, t, y, h, K, ytmp, ynew):
    """One Dormand-Prince 8(5,3) step of the CR3BP state (6 components) from (t, y), step h.

    K[0] must hold f(t, y); fills K[1..12] (K[12] = f(t + h, ynew), the first stage of the
    next step) and ``ynew``. Hairer et al. (1993), section II.5, method DOP853.
    """
    mu = params[0]
    for s in range(1, _NS):
        _combine_dot(A[s], s, y, h, K, ytmp)
        # the derivative goes to ynew (free until the end of the step) and is copied into K:
        # measured ~15 % quicker than passing the row view K[s] to eom
        eom(t + C[s] * h, ytmp, mu, ynew)
        for i in range(6):
            K[s, i] = ynew[i]
    _combine_dot(B, _NS, y, h, K, ynew)
    eom(t + h, ynew, mu, ytmp)
    for i in range(6):
        K[_NS, i] = ytmp[i]


@njit(cache=True)
def step_stm(params, t, y, h, K, ytmp, ynew):
    """:func:`step_state` for the CR3BP state with its STM (42 components).

    The stage loop is written out: with the stage number a literal, each inlined dot-product
    combination has a constant number of terms and constant coefficients, which LLVM
    unrolls, so that it vectorises over the 42 components (measured ~15 % quicker per STM
    propagation than the sweep of :func:`rk_step`, which is ~15 % quicker than the dot
    product when the number of terms is not a constant)."""
    mu = params[0]
    _combine_dot(A[1], 1, y, h, K, ytmp)
    eom_stm(t + C[1] * h, ytmp, mu, K[1])
    _combine_dot(A[2], 2, y, h, K, ytmp)
    eom_stm(t + C[2] * h, ytmp, mu, K[2])
    _combine_dot(A[3], 3, y, h, K, ytmp)
    eom_stm(t + C[3] * h, ytmp, mu, K[3])
    _combine_dot(A[4], 4, y, h, K, ytmp)
    eom_stm(t + C[4] * h, ytmp, mu, K[4])
    _combine_dot(A[5], 5, y, h, K, ytmp)
    eom_stm(t + C[5] * h, ytmp, mu, K[5])
    _combine_dot(A[6], 6, y, h, K, ytmp)
    eom_stm(t + C[6] * h, ytmp, mu, K[6])
    _combine_dot(A[7], 7, y, h, K, ytmp)
    eom_stm(t + C[7] * h, ytmp, mu, K[7])
    _combine_dot(A[8], 8, y, h, K, ytmp)
    eom_stm(t + C[8] * h, ytmp, mu, K[8])
    _combine_dot(A[9], 9, y, h, K, ytmp)
    eom_stm(t + C[9] * h, ytmp, mu, K[9])
    _combine_dot(A[10], 10, y, h, K, ytmp)
    eom_stm(t + C[10] * h, ytmp, mu, K[10])
    _combine_dot(A[11], 11, y, h, K, ytmp)
    eom_stm(t + C[11] * h, ytmp, mu, K[11])
    _combine_dot(B, _NS, y, h, K, ynew)
    eom_stm(t + h, ynew, mu, K[_NS])


@njit(cache=True)
def rk_step(mode, params, t, y, h, K, ytmp, ynew):
    """:func:`step_state` for any right-hand side ``mode`` of :func:`cr3bp.integrate.dispatch.rhs` (a new
    force model runs here unchanged; the CR3BP modes have the kernels above)."""
    for s in range(1, _NS):
        _combine(A[s], s, y, h, K, ytmp)
        rhs(mode, t + C[s] * h, ytmp, params, K[s])
    _combine(B, _NS, y, h, K, ynew)
    rhs(mode, t + h, ynew, params, K[_NS])


@njit(cache=True)
def error_dot(K, h, y, ynew, rtol, atol):
    """Hairer's combined 5th/3rd-order error estimate of the last step, scaled (accept if <= 1).

    err = |h| e5 / sqrt(n (e5 + 0.01 e3)) with e5, e3 the sums of squares of the scaled
    5th- and 3rd-order estimator components and scale sk = atol + rtol max(|y|, |ynew|)
    (code dop853, subroutine DP86CO). One dot product over the stages per component (short
    vectors); :func:`error_sweep` is the same for long ones.
    """
    n = y.shape[0]
    err5 = 0.0
    err3 = 0.0
    for i in range(n):
        a5 = 0.0
        a3 = 0.0
        for j in range(_NS + 1):
            a5 += E5[j] * K[j, i]
            a3 += E3[j] * K[j, i]
        sk = atol + rtol * max(abs(y[i]), abs(ynew[i]))
        err5 += (a5 / sk) ** 2
        err3 += (a3 / sk) ** 2
    if err5 == 0.0 and err3 == 0.0:
        return 0.0
    return abs(h) * err5 / np.sqrt((err5 + 0.01 * err3) * n)


@njit(cache=True)
def error_sweep(K, h, y, ynew, rtol, atol, w5, w3):
    """:func:`error_dot` sweeping the components once per stage; ``w5``, ``w3`` (n,) are work
    arrays."""
    n = y.shape[0]
    for i in range(n):
        w5[i] = 0.0
        w3[i] = 0.0
    for j in range(_NS + 1):
        c5 = E5[j]
        c3 = E3[j]
        if c5 != 0.0 or c3 != 0.0:
            for i in range(n):
                w5[i] += c5 * K[j, i]
                w3[i] += c3 * K[j, i]
    err5 = 0.0
    err3 = 0.0
    for i in range(n):
        sk = atol + rtol * max(abs(y[i]), abs(ynew[i]))
        err5 += (w5[i] / sk) ** 2
        err3 += (w3[i] / sk) ** 2
    if err5 == 0.0 and err3 == 0.0:
        return 0.0
    return abs(h) * err5 / np.sqrt((err5 + 0.01 * err3) * n)


@njit(cache=True)
def initial_step(mode, params, t, y, f0, direction, rtol, atol, max_step, ytmp, f1):
    """Starting step size, Hairer et al. (1993), section II.4 and code dop853, HINIT."""
    n = y.shape[0]
    dnf = 0.0
    dny = 0.0
    for i in range(n):
        sk = atol + rtol * abs(y[i])
        dnf += (f0[i] / sk) ** 2
        dny += (y[i] / sk) ** 2
    if dnf <= 1e-10 or dny <= 1e-10:
        h = 1e-6
    else:
        h = np.sqrt(dny / dnf) * 0.01
    h = min(h, max_step)
    h = direction * h
    for i in range(n):
        ytmp[i] = y[i] + h * f0[i]
    rhs(mode, t + h, ytmp, params, f1)
    der2 = 0.0
    for i in range(n):
        sk = atol + rtol * abs(y[i])
        der2 += ((f1[i] - f0[i]) / sk) ** 2
    der2 = np.sqrt(der2) / abs(h)
    der12 = max(abs(der2), np.sqrt(dnf))
    if der12 <= 1e-15:
        h1 = max(1e-6, abs(h) * 1e-3)
    else:
        h1 = (0.01 / der12) ** (1.0 / (ERROR_ORDER + 1.0))
    return direction * min(100.0 * abs(h), h1, max_step)


@njit(cache=True)
def dense_prepare(mode, params, t, y, ynew, h, K, ytmp, F):
    """Coefficients F (7, n) of the 7th-order continuous extension of the accepted step.

    Evaluates the three extra stages K[13..15] (code dop853, dense output of DP86CO).
    """
    n = y.shape[0]
    for s in range(_NS + 1, _NX):
        _combine(A[s], s, y, h, K, ytmp)
        rhs(mode, t + C[s] * h, ytmp, params, K[s])
    for i in range(n):
        dy = ynew[i] - y[i]
        F[0, i] = dy
        F[1, i] = h * K[0, i] - dy
        F[2, i] = 2.0 * dy - h * (K[_NS, i] + K[0, i])
    for r in range(4):
        for i in range(n):
            acc = 0.0
            for j in range(_NX):
                acc += D[r, j] * K[j, i]
            F[3 + r, i] = h * acc


@njit(cache=True)
def dense_eval(F, y, theta, ncomp, out):
    """Interpolant at ``t_old + theta h`` for the first ``ncomp`` components into ``out``."""
    for i in range(ncomp):
        v = 0.0
        for k in range(_NP):
            v += F[_NP - 1 - k, i]
            if k % 2 == 0:
                v *= theta
            else:
                v *= 1.0 - theta
        out[i] = v + y[i]


@njit(cache=True)
def event_g(kind, index, value, mu, s):
    """Event function g(t, s) of one event-table row (see :mod:`.events`)."""
    if kind == 0:
        return s[index] - value
    if index == -1:
        cx = 0.0
    elif index == 0:
        cx = -mu
    else:
        cx = 1.0 - mu
    dx = s[0] - cx
    return np.sqrt(dx * dx + s[1] * s[1] + s[2] * s[2]) - value


@njit(cache=True)
def _g_at(kind, index, value, mu, F, y, t_old, h, tt, buf):
    dense_eval(F, y, (tt - t_old) / h, buf.shape[0], buf)
    return event_g(kind, index, value, mu, buf)


@njit(cache=True)
def locate_root(kind, index, value, mu, F, y, t_old, h, a, b, fa, fb, buf):
    """Root of g on the interpolant in the bracket [a, b] (fa fb <= 0), Brent's method.

    Brent (1973), ch. 4, procedure ``zero``; tolerance 2 EPS |t| + EPS |h| / 2, i.e. full
    double precision of the event time.
    """
    if fa == 0.0:
        return a
    if fb == 0.0:
        return b
    xtol = EPS * abs(h)
    c = a
    fc = fa
    d = b - a
    e = d
    for _ in range(MAX_BRENT_ITERATIONS):
        if (fb > 0.0) == (fc > 0.0):
            c = a
            fc = fa
            d = b - a
            e = d
        if abs(fc) < abs(fb):
            a = b
            b = c
            c = a
            fa = fb
            fb = fc
            fc = fa
        tol1 = 2.0 * EPS * abs(b) + 0.5 * xtol
        xm = 0.5 * (c - b)
        if abs(xm) <= tol1 or fb == 0.0:
            return b
        if abs(e) >= tol1 and abs(fa) > abs(fb):
            s = fb / fa
            if a == c:
                p = 2.0 * xm * s
                q = 1.0 - s
            else:
                q = fa / fc
                r = fb / fc
                p = s * (2.0 * xm * q * (q - r) - (b - a) * (r - 1.0))
                q = (q - 1.0) * (r - 1.0) * (s - 1.0)
            if p > 0.0:
                q = -q
            p = abs(p)
            if 2.0 * p < min(3.0 * xm * q - abs(tol1 * q), abs(e * q)):
                e = d
                d = p / q
            else:
                d = xm
                e = d
        else:
            d = xm
            e = d
        a = b
        fa = fb
        if abs(d) > tol1:
            b += d
        elif xm > 0.0:
            b += tol1
        else:
            b -= tol1
        fb = _g_at(kind, index, value, mu, F, y, t_old, h, b, buf)
    return b


@njit(cache=True)
def _grow_rows(a):
    """A copy of the full (m, c) array ``a`` in storage of twice the rows."""
    out = np.empty((2 * a.shape[0], a.shape[1]))
    out[:a.shape[0]] = a
    return out


@njit(cache=True)
def _grow(a):
    """A copy of the full (m,) array ``a`` in storage of twice the length."""
    out = np.empty(2 * a.shape[0], dtype=a.dtype)
    out[:a.shape[0]] = a
    return out


@njit(cache=True)
def integrate(mode, params, y0, t0, t_final, rtol, atol, first_step, max_step, max_steps,
              events, max_events, t_eval, record):
    """Integrate the CR3BP right-hand side ``mode`` from (t0, y0) to ``t_final``.

    Adaptive Dormand-Prince 8(5,3) with Hairer's error estimate and step control, dense
    output, event location and output at ``t_eval`` (Hairer et al. 1993, section II.5, code
    dop853). Works forward and backward in time (sign of ``t_final - t0``).

    Parameters
    ----------
    mode : int             right-hand side of :func:`cr3bp.integrate.dispatch.rhs` (``MODE_STATE``: 6,
                           ``MODE_STM``: 42 states; :mod:`cr3bp.integrate.modes`)
    params : (p,) float    model parameters, params[0] = mu
    y0 : (n,) float        initial state (n = 6 or 42)
    t0, t_final : float
    rtol, atol : float     error tolerances over all n components
    first_step : float     initial |h|; <= 0 selects it automatically (HINIT)
    max_step : float       greatest |h| (inf for none)
    max_steps : int        greatest number of accepted + rejected steps
    events : (K, 6) float  event table (:func:`cr3bp.integrate.events.table`)
    max_events : int       events to keep; < 0 keeps all (storage grows)
    t_eval : (m,) float    output times, monotone in the direction of integration
    record : bool          keep (t, state[0:6]) of every accepted step

    Returns
    -------
    status, t_end, y_end (n,), ts (k,), ys (k, 6), ev_t (e,), ev_y (e, 6), ev_k (e,),
    n_events_seen, eval_y (j, 6), n_eval, nfev, nsteps, nrejected
    """
    n = y0.shape[0]
    mu = params[0]
    direction = 1.0 if t_final >= t0 else -1.0
    nev = events.shape[0]
    m_eval = t_eval.shape[0]

    # The work arrays are views of one allocation, and the outputs a short call does not fill
    # are empty views of it too: each np.empty is a call into numba's allocator, and a short
    # propagation (one step) made twenty-two of them, about a third of the kernel's time
    # (measured on this project's machine, prebuilt module). The event bookkeeping (hits,
    # candidate event numbers) is held as floats there: small whole numbers, exact.
    work = np.empty((_NX + _NP + 7) * n + 6 + 5 * nev)
    o = 0
    K = work[o:o + _NX * n].reshape(_NX, n)
    o += _NX * n
    F = work[o:o + _NP * n].reshape(_NP, n)
    o += _NP * n
    y = work[o:o + n]
    o += n
    ynew = work[o:o + n]
    o += n
    ytmp = work[o:o + n]
    o += n
    yout = work[o:o + n]
    o += n
    w5 = work[o:o + n]
    o += n
    w3 = work[o:o + n]
    o += n
    buf = work[o:o + 6]
    o += 6
    hits = work[o:o + nev]
    o += nev
    g_old = work[o:o + nev]
    o += nev
    g_new = work[o:o + nev]
    o += nev
    cand_t = work[o:o + nev]
    o += nev
    cand_k = work[o:o + nev]
    y[:] = y0
    for k in range(nev):
        hits[k] = 0.0

    # step history: grown by doubling (_grow), from a size that a short arc does not outgrow
    if record:
        ts = np.empty(RECORD_START)
        ys = np.empty((RECORD_START, 6))
    else:
        ts = work[:0]
        ys = work[:0].reshape(0, 6)
    nrec = 0
    if nev == 0:                # no event can occur: nothing to store
        ev_t = work[:0]
        ev_y = work[:0].reshape(0, 6)
    else:
        ecap = EVENTS_START if max_events < 0 else max(max_events, 1)
        ev_t = np.empty(ecap)
        ev_y = np.empty((ecap, 6))
    ev_k = np.empty(ev_t.shape[0], dtype=np.int64)
    n_ev = 0
    n_seen = 0
    if m_eval == 0:
        eval_y = work[:0].reshape(0, 6)
    else:
        eval_y = np.empty((m_eval, 6))
    ie = 0

    for k in range(nev):
        g_old[k] = event_g(int(events[k, 0]), int(events[k, 1]), events[k, 2], mu, y)

    t = t0
    if record:
        ts[0] = t
        ys[0, :] = y[:6]
        nrec = 1
    while ie < m_eval and t_eval[ie] == t0:
        eval_y[ie, :] = y[:6]
        ie += 1

    nfev = 0
    nsteps = 0
    nrej = 0
    status = STATUS_TIME
    if t_final == t0:
        return (status, t, y, ts[:nrec], ys[:nrec], ev_t[:0], ev_y[:0], ev_k[:0], 0,
                eval_y, ie, nfev, nsteps, nrej)

    rhs(mode, t, y, params, K[0])
    nfev += 1
    if first_step > 0.0:
        h = direction * min(first_step, max_step)
    else:
        h = initial_step(mode, params, t, y, K[0], direction, rtol, atol, max_step, ytmp, ynew)
        nfev += 1
    rejected = False
    prev_pow = PREV_POWER_MIN     # max(err_prev, PREV_ERROR_MIN) ** STEP_BETA

    while True:
        if nsteps + nrej >= max_steps:
            status = STATUS_MAX_STEPS
            break
        if 0.1 * abs(h) <= abs(t) * EPS or h == 0.0:
            status = STATUS_STALLED
            break
        if abs(h) > max_step:
            h = direction * max_step
        last = False
        if (t + LAST_STEP_STRETCH * h - t_final) * direction >= 0.0:
            h = t_final - t
            last = True

        if mode == MODE_STATE:
            step_state(params, t, y, h, K, ytmp, ynew)
        elif mode == MODE_STM:
            step_stm(params, t, y, h, K, ytmp, ynew)
        else:
            rk_step(mode, params, t, y, h, K, ytmp, ynew)
        nfev += _NS
        if n <= 6:
            err = error_dot(K, h, y, ynew, rtol, atol)
        else:
            err = error_sweep(K, h, y, ynew, rtol, atol, w5, w3)

        if not np.isfinite(err):
            # the trial step left the domain (e.g. through a singularity): shrink hard
            nrej += 1
            h *= MIN_FACTOR
            rejected = True
            if abs(h) < EPS * max(abs(t), 1.0):
                status = STATUS_NONFINITE
                break
            continue
        if err > 1.0:
            nrej += 1
            h *= max(MIN_FACTOR, SAFETY * step_powers(err)[0])
            rejected = True
            continue

        # ---- accepted step ----------------------------------------------------------------
        nsteps += 1
        t_new = t_final if last else t + h
        dense_ready = False
        stop_kind = -1
        t_stop = t_new

        # events: sign changes of g between t and t_new, located on the interpolant
        nc = 0
        for k in range(nev):
            kind = int(events[k, 0])
            g_new[k] = event_g(kind, int(events[k, 1]), events[k, 2], mu, ynew)
            go = g_old[k]
            gn = g_new[k]
            up = go < 0.0 and gn >= 0.0
            down = go > 0.0 and gn <= 0.0
            dk = events[k, 3]
            if (up and dk >= 0.0) or (down and dk <= 0.0):
                if not dense_ready:
                    dense_prepare(mode, params, t, y, ynew, h, K, ytmp, F)
                    nfev += 3
                    dense_ready = True
                tr = locate_root(kind, int(events[k, 1]), events[k, 2], mu, F, y, t, h,
                                 t, t_new, go, gn, buf)
                # insert in time order (integration order)
                pos = nc
                while pos > 0 and (cand_t[pos - 1] - tr) * direction > 0.0:
                    cand_t[pos] = cand_t[pos - 1]
                    cand_k[pos] = cand_k[pos - 1]
                    pos -= 1
                cand_t[pos] = tr
                cand_k[pos] = k
                nc += 1
        for c in range(nc):
            k = int(cand_k[c])
            tr = cand_t[c]
            hits[k] += 1.0
            n_seen += 1
            if max_events < 0 or n_ev < max_events:
                if n_ev == ev_t.shape[0]:
                    ev_t = _grow(ev_t)
                    ev_k = _grow(ev_k)
                    ev_y = _grow_rows(ev_y)
                ev_t[n_ev] = tr
                ev_k[n_ev] = k
                dense_eval(F, y, (tr - t) / h, buf.shape[0], buf)
                ev_y[n_ev, :] = buf
                n_ev += 1
            kind = int(events[k, 0])
            if kind != 0 or (events[k, 4] > 0.0 and int(hits[k]) >= int(events[k, 5])):
                stop_kind = kind
                t_stop = tr
                break

        # output at requested times up to the end of this step (or the terminal event)
        while ie < m_eval and (t_eval[ie] - t_stop) * direction <= 0.0:
            te = t_eval[ie]
            if te == t_new and stop_kind < 0:
                eval_y[ie, :] = ynew[:6]
            else:
                if not dense_ready:
                    dense_prepare(mode, params, t, y, ynew, h, K, ytmp, F)
                    nfev += 3
                    dense_ready = True
                dense_eval(F, y, (te - t) / h, buf.shape[0], buf)
                eval_y[ie, :] = buf
            ie += 1

        if stop_kind >= 0:
            dense_eval(F, y, (t_stop - t) / h, n, yout)
            t = t_stop
            y[:] = yout
            if record:
                if nrec == ts.shape[0]:
                    ts = _grow(ts)
                    ys = _grow_rows(ys)
                ts[nrec] = t
                ys[nrec, :] = y[:6]
                nrec += 1
            if stop_kind == 0:
                status = STATUS_EVENT
            elif stop_kind == 1:
                status = STATUS_IMPACT
            else:
                status = STATUS_ESCAPE
            break

        t = t_new
        y[:] = ynew
        K[0, :] = K[_NS, :]   # first-same-as-last
        for k in range(nev):
            g_old[k] = g_new[k]
        if record:
            if nrec == ts.shape[0]:
                ts = _grow(ts)
                ys = _grow_rows(ys)
            ts[nrec] = t
            ys[nrec, :] = y[:6]
            nrec += 1
        if last:
            status = STATUS_TIME
            break

        if err == 0.0:
            fac = MAX_FACTOR
            prev_pow = PREV_POWER_MIN
        else:
            pe, pb = step_powers(err)
            fac = min(MAX_FACTOR, max(MIN_FACTOR, SAFETY * pe * prev_pow))
            prev_pow = max(pb, PREV_POWER_MIN)
        if rejected:
            fac = min(fac, 1.0)
        rejected = False
        h *= fac

    return (status, t, y, ts[:nrec], ys[:nrec], ev_t[:n_ev], ev_y[:n_ev], ev_k[:n_ev], n_seen,
            eval_y, ie, nfev, nsteps, nrej)


@njit(cache=True, parallel=True)
def integrate_batch(mode, params, y0s, t0, t_finals, rtol, atol, max_step, max_steps, events,
                    max_events, record, out_y, out_t, out_status, out_nev, out_seen, ev_t, ev_y,
                    ev_k, out_nfev, out_nsteps):
    """:func:`integrate` over the rows of ``y0s`` in parallel (``numba.prange``), final
    states only; the first ``max_events`` events of each trajectory go to ``ev_*[i]``.

    ``record`` must be False (no step history is kept); it is an argument rather than a
    literal so that the call shares :func:`integrate`'s one compiled specialisation."""
    no_eval = np.empty(0)
    for i in prange(y0s.shape[0]):
        res = integrate(mode, params, y0s[i].copy(), t0, t_finals[i], rtol, atol, -1.0, max_step,
                        max_steps, events, max_events, no_eval, record)
        out_status[i] = res[0]
        out_t[i] = res[1]
        out_y[i, :] = res[2]
        te = res[5]
        ye = res[6]
        ke = res[7]
        ne = te.shape[0]
        out_nev[i] = ne
        out_seen[i] = res[8]
        for j in range(ne):
            ev_t[i, j] = te[j]
            ev_k[i, j] = ke[j]
            ev_y[i, j, :] = ye[j]
        out_nfev[i] = res[11]
        out_nsteps[i] = res[12]


@njit(cache=True)
def integrate_rows(mode, params, y0s, t0, t_finals, rtol, atol, max_step, max_steps, events,
                    max_events, record, out_y, out_t, out_status, out_nev, out_seen, ev_t, ev_y,
                    ev_k, out_nfev, out_nsteps):
    """:func:`integrate_batch` on one thread (a plain loop, no ``prange``): the same results.

    Built ahead of time into the prebuilt module (:mod:`cr3bp.integrate.prebuilt`), so that a
    computation running on one thread anyway (:func:`cr3bp.threads.serial`: the torus solver)
    neither imports numba nor loads the parallel kernel from numba's cache (~1 s of CPU per
    process on this project's machine)."""
    no_eval = np.empty(0)
    for i in range(y0s.shape[0]):
        res = integrate(mode, params, y0s[i].copy(), t0, t_finals[i], rtol, atol, -1.0, max_step,
                        max_steps, events, max_events, no_eval, record)
        out_status[i] = res[0]
        out_t[i] = res[1]
        out_y[i, :] = res[2]
        te = res[5]
        ye = res[6]
        ke = res[7]
        ne = te.shape[0]
        out_nev[i] = ne
        out_seen[i] = res[8]
        for j in range(ne):
            ev_t[i, j] = te[j]
            ev_k[i, j] = ke[j]
            ev_y[i, j, :] = ye[j]
        out_nfev[i] = res[11]
        out_nsteps[i] = res[12]


@njit(cache=True)
def integrate_packed(mode, params, y0, t0, t_final, rtol, atol, first_step, max_step, max_steps,
                     events, max_events, t_eval, record, space):
    """:func:`integrate` with its results in one array: what :func:`cr3bp.integrate.propagate`
    calls. The results go into ``space`` (the caller's array) when they fit, and the call
    returns None; else into a new array, returned.

    Why: the ahead-of-time build hands every returned array to Python at about 0.9 us each
    (it unpickles the array's dtype at each call; measured on this project's machine: 9 us
    for :func:`integrate`'s eight), so the arrays are copied into one, the counts too (an
    array of counts passed in cost the caller its allocation and the call its unboxing), and
    a short propagation, whose results fit the caller's small array, returns none at all
    (about a third of the kernel call's instructions, counted with valgrind's callgrind).

    Layout (one float array): ``[status, k, e, events seen, j, nfev, nsteps, rejected steps,
    t_end, y_end (n), ts (k), ys (k x 6), ev_t (e), ev_y (e x 6), ev_k (e), eval_y (j x 6)]``
    with k the recorded steps, e the events kept and j the ``t_eval`` outputs (the counts and
    event indices as floats: exact, they are whole numbers far below 2**53)."""
    (status, t_end, y_end, ts, ys, ev_t, ev_y, ev_k, n_seen, eval_y, n_eval, nfev, nsteps,
     nrej) = integrate(mode, params, y0, t0, t_final, rtol, atol, first_step, max_step,
                       max_steps, events, max_events, t_eval, record)
    n = y_end.shape[0]
    k = ts.shape[0]
    e = ev_t.shape[0]
    size = PACKED_HEAD + 1 + n + 7 * k + 8 * e + 6 * n_eval
    if size <= space.shape[0]:
        out = space
        fresh = False
    else:
        out = np.empty(size)
        fresh = True
    out[0] = status
    out[1] = k
    out[2] = e
    out[3] = n_seen
    out[4] = n_eval
    out[5] = nfev
    out[6] = nsteps
    out[7] = nrej
    o = PACKED_HEAD
    out[o] = t_end
    o += 1
    out[o:o + n] = y_end
    o += n
    out[o:o + k] = ts
    o += k
    for i in range(k):
        for c in range(6):
            out[o + 6 * i + c] = ys[i, c]
    o += 6 * k
    out[o:o + e] = ev_t
    o += e
    for i in range(e):
        for c in range(6):
            out[o + 6 * i + c] = ev_y[i, c]
    o += 6 * e
    for i in range(e):
        out[o + i] = ev_k[i]
    o += e
    for i in range(n_eval):
        for c in range(6):
            out[o + 6 * i + c] = eval_y[i, c]
    if fresh:
        return out
    return None
