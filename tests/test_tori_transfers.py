"""Tori as transfer ends: torus-to-torus manifold connections (library, ``librate connect``,
graph legs), direct departures from an Earth parking orbit to a torus (library, ``librate
connect --path direct``, graph legs, scenario transfers), and the torus's offline 3-D page
(``librate torus --html``).

Checks against the outside world: every reported leg is re-propagated with scipy's DOP853
(Hairer, Nørsett & Wanner, "Solving Ordinary Differential Equations I", 2nd ed., 1993, §II.10),
an independent integrator: each coast reaches the next maneuver's position (1 m for the patch
connections, 1 km for the departure, the design's own closure tolerance), the Jacobi constant
(Szebehely, "Theory of Orbits", 1967, §1.6: the one integral of the CR3BP) is constant along
each coast, and the leg's torus ends are the torus states of the reported phases, propagated by
scipy from the invariance circle (the torus function W(theta0, theta1) = phi_tau(u(theta1 -
rho tau / T)); Olikara & Scheeres, AAS 12-361, 2012, §II). Seams: ``librate connect`` and the
scenario's transfer give the library's numbers.
"""

import json
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from _chromium import probe3d
from cr3bp import system
from cr3bp.cautions import CAUTION, caution_short
from cr3bp.dynamics import jacobi
from cr3bp.tori import circle
from cr3bp.tori import request as treq
from librate_cli.main import main

pytestmark = pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")

EM = system("earth-moon")
#: Quasi-halo tori about an L1 and an L2 halo at one Jacobi constant (both hyperbolic).
L1_TORUS = "quasi-halo around halo L1 north jacobi=3.14 amplitude=300km"
L2_TORUS = "quasi-halo around halo L2 north jacobi=3.14 amplitude=300km"
#: A small quasi-halo about an L1 halo (as in tests/test_scenario_tori.py).
RING = "quasi-halo around halo L1 north az=10000km amplitude=300km"
METRE = 1e-3 / EM.length_km            # one metre in LU


def _f(_, y, mu=EM.mu):
    x, yy, z, vx, vy, vz = y
    r1 = ((x + mu) ** 2 + yy ** 2 + z ** 2) ** 1.5
    r2 = ((x - 1 + mu) ** 2 + yy ** 2 + z ** 2) ** 1.5
    return [vx, vy, vz, 2 * vy + x - (1 - mu) * (x + mu) / r1 - mu * (x - 1 + mu) / r2,
            -2 * vx + yy - (1 - mu) * yy / r1 - mu * yy / r2, -(1 - mu) * z / r1 - mu * z / r2]


def _scipy(state, dt, n=2):
    """scipy's DOP853 from ``state`` over ``dt`` (TU, either sign): the states at n times."""
    sol = solve_ivp(_f, (0.0, dt), np.asarray(state, float), method="DOP853", rtol=1e-12, atol=1e-13,
                    t_eval=np.linspace(0.0, dt, n))
    assert sol.success
    return sol.y.T


def _torus_state(torus, tau, phi):
    """The torus point reached from the circle angle ``phi`` after ``tau`` (scipy)."""
    u = circle.evaluate(torus.circle, [phi])[0]
    return u if tau == 0 else _scipy(u, tau)[-1]


@pytest.fixture(scope="module")
def tori():
    return treq.solve(EM, L1_TORUS), treq.solve(EM, L2_TORUS)


@pytest.fixture(scope="module")
def ring():
    return treq.solve(EM, RING)


# ---- torus to torus ---------------------------------------------------------------------------

@pytest.fixture(scope="module")
def t2t(tori):
    from cr3bp.tori.connections import connect_torus_to_torus
    a, b = tori
    return connect_torus_to_torus(a, b, "x=1-mu", 100)


def test_torus_to_torus_leg_repropagated_by_scipy(tori, t2t):
    a, b = tori
    assert a.jacobi == pytest.approx(b.jacobi, abs=1e-9)          # one energy, as asked
    assert t2t and all(lg.kind == "torus-to-torus" for lg in t2t)
    assert [lg.dv_mps for lg in t2t] == sorted(lg.dv_mps for lg in t2t)
    for leg in t2t:
        (t0, sa, dta), (t1, pb, dtb) = leg.segments
        # the departing coast reaches the patch point, the arriving one leaves it; positions meet
        end_a = _scipy(sa, dta, 400)
        assert np.linalg.norm(end_a[-1, :3] - leg.patch_state[:3]) < 1.0 * METRE
        assert np.linalg.norm(pb[:3] - leg.patch_state[:3]) < 1.0 * METRE
        end_b = _scipy(pb, dtb, 400)
        # Jacobi constant: each coast keeps its torus's value (to the integrator's accuracy)
        ca, cb = jacobi(EM.mu, end_a), jacobi(EM.mu, end_b)
        assert np.ptp(ca) < 1e-10 and np.ptp(cb) < 1e-10
        assert ca[0] == pytest.approx(a.jacobi, abs=1e-10) and cb[0] == pytest.approx(b.jacobi, abs=1e-10)
        # the velocity jump at the patch is the leg's dv (CR3BP)
        dv = np.linalg.norm(pb[3:] - end_a[-1, 3:]) * EM.velocity_kms * 1e3
        assert dv == pytest.approx(leg.dv_mps, rel=1e-6, abs=1e-4)
        # both ends start 40 km (the Earth-Moon step-off) from the torus points of their phases
        d = leg.details
        wa = _torus_state(a, d["torus_tau"], d["torus_circle_angle"])
        wb = _torus_state(b, d["arrival_torus_tau"], d["arrival_torus_circle_angle"])
        assert EM.km(np.linalg.norm(sa[:3] - wa[:3])) == pytest.approx(40.0, rel=1e-3)
        assert EM.km(np.linalg.norm(end_b[-1, :3] - wb[:3])) == pytest.approx(40.0, rel=1e-3)
    assert 0.0 < t2t[0].dv_mps < 1000.0 and 10.0 < t2t[0].tof_days < 60.0


def test_torus_to_torus_cli_and_graph_legs_equal_the_library(tori, t2t, capsys):
    rc = main(["connect", "--system=earth-moon", f"--from={L1_TORUS}", f"--to={L2_TORUS}", "--section=x=1-mu",
               "--format=json", "-q"])
    out = capsys.readouterr()
    assert rc == 0, out.err
    legs = json.loads(out.out)["legs"]
    assert legs[0]["dv_mps"] == pytest.approx(t2t[0].dv_mps, rel=1e-9)
    assert legs[0]["kind"] == "torus-to-torus"
    import cr3bp                                   # the Python face gives the same leg
    api_legs = cr3bp.connect(tori[0], L2_TORUS, points=100)
    assert api_legs[0].dv_mps == pytest.approx(t2t[0].dv_mps, rel=1e-9)
    # a parking orbit and a torus: the torus's manifold through a periapsis, as for an orbit (none of
    # this torus's stable manifold comes back to the Earth within the time limit; the departure
    # from an Earth parking orbit is cr3bp.departure, tested below)
    with pytest.raises(cr3bp.NoSolutionError, match="periapsis about earth"):
        cr3bp.connect("parking earth 200km", tori[1])
    from cr3bp.transfers.graph import build_graph
    from cr3bp.transfers.nodes import parse_nodes
    nl = parse_nodes(f'''system = "earth-moon"
[settings]
all_pairs = false
patches = 3
[[node]]
name = "l1ring"
kind = "orbit"
orbit = "{L1_TORUS}"
[[node]]
name = "l2ring"
kind = "orbit"
orbit = "{L2_TORUS}"
[[edge]]
from = "l1ring"
to = "l2ring"
both_ways = false
sections = ["x=1-mu"]
''', EM)
    res = build_graph(EM, nl, workers=1)
    recs = [lg.record() for lg in res.legs]
    assert len(recs) == 1 and recs[0]["status"] == "ok", (recs, res.pruned)
    from cr3bp.tori.connections import connect_torus_to_torus
    from cr3bp.transfers.graph import TUBE_POINTS
    lib = connect_torus_to_torus(*tori, "x=1-mu", TUBE_POINTS)          # the graph's tube size
    assert recs[0]["dv_mps"] == pytest.approx(lib[0].dv_mps, rel=1e-9)
    assert recs[0]["kind"] == "torus-to-torus"


# ---- parking orbit to a torus -----------------------------------------------------------------

@pytest.fixture(scope="module")
def departure(ring):
    from cr3bp.tori.departure import design_torus_departure
    return design_torus_departure(ring, 200.0)


def test_departure_to_a_torus_repropagated_by_scipy(ring, departure):
    dep = departure
    assert dep.path == "direct" and [m["name"] for m in dep.maneuvers] == ["departure", "insertion"]
    (t0, s0, dt), = dep.segments()
    arc = _scipy(s0, dt, 800)
    ins = dep.maneuvers[-1]
    # the coast reaches the insertion point (the design's closure tolerance, 1 km)
    assert EM.km(np.linalg.norm(arc[-1, :3] - ins["position"])) < 1.0
    assert np.ptp(jacobi(EM.mu, arc)) < 1e-9
    # after the insertion burn the state is the torus state of the reported phase (scipy)
    after = np.asarray(ins["state_before"], float) + np.r_[0.0, 0.0, 0.0, ins["dv_vector"]]
    th0, th1 = (math.radians(v) for v in dep.details["torus_phase_deg"])
    tau = th0 / (2 * math.pi) * ring.stroboscopic_time
    w = _torus_state(ring, tau, th1 - ring.rotation * tau / ring.stroboscopic_time)
    assert EM.km(np.linalg.norm(after[:3] - w[:3])) < 0.01
    assert np.linalg.norm(after[3:] - w[3:]) * EM.velocity_kms * 1e6 < 1.0         # 1 mm/s
    assert jacobi(EM.mu, after) == pytest.approx(ring.jacobi, abs=1e-8)
    # the departure perigee is on the 200 km parking orbit, the burn tangential there
    rel = s0[:3] - np.array([-EM.mu, 0.0, 0.0])
    assert EM.km(np.linalg.norm(rel)) - EM.primary.radius_km == pytest.approx(200.0, abs=0.01)
    assert abs(rel @ s0[3:]) / (np.linalg.norm(rel) * np.linalg.norm(s0[3:])) < 1e-6
    # the total is a translunar injection plus a small insertion (common practice: about 3.1-3.2
    # km/s from low Earth orbit, from memory)
    assert 3000.0 < dep.departure_dv_mps < 3300.0 and dep.dv_mps < 4500.0


def test_departure_to_a_torus_against_its_halo(ring, departure):
    """The 300 km torus lies about its halo: with the insertion free over both torus angles the
    departure costs within a few m/s of the halo's (design_departure, the periodic orbit's design,
    from the same parking orbit)."""
    from cr3bp.orbits.request import solve_request
    from cr3bp.transfers.departure import design_departure
    halo = solve_request(EM, "halo L1 north az=10000km")
    ref = design_departure(halo, 200.0)
    assert departure.dv_mps == pytest.approx(ref.dv_mps, abs=15.0)
    assert departure.tof_days == pytest.approx(ref.tof_days, rel=0.1)


SCENARIO = f"""
[mission]
name = "Ring transfer"
issued = "2031-01-01T00:00:00"

[system]
name = "earth-moon"
epoch = "2031-03-01T00:00:00Z"

[orbits.ring]
torus = "{RING}"

[[transfers]]
name = "up"
from = "parking earth 200km"
to = "ring"
best = 1

[plots]
interactive = false
"""


def test_scenario_transfer_to_a_torus_equals_connect(departure, tmp_path, capsys):
    """Seam: the scenario's transfer (graph parking leg -> route) and ``librate connect --path
    direct`` give the library's departure (design_torus_departure) number for number."""
    rc = main(["connect", "--system=earth-moon", "--from=parking earth 200km", f"--to={RING}", "--path=direct",
               "--format=json", "-q"])
    out = capsys.readouterr()
    assert rc == 0, out.err
    leg = json.loads(out.out)["legs"][0]
    assert leg["dv_mps"] == pytest.approx(departure.dv_mps, rel=1e-9)
    assert leg["torus_phase_deg"] == pytest.approx(departure.details["torus_phase_deg"], rel=1e-9)
    from cr3bp.catalog import Catalog
    from cr3bp.scenario import run as mission
    p = tmp_path / "s.toml"
    p.write_text(SCENARIO)
    plan = mission.prepare(p)
    mission.run(plan, tmp_path / "out", catalog=Catalog(":memory:"), reduced=True)
    route = json.loads((tmp_path / "out" / "route-up.json").read_text())
    best = route["best"]
    assert best["dv_total_mps"] == pytest.approx(leg["dv_mps"], rel=1e-9)
    assert best["legs"][0]["dv_mps"] == pytest.approx(leg["dv_mps"], rel=1e-9)
    assert best["legs"][0]["kind"] == "parking"            # the graph's parking leg


# ---- the torus's 3-D page -----------------------------------------------------------------------

def test_torus_html_page_draws_offline_with_the_caution(tmp_path, capsys):
    page = tmp_path / "ring.html"
    rc = main(["torus", "--system=earth-moon", f"--request={RING}", f"--html={page}", "--format=json", "-q"])
    out = capsys.readouterr()
    assert rc == 0, out.err
    assert json.loads(out.out)["html"] == str(page)
    text = page.read_text()
    assert CAUTION in text and "<script src=" not in text and text.count("plotly.js v") == 1
    p = probe3d(page, tmp_path)
    assert p["errors"] == [] and p["blocked"] == [] and p["network"] == []
    assert p["plots"] == 1 and p["drawn"] == 1
    assert caution_short() in p["titles"][0] and "[km]" in p["axes"][0]
