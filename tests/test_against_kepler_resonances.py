"""p:q resonant orbits against their Keplerian limit and first-order perturbation theory, and an
Earth-Moon 2:1 orbit against a flown one.

Limit (mu -> 0). An orbit about the larger primary making p revolutions while the primaries make
q has, by Kepler's third law with GM = 1 - mu -> 1, the sidereal period 2 pi q / p and the
semi-major axis (q/p)^(2/3); seen from the frame turning once per 2 pi, it repeats after the
least common multiple of the two periods, 2 pi q (the synodic relation 1/S = |1/P - 1/P'|
between the two periods, common practice). So the rotating-frame period T(mu) -> 2 pi q.

How fast. The symmetric periodic orbit through the held crossing x0(mu) is continued from the
Kepler orbit in the small parameter mu (Poincare, *Les methodes nouvelles de la mecanique
celeste*, vol. 1, 1892, ch. III, periodic solutions continued in a parameter, from memory):
T(mu) = 2 pi q + c1 mu + O(mu^2). c1 is computed here from first-order theory, independently
of the library: the half-period conditions G(vy0, T/2; mu) = (y, vx)(T/2) = 0 differentiated at
mu = 0 along the Kepler orbit, d(vy0, T/2)/dmu = -G_u^-1 G_mu, with G_u from the state
transition matrix and G_mu from the variational equation forced by df/dmu (scipy solve_ivp on
equations written out below, derivatives in mu and in the state by complex step). Then
(T - 2 pi q)/mu - c1 is O(mu): it must shrink tenfold per decade of mu.
"""

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from cr3bp import system
from cr3bp.integrate import propagate
from cr3bp.orbits import continuation, families
from librate_cli.main import main

ECC = 0.5                      # the family's default first member: Kepler ellipse e = 0.5
H = 1e-30                      # complex step


def _f(s, mu):
    """Planar CR3BP vector field, state (x, y, vx, vy) (Szebehely 1967, §10.2)."""
    x, y, vx, vy = s
    r1 = np.sqrt((x + mu) ** 2 + y * y)
    r2 = np.sqrt((x - 1 + mu) ** 2 + y * y)
    return np.array([vx, vy, 2 * vy + x - (1 - mu) * (x + mu) / r1**3 - mu * (x - 1 + mu) / r2**3,
                     -2 * vx + y - (1 - mu) * y / r1**3 - mu * y / r2**3])


def _first_order_rhs(t, Y):
    s = Y[:4]
    A = np.array([_f(s + 1j * H * e, 0.0).imag / H for e in np.eye(4)]).T
    dfdmu = _f(s.astype(complex), 1j * H).imag / H
    return np.concatenate([_f(s, 0.0), (A @ Y[4:20].reshape(4, 4)).ravel(), A @ Y[20:] + dfdmu])


def first_order_period_slope(p, q, e=ECC):
    """c1 = dT/dmu at mu = 0 for the orbit held at x0(mu) = -mu - a(mu)(1 - e),
    a(mu) = ((1 - mu)(q/p)^2)^(1/3) (the family's first member: periapsis on the far side)."""
    a0 = (q / p) ** (2.0 / 3.0)
    rp = a0 * (1 - e)
    vp = math.sqrt(2 / rp - 1 / a0)
    s0 = np.array([-rp, 0.0, 0.0, -(vp - rp)])             # rotating-frame velocity v - omega x r
    dx0 = -1.0 + a0 * (1 - e) / 3.0                         # d x0 / d mu at mu = 0
    Y0 = np.concatenate([s0, np.eye(4).ravel(), [dx0, 0.0, 0.0, 0.0]])
    sol = solve_ivp(_first_order_rhs, (0.0, math.pi * q), Y0, method="DOP853", rtol=1e-12, atol=1e-12)
    Y = sol.y[:, -1]
    s, phi, w = Y[:4], Y[4:20].reshape(4, 4), Y[20:]
    assert abs(s[1]) < 1e-9 and abs(s[2]) < 1e-9            # the Kepler orbit crosses at T/2 = pi q
    G_u = np.column_stack([phi[[1, 2], 3], _f(s, 0.0)[[1, 2]]])
    dvy, dtau = -np.linalg.solve(G_u, w[[1, 2]])
    return 2.0 * dtau


def _period(mu, p, q):
    o = families.first_member(system(mu=mu), "resonant", resonance=(p, q), eccentricity=ECC,
                              alignment="away")[0]
    assert o.periodicity_error < 1e-10
    return o.period


#: inner (3:2, 2:1) and outer (1:2) resonances
RESONANCES = [(3, 2), (2, 1), (1, 2)]


@pytest.mark.parametrize("p,q", RESONANCES)
def test_period_tends_to_the_kepler_value_at_the_first_order_rate(p, q):
    c1 = first_order_period_slope(p, q)
    mus = (1e-4, 1e-5, 1e-6)
    dT = [_period(mu, p, q) - 2 * math.pi * q for mu in mus]
    # the deviation from the Keplerian 2 pi q has the first-order sign and size ...
    for mu, d in zip(mus, dT):
        assert d == pytest.approx(c1 * mu, rel=1e-2)
    # ... and what is left over is second order: it falls tenfold per decade of mu
    rest = [abs(d / mu - c1) / abs(c1) for mu, d in zip(mus, dT)]
    assert 7.0 < rest[0] / rest[1] < 13.0 and 7.0 < rest[1] / rest[2] < 13.0
    assert rest[2] < 1e-4




@pytest.mark.parametrize("p,q,rel", [(2, 1, 0.10), (1, 2, 0.10)])
def test_earth_moon_resonant_periods_against_first_order_theory(p, q, rel):
    """At the Earth-Moon mass ratio (mu = 0.01215) the first-order term still gives the period's
    shift from 2 pi q to within 10 % of the shift (measured: 8.5 % for 2:1, 3 % for 1:2, the size
    of the second-order term seen at small mu). 3:2 is left out: its e = 0.5 orbit passes
    34 000 km from the Moon, where the series converges slowly (measured 26 %)."""
    em = system("earth-moon")
    dT = _period(em.mu, p, q) - 2 * math.pi * q
    assert dT == pytest.approx(first_order_period_slope(p, q) * em.mu, rel=rel)


RE_KM = 6378.137                # Earth's equatorial radius (common practice, WGS 84)


def test_earth_moon_2_1_orbit_of_a_flown_mission():
    """A spacecraft flown since 2018 on a 2:1 lunar-resonant orbit: period 13.7 days, perigee
    about 17 Earth radii, apogee about 59 Earth radii (Ricker et al., "The Transiting Exoplanet
    Survey Satellite", J. Astron. Telesc. Instrum. Syst. 1, 014003, 2015; from memory), apogee
    phased about 90 degrees away from the Moon (from memory). The real orbit is inclined and
    Sun-perturbed and the figures are rounded: period within 2 %, apogee within 3 %, phase within
    5 degrees (measured: 13.58 d, 58.09 Earth radii, 91.1 degrees)."""
    em = system("earth-moon")
    fam = families.grow_family(em, "resonant", resonance=(2, 1), eccentricity=0.6, alignment="away",
                               stops=continuation.Stops(max_members=100,
                                                        target=("approach1", 17 * RE_KM / em.length_km)))
    o = fam.target
    assert o is not None and o.closest_approach_km["earth"] == pytest.approx(17 * RE_KM, abs=1e-3)
    # two revolutions about the Earth per rotating-frame period
    assert o.period_days / 2 == pytest.approx(13.7, rel=0.02)
    arc = propagate(em, o.state, o.period, t_eval=np.linspace(0.0, o.period, 4001))
    rel_earth = arc.states[:, :3] - np.array([-em.mu, 0.0, 0.0])
    r = np.linalg.norm(rel_earth, axis=1) * em.length_km
    assert r.max() / RE_KM == pytest.approx(59.0, rel=0.03)
    k = int(np.argmax(r))
    phase = math.degrees(math.atan2(rel_earth[k, 1], rel_earth[k, 0]))  # the Moon is at 0 degrees
    assert abs(abs(phase) - 90.0) < 5.0
    assert o.closest_approach_km["moon"] > 200000.0     # the resonance keeps it far from the Moon


# ---- the family followed along the resonance towards the secondary ---------------------------
#
# The p:q family is seeded with the apsis nearer the secondary's orbit pointing at the secondary
# (families.grow_resonant) and kept where its period is within RESONANCE_TOL of 2 pi q. Checked
# here: its near-Keplerian members against Kepler's third law, the label against the measured
# revolutions (counted by an independent scipy propagation), and the Jupiter-Europa 3:4 flyby
# member asked for by its perilune.

EUROPA_PERIOD_DAYS = 3.551181   # Europa's sidereal orbital period (JPL Solar System Dynamics,
                                # planetary satellite mean elements; from memory)
ONE_KM = 1e-3                   # perilune tolerance, km (1 m)
LABEL_TOL = 0.03                # the stated tolerance of a p:q label on the period (README)


def _osculating_period_ratio(mu, state):
    """Two-body sidereal period about the larger primary of a rotating-frame state, in periods of
    the primaries (vis-viva, Murray & Dermott, Solar System Dynamics, 1999, eq. 2.34; written out
    here independently of the library)."""
    x, y, _, vx, vy, _ = state
    rx = x + mu
    r = math.hypot(rx, y)
    u2 = (vx - y) ** 2 + (vy + rx) ** 2
    a = 1.0 / (2.0 / r - u2 / (1.0 - mu))
    return math.sqrt(a**3 / (1.0 - mu))


@pytest.mark.parametrize("p,q", [(3, 4), (2, 1), (4, 5), (5, 3)])
def test_near_keplerian_first_member_tends_to_the_kepler_resonance(p, q):
    """As mu -> 0 the first member (nearer apsis half-way to the secondary's orbit, so far from
    the secondary) tends to the Kepler ellipse of the resonance: osculating sidereal period
    q/p of the primaries' (Kepler's third law, common practice) and rotating-frame period 2 pi q,
    both departing by O(mu): the departure falls about tenfold per decade of mu."""
    dev_osc, dev_rot = [], []
    for mu in (1e-5, 1e-6, 1e-7):
        o = families.first_member(system(mu=mu), "resonant", resonance=(p, q))[0]
        assert o.periodicity_error < 1e-10
        n_sc, n_prim = o.period_ratio
        assert round(n_sc - n_prim) == p - q
        dev_osc.append(abs(_osculating_period_ratio(mu, o.state) - q / p))
        dev_rot.append(abs(o.period / (2 * math.pi * q) - 1.0))
    for dev in (dev_osc, dev_rot):
        assert dev[2] < 2e-5
        assert 5.0 < dev[0] / dev[1] < 20.0 and 5.0 < dev[1] / dev[2] < 20.0


def _revolutions_by_scipy(mu, state, period):
    """Inertial revolutions about the larger primary in one period, independently of the
    library: scipy's DOP853 on the planar equations above, inertial angle = rotating angle + t."""
    sol = solve_ivp(lambda t, s: _f(s, mu), (0.0, period), np.asarray(state, float)[[0, 1, 3, 4]],
                    method="DOP853", rtol=1e-12, atol=1e-12, dense_output=True)
    t = np.linspace(0.0, period, 20001)
    s = sol.sol(t)
    ang = np.unwrap(np.arctan2(s[1], s[0] + mu)) + t
    return (ang[-1] - ang[0]) / (2 * math.pi)


@pytest.mark.parametrize("p,q", [(3, 4), (2, 1)])
def test_jupiter_europa_labels_hold_for_every_member(p, q):
    """Every member of the Jupiter-Europa p:q family carries its measured period ratio; the
    spacecraft's revolutions agree with an independent count, the label p:q holds to
    RESONANCE_TOL of the period, and the family reaches down to Europa's surface (measured:
    3:4 from 135 400 km to 1 565 km, the period within 2.2 % of 4 Europa periods)."""
    je = system("jupiter-europa")
    fam = families.grow_family(je, "resonant", resonance=(p, q), locate_bifurcations=False,
                               stops=continuation.Stops(max_members=600))
    assert "surface of europa" in fam.stop_reason
    approach = [m.closest_approach_km["europa"] for m in fam.members]
    assert min(approach) < 1560.8 + 50.0          # Europa's radius (project data) + 50 km
    assert max(approach) > 100000.0
    for m in fam.members[:: max(1, len(fam.members) // 8)] + (fam.members[-1],):
        revs = _revolutions_by_scipy(je.mu, m.state, m.period)
        assert m.period / (2 * math.pi) == pytest.approx(q, rel=LABEL_TOL)
        assert revs == pytest.approx(p, abs=LABEL_TOL * q)   # n_sc - p = n_prim - q
        n_sc, n_prim = m.period_ratio
        assert m.to_dict()["period_ratio"] == [n_sc, n_prim]
        assert n_prim == m.period / (2 * math.pi)
        assert n_sc == pytest.approx(revs, abs=1e-6)
    assert families.RESONANCE_TOL == LABEL_TOL


def _check_europa_3_4_flyby(je, d, perilune_km):
    assert d["closest_approach_km"]["europa"] == pytest.approx(perilune_km, abs=ONE_KM)
    # 4 Europa periods: the project's Europa period (2 pi TU) against the published one
    assert je.days(2 * math.pi) == pytest.approx(EUROPA_PERIOD_DAYS, rel=1e-3)
    assert d["period_days"] / je.days(2 * math.pi) == pytest.approx(4.0, rel=LABEL_TOL)
    assert _revolutions_by_scipy(je.mu, d["state"], d["period"]) == pytest.approx(3.0, abs=4 * LABEL_TOL)
    n_sc, n_prim = d["period_ratio"]
    assert n_prim == pytest.approx(d["period"] / (2 * math.pi), rel=1e-14)
    assert (n_sc, n_prim) == (pytest.approx(3.0, abs=4 * LABEL_TOL), pytest.approx(4.0, rel=LABEL_TOL))
    # between flybys the orbit about Jupiter is the 3:4 ellipse: osculating period 4/3 of
    # Europa's to 0.3 % (measured 0.13 % at 5 000 km)
    assert d["osculating_period_ratio"] == pytest.approx(4.0 / 3.0, rel=3e-3)
    assert _osculating_period_ratio(je.mu, d["state"]) == pytest.approx(d["osculating_period_ratio"], rel=1e-12)


def test_jupiter_europa_3_4_perilune_request_from_python():
    """The 3:4 request with a perilune target gives the flyby member: closest approach to Europa
    the target, period 4 Europa periods (14.38 d measured at 5 000 km: the period departs from
    14.20 d by 1.2 % as the flyby takes part of it; see README, resonant families)."""
    from cr3bp.orbits.request import solve_request
    je = system("jupiter-europa")
    o = solve_request(je, "resonant 3:4 perilune=5000km")
    _check_europa_3_4_flyby(je, o.to_dict(), 5000.0)
    assert o.periodicity_error < 1e-10


def test_jupiter_europa_3_4_perilune_from_the_command_line(capsys):
    import json
    je = system("jupiter-europa")
    rc = main(["orbit", "--system", "jupiter-europa", "--family", "resonant", "--ratio", "3:4",
               "--perilune", "3000km", "--format", "json", "-q"])
    out = capsys.readouterr()
    assert rc == 0, out.err
    _check_europa_3_4_flyby(je, json.loads(out.out), 3000.0)
    rc = main(["orbit", "--system", "jupiter-europa", "--family", "resonant", "--ratio", "3:4",
               "--perilune", "3000km", "-q"])
    out = capsys.readouterr()
    assert rc == 0 and "period ratio         3.0" in out.out and ":4.0" in out.out


@pytest.mark.parametrize("perilune", ["500km", "300000km"])
def test_perilune_off_the_resonance_exits_3_with_the_range(capsys, perilune):
    """Below Europa's surface or farther than any member on the resonance: exit 3, the range
    along the resonance in km."""
    rc = main(["orbit", "--system", "jupiter-europa", "--family", "resonant", "--ratio", "3:4",
               "--perilune", perilune, "-q"])
    err = capsys.readouterr().err
    assert rc == 3
    assert "along the 3:4 resonance" in err and "within 3% of 4 revolutions" in err
    assert "perilune from 1565" in err and " km to 135" in err


def test_a_resonance_the_secondary_destroys_exits_3(capsys):
    """Earth-Moon 3:4: the Moon shifts the period of every Kepler guess by 9 % or more (measured
    3.60 to 3.62 revolutions of the primaries): no member on the resonance, exit 3."""
    rc = main(["orbit", "--system", "earth-moon", "--family", "resonant", "--ratio", "3:4",
               "--perilune", "20000km", "-q"])
    err = capsys.readouterr().err
    assert rc == 3 and "no 3:4 resonant orbit was found within 3% of 4 revolutions" in err


def test_family_table_lists_the_period_ratio(capsys):
    import json
    rc = main(["family", "--system", "jupiter-europa", "--family", "resonant", "--ratio", "3:4",
               "--members", "20", "--format", "json", "-q"])
    out = capsys.readouterr()
    assert rc == 0, out.err
    d = json.loads(out.out)
    assert d["columns"][-2:] == ["spacecraft_revolutions", "primaries_revolutions"]
    for m in d["members"]:
        n_sc, n_prim = m["period_ratio"]
        assert n_sc - n_prim == pytest.approx(-1.0, abs=1e-12)
        assert n_prim == pytest.approx(4.0, rel=0.03)


def test_catalogued_resonant_family_of_an_older_recipe_is_grown_again(tmp_path):
    """A resonant family catalogued by an older recipe (which drifted off the resonance) is not
    reused: the request grows the family again and answers on the resonance."""
    from cr3bp.catalog import Catalog
    from cr3bp.orbits.request import RECIPE, catalog_member, solve_request
    je = system("jupiter-europa")
    cat = Catalog(str(tmp_path / "c.sqlite"))
    old = families.grow_family(je, "resonant", resonance=(3, 4), alignment="away",
                               stops=continuation.Stops(max_members=260), locate_bifurcations=False)
    fid = cat.begin_family(je, "resonant", "", "3:4", {"recipe": RECIPE - 1})
    cat.add_members(fid, [catalog_member(m, i) for i, m in enumerate(old.members)])
    cat.finish_family(fid, [], complete=True)
    o = solve_request(je, "resonant 3:4 perilune=5000km", catalog=cat)
    _check_europa_3_4_flyby(je, o.to_dict(), 5000.0)
    assert cat.load_family(je, "resonant", "", "3:4")["settings"]["recipe"] == RECIPE


@pytest.mark.parametrize("ratio,words", [("1:1", "co-orbital"), ("2:4", "write it as 1:2"),
                                         ("3:1", "p/q < 2.8")])
def test_resonances_not_offered_are_refused_before_any_work(capsys, tmp_path, ratio, words):
    """p = q, a ratio not in lowest terms, and inner resonances whose ellipses cannot reach the
    secondary: one line, exit 2, from the command line and from the scenario check."""
    from pathlib import Path

    from cr3bp.scenario import run as mission
    from cr3bp.scenario.schema import ScenarioError
    rc = main(["orbit", "--system", "jupiter-europa", "--family", "resonant", "--ratio", ratio,
               "--perilune", "5000km", "-q"])
    err = capsys.readouterr().err
    assert rc == 2 and words in err and err.strip().count("\n") == 0
    text = (Path(__file__).parent.parent / "examples" / "farlight.toml").read_text()
    bad = tmp_path / "s.toml"
    bad.write_text(text.replace('family = "halo"\npoint = "L2"\nbranch = "south"\nresonance = "9:2"',
                                f'family = "resonant"\nresonant = "{ratio}"\nperilune = "20000km"'))
    assert f'resonant = "{ratio}"' in bad.read_text()
    with pytest.raises(ScenarioError, match=words.replace("(", r"\(").replace(")", r"\)").replace("/", "/")):
        mission.prepare(bad)
