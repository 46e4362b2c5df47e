"""The bicircular model's compiled kernels against the published equations, written out here
in plain numpy as the paper states them (direct and indirect Sun terms summed as they stand),
and its compiled propagation against scipy's ``solve_ivp`` DOP853 on that numpy right-hand
side.

Source: K. K. Boudad, K. C. Howell & D. C. Davis, "Dynamics of synodic resonant near
rectilinear halo orbits in the bicircular four-body problem", Advances in Space Research
66 (2020) 2194-2214, section 2, the BCR4BP equations of motion in the Earth-Moon rotating
frame (from memory); the model itself from S.-S. Huang, NASA TN D-501 (1960) and Simo,
Gomez, Jorba & Masdemont (1995)::

    x'' - 2 y' = dU/dx,  y'' + 2 x' = dU/dy,  z'' = dU/dz
    U = (x^2 + y^2)/2 + (1 - mu)/r13 + mu/r23 + m_s/r43 - m_s/a_s^3 (x_s x + y_s y + z_s z)
    x_s = a_s cos(theta), y_s = a_s sin(theta), z_s = 0, theta = theta_0 + omega_s t
"""

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from cr3bp import bicircular
from cr3bp.bicircular import bicircular_system

BC = bicircular_system(sun_phase=2.2)
# One LU of Earth-Moon is 384 400 km: 1e-9 LU is 0.4 mm.
STATE_AGREEMENT_LU = 1e-9


def published_rhs(t, s, mu, m_s, a_s, omega_s, theta0):
    """The BCR4BP right-hand side exactly as published (Boudad et al. 2020, section 2)."""
    x, y, z, vx, vy, vz = s
    th = theta0 + omega_s * t
    xs, ys, zs = a_s * np.cos(th), a_s * np.sin(th), 0.0
    r13 = np.sqrt((x + mu) ** 2 + y ** 2 + z ** 2)
    r23 = np.sqrt((x - 1 + mu) ** 2 + y ** 2 + z ** 2)
    r43 = np.sqrt((x - xs) ** 2 + (y - ys) ** 2 + (z - zs) ** 2)
    ux = (x - (1 - mu) * (x + mu) / r13 ** 3 - mu * (x - 1 + mu) / r23 ** 3
          - m_s * (x - xs) / r43 ** 3 - m_s * xs / a_s ** 3)
    uy = (y - (1 - mu) * y / r13 ** 3 - mu * y / r23 ** 3
          - m_s * (y - ys) / r43 ** 3 - m_s * ys / a_s ** 3)
    uz = (-(1 - mu) * z / r13 ** 3 - mu * z / r23 ** 3
          - m_s * (z - zs) / r43 ** 3 - m_s * zs / a_s ** 3)
    return np.array([vx, vy, vz, ux + 2 * vy, uy - 2 * vx, uz])


def _args():
    p = BC.params
    return tuple(float(v) for v in p)


def test_acceleration_matches_the_published_equations_at_random_states_and_times():
    """Random positions within 4 LU of the barycentre (and not within 0.01 LU of a primary),
    random velocities and times over two synodic months. The published sum of the direct and
    indirect Sun terms loses about 9 bits to cancellation (|direct| ~ 2.2, tide ~ 0.006), so
    the agreement is bounded by 1e-12 absolute rather than round-off."""
    rng = np.random.default_rng(20200)
    args = _args()
    mu = args[0]
    n = 0
    worst = 0.0
    while n < 400:
        s = np.concatenate([rng.uniform(-4, 4, 3) * [1, 1, 0.3], rng.uniform(-1, 1, 3)])
        if min(np.linalg.norm(s[:3] - [-mu, 0, 0]), np.linalg.norm(s[:3] - [1 - mu, 0, 0])) < 0.01:
            continue
        t = rng.uniform(-15, 15)
        ours = bicircular.acceleration(BC, t, s)
        ref = published_rhs(t, s, *args)
        worst = max(worst, np.abs(ours - ref).max() / max(1.0, np.abs(ref).max()))
        n += 1
    assert worst < 1e-12, worst


def test_the_suns_direct_pull_on_the_moon_is_about_twice_the_earths():
    """Common practice: the Sun pulls the Moon about 2.2 times as hard as the Earth does
    (G M_s / (1 au)^2 against G M_e / (384 400 km)^2). The published direct term at the Moon
    with the Sun at phase 0, against the Earth's term there."""
    mu, m_s, a_s = _args()[:3]
    direct = m_s / (a_s - (1 - mu)) ** 2
    earth = (1 - mu) / 1.0 ** 2
    assert direct / earth == pytest.approx(2.2, abs=0.1)


@pytest.mark.parametrize("s0,t_final,t0", [
    # an Earth-Moon L2 halo near the NRHOs, one period of its CR3BP orbit
    (np.array([1.0220325268769859, 0.0, -0.1821043666916314, 0.0, -0.10328034227137894, 0.0]),
     1.511256281147235, 0.0),
    # a state beyond L2, 3 TU (13 days) backwards from t0 = 5
    (np.array([1.25, 0.05, 0.02, 0.0, -0.35, 0.01]), -3.0, 5.0),
])
def test_propagation_agrees_with_scipy_dop853(s0, t_final, t0):
    """Our compiled integrator on the compiled bicircular kernel against scipy's DOP853 on the
    numpy right-hand side above, both at rtol = atol = 1e-12 (scipy's own transcription of
    Hairer, Norsett & Wanner's dop853)."""
    grid = t0 + np.linspace(0.0, t_final, 41)
    ours = bicircular.propagate(BC, s0, t0 + t_final, t0=t0, t_eval=grid, rtol=1e-12, atol=1e-12)
    ref = solve_ivp(published_rhs, (t0, t0 + t_final), s0, method="DOP853", rtol=1e-12,
                    atol=1e-12, t_eval=grid, args=_args())
    assert ref.success
    err = np.abs(ours.states - ref.y.T).max()
    assert err < STATE_AGREEMENT_LU, err
    # the Sun moves these trajectories far more than the agreement (the check can fail)
    cr = solve_ivp(published_rhs, (t0, t0 + t_final), s0, method="DOP853", rtol=1e-12,
                   atol=1e-12, t_eval=grid, args=(_args()[0], 0.0) + _args()[2:])
    assert np.abs(cr.y.T - ref.y.T).max() > 1e3 * STATE_AGREEMENT_LU
    assert math.isfinite(err)
