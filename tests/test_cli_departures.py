"""librate connect --path: the JSON of a departure from a parking orbit, its figure, and the
numbers of the JSON re-propagated independently (scipy's DOP853 on equations written out in
tests/_independent_cr3bp.py) closing on the target orbit: the design -> output seam."""

import json

import numpy as np
import pytest

import _independent_cr3bp as ind
from _orbit_cache import em
from cr3bp.transfers.departure import CLOSURE_TOL_KM
from librate_cli.main import main

KEYS = {"path", "maneuvers", "dv_mps", "departure_dv_mps", "c3_km2_s2", "tof_days", "flyby_altitude_km",
        "optimised"}


@pytest.fixture(scope="module")
def direct(tmp_path_factory):
    out = tmp_path_factory.mktemp("dep")
    argv = ["connect", "--system=earth-moon", "--from=parking earth 200km", "--to=halo L2 south resonance=9:2",
            "--path=direct", "--format=json", f"--out={out}/d.json", f"--plot={out}/d.png", "--quiet"]
    assert main(argv) == 0
    return json.loads((out / "d.json").read_text()), out


def test_json_has_the_issue_fields_the_caution_and_the_model(direct):
    doc, _ = direct
    assert "CAUTION" in json.dumps(doc)
    assert doc["model"] == "cr3bp"
    (leg,) = doc["legs"]
    assert KEYS <= set(leg)
    assert leg["path"] == "direct" and leg["flyby_altitude_km"] is None and leg["optimised"] is True
    assert [m["name"] for m in leg["maneuvers"]] == ["departure", "insertion"]
    for m in leg["maneuvers"]:
        assert {"name", "t_days", "dv_mps", "position_km"} <= set(m)
    assert leg["dv_mps"] == pytest.approx(sum(m["dv_mps"] for m in leg["maneuvers"]))
    assert leg["maneuvers"][-1]["t_days"] == pytest.approx(leg["tof_days"])


def test_json_numbers_close_on_the_target_orbit_scipy(direct):
    from cr3bp.orbits.request import solve_request
    doc, _ = direct
    (leg,) = doc["legs"]
    s = em()
    orbit = solve_request(s, "halo L2 south resonance=9:2")
    end = ind.propagate(s.mu, leg["departure_state"], leg["tof_days"] / s.days(1.0))
    ins = leg["maneuvers"][-1]
    assert np.linalg.norm(end[:3] * s.length_km - ins["position_km"]) < CLOSURE_TOL_KM
    on_orbit = ind.propagate(s.mu, orbit.state, leg["insertion_phase"] * orbit.period)
    assert np.linalg.norm(on_orbit[:3] * s.length_km - ins["position_km"]) < CLOSURE_TOL_KM
    assert s.mps(np.linalg.norm(on_orbit[3:] - end[3:])) == pytest.approx(ins["dv_mps"], abs=0.01)
    # the departure state lies on the 200 km parking circle
    r = np.linalg.norm(np.array(leg["departure_state"][:3]) - [-s.mu, 0, 0]) * s.length_km
    assert r - s.primary.radius_km == pytest.approx(200.0, abs=1e-3)


def test_figure_written(direct):
    _, out = direct
    data = (out / "d.png").read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and len(data) > 20_000


def test_table_names_the_model_and_carries_the_caution(capsys):
    argv = ["connect", "--system=earth-moon", "--from=parking earth 200km", "--to=halo L1 north az=12000km",
            "--path=direct", "--max-tof=6d", "--quiet"]
    assert main(argv) == 0
    text = capsys.readouterr().out
    assert "CR3BP total dv" in text and "CR3BP time of flight" in text and "CAUTION" in text
