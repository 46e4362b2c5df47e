"""Capture, escape and parking-orbit legs of a hyperbolic torus (cr3bp.tori.parking, the graph's
capture/escape/parking legs of torus nodes, ``librate connect`` between a parking orbit and a
torus).

Checks against outside references:

* every leg re-propagated by scipy's DOP853 (Hairer, Nørsett & Wanner, "Solving ODEs I", 1993,
  §II.10) reaches its end: the capture periapsis and the parking periapsis at the asked altitude
  over the Moon (10 m; a periapsis: radial velocity below 1e-6 of the speed), the escape distance
  from the Moon (1 km);
* the torus end of each leg lies one step-off (40 km, 1 m) from the torus point of the leg's
  reported phases, that point computed here from the invariance circle by its own Fourier
  interpolation (numpy's FFT) and scipy's DOP853; and that point is on the torus: carried by
  scipy over the rest of the stroboscopic period it lands on the invariance circle at the turned
  angle (1 km; the torus's invariance error is far smaller, the torus multiplier 2.1e3 a
  bound on how a reported phase's error could grow);
* the Jacobi constant along each manifold coast (scipy) equals the torus's (1e-9; the one
  integral of the CR3BP, Szebehely, "Theory of Orbits", 1967, §1.8);
* the circular speed at 100 km over the Moon is 1.633 km/s (from memory: low-lunar-orbit
  circular speed; GM_moon = 4902.8 km^3/s^2, R = 1737.4 km give 1.6331 km/s);
* seams: the graph's leg equals the library call's (cr3bp.connect / torus_parking_legs) and
  ``librate connect``'s JSON, number for number.
"""

import json

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from cr3bp import system
from cr3bp.dynamics import jacobi
from cr3bp.tori import request as treq
from cr3bp.transfers.graph import build_graph, plan, resolve_orbits
from cr3bp.transfers.nodes import parse_nodes
from librate_cli.main import main

REQUEST = "quasi-halo around halo L1 north az=10000km amplitude=300km"
EM = system("earth-moon")
MOON = np.array([1 - EM.mu, 0.0, 0.0])
R_MOON_KM = 1737.4          # the system's lunar radius (cr3bp data), checked below against GM and v_c
POINTS = 40                 # the graph's trajectories per manifold for these legs (graph.PARKING_POINTS)

NODES = f'''system = "earth-moon"
[settings]
all_pairs = false
patches = 3
[[node]]
name = "ring"
kind = "orbit"
orbit = "{REQUEST}"
[[node]]
name = "llo"
kind = "parking"
body = "moon"
altitude = "100km"
[[node]]
name = "entry"
kind = "capture"
body = "moon"
altitude = "100km"
[[node]]
name = "away"
kind = "escape"
body = "moon"
radius = "100000km"
[[edge]]
from = "llo"
to = "ring"
[[edge]]
from = "ring"
to = "entry"
both_ways = false
[[edge]]
from = "ring"
to = "away"
both_ways = false
'''


def _f(_, y, mu=EM.mu):
    x, yy, z, vx, vy, vz = y
    r1 = ((x + mu) ** 2 + yy ** 2 + z ** 2) ** 1.5
    r2 = ((x - 1 + mu) ** 2 + yy ** 2 + z ** 2) ** 1.5
    return [vx, vy, vz, 2 * vy + x - (1 - mu) * (x + mu) / r1 - mu * (x - 1 + mu) / r2,
            -2 * vx + yy - (1 - mu) * yy / r1 - mu * yy / r2, -(1 - mu) * z / r1 - mu * z / r2]


def _scipy(y0, t, n=200):
    te = np.linspace(0.0, t, n)
    sol = solve_ivp(_f, (0.0, t), np.asarray(y0, float), method="DOP853", rtol=1e-12, atol=1e-13, t_eval=te)
    assert sol.success
    return sol.y.T


def _interp(circle, theta):
    """The invariance circle's trigonometric interpolant at ``theta`` (numpy's FFT, written here
    independently of cr3bp.tori.circle)."""
    n = circle.shape[0]
    c = np.fft.fft(circle, axis=0) / n
    k = np.fft.fftfreq(n, 1.0 / n)
    return np.real(np.sum(c * np.exp(1j * k * theta)[:, None], axis=0))


def _torus_point(torus, tau, phi):
    """W at departure phases (tau, phi): the circle at phi carried by scipy over tau."""
    u = _interp(torus.circle, phi)
    return u if tau == 0 else _scipy(u, tau, 2)[-1]


def _on_torus_km(torus, point, tau, phi):
    """How far the torus point lands from the invariance circle after the rest of the period."""
    T = torus.stroboscopic_time
    back = _scipy(point, T - tau, 2)[-1]
    return float(np.linalg.norm(back[:3] - _interp(torus.circle, phi + torus.rotation)[:3]) * EM.length_km)


@pytest.fixture(scope="module")
def torus():
    return treq.solve(EM, REQUEST)


@pytest.fixture(scope="module")
def built(torus):
    return build_graph(EM, parse_nodes(NODES, EM), workers=1)


def _leg(built, origin, target):
    legs = [g for g in built.legs if g.origin == origin and g.target == target]
    assert len(legs) == 1 and legs[0].ok, [(g.origin, g.target, g.reason) for g in built.legs]
    return legs[0]


def _check_torus_end(torus, leg, end_state):
    d = leg.details
    tau, phi = d["torus_tau"], d["torus_circle_angle"]
    base = _torus_point(torus, tau, phi)
    assert np.allclose(base, d["torus_state"], atol=1e-8)
    assert np.linalg.norm(np.asarray(end_state)[:3] - base[:3]) * EM.length_km == pytest.approx(40.0, abs=1e-3)
    assert _on_torus_km(torus, base, tau, phi) < 1.0


def _coast(leg):
    """The leg's one ballistic coast re-propagated by scipy from its first patch state (after a
    departure burn) over its time of flight."""
    assert leg.patch_times[0] == 0.0 and all(0.0 < m.t < leg.tof or m.t in (0.0, leg.tof) for m in leg.maneuvers)
    return _scipy(leg.patch_states[0], leg.tof)


def test_capture_leg_reaches_the_periapsis_from_the_torus(torus, built):
    leg = _leg(built, "ring", "entry")
    assert leg.kind == "capture" and leg.dv_mps == 0.0 and leg.maneuvers == ()
    arc = _coast(leg)
    _check_torus_end(torus, leg, arc[0])
    end = arc[-1]
    r = end[:3] - MOON
    assert np.linalg.norm(r) * EM.length_km - R_MOON_KM == pytest.approx(100.0, abs=0.01)
    assert abs(r @ end[3:]) / (np.linalg.norm(r) * np.linalg.norm(end[3:])) < 1e-6
    assert np.allclose(end, leg.arrival_state, atol=1e-9)
    c = [jacobi(EM.mu, s) for s in arc]
    assert max(abs(x - torus.jacobi) for x in c) < 1e-9


def test_escape_leg_reaches_the_escape_distance_from_the_torus(torus, built):
    leg = _leg(built, "ring", "away")
    assert leg.kind == "escape" and leg.dv_mps == 0.0
    arc = _coast(leg)
    _check_torus_end(torus, leg, arc[0])
    dist = np.linalg.norm(arc[:, :3] - MOON, axis=1) * EM.length_km
    assert dist[-1] == pytest.approx(100000.0, abs=1.0)
    assert np.all(dist[:-1] < 100000.0 + 1.0)
    c = [jacobi(EM.mu, s) for s in arc]
    assert max(abs(x - torus.jacobi) for x in c) < 1e-9


def test_parking_legs_from_and_to_a_lunar_orbit(torus, built):
    for origin, target, stability in (("llo", "ring", "stable"), ("ring", "llo", "unstable")):
        leg = _leg(built, origin, target)
        assert leg.details["stability"] == stability
        arc = _coast(leg)
        peri, at_torus = (arc[0], arc[-1]) if stability == "stable" else (arc[-1], arc[0])
        _check_torus_end(torus, leg, at_torus)
        r = peri[:3] - MOON
        assert np.linalg.norm(r) * EM.length_km - R_MOON_KM == pytest.approx(100.0, abs=0.01)
        assert abs(r @ peri[3:]) / (np.linalg.norm(r) * np.linalg.norm(peri[3:])) < 1e-6
        c = [jacobi(EM.mu, s) for s in arc]
        assert max(abs(x - torus.jacobi) for x in c) < 1e-9
        per = leg.details["periapsis"]
        assert per["speed_circular_kms"] == pytest.approx(1.633, abs=0.002)
        assert leg.dv_mps == pytest.approx(abs(per["speed_inertial_kms"] - per["speed_circular_kms"]) * 1e3,
                                           rel=1e-9)
        assert 0.0 < leg.dv_mps < 1000.0


def test_seam_graph_parking_leg_equals_the_library_and_the_cli(torus, built, tmp_path):
    import cr3bp
    from cr3bp.tori.parking import torus_parking_legs
    graph = _leg(built, "llo", "ring")
    lib = cr3bp.connect("parking moon 100km", torus, points=POINTS)[0]
    assert lib.dv_mps == pytest.approx(graph.dv_mps, rel=1e-9)
    assert lib.tof_days == pytest.approx(graph.tof_days, rel=1e-9)
    out = tmp_path / "c.json"
    assert main(["connect", "--system=earth-moon", "--from=parking moon 100km", f"--to={REQUEST}",
                 f"--points={POINTS}", "--format=json", f"--out={out}", "-q"]) == 0
    cli = json.loads(out.read_text())["legs"][0]
    assert cli["dv_mps"] == pytest.approx(graph.dv_mps, rel=1e-9)
    assert cli["details"]["torus_phase_deg"] == pytest.approx(graph.details["torus_phase_deg"], rel=1e-9)
    # the capture: the fastest of the unstable manifold's legs to 100 km, its insertion left out
    cap = min(torus_parking_legs(torus, "moon", 100.0, stability="unstable", n_points=POINTS),
              key=lambda g: g.tof)
    assert _leg(built, "ring", "entry").tof_days == pytest.approx(cap.tof_days, rel=1e-9)


def test_a_torus_that_is_not_hyperbolic_is_pruned_in_one_line(torus):
    nl = parse_nodes(NODES, EM)
    orbits = resolve_orbits(EM, nl)
    ring = nl.by_name()["ring"].id
    orbits[ring]["stability"] = dict(orbits[ring]["stability"], kind="neutrally stable (elliptic)",
                                     largest_modulus=1.0)
    tasks, pruned = plan(EM, nl, orbits=orbits)
    reasons = {(p["from"], p["to"]): p["reason"] for p in pruned}
    assert set(reasons) == {("llo", "ring"), ("ring", "llo"), ("ring", "entry"), ("ring", "away")}
    for (a, b), why in reasons.items():
        assert why.startswith("torus node 'ring' is not hyperbolic (largest multiplier modulus 1): it has no "
                              "stable or unstable manifold to a "), why
        assert "\n" not in why
    assert not tasks
    assert orbits[ring]["stability"]["kind"] == "neutrally stable (elliptic)"
    assert torus.stability["kind"] == "hyperbolic"


SCENARIO = f"""
[mission]
name = "Ring to the Moon"
issued = "2031-01-01T00:00:00"

[system]
name = "earth-moon"
epoch = "2031-03-01T00:00:00Z"

[orbits.ring]
torus = "{REQUEST}"

[[transfers]]
name = "down"
from = "ring"
to = "parking moon 100km"
best = 1

[plots]
interactive = false
"""


def test_seam_scenario_transfer_from_a_torus_to_a_lunar_orbit_equals_connect(torus, tmp_path):
    """A scenario's transfer from a torus to 'parking moon 100km' (graph parking leg -> route) gives
    the library's leg (cr3bp.connect with the graph's trajectory count) number for number."""
    import cr3bp
    from cr3bp.catalog import Catalog
    from cr3bp.scenario import run as mission
    p = tmp_path / "s.toml"
    p.write_text(SCENARIO)
    mission.run(mission.prepare(p), tmp_path / "out", catalog=Catalog(":memory:"), reduced=True)
    best = json.loads((tmp_path / "out" / "route-down.json").read_text())["best"]
    lib = cr3bp.connect(torus, "parking moon 100km", points=POINTS)[0]
    assert best["dv_total_mps"] == pytest.approx(lib.dv_mps, rel=1e-9)
    assert best["legs"][0]["kind"] == "parking"


@pytest.mark.parametrize("ends", [("--from=parking moon 100km", f"--to={REQUEST}"),
                                  (f"--from={REQUEST}", "--to=parking moon 100km")])
def test_connect_refuses_a_torus_that_is_not_hyperbolic_in_one_line(torus, capsys, tmp_path, monkeypatch, ends):
    """The refusal of tests/test_bad_input_cli.py's table (one line, exit 2, nothing written), for a
    torus whose stability says it is not hyperbolic (the solved torus with its stability replaced:
    no Earth-Moon quasi-halo the requests reach is elliptic, the halo family's stable stretch
    ends below the Moon's surface)."""
    import dataclasses

    from cr3bp.tori import request as treq_mod
    from test_bad_input_cli import refused
    elliptic = dataclasses.replace(torus, stability=dict(torus.stability, kind="neutrally stable (elliptic)",
                                                         largest_modulus=1.0))
    monkeypatch.setattr(treq_mod, "solve", lambda *a, **k: elliptic)
    monkeypatch.chdir(tmp_path)
    line, _ = refused(capsys, ["connect", "--system=earth-moon", *ends, "--format=json", f"--out={tmp_path}/c.json",
                               "--map=m.png", "-q"])
    assert "the torus is not hyperbolic (largest multiplier modulus 1): it has no stable or unstable manifold " \
           "to a parking orbit through a periapsis" in line, line
    assert REQUEST in line
    assert list(tmp_path.iterdir()) == []


def test_a_rebuild_reads_the_torus_legs_from_the_catalogue(built, tmp_path):
    """The four legs are cached like an orbit's: a second build computes none and gives the same
    records (the catalogue's JSON round trip, Leg.from_record)."""
    from cr3bp.catalog import Catalog
    with Catalog(str(tmp_path / "c.sqlite")) as cat:
        first = build_graph(EM, parse_nodes(NODES, EM), workers=1, catalog=cat)
        again = build_graph(EM, parse_nodes(NODES, EM), workers=1, catalog=cat)
    assert (first.computed, again.computed, again.cached) == (4, 0, 4)
    rec = {(g.origin, g.target): g.record() for g in again.legs}
    for g in built.legs:
        assert rec[(g.origin, g.target)]["dv_mps"] == g.dv_mps
        assert rec[(g.origin, g.target)]["details"]["torus_phase_deg"] == g.record()["details"]["torus_phase_deg"]
