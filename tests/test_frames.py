"""Epoch-anchored frames: round trips, kinematic consistency, the instantaneous frame's secondary."""

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from cr3bp.time import frames
from cr3bp import propagate, system
from cr3bp.errors import InputError

ONE_METER_KM = 1e-3
ONE_MM_S_KMS = 1e-6
ONE_UM_S_KMS = 1e-9
# How closely the Chebyshev series of the secondary follow its ephemeris. The series are
# smoother than the ephemeris: the project's lunar series jitters by ~0.1-0.6 mm between
# epochs a second apart (rounding of its large angles); the series fit through that.
SERIES_TOL_KM = 2e-3 * ONE_METER_KM
SERIES_TOL_KMS = 5 * ONE_UM_S_KMS

EM = system("earth-moon")
# UTC in the 2030s is past the leap-second table: the time-scale module warns, as it should
pytestmark = pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")
EPOCHS = ["2031-03-01T00:00:00Z", "2026-07-15T06:30:00 TDB", "2040-12-31T23:59:59.5 TT"]


def _states(n=40, seed=3):
    rng = np.random.default_rng(seed)
    s = rng.normal(size=(n, 6)) * [0.3, 0.3, 0.1, 0.2, 0.2, 0.1] + [0.8, 0, 0, 0, 0.1, 0]
    t = np.sort(rng.uniform(-2.0, 6.0, n))
    return t, s


@pytest.mark.parametrize("anchor", frames.ANCHORS)
@pytest.mark.parametrize("epoch", EPOCHS)
@pytest.mark.parametrize("center", ["earth", "moon", "barycenter"])
@pytest.mark.parametrize("axes", frames.AXES)
def test_round_trip_to_1e12(anchor, epoch, center, axes):
    spec = frames.frame(EM, epoch, anchor=anchor, axes=axes, center=center)
    t, s = _states()
    tdb, out = frames.to_frame(spec, t, s)
    t2, s2 = frames.from_frame(spec, tdb, out)
    assert np.max(np.abs(s2 - s)) < 1e-12
    assert np.max(np.abs(t2 - t)) < 1e-12
    # and the other way: inertial -> rotating -> inertial, relative to the size of the states
    t3, s3 = frames.from_frame(spec, tdb, out)
    tdb4, out4 = frames.to_frame(spec, t3, s3)
    assert np.max(np.abs(out4[:, :3] - out[:, :3])) < 1e-12 * EM.length_km
    assert np.max(np.abs(out4[:, 3:] - out[:, 3:])) < 1e-12 * EM.velocity_kms * 10


@pytest.mark.parametrize("anchor", frames.ANCHORS)
@pytest.mark.parametrize("axes", ["j2000-equator", "j2000-ecliptic"])
def test_velocity_is_the_derivative_of_position(anchor, axes):
    """V from to_frame equals dR/dt by central differences of R (checks l', w x rho and C rho')."""
    spec = frames.frame(EM, "2031-03-01T00:00:00Z", anchor=anchor, axes=axes, center="earth")
    arc = propagate(EM, [1.15, 0.0, 0.15, 0.0, -0.2, 0.0], 2.0, t_eval=np.linspace(0, 2.0, 9))
    h_s = 5.0
    h = h_s / EM.time_s
    t = arc.t[1:-1]
    ap = propagate(EM, arc.states[0], 2.0, t_eval=np.sort(np.concatenate([t - h, t + h])))
    sm, sp = ap.states[0::2], ap.states[1::2]
    _, rm = frames.to_frame(spec, t - h, sm)
    _, rp = frames.to_frame(spec, t + h, sp)
    _, r0 = frames.to_frame(spec, t, arc.states[1:-1])
    dr = (rp[:, :3] - rm[:, :3]) / (2 * h_s)
    # truncation |R'''| h^2 / 6 is about 1e-10 km/s at h = 5 s; dropping the x component of the
    # axes' rotation (out-of-plane acceleration of the secondary) would cost ~1e-4 km/s here
    assert np.max(np.linalg.norm(dr - r0[:, 3:], axis=1)) < ONE_UM_S_KMS


def test_secondary_sits_at_1_minus_mu_in_the_instantaneous_frame():
    """Ephemeris anchoring: the secondary's state maps to (1 - mu, 0, 0) at rest, and its
    distance scales the frame, at every epoch."""
    spec = frames.frame(EM, "2031-03-01T00:00:00Z", anchor="ephemeris", center="earth")
    tdb = spec.epoch_tdb_s + np.linspace(-30, 30, 61) * 86400.0
    # the state the frame is built from (the Chebyshev series of the ephemeris): exact
    r, v, _ = frames.secondary_series(EM, tdb)
    t, rho = frames.from_frame(spec, tdb, np.hstack([r, v]))
    assert np.max(np.abs(rho[:, 0] - (1 - EM.mu))) < 1e-14
    assert np.max(np.abs(rho[:, 1:3])) < 1e-14
    assert np.max(np.abs(rho[:, 3:])) < 1e-13
    # the ephemeris itself: within the series' fidelity (SERIES_TOL_KM, SERIES_TOL_KMS)
    moon = frames.secondary_state(EM, tdb)
    _, rho = frames.from_frame(spec, tdb, moon)
    assert np.max(np.abs(rho[:, :3] - [1 - EM.mu, 0, 0])) * EM.length_km < SERIES_TOL_KM
    assert np.max(np.abs(rho[:, 3:])) * EM.velocity_kms < SERIES_TOL_KMS
    _, back = frames.to_frame(spec, t, np.tile([1 - EM.mu, 0, 0, 0, 0, 0], (t.size, 1)))
    assert np.max(np.linalg.norm(back[:, :3] - moon[:, :3], axis=1)) < ONE_METER_KM * 1e-3
    # distance varies (the frame pulsates): perigee to apogee is tens of thousands of km
    d = np.linalg.norm(moon[:, :3], axis=1)
    assert d.max() - d.min() > 2e4


def test_series_reproduce_the_ephemeris():
    """Chebyshev series of the secondary (half-day segments, degree 13) against the ephemeris
    they are fitted to, between the nodes; the acceleration against a central difference of
    the ephemeris velocity."""
    tdb = frames.epoch_from_text("2031-03-01T00:00:00Z") + np.linspace(0.0, 40.0, 4001) * 86400.0
    r, v, a = frames.secondary_series(EM, tdb)
    s = frames.secondary_state(EM, tdb)
    assert np.max(np.linalg.norm(r - s[:, :3], axis=1)) < SERIES_TOL_KM
    assert np.max(np.linalg.norm(v - s[:, 3:], axis=1)) < SERIES_TOL_KMS
    h = 300.0      # truncation (n h)^2 / 6 |a| ~ 3e-13 km/s^2
    fd = (frames.secondary_state(EM, tdb[:200] + h)[:, 3:] - frames.secondary_state(EM, tdb[:200] - h)[:, 3:]) / (2 * h)
    assert np.max(np.linalg.norm(a[:200] - fd, axis=1)) < 2e-12          # km/s^2 (|a| ~ 3e-6)


def test_circular_default_orientation_matches_the_ephemeris_at_epoch():
    spec_c = frames.frame(EM, "2031-03-01T00:00:00Z", anchor="circular")
    spec_e = frames.frame(EM, "2031-03-01T00:00:00Z", anchor="ephemeris")
    c_c = frames.basis(spec_c, spec_c.epoch_tdb_s)[0][0]
    c_e = frames.basis(spec_e, spec_e.epoch_tdb_s)[0][0]
    assert np.max(np.abs(c_c - c_e)) < 1e-13
    o = spec_c.orientation
    # the Moon's orbit is inclined about 5.1 degrees to the ecliptic (from memory; osculating
    # values swing by about 0.15 degree)
    assert 4.8 < o.inclination_deg < 5.5
    assert o.source.startswith("osculating")


def test_explicit_orientation_angles():
    spec = frames.frame(EM, "2031-03-01T00:00:00Z", anchor="circular", orientation=(0.0, 0.0, 90.0),
                        axes="j2000-ecliptic", center="earth")
    _, out = frames.to_frame(spec, [0.0], [[1 - EM.mu, 0, 0, 0, 0, 0]])
    # in the ecliptic, the secondary at argument of latitude 90 deg lies on +y at one length unit
    assert np.allclose(out[0, :3], [0, EM.length_km, 0], atol=1e-9)
    assert np.allclose(out[0, 3:], [-EM.velocity_kms, 0, 0], atol=1e-12)


def test_circular_anchoring_reproduces_the_inertial_two_primary_problem():
    """Re-propagate in the inertial frame (km, s) with both primaries moving on circles at the
    CR3BP mean motion; the anchored CR3BP trajectory must agree (the velocity terms)."""
    spec = frames.frame(EM, "2031-03-01T00:00:00Z", anchor="circular", center="barycenter")
    L, T, mu = EM.length_km, EM.time_s, EM.mu
    gm1, gm2 = (1 - mu) * L**3 / T**2, mu * L**3 / T**2
    days = 4.0
    t_tu = np.linspace(0.0, days * 86400.0 / T, 41)
    arc = propagate(EM, [1.12, 0.0, 0.02, 0.0, 0.18, 0.0], float(t_tu[-1]), t_eval=t_tu)
    tdb, inertial = frames.to_frame(spec, arc.t, arc.states)

    def primaries(t_s):
        c = spec.orientation.matrix(t_s / T)
        ex = c[:, 0]
        return -mu * L * ex, (1 - mu) * L * ex

    def rhs(t_s, y):
        r1, r2 = primaries(t_s)
        d1, d2 = y[:3] - r1, y[:3] - r2
        acc = -gm1 * d1 / np.linalg.norm(d1) ** 3 - gm2 * d2 / np.linalg.norm(d2) ** 3
        return np.concatenate([y[3:], acc])

    ts = tdb - spec.epoch_tdb_s
    sol = solve_ivp(rhs, (0.0, ts[-1]), inertial[0], method="DOP853", rtol=1e-12, atol=1e-12, t_eval=ts)
    y = sol.y.T
    dp = np.max(np.linalg.norm(y[:, :3] - inertial[:, :3], axis=1))
    dv = np.max(np.linalg.norm(y[:, 3:] - inertial[:, 3:], axis=1))
    print(f"two-primary inertial re-propagation over {days} d: {dp * 1e6:.3f} mm, {dv * 1e9:.4f} um/s")
    assert dp < 1e-2 * ONE_METER_KM      # one centimetre
    assert dv < ONE_UM_S_KMS


def test_delta_v_round_trip_and_magnitude():
    for anchor in frames.ANCHORS:
        spec = frames.frame(EM, "2031-03-01T00:00:00Z", anchor=anchor)
        dv = np.array([[1e-3, -2e-3, 5e-4]])
        out = frames.delta_v_to_frame(spec, [0.7], dv)
        back = frames.delta_v_from_frame(spec, spec.epoch_tdb_s + np.array([0.7]) * EM.time_s, out)
        assert np.allclose(back, dv, rtol=0, atol=1e-16)
        if anchor == "circular":
            assert np.isclose(np.linalg.norm(out), np.linalg.norm(dv) * EM.velocity_kms, rtol=1e-14)


@pytest.mark.parametrize("kwargs, words", [
    ({"axes": "galactic"}, "unknown frame"),
    ({"center": "mars"}, "unknown centre"),
    ({"anchor": "wobbly"}, "unknown anchoring"),
    ({"anchor": "circular", "orientation": (1.0, 2.0)}, "expected 3: in degrees: inclination"),
    ({"anchor": "circular", "orientation": (200.0, 2.0, 3.0)}, "inclination"),
])
def test_bad_frame_inputs(kwargs, words):
    with pytest.raises(InputError, match=words):
        frames.frame(EM, "2031-03-01T00:00:00Z", **kwargs)


@pytest.mark.parametrize("epoch, words", [
    ("2031-02-30T00:00:00Z", "not a valid date|has day 30"),
    ("yesterday", "not an ISO 8601"),
    ("2031-03-01T25:00:00Z", "not a valid date|has hour 25"),
])
def test_bad_epochs(epoch, words):
    with pytest.raises(InputError, match=words):
        frames.frame(EM, epoch)


def test_epoch_outside_ephemeris_validity():
    with pytest.raises(InputError, match="outside the (ephemeris )?validity"):
        frames.frame(EM, "2150-01-01T00:00:00Z", anchor="ephemeris")
    # the circular anchoring with explicit angles needs no ephemeris
    frames.frame(EM, "2150-01-01T00:00:00Z", anchor="circular", orientation=(5.1, 120.0, 0.0))


def test_frame_spec_to_dict_and_back():
    spec = frames.frame(EM, "2031-03-01T00:00:00Z", anchor="circular", axes="j2000-ecliptic", center="moon")
    d = spec.to_dict()
    assert d["center_name"] == "moon" and d["orientation"]["plane"] == "j2000-ecliptic"
    again = frames.FrameSpec.from_dict(d)
    assert again == spec


def test_system_without_units_is_refused():
    with pytest.raises(InputError, match="no dimensional units"):
        frames.frame(system(mu=0.01), "2031-03-01T00:00:00Z")
