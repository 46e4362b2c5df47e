"""Linear stability of the triangular points and Routh's critical mass ratio.

Source: E. J. Routh, "On Laplace's three particles, with a supplement on the stability of
steady motion", *Proc. London Math. Soc.* 6, 86–97, 1875; Szebehely, *Theory of Orbits*,
1967, §5.5: L4/L5 are linearly stable iff 27 mu (1 - mu) < 1, i.e.
mu < mu_R = (1 - sqrt(23/27)) / 2 = 0.0385208965... (value as printed, common practice).
"""

import numpy as np
import pytest

from cr3bp import dynamics, system
from cr3bp.equilibria import lagrange_point, routh_critical_mu

ROUTH_MU = 0.0385208965


def test_value():
    assert routh_critical_mu() == pytest.approx(ROUTH_MU, abs=5e-11)
    assert 27 * routh_critical_mu() * (1 - routh_critical_mu()) == pytest.approx(1.0, abs=1e-14)


@pytest.mark.parametrize("rel", [1e-6, 1e-4, 1e-2])
@pytest.mark.parametrize("name", ["L4", "L5"])
def test_stable_just_below_unstable_just_above(rel, name):
    mu_r = routh_critical_mu()
    below = lagrange_point(system(mu=mu_r * (1 - rel)), name)
    above = lagrange_point(system(mu=mu_r * (1 + rel)), name)
    # eigenvalues computed here directly with numpy from the Jacobian
    ev_below = np.linalg.eigvals(dynamics.jacobian(below.mu, below.state))
    ev_above = np.linalg.eigvals(dynamics.jacobian(above.mu, above.state))
    assert np.max(np.abs(ev_below.real)) < 1e-9          # all purely imaginary
    assert np.max(ev_above.real) > 1e-5                   # a growing mode
    assert below.modes.linearly_stable and below.modes.kind == "centre x centre x centre"
    assert not above.modes.linearly_stable and above.modes.kind == "complex saddle x centre"


def test_sun_jupiter_and_earth_moon_stable_pluto_charon_not():
    for name in ("earth-moon", "sun-jupiter", "sun-earth"):
        assert lagrange_point(system(name), "L4").modes.linearly_stable, name
    # Pluto–Charon, mu ~ 0.11 (Brozovic et al. 2015 GMs) is above mu_R
    pc = system("pluto-charon")
    assert pc.mu > ROUTH_MU
    assert not lagrange_point(pc, "L4").modes.linearly_stable
