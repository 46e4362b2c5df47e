"""The lunar-flyby departure's optimisation (``cr3bp.transfers.departure``, path ``lunar-flyby``):
bounded time of flight, first-order optimality, and the flyby burn's name through the stitcher.

Sources:
* the Karush-Kuhn-Tucker first-order conditions (Nocedal & Wright, "Numerical Optimization",
  2nd ed., 2006, Theorem 12.1): at a local minimum the objective's gradient is a combination of
  the equality constraints' and the active inequalities' gradients, the inequalities' with
  non-negative multipliers. Checked here with gradients by scipy's finite differences
  (``scipy.optimize.approx_fprime``), not the design's analytic ones;
* an optimiser never returns more than its feasible start, and a looser bound admits every
  point of a tighter one (common practice for bounded minimisation);
* the maneuver names of the issue: departure, flyby, insertion.
"""

import numpy as np
import pytest
from scipy.optimize import approx_fprime

import cr3bp.transfers.departure as dep_mod
from _orbit_cache import em
from cr3bp.transfers.departure import FLYBY_KKT_TOL, FLYBY_MAX_TOF_DAYS, design_departure

pytestmark = pytest.mark.slow

TO = "halo L2 south resonance=9:2"
#: A looser bound than the default (days).
LOOSER_TOF_DAYS = 12.0


@pytest.fixture(scope="module")
def nrho():
    from cr3bp.orbits.request import solve_request
    return solve_request(em(), TO)


@pytest.fixture(scope="module")
def designs(nrho):
    """The default-bound design, its optimiser's final point, and the looser-bound design."""
    kept = {}
    original = dep_mod._optimise_flyby

    def keep(pb, x0, ms=None):
        out = original(pb, x0, ms)
        if out[1] is not None:
            kept.setdefault(pb.max_tof, []).append((out[1]["cost"], out[2], ms, pb))
        return out

    dep_mod._optimise_flyby = keep
    try:
        tight = design_departure(nrho, 200.0, path="lunar-flyby")
        loose = design_departure(nrho, 200.0, path="lunar-flyby", max_tof_days=LOOSER_TOF_DAYS)
    finally:
        dep_mod._optimise_flyby = original
    best = min(next(v for k, v in kept.items() if abs(k * em().time_days - FLYBY_MAX_TOF_DAYS) < 1e-9),
               key=lambda r: r[0])
    return tight, best, loose


def test_optimised_on_the_default_bound(designs):
    tight, _, _ = designs
    assert tight.optimised is True
    fo = tight.details["first_order"]
    assert fo["holds"] and fo["relative_residual"] <= FLYBY_KKT_TOL
    assert "max-tof" in fo["bounds_hit"] and tight.to_dict()["bounds_hit"] == fo["bounds_hit"]
    assert tight.tof_days == pytest.approx(FLYBY_MAX_TOF_DAYS, abs=1e-3)
    assert tight.details["max_tof_days"] == pytest.approx(FLYBY_MAX_TOF_DAYS)


def test_first_order_conditions_with_finite_difference_gradients(designs):
    """Nocedal & Wright (2006), Thm 12.1, gradients by scipy's finite differences."""
    _, (cost, x, ms, pb), _ = designs
    sc = dep_mod.FLYBY_SCALES
    y = x / sc
    h = 1e-7
    g = approx_fprime(y, lambda v: ms.fun(v * sc), h)
    rows = [approx_fprime(y, lambda v, i=i: ms.eq(v * sc)[i], h) for i in range(ms.neq())]
    ineq = ms.ineq(x)
    active = [k for k in range(2) if ineq[k] <= dep_mod.FLYBY_ACTIVE_TOL[k]]
    rows += [approx_fprime(y, lambda v, k=k: ms.ineq(v * sc)[k], h) for k in active]
    A = np.array(rows)
    lam = np.linalg.lstsq(A.T, g, rcond=None)[0]
    rel = np.linalg.norm(g - A.T @ lam) / np.linalg.norm(g)
    assert rel < 10 * FLYBY_KKT_TOL
    assert np.all(lam[len(rows) - len(active):] > -10 * FLYBY_KKT_TOL * np.linalg.norm(g))
    assert 1 in active                     # the time-of-flight bound holds the optimum


def test_never_worse_than_its_start_and_a_looser_bound_no_worse(designs):
    tight, _, loose = designs
    for d in (tight, loose):
        for g in d.details["guesses"]:
            if g["feasible"]:
                assert g["result_mps"] <= g["start_mps"] + 1e-9
    assert loose.tof_days <= LOOSER_TOF_DAYS + 1e-6
    assert loose.dv_mps <= tight.dv_mps + 1e-6
    assert ("max-tof" in loose.details["bounds_hit"]) == (loose.tof_days > LOOSER_TOF_DAYS - 1e-4)


def test_the_stitcher_calls_the_flyby_burn_flyby(designs):
    from cr3bp.transfers.departure import as_leg
    from cr3bp.transfers.stitch import stitch_route
    tight, _, _ = designs
    st = stitch_route(em(), [as_leg(tight)], optimise=False)
    assert [m["name"] for m in st.maneuvers] == ["departure", "flyby", "insertion"]
    assert [m["name"] for m in tight.to_dict()["maneuvers"]] == ["departure", "flyby", "insertion"]
