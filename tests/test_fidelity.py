"""The ephemeris model and the transition: fit accuracy against the tables, consistency with
the CR3BP, STM against finite differences, input and convergence errors."""

import warnings

import numpy as np
import pytest

from cr3bp.time import ephemeris, frames
from cr3bp import system
from cr3bp.errors import ConvergenceError, InputError
from cr3bp.fidelity import model as fm
from cr3bp.fidelity import transition as ftr
from cr3bp.integrate.propagate import propagate

from fidelity_cases import EPOCH, epoch_tdb_s, nrho

ONE_METER = 1e-3  # km
ONE_MM_PER_S = 1e-6  # km/s
ONE_CENTIMETER = 1e-5  # km

pytestmark = pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")


def test_series_reproduce_the_tables():
    """Chebyshev series of every body within 5 cm of DE421 (cr3bp.time.ephemeris) over a year
    (measured 0.1 mm for the Earth, 3-8 mm for the Sun and the inner planets, 1 cm for Neptune:
    the rounding of positions of 1e8-5e9 km), and the model says its source."""
    s = system("earth-moon")
    t0 = epoch_tdb_s()
    span = 365 * 86400 / s.time_s
    names = ("sun", "earth", "mercury", "venus", "mars", "jupiter", "saturn", "uranus", "neptune")
    m = fm.build(s, t0, 0.0, span, "moon", ",".join(names))
    t = np.random.default_rng(3).uniform(0.0, span, 1000)
    for b in names:
        ref = np.asarray(ephemeris.position(b, frames._epoch(t0 + t * s.time_s), "moon", "j2000-equator"))
        assert np.abs(m.body_position_km(b, t) - ref).max() < 5 * ONE_CENTIMETER, b
    assert "DE421" in m.to_dict()["ephemeris"]


def _circular_model(s, spec, t1):
    def sample(tt):
        tt = np.asarray(tt)
        st = np.zeros((tt.size, 6))
        st[:, 0] = -s.mu                      # the Earth in the rotating frame
        _, km = frames.to_frame(spec, tt, st)
        return (km[:, :3] / s.length_km)[None]
    return fm.build(s, spec.epoch_tdb_s, -0.01, t1, "moon", "earth", sample=sample)


def test_circular_moon_without_sun_reproduces_the_cr3bp():
    """Earth on the idealised circular motion, no Sun: the model is the CR3BP seen from the
    Moon on inertial axes, so the NRHO comes back through the circular frame to 1 m."""
    o = nrho()
    s = o.system
    spec = frames.frame(s, EPOCH, anchor="circular", axes="j2000-equator", center="secondary")
    m = _circular_model(s, spec, 1.01 * o.period)
    ts = np.linspace(0.0, o.period, 200)
    ref = propagate(s, o.state, o.period, t_eval=ts, rtol=1e-13, atol=1e-13).states
    _, ref_km = frames.to_frame(spec, ts, ref)
    sc = np.array([s.length_km] * 3 + [s.velocity_kms] * 3)
    mine = fm.propagate(m, ref_km[0] / sc, 0.0, o.period, t_eval=ts, rtol=1e-13, atol=1e-13).states * sc
    assert np.abs(mine[:, :3] - ref_km[:, :3]).max() < ONE_METER
    assert np.abs(mine[:, 3:] - ref_km[:, 3:]).max() < ONE_MM_PER_S
    # and it is not trivially so: the real ephemeris departs by far more in one period
    real = fm.build(s, spec.epoch_tdb_s, -0.01, 1.01 * o.period, "moon", "sun,earth")
    other = fm.propagate(real, ref_km[0] / sc, 0.0, o.period, t_eval=ts).states
    assert np.abs(other[:, :3] * s.length_km - ref_km[:, :3]).max() > 100.0


@pytest.mark.parametrize("srp", [None, (0.02, 1.3)])
def test_stm_against_central_differences(srp):
    s = system("earth-moon")
    m = fm.build(s, epoch_tdb_s(), -0.1, 2.0, "moon", "sun,earth,jupiter", srp=srp)
    x0 = np.array([0.01, 0.03, -0.16, 0.2, 0.05, -0.02])
    phi = fm.propagate(m, x0, 0.1, 1.2, stm=True, rtol=1e-13, atol=1e-13).stm
    fd = np.empty((6, 6))
    h = 1e-6
    for j in range(6):
        e = np.zeros(6)
        e[j] = h
        a = fm.propagate(m, x0 + e, 0.1, 1.2, rtol=1e-13, atol=1e-13).state_end
        b = fm.propagate(m, x0 - e, 0.1, 1.2, rtol=1e-13, atol=1e-13).state_end
        fd[:, j] = (a - b) / (2 * h)
    assert np.abs(phi - fd).max() < 1e-6 * max(1.0, np.abs(phi).max())


def test_radiation_pressure_size():
    """Cannonball SRP at 1 au: P Cr A/m = 4.56e-6 * 1.3 * 0.01 = 5.9e-8 m/s^2 (common practice)."""
    s = system("sun-earth")
    m0 = fm.build(s, epoch_tdb_s(), 0.0, 0.1, "earth", "sun")
    m1 = fm.build(s, epoch_tdb_s(), 0.0, 0.1, "earth", "sun", srp=(0.01, 1.3))
    st = np.array([0.01, 0.0, 0.0, 0.0, 0.0, 0.0])
    da = (m1.acceleration(0.0, st) - m0.acceleration(0.0, st))[3:] * s.length_km / s.time_s ** 2 * 1e3
    d_au = np.linalg.norm(st[:3] - m1.body_position_km("sun", [0.0])[0] / s.length_km)
    assert np.linalg.norm(da) == pytest.approx(4.56e-6 * 1.3 * 0.01 / d_au ** 2, rel=1e-9)


def test_events_in_the_ephemeris_model():
    """Crossings of the J2000 equator plane by the NRHO (located to 1e-9 LU) and an impact at
    the lunar surface: the compiled integrator's events work on the model unchanged."""
    from cr3bp.integrate.events import impact, plane
    o = nrho()
    s = o.system
    spec = frames.frame(s, EPOCH, anchor="ephemeris", axes="j2000-equator", center="secondary")
    _, km = frames.to_frame(spec, [0.0], o.state[None])
    sc = np.array([s.length_km] * 3 + [s.velocity_kms] * 3)
    m = fm.build(s, spec.epoch_tdb_s, -0.01, 1.2 * o.period, "moon", "sun,earth")
    x0 = km[0] / sc
    arc = fm.propagate(m, x0, 0.0, o.period, events=[plane(2, 0.0)])
    assert arc.status == "time" and len(arc.events) >= 1
    for t, st, k in arc.events:
        assert abs(st[2]) < 1e-9 and 0.0 < t < o.period
    # start 100 km above the surface falling straight down: impact with the Moon
    r0 = (1737.4 + 100.0) / s.length_km
    hit = fm.propagate(m, [r0, 0, 0, -0.5, 0, 0], 0.0, 0.1, events=[impact(0, 1737.4 / s.length_km)])
    assert hit.status == "impact"
    assert np.linalg.norm(hit.state_end[:3]) * s.length_km == pytest.approx(1737.4, abs=ONE_METER)


def test_bad_input():
    s = system("earth-moon")
    with pytest.raises(InputError, match="unknown body 'pluto'"):
        fm.build(s, 0.0, 0.0, 1.0, "moon", "sun,pluto")
    with pytest.raises(InputError, match="Cr"):
        fm.build(s, 0.0, 0.0, 1.0, "moon", "sun", srp=(0.01, 5.0))
    m = fm.build(s, 0.0, 0.0, 1.0, "moon", "sun")
    with pytest.raises(InputError, match="outside the model span"):
        fm.propagate(m, [0.01, 0, 0.1, 0, 0.2, 0], 0.0, 2.0)
    with pytest.raises(InputError, match="revs"):
        ftr.transition(nrho(), EPOCH, 0)


def test_no_convergence_is_reported():
    with pytest.raises(ConvergenceError) as err:
        ftr.transition(nrho(), EPOCH, 3, "sun,earth", max_iter=1)
    assert err.value.iterations == 1 and len(err.value.residuals) == 2
