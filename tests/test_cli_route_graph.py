"""librate graph and librate route end to end on a small node list (in-process), their files,
exit statuses and one-line errors."""

import csv
import json

import pytest

from cr3bp.cautions import CAUTION
from librate_cli.main import main

from graph_fixtures import node_list_text, perturbed_states


@pytest.fixture(scope="module")
def nodes_file(tmp_path_factory):
    d = tmp_path_factory.mktemp("route")
    _, st = perturbed_states(4)
    p = d / "nodes.toml"
    p.write_text(node_list_text(st, chain=False, all_pairs=True, tof="2d", patches=2))
    return d, p


def run(capsys, *argv):
    rc = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return rc, out, err


def test_graph_build_then_show_reads_the_catalogue(capsys, nodes_file):
    d, p = nodes_file
    cat = d / "cat.sqlite"
    rc, out, err = run(capsys, "graph", "build", "--system", "earth-moon", "--nodes", p, "--catalog", cat,
                       "--workers", "1", "--format", "json")
    assert rc == 0, err
    body = json.loads(out)
    assert body["computed"] == 12 and body["cached"] == 0 and body["caution"] == CAUTION
    assert len(body["legs"]) == 12 and all(leg["status"] == "ok" for leg in body["legs"])
    assert "leg 12/12" in err
    rc, out, err = run(capsys, "graph", "show", "--system", "earth-moon", "--nodes", p, "--catalog", cat,
                       "--plot", d / "graph.png")
    assert rc == 0, err
    assert "0 computed now, 12 from the catalogue" in out and "CAUTION" in out
    assert (d / "graph.png").stat().st_size > 10_000


def test_route_end_to_end_with_files(capsys, nodes_file):
    d, p = nodes_file
    out_dir = d / "run1"
    rc, out, err = run(capsys, "route", "--system", "earth-moon", "--nodes", p, "--catalog", d / "cat.sqlite",
                       "--from", "p0", "--to", "p3", "--best", "3", "--pareto", "--max-tof", "7d",
                       "--plot", d / "corridor.png", "--out", out_dir, "--format", "json")
    assert rc == 0, err
    body = json.loads(out)
    routes = body["routes"]
    assert len(routes) == 3
    dv = [r["dv_total_mps"] for r in routes]
    assert dv == sorted(dv)
    for r in routes:
        assert r["dv_total_mps"] == pytest.approx(sum(leg["dv_mps"] for leg in r["legs"]), rel=1e-12)
        assert r["tof_days"] <= 7.0
    assert body["pareto"] and body["stitched"]["dv_total_mps"] <= routes[0]["dv_total_mps"]
    assert body["stitched"]["constraints"]["max_tof_days"]["holds"] is True
    for f in ("corridor.png", "corridor-pareto.png", "corridor-graph.png"):
        assert (d / f).stat().st_size > 10_000
    saved = json.loads((out_dir / "route.json").read_text())
    assert saved["caution"] == CAUTION and saved["stitched"]["nodes"][0] == "p0"
    text = (out_dir / "maneuvers.csv").read_text()
    assert "CAUTION" in text
    rows = list(csv.DictReader(line for line in text.splitlines() if not line.startswith("#")))
    assert len(rows) == len(body["stitched"]["maneuvers"])
    assert sum(float(r["dv_design_mps"]) for r in rows) == pytest.approx(body["stitched"]["dv_total_mps"], rel=1e-9)
    traj = [r for r in (out_dir / "trajectory.csv").read_text().splitlines() if not r.startswith("#")]
    assert traj[0].startswith("t_tu,t_days,segment,x_lu")


def test_route_table_output(capsys, nodes_file):
    d, p = nodes_file
    rc, out, err = run(capsys, "route", "--system", "earth-moon", "--nodes", p, "--catalog", d / "cat.sqlite",
                       "--from", "p0", "--to", "p3", "--best", "2", "--no-stitch", "-q")
    assert rc == 0 and err == ""
    assert "p0 -> p1 -> p2 -> p3" in out and "CAUTION" in out


def test_no_route_is_exit_3_with_the_binding_constraint(capsys, nodes_file):
    d, p = nodes_file
    rc, out, err = run(capsys, "route", "--system", "earth-moon", "--nodes", p, "--catalog", d / "cat.sqlite",
                       "--from", "p0", "--to", "p3", "--max-dv", "5m/s", "-q")
    assert rc == 3 and out == ""
    assert "max_dv_mps binds" in err and err.count("\n") == 1


@pytest.mark.parametrize("edit, expected", [
    (lambda t: t.replace('kind = "state"', 'kind = "stat"', 1), ":8: node[0].kind:"),
    (lambda t: t.replace('patches = 2', 'patches = "two"'), ":4: settings.patches:"),
    (lambda t: t + '[[edge]]\nfrom = "p0"\nto = "p9"\n', ":27: edge[0].to: no node is named 'p9'"),
])
def test_bad_node_list_is_exit_2_with_file_line_key(capsys, nodes_file, tmp_path, edit, expected):
    _, p = nodes_file
    bad = tmp_path / "bad.toml"
    bad.write_text(edit(p.read_text()))
    out_dir = tmp_path / "out"
    rc, out, err = run(capsys, "route", "--system", "earth-moon", "--nodes", bad, "--no-catalog",
                       "--from", "p0", "--to", "p3", "--out", out_dir)
    assert rc == 2 and out == ""
    assert f"{bad}{expected}" in err, err
    assert err.count("\n") == 1 and not out_dir.exists()


@pytest.mark.parametrize("args, message", [
    (["--from", "p0", "--to", "p0"], "same node"),
    (["--from", "nowhere", "--to", "p3"], "no node matches 'nowhere'"),
    (["--from", "p0", "--to", "p3", "--max-dv", "5km"], "velocity"),
    (["--from", "p0", "--to", "p3", "--best", "0"], "--best 0"),
    (["--from", "p0", "--to", "p3", "--plot", "x.jpg"], "must end in .png, .svg or .pdf"),
    (["--from", "p0", "--to", "p3", "--workers", "two"], "--workers"),
])
def test_bad_route_options_are_exit_2(capsys, nodes_file, args, message):
    d, p = nodes_file
    rc, out, err = run(capsys, "route", "--system", "earth-moon", "--nodes", p, "--no-catalog", *args)
    assert rc == 2 and message in err and err.count("\n") == 1, err


def test_leo_to_dock_in_one_leg_is_refused_with_the_cost_of_the_limit(capsys, tmp_path):
    from pathlib import Path
    example = Path(__file__).resolve().parent.parent / "examples" / "cislunar_nodes.toml"
    rc, out, err = run(capsys, "route", "--system", "earth-moon", "--nodes", example, "--no-catalog",
                       "--from", "parking earth 200km", "--to", "dock", "--max-legs", "1", "-q")
    assert rc == 3 and out == ""
    # leo -> relay is a direct departure (cr3bp.transfers.departure), so a chain of two legs
    # joins leo to dock; one leg is too few, and the refusal says what the limit costs
    assert "no route meets the constraints; max_legs binds" in err and "without it the best route costs" in err
    assert err.count("\n") == 1


def test_graph_build_on_a_dask_scheduler(capsys, nodes_file):
    distributed = pytest.importorskip("distributed")
    d, p = nodes_file
    rc0, out0, _ = run(capsys, "graph", "build", "--system", "earth-moon", "--nodes", p, "--no-catalog",
                       "--workers", "1", "--format", "json")
    with distributed.LocalCluster(processes=False, n_workers=1, threads_per_worker=1,
                                  dashboard_address=None) as cluster:
        rc, out, err = run(capsys, "graph", "build", "--system", "earth-moon", "--nodes", p, "--no-catalog",
                           "--scheduler", cluster.scheduler_address, "--format", "json")
    assert rc0 == rc == 0, err
    assert json.loads(out)["legs"] == json.loads(out0)["legs"]
    rc, out, err = run(capsys, "graph", "build", "--system", "earth-moon", "--nodes", p, "--no-catalog",
                       "--scheduler", "tcp://127.0.0.1:8786", "--workers", "2")
    assert rc == 2 and "not both" in err


def test_route_oem_with_an_epoch(capsys, nodes_file):
    """--epoch writes route.oem: one OEM segment per maneuver-free arc, read back by the
    independent `oem` package (a reader of the CCSDS standard)."""
    oem = pytest.importorskip("oem")
    d, p = nodes_file
    out_dir = d / "run_oem"
    rc, out, err = run(capsys, "route", "--system", "earth-moon", "--nodes", p, "--catalog", d / "cat.sqlite",
                       "--from", "p0", "--to", "p3", "--out", out_dir, "--epoch", "2025-03-01T00:00:00Z",
                       "--format", "json", "-q")
    assert rc == 0, err
    body = json.loads(out)
    n_man = len(body["stitched"]["maneuvers"])
    msg = oem.OrbitEphemerisMessage.open(str(out_dir / "route.oem"))
    segments = list(msg)
    assert len(segments) == n_man - 1                    # interior maneuvers split the arcs
    t_total = sum((s.useable_stop_time - s.useable_start_time).sec for s in segments)
    assert t_total / 86400.0 == pytest.approx(body["stitched"]["tof_days"], abs=1e-6)
    # route.json and maneuvers.csv carry the design (CR3BP) Δv and the Δv measured on route.oem
    # side by side, labelled; they agree with the OEM's MANEUVER lines
    saved = json.loads((out_dir / "route.json").read_text())
    key = "dv_exported_mps[route.oem]"
    assert "CR3BP" in saved["dv_models"]["dv_design_mps"] and "route.oem" in saved["dv_models"][key]
    from cr3bp.io import export
    read = export.read(out_dir / "route.oem")
    text = (out_dir / "route.oem").read_text()
    for m in saved["maneuvers"]:
        assert m["dv_design_mps"] == m["dv_mps"]
        assert f"dv_exported_mps = {m[key]!r}" in text
    assert len(read.maneuvers) == n_man
    mcsv = (out_dir / "maneuvers.csv").read_text()
    assert key in mcsv and "dv_design_mps" in mcsv
    rc, out, err = run(capsys, "route", "--system", "earth-moon", "--nodes", p, "--no-catalog",
                       "--from", "p0", "--to", "p3", "--epoch", "2025-03-01T00:00:00Z")
    assert rc == 2 and "--out" in err
