"""Writers and readers: CSV / JSON / OEM round trips, maneuver tables, sampling, bad input."""

import json

import numpy as np
import pytest

from cr3bp.time import frames
from cr3bp import propagate, system
from cr3bp.io import export
from cr3bp.errors import InputError
from cr3bp.orbits import PeriodicOrbit

ONE_MM_KM = 1e-6
ONE_UM_S_KMS = 1e-9
EM = system("earth-moon")
# UTC in the 2030s is past the leap-second table: the time-scale module warns, as it should
pytestmark = pytest.mark.filterwarnings("ignore::cr3bp.time.scales.LeapSecondsExpiredWarning")
STATE = [1.15, 0.0, 0.12, 0.0, -0.2, 0.0]


def _traj(ts="TDB", axes="j2000-equator", center="earth", anchor="ephemeris", maneuver=False, span=1.0):
    spec = frames.frame(EM, "2031-03-01T00:00:00Z", anchor=anchor, axes=axes, center=center)
    grid = export.epoch_grid(spec, ts, span, 1800.0)
    seg = export.sample(EM, STATE, grid)
    if not maneuver:
        return export.Trajectory(spec, (seg,), ts)
    k = grid.size // 2
    dv = np.array([0.002, 0.0, -0.001])
    s1 = seg.states[k].copy()
    s1[3:] += dv
    rest = propagate(EM, s1, float(grid[-1] - grid[k]), t_eval=grid[k:] - grid[k])
    segs = (export.Segment(seg.t_tu[: k + 1], seg.states[: k + 1]), export.Segment(grid[k:], rest.states))
    return export.Trajectory(spec, segs, ts, (export.Maneuver(float(grid[k]), dv, "burn-1"),))


# OEM has no rotating frame (its refusal is tested below)
@pytest.mark.parametrize("fmt, axes", [(f, a) for f in export.FORMATS
                                       for a in ("j2000-equator", "j2000-ecliptic", "rotating")
                                       if not (f in ("oem", "xml") and a == "rotating")])
def test_round_trip_back_to_rotating(tmp_path, fmt, axes):
    traj = _traj("UTC", axes=axes, center="moon", maneuver=True)
    path = export.write(tmp_path / f"t.{fmt}", traj)
    data = export.read(path)
    assert data.frame == traj.frame and data.time_system == "UTC"
    segs = export.to_rotating(data)
    assert len(segs) == 2
    for a, b in zip(segs, traj.segments):
        # file precision: 0.1 mm and 0.1 um/s per component, epochs to 1 us
        _, ia = frames.to_frame(traj.frame, a.t_tu, a.states)
        _, ib = frames.to_frame(traj.frame, b.t_tu, b.states)
        assert np.max(np.linalg.norm(ia[:, :3] - ib[:, :3], axis=1)) < ONE_MM_KM
        assert np.max(np.linalg.norm(ia[:, 3:] - ib[:, 3:], axis=1)) < ONE_UM_S_KMS
        assert np.max(np.abs(a.t_tu - b.t_tu)) * EM.time_s < 1e-6
    assert len(data.maneuvers) == 1
    back = export.trajectory_from(data)
    assert np.allclose(back.maneuvers[0].dv, traj.maneuvers[0].dv, atol=1e-12)


def test_csv_layout_and_maneuver_file(tmp_path):
    path = export.write_csv(tmp_path / "t.csv", _traj("TT", maneuver=True))
    text = path.read_text()
    lines = text.splitlines()
    assert lines[0].startswith("# librate trajectory")
    assert any("CAUTION: preliminary design" in ln for ln in lines if ln.startswith("#"))
    header = next(ln for ln in lines if not ln.startswith("#"))
    assert header == "segment,epoch_tt,x_km,y_km,z_km,vx_kms,vy_kms,vz_kms"
    man = export.maneuvers_path(path)
    assert man.name == "t.maneuvers.csv"
    mlines = man.read_text().splitlines()
    assert any("CAUTION" in ln for ln in mlines)
    row = [ln for ln in mlines if not ln.startswith("#")]
    assert row[0] == "epoch_tt,dvx_kms,dvy_kms,dvz_kms,dv_exported_mps,dv_design_mps,dv_change_percent,label"
    vals = row[1].split(",")
    dv = np.array([float(x) for x in vals[1:4]])
    assert abs(np.linalg.norm(dv) * 1000 - float(vals[4])) < 1e-9
    assert vals[7] == "burn-1"


@pytest.mark.parametrize("anchor", ["ephemeris", "circular"])
def test_exported_maneuvers_are_the_velocity_jumps_of_the_exported_trajectory(tmp_path, anchor):
    """The maneuver table is measured on the file's own trajectory (velocity after minus before
    at the maneuver epoch), and the design (CR3BP) Δv sits beside it, labelled; with the
    ephemeris anchoring the two differ by the instantaneous Earth-Moon distance over the length
    unit, and a warning line says so when that exceeds 1 %."""
    traj = _traj("TDB", anchor=anchor, maneuver=True)
    path = export.write_csv(tmp_path / "t.csv", traj)
    data = export.read(path)
    a, b = data.segments
    assert a.epochs[-1] == b.epochs[0]
    jump = b.states[0, 3:] - a.states[-1, 3:]                    # km/s, read back from the file
    mtext = export.maneuvers_path(path).read_text()
    lines = [ln for ln in mtext.splitlines() if not ln.startswith("#")]
    head, vals = lines[0].split(","), lines[1].split(",")
    row = dict(zip(head, vals))
    dv_file = np.array([float(row[k]) for k in ("dvx_kms", "dvy_kms", "dvz_kms")])
    assert np.abs(dv_file - jump).max() < 3e-10                 # the file's 1e-10 km/s print precision
    assert abs(float(row["dv_exported_mps"]) - np.linalg.norm(jump) * 1000) < 1e-6
    design = np.linalg.norm(traj.maneuvers[0].dv) * EM.velocity_kms * 1000
    assert abs(float(row["dv_design_mps"]) - design) < 1e-9
    assert "dv_design_mps: the maneuver's Δv in the design model, the CR3BP" in mtext
    assert "dv_exported_mps: the velocity jump of the exported trajectory" in mtext
    tdb = traj.frame.epoch_tdb_s + traj.maneuvers[0].t_tu * EM.time_s
    scale = frames.basis(traj.frame, [tdb])[2][0] / EM.length_km
    change = float(row["dv_change_percent"])
    if anchor == "ephemeris":
        assert abs(change - (scale - 1) * 100) < 1e-3
        assert abs(scale - 1) > 0.01                            # the epoch's Moon is 1 % off the mean
        assert "WARNING: 1 of 1 exported maneuvers differ from the design (CR3BP)" in mtext
    else:
        assert abs(change) < 1e-6 and "WARNING" not in mtext
    # the OEM and the JSON carry the same pair, labelled
    oem = export.write_oem(tmp_path / "t.oem", traj).read_text()
    assert f"dv_design_mps = {float(design)!r}"[:30] in oem and "dv_exported_mps = " in oem
    assert ("WARNING" in oem) == (anchor == "ephemeris")
    js = json.loads(export.write_json(tmp_path / "t.json", traj).read_text())
    m = js["maneuvers"][0]
    assert abs(m["dv_design_mps"] - design) < 1e-9 and abs(m["dv_exported_mps"] - float(row["dv_exported_mps"])) < 1e-9
    assert len(export.read(tmp_path / "t.oem").maneuvers) == 1


def test_json_keys(tmp_path):
    path = export.write_json(tmp_path / "t.json", _traj(maneuver=True))
    d = json.loads(path.read_text())
    for k in ("format", "caution", "creation_date", "originator", "object_name", "object_id", "model",
              "frame", "time_system", "center_name", "ref_frame", "units", "columns", "segments", "maneuvers"):
        assert k in d, k
    assert d["columns"] == ["epoch", "x_km", "y_km", "z_km", "vx_kms", "vy_kms", "vz_kms"]
    assert d["caution"].startswith("CAUTION: preliminary design")
    assert len(d["segments"]) == 2 and d["maneuvers"][0]["label"] == "burn-1"
    assert d["ref_frame"] == "EME2000" and d["center_name"] == "EARTH"


def test_oem_refuses_the_rotating_frame(tmp_path):
    with pytest.raises(InputError, match="OEM needs inertial axes"):
        export.write_oem(tmp_path / "t.oem", _traj(axes="rotating"))
    with pytest.raises(InputError, match="OEM needs inertial axes"):
        export.write_oem_xml(tmp_path / "t.xml", _traj(axes="rotating"))
    assert not list(tmp_path.iterdir())


def test_epoch_grid_is_even_on_the_output_clock():
    spec = frames.frame(EM, "2031-03-01T00:00:00Z")
    for ts in frames.TIME_SYSTEMS:
        t = export.epoch_grid(spec, ts, 2.0, 600.0)
        text = frames.epoch_to_text(spec.epoch_tdb_s + t * EM.time_s, ts)
        if ts == "UTC":
            assert text[0] == "2031-03-01T00:00:00.000000" and text[1] == "2031-03-01T00:10:00.000000"
        secs = np.array([float(x[17:]) for x in text]) % 600 if ts == "UTC" else None
        if secs is not None:
            assert np.max(np.minimum(secs, 600 - secs)) < 1e-6
        # steps of 600 s on that clock, to the microsecond
        stamps = np.array(list(text), dtype="datetime64[us]")
        assert np.all(np.diff(stamps) == np.timedelta64(600_000_000, "us"))


def test_span_in_periods_and_sampling_an_orbit_object():
    orbit = PeriodicOrbit(EM, np.array(STATE), 2.5, np.eye(6))
    span = export.parse_span("3periods", EM, orbit.period)
    assert span == 7.5
    assert export.parse_span("12d", EM) == pytest.approx(12 * 86400 / EM.time_s)
    seg = export.sample(EM, orbit, export.sample_grid(span, 0.5))
    assert seg.t_tu.size == 16 and seg.t_tu[-1] == pytest.approx(7.5)
    arc = propagate(EM, STATE, 7.5, t_eval=seg.t_tu)
    assert np.max(np.abs(arc.states - seg.states)) < 1e-12
    with pytest.raises(InputError, match="no period"):
        export.parse_span("3periods", EM, None)


@pytest.mark.parametrize("span, step, words", [
    (1.0, 2.0, "larger than the span"),
    (1.0, 0.0, "must be positive"),
    (1.0, -1.0, "must be positive"),
    (-1.0, 0.1, "must be positive"),
    (1e9, 1e-6, "exceed the limit"),
])
def test_bad_grids(span, step, words):
    with pytest.raises(InputError, match=words):
        export.sample_grid(span, step)


def test_readers_reject_foreign_or_broken_files(tmp_path):
    p = tmp_path / "x.oem"
    p.write_text("hello\n")
    with pytest.raises(InputError, match="not a KVN OEM"):
        export.read(p)
    j = tmp_path / "x.json"
    j.write_text("{broken")
    with pytest.raises(InputError, match="not valid JSON"):
        export.read(j)
    with pytest.raises(InputError, match="does not exist"):
        export.read(tmp_path / "none.csv")


def test_rotating_state_files_are_read(tmp_path):
    """A CSV or JSON of nondimensional rotating states (t, x..vz) -- e.g. from a propagation."""
    arc = propagate(EM, STATE, 1.0, t_eval=np.linspace(0, 1, 5))
    c = tmp_path / "arc.csv"
    c.write_text("# a comment\nt,x,y,z,vx,vy,vz\n" +
                 "".join(",".join(repr(float(v)) for v in [t, *s]) + "\n" for t, s in zip(arc.t, arc.states)))
    j = tmp_path / "arc.json"
    j.write_text(json.dumps({"t": arc.t.tolist(), "states": arc.states.tolist()}))
    for p in (c, j):
        data = export.read(p)
        assert data.frame is None
        seg = export.to_rotating(data)[0]
        assert np.array_equal(seg.t_tu, arc.t) and np.array_equal(seg.states, arc.states)


def test_write_failure_leaves_no_file(tmp_path, monkeypatch):
    traj = _traj()

    def boom(*a, **k):
        raise RuntimeError("disk full")
    monkeypatch.setattr(export, "_data_lines", boom)
    with pytest.raises(RuntimeError):
        export.write_oem(tmp_path / "t.oem", traj)
    assert not list(tmp_path.iterdir())


def test_sample_legs_makes_segments_and_maneuvers(tmp_path):
    """Two legs joined by a burn: two OEM segments sharing the burn epoch, one maneuver."""
    spec = frames.frame(EM, "2031-03-01T00:00:00Z", anchor="circular")
    grid = export.epoch_grid(spec, "UTC", 2.0, 3600.0)
    a = propagate(EM, STATE, 0.8123, t_eval=np.linspace(0, 0.8123, 5))
    s1 = a.states[-1].copy()
    s1[3:] += [0.0, 0.004, 0.001]
    b = propagate(EM, s1, 1.1877, t_eval=np.linspace(0, 1.1877, 5))
    leg_b = type("Leg", (), {"t": b.t + 0.8123, "states": b.states})()
    segs, mans = export.sample_legs(EM, [a, leg_b], grid, labels=["trim"])
    assert len(segs) == 2 and len(mans) == 1 and mans[0].label == "trim"
    assert segs[0].t_tu[-1] == segs[1].t_tu[0] == pytest.approx(0.8123)
    assert np.allclose(mans[0].dv, [0.0, 0.004, 0.001], atol=1e-15)
    assert np.allclose(segs[1].states[-1], b.states[-1], atol=1e-10)
    traj = export.Trajectory(spec, segs, "UTC", mans)
    r = export.read_oem(export.write_oem(tmp_path / "legs.oem", traj))
    assert len(r.segments) == 2 and r.maneuvers[0][0] == r.segments[1].epochs[0]
    broken = type("Leg", (), {"t": b.t + 0.9, "states": b.states})()
    with pytest.raises(InputError, match="does not start where"):
        export.sample_legs(EM, [a, broken], grid)


def test_files_of_the_propagate_command_are_read(tmp_path):
    """The layouts `librate propagate --out` writes: CSV columns t_tu, t_days, x_lu ... vz_vu,
    jacobi (+ km columns) after '#' comment lines, and a JSON summary with initial_state,
    final_state, t_final."""
    arc = propagate(EM, STATE, 1.0, t_eval=np.linspace(0, 1, 4))
    head = "t_tu,t_days,x_lu,y_lu,z_lu,vx_vu,vy_vu,vz_vu,jacobi,x_km,y_km,z_km,vx_kms,vy_kms,vz_kms"
    rows = [",".join(repr(float(v)) for v in [t, t * EM.time_days, *s, 3.0, *(s[:3] * EM.length_km),
                                                *(s[3:] * EM.velocity_kms)]) for t, s in zip(arc.t, arc.states)]
    c = tmp_path / "p.csv"
    c.write_text("# librate propagate: system earth-moon\n# CAUTION ...\n" + head + "\n" + "\n".join(rows) + "\n")
    seg = export.to_rotating(export.read(c))[0]
    assert np.array_equal(seg.t_tu, arc.t) and np.array_equal(seg.states, arc.states)
    j = tmp_path / "p.json"
    j.write_text(json.dumps({"system": "earth-moon", "status": "time", "t_final": 1.0,
                             "initial_state": STATE, "final_state": arc.states[-1].tolist()}))
    data = export.read(j)
    assert data.header["system"] == "earth-moon"
    seg = export.to_rotating(data)[0]
    assert np.array_equal(seg.t_tu, [0.0, 1.0]) and np.array_equal(seg.states[0], STATE)


def test_written_files_have_ordinary_permissions(tmp_path):
    """Atomic writes go through a 0o600 temporary file; the result must be readable like any
    file the user creates (0o666 less the umask), and an existing file keeps its mode."""
    import os
    import stat
    from cr3bp.io.atomic import NEW_FILE_MODE
    p = export.write_csv(tmp_path / "t.csv", _traj())
    assert stat.S_IMODE(os.stat(p).st_mode) == NEW_FILE_MODE
    os.chmod(p, 0o640)
    export.write_csv(p, _traj())
    assert stat.S_IMODE(os.stat(p).st_mode) == 0o640
