"""Earth–Moon Lagrange points and their Jacobi constants against a published table.

Source: Koon, Lo, Marsden & Ross, *Dynamical Systems, the Three-Body Problem and Space
Mission Design* (2011), ch. 2, the Earth–Moon equilibria and their energies for
mu = 0.01215 (values from memory, as printed there to four decimals). Their mu (0.01215)
differs from ours (0.0121506 from the DE430 GMs), so the comparison is made at their mu
through ``system(mu=0.01215)``; the tolerance is then the printed rounding, half a unit in
the fourth decimal, with a little slack (6e-5 LU ~ 23 km, 6e-5 in C).

Their energy E relates to the Jacobi constant by C = -2E (the convention of
cr3bp/systems.py, without an added constant); the C values below are given in that form.
"""

import pytest

from cr3bp import system
from cr3bp.equilibria import lagrange_points

KLMR_MU = 0.01215
# Koon, Lo, Marsden & Ross 2011, ch. 2 (from memory): x of L1, L2, L3 in LU
KLMR_X = {"L1": 0.8369, "L2": 1.1557, "L3": -1.0051}
# ... and C = -2E at L1..L5 (from memory)
KLMR_C = {"L1": 3.1883, "L2": 3.1722, "L3": 3.0121, "L4": 2.9880, "L5": 2.9880}
PRINTED_ROUNDING = 6e-5


@pytest.fixture(scope="module")
def points():
    return {p.name: p for p in lagrange_points(system(mu=KLMR_MU))}


@pytest.mark.parametrize("name", ["L1", "L2", "L3"])
def test_collinear_positions(points, name):
    assert points[name].position[0] == pytest.approx(KLMR_X[name], abs=PRINTED_ROUNDING)
    assert points[name].position[1] == 0.0


@pytest.mark.parametrize("name", ["L1", "L2", "L3", "L4", "L5"])
def test_jacobi_constants(points, name):
    assert points[name].jacobi == pytest.approx(KLMR_C[name], abs=PRINTED_ROUNDING)


def test_triangular_positions(points):
    # L4, L5 form equilateral triangles with the primaries (Szebehely 1967, §4.5):
    # x = 1/2 - mu, y = +-sqrt(3)/2 = +-0.8660254 (closed form).
    assert points["L4"].position[0] == pytest.approx(0.5 - KLMR_MU, abs=1e-15)
    assert points["L4"].position[1] == pytest.approx(0.8660254037844386, abs=1e-15)
    assert points["L5"].position[1] == pytest.approx(-0.8660254037844386, abs=1e-15)


def test_ordering_of_energies(points):
    # Koon et al. 2011, ch. 2: C_L1 > C_L2 > C_L3 > C_L4 = C_L5 for the Earth–Moon mu.
    c = [points[n].jacobi for n in ("L1", "L2", "L3", "L4")]
    assert c[0] > c[1] > c[2] > c[3]
    assert points["L4"].jacobi == points["L5"].jacobi
