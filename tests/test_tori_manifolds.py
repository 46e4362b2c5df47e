"""Stable and unstable manifolds of a hyperbolic torus (cr3bp.tori.manifolds), and their use
by ``librate manifold --torus`` and ``librate section --tube 'TORUS-REQUEST unstable'``.

Checks against outside references:

* the multiplier of the step-off direction is the largest modulus of the torus stability
  result (:mod:`cr3bp.tori.stability`), and stable x unstable = 1 (the stroboscopic map is
  symplectic: Meyer, Hall & Offin, "Introduction to Hamiltonian Dynamical Systems", 2009);
* the direction field is the eigen-direction of the map, checked with scipy's DOP853 (Hairer,
  Nørsett & Wanner 1993): central differences of the flow over T along v(theta_j) equal
  lambda v(theta_j + rho) (the invariant bundle of Jorba 2001 / Gómez & Mondelo 2001, §5);
* a point of the unstable manifold re-propagated backwards with scipy's DOP853 approaches the
  torus, following the torus trajectory of its base point (asymptotic phase): over a quarter of
  the stroboscopic period the distance shrinks by about lambda^(1/4) (6.8 here); asserted
  below a quarter. Likewise forwards for the stable manifold.
"""

import json
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from cr3bp import CAUTION, system
from librate_cli.main import main

REQUEST = "quasi-halo around halo L1 north az=10000km amplitude=300km"
EM = system("earth-moon")


def _f(_, y, mu=EM.mu):
    x, yy, z, vx, vy, vz = y
    r1 = ((x + mu) ** 2 + yy ** 2 + z ** 2) ** 1.5
    r2 = ((x - 1 + mu) ** 2 + yy ** 2 + z ** 2) ** 1.5
    return [vx, vy, vz, 2 * vy + x - (1 - mu) * (x + mu) / r1 - mu * (x - 1 + mu) / r2,
            -2 * vx + yy - (1 - mu) * yy / r1 - mu * yy / r2, -(1 - mu) * z / r1 - mu * z / r2]


def _scipy(y0, t, t_eval=None):
    sol = solve_ivp(_f, (0.0, t), y0, method="DOP853", rtol=1e-12, atol=1e-13, t_eval=t_eval)
    assert sol.success
    return sol.y.T


@pytest.fixture(scope="module")
def torus():
    from cr3bp.tori import request as treq
    return treq.solve(EM, REQUEST)


def test_step_off_multiplier_is_the_torus_stability_result(torus):
    from cr3bp.tori.manifolds import grow_tube, modes
    m = modes(torus)
    assert torus.stability["kind"] == "hyperbolic"
    assert m.modulus_unstable == pytest.approx(torus.stability["largest_modulus"], rel=1e-6)
    assert m.modulus_stable == pytest.approx(torus.stability["smallest_modulus"], rel=1e-6)
    assert m.modulus_unstable * m.modulus_stable == pytest.approx(1.0, abs=1e-6)
    tube = grow_tube(torus, "unstable", "interior", 9, "time:1d")
    assert tube.eigenvalue == pytest.approx(torus.stability["largest_modulus"], rel=1e-6)
    assert tube.to_dict()["kind"] == "torus manifold"


def test_direction_field_is_the_eigen_direction_with_scipy(torus):
    from cr3bp.tori import circle
    from cr3bp.tori.manifolds import modes
    m = modes(torus)
    T, rho = torus.stroboscopic_time, torus.rotation
    n = torus.n_circle_points
    lam = m.lambda_unstable.real
    for j in (0, n // 3, 2 * n // 3):
        u, v = torus.circle[j], m.unstable[j]
        h = 1e-7 / np.linalg.norm(v)
        dphi = (_scipy(u + h * v, T)[-1] - _scipy(u - h * v, T)[-1]) / (2 * h)
        want = lam * circle.evaluate(m.unstable, [circle.angles(n)[j] + rho])[0]
        assert np.linalg.norm(dphi - want) < 1e-5 * np.linalg.norm(want), j


@pytest.mark.parametrize("stability", ["unstable", "stable"])
def test_manifold_point_approaches_the_torus_with_scipy(torus, stability):
    from cr3bp.tori.manifolds import grow_tube
    from cr3bp.tori.trajectory import state_at
    tube = grow_tube(torus, stability, "interior", 16, "time:1d")
    T = torus.stroboscopic_time
    w0, w1 = 2 * math.pi / T, torus.rotation / T
    sign = -1.0 if stability == "unstable" else 1.0          # towards the torus
    for i in (0, 5, 10, 15):                                # theta0 = 0 and later phases
        th0, th1 = 2 * math.pi * tube.phase[i], tube.circle_phase[i]
        ts = np.linspace(0.0, sign * T / 4, 5)
        path = _scipy(tube.start_states[i], sign * T / 4, t_eval=ts)
        base = np.array([state_at(torus, th0 + w0 * t, th1 + w1 * t) for t in ts])
        d = np.linalg.norm(path[:, :3] - base[:, :3], axis=1) * EM.length_km
        assert d[0] == pytest.approx(40.0, rel=1e-6)          # the step-off distance (Earth-Moon)
        assert np.all(np.diff(d) < 0), d
        assert d[-1] < d[0] / 4, d


def test_manifold_cli_json_and_caution(capsys):
    rc = main(["manifold", "--system", "earth-moon", "--torus", REQUEST, "--unstable", "--points", "16",
               "--until", "section:x=1-mu", "--format", "json", "-q"])
    out = capsys.readouterr()
    assert rc == 0, out.err
    d = json.loads(out.out)
    t = d["tube"]
    assert t["kind"] == "torus manifold" and t["n_trajectories"] == 16
    assert "circular restricted three-body" in t["model"]
    assert all(len(tr["torus_phase_deg"]) == 2 for tr in t["trajectories"])
    assert d.get("caution") == CAUTION or CAUTION in out.out


def test_section_of_a_torus_tube(capsys):
    rc = main(["section", "--system", "earth-moon", "--tube", f"{REQUEST} unstable", "--section", "x=1-mu",
               "--points", "25", "--format", "json", "-q"])
    out = capsys.readouterr()
    assert rc == 0, out.err
    d = json.loads(out.out)
    cut = d["cuts"][0]
    assert cut["label"].endswith("unstable interior") and cut["crossings"] >= 10
    assert cut["n_trajectories"] == 25
    assert cut["closed"] is False and cut["area"] is None and cut["kind"].startswith("torus manifold")
    # every crossing lies on x = 1 - mu
    assert all(abs(s[0] - (1 - EM.mu)) < 1e-9 for s in cut["states"])


def test_torus_in_3d_surface_circle_and_caution(torus):
    """The interactive figure (item: tori in 3-D): the surface's first row is the invariance
    circle (resampled), its last row the circle turned by the rotation (invariance), and the
    short caution and the model are in the title."""
    pytest.importorskip("plotly")
    from cr3bp.cautions import caution_short
    from cr3bp.tori.circle import evaluate, resample
    fig = torus.to_plotly(n_circle=31, n_time=40)
    surf = [t for t in fig.data if t.type == "surface" and "torus surface" in (t.name or "")][0]
    x, y, z = (np.asarray(getattr(surf, c)) for c in "xyz")
    assert x.shape == (41, 32)
    u = resample(torus.circle, 31)[:, :3] * EM.length_km
    assert np.allclose(np.c_[x[0, :31], y[0, :31], z[0, :31]], u, atol=1e-6)
    turned = evaluate(torus.circle, np.arange(31) * 2 * np.pi / 31 + torus.rotation)[:, :3] * EM.length_km
    assert np.abs(np.c_[x[-1, :31], y[-1, :31], z[-1, :31]] - turned).max() < 1e-3    # km
    title = fig.layout.title.text
    assert "CR3BP" in title and caution_short()[:30] in title.replace("&amp;", "&")


def test_scenario_report_section_of_a_torus_has_the_3d_figure(torus):
    pytest.importorskip("plotly")
    from cr3bp.plotting.interactive import ReportFigures
    from cr3bp.scenario.tori import section
    html = section("ring", torus, None, {}, ReportFigures())
    assert "plot3d-0" in html
    assert "Torus &#x27;ring&#x27; in 3-D" in html or "Torus 'ring' in 3-D" in html
