"""Batch propagation in lockstep lanes: the Dormand-Prince 8(5,3) integrator of :mod:`.dop853`
advancing ``LANES`` trajectories at once, laid out structure-of-arrays so that the stages and
the CR3BP right-hand side run over the processor's vector lanes.

The method, error estimate, step control, initial step, dense output and event location are
exactly those of :func:`cr3bp.integrate.dop853.integrate` (Hairer, Norsett & Wanner, *Solving
Ordinary Differential Equations I*, 2nd ed., 1993, section II.5, code dop853; Brent, 1973, for
the event roots). Every lane keeps its own time, step size, error control, step counters and
event records; only the arithmetic of the stages is shared. Each lane performs the same
floating-point operations in the same order as the scalar integrator, so a trajectory's result
does not depend on its lane, its block or the number of threads, and equals the scalar
integrator's (measured bitwise equal on this project's machine; the tests allow round-off).

How a block runs (:func:`_run_block`): every lane holds one trajectory; all lanes take a trial
step together; each lane then accepts or rejects its own step (a rejected lane retries with its
smaller step in the next round while the others go on). A lane whose trajectory finished (final
time, terminal event or failure) takes the next trajectory of the block's queue at once, so the
lanes stay busy; at the end of the queue idle lanes compute on a stale copy whose results are
discarded (masked). Event crossings, dense output and Brent's root search are rare, so a lane
with a crossing is copied out and handled by the scalar routines of :mod:`.dop853`. Blocks of
consecutive trajectories run on threads (``numba.prange``).

Only the CR3BP modes (``MODE_STATE``, ``MODE_STM``) have lane kernels; other force models go
through :func:`cr3bp.integrate.dop853.integrate_batch`.
"""

from __future__ import annotations

import numba
import numpy as np
from numba import config, njit, prange

# The constants are read through their modules (``_dp.EPS``, ``_coef.A``): a name imported here
# would make tests/test_prebuilt.py count this file among the prebuilt kernels' sources.
from . import coefficients as _coef
from . import dop853 as _dp
from . import modes as _modes
from . import status as _status
from .dop853 import dense_eval, dense_prepare, event_g, initial_step, locate_root, step_powers
from .dispatch import rhs

#: Trajectories advanced together (four doubles fill one 256-bit vector register; eight give
#: two independent chains per stage, which hides the latency of the divisions and square
#: roots: measured quicker on this project's machine).
LANES = 8
#: Trajectories per block of the thread loop, at most (fewer when the batch is small, so that
#: every thread has work).
BLOCK = 256

# numba leaves LLVM's straight-line (SLP) vectoriser off by default; the lane kernels need it
# (it packs the four written-out lanes into vector instructions). It reorders no arithmetic, so
# results are unchanged wherever it applies; it is read when a function is compiled.
config.SLP_VECTORIZE = 1

_IDLE, _ACTIVE = 0, 1


# The lane kernels below work on groups of four lanes (one 256-bit register of doubles) written
# out as four scalar expressions: each group loads all its inputs, computes, then stores, so that
# the compiler's straight-line vectoriser can pack the four lanes into vector instructions (a
# loop over the lanes that stores between its loads is not vectorised: the compiler cannot
# prove that the arrays do not overlap). Each scalar expression is the scalar integrator's.

@njit(cache=True, inline="always", error_model="numpy")
def _combine_lanes(coef, m, Y, H, K, out):
    """out[i, l] = Y[i, l] + H[l] sum_{j<m} coef[j] K[j, i, l] (the scalar integrator's dot
    product, term by term in the same order; zero coefficients are skipped, which leaves a
    finite sum unchanged)."""
    n = Y.shape[0]
    for g in range(0, LANES, 4):
        h0 = H[g]
        h1 = H[g + 1]
        h2 = H[g + 2]
        h3 = H[g + 3]
        for i in range(n):
            a0 = 0.0
            a1 = 0.0
            a2 = 0.0
            a3 = 0.0
            for j in range(m):
                c = coef[j]
                if c != 0.0:
                    a0 += c * K[j, i, g]
                    a1 += c * K[j, i, g + 1]
                    a2 += c * K[j, i, g + 2]
                    a3 += c * K[j, i, g + 3]
            y0 = Y[i, g]
            y1 = Y[i, g + 1]
            y2 = Y[i, g + 2]
            y3 = Y[i, g + 3]
            out[i, g] = y0 + h0 * a0
            out[i, g + 1] = y1 + h1 * a1
            out[i, g + 2] = y2 + h2 * a2
            out[i, g + 3] = y3 + h3 * a3


@njit(cache=True, inline="always", error_model="numpy")
def _acc1(mu, x, y, z, vx, vy):
    """Accelerations of :func:`cr3bp.dynamics.kernels.eom` (same expressions)."""
    dx1 = x + mu
    dx2 = x - 1.0 + mu
    r1sq = dx1 * dx1 + y * y + z * z
    r2sq = dx2 * dx2 + y * y + z * z
    a = (1.0 - mu) / (r1sq * np.sqrt(r1sq))
    b = mu / (r2sq * np.sqrt(r2sq))
    return (2.0 * vy + x - a * dx1 - b * dx2, -2.0 * vx + y - (a + b) * y, -(a + b) * z)


@njit(cache=True, inline="always", error_model="numpy")
def _eom_lanes(Y, mu, K, s):
    """:func:`cr3bp.dynamics.kernels.eom` of every lane of Y (6, LANES) into K[s]."""
    for g in range(0, LANES, 4):
        r0 = _acc1(mu, Y[0, g], Y[1, g], Y[2, g], Y[3, g], Y[4, g])
        r1 = _acc1(mu, Y[0, g + 1], Y[1, g + 1], Y[2, g + 1], Y[3, g + 1], Y[4, g + 1])
        r2 = _acc1(mu, Y[0, g + 2], Y[1, g + 2], Y[2, g + 2], Y[3, g + 2], Y[4, g + 2])
        r3 = _acc1(mu, Y[0, g + 3], Y[1, g + 3], Y[2, g + 3], Y[3, g + 3], Y[4, g + 3])
        v0 = (Y[3, g], Y[3, g + 1], Y[3, g + 2], Y[3, g + 3])
        v1 = (Y[4, g], Y[4, g + 1], Y[4, g + 2], Y[4, g + 3])
        v2 = (Y[5, g], Y[5, g + 1], Y[5, g + 2], Y[5, g + 3])
        for q in range(4):
            K[s, 0, g + q] = v0[q]
        for q in range(4):
            K[s, 1, g + q] = v1[q]
        for q in range(4):
            K[s, 2, g + q] = v2[q]
        K[s, 3, g] = r0[0]
        K[s, 3, g + 1] = r1[0]
        K[s, 3, g + 2] = r2[0]
        K[s, 3, g + 3] = r3[0]
        K[s, 4, g] = r0[1]
        K[s, 4, g + 1] = r1[1]
        K[s, 4, g + 2] = r2[1]
        K[s, 4, g + 3] = r3[1]
        K[s, 5, g] = r0[2]
        K[s, 5, g + 1] = r1[2]
        K[s, 5, g + 2] = r2[2]
        K[s, 5, g + 3] = r3[2]


@njit(cache=True, inline="always", error_model="numpy")
def _hess1(mu, x, y, z, vx, vy):
    """Accelerations and the Hessian of Omega of :func:`cr3bp.dynamics.kernels.eom_stm`
    (same expressions): (ax, ay, az, hxx, hyy, hzz, hxy, hxz, hyz)."""
    dx1 = x + mu
    dx2 = x - 1.0 + mu
    yz2 = y * y + z * z
    q1 = 1.0 / (dx1 * dx1 + yz2)
    q2 = 1.0 / (dx2 * dx2 + yz2)
    a3 = (1.0 - mu) * q1 * np.sqrt(q1)
    b3 = mu * q2 * np.sqrt(q2)
    a5 = 3.0 * a3 * q1
    b5 = 3.0 * b3 * q2
    ab3 = a3 + b3
    ab5 = a5 + b5
    m = a5 * dx1 + b5 * dx2
    return (2.0 * vy + x - a3 * dx1 - b3 * dx2, -2.0 * vx + y - ab3 * y, -ab3 * z,
            1.0 - ab3 + a5 * dx1 * dx1 + b5 * dx2 * dx2, 1.0 - ab3 + ab5 * y * y,
            -ab3 + ab5 * z * z, m * y, m * z, ab5 * y * z)


@njit(cache=True, inline="always", error_model="numpy")
def _col1(r, p0, p1, p2, p3, p4):
    """Rows 3-5 of one column of Phi' = A Phi (:func:`cr3bp.dynamics.kernels.eom_stm`)."""
    return (r[3] * p0 + r[6] * p1 + r[7] * p2 + 2.0 * p4,
            r[6] * p0 + r[4] * p1 + r[8] * p2 - 2.0 * p3,
            r[7] * p0 + r[8] * p1 + r[5] * p2)


@njit(cache=True, inline="always", error_model="numpy")
def _eom_stm_lanes(Y, mu, K, s):
    """:func:`cr3bp.dynamics.kernels.eom_stm` of every lane of Y (42, LANES) into K[s]."""
    for g in range(0, LANES, 4):
        r0 = _hess1(mu, Y[0, g], Y[1, g], Y[2, g], Y[3, g], Y[4, g])
        r1 = _hess1(mu, Y[0, g + 1], Y[1, g + 1], Y[2, g + 1], Y[3, g + 1], Y[4, g + 1])
        r2 = _hess1(mu, Y[0, g + 2], Y[1, g + 2], Y[2, g + 2], Y[3, g + 2], Y[4, g + 2])
        r3 = _hess1(mu, Y[0, g + 3], Y[1, g + 3], Y[2, g + 3], Y[3, g + 3], Y[4, g + 3])
        v0 = (Y[3, g], Y[3, g + 1], Y[3, g + 2], Y[3, g + 3])
        v1 = (Y[4, g], Y[4, g + 1], Y[4, g + 2], Y[4, g + 3])
        v2 = (Y[5, g], Y[5, g + 1], Y[5, g + 2], Y[5, g + 3])
        for q in range(4):
            K[s, 0, g + q] = v0[q]
        for q in range(4):
            K[s, 1, g + q] = v1[q]
        for q in range(4):
            K[s, 2, g + q] = v2[q]
        for c in range(3):
            K[s, 3 + c, g] = r0[c]
            K[s, 3 + c, g + 1] = r1[c]
            K[s, 3 + c, g + 2] = r2[c]
            K[s, 3 + c, g + 3] = r3[c]
        for j in range(6):
            c0 = _col1(r0, Y[6 + j, g], Y[12 + j, g], Y[18 + j, g], Y[24 + j, g], Y[30 + j, g])
            c1 = _col1(r1, Y[6 + j, g + 1], Y[12 + j, g + 1], Y[18 + j, g + 1],
                       Y[24 + j, g + 1], Y[30 + j, g + 1])
            c2 = _col1(r2, Y[6 + j, g + 2], Y[12 + j, g + 2], Y[18 + j, g + 2],
                       Y[24 + j, g + 2], Y[30 + j, g + 2])
            c3 = _col1(r3, Y[6 + j, g + 3], Y[12 + j, g + 3], Y[18 + j, g + 3],
                       Y[24 + j, g + 3], Y[30 + j, g + 3])
            u0 = (Y[24 + j, g], Y[24 + j, g + 1], Y[24 + j, g + 2], Y[24 + j, g + 3])
            u1 = (Y[30 + j, g], Y[30 + j, g + 1], Y[30 + j, g + 2], Y[30 + j, g + 3])
            u2 = (Y[36 + j, g], Y[36 + j, g + 1], Y[36 + j, g + 2], Y[36 + j, g + 3])
            for q in range(4):
                K[s, 6 + j, g + q] = u0[q]
            for q in range(4):
                K[s, 12 + j, g + q] = u1[q]
            for q in range(4):
                K[s, 18 + j, g + q] = u2[q]
            for c in range(3):
                K[s, 24 + 6 * c + j, g] = c0[c]
                K[s, 24 + 6 * c + j, g + 1] = c1[c]
                K[s, 24 + 6 * c + j, g + 2] = c2[c]
                K[s, 24 + 6 * c + j, g + 3] = c3[c]


# The stages are written out one by one (not a loop over the stage index): each combination
# then sees its row of coefficients and its number of terms as constants, so the compiler drops
# the zero coefficients, unrolls the sums and packs the lanes into vector instructions with no
# branch left between them (measured 1.7x quicker than the loop over the stages). The
# arithmetic is unchanged. tests/test_lanes.py checks that the stage count is the method's.
_STAGES_WRITTEN_OUT = 12


@njit(cache=True, error_model="numpy")
def _step_state(mu, Y, H, K, Ytmp, Ynew):
    """One trial step of every lane, state only: stages 1..11, the solution Ynew and the FSAL
    stage K[12] (K[0] must hold f(Y)). Hairer et al. (1993), section II.5, method DOP853."""
    _combine_lanes(_coef.A[1], 1, Y, H, K, Ytmp)
    _eom_lanes(Ytmp, mu, K, 1)
    _combine_lanes(_coef.A[2], 2, Y, H, K, Ytmp)
    _eom_lanes(Ytmp, mu, K, 2)
    _combine_lanes(_coef.A[3], 3, Y, H, K, Ytmp)
    _eom_lanes(Ytmp, mu, K, 3)
    _combine_lanes(_coef.A[4], 4, Y, H, K, Ytmp)
    _eom_lanes(Ytmp, mu, K, 4)
    _combine_lanes(_coef.A[5], 5, Y, H, K, Ytmp)
    _eom_lanes(Ytmp, mu, K, 5)
    _combine_lanes(_coef.A[6], 6, Y, H, K, Ytmp)
    _eom_lanes(Ytmp, mu, K, 6)
    _combine_lanes(_coef.A[7], 7, Y, H, K, Ytmp)
    _eom_lanes(Ytmp, mu, K, 7)
    _combine_lanes(_coef.A[8], 8, Y, H, K, Ytmp)
    _eom_lanes(Ytmp, mu, K, 8)
    _combine_lanes(_coef.A[9], 9, Y, H, K, Ytmp)
    _eom_lanes(Ytmp, mu, K, 9)
    _combine_lanes(_coef.A[10], 10, Y, H, K, Ytmp)
    _eom_lanes(Ytmp, mu, K, 10)
    _combine_lanes(_coef.A[11], 11, Y, H, K, Ytmp)
    _eom_lanes(Ytmp, mu, K, 11)
    _combine_lanes(_coef.B, 12, Y, H, K, Ynew)
    _eom_lanes(Ynew, mu, K, 12)


@njit(cache=True, error_model="numpy")
def _step_stm(mu, Y, H, K, Ytmp, Ynew):
    """:func:`_step_state` for the state and its transition matrix (42 components)."""
    _combine_lanes(_coef.A[1], 1, Y, H, K, Ytmp)
    _eom_stm_lanes(Ytmp, mu, K, 1)
    _combine_lanes(_coef.A[2], 2, Y, H, K, Ytmp)
    _eom_stm_lanes(Ytmp, mu, K, 2)
    _combine_lanes(_coef.A[3], 3, Y, H, K, Ytmp)
    _eom_stm_lanes(Ytmp, mu, K, 3)
    _combine_lanes(_coef.A[4], 4, Y, H, K, Ytmp)
    _eom_stm_lanes(Ytmp, mu, K, 4)
    _combine_lanes(_coef.A[5], 5, Y, H, K, Ytmp)
    _eom_stm_lanes(Ytmp, mu, K, 5)
    _combine_lanes(_coef.A[6], 6, Y, H, K, Ytmp)
    _eom_stm_lanes(Ytmp, mu, K, 6)
    _combine_lanes(_coef.A[7], 7, Y, H, K, Ytmp)
    _eom_stm_lanes(Ytmp, mu, K, 7)
    _combine_lanes(_coef.A[8], 8, Y, H, K, Ytmp)
    _eom_stm_lanes(Ytmp, mu, K, 8)
    _combine_lanes(_coef.A[9], 9, Y, H, K, Ytmp)
    _eom_stm_lanes(Ytmp, mu, K, 9)
    _combine_lanes(_coef.A[10], 10, Y, H, K, Ytmp)
    _eom_stm_lanes(Ytmp, mu, K, 10)
    _combine_lanes(_coef.A[11], 11, Y, H, K, Ytmp)
    _eom_stm_lanes(Ytmp, mu, K, 11)
    _combine_lanes(_coef.B, 12, Y, H, K, Ynew)
    _eom_stm_lanes(Ynew, mu, K, 12)


@njit(cache=True, error_model="numpy")
def _step_lanes(stm, mu, Y, H, K, Ytmp, Ynew):
    """One trial step of every lane: stages 1..11, the solution Ynew and the FSAL stage K[12]
    (K[0] must hold f(Y)). Hairer et al. (1993), section II.5, method DOP853."""
    if stm:
        _step_stm(mu, Y, H, K, Ytmp, Ynew)
    else:
        _step_state(mu, Y, H, K, Ytmp, Ynew)


@njit(cache=True, inline="always", error_model="numpy")
def _err1(h, e5, e3, n):
    """The scalar integrator's final combination of the error sums (computed, then selected,
    so that the four lanes of a group stay one straight line of code)."""
    v = abs(h) * e5 / np.sqrt((e5 + 0.01 * e3) * n)
    return 0.0 if (e5 == 0.0 and e3 == 0.0) else v


@njit(cache=True, error_model="numpy")
def _error_lanes(K, H, Y, Ynew, rtol, atol, err):
    """Hairer's error estimate of every lane into ``err`` (:func:`cr3bp.integrate.dop853.error_dot`:
    per component the stage sums over all 13 stages in stage order, then the scaled squares
    summed over the components in order). No branch inside: the compiler unrolls the stage sum
    and packs four lanes per vector instruction."""
    n = Y.shape[0]
    for g in range(0, LANES, 4):
        p0 = 0.0
        p1 = 0.0
        p2 = 0.0
        p3 = 0.0
        q0 = 0.0
        q1 = 0.0
        q2 = 0.0
        q3 = 0.0
        for i in range(n):
            a0 = 0.0
            a1 = 0.0
            a2 = 0.0
            a3 = 0.0
            b0 = 0.0
            b1 = 0.0
            b2 = 0.0
            b3 = 0.0
            for j in range(_coef.N_STAGES + 1):
                c5 = _coef.E5[j]
                c3 = _coef.E3[j]
                k0 = K[j, i, g]
                k1 = K[j, i, g + 1]
                k2 = K[j, i, g + 2]
                k3 = K[j, i, g + 3]
                a0 += c5 * k0
                a1 += c5 * k1
                a2 += c5 * k2
                a3 += c5 * k3
                b0 += c3 * k0
                b1 += c3 * k1
                b2 += c3 * k2
                b3 += c3 * k3
            s0 = atol + rtol * max(abs(Y[i, g]), abs(Ynew[i, g]))
            s1 = atol + rtol * max(abs(Y[i, g + 1]), abs(Ynew[i, g + 1]))
            s2 = atol + rtol * max(abs(Y[i, g + 2]), abs(Ynew[i, g + 2]))
            s3 = atol + rtol * max(abs(Y[i, g + 3]), abs(Ynew[i, g + 3]))
            p0 += (a0 / s0) ** 2
            p1 += (a1 / s1) ** 2
            p2 += (a2 / s2) ** 2
            p3 += (a3 / s3) ** 2
            q0 += (b0 / s0) ** 2
            q1 += (b1 / s1) ** 2
            q2 += (b2 / s2) ** 2
            q3 += (b3 / s3) ** 2
        r0 = _err1(H[g], p0, q0, n)
        r1 = _err1(H[g + 1], p1, q1, n)
        r2 = _err1(H[g + 2], p2, q2, n)
        r3 = _err1(H[g + 3], p3, q3, n)
        err[g] = r0
        err[g + 1] = r1
        err[g + 2] = r2
        err[g + 3] = r3


@njit(cache=True, error_model="numpy")
def _power_lanes(err, PE, PB):
    """:func:`cr3bp.integrate.dop853.step_powers` of every lane's error (groups of four written
    out, so that the square roots run as vector instructions)."""
    for g in range(0, LANES, 4):
        e0 = err[g]
        e1 = err[g + 1]
        e2 = err[g + 2]
        e3 = err[g + 3]
        a0, b0 = step_powers(e0)
        a1, b1 = step_powers(e1)
        a2, b2 = step_powers(e2)
        a3, b3 = step_powers(e3)
        PE[g] = a0
        PE[g + 1] = a1
        PE[g + 2] = a2
        PE[g + 3] = a3
        PB[g] = b0
        PB[g + 1] = b1
        PB[g + 2] = b2
        PB[g + 3] = b3


@njit(cache=True, error_model="numpy")
def _g_lane(kind, index, value, mu, Y, l):
    """:func:`cr3bp.integrate.dop853.event_g` of lane ``l`` of Y (same expressions)."""
    if kind == 0:
        return Y[index, l] - value
    if index == -1:
        cx = 0.0
    elif index == 0:
        cx = -mu
    else:
        cx = 1.0 - mu
    dx = Y[0, l] - cx
    return np.sqrt(dx * dx + Y[1, l] * Y[1, l] + Y[2, l] * Y[2, l]) - value


@njit(cache=True, error_model="numpy")
def _run_block(mode, params, y0s, t0, t_finals, rtol, atol, max_step, max_steps, events,
               max_events, start, stop, out_y, out_t, out_status, out_nev, out_seen, ev_t, ev_y,
               ev_k, out_nfev, out_nsteps):
    """Trajectories ``start .. stop-1`` of the batch through ``LANES`` lockstep lanes; the
    outputs as :func:`cr3bp.integrate.dop853.integrate_batch` writes them."""
    n = y0s.shape[1]
    mu = params[0]
    stm = mode == _modes.MODE_STM
    nev = events.shape[0]
    L = LANES

    Y = np.zeros((n, L))
    Ynew = np.zeros((n, L))
    Ytmp = np.zeros((n, L))
    K = np.zeros((_coef.N_STAGES + 1, n, L))
    H = np.zeros(L)
    err = np.empty(L)
    T = np.zeros(L)
    TF = np.zeros(L)
    DIR = np.ones(L)
    traj = np.full(L, -1, dtype=np.int64)
    state = np.zeros(L, dtype=np.int64)
    last = np.zeros(L, dtype=np.bool_)
    rejected = np.zeros(L, dtype=np.bool_)
    prev_pow = np.zeros(L)      # max(err_prev, PREV_ERROR_MIN) ** STEP_BETA of each lane
    PE = np.empty(L)            # err ** ERROR_EXPONENT of each lane's trial step
    PB = np.empty(L)            # err ** STEP_BETA
    nfev = np.zeros(L, dtype=np.int64)
    nsteps = np.zeros(L, dtype=np.int64)
    nrej = np.zeros(L, dtype=np.int64)
    n_ev = np.zeros(L, dtype=np.int64)
    n_seen = np.zeros(L, dtype=np.int64)
    hits = np.zeros((max(nev, 1), L), dtype=np.int64)
    g_old = np.zeros((max(nev, 1), L))
    g_new = np.zeros(max(nev, 1))
    cand_t = np.empty(max(nev, 1))
    cand_k = np.empty(max(nev, 1), dtype=np.int64)
    # scalar work space of one lane (start of a trajectory, events, dense output)
    ys = np.empty(n)
    yn = np.empty(n)
    yt = np.empty(n)
    f1 = np.empty(n)
    Ks = np.empty((_coef.N_STAGES_EXTENDED, n))
    F = np.empty((7, n))
    buf = np.empty(6)

    nxt = start
    active = 0
    while True:
        # ---- fill idle lanes with the next trajectories; top-of-loop checks of every lane
        for l in range(L):
            while True:
                if state[l] == _IDLE:
                    if nxt >= stop:
                        break
                    i = nxt
                    nxt += 1
                    traj[l] = i
                    t0l = t0
                    tfl = t_finals[i]
                    for c in range(n):
                        ys[c] = y0s[i, c]
                        Y[c, l] = ys[c]
                    n_ev[l] = 0
                    n_seen[l] = 0
                    nsteps[l] = 0
                    nrej[l] = 0
                    nfev[l] = 0
                    for k in range(nev):
                        hits[k, l] = 0
                        g_old[k, l] = event_g(int(events[k, 0]), int(events[k, 1]),
                                              events[k, 2], mu, ys)
                    T[l] = t0l
                    TF[l] = tfl
                    if tfl == t0l:
                        out_status[i] = _status.STATUS_TIME
                        out_t[i] = t0l
                        for c in range(n):
                            out_y[i, c] = ys[c]
                        out_nev[i] = 0
                        out_seen[i] = 0
                        out_nfev[i] = 0
                        out_nsteps[i] = 0
                        continue
                    d = 1.0 if tfl >= t0l else -1.0
                    DIR[l] = d
                    rhs(mode, t0l, ys, params, f1)
                    for c in range(n):
                        K[0, c, l] = f1[c]
                    h = initial_step(mode, params, t0l, ys, f1, d, rtol, atol, max_step, yt, yn)
                    nfev[l] = 2
                    H[l] = h
                    rejected[l] = False
                    prev_pow[l] = _dp.PREV_POWER_MIN
                    state[l] = _ACTIVE
                    active += 1
                # top of the scalar integrator's loop
                i = traj[l]
                h = H[l]
                t = T[l]
                code = 1
                if nsteps[l] + nrej[l] >= max_steps:
                    code = _status.STATUS_MAX_STEPS
                elif 0.1 * abs(h) <= abs(t) * _dp.EPS or h == 0.0:
                    code = _status.STATUS_STALLED
                if code != 1:
                    out_status[i] = code
                    out_t[i] = t
                    for c in range(n):
                        out_y[i, c] = Y[c, l]
                    out_nev[i] = n_ev[l]
                    out_seen[i] = n_seen[l]
                    out_nfev[i] = nfev[l]
                    out_nsteps[i] = nsteps[l]
                    state[l] = _IDLE
                    active -= 1
                    continue
                d = DIR[l]
                if abs(h) > max_step:
                    h = d * max_step
                last[l] = False
                if (t + _dp.LAST_STEP_STRETCH * h - TF[l]) * d >= 0.0:
                    h = TF[l] - t
                    last[l] = True
                H[l] = h
                break
        if active == 0:
            break

        # ---- one trial step of all lanes (idle lanes compute on stale values, discarded)
        _step_lanes(stm, mu, Y, H, K, Ytmp, Ynew)
        _error_lanes(K, H, Y, Ynew, rtol, atol, err)
        _power_lanes(err, PE, PB)

        # ---- each lane accepts or rejects its own step
        for l in range(L):
            if state[l] != _ACTIVE:
                continue
            nfev[l] += _coef.N_STAGES
            e = err[l]
            h = H[l]
            t = T[l]
            i = traj[l]
            if not np.isfinite(e):
                nrej[l] += 1
                h *= _dp.MIN_FACTOR
                H[l] = h
                rejected[l] = True
                if abs(h) < _dp.EPS * max(abs(t), 1.0):
                    out_status[i] = _status.STATUS_NONFINITE
                    out_t[i] = t
                    for c in range(n):
                        out_y[i, c] = Y[c, l]
                    out_nev[i] = n_ev[l]
                    out_seen[i] = n_seen[l]
                    out_nfev[i] = nfev[l]
                    out_nsteps[i] = nsteps[l]
                    state[l] = _IDLE
                    active -= 1
                continue
            if e > 1.0:
                nrej[l] += 1
                h *= max(_dp.MIN_FACTOR, _dp.SAFETY * PE[l])
                H[l] = h
                rejected[l] = True
                continue

            # accepted
            nsteps[l] += 1
            d = DIR[l]
            t_new = TF[l] if last[l] else t + h
            stop_kind = -1
            t_stop = t_new
            if nev > 0:
                nc = 0
                dense_ready = False
                for k in range(nev):
                    kind = int(events[k, 0])
                    gn = _g_lane(kind, int(events[k, 1]), events[k, 2], mu, Ynew, l)
                    g_new[k] = gn
                    go = g_old[k, l]
                    up = go < 0.0 and gn >= 0.0
                    down = go > 0.0 and gn <= 0.0
                    dk = events[k, 3]
                    if (up and dk >= 0.0) or (down and dk <= 0.0):
                        if not dense_ready:
                            for c in range(n):
                                ys[c] = Y[c, l]
                                yn[c] = Ynew[c, l]
                                for j in range(_coef.N_STAGES + 1):
                                    Ks[j, c] = K[j, c, l]
                            dense_prepare(mode, params, t, ys, yn, h, Ks, yt, F)
                            nfev[l] += 3
                            dense_ready = True
                        tr = locate_root(kind, int(events[k, 1]), events[k, 2], mu, F, ys, t,
                                         h, t, t_new, go, gn, buf)
                        pos = nc
                        while pos > 0 and (cand_t[pos - 1] - tr) * d > 0.0:
                            cand_t[pos] = cand_t[pos - 1]
                            cand_k[pos] = cand_k[pos - 1]
                            pos -= 1
                        cand_t[pos] = tr
                        cand_k[pos] = k
                        nc += 1
                for c in range(nc):
                    k = cand_k[c]
                    tr = cand_t[c]
                    hits[k, l] += 1
                    n_seen[l] += 1
                    if n_ev[l] < max_events:
                        dense_eval(F, ys, (tr - t) / h, 6, buf)
                        ev_t[i, n_ev[l]] = tr
                        ev_k[i, n_ev[l]] = k
                        for q in range(6):
                            ev_y[i, n_ev[l], q] = buf[q]
                        n_ev[l] += 1
                    kind = int(events[k, 0])
                    if kind != 0 or (events[k, 4] > 0.0 and hits[k, l] >= int(events[k, 5])):
                        stop_kind = kind
                        t_stop = tr
                        break
                for k in range(nev):
                    g_old[k, l] = g_new[k]
            if stop_kind >= 0:
                dense_eval(F, ys, (t_stop - t) / h, n, yt)
                if stop_kind == 0:
                    code = _status.STATUS_EVENT
                elif stop_kind == 1:
                    code = _status.STATUS_IMPACT
                else:
                    code = _status.STATUS_ESCAPE
                out_status[i] = code
                out_t[i] = t_stop
                for c in range(n):
                    out_y[i, c] = yt[c]
                out_nev[i] = n_ev[l]
                out_seen[i] = n_seen[l]
                out_nfev[i] = nfev[l]
                out_nsteps[i] = nsteps[l]
                state[l] = _IDLE
                active -= 1
                continue
            T[l] = t_new
            for c in range(n):
                Y[c, l] = Ynew[c, l]
                K[0, c, l] = K[_coef.N_STAGES, c, l]
            if last[l]:
                out_status[i] = _status.STATUS_TIME
                out_t[i] = t_new
                for c in range(n):
                    out_y[i, c] = Y[c, l]
                out_nev[i] = n_ev[l]
                out_seen[i] = n_seen[l]
                out_nfev[i] = nfev[l]
                out_nsteps[i] = nsteps[l]
                state[l] = _IDLE
                active -= 1
                continue
            if e == 0.0:
                fac = _dp.MAX_FACTOR
                prev_pow[l] = _dp.PREV_POWER_MIN
            else:
                fac = min(_dp.MAX_FACTOR, max(_dp.MIN_FACTOR, _dp.SAFETY * PE[l] * prev_pow[l]))
                prev_pow[l] = max(PB[l], _dp.PREV_POWER_MIN)
            if rejected[l]:
                fac = min(fac, 1.0)
            rejected[l] = False
            H[l] = h * fac


def blocks(n: int) -> int:
    """The number of blocks :func:`integrate_lanes` splits ``n`` trajectories into: one per
    thread at least (while every block fills its lanes), more for large batches so that no
    block exceeds :data:`BLOCK` trajectories. The results do not depend on it.

    Parameters
    ----------
    n : int
        Trajectories in the batch.

    Returns
    -------
    int
        Blocks, at least 1.

    Examples
    --------
    >>> from cr3bp.integrate.lanes import blocks
    >>> blocks(1)
    1

    Raises
    ------
    ValueError
        ``n`` is not a whole number.

    References
    ----------
    Common practice (static scheduling of equal work over threads).
    """
    threads = numba.get_num_threads()
    per_lanes = max(1, -(-int(n) // LANES))
    return max(1, min(per_lanes, max(threads, -(-int(n) // BLOCK))))


@njit(cache=True, parallel=True, error_model="numpy")
def integrate_lanes(mode, params, y0s, t0, t_finals, rtol, atol, max_step, max_steps, events,
                    max_events, nblocks, out_y, out_t, out_status, out_nev, out_seen, ev_t, ev_y,
                    ev_k, out_nfev, out_nsteps):
    """:func:`cr3bp.integrate.dop853.integrate_batch` (final states, the first ``max_events``
    events of each trajectory) on the lockstep lanes, for ``mode`` ``MODE_STATE`` or
    ``MODE_STM``; the rows of ``y0s`` split into ``nblocks`` blocks of consecutive
    trajectories run on threads (``numba.prange``). The results do not depend on
    ``nblocks`` nor on the number of threads."""
    n = y0s.shape[0]
    for b in prange(nblocks):
        start = (n * b) // nblocks
        stop = (n * (b + 1)) // nblocks
        _run_block(mode, params, y0s, t0, t_finals, rtol, atol, max_step, max_steps, events,
                   max_events, start, stop, out_y, out_t, out_status, out_nev, out_seen, ev_t,
                   ev_y, ev_k, out_nfev, out_nsteps)
