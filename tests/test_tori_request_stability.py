"""Torus requests (quasi-halo by amplitude, by Jacobi constant + stroboscopic time, by
frequency ratio), torus stability, and the dense geometry, checked outside the library.

Sources:
* Stability: the normal multipliers of a small torus about a periodic orbit tend to the
  orbit's monodromy multipliers off the unit circle (Jorba, "Numerical computation of the
  normal behaviour of invariant curves of n-dimensional maps", Nonlinearity 14, 2001, §3;
  Olikara & Scheeres, AAS 12-361, 2012, §IV); the monodromy here is integrated by scipy's
  ``solve_ivp`` (DOP853) on the equations of ``tests/_independent_cr3bp.py`` and decomposed
  by numpy's LAPACK ``eig``. The map is symplectic: the multipliers come in pairs
  ``lambda, 1/lambda`` (Meyer, Hall & Offin, "Introduction to Hamiltonian Dynamical Systems
  and the N-Body Problem", 2009, §2.3).
* Invariance of the tori reached by the new targets: torus points propagated by scipy's DOP853
  over two stroboscopic times land on ``u(theta + 2 rho)``.
* Seam: a torus found by its amplitude, asked for again by its Jacobi constant and
  stroboscopic time (and by its frequency ratio) through the request text, is the same torus.
"""

import functools
import json

import numpy as np
import pytest

from cr3bp import system
from cr3bp.errors import InputError
from cr3bp.orbits.request import solve_request
from cr3bp.tori import request as treq
from cr3bp.tori.circle import evaluate
from cr3bp.tori.torus import refined_max

from _independent_cr3bp import monodromy, propagate

HALO = "halo L1 north az=8000km"


@functools.lru_cache(maxsize=None)
def em():
    return system("earth-moon")


@functools.lru_cache(maxsize=None)
def by_amplitude():
    return treq.solve(em(), f"quasi-halo around {HALO} amplitude=1500km")


def test_small_torus_stability_tends_to_the_orbits_multipliers():
    t = treq.solve(em(), f"quasi-halo around {HALO} amplitude=150km")
    o = solve_request(em(), HALO)
    _, M = monodromy(em().mu, o.state, o.period)
    big = float(np.abs(np.linalg.eigvals(M)).max())
    st = t.stability
    assert st["kind"] == "hyperbolic"
    assert st["largest_modulus"] == pytest.approx(big, rel=2e-3)
    assert st["smallest_modulus"] * st["largest_modulus"] == pytest.approx(1.0, rel=1e-3)
    assert any(abs(m - 1.0) < 1e-6 for m in st["moduli"])     # the torus's own directions
    assert t.to_dict()["stability"] == st


def test_request_by_jacobi_and_period_and_by_frequency_ratio_give_the_same_torus():
    a = by_amplitude()
    days = em().days(a.stroboscopic_time)
    b = treq.solve(em(), f"quasi-halo around {HALO} jacobi={a.jacobi!r} period={days!r}d")
    c = treq.solve(em(), f"quasi-halo around {HALO} frequency-ratio={a.rotation_number!r}")
    for t in (b, c):
        assert em().km(t.amplitude_lu) == pytest.approx(1500.0, rel=1e-6)
        assert t.rotation == pytest.approx(a.rotation, abs=1e-9)
        assert t.stroboscopic_time == pytest.approx(a.stroboscopic_time, rel=1e-10)
        assert t.jacobi == pytest.approx(a.jacobi, abs=1e-11)
    assert b.holds == pytest.approx({"jacobi": a.jacobi, "period": a.stroboscopic_time})


def test_targeted_torus_is_invariant_under_scipy_propagation():
    a = by_amplitude()
    days = em().days(a.stroboscopic_time)
    t = treq.solve(em(), f"quasi-halo around {HALO} jacobi={a.jacobi!r} period={days!r}d")
    th = np.linspace(0.1, 2 * np.pi, 5, endpoint=False)
    start = evaluate(t.circle, th)
    want = evaluate(t.circle, th + 2 * t.rotation)
    for s, w in zip(start, want):
        end = propagate(em().mu, s, 2 * t.stroboscopic_time)
        # the L1 halo's multiplier (about 2000 per period) amplifies the 1e-9 invariance error
        assert np.linalg.norm(end - w) < 1e-4


def test_refined_extreme_of_a_sampled_smooth_function():
    # f(m, j) = -(m - 3.3)^2 - (cos-shaped in j, peak between nodes): the quadratic refinement
    m = np.arange(8.0)[:, None]
    j = np.arange(16.0)[None, :]
    f = 5.0 - 0.01 * (m - 3.3) ** 2 + 0.2 * np.cos(2 * np.pi * (j - 4.4) / 16)
    assert refined_max(f) == pytest.approx(5.2, abs=2e-4)
    assert abs(f.max() - 5.2) > 2e-3     # the best sample alone is farther off


@pytest.mark.parametrize("text,words", [
    ("quasi-halo halo L2 south resonance=9:2 amplitude=2000km", "around"),
    ("quasi-halo around halo L2 south", "has no target"),
    ("quasi-halo around halo L2 south resonance=9:2 amplitude=2000km period=6d", "targeted by"),
    ("lissajous L4 ay=1km az=1km", "L1 or L2"),
    ("lissajous L2 ay=1000km", "targeted by"),
    ("lissajous L2 ay=1000km az=1000km spin=3", "unknown torus target"),
    ("bagel L2 ay=1000km az=1000km", "unknown torus family"),
    ("lissajous L2 jacobi=3.1 frequency-ratio=1.5", "between 0 and 1"),
    ("lissajous L2 ay=-5km az=1000km", "ay"),
    ("quasi-halo around halo L2 south resonance=9:2 amplitude=2000 parsecs", "parsecs"),
])
def test_bad_torus_requests_are_refused_before_any_work(text, words):
    with pytest.raises(InputError, match=words):
        treq.solve(em(), text)


def test_cli_torus_request_json_has_stability_and_geometry(capsys):
    from librate_cli.main import main
    rc = main(["torus", "--system", "earth-moon", "--request",
               f"quasi-halo around {HALO} amplitude=1500km", "--format", "json", "-q"])
    out = capsys.readouterr()
    assert rc == 0, out.err
    d = json.loads(out.out)
    assert d["stability"]["kind"] == "hyperbolic"
    assert d["amplitude_km"] == pytest.approx(1500.0, rel=1e-6)
    assert set(d["closest_approach_km"]) == {"earth", "moon"}
    assert set(d["extent_km"]) == {"x", "y", "z"}
    assert "caution" in d


def test_trajectory_on_the_torus_matches_scipy_and_keeps_the_jacobi_constant():
    from cr3bp.tori.trajectory import sample, state_at
    from cr3bp.tori.solver import jacobi_many
    t = by_amplitude()
    T = t.stroboscopic_time
    th0, th1 = 0.5, 2.0
    grid = np.linspace(0.0, 3.0 * T, 301)
    seg = sample(t, grid, (th0, th1))
    assert np.allclose(seg.states[0], state_at(t, th0, th1), atol=1e-13)
    # up to the first re-start from the circle: one scipy DOP853 propagation
    first = grid < T * (1 - th0 / (2 * np.pi))
    for k in np.nonzero(first)[0][::25]:
        ref = propagate(em().mu, seg.states[0], grid[k]) if grid[k] > 0 else seg.states[0]
        assert np.linalg.norm(ref - seg.states[k]) < 1e-9
    # every sample on the torus's energy (the Jacobi integral), over three stroboscopic times
    C = jacobi_many(em().mu, seg.states)
    assert np.abs(C - t.jacobi).max() < 1e-9
    # the joins: a short scipy step from each sample lands on the next sample
    for k in range(0, grid.size - 1, 7):
        nxt = propagate(em().mu, seg.states[k], grid[k + 1] - grid[k])
        assert np.linalg.norm(nxt - seg.states[k + 1]) < 1e-7


def test_cli_torus_export_oem_is_read_by_the_oem_parser(tmp_path, capsys):
    from oem import OrbitEphemerisMessage
    from librate_cli.main import main
    out = tmp_path / "qh.oem"
    rc = main(["torus", "--system", "earth-moon", "--request",
               f"quasi-halo around {HALO} amplitude=1500km", "--export", str(out),
               "--epoch", "2031-03-01T00:00:00Z", "--span", "2periods", "--step", "6h",
               "--phase", "30,45", "--format", "json", "-q"])
    cap = capsys.readouterr()
    assert rc == 0, cap.err
    d = json.loads(cap.out)
    text = out.read_text()
    assert "CAUTION: preliminary design" in text and "torus phase (deg): 30,45" in text
    eph = OrbitEphemerisMessage.open(str(out))
    states = [s for seg in eph for s in seg.states]
    assert len(states) == d["export"]["states"] == 96   # 2 x 11.93 d at 6 h, both ends


def test_orbit_request_for_a_torus_points_to_the_torus_request():
    from cr3bp.orbits.request import parse_request
    for text in ("lissajous L2 ay=1000km az=1000km",
                 "quasi-halo around halo L2 south resonance=9:2 amplitude=2000km"):
        with pytest.raises(InputError, match="is a torus"):
            parse_request(text)
    assert treq.is_torus_request("quasi-halo around halo L2 south resonance=9:2 amplitude=2km")


def test_lissajous_request_by_jacobi_and_period_and_by_frequency_ratio():
    """Seam: the Earth-Moon L1 Lissajous torus grown 300 km about a planar Lyapunov orbit,
    asked for again by its (Jacobi constant, stroboscopic time) and (Jacobi constant, frequency
    ratio) from the request text; then invariant under scipy's DOP853."""
    from cr3bp.tori import torus_around
    o = solve_request(em(), "lyapunov L1 ax=2000km")
    a = torus_around(o, 300.0 / em().length_km)
    days = em().days(a.stroboscopic_time)
    b = treq.solve(em(), f"lissajous L1 jacobi={a.jacobi!r} period={days!r}d")
    c = treq.solve(em(), f"lissajous L1 jacobi={a.jacobi!r} frequency-ratio={a.rotation_number!r}")
    for t in (b, c):
        assert t.family == "lissajous"
        assert em().km(t.amplitude_lu) == pytest.approx(300.0, rel=1e-5)
        assert t.rotation == pytest.approx(a.rotation, abs=1e-9)
        assert t.stroboscopic_time == pytest.approx(a.stroboscopic_time, rel=1e-10)
    th = np.linspace(0.3, 2 * np.pi, 4, endpoint=False)
    for s, w in zip(evaluate(b.circle, th), evaluate(b.circle, th + 2 * b.rotation)):
        assert np.linalg.norm(propagate(em().mu, s, 2 * b.stroboscopic_time) - w) < 1e-5
