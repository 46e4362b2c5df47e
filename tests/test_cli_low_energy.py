"""librate connect --path low-energy: the JSON of a low-energy transfer, its figure, and the
numbers of the JSON (the departure state and the patch points, in the rotating frame) re-propagated
independently -- scipy's DOP853 on the bicircular equations in the form of Simo, Gomez, Jorba &
Masdemont (1995), written out in tests/test_against_parker_anderson_low_energy.py -- closing on the
insertion point the JSON reports: the design -> output seam.

The sweep is cut to four Sun phases here (in-process, by the module constant) to keep the test
short; the benchmark runs the full one."""

import json
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from cr3bp import systems
from cr3bp.bicircular import bicircular_system
from cr3bp.transfers import low_energy as le
from librate_cli.main import main
from test_against_parker_anderson_low_energy import simo_rhs

EM = systems.system("earth-moon")
KEYS = {"path", "model", "maneuvers", "dv_mps", "departure_dv_mps", "insertion_dv_mps", "c3_km2_s2",
        "departure_speed_kms", "tof_days", "flyby_altitude_km", "max_distance_km", "inclination_deg",
        "sun_phase_deg", "optimised", "patches"}


@pytest.fixture(scope="module")
def low_energy(tmp_path_factory):
    out = tmp_path_factory.mktemp("le")
    mp = pytest.MonkeyPatch()
    mp.setattr(le, "SWEEP_SUN_PHASES", 4)
    try:
        argv = ["connect", "--system=earth-moon", "--from=parking earth 200km",
                "--to=halo L2 south resonance=9:2", "--path=low-energy", "--format=json",
                f"--out={out}/le.json", f"--plot={out}/le.png", "--quiet"]
        assert main(argv) == 0
    finally:
        mp.undo()
    return json.loads((out / "le.json").read_text()), out


def test_json_has_the_issue_fields_the_caution_and_the_model(low_energy):
    doc, out = low_energy
    assert "bicircular restricted four-body model" in doc["caution"]
    assert doc["model"] == le.MODEL
    (leg,) = doc["legs"]
    assert KEYS <= set(leg)
    assert leg["path"] == "low-energy" and leg["flyby_altitude_km"] is None
    assert [m["name"] for m in leg["maneuvers"]] == ["departure", "insertion"]
    for m in leg["maneuvers"]:
        assert {"name", "t_days", "dv_mps", "position_km"} <= set(m) and m["model"] == le.MODEL
    assert leg["dv_mps"] == pytest.approx(sum(m["dv_mps"] for m in leg["maneuvers"]))
    assert leg["maneuvers"][-1]["t_days"] == pytest.approx(leg["tof_days"])
    assert leg["departure_epoch_utc"] is None
    assert (out / "le.png").stat().st_size > 20_000


def test_the_json_numbers_re_propagated_by_scipy_reach_the_insertion_point(low_energy):
    """From the JSON alone: the Sun's phase at departure (degrees), the patch points and the
    insertion position (km) -- each coast propagated by scipy closes on the next one, the last
    on the insertion position, within the stated tolerance."""
    doc, _ = low_energy
    (leg,) = doc["legs"]
    model = bicircular_system(sun_phase=math.radians(leg["sun_phase_deg"]))
    args = (model.system.mu, model.sun_mass_ratio, model.sun_distance, -model.sun_rate, -model.sun_phase)
    tday = EM.days(1.0)
    patches = leg["patches"]
    assert np.allclose(patches[0]["state"], leg["departure_state"])
    times = [p["t_days"] / tday for p in patches] + [leg["tof_days"] / tday]
    targets = [np.asarray(p["state"][:3]) * EM.length_km for p in patches[1:]] + \
        [np.asarray(leg["maneuvers"][-1]["position_km"])]
    worst = 0.0
    for p, t0, t1, goal in zip(patches, times[:-1], times[1:], targets):
        sol = solve_ivp(simo_rhs, (t0, t1), p["state"], method="DOP853", rtol=1e-12, atol=1e-12, args=args)
        worst = max(worst, float(np.linalg.norm(sol.y[:3, -1] * EM.length_km - goal)))
    assert worst <= le.CLOSURE_TOL_KM, worst


@pytest.mark.parametrize("kw, word", [
    (dict(parking="parking moon 100km"), "parking"),
    (dict(max_tof="60d"), "max_tof"),
    (dict(max_tof=250.0), "max_tof"),
    (dict(parking="parking earth 60000km"), "altitude"),
])
def test_the_api_refuses_bad_input_before_any_work(kw, word):
    from cr3bp.api import low_energy_transfer
    from cr3bp.errors import InputError
    args = dict(target="halo L2 south resonance=9:2")
    args.update(kw)
    with pytest.raises(InputError, match=word):
        low_energy_transfer(**args)
