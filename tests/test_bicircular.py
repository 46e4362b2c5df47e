"""The bicircular restricted four-body model (cr3bp.bicircular): its reduction to the CR3BP,
its STM, its non-conserved energy, the size of the Sun's tide, its constants and the Sun's
phase from the ephemeris. The Sun's term against an independent implementation of the
published equations, and scipy's integrator, is in test_against_boudad_howell_davis_2020.py.
"""

import dataclasses
import math

import numpy as np
import pytest

from cr3bp import bicircular, propagate, system
from cr3bp.bicircular import BicircularSystem, bicircular_system
from cr3bp.errors import InputError, StateError
from cr3bp.integrate import dop853, events, prebuilt
from cr3bp.integrate.dispatch import rhs
from cr3bp.integrate.modes import MODE_BICIRCULAR, MODE_BICIRCULAR_STM

EM = system("earth-moon")
BC = bicircular_system(sun_phase=1.0)
# An Earth-Moon L2 halo near the NRHOs (the state of tests/test_prebuilt.py) and its period
HALO = np.array([1.0220325268769859, 0.0, -0.1821043666916314, 0.0, -0.10328034227137894, 0.0])
PERIOD = 1.511256281147235
# A state out beyond L2 that loops about the Earth-Moon system for weeks (t in TU)
OUTER = np.array([1.25, 0.05, 0.02, 0.0, -0.35, 0.01])
ONE_DAY_TU = 86400.0 / EM.time_s


def test_with_no_sun_mass_the_model_is_the_cr3bp():
    """m_s = 0: the same trajectory and STM as the project's CR3BP propagation to 1e-12 (the
    two run different kernels: the CR3BP's own steps and the generic stage loop)."""
    massless = dataclasses.replace(BC, sun_mass_ratio=0.0)
    for s0, t in ((HALO, PERIOD), (OUTER, 6.0)):
        a = bicircular.propagate(massless, s0, 2.5 + t, stm=True, t0=2.5)
        b = propagate(EM, s0, t, stm=True)
        assert a.status == b.status == "time"
        assert np.abs(a.final_state - b.final_state).max() < 1e-12
        assert np.abs(a.stm - b.stm).max() < 1e-12 * max(1.0, np.abs(b.stm).max())
    # and with the Sun it is not (so the comparison above can fail)
    c = bicircular.propagate(BC, HALO, PERIOD)
    assert np.abs(c.final_state - propagate(EM, HALO, PERIOD).final_state).max() > 1e-4


def _fd_stm(bsys, s0, t, t0, h):
    cols = []
    for k in range(6):
        e = np.zeros(6)
        e[k] = h
        plus = bicircular.propagate(bsys, s0 + e, t0 + t, t0=t0, rtol=1e-13, atol=1e-13).final_state
        minus = bicircular.propagate(bsys, s0 - e, t0 + t, t0=t0, rtol=1e-13, atol=1e-13).final_state
        cols.append((plus - minus) / (2.0 * h))
    return np.column_stack(cols)


@pytest.mark.parametrize("s0,t,t0", [(HALO, 0.5 * PERIOD, 0.7), (OUTER, 4.0, -1.3)])
def test_stm_against_central_differences(s0, t, t0):
    """Phi(t0 + t, t0) from the variational equations against central differences of the
    final state (step 1e-6 LU or LU/TU; truncation ~1e-12 relative, round-off ~1e-7)."""
    arc = bicircular.propagate(BC, s0, t0 + t, stm=True, t0=t0, rtol=1e-13, atol=1e-13)
    fd = _fd_stm(BC, s0, t, t0, 1e-6)
    scale = max(1.0, np.abs(fd).max())
    err = np.abs(arc.stm - fd).max() / scale
    assert err < 1e-6, err
    # the Sun's Hessian matters at this tolerance: the CR3BP's STM along the same
    # bicircular trajectory would not pass (the comparison can fail)
    massless = dataclasses.replace(BC, sun_mass_ratio=0.0)
    cr = bicircular.propagate(massless, s0, t0 + t, stm=True, t0=t0).stm
    assert np.abs(cr - fd).max() / scale > 100 * err


def test_time_matters():
    """The model depends on time: the same state from another start time (another Sun
    position) ends elsewhere; shifting t0 by one synodic period changes nothing."""
    a = bicircular.propagate(BC, OUTER, 3.0, t0=0.0)
    b = bicircular.propagate(BC, OUTER, 4.0, t0=1.0)
    c = bicircular.propagate(BC, OUTER, BC.synodic_period + 3.0, t0=BC.synodic_period)
    d = bicircular.propagate(BC.with_phase(BC.sun_phase + BC.sun_rate * 1.0), OUTER, 3.0)
    assert np.abs(a.final_state - b.final_state).max() > 1e-3
    assert np.abs(a.final_state - c.final_state).max() < 1e-9
    assert np.abs(b.final_state - d.final_state).max() < 1e-9       # t0 = 1 is phase + omega_s
    assert a.t_final == pytest.approx(3.0) and b.t_final == pytest.approx(4.0)


def test_hamiltonian_changes_at_the_rate_of_the_suns_motion():
    """H(t) - H(0) along a trajectory equals the integral of dH/dt = 2 dU/dt (Simpson on the
    dense output); the change itself is large, so neither side is trivially zero."""
    t = np.linspace(0.0, 6.0, 2001)
    arc = bicircular.propagate(BC, OUTER, t[-1], t_eval=t)
    h = bicircular.hamiltonian(BC, arc.t, arc.states)
    rate = bicircular.hamiltonian_rate(BC, arc.t, arc.states)
    from scipy.integrate import cumulative_simpson
    integral = cumulative_simpson(rate, x=arc.t, initial=0.0)
    change = h - h[0]
    assert np.abs(change).max() > 1e-3
    assert np.abs(change - integral).max() < 1e-9
    # with m_s = 0 it is the Jacobi constant
    massless = dataclasses.replace(BC, sun_mass_ratio=0.0)
    from cr3bp.dynamics import jacobi
    assert bicircular.hamiltonian(massless, 0.3, OUTER) == pytest.approx(jacobi(EM.mu, OUTER), abs=1e-15)


def _sun_part(bsys, t, state):
    return (bicircular.acceleration(bsys, t, state)
            - bicircular.acceleration(dataclasses.replace(bsys, sun_mass_ratio=0.0), t, state))


def test_the_suns_tide_has_its_textbook_size():
    """Hill's tidal approximation (common practice): at distance r from the Earth, the Sun
    (mass M_s, distance a) pulls a body away from the Earth by 2 G M_s r / a^3 along the
    Sun line and towards it by G M_s r / a^3 across it; against the Earth's pull G M_e / r^2
    that is 2 (M_s/M_e)(r/a)^3 and half of it. With M_s/M_e = 332 946 (common practice,
    from memory), r = 384 400 km and a = 1 au = 149 597 870.7 km: 0.01130 and 0.00565.
    The model's Sun term at (1, 0, 0) LU, against the Earth's pull (1 - mu)/1^2, with the
    Sun along x (phase 0) and along y (phase pi/2)."""
    ratio_along = 2.0 * 332946.0 * (384400.0 / 149597870.7) ** 3
    assert ratio_along == pytest.approx(0.01130, abs=5e-5)
    p = np.array([1.0, 0.0, 0.0, 0.0, 0.0, 0.0])
    earth_pull = 1.0 - EM.mu
    along = _sun_part(BC.with_phase(0.0), 0.0, p)[3:6] / earth_pull
    across = _sun_part(BC.with_phase(math.pi / 2), 0.0, p)[3:6] / earth_pull
    # away from the Earth along the Sun line (+x), towards the barycentre across it (-x);
    # the model's Earth-Moon mass (not the Earth's alone) and the 1/a corrections: 1 %
    assert along[0] == pytest.approx(ratio_along, rel=0.01)
    assert abs(along[1]) < 1e-12 and along[2] == 0.0
    assert -across[0] == pytest.approx(ratio_along / 2.0, rel=0.01)
    # the tidal approximation's exact value along the line: m_s (2a - 1)/(a^2 (a - 1)^2)
    a, m = BC.sun_distance, BC.sun_mass_ratio
    assert along[0] * earth_pull == pytest.approx(m * (2 * a - 1) / (a * a * (a - 1) ** 2), rel=1e-11)


def test_constants_against_published_values():
    """m_s, a_s and omega_s from the project's data, against Boudad, Howell & Davis (2020),
    section 2 (from memory: m_s = 328 900.5, a_s = 388.81 with a 384 748 km length unit,
    omega_s = -0.925 195), and the synodic month (29.53 days, common practice)."""
    m_s, a_s, w_s = BC.sun_mass_ratio, BC.sun_distance, BC.sun_rate
    assert m_s == pytest.approx(328900.5, rel=2e-6)
    assert a_s * EM.length_km == pytest.approx(388.81 * 384748.0, rel=1e-4)     # both 1 au
    assert a_s == pytest.approx(149597870.7 / 384400.0, rel=1e-12)
    # their omega_s from their m_s and a_s by the same formula
    assert math.sqrt((1 + 328900.5) / 388.81 ** 3) - 1 == pytest.approx(-0.925195, abs=2e-6)
    assert w_s == pytest.approx(math.sqrt((1 + m_s) / a_s ** 3) - 1, rel=1e-15)
    assert BC.synodic_period_days == pytest.approx(29.53, abs=0.1)
    assert w_s < 0.0


# Total eclipses (from memory): the solar eclipse of 2024-04-08, greatest at 18:17 UTC (the
# Sun beyond the Moon: phase 0), and the lunar eclipse of 2022-11-08, greatest at 10:59 UTC
# (the Sun behind the Earth: phase pi). Both within about 0.5 degree of the Moon's orbit
# plane, so the Sun's elevation out of it is small.
@pytest.mark.parametrize("when,phase_deg", [("2024-04-08T18:17:00Z", 0.0), ("2022-11-08T10:59:00Z", 180.0)])
def test_sun_phase_at_eclipses(when, phase_deg):
    phase, elevation = bicircular.sun_angles_at(when)
    off = (math.degrees(phase) - phase_deg + 180.0) % 360.0 - 180.0
    assert abs(off) < 0.25, off      # 30 minutes of the Sun's motion
    assert abs(math.degrees(elevation)) < 1.0
    b = bicircular_system(epoch=when)
    assert b.sun_phase == pytest.approx(phase) and b.epoch_tdb_s is not None


def test_sun_phase_turns_backwards_at_the_models_rate():
    """One day after the solar eclipse the Sun has moved by about omega_s x 1 day (the
    Moon's true motion varies by about +-20 % over its eccentric orbit)."""
    p0 = bicircular.sun_phase_at("2024-04-08T18:17:00Z")
    p1 = bicircular.sun_phase_at("2024-04-09T18:17:00Z")
    moved = (p1 - p0 + math.pi) % (2 * math.pi) - math.pi
    assert moved < 0.0
    assert moved == pytest.approx(BC.sun_rate * ONE_DAY_TU, rel=0.25)


def test_batch_agrees_with_single_propagation():
    states = np.array([HALO, OUTER])
    res = bicircular.propagate_batch(BC, states, 2.4, stm=True, t0=0.4)
    for k in range(2):
        one = bicircular.propagate(BC, states[k], 2.4, stm=True, t0=0.4)
        assert np.abs(res.states[k] - one.final_state).max() < 1e-13
        assert np.abs(res.stm[k] - one.stm).max() < 1e-11 * max(1.0, np.abs(one.stm).max())


def test_prebuilt_integrator_runs_the_bicircular_modes():
    """The ahead-of-time build holds the bicircular right-hand side: same results as numba's
    just-in-time kernels."""
    k = prebuilt.kernels()
    assert k is not None, "no current prebuilt kernels: run 'make kernels'"
    y42 = np.concatenate([OUTER, np.eye(6).ravel()])
    for mode, y0 in ((MODE_BICIRCULAR, OUTER.copy()), (MODE_BICIRCULAR_STM, y42)):
        args = (mode, BC.params, y0, 0.3, 5.0, 1e-12, 1e-12, -1.0, np.inf, 10**6,
                np.zeros((0, 6)), -1, np.empty(0), False)
        a, b = k.integrate(*args), dop853.integrate(*args)
        assert np.allclose(a[2], b[2], rtol=1e-13, atol=1e-15)
        assert int(a[12]) == int(b[12])


def test_events_work_in_the_bicircular_model():
    arc = bicircular.propagate(BC, OUTER, 10.0, events=[events.plane("y", 0.0, terminal=True)])
    assert arc.status == "event" and abs(arc.final_state[1]) < 1e-12
    assert arc.system is BC and arc.to_dict()["system"] == "earth-moon bicircular"


def test_rhs_dispatch_reaches_the_bicircular_kernels():
    out = np.empty(6)
    rhs(MODE_BICIRCULAR, 0.2, OUTER.copy(), BC.params, out)
    assert np.array_equal(out, bicircular.acceleration(BC, 0.2, OUTER))


@pytest.mark.parametrize("kwargs,match", [
    (dict(sun_mass_ratio=-1.0), r"sun_mass_ratio .-1.0. is outside the allowed range \[0, inf\)"),
    (dict(sun_distance=1.5), "sun_distance = 1.5 LU must exceed 2 LU"),
    # one wording for every number (cr3bp.validate.finite_number)
    (dict(sun_phase=float("nan")), "sun_phase 'nan' is not a finite number"),
    (dict(sun_rate="fast"), "sun_rate 'fast' is not a number"),
])
def test_bad_model_values_are_named(kwargs, match):
    with pytest.raises(InputError, match=match):
        dataclasses.replace(BC, **kwargs)


def test_bad_requests_are_refused():
    with pytest.raises(InputError, match="set up for the earth-moon system only; got 'sun-earth'"):
        bicircular_system("sun-earth")
    with pytest.raises(InputError, match="not both"):
        bicircular_system(sun_phase=1.0, epoch="2024-04-08T00:00:00Z")
    with pytest.raises(InputError):
        bicircular_system(epoch="not a date")
    with pytest.raises(StateError, match="inside earth"):
        bicircular.propagate(BC, [-EM.mu, 0, 0, 0, 0, 0], 1.0)
    with pytest.raises(InputError, match="BicircularSystem"):
        bicircular.propagate(EM, OUTER, 1.0)
    assert isinstance(BC, BicircularSystem) and BC.mu == EM.mu and BC.km(1.0) == EM.length_km


# ---- librate propagate --model bicircular -------------------------------------------------

def _cli(capsys, *argv):
    from librate_cli.main import main
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_cli_propagates_in_the_bicircular_model(capsys, tmp_path):
    """The command's numbers are the library's for the same model (the seam CLI -> library):
    the phase given in degrees, the days turned into TU, the Hamiltonian reported."""
    import json
    from cr3bp import CAUTION
    code, out, _ = _cli(capsys, "propagate", "--system", "earth-moon", "--state",
                        ",".join(map(repr, OUTER.tolist())), "--time", "20d", "--model",
                        "bicircular", "--sun-phase", "45deg", "--stm", "--format", "json", "-q")
    assert code == 0
    d = json.loads(out)
    ref = bicircular.propagate(bicircular_system(sun_phase=math.radians(45.0)), OUTER,
                               20.0 / EM.time_days, stm=True)
    np.testing.assert_allclose(d["final_state"], ref.final_state, rtol=0, atol=1e-14)
    np.testing.assert_allclose(d["stm"], ref.stm, rtol=1e-13, atol=1e-13)
    assert d["model"] == "bicircular" and d["bicircular"]["sun_phase_deg"] == pytest.approx(45.0)
    assert d["hamiltonian_final"] == pytest.approx(
        bicircular.hamiltonian(ref.system, ref.t_final, ref.final_state), abs=1e-13)
    # the caution names the model the numbers belong to (the bicircular one, not the CR3BP)
    assert "jacobi_final" not in d and d["caution"] != CAUTION and "bicircular restricted four-body" in d["caution"]
    code, out, _ = _cli(capsys, "propagate", "--system", "earth-moon", "--state",
                        ",".join(map(repr, OUTER.tolist())), "--time", "2d", "--model",
                        "bicircular", "--sun-phase", "45deg", "--plot", str(tmp_path / "b.svg"), "-q")
    assert code == 0 and "bicircular restricted four-body" in " ".join(out.split())
    assert "Preliminary bicircular-model design" in (tmp_path / "b.svg").read_text()
    # the same state in the CR3BP ends far away (the option does reach the model)
    code, out, _ = _cli(capsys, "propagate", "--system", "earth-moon", "--state",
                        ",".join(map(repr, OUTER.tolist())), "--time", "20d", "--format", "json", "-q")
    assert np.abs(np.array(json.loads(out)["final_state"]) - ref.final_state).max() > 1e-3


def test_cli_takes_the_suns_phase_from_an_epoch(capsys):
    import json
    when = "2022-11-08T10:59:00Z"
    code, out, _ = _cli(capsys, "propagate", "--system", "earth-moon", "--state",
                        ",".join(map(repr, OUTER.tolist())), "--time", "1d", "--model",
                        "bicircular", "--epoch", when, "--format", "json", "-q")
    assert code == 0
    assert json.loads(out)["bicircular"]["sun_phase_rad"] == pytest.approx(bicircular.sun_phase_at(when), abs=1e-12)
    code, out, _ = _cli(capsys, "propagate", "--system", "earth-moon", "--state",
                        ",".join(map(repr, OUTER.tolist())), "--time", "1d", "--model",
                        "bicircular", "--epoch", when, "-q")
    assert "model: bicircular" in out and "from the ephemeris at 2022-11-08T10:59:00" in out
    assert "Hamiltonian" in out and "not conserved" in out


@pytest.mark.parametrize("extra,message", [
    (["--model", "bicircular", "--sun-phase", "45"], "--sun-phase '45' is not an angle with a unit"),
    (["--sun-phase", "45deg"], "--sun-phase goes with --model bicircular"),
    (["--model", "bicircular", "--sun-phase", "1rad", "--epoch", "2024-01-01"], "not both"),
    (["--model", "fourbody"], "--model 'fourbody' is not known; allowed: cr3bp, bicircular"),
    (["--model", "bicircular", "--sun-phase", "infdeg"], "must be finite"),
])
def test_cli_bad_model_options_exit_2(capsys, tmp_path, extra, message):
    out_file = tmp_path / "t.csv"
    code, _, err = _cli(capsys, "propagate", "--system", "earth-moon", "--state",
                        ",".join(map(repr, OUTER.tolist())), "--time", "1d", *extra,
                        "--out", str(out_file), "-q")
    assert code == 2 and message in err and "Traceback" not in err
    assert not out_file.exists()
