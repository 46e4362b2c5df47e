"""Lagrange points over the whole range of mass ratios (hypothesis) and the result objects."""

import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from cr3bp import dynamics, system
from cr3bp.equilibria import (LagrangePoint, jacobi_constants, lagrange_point, lagrange_points,
                              point_name)
from cr3bp.errors import InputError

mus = st.one_of(st.floats(min_value=1e-12, max_value=0.5),
                st.floats(min_value=-12, max_value=math.log10(0.5)).map(lambda e: 10.0**e))


@settings(max_examples=60, deadline=None)
@given(mu=mus)
def test_points_are_equilibria_with_expected_structure(mu):
    pts = lagrange_points(system(mu=mu))
    assert [p.name for p in pts] == ["L1", "L2", "L3", "L4", "L5"]
    for p in pts:
        # an equilibrium: the acceleration at rest vanishes (compiled EOM, independent of the
        # quintic); scale by the local field strength near a tiny secondary
        acc = dynamics.acceleration(mu, p.state)
        h = np.max(np.abs(dynamics.hessian(mu, p.position)))
        assert np.max(np.abs(acc)) < 1e-12 * max(1.0, h), (p.name, acc)
        assert p.residual == pytest.approx(np.linalg.norm(acc[3:]), abs=1e-12 * max(1.0, h))
    c = jacobi_constants(system(mu=mu))
    assert c["L1"] >= c["L2"] >= c["L3"] > c["L4"] == c["L5"]
    assert all(p.modes.kind == "saddle x centre x centre" for p in pts[:3])
    for p in pts[:3]:
        assert p.modes.saddle_exponent > 0 and p.modes.omega_inplane > 0 and p.modes.omega_vertical > 0


def test_lagrange_point_by_name():
    em = system("earth-moon")
    assert lagrange_point(em, "l2").name == "L2"
    assert lagrange_point(em, " L4 ").position[1] > 0
    assert lagrange_point(em, "L5").position[1] < 0
    for bad in ("L6", "l", "", "moon", None, 2):
        with pytest.raises(InputError, match="Lagrange point"):
            point_name(bad)


def test_to_dict_is_json_and_arrays_are_read_only():
    p = lagrange_point(system("earth-moon"), "L1")
    assert isinstance(p, LagrangePoint)
    d = json.loads(json.dumps(p.to_dict()))
    assert d["name"] == "L1" and d["modes"]["kind"] == "saddle x centre x centre"
    assert len(d["modes"]["eigenvalues"]) == 6 and len(d["modes"]["unstable_direction"]) == 6
    with pytest.raises(ValueError):
        p.position[0] = 0.0
    with pytest.raises(ValueError):
        p.modes.unstable_direction[0] = 0.0
    assert p.modes.unstable_direction[0] > 0
    assert np.linalg.norm(p.modes.unstable_direction) == pytest.approx(1.0)


def test_periods():
    em = system("earth-moon")
    p = lagrange_point(em, "L2")
    per = p.modes.periods_tu()
    assert per["inplane"] == pytest.approx(2 * math.pi / p.modes.omega_inplane)
    assert per["efolding"] == pytest.approx(1 / p.modes.saddle_exponent)
    assert per["vertical"] == pytest.approx(2 * math.pi / p.modes.omega_vertical)
    assert set(per) == {"inplane", "vertical", "efolding"}
    tri = lagrange_point(em, "L4").modes.periods_tu()
    assert set(tri) == {"vertical", "long", "short"} and tri["long"] > tri["short"]
