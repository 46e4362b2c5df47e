"""A converged ephemeris trajectory re-propagated from its first state by scipy's
``solve_ivp`` (DOP853; Hairer, Norsett & Wanner 1993, the independent implementation in scipy)
on the same right-hand side stays within the continuity tolerance, carried through the
instability, at every patch point.

Bound at patch k: the converged mismatch at patch j (< tol in each component) reaches patch k
through Phi(t_k, t_{j+1}), so |x_scipy(t_k) - x_k| <= sum_j ||Phi(t_k, t_{j+1})||_2 *
sqrt(6) * (tol + e_int), with e_int = 1e-10 the error of one segment at rtol = atol = 1e-12
(common practice: about 100 times the tolerance).
"""

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from cr3bp.fidelity import model as fm

from fidelity_cases import nrho_transition, sel1_transition

pytestmark = pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")


def _check(tr):
    m = tr.model
    X, t = tr.patches, tr.t_tu
    _, phis = fm.propagate_many(m, X[:-1], t[:-1], t[1:], stm=True)
    sol = solve_ivp(m.acceleration, (t[0], t[-1]), X[0], method="DOP853", rtol=1e-12, atol=1e-12,
                    t_eval=t, dense_output=False)
    assert sol.success
    dev = np.linalg.norm(sol.y.T - X, axis=1)
    tol = tr.options["tolerance"]
    n = len(t) - 1
    cum = [np.eye(6)]      # cum[i] = Phi(t_k, t_{k-i}) built backwards for each k
    worst = 0.0
    for k in range(1, n + 1):
        bound = 0.0
        P = np.eye(6)
        for j in range(k - 1, -1, -1):       # Phi(t_k, t_{j+1})
            bound += np.linalg.norm(P, 2) * np.sqrt(6) * (tol + 1e-10)
            P = P @ phis[j]
        assert dev[k] <= bound, (k, dev[k], bound)
        worst = max(worst, dev[k] / bound)
    return worst


def test_nrho_repropagated_with_scipy():
    assert _check(nrho_transition()) < 1.0


def test_sun_earth_halo_repropagated_with_scipy():
    assert _check(sel1_transition()) < 1.0
