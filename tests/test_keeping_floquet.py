"""Floquet-mode station keeping (``policy="floquet"``, ``librate keep --policy floquet``) on the
Earth-Moon 9:2 NRHO and a Sun-Earth L1 halo, beside the x-axis crossing control on the same
trials (same reference epochs, seeds and errors).

Method: the deviation's component along the unstable Floquet mode of the reference's
one-revolution map is cancelled at each maneuver (Simó, Gómez, Llibre & Martínez, "Station
keeping of a quasiperiodic halo orbit using invariant manifolds", ESA SP-255, 1986; Howell &
Gordon, "Orbit determination error analysis and a station-keeping strategy for Sun-Earth L1
libration point orbits", J. Astronautical Sciences 42(2), 1994; both from memory).

Outside checks (order of magnitude, from memory): the 9:2 NRHO is kept for well under
1-2 m/s a year with about one maneuver a revolution (Davis et al., AAS 17-269, 2017; Guzzetti
et al., AAS 17-395, 2017); Sun-Earth L1/L2 halos for tenths of a m/s to a few m/s a year with
navigation errors of about a kilometre and a cm/s (Howell & Gordon 1994; Howell & Pernicka,
J. Guidance 16(1), 1993). Zero errors give a near-zero budget; doubling the errors raises it.
"""

import functools
import warnings

import numpy as np
import pytest

from cr3bp.errors import InputError
from cr3bp.operations import keeping as kp

from fidelity_cases import EPOCH, nrho, sel1_halo

pytestmark = pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")

NOMINAL = kp.Errors(1.0, 0.01, 0.01, 0.001)     # 1 km, 1 cm/s; 1 %, 1 mm/s (1-sigma per axis)


@functools.lru_cache(maxsize=None)
def nrho_ref(policy, revs=4):
    o = nrho()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return kp.reference(o, EPOCH, 40.0 / o.system.time_days, bodies=("sun", "earth"), policy=policy,
                            target_revs=revs)


@functools.lru_cache(maxsize=None)
def se_ref(policy):
    o = sel1_halo()
    td = o.system.time_days
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return kp.reference(o, EPOCH, 180.0 / td, bodies=("sun", "earth", "moon"), target_revs=1,
                            interval_tu=30.0 / td, policy=policy)       # one revolution: about 178 days


def _summary(r, errors, trials=6, seed=3):
    return kp.Budget(r, errors, seed, 0.0, kp.run_trials(r, errors, trials, seed, workers=1)).summary()


def test_floquet_rows_are_the_left_unstable_eigenvector():
    """w Phi = lambda w with lambda real, over 1, the largest multiplier of the map over
    target_revs revolutions (checked by numpy's eigenvalues of the same matrix propagated here
    again)."""
    from cr3bp.fidelity import model as fm
    r = nrho_ref("floquet")
    assert r.rows.shape == (r.t_man.size, 1, 6) and r.policy == "floquet"
    _, phis = fm.propagate_many(r.model, r.x_man, r.t_man, r.t_man + 4 * r.period_tu, stm=True, rtol=1e-13,
                                atol=1e-13)
    for w, phi in zip(r.rows[:, 0], phis):
        lam = float(np.max(np.abs(np.linalg.eigvals(phi))))
        assert lam > 1.0
        assert np.allclose(w @ phi, lam * w, atol=1e-6 * lam), (w @ phi, lam * w)
        assert abs(np.linalg.norm(w) - 1.0) < 1e-12


def test_zero_errors_give_a_near_zero_budget():
    s = _summary(nrho_ref("floquet"), kp.Errors(), trials=2)
    assert s["dv_per_year_mps"]["max"] < 1e-4, s["dv_per_year_mps"]


def test_doubling_the_errors_raises_the_budget():
    r = nrho_ref("floquet")
    means = [_summary(r, NOMINAL.scaled(k))["dv_per_year_mps"]["mean"] for k in (0.5, 1.0, 2.0)]
    assert all(a < b for a, b in zip(means, means[1:])), means


def test_nrho_budget_of_the_published_order_beside_the_crossing_control():
    """Same trials (seed 3, 6 trials, 40 days scaled to a year). Measured: see the assert
    message when it fails; asserted 0.05 to 2 m/s a year for both policies, none lost."""
    fl = _summary(nrho_ref("floquet"), NOMINAL)
    cr = _summary(nrho_ref("crossing"), NOMINAL)
    got = (fl["dv_per_year_mps"]["mean"], cr["dv_per_year_mps"]["mean"])
    assert 0.05 < got[0] < 2.0 and 0.05 < got[1] < 2.0, got
    assert fl["lost_trials"] == 0 and cr["lost_trials"] == 0
    assert fl["deviation_at_maneuvers_km"]["max"] < 500.0, fl["deviation_at_maneuvers_km"]


def test_one_revolution_mode_does_not_hold_the_nrho():
    """The measured reason for the default of four revolutions (module notes of
    cr3bp.operations.keeping): cancelling the one-revolution mode of the ephemeris reference
    each revolution lets the NRHO's deviation grow (about threefold a revolution, measured);
    the four-revolution mode holds it."""
    one = kp.run_trials(nrho_ref("floquet", 1), NOMINAL, 4, 3, workers=1)["deviation_km"]
    four = kp.run_trials(nrho_ref("floquet", 4), NOMINAL, 4, 3, workers=1)["deviation_km"]
    assert np.median(one[:, -1]) > 10 * np.median(four[:, -1]), (one[:, -1], four[:, -1])
    assert np.median(four[:, -1]) < 100.0, four


def test_sun_earth_l1_halo_budget_of_the_published_order():
    """A maneuver every 30 days; 0.05 to 5 m/s a year at 1 km, 1 cm/s, 1 %, 1 mm/s."""
    fl = _summary(se_ref("floquet"), NOMINAL, trials=8, seed=5)
    cr = _summary(se_ref("crossing"), NOMINAL, trials=8, seed=5)
    got = (fl["dv_per_year_mps"]["mean"], cr["dv_per_year_mps"]["mean"])
    assert 0.05 < got[0] < 5.0 and fl["lost_trials"] == 0, (got, fl["lost_trials"])
    assert _summary(se_ref("floquet"), kp.Errors(), trials=2)["dv_per_year_mps"]["max"] < 1e-3


def test_floquet_policy_refusals():
    o = nrho()
    with pytest.raises(InputError, match="policy 'other'"):
        kp.reference(o, EPOCH, 1.0, policy="other")
    with pytest.raises(InputError, match="hold_phase goes with the crossing policy"):
        kp.reference(o, EPOCH, 1.0, policy="floquet", hold_phase=True)


def test_cli_policy_floquet_equals_the_python_call(capsys):
    """``librate keep --policy floquet`` and ``cr3bp.keep(..., policy="floquet")``: the same
    budget; the table names the control."""
    import json

    import cr3bp
    from librate_cli.main import main
    argv = ["keep", "--system", "earth-moon", "--orbit", "halo L2 south resonance=9:2", "--epoch",
            "2031-03-01T00:00:00Z", "--span", "20d", "--trials", "2", "--bodies", "sun,earth", "--seed", "3",
            "--policy", "floquet", "-q"]
    assert main(argv + ["--format", "json"]) == 0
    d = json.loads(capsys.readouterr().out)
    b = cr3bp.keep(nrho(), "2031-03-01T00:00:00Z", span="20d", trials=2, bodies=("sun", "earth"), seed=3,
                   policy="floquet")
    assert b.to_dict()["dv_per_year_mps"] == d["dv_per_year_mps"]
    assert d["reference"]["policy"] == "floquet" and "Floquet-mode control" in d["model"]
    assert main(argv) == 0
    out = capsys.readouterr().out
    assert "unstable mode of the 4-revolution map cancelled" in out and "Floquet-mode control" in out
