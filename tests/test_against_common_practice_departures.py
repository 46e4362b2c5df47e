"""Departures from a 200 km circular Earth parking orbit to Earth–Moon periodic orbits
(:mod:`cr3bp.transfers.departure`), against outside values, and each reported transfer
re-propagated independently (scipy's DOP853 on equations written out in the tests).

References
----------
* Hohmann transfer from a 200 km circular orbit to the Moon's mean distance (384 400 km):
  dv1 = sqrt(GM/r1) (sqrt(2 r2 / (r1 + r2)) - 1) = 3.13 km/s with GM = 398 600.4418 km^3/s^2
  (Vallado, *Fundamentals of Astrodynamics and Applications*, 4th ed., 2013, §6.3, eq. 6-3;
  the ~3.1 km/s trans-lunar injection from low Earth orbit is common practice).
* Direct transfers to the 9:2 L2 southern NRHO: departure about 3.1-3.2 km/s (from memory,
  published NRHO transfer studies), total time of flight a few days.
"""

import json
import math

import numpy as np
import pytest

import _independent_cr3bp as ind
from _orbit_cache import em, nrho_9_2
from cr3bp.transfers.departure import CLOSURE_TOL_KM, design_departure

GM_EARTH = 398600.4418          # km^3/s^2 (Vallado 2013, Table D-5; EGM-96 value)
MOON_DISTANCE_KM = 384400.0     # mean Earth-Moon distance (common practice)
ONE_DEGREE = 1.0


def hohmann_first_burn_kms(r1_km, r2_km, gm=GM_EARTH):
    return math.sqrt(gm / r1_km) * (math.sqrt(2.0 * r2_km / (r1_km + r2_km)) - 1.0)


@pytest.fixture(scope="module")
def nrho_direct():
    return design_departure(nrho_9_2(), 200.0, path="direct")


def test_hohmann_value_is_the_common_practice_one():
    dv = hohmann_first_burn_kms(em().primary.radius_km + 200.0, MOON_DISTANCE_KM)
    assert 3.10 <= dv <= 3.16


def test_direct_departure_to_the_nrho_against_hohmann_and_published(nrho_direct):
    d = nrho_direct
    hohmann_mps = 1e3 * hohmann_first_burn_kms(em().primary.radius_km + 200.0, MOON_DISTANCE_KM)
    assert abs(d.departure_dv_mps - hohmann_mps) < 60.0            # within 60 m/s of Hohmann
    assert 3100.0 <= d.departure_dv_mps <= 3200.0                    # published range (from memory)
    assert 3.0 <= d.tof_days <= 7.0
    assert [m["name"] for m in d.maneuvers] == ["departure", "insertion"]
    assert d.dv_mps == pytest.approx(sum(em().mps(np.linalg.norm(m["dv_vector"])) for m in d.maneuvers))
    # C3 and the departure speed agree with each other (vis-viva, two-body Earth)
    r_km = em().km(d.perigee["radius"])
    v = d.departure_speed_kms
    assert d.c3_km2_s2 == pytest.approx(v * v - 2 * (1 - em().mu) * em().length_km ** 3 / (
        em().time_days * 86400.0) ** 2 / r_km, rel=1e-9)
    assert -3.0 < d.c3_km2_s2 < 0.0              # just short of escape, as every lunar transfer
    assert d.optimised
    assert max(d.details["constraint_residuals"]) < 1e-8


def _check_closure(system, leg, orbit):
    """The reported departure state, propagated by scipy for the reported time of flight,
    lands on the reported insertion point, which lies on the target orbit, and the insertion
    dv there is the orbit's velocity minus the arrival velocity."""
    tu_days = system.days(1.0)
    ins = leg["maneuvers"][-1]
    end = ind.propagate(system.mu, leg["departure_state"], leg["tof_days"] / tu_days)
    miss_km = np.linalg.norm(end[:3] * system.length_km - np.array(ins["position_km"]))
    assert miss_km < CLOSURE_TOL_KM
    on_orbit = ind.propagate(system.mu, orbit.state, leg["insertion_phase"] * orbit.period)
    assert np.linalg.norm(on_orbit[:3] * system.length_km - np.array(ins["position_km"])) < CLOSURE_TOL_KM
    dv = system.mps(np.linalg.norm(on_orbit[3:] - end[3:]))
    assert dv == pytest.approx(ins["dv_mps"], abs=0.01)


def test_nrho_direct_closes_when_re_propagated_by_scipy(nrho_direct):
    leg = json.loads(json.dumps(nrho_direct.to_dict()))
    _check_closure(em(), leg, nrho_9_2())


@pytest.mark.parametrize("request_text", ["halo L1 north az=12000km", "halo L2 north az=12000km"])
def test_direct_departures_to_halos(request_text):
    from cr3bp.orbits.request import solve_request
    orbit = solve_request(em(), request_text)
    d = design_departure(orbit, 200.0, path="direct")
    assert 3050.0 <= d.departure_dv_mps <= 3250.0       # TLI-like burn (common practice)
    assert 100.0 <= d.dv_mps - d.departure_dv_mps <= 1500.0
    _check_closure(em(), json.loads(json.dumps(d.to_dict())), orbit)


def test_inclination_constraint_is_met_and_costs_no_less_than_free(nrho_direct):
    d = design_departure(nrho_9_2(), 200.0, path="direct", inclination_deg=28.5)
    assert d.inclination_deg == pytest.approx(28.5, abs=1e-6)
    assert d.dv_mps >= nrho_direct.dv_mps - 0.5
    _check_closure(em(), d.to_dict(), nrho_9_2())
