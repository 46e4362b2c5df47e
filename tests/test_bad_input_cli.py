"""Bad input to every ``librate`` command (except ``run``, whose scenario checker has its own
suite): a table of cases plus property tests, each run in-process through
``librate_cli.main.main`` in a fresh folder.

Every case asserts: the documented exit status (2 for bad input unless the table says
otherwise), exactly one line on stderr starting ``librate:``, no 'Traceback', nothing on
stdout, and no file written or changed -- neither in the case's folder nor in the folder of
shared inputs. Refusals come from argument and file checks made before any computation, so the
whole file runs in well under a minute.

Inputs are given as ``--option=VALUE`` so a value starting with '-' stays the option's value.
"""

import errno
import json
import os
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from librate_cli.main import main

SETTINGS = settings(max_examples=25, deadline=None,
                    suppress_health_check=[HealthCheck.function_scoped_fixture])
EPOCH = "--epoch=2031-03-01T00:00:00Z"
EM = "--system=earth-moon"
LONG = "a" * 300


# ---- shared inputs ----------------------------------------------------------------------

NODES = """system = "earth-moon"
[settings]
tof = "2d"
patches = 2
[[node]]
name = "p0"
kind = "state"
state = [1.087849416, 0.0, 0.0, 0.0, -0.4, 0.0]
[[node]]
name = "p1"
kind = "state"
state = [1.070077685, -0.022077171, 0.001640139, 0.010708666, -0.423167028, 0.008927491]
[[edge]]
from = "p0"
to = "p1"
"""


def _catalogue(path, version="1", member_data=None):
    from cr3bp import system
    from cr3bp.catalog import Catalog
    cat = Catalog(path)
    fid = cat.begin_family(system("earth-moon"), "lyapunov", "L1", "", {"test": 1})
    cat.add_members(fid, [{"index": 0, "state": [0.8, 0, 0, 0, 0.1, 0], "period": 2.7, "jacobi": 3.1}])
    cat.finish_family(fid, [], complete=True)
    cat.close()
    db = sqlite3.connect(path)
    if version != "1":
        db.execute("UPDATE meta SET value=? WHERE key='schema_version'", (version,))
    if member_data is not None:
        db.execute("UPDATE members SET data=?", (member_data,))
    db.commit()
    db.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    db.close()


@pytest.fixture(scope="module")
def inputs(tmp_path_factory):
    d = tmp_path_factory.mktemp("inputs")
    (d / "nodes.toml").write_text(NODES)
    (d / "binary.toml").write_bytes(bytes(range(256)) * 8)
    (d / "deep.toml").write_text("a = " + "[" * 5000 + "]" * 5000 + "\n")
    (d / "folder.toml").mkdir()
    le = ('system = "earth-moon"\n[[node]]\nname = "leo"\nkind = "parking"\nbody = "earth"\naltitude = "200km"\n'
          '[[node]]\nname = "relay"\nkind = "orbit"\norbit = "halo L2 south resonance=9:2"\n[[edge]]\n')
    (d / "le-reversed.toml").write_text(le + 'from = "relay"\nto = "leo"\npath = "low-energy"\n')
    (d / "le-launch-bad.toml").write_text(le + 'from = "leo"\nto = "relay"\npath = "low-energy"\n'
                                          'launch = "1500-01-01T00:00:00Z"\n')
    (d / "le-launch-alone.toml").write_text(le + 'from = "leo"\nto = "relay"\nlaunch = "2027-03-01T00:00:00Z"\n')
    (d / "le-path-bogus.toml").write_text(le + 'from = "leo"\nto = "relay"\npath = "fast"\n')
    # a low-energy route folder (as librate route --out writes one) designed for launch on 2027-03-01
    (d / "le-route").mkdir()
    (d / "le-route" / "trajectory.csv").write_text("t_tu,x_lu,y_lu,z_lu,vx_vu,vy_vu,vz_vu\n"
                                                   "0,-0.0,0.017,0,-10.4,0,0\n0.01,-0.1,0.1,0,-5,1,0\n")
    (d / "le-route" / "route.json").write_text(json.dumps({
        "system": {"name": "earth-moon"}, "stitched": {"model": "bicircular", "maneuvers": [],
                                                       "model_record": {"sun_phase_rad": 1.0, "epoch_tdb_s": 857131269.184}}}))
    (d / "le-route-undated").mkdir()
    (d / "le-route-undated" / "trajectory.csv").write_text((d / "le-route" / "trajectory.csv").read_text())
    (d / "le-route-undated" / "route.json").write_text(json.dumps({
        "system": {"name": "earth-moon"}, "stitched": {"model": "bicircular", "maneuvers": [],
                                                       "model_record": {"sun_phase_rad": 1.0, "epoch_tdb_s": None}}}))
    # a good OEM and damaged copies of it
    rc = main(["export", EM, "--state=1.1805031,0,-0.02,0,-0.1581343,0", "--period=14.8177d", EPOCH,
               "--span=1d", "--step=2h", "--quiet", f"--out={d / 'good.oem'}"])
    assert rc == 0
    good = (d / "good.oem").read_text()
    lines = good.splitlines(keepends=True)
    data = [i for i, ln in enumerate(lines) if ln[:4].isdigit()]
    assert len(data) == 13

    def variant(name, text):
        (d / name).write_text(text)

    variant("frame.oem", good.replace("REF_FRAME = EME2000", "REF_FRAME = J2000_FOO"))
    centre = next(ln for ln in lines if ln.startswith("CENTER_NAME"))
    variant("centre.oem", good.replace(centre, "CENTER_NAME = PLUTO\n"))
    nan = lines[:]
    parts = nan[data[3]].split()
    nan[data[3]] = " ".join([parts[0], "nan"] + parts[2:]) + "\n"
    variant("nan.oem", "".join(nan))
    variant("truncated.oem", "".join(lines[:data[8]]))
    variant("cut-line.oem", "".join(lines[:data[8]]) + lines[data[8]][:30])
    rev = lines[:]
    rev[data[4]], rev[data[5]] = rev[data[5]], rev[data[4]]
    variant("reversed.oem", "".join(rev))
    dup = lines[:]
    dup[data[5]] = dup[data[4]]
    variant("repeated.oem", "".join(dup))
    (d / "binary.oem").write_bytes(b"CCSDS_OEM_VERS = 3.0\n" + bytes(range(128, 256)) * 4)
    variant("empty.oem", "")
    variant("injected.oem", good.replace("OBJECT_NAME = LIBRATE DESIGN", "OBJECT_NAME = X\nCOMMENT evil"))
    # rotating-state tables (what 'librate propagate --out' writes), good and bad
    rows = "t,x,y,z,vx,vy,vz\n" + "".join(f"{0.1 * k},1.1805031,0,-0.02,0,-0.1581343,0\n" for k in range(5))
    (d / "arc.csv").write_text(rows)
    (d / "arc-nan.csv").write_text(rows.replace("0.2,1.1805031", "0.2,nan"))
    (d / "arc-back.csv").write_text(rows.replace("0.30000000000000004,", "0.05,"))
    # a route.json as librate route --out writes it (the keys disperse --route reads; the whole
    # command is run by tests/test_dispersion.py), and files that are not one
    from cr3bp import system
    (d / "route.json").write_text(json.dumps({"system": system("earth-moon").to_dict(), "stitched": {
        "nodes": ["p0", "p1"], "tof_days": 1.0, "maneuvers": [
            {"t_days": 0.0, "node": "p0", "name": "departure", "dv_mps": 297.1,
             "state_after_lu": [1.087849416, 0.0, 0.0, 0.0, -0.4, 0.0]},
            {"t_days": 1.0, "node": "p1", "name": "insertion", "dv_mps": 458.6,
             "state_after_lu": [1.070077685, -0.022077171, 0.001640139, 0.010708666, -0.423167028, 0.008927491]}]}}))
    (d / "list.json").write_text("[1, 2]")
    (d / "unstitched.json").write_text('{"system": {"name": "earth-moon"}, "stitched": null}')
    # catalogues
    _catalogue(d / "cat.sqlite")
    _catalogue(d / "future.sqlite", version="99")
    _catalogue(d / "oldver.sqlite", version="0")
    _catalogue(d / "nonjson.sqlite", member_data="{not json")
    (d / "garbage.sqlite").write_bytes(b"SQLite format 3\x00" + os.urandom(8192))
    (d / "text.sqlite").write_text("not a database\n")
    (d / "folder.sqlite").mkdir()
    return d


def _listing(folder):
    """Every file below ``folder`` with its size and modification time."""
    out = {}
    for p in sorted(Path(folder).rglob("*")):
        s = p.lstat()
        out[str(p.relative_to(folder))] = (p.is_dir(), s.st_size, s.st_mtime_ns)
    return out


def refused(capsys, argv, status=2):
    """Run ``argv``; return (stderr line, exit status) after checking the one-line refusal."""
    try:
        rc = main(argv)
    except SystemExit as e:          # argparse's refusal (the real command exits with it)
        rc = e.code
    out, err = capsys.readouterr()
    lines = [ln for ln in err.splitlines() if not ln.startswith("librate: compiling")]
    assert "Traceback" not in err, (argv, err)
    assert rc == status, (argv, rc, err)
    assert len(lines) == 1 and lines[0].startswith("librate: "), (argv, err)
    assert out == "", (argv, out[:300])
    return lines[0], rc


def _fill(argv, d, out):
    return [a.replace("{in}", str(d)).replace("{out}", str(out)) for a in argv]


# ---- valid starting points, one per command (only their outputs or one value are spoiled) ----

BASE = {
    "systems": ["systems"],
    "points": ["points", EM],
    "propagate": ["propagate", EM, "--state=0.8234,0,0.0224,0,0.1343,0", "--time=1d"],
    "zvc": ["zvc", EM, "--jacobi=3.1", "--resolution=41"],
    "orbit": ["orbit", EM, "--family=lyapunov", "--point=L1", "--jacobi=3.17"],
    "family": ["family", EM, "--family=lyapunov", "--point=L1", "--members=3"],
    "catalog": ["catalog", "list", "--catalog={in}/cat.sqlite"],
    "manifold": ["manifold", EM, "--family=lyapunov", "--point=L1", "--jacobi=3.17", "--unstable", "--points=4"],
    "section": ["section", EM, "--tube=lyapunov L1 jacobi=3.17 unstable", "--section=x=1-mu", "--points=4"],
    "connect": ["connect", EM, "--from=lyapunov L1 jacobi=3.17", "--to=lyapunov L2 jacobi=3.17", "--points=4"],
    "graph": ["graph", "build", EM, "--nodes={in}/nodes.toml", "--workers=1", "--no-catalog"],
    "route": ["route", EM, "--nodes={in}/nodes.toml", "--from=p0", "--to=p1", "--workers=1", "--no-catalog"],
    "export": ["export", EM, "--state=1.1805031,0,-0.02,0,-0.1581343,0", "--period=14.8177d", EPOCH,
               "--span=1d", "--step=1h"],
    "convert": ["convert", "{in}/good.oem"],
    "refine": ["refine", EM, "--orbit=halo L2 south period=6.5626d", EPOCH, "--revs=1"],
    "torus": ["torus", EM, "--around=lyapunov L1 jacobi=3.17", "--amplitude=100km"],
    "shadow": ["shadow", EM, "--orbit=lyapunov L1 jacobi=3.17", EPOCH, "--span=2d"],
    "keep": ["keep", EM, "--orbit=halo L2 south period=6.5626d", EPOCH, "--trials=2", "--span=10d"],
    "disperse": ["disperse", EM, "--orbit=halo L2 south period=6.5626d", "--coast=5d", "--trials=2"],
}
#: the option each command writes its main output with (convert: the positional OUT)
OUT_OPTION = {"route": "--out", "family": "--plot", "convert": ""}
#: a suffix the output needs
OUT_SUFFIX = {"export": ".oem", "refine": ".oem", "convert": ".csv", "family": "", "zvc": ".csv"}


def _out_arg(cmd, path):
    opt = OUT_OPTION.get(cmd, "--out")
    return [path] if opt == "" else [f"{opt}={path}"]


def output_cases():
    """Every command's output spoiled: a folder, a 300-character name, an empty name, a regular
    file as a folder, a missing folder under a regular file."""
    cases = []
    for cmd in BASE:
        sfx = OUT_SUFFIX.get(cmd, ".json" if cmd != "route" else "")
        bad = {"folder": "{out}/adir", "long-name": "{out}/" + LONG + sfx, "empty": "",
               "file-as-folder": "{out}/afile/x" + sfx, "deep-under-file": "{out}/afile/a/b/x" + sfx}
        if cmd == "route":
            bad.pop("folder")          # route --out is a folder
            bad["file-not-folder"] = "{out}/afile"
        if cmd == "family":            # --plot PREFIX: PREFIX-family.png ('adir/' is allowed)
            bad.pop("folder")
            bad["long-name"] = "{out}/" + LONG
        for tag, path in bad.items():
            cases.append(pytest.param(BASE[cmd] + _out_arg(cmd, path), 2, id=f"{cmd}-out-{tag}"))
    # plots and the other outputs
    for cmd, opt, sfx in (("propagate", "--plot", ".png"), ("zvc", "--plot", ".png"), ("zvc", "--curves", ".csv"),
                          ("orbit", "--plot", ".png"), ("manifold", "--plot", ".png"),
                          ("section", "--plot", ".png"), ("connect", "--plot", ".png"),
                          ("graph", "--plot", ".png"), ("route", "--plot", ".png"), ("refine", "--plot", ".png")):
        for tag, path in (("folder", "{out}/adir"), ("long-name", "{out}/" + LONG + sfx),
                          ("file-as-folder", "{out}/afile/x" + sfx)):
            cases.append(pytest.param(BASE[cmd] + [f"{opt}={path}"], 2, id=f"{cmd}-plot{opt[2:]}-{tag}"))
    return cases


SAME_FILE = [
    ("graph-out-is-node-list", BASE["graph"] + ["--format=json", "--out={in}/nodes.toml"]),
    ("graph-plot-is-node-list", BASE["graph"] + ["--plot={in}/nodes.toml"]),
    ("route-out-is-node-list", BASE["route"] + ["--out={in}/nodes.toml"]),
    ("catalog-out-is-catalogue", ["catalog", "list", "--catalog={in}/cat.sqlite", "--format=json",
                                  "--out={in}/cat.sqlite"]),
    ("catalog-out-is-default-catalogue", ["catalog", "list", "--format=json",
                                          f"--out={os.environ['LIBRATE_CATALOG']}"]),
    ("graph-out-is-catalogue", ["graph", "build", EM, "--nodes={in}/nodes.toml", "--workers=1",
                                "--catalog={in}/cat.sqlite", "--out={in}/cat.sqlite"]),
    ("orbit-out-is-catalogue", BASE["orbit"] + ["--catalog={in}/cat.sqlite", "--out={in}/cat.sqlite"]),
    ("convert-in-is-out", ["convert", "{in}/good.oem", "{in}/good.oem"]),
    ("convert-in-is-out-by-another-name", ["convert", "{in}/good.oem", "{in}/./good.oem"]),
    ("export-from-is-out", ["export", EM, "--from={in}/arc.csv", EPOCH, "--out={in}/arc.csv"]),
    ("zvc-plot-is-curves", BASE["zvc"] + ["--plot={out}/a.png", "--curves={out}/a.png"]),
    ("refine-plot-is-out", BASE["refine"] + ["--out={out}/a.png", "--plot={out}/a.png"]),
]


def value_cases():
    c = []

    def add(cid, argv, status=2):
        c.append(pytest.param(argv, status, id=cid))

    P, Z, O, F = BASE["propagate"], BASE["zvc"], ["orbit", EM], ["family", EM]
    M, S, C = BASE["manifold"], BASE["section"], ["connect", EM]
    G, R, X, RF = BASE["graph"], BASE["route"], BASE["export"], BASE["refine"]
    # torus
    T = BASE["torus"]
    for v in ("-5km", "0km", "nankm", "infkm", "1e999km", "5kg", "five"):
        add(f"torus-amplitude-{v}", T[:-1] + [f"--amplitude={v}"])
    add("torus-hold-unknown", T + ["--hold=energy"])
    add("torus-around-unknown-family", T[:2] + ["--around=bagel L1 jacobi=3.17"] + T[3:])
    add("torus-around-empty", T[:2] + ["--around="] + T[3:])
    add("torus-around-control-char", T[:2] + ["--around=lyapunov L1\njacobi=3.17"] + T[3:])
    add("torus-plot-suffix", T + ["--plot={out}/t.bmp"])
    add("torus-format", T + ["--format=xml"])
    TQ = ["torus", EM]
    for cid, text in (("no-around", "quasi-halo halo L2 south resonance=9:2 amplitude=2000km"),
                      ("orbit-no-target", "quasi-halo around halo L2 south"),
                      ("unknown-key", "lissajous L2 ay=1000km az=1000km spin=3"),
                      ("unknown-family", "bagel L2 ay=1000km az=1000km"),
                      ("one-amplitude", "lissajous L2 ay=1000km"),
                      ("point", "lissajous L4 ay=1000km az=1000km"),
                      ("ratio", "lissajous L2 jacobi=3.1 frequency-ratio=1.5"),
                      ("ay-negative", "lissajous L2 ay=-5km az=1000km"),
                      ("period-unit", "quasi-halo around halo L2 south resonance=9:2 jacobi=3.04 period=5km"),
                      ("not-halo", "quasi-halo around lyapunov L1 jacobi=3.17 amplitude=100km"),
                      ("control-char", "lissajous L2\nay=1000km az=1000km"),
                      ("empty", "")):
        add(f"torus-request-{cid}", TQ + [f"--request={text}"])
    add("torus-request-and-around", T + ["--request=lissajous L2 ay=1000km az=1000km"])
    TE = T + ["--export={out}/t.oem", EPOCH, "--span=2periods", "--step=6h"]
    add("torus-export-no-step", TE[:-1])
    add("torus-export-no-epoch", T + ["--export={out}/t.oem", "--span=2periods", "--step=6h"])
    add("torus-export-span", TE[:-2] + ["--span=3km", "--step=6h"])
    add("torus-export-step", TE[:-1] + ["--step=-6h"])
    add("torus-export-phase", TE + ["--phase=30"])
    add("torus-export-phase-nan", TE + ["--phase=nan,0"])
    add("torus-export-oem-rotating", TE + ["--frame=rotating"])
    add("torus-export-suffix", T + ["--export={out}/t.bmp", EPOCH, "--span=2periods", "--step=6h"])
    add("torus-epoch-without-export", T + [EPOCH])
    add("torus-phase-without-export", T + ["--phase=10,20"])
    add("torus-export-with-members", TE + ["--members=3"])
    add("torus-html-suffix", T + ["--html={out}/t.png"])
    add("torus-html-folder", T + ["--html={out}"])
    add("torus-html-missing-folder", T + ["--html={out}/nowhere/t.html"])
    add("torus-html-with-members", T + ["--members=3", "--html={out}/t.html"])
    add("torus-html-is-plot", T + ["--html={out}/t.html", "--plot={out}/t.html"])
    # orbit --family lissajous (a torus)
    OL = ["orbit", EM, "--family=lissajous", "--point=L2", "--ay=3000km", "--az=2000km"]
    add("orbit-lissajous-period", OL + ["--period=3d"])
    add("orbit-lissajous-branch", OL + ["--branch=south"])
    add("orbit-lissajous-point", ["orbit", EM, "--family=lissajous", "--point=L3", "--ay=3000km",
                                  "--az=2000km"])
    add("orbit-lissajous-no-az", OL[:-1])
    add("orbit-lissajous-ay-unit", OL[:-2] + ["--ay=3000", "--az=2000km"])
    # shadow
    SH = BASE["shadow"]
    for v in ("-1d", "0d", "nand", "1e999d", "3km", "3"):
        add(f"shadow-span-{v}", SH[:-1] + [f"--span={v}"])
    for v in ("-5min", "0s", "1km"):
        add(f"shadow-step-{v}", SH + [f"--step={v}"])
    for v in ("nandeg", "1e999deg", "5km"):
        add(f"shadow-phase-{v}", SH + [f"--phase={v}"])
    for v in ("0", "-3", "2.5", "x"):
        add(f"shadow-phases-{v}", SH + ["--avoid-eclipses", f"--phases={v}"])
    add("shadow-phase-and-avoid", SH + ["--phase=10deg", "--avoid-eclipses"])
    add("shadow-max-eclipse-negative", SH + ["--avoid-eclipses", "--max-eclipse=-5min"])
    add("shadow-bodies-unknown", SH + ["--bodies=earth,mars"])
    add("shadow-epoch-bad", SH[:3] + ["--epoch=2031-13-01T00:00:00Z", "--span=2d"])
    add("shadow-epoch-beyond-tables", SH[:3] + ["--epoch=2200-01-01T00:00:00Z", "--span=2d"])
    add("shadow-stations-missing", SH + ["--stations={in}/none.toml"])
    add("shadow-stations-binary", SH + ["--stations={in}/binary.toml"])
    add("shadow-no-ephemeris", ["shadow", "--system=jupiter-europa", "--orbit=lyapunov L1 jacobi=3.0", EPOCH])
    add("shadow-plot-suffix", SH + ["--plot={out}/t.bmp"])
    add("shadow-until-epoch-before", SH + ["--until-epoch=2031-02-01T00:00:00Z"])
    add("shadow-until-epoch-equal", SH + ["--until-epoch=2031-03-01T00:00:00Z"])
    add("shadow-until-epoch-bad", SH + ["--until-epoch=2031-02-30T00:00:00Z"])
    add("shadow-until-epoch-text", SH + ["--until-epoch=tomorrow"])
    add("shadow-until-epoch-beyond-tables", SH + ["--until-epoch=2200-01-01T00:00:00Z"])
    for v in ("1", "201", "x", "2.5"):
        add(f"shadow-epochs-{v}", SH + ["--until-epoch=2031-04-01T00:00:00Z", f"--epochs={v}"])
    add("shadow-system-unsupported", ["shadow", "--system=sun-jupiter", "--orbit=lyapunov L1 jacobi=3.0", EPOCH])
    # shadow along a trajectory file
    ST = ["shadow", "--trajectory={in}/good.oem"]
    add("shadow-trajectory-missing", ["shadow", "--trajectory={in}/none.oem"])
    add("shadow-trajectory-folder", ["shadow", "--trajectory={in}/folder.toml"])
    add("shadow-trajectory-binary", ["shadow", "--trajectory={in}/binary.oem"])
    add("shadow-trajectory-truncated", ["shadow", "--trajectory={in}/truncated.oem"])
    add("shadow-trajectory-nan", ["shadow", "--trajectory={in}/nan.oem"])
    add("shadow-trajectory-and-orbit", ST + ["--orbit=lyapunov L1 jacobi=3.17"])
    add("shadow-trajectory-phase", ST + ["--phase=10deg"])
    add("shadow-trajectory-avoid", ST + ["--avoid-eclipses"])
    add("shadow-trajectory-span", ST + ["--span=2d"])
    add("shadow-trajectory-until-epoch", ST + ["--until-epoch=2031-04-01T00:00:00Z"])
    add("shadow-trajectory-epoch-given", ST + [EPOCH])
    add("shadow-trajectory-step-tu", ST + ["--step=0.01TU"])
    add("shadow-trajectory-other-system", ST + ["--system=sun-earth"])
    add("shadow-trajectory-rotating-no-epoch", ["shadow", "--trajectory={in}/arc.csv"])
    add("shadow-neither-orbit-nor-trajectory", ["shadow", EM, EPOCH])
    add("shadow-orbit-without-epoch", ["shadow", EM, "--orbit=lyapunov L1 jacobi=3.17"])
    # shadow on a torus
    TQ = "--torus=quasi-halo around halo L1 north az=10000km amplitude=300km"
    SHT = ["shadow", EM, TQ, EPOCH, "--span=2d"]
    add("shadow-torus-and-orbit", SHT + ["--orbit=lyapunov L1 jacobi=3.17"])
    add("shadow-torus-and-trajectory", SHT + ["--trajectory={in}/good.oem"])
    add("shadow-torus-without-epoch", ["shadow", EM, TQ])
    add("shadow-torus-family-unknown", ["shadow", EM, "--torus=quasi-bagel around halo L1 north az=10000km "
                                        "amplitude=300km", EPOCH])
    add("shadow-torus-amplitude-negative", ["shadow", EM, "--torus=quasi-halo around halo L1 north az=10000km "
                                            "amplitude=-300km", EPOCH])
    add("shadow-torus-sun-jupiter", ["shadow", "--system=sun-jupiter", "--torus=lissajous L2 ay=800000km "
                                     "az=500000km", EPOCH])
    for v in ("10", "nan,0", "10,20,30", "a,b", "inf,0"):
        add(f"shadow-torus-phase-{v}", SHT + [f"--torus-phase={v}"])
    add("shadow-torus-phase-without-torus", SH + ["--torus-phase=10,20"])
    add("shadow-torus-phase-with-trajectory", ST + ["--torus-phase=10,20"])
    add("shadow-torus-phase-bad-step", SHT + ["--step=1s"])
    # family --atlas, and the tube commands' --workers/--scheduler (scale-out)
    FA = ["family", EM, "--members=3"]
    add("family-atlas-empty", FA + ["--atlas="])
    add("family-atlas-empty-entry", FA + ["--atlas=lyapunov L1,,lyapunov L2"])
    add("family-atlas-repeated", FA + ["--atlas=lyapunov L1, lyapunov L1"])
    add("family-atlas-unknown-family", FA + ["--atlas=lyapunov L1, bagel L2"])
    add("family-atlas-with-target", FA + ["--atlas=lyapunov L1 jacobi=3.17"])
    add("family-atlas-and-family", FA + ["--atlas=lyapunov L1", "--family=halo"])
    add("family-atlas-and-step", FA + ["--atlas=lyapunov L1", "--step=0.01"])
    add("family-atlas-and-plots", FA + ["--atlas=lyapunov L1", "--plots={out}/f"])
    add("family-atlas-natural", FA + ["--atlas=lyapunov L1", "--method=natural", "--parameter=x"])
    add("family-atlas-members", ["family", EM, "--members=1", "--atlas=lyapunov L1"])
    add("family-atlas-workers-zero", FA + ["--atlas=lyapunov L1", "--workers=0"])
    add("family-atlas-scheduler-junk", FA + ["--atlas=lyapunov L1", "--scheduler=my-cluster"])
    add("family-atlas-scheduler-local-0", FA + ["--atlas=lyapunov L1", "--scheduler=local:0"])
    add("family-atlas-scheduler-and-workers", FA + ["--atlas=lyapunov L1", "--scheduler=local:2", "--workers=2"])
    add("family-atlas-remote-and-workers", FA + ["--atlas=lyapunov L1", "--scheduler=tcp://127.0.0.1:1",
                                                 "--workers=2"])
    add("family-atlas-unreachable", FA + ["--atlas=lyapunov L1", "--scheduler=tcp://127.0.0.1:1"])
    add("family-neither-family-nor-atlas", FA)
    add("family-workers-without-atlas", BASE["family"] + ["--workers=2"])
    add("manifold-workers-zero", M + ["--workers=0"])
    add("manifold-scheduler-junk", M + ["--scheduler=nowhere"])
    add("manifold-scheduler-local-and-workers", M + ["--scheduler=local:2", "--workers=2"])
    add("manifold-workers-lagrange", ["manifold", EM, "--lagrange=L1", "--unstable", "--workers=2"])
    MT = ["manifold", EM, "--torus=quasi-halo around halo L1 north az=10000km amplitude=300km", "--unstable"]
    add("manifold-torus-workers-zero", MT + ["--workers=0"])
    add("manifold-torus-scheduler-junk", MT + ["--scheduler=nowhere"])
    add("manifold-torus-scheduler-local-and-workers", MT + ["--scheduler=local:2", "--workers=2"])
    add("section-workers-zero", S + ["--workers=0"])
    add("section-scheduler-junk", S + ["--scheduler=nowhere"])
    add("section-workers-apsis", ["section", EM, "--tube=lyapunov L1 jacobi=3.17 unstable",
                                  "--section=periapsis:moon", "--points=4", "--workers=2"])
    # keep
    K = BASE["keep"]
    for v in ("1km", "1km,1cm/s,2", "-1km,1cm/s", "1km,-1cm/s", "1kg,1cm/s", "1km,1cm", "nankm,1cm/s"):
        add(f"keep-nav-error-{v}", K + [f"--nav-error={v}"])
    for v in ("1,1mm/s", "101%,1mm/s", "-1%,1mm/s", "1%,1mm", "1%"):
        add(f"keep-burn-error-{v}", K + [f"--burn-error={v}"])
    for v in ("-1cm/s", "1cm", "x"):
        add(f"keep-min-burn-{v}", K + [f"--min-burn={v}"])
    for v in ("0", "-2", "2.5", "x"):
        add(f"keep-trials-{v}", K[:-2] + [f"--trials={v}", "--span=10d"])
    for v in ("0", "11"):
        add(f"keep-target-revs-{v}", K + [f"--target-revs={v}"])
    for v in ("-1d", "0d", "3km", "2d"):
        add(f"keep-span-{v}", K[:-1] + [f"--span={v}"])
    add("keep-interval-too-long", K + ["--interval=30d"])
    add("keep-policy-unknown", K + ["--policy=sideways"])
    add("keep-floquet-target-revs-zero", K + ["--policy=floquet", "--target-revs=0"])
    add("keep-floquet-hold-phase", K + ["--policy=floquet", "--hold-phase"])
    add("keep-seed-negative", K + ["--seed=-1"])
    add("keep-workers-zero", K + ["--workers=0"])
    add("keep-bodies-unknown", K + ["--bodies=sun,pluto"])
    add("keep-srp-no-unit", K + ["--srp=0.01,1.3"])
    add("keep-no-ephemeris", ["keep", "--system=jupiter-europa", "--orbit=lyapunov L1 jacobi=3.0", EPOCH])
    add("keep-epoch-bad", K[:3] + ["--epoch=2031-13-01T00:00:00Z"])
    add("keep-plot-suffix", K + ["--plot={out}/t.bmp"])
    add("keep-format", K + ["--format=csv"])
    add("keep-scheduler-scheme", K + ["--scheduler=ftp://10.0.0.5:8786"])
    add("keep-scheduler-empty", K + ["--scheduler="])
    add("keep-scheduler-and-workers", K + ["--scheduler=tcp://127.0.0.1:8786", "--workers=2"])
    for v in ("local:0", "local:x", "local:65", "local:", "local:-1"):
        add(f"keep-scheduler-{v}", K + [f"--scheduler={v}"])
    add("keep-scheduler-local-n-and-workers", K + ["--scheduler=local:2", "--workers=2"])
    # disperse
    D = BASE["disperse"]
    for v in ("0d", "-1d", "nand", "5", "5km", "2000d"):
        add(f"disperse-coast-{v}", D[:3] + [f"--coast={v}", "--trials=2"])
    for v in ("6d", "5d", "2d,1d", "1d,,2d", "-1d", "1km", "1d,1d"):
        add(f"disperse-corrections-{v}", D + [f"--corrections={v}"])
    add("disperse-corrections-too-many", D + ["--corrections=" + ",".join(f"{0.1 * (k + 1):.1f}d" for k in range(21))])
    for v in ("-1m/s", "1", "nanm/s", "200km/s"):
        add(f"disperse-burn-{v}", D + [f"--burn={v}"])
    for v in ("abc", "nandeg"):
        add(f"disperse-arrive-phase-{v}", D + [f"--arrive-phase={v}"])
    add("disperse-branch", D + ["--branch=middle"])
    add("disperse-workers-zero", D + ["--workers=0"])
    add("disperse-scheduler-junk", D + ["--scheduler=my-cluster"])
    add("disperse-scheduler-local-0", D + ["--scheduler=local:0"])
    add("disperse-scheduler-local-and-workers", D + ["--scheduler=local:2", "--workers=2"])
    add("disperse-nav-error", D + ["--nav-error=1km"])
    add("disperse-burn-error", D + ["--burn-error=1,1mm/s"])
    add("disperse-trials-zero", D[:-1] + ["--trials=0"])
    add("disperse-seed-negative", D + ["--seed=-1"])
    add("disperse-no-units", ["disperse", "--mu=0.01", "--orbit=lyapunov L1 jacobi=3.0", "--coast=1TU"])
    add("disperse-format", D + ["--format=csv"])
    # disperse on the last maneuver of a route (route.json of librate route --out)
    DR = ["disperse", "--route={in}/route.json", "--trials=2"]
    add("disperse-route-missing", ["disperse", "--route={in}/none.json", "--trials=2"])
    add("disperse-route-not-json", ["disperse", "--route={in}/nodes.toml", "--trials=2"])
    add("disperse-route-not-a-route", ["disperse", "--route={in}/list.json", "--trials=2"])
    add("disperse-route-not-stitched", ["disperse", "--route={in}/unstitched.json", "--trials=2"])
    add("disperse-route-folder", ["disperse", "--route={in}/folder.toml", "--trials=2"])
    add("disperse-route-and-orbit", DR + ["--orbit=halo L2 south period=6.5626d"])
    add("disperse-route-coast", DR + ["--coast=1d"])
    add("disperse-route-burn", DR + ["--burn=1m/s"])
    add("disperse-route-branch", DR + ["--branch=exterior"])
    add("disperse-route-arrive-phase", DR + ["--arrive-phase=10deg"])
    add("disperse-route-correction-after-end", DR + ["--corrections=0.5d,1d"])
    add("disperse-route-other-system", DR + ["--system=sun-earth"])
    add("disperse-neither-orbit-nor-route", ["disperse", EM, "--trials=2"])
    add("disperse-orbit-without-coast", ["disperse", EM, "--orbit=halo L2 south period=6.5626d", "--trials=2"])
    # systems, points
    add("systems-format", ["systems", "--format=xml"])
    add("points-mu-nan", ["points", "--mu=nan"])
    add("points-mu-big", ["points", "--mu=0.7"])
    add("points-mu-inf", ["points", "--mu=inf"])
    add("points-length-without-mu", ["points", EM, "--length-km=384400"])
    add("points-length-nan", ["points", "--mu=0.01", "--length-km=nan"])
    add("points-time-inf", ["points", "--mu=0.01", "--length-km=1000", "--time-s=inf"])
    add("points-unknown-system", ["points", "--system=earth-pluto"])
    add("points-system-control-char", ["points", "--system=earth\nmoon"])
    # propagate
    for v in ("-1h", "0h", "nanh", "1", "1km", "-0s", "1e999h"):
        add(f"propagate-step-{v}", P + [f"--step={v}"])
    for v in ("nand", "1e999d", "3", "3km", "", "1d2", "--"):
        add(f"propagate-time-{v or 'empty'}", P[:-1] + [f"--time={v}"])
    for v in ("0", "nan", "1e-20", "1", "-1e-12", "x"):
        add(f"propagate-rtol-{v}", P + [f"--rtol={v}"])
        add(f"propagate-atol-{v}", P + [f"--atol={v}"])
    for v in ("1,2,3,4,5", "nan,0,0,0,0,0", "inf,0,0,0,0,0", "-0.012150585,0,0,0,0,0", "a,b,c,d,e,f",
              "1,2,3,4,5,6,7", ""):
        add(f"propagate-state-{v or 'empty'}", [P[0], EM, f"--state={v}", "--time=1d"])
    add("propagate-km-without-units", ["propagate", "--mu=0.01", "--state=0.8,0,0,0,0.1,0", "--km", "--time=1TU"])
    add("propagate-plot-suffix", P + ["--plot={out}/x.txt"])
    add("propagate-step-too-fine", P + ["--step=1e-6s"])
    # zvc
    for v in ("nan", "inf", "-inf", "1e999", "3,1", "", "0x3"):
        add(f"zvc-jacobi-{v or 'empty'}", ["zvc", EM, f"--jacobi={v}"])
    for v in ("-5m/s", "nanm/s", "5", "5km", "1e999m/s"):
        add(f"zvc-dv-{v}", ["zvc", EM, "--above=L1", f"--dv={v}"])
    for v in ("10", "5000", "abc", "601.5", "nan"):
        add(f"zvc-resolution-{v}", Z[:-1] + [f"--resolution={v}"])
    add("zvc-extent-nan", Z + ["--extent=nan,1,0,1", "--plot={out}/x.png"])
    add("zvc-extent-reversed", Z + ["--extent=1,0,0,1", "--plot={out}/x.png"])
    add("zvc-extent-time", Z + ["--extent=0,1,0,3d", "--plot={out}/x.png"])
    add("zvc-plane", Z + ["--plane=yz"])
    add("zvc-extent-without-plot", Z + ["--extent=0,1,0,1"])
    # orbit
    L1 = ["--family=lyapunov", "--point=L1"]
    for v in ("nan", "inf", "-inf", "x", "1e999", ""):
        add(f"orbit-jacobi-{v or 'empty'}", O + L1 + [f"--jacobi={v}"])
    for opt, v in (("period", "-1d"), ("period", "0d"), ("period", "nand"), ("period", "12"), ("period", "12km"),
                   ("az", "-5km"), ("az", "5d"), ("ax", "0km"), ("perilune", "-1km"), ("perilune", "1e999km"),
                   ("x", "nan"), ("resonance", "9:0"), ("resonance", "x:2"), ("resonance", "9/2")):
        add(f"orbit-{opt}-{v}", O + (["--family=halo", "--point=L2", "--branch=south"] if opt in ("az", "perilune",
                                      "resonance") else L1) + [f"--{opt}={v}"])
    add("orbit-dro-with-point", O + ["--family=dro", "--point=L1", "--period=10d"])
    add("orbit-dro-with-branch", O + ["--family=dro", "--branch=south", "--period=10d"])
    add("orbit-lyapunov-with-branch", O + L1 + ["--branch=north", "--jacobi=3.17"])
    add("orbit-resonant-with-point", O + ["--family=resonant", "--ratio=3:2", "--point=L1", "--jacobi=2.9"])
    add("orbit-halo-without-branch", O + ["--family=halo", "--point=L2", "--period=12d"])
    add("orbit-halo-bad-branch", O + ["--family=halo", "--point=L2", "--branch=east", "--period=12d"])
    add("orbit-unknown-family", O + ["--family=spiral", "--point=L1", "--jacobi=3.1"])
    add("orbit-point-L4", O + ["--family=lyapunov", "--point=L4", "--jacobi=3.1"])
    add("orbit-vertical-L3", O + ["--family=vertical", "--point=L3", "--jacobi=3.1"])
    add("orbit-two-targets", O + L1 + ["--jacobi=3.1", "--period=12d"])
    add("orbit-no-target", O + L1)
    for v in ("0", "-1", "1.5", "x", "nan"):
        add(f"orbit-occurrence-{v}", O + L1 + ["--jacobi=3.17", f"--occurrence={v}"])
    add("orbit-resonance-sun-earth", ["orbit", "--system=sun-earth", "--family=halo", "--point=L2",
                                      "--branch=south", "--resonance=9:2"])
    add("orbit-plot-suffix", O + L1 + ["--jacobi=3.17", "--plot={out}/x.gif"])
    add("orbit-units-on-custom", ["orbit", "--mu=0.01", "--family=lyapunov", "--point=L1", "--period=12d"])
    # family
    for v in ("jacobi=nan", "jacobi=inf", "period=-1d", "period=12", "az=5d", "foo=1", "jacobi", "=3", "jacobi="):
        add(f"family-until-{v}", F + L1 + [f"--until={v}"])
    for v in ("1", "6000", "-3", "x", "2.5"):
        add(f"family-members-{v}", F + L1 + [f"--members={v}"])
    for opt, v in (("step", "-0.1"), ("step", "nan"), ("step", "2"), ("step", "0"), ("max-step", "inf"),
                   ("max-step", "-1"), ("altitude", "-5km"), ("altitude", "5"), ("altitude", "5d")):
        add(f"family-{opt}-{v}", F + L1 + [f"--{opt}={v}"])
    add("family-dro-with-point", F + ["--family=dro", "--point=L1"])
    add("family-natural-without-parameter", F + L1 + ["--method=natural"])
    add("family-route-for-lyapunov", F + L1 + ["--route=branch"])
    add("family-route-with-step", F + ["--family=halo", "--point=L1", "--branch=north", "--route=seed", "--step=0.01"])
    add("family-plot-missing-folder", F + L1 + ["--plot={out}/nowhere/x"])
    add("family-plots-missing-folder", F + L1 + ["--plots={out}/nowhere/x"])
    # catalog
    add("catalog-show-missing", ["catalog", "show", "999", "--catalog={in}/cat.sqlite"])
    add("catalog-remove-missing", ["catalog", "remove", "999", "--catalog={in}/cat.sqlite"])
    add("catalog-show-not-number", ["catalog", "show", "x", "--catalog={in}/cat.sqlite"])
    add("catalog-find-no-target", ["catalog", "find", EM, "--family=lyapunov", "--point=L1", "--catalog={in}/cat.sqlite"])
    add("catalog-find-jacobi-nan", ["catalog", "find", EM, "--family=lyapunov", "--point=L1", "--jacobi=nan",
                                    "--catalog={in}/cat.sqlite"])
    add("catalog-no-action", ["catalog"])
    for name in ("future", "oldver", "garbage", "text", "folder"):
        add(f"catalog-list-{name}", ["catalog", "list", f"--catalog={{in}}/{name}.sqlite"])
        add(f"orbit-catalogue-{name}", O + L1 + ["--jacobi=3.17", f"--catalog={{in}}/{name}.sqlite"])
    add("catalog-show-nonjson-member", ["catalog", "show", "1", "--catalog={in}/nonjson.sqlite"])
    add("catalog-find-nonjson-member", ["catalog", "find", EM, "--family=lyapunov", "--point=L1",
                                        "--jacobi=3.1", "--catalog={in}/nonjson.sqlite"])
    # --catalog [PATH] means the same in every command; an empty PATH is refused
    add("catalog-empty-path", ["catalog", "list", "--catalog="])
    add("orbit-catalog-empty-path", O + L1 + ["--jacobi=3.17", "--catalog="])
    add("graph-catalog-empty-path", G[:-1] + ["--catalog="])
    # manifold
    for v in ("0", "1", "-5", "x", "1e9"):
        add(f"manifold-points-{v}", M[:-1] + [f"--points={v}"])
    for v in ("9:0", "x:2", "9/2"):
        add(f"manifold-resonance-{v}", ["manifold", EM, "--family=halo", "--point=L2", "--halo-branch=south",
                                        f"--resonance={v}", "--unstable", "--points=4"])
    add("manifold-resonance-and-jacobi", M + ["--resonance=9:2"])
    add("manifold-plot-suffix", M + ["--plot={out}/m.gif"])
    add("manifold-lagrange-with-orbit", ["manifold", EM, "--lagrange=L1", "--orbit=lyapunov L1 jacobi=3.17", "--unstable"])
    add("manifold-lagrange-with-family", M + ["--lagrange=L1"])
    add("manifold-lagrange-L4", ["manifold", EM, "--lagrange=L4", "--unstable"])
    add("manifold-no-direction", ["manifold", EM, "--orbit=lyapunov L1 jacobi=3.17"])
    # manifold --torus, section --tube TORUS (manifolds of a hyperbolic torus)
    TQH = "quasi-halo around halo L1 north az=10000km amplitude=300km"
    MT = ["manifold", EM, f"--torus={TQH}", "--unstable", "--points=4"]
    add("manifold-torus-with-orbit", MT + ["--orbit=lyapunov L1 jacobi=3.17"])
    add("manifold-torus-with-family", MT + ["--family=halo"])
    add("manifold-torus-with-lagrange", MT + ["--lagrange=L1"])
    add("manifold-torus-spacing", MT + ["--spacing=arc"])
    add("manifold-torus-unknown-family", ["manifold", EM, "--torus=quasi-bagel around halo L1 north az=10000km "
                                          "amplitude=300km", "--unstable"])
    add("manifold-torus-around-lyapunov", ["manifold", EM, "--torus=quasi-halo around lyapunov L1 ax=5000km "
                                           "amplitude=300km", "--unstable"])
    add("manifold-torus-amplitude-unit", ["manifold", EM, "--torus=quasi-halo around halo L1 north az=10000km "
                                          "amplitude=300parsec", "--unstable"])
    add("manifold-torus-no-direction", ["manifold", EM, f"--torus={TQH}"])
    add("manifold-torus-points-0", MT[:-1] + ["--points=0"])
    add("manifold-torus-until", MT + ["--until=time:-1d"])
    add("section-torus-tube-no-stability", ["section", EM, f"--tube={TQH}", "--section=x=1-mu", "--points=4"])
    add("section-torus-tube-bad-request", ["section", EM, "--tube=lissajous L4 ay=1000km az=1000km unstable",
                                           "--section=x=1-mu", "--points=4"])
    add("section-torus-tube-bad-amplitude", ["section", EM, "--tube=quasi-halo around halo L1 north az=10000km "
                                             "amplitude=-3km unstable", "--section=x=1-mu", "--points=4"])
    add("manifold-orbit-and-family", ["manifold", EM, "--orbit=lyapunov L1 jacobi=3.17", "--family=halo", "--unstable"])
    add("manifold-state-without-period", ["manifold", EM, "--state=0.8,0,0,0,0.1,0", "--unstable"])
    add("manifold-state-and-orbit", ["manifold", EM, "--state=0.8,0,0,0,0.1,0", "--period=2.7TU",
                                     "--orbit=lyapunov L1 jacobi=3.17", "--unstable"])
    add("manifold-state-period-negative", ["manifold", EM, "--state=0.8,0,0,0,0.1,0", "--period=-2.7TU", "--unstable"])
    add("manifold-state-nan", ["manifold", EM, "--state=nan,0,0,0,0.1,0", "--period=2.7TU", "--unstable"])
    for v in ("time:-1d", "time:nand", "altitude:earth:200", "altitude:earth:-5km", "altitude:pluto:5km",
              "section:x=" + "1+" * 25000 + "1", "section:x=" + "(" * 5000 + "1" + ")" * 5000, "section:x=1-mu#0",
              "section:x=1-mu#x", "section:x=1/0", "section:x=nan", "section:w=1", "escape:-3LU", "escape:3d",
              "bogus:1", "section:x=__import__('os')", "section:x=1e999"):
        add(f"manifold-until-{v[:24]}", M + [f"--until={v}"])
    for v in ("-5km", "5", "nankm", "0km", "5d"):
        add(f"manifold-step-off-{v}", M + [f"--step-off={v}"])
    add("manifold-plot-suffix", M + ["--plot={out}/x.jpg"])
    # section
    for v in ("x=" + "9" * 50000, "x=" + "-" * 3000 + "1", "sphere:moon:-5km", "sphere:moon:5", "periapsis:pluto",
              "x=1-mu,y<0,z>0", "", "q=1"):
        add(f"section-section-{v[:16] or 'empty'}", [a if not a.startswith("--section") else f"--section={v}" for a in S])
    for opt, v in (("coords", "a,b"), ("coords", "y"), ("crossing", "0"), ("points", "0"), ("points", "1"),
                   ("time", "-1d"), ("time", "0d"), ("step-off", "-5km")):
        add(f"section-{opt}-{v}", S + [f"--{opt}={v}"])
    add("section-tube-without-direction", [a if not a.startswith("--tube") else "--tube=lyapunov L1 jacobi=3.17" for a in S])
    add("section-tube-two-directions", [a if not a.startswith("--tube") else "--tube=lyapunov L1 jacobi=3.17 stable unstable"
                                        for a in S])
    # connect
    orbit = "--to=lyapunov L1 jacobi=3.17"
    for v in ("parking earth 200", "parking earth -200km", "parking pluto 200km", "parking earth", "parking earth 200d",
              "parking earth nankm"):
        add(f"connect-{v}", C + [f"--from={v}", orbit])
    add("connect-both-parking", C + ["--from=parking earth 200km", "--to=parking moon 100km"])
    for opt, v in (("points", "0"), ("points", "1"), ("candidates", "0"), ("crossing", "0"), ("time", "-1d"),
                   ("step-off", "-5km")):
        add(f"connect-{opt}-{v}", BASE["connect"][:-1] + [f"--{opt}={v}"])
    add("connect-map-without-parking", BASE["connect"] + ["--map={out}/m.png"])
    add("connect-section-long", BASE["connect"] + ["--section=x=" + "1-" * 20000 + "mu"])
    # connect --path (departures from a parking orbit): refused before any orbit is solved
    dep = C + ["--from=parking earth 200km", "--to=halo L2 south resonance=9:2"]
    add("connect-path-bogus", dep + ["--path=slow"])
    add("connect-path-from-an-orbit", C + ["--from=lyapunov L1 jacobi=3.17", "--to=halo L2 south resonance=9:2",
                                           "--path=direct"])
    add("connect-path-from-the-moon", C + ["--from=parking moon 100km", "--to=halo L2 south resonance=9:2",
                                           "--path=direct"])
    add("connect-path-sun-earth", ["connect", "--system=sun-earth", "--from=parking earth 200km",
                                   "--to=halo L1 north az=200000km", "--path=direct"])
    for v in ("50km", "60000km"):
        add(f"connect-path-altitude-{v}", C + [f"--from=parking earth {v}", "--to=halo L2 south resonance=9:2",
                                                "--path=direct"])
    for v in ("0km", "-5km", "30000km", "100", "nankm"):
        add(f"connect-path-min-flyby-altitude-{v}", dep + ["--path=lunar-flyby", f"--min-flyby-altitude={v}"])
    add("connect-path-min-flyby-altitude-direct", dep + ["--path=direct", "--min-flyby-altitude=100km"])
    for v in ("0d", "-3d", "0.5d", "500d", "5", "5km", "nand"):
        add(f"connect-path-max-tof-{v}", dep + ["--path=direct", f"--max-tof={v}"])
    for v in ("28.5", "-1deg", "181deg", "xdeg", "nandeg", "28.5km"):
        add(f"connect-path-inclination-{v}", dep + ["--path=direct", f"--inclination={v}"])
    for extra in ("--section=y=0", "--map={out}/m.png", "--arrival-within=5000km", "--step-off=50km"):
        add(f"connect-path-with-{extra.split('=')[0][2:]}", dep + ["--path=direct", extra])
    add("connect-path-plot-suffix", dep + ["--path=direct", "--plot={out}/d.jpg"])
    # connect --path to 'parking earth ALTITUDE' (returns from an orbit or a torus): refused before any
    # orbit or torus is solved
    ret = C + ["--from=halo L2 south resonance=9:2", "--to=parking earth 200km"]
    ring = "--from=quasi-halo around halo L1 north az=10000km amplitude=300km"
    add("connect-return-low-energy", ret + ["--path=low-energy"])
    add("connect-return-epoch", ret + ["--path=direct", "--epoch=2031-01-01T00:00:00Z"])
    add("connect-return-to-the-moon", C + ["--from=halo L2 south resonance=9:2", "--to=parking moon 100km",
                                           "--path=direct"])
    for v in ("50km", "60000km"):
        add(f"connect-return-altitude-{v}", C + ["--from=halo L2 south resonance=9:2", f"--to=parking earth {v}",
                                                  "--path=direct"])
    add("connect-return-min-flyby-altitude-direct", ret + ["--path=direct", "--min-flyby-altitude=100km"])
    add("connect-return-min-flyby-altitude-0km", ret + ["--path=lunar-flyby", "--min-flyby-altitude=0km"])
    add("connect-return-max-tof", ret + ["--path=direct", "--max-tof=500d"])
    add("connect-return-with-map", ret + ["--path=direct", "--map={out}/m.png"])
    add("connect-return-plot-suffix", ret + ["--path=direct", "--plot={out}/r.jpg"])
    add("connect-return-torus-low-energy", C + [ring, "--to=parking earth 200km", "--path=low-energy"])
    add("connect-return-torus-altitude", C + [ring, "--to=parking earth 50km", "--path=direct"])
    # connect --optimise (orbit-to-orbit transfers): refused before any orbit is solved
    opt = BASE["connect"][:-1] + ["--optimise"]
    for v in ("1", "4", "x", "-3"):
        add(f"connect-optimise-impulses-{v}", opt + [f"--impulses={v}"])
    add("connect-optimise-start-bogus", opt + ["--start=guess"])
    for v in ("0d", "-3d", "5", "5km", "nand", "3000d"):
        add(f"connect-optimise-max-tof-{v}", opt + [f"--max-tof={v}"])
    add("connect-optimise-with-path", opt + ["--path=direct"])
    add("connect-optimise-from-parking", C + ["--from=parking earth 200km", "--to=halo L2 south resonance=9:2",
                                              "--optimise"])
    for extra in ("--map={out}/m.png", "--arrival-within=5000km", "--inclination=28deg"):
        add(f"connect-optimise-with-{extra.split('=')[0][2:]}", opt + [extra])
    add("connect-optimise-plot-suffix", opt + ["--plot={out}/d.jpg"])
    add("connect-impulses-without-optimise", BASE["connect"] + ["--impulses=2"])
    add("connect-start-without-optimise", BASE["connect"] + ["--start=sweep"])
    add("connect-optimise-no-units", ["connect", "--mu=0.01", "--from=lyapunov L1 jacobi=3.0",
                                      "--to=lyapunov L2 jacobi=3.0", "--optimise"])
    # connect --path low-energy (bicircular model): refused before any orbit is solved
    for v in ("60d", "70d", "300d", "-5d", "nand"):
        add(f"connect-low-energy-max-tof-{v}", dep + ["--path=low-energy", f"--max-tof={v}"])
    for v in ("yesterday", "2027-13-01T00:00:00Z", "1500-01-01T00:00:00Z"):
        add(f"connect-low-energy-epoch-{v}", dep + ["--path=low-energy", f"--epoch={v}"])
    add("connect-low-energy-from-the-moon", C + ["--from=parking moon 100km", "--to=halo L2 south resonance=9:2",
                                                 "--path=low-energy"])
    add("connect-low-energy-altitude-60000km", C + ["--from=parking earth 60000km",
                                                     "--to=halo L2 south resonance=9:2", "--path=low-energy"])
    add("connect-low-energy-inclination-200deg", dep + ["--path=low-energy", "--inclination=200deg"])
    add("connect-low-energy-plot-suffix", dep + ["--path=low-energy", "--plot={out}/d.jpg"])
    for v in ("2027-03-01T00:00:00Z", "2027-03-01T00:00:00Z/", "x/y", "2027-04-01T00:00:00Z/2027-03-01T00:00:00Z",
              "2024-03-01T00:00:00Z/2027-03-01T00:00:00Z", "1500-01-01T00:00:00Z/1500-02-01T00:00:00Z",
              "2027-03-01T00:00:00Z/2027-03-01T00:00:00Z", "a/b/c"):
        add(f"connect-low-energy-window-{v}", dep + ["--path=low-energy", f"--window={v}"])
    add("connect-low-energy-window-and-epoch", dep + ["--path=low-energy", "--epoch=2027-03-01T00:00:00Z",
                                                      "--window=2027-03-01T00:00:00Z/2027-04-01T00:00:00Z"])
    add("connect-window-with-direct", dep + ["--path=direct", "--window=2027-03-01T00:00:00Z/2027-04-01T00:00:00Z"])
    add("connect-window-without-path", dep + ["--window=2027-03-01T00:00:00Z/2027-04-01T00:00:00Z"])
    for name in ("reversed", "launch-bad", "launch-alone", "path-bogus"):
        add(f"graph-nodes-le-{name}", ["graph", "build", EM, f"--nodes={{in}}/le-{name}.toml", "--workers=1",
                                       "--no-catalog"])
    add("connect-launch-latitude-without-epoch", dep + ["--path=direct", "--launch-latitude=28.5deg"])
    add("connect-equator-inclination-and-inclination", dep + ["--path=direct", "--epoch=2027-03-01T00:00:00Z",
                                                              "--equator-inclination=51.6deg", "--inclination=5deg"])
    add("connect-launch-latitude-out-of-range", dep + ["--path=lunar-flyby", "--epoch=2027-03-01T00:00:00Z",
                                                       "--launch-latitude=91deg"])
    add("connect-epoch-on-return", ["connect", EM, "--from=halo L2 south resonance=9:2", "--to=parking earth 200km",
                                    "--path=direct", "--epoch=2027-03-01T00:00:00Z"])
    add("connect-epoch-without-path", dep + ["--epoch=2027-03-01T00:00:00Z"])
    # connect with a torus at one end or both: refused before any torus is solved
    TQ1 = "--to=quasi-halo around halo L1 north az=10000km amplitude=300km"
    TQ2 = "--from=quasi-halo around halo L2 north az=10000km amplitude=300km"
    ct = ["connect", EM, "--from=parking earth 200km", TQ1]
    add("connect-torus-path-lunar-flyby-min-altitude", ct + ["--path=lunar-flyby", "--min-flyby-altitude=-5km"])
    add("connect-torus-path-lunar-flyby-direct-altitude", ct + ["--path=direct", "--min-flyby-altitude=100km"])
    add("connect-torus-low-energy-window", ct + ["--path=low-energy",
                                                 "--window=2027-03-01T00:00:00Z/2027-04-01T00:00:00Z"])
    add("connect-torus-low-energy-max-tof", ct + ["--path=low-energy", "--max-tof=300d"])
    add("connect-torus-low-energy-inclination", ct + ["--path=low-energy", "--inclination=200deg"])
    add("connect-torus-low-energy-epoch", ct + ["--path=low-energy", "--epoch=1500-01-01T00:00:00Z"])
    add("connect-torus-path-altitude-50km", ["connect", EM, "--from=parking earth 50km", TQ1, "--path=direct"])
    add("connect-torus-path-max-tof-0d", ct + ["--path=direct", "--max-tof=0d"])
    add("connect-torus-path-inclination-200deg", ct + ["--path=direct", "--inclination=200deg"])
    add("connect-torus-path-section", ct + ["--path=direct", "--section=y=0"])
    add("connect-torus-path-epoch", ct + ["--path=direct", "--epoch=2027-03-01T00:00:00Z"])
    add("connect-torus-path-sun-earth", ["connect", "--system=sun-earth", "--from=parking earth 200km",
                                         "--to=lissajous L2 ay=300000km az=150000km", "--path=direct"])
    add("connect-torus-path-from-torus", ["connect", EM, TQ2.replace("--from", "--from"),
                                          "--to=halo L2 south resonance=9:2", "--path=direct"])
    # (a parking orbit and a torus without --path: the torus's manifold through a periapsis,
    # tests/test_tori_parking_legs.py; refused before the torus is solved:)
    lq = ["connect", EM, "--from=parking moon 100km", TQ1]
    add("connect-torus-parking-map-suffix", lq + ["--map={out}/m.bmp"])
    add("connect-torus-parking-epoch", lq + ["--epoch=2027-03-01T00:00:00Z"])
    add("connect-torus-parking-inclination", lq + ["--inclination=10deg"])
    add("connect-torus-parking-arrival-within", ["connect", EM, TQ2, "--to=parking moon 100km",
                                                 "--arrival-within=1000km"])
    add("connect-torus-parking-altitude", ["connect", EM, TQ2, "--to=parking moon -100km"])
    tto = ["connect", EM, TQ2, TQ1, "--optimise"]       # two tori: refused before any torus is solved
    add("connect-torus-optimise-torus-and-orbit", ["connect", EM, TQ2, "--to=halo L1 north az=10000km", "--optimise"])
    add("connect-torus-optimise-start-sweep", tto + ["--start=sweep"])
    add("connect-torus-optimise-crossing-2", tto + ["--crossing=2"])
    add("connect-torus-optimise-section-velocity", tto + ["--section=vx=0"])
    add("connect-torus-optimise-max-tof-0d", tto + ["--max-tof=0d"])
    add("connect-torus-optimise-map", tto + ["--map={out}/m.png"])
    add("connect-torus-optimise-epoch", tto + ["--epoch=2027-03-01T00:00:00Z"])
    add("connect-torus-optimise-plot-suffix", tto + ["--plot={out}/d.jpg"])
    add("connect-torus-impulses-without-optimise", ["connect", EM, TQ2, TQ1, "--impulses=2"])
    add("connect-torus-arrival-within", ["connect", EM, TQ2, TQ1, "--arrival-within=1000km"])
    add("connect-torus-crossing-2", ["connect", EM, TQ2, TQ1, "--crossing=2"])
    add("connect-torus-section-velocity", ["connect", EM, TQ2, TQ1, "--section=vx=0"])
    add("connect-torus-section-sphere", ["connect", EM, TQ2, TQ1, "--section=sphere:moon:20000km"])
    add("connect-torus-map", ["connect", EM, TQ2, TQ1, "--map={out}/m.png"])
    add("connect-torus-max-tof-without-path", ["connect", EM, TQ2, TQ1, "--max-tof=10d"])
    add("connect-torus-bad-request", ["connect", EM, "--from=lissajous L4 ay=1000km az=1000km", TQ1])
    add("connect-torus-bad-amplitude", ["connect", EM, TQ2, "--to=quasi-halo around halo L1 north az=10000km "
                                        "amplitude=-3km"])
    add("connect-torus-around-lyapunov", ["connect", EM, TQ2, "--to=quasi-halo around lyapunov L1 ax=5000km "
                                          "amplitude=300km"])
    # graph and route
    for name in ("binary", "deep", "folder", "missing"):
        add(f"graph-nodes-{name}", ["graph", "build", EM, f"--nodes={{in}}/{name}.toml", "--workers=1", "--no-catalog"])
        add(f"route-nodes-{name}", ["route", EM, f"--nodes={{in}}/{name}.toml", "--from=p0", "--to=p1"])
    for v in ("0", "x", "1.5", "-2", "300"):
        add(f"graph-workers-{v}", G[:-2] + [f"--workers={v}", "--no-catalog"])
    for v in ("-1d", "0d", "5", "nand"):
        add(f"graph-tof-{v}", G + [f"--tof={v}"])
    add("graph-catalog-and-no-catalog", G + ["--catalog={out}/c.sqlite"])
    add("graph-plot-suffix", G + ["--plot={out}/g.gif"])      # one rule for every --plot: png, svg, pdf
    add("graph-scheduler-junk", ["graph", "build", EM, "--nodes={in}/nodes.toml", "--scheduler=my-cluster",
                                 "--no-catalog"])
    add("graph-scheduler-local-0", ["graph", "build", EM, "--nodes={in}/nodes.toml", "--scheduler=local:0",
                                    "--no-catalog"])
    add("graph-workers-and-scheduler", ["graph", "build", EM, "--nodes={in}/nodes.toml", "--workers=2",
                                        "--scheduler=tcp://127.0.0.1:1", "--no-catalog"])
    for opt, v in (("min-altitude", "-5km"), ("min-altitude", "5"), ("min-altitude", "nankm"), ("max-dv", "-1m/s"),
                   ("max-dv", "nanm/s"), ("max-dv", "5"), ("max-tof", "-1d"), ("max-tof", "5km"), ("max-legs", "0"),
                   ("max-legs", "x"), ("best", "0"), ("best", "1.5"), ("best", "nan"), ("from", "nosuch"),
                   ("to", "p0"), ("through", "nosuch"), ("avoid", "nosuch"), ("epoch", "yesterday")):
        add(f"route-{opt}-{v}", R + [f"--{opt}={v}"])
    add("route-epoch-without-out", R + [EPOCH])
    add("route-epoch-bad-date", R + ["--epoch=2031-02-30T00:00:00Z", "--out={out}/r"])
    add("route-no-stitch-with-out", R + ["--no-stitch", "--out={out}/r"])
    # export
    for v in ("A\nB", "A\rB", "A\x1bB", "A\tB", "x" * 101, "A\u2028B"):
        add(f"export-object-name-{v[:6]!r}", X + [f"--object-name={v}", "--out={out}/x.oem"])
        add(f"export-object-id-{v[:6]!r}", X + [f"--object-id={v}", "--out={out}/x.oem"])
    for v in ("yesterday", "2031-02-30T00:00:00Z", "2031-03-01T25:00:00Z", "", "2031-03-01T00:00:00Z\nX",
              "9999999-01-01"):
        add(f"export-epoch-{v[:12] or 'empty'}", [a if a != EPOCH else f"--epoch={v}" for a in X] + ["--out={out}/x.oem"])
    for v in ("-10min", "0min", "10", "nanmin", "10km", "1e-9s"):
        add(f"export-step-{v}", [a if not a.startswith("--step") else f"--step={v}" for a in X] + ["--out={out}/x.oem"])
    for v in ("-1d", "0d", "nand", "5", "xperiods", "-2periods"):
        add(f"export-span-{v}", [a if not a.startswith("--span") else f"--span={v}" for a in X] + ["--out={out}/x.oem"])
    for v in ("-14d", "0d", "nand", "14"):
        add(f"export-period-{v}", [a if not a.startswith("--period") else f"--period={v}" for a in X] + ["--out={out}/x.oem"])
    add("export-periods-without-period", ["export", EM, "--state=1.1805031,0,-0.02,0,-0.1581343,0", EPOCH,
                                          "--span=3periods", "--out={out}/x.oem"])
    add("export-nothing", ["export", EM, EPOCH, "--span=1d", "--step=1h", "--out={out}/x.oem"])
    add("export-two-sources", X + ["--orbit=halo L2 south period=6.5626d", "--out={out}/x.oem"])
    add("export-state-nan", [a if not a.startswith("--state") else "--state=nan,0,0,0,0,0" for a in X] + ["--out={out}/x.oem"])
    add("export-state-five", [a if not a.startswith("--state") else "--state=1,0,0,0,0" for a in X] + ["--out={out}/x.oem"])
    add("export-rotating-oem", X + ["--frame=rotating", "--out={out}/x.oem"])
    add("export-suffix", X + ["--out={out}/x.txt"])
    add("export-km-with-orbit", ["export", EM, "--orbit=halo L2 south period=6.5626d", "--km", EPOCH, "--span=1d",
                                 "--step=1h", "--out={out}/x.oem"])
    add("export-orientation-ephemeris", X + ["--orientation=5,0,0", "--out={out}/x.oem"])
    add("export-orientation-nan", X + ["--anchor=circular", "--orientation=nan,0,0", "--out={out}/x.oem"])
    for name in ("arc-nan.csv", "arc-back.csv", "binary.oem", "nan.oem", "missing.csv", "folder.toml"):
        add(f"export-from-{name}", ["export", EM, f"--from={{in}}/{name}", EPOCH, "--out={out}/x.oem"])
    add("export-center-pluto", X + ["--center=pluto", "--out={out}/x.oem"])
    # convert
    for name in ("frame", "centre", "nan", "truncated", "cut-line", "reversed", "repeated", "binary", "empty",
                 ):
        add(f"convert-{name}", ["convert", f"{{in}}/{name}.oem", "{out}/x.csv"])
    add("convert-missing", ["convert", "{in}/missing.oem", "{out}/x.csv"])
    add("convert-folder-in", ["convert", "{in}/folder.toml", "{out}/x.csv"])
    add("convert-suffix", ["convert", "{in}/good.oem", "{out}/x.txt"])
    add("convert-center-pluto", ["convert", "{in}/good.oem", "{out}/x.csv", "--center=pluto"])
    add("convert-rotating-oem", ["convert", "{in}/good.oem", "{out}/x.oem", "--frame=rotating"])
    add("convert-time-system", ["convert", "{in}/good.oem", "{out}/x.csv", "--time-system=gps"])
    add("convert-orientation", ["convert", "{in}/good.oem", "{out}/x.csv", "--orientation=1,2,3"])
    # refine
    for v in ("0.01,1.3", "-0.01m2/kg,1.3", "nanm2/kg,1.3", "0.01m2/kg,5", "0.01m2/kg", "0.01m2/kg,nan", "0.01kg,1.3"):
        add(f"refine-srp-{v}", RF + [f"--srp={v}"])
    for opt, v in (("revs", "0"), ("revs", "1.5"), ("revs", "nan"), ("patches", "1"), ("patches", "x"),
                   ("max-iter", "0"), ("max-iter", "-1"), ("bodies", "sun,pluto"), ("bodies", ""),
                   ("epoch", "yesterday"), ("epoch", "2031-13-01T00:00:00Z"), ("central", "pluto")):
        add(f"refine-{opt}-{v}", [a for a in RF if not a.startswith(f"--{opt}=")] + [f"--{opt}={v}"])
    add("refine-plot-suffix", RF + ["--plot={out}/x.jpg"])
    add("refine-out-suffix", RF + ["--out={out}/x.txt"])
    add("refine-revs-with-route", ["refine", EM, "--route={in}", EPOCH, "--revs=3"])
    add("refine-custom-system", ["refine", "--mu=0.01", "--orbit=lyapunov L1 jacobi=3.1", EPOCH])
    add("refine-route-missing", ["refine", EM, "--route={in}/nowhere", EPOCH])
    add("refine-low-energy-route-other-date", ["refine", EM, "--route={in}/le-route", "--epoch=2027-03-02T00:00:00Z"])
    add("refine-low-energy-route-other-sun-phase", ["refine", EM, "--route={in}/le-route-undated",
                                                    "--epoch=2027-03-02T00:00:00Z"])
    # refine --torus (an arc on a torus)
    RT = ["refine", EM, "--torus=quasi-halo around halo L1 north az=10000km amplitude=300km", EPOCH,
          "--span=1periods"]
    add("refine-torus-no-span", RT[:-1])
    add("refine-torus-span-length", RT[:-1] + ["--span=3km"])
    add("refine-torus-span-negative", RT[:-1] + ["--span=-2d"])
    add("refine-torus-phase-one-angle", RT + ["--phase=30"])
    add("refine-torus-phase-nan", RT + ["--phase=nan,0"])
    add("refine-torus-phase-words", RT + ["--phase=east,west"])
    add("refine-torus-revs", RT + ["--revs=3"])
    add("refine-torus-patch-days", RT + ["--patch-days=2"])
    add("refine-torus-patches-0", RT + ["--patches=0"])
    add("refine-torus-unknown-family", ["refine", EM, "--torus=quasi-bagel around halo L1 north az=10000km "
                                        "amplitude=300km", EPOCH, "--span=1periods"])
    add("refine-torus-around-lyapunov", ["refine", EM, "--torus=quasi-halo around lyapunov L1 ax=5000km "
                                         "amplitude=300km", EPOCH, "--span=1periods"])
    add("refine-torus-amplitude-negative", ["refine", EM, "--torus=quasi-halo around halo L1 north az=10000km "
                                            "amplitude=-300km", EPOCH, "--span=1periods"])
    add("refine-torus-and-orbit", RT + ["--orbit=halo L2 south period=6.5626d"])
    add("refine-torus-custom-system", ["refine", "--mu=0.01", "--torus=lissajous L1 ay=1000km az=1000km", EPOCH,
                                       "--span=1periods"])
    add("refine-span-with-orbit", RF + ["--span=2d"])
    add("refine-phase-with-orbit", RF + ["--phase=10,20"])
    add("refine-span-with-route", ["refine", EM, "--route={in}", EPOCH, "--span=2d"])
    return c


ALL = output_cases() + [pytest.param(a, 2, id=i) for i, a in SAME_FILE] + value_cases()


@pytest.mark.parametrize("argv,status", ALL)
def test_refused(capsys, tmp_path, monkeypatch, inputs, argv, status):
    out = tmp_path / "out"
    out.mkdir()
    (out / "adir").mkdir()
    (out / "afile").write_text("x")
    monkeypatch.chdir(out)
    argv = _fill(argv, inputs, out)
    if "--quiet" not in argv and argv[0] not in ("catalog",) and len(argv) > 1:
        argv.append("--quiet")
    if argv[0] == "catalog" and len(argv) > 1:
        argv.append("--quiet")
    before_in, before_out = _listing(inputs), _listing(out)
    refused(capsys, argv, status)
    assert _listing(out) == before_out, argv
    assert _listing(inputs) == before_in, argv


def test_the_table_covers_every_command():
    from librate_cli.commands import modules
    names = {m.NAME for m in modules()} - {"run"}     # run: tests/test_scenario_* (its own helper)
    covered = {p.values[0][0] for p in ALL}
    assert names <= covered, names - covered
    assert len(ALL) >= 300, len(ALL)


# ---- property tests: one value parser per kind of value ------------------------------------

def _no_nul(s):
    return "\x00" not in s


def _refuses(capsys, tmp_path, argv):
    before = _listing(tmp_path)
    refused(capsys, [a.replace("{out}", str(tmp_path)) for a in argv] + ["--quiet"])
    assert _listing(tmp_path) == before


negative_time = st.builds(lambda v, u: f"-{v}{u}", st.floats(min_value=1e-6, max_value=1e6),
                          st.sampled_from(["s", "min", "h", "d", "TU"]))
bare_number = st.floats(allow_nan=True, allow_infinity=True).map(repr)
junk = st.text(max_size=12).filter(_no_nul)


@SETTINGS
@given(step=st.one_of(negative_time, bare_number, st.sampled_from(["0s", "0h", "nanh", "infd", "-0.0min"])))
def test_step_must_be_a_positive_time(capsys, tmp_path, step):
    _refuses(capsys, tmp_path, BASE["propagate"] + [f"--step={step}"])


@SETTINGS
@given(step=st.one_of(negative_time, bare_number))
def test_export_step_must_be_a_positive_time(capsys, tmp_path, step):
    _refuses(capsys, tmp_path, [a if not a.startswith("--step") else f"--step={step}" for a in BASE["export"]]
             + ["--out={out}/x.oem"])


@SETTINGS
@given(name=st.text(min_size=1, max_size=30).filter(_no_nul).filter(lambda s: not s.isprintable()))
def test_object_name_with_a_control_character_is_refused(capsys, tmp_path, name):
    _refuses(capsys, tmp_path, BASE["export"] + [f"--object-name={name}", "--out={out}/x.oem"])


@SETTINGS
@given(alt=st.one_of(st.builds(lambda v, u: f"-{v}{u}", st.floats(min_value=1e-6, max_value=1e6),
                                st.sampled_from(["m", "km", "LU"])), bare_number, junk))
def test_min_altitude_must_be_a_nonnegative_length(capsys, tmp_path, alt):
    _refuses(capsys, tmp_path, BASE["route"] + [f"--min-altitude={alt}"])


@SETTINGS
@given(value=st.one_of(st.sampled_from(["nan", "inf", "-inf", "1e999", "NaN", " nan "]), junk.filter(
    lambda s: not _finite(s))))
def test_jacobi_must_be_a_finite_number(capsys, tmp_path, value):
    _refuses(capsys, tmp_path, ["orbit", EM, "--family=lyapunov", "--point=L1", f"--jacobi={value}"])


@SETTINGS
@given(value=st.one_of(st.sampled_from(["nan", "inf", "-inf", "1e999"]), junk.filter(lambda s: not _finite(s))))
def test_until_jacobi_must_be_a_finite_number(capsys, tmp_path, value):
    _refuses(capsys, tmp_path, BASE["family"] + [f"--until=jacobi={value}"])


def _finite(s):
    try:
        import math
        return math.isfinite(float(s))
    except (ValueError, OverflowError):
        return False


@SETTINGS
@given(n=st.one_of(st.integers(max_value=1), st.integers(min_value=100_001),
                   st.floats(allow_nan=True).map(repr), junk.filter(lambda s: not s.strip().isdigit())))
def test_points_must_be_a_whole_number_in_range(capsys, tmp_path, n):
    _refuses(capsys, tmp_path, BASE["manifold"][:-1] + [f"--points={n}"])


@SETTINGS
@given(n=st.one_of(st.integers(max_value=0), st.integers(min_value=257), st.floats().map(repr),
                   junk.filter(lambda s: not s.strip().isdigit())))
def test_workers_must_be_a_whole_number_in_range(capsys, tmp_path, n):
    _refuses(capsys, tmp_path, ["graph", "build", EM, "--nodes=/nonexistent/nodes.toml", f"--workers={n}",
                                "--no-catalog"])


@SETTINGS
@given(am=st.floats(allow_nan=True, allow_infinity=True), cr=st.floats(allow_nan=True, allow_infinity=True))
def test_srp_without_its_unit_is_refused(capsys, tmp_path, am, cr):
    _refuses(capsys, tmp_path, BASE["refine"] + [f"--srp={am!r},{cr!r}"])


@SETTINGS
@given(text=st.text(min_size=201, max_size=400, alphabet="()+-*/1mu. "))
def test_long_section_expressions_are_refused(capsys, tmp_path, text):
    _refuses(capsys, tmp_path, BASE["manifold"] + [f"--until=section:x={text}"])


@SETTINGS
@given(alt=st.one_of(bare_number.filter(_finite), negative_time))
def test_parking_altitude_needs_a_length_unit(capsys, tmp_path, alt):
    _refuses(capsys, tmp_path, ["connect", EM, f"--from=parking earth {alt}", "--to=lyapunov L1 jacobi=3.17"])


@SETTINGS
@given(date=st.text(max_size=25).filter(_no_nul))
def test_export_epoch_junk_is_refused(capsys, tmp_path, date):
    from hypothesis import assume
    assume(not date.strip()[:4].isdigit())
    _refuses(capsys, tmp_path, [a if a != EPOCH else f"--epoch={date}" for a in BASE["export"]] + ["--out={out}/x.oem"])


# ---- failures of the file system, simulated ---------------------------------------------

def test_read_only_file_system_is_refused_before_work(capsys, tmp_path, monkeypatch):
    """A folder on a read-only file system (as statvfs reports it) is refused by the output check."""
    import cr3bp.validate as v
    real = os.statvfs
    ro = tmp_path / "ro"
    ro.mkdir()

    class Flags:
        def __init__(self, st):
            self.f_flag = st.f_flag | os.ST_RDONLY

    monkeypatch.setattr(v.os, "statvfs", lambda p: Flags(real(p)) if Path(p) == ro else real(p))
    line, _ = refused(capsys, BASE["points"] + [f"--out={ro / 'p.json'}", "--format=json"])
    assert "read-only file system" in line
    assert list(ro.iterdir()) == []


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes into read-only folders")
def test_read_only_folder_is_refused_before_work(capsys, tmp_path):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        line, _ = refused(capsys, BASE["points"] + [f"--out={ro / 'p.json'}"])
        assert "not writable" in line
    finally:
        ro.chmod(0o755)


@pytest.mark.parametrize("code,status", [(errno.ENOSPC, 1), (errno.EDQUOT, 1), (errno.EACCES, 2), (errno.EROFS, 2),
                                         (errno.EIO, 1)])
@pytest.mark.parametrize("cmd", ["points", "systems", "zvc", "export"])
def test_a_failing_write_is_one_line_and_leaves_nothing(capsys, tmp_path, monkeypatch, code, status, cmd):
    """The file system refuses the write after the checks passed (a full disk, a permission
    change): one line, a documented status, no partial or temporary file."""
    import cr3bp.io.atomic as atomic
    real_fdopen = os.fdopen

    class Failing:
        def __init__(self, f):
            self.f = f

        def write(self, data):
            raise OSError(code, os.strerror(code))

        def __enter__(self):
            return self

        def __exit__(self, *exc):
            self.f.close()
            return False

    monkeypatch.setattr(atomic.os, "fdopen", lambda fd, *a, **k: Failing(real_fdopen(fd, *a, **k)))
    target = tmp_path / ("x.oem" if cmd == "export" else "x.json")
    argv = BASE[cmd] + [f"--out={target}"] + (["--format=json"] if cmd != "export" else []) + ["--quiet"]
    if cmd == "zvc":
        argv = ["zvc", EM, "--jacobi=3.1", f"--out={target}", "--format=json", "--quiet"]
    line, _ = refused(capsys, argv, status)
    assert list(tmp_path.iterdir()) == []
    if code == errno.ENOSPC:
        assert "full" in line


def test_catalogue_full_disk_keeps_the_catalogue_intact(capsys, tmp_path, monkeypatch):
    """SQLite reports a full disk (SQLITE_FULL, simulated: the members' INSERT fails inside the
    transaction, after the family row was written in it) while a family is stored: one line,
    exit 1, and the catalogue still holds exactly what it held."""
    from cr3bp import catalog as cat_mod
    path = tmp_path / "c.sqlite"
    _catalogue(path)
    real = cat_mod.Catalog._open_read_write

    class Full:
        def __init__(self, db):
            self.db = db

        def __getattr__(self, name):
            return getattr(self.db, name)

        def execute(self, sql, *a):
            if sql.startswith("UPDATE families SET updated"):
                raise sqlite3.OperationalError("database or disk is full")
            return self.db.execute(sql, *a)

        def executemany(self, sql, *a):
            return self.db.executemany(sql, *a)

    def tight(self):
        real(self)
        self._db = Full(self._db)

    monkeypatch.setattr(cat_mod.Catalog, "_open_read_write", tight)
    before = cat_mod.Catalog(path).list_families()
    line, _ = refused(capsys, ["family", EM, "--family=lyapunov", "--point=L1", "--members=3",
                               f"--catalog={path}", "--quiet"], 1)
    assert "full" in line
    monkeypatch.setattr(cat_mod.Catalog, "_open_read_write", real)
    c = cat_mod.Catalog(path)
    after = c.list_families()
    assert after[:len(before)] == before                 # what it held is untouched
    assert all(not f["complete"] for f in after[len(before):])   # at most a family marked unfinished
    assert c._db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"


def test_read_only_catalogue_is_still_readable(capsys, tmp_path, monkeypatch):
    """A catalogue SQLite cannot open for writing (read-only file or folder) is read read-only;
    a write to it is one line, exit 2."""
    from cr3bp import catalog as cat_mod
    path = tmp_path / "c.sqlite"
    _catalogue(path)
    if os.geteuid() != 0:
        path.chmod(0o444)
        tmp_path.chmod(0o555)
    else:     # root ignores permissions: let SQLite refuse to write as it would for others
        def refuse(self):
            raise sqlite3.OperationalError("attempt to write a readonly database")
        monkeypatch.setattr(cat_mod.Catalog, "_open_read_write", refuse)
    try:
        rc = main(["catalog", "show", "1", f"--catalog={path}", "--format=json"])
        out, err = capsys.readouterr()
        assert rc == 0, err
        assert json.loads(out)["members"][0]["period"] == 2.7
        refused(capsys, ["catalog", "remove", "1", f"--catalog={path}"])
    finally:
        tmp_path.chmod(0o755)


# ---- interruption -------------------------------------------------------------------------

def test_ctrl_c_is_one_line_and_status_130(capsys, monkeypatch):
    from librate_cli.commands import points
    monkeypatch.setattr(points, "run", lambda args: (_ for _ in ()).throw(KeyboardInterrupt()))
    rc = main(["points", EM])
    out, err = capsys.readouterr()
    assert rc == 130 and err == "librate: interrupted\n" and "Traceback" not in err


def _children(pid):
    try:
        return [int(x) for x in Path(f"/proc/{pid}/task/{pid}/children").read_text().split()]
    except OSError:
        return []


def _alive(pid):
    try:
        stat = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return False
    return stat.rsplit(")", 1)[1].split()[0] != "Z"


def _many_nodes(tmp_path):
    from graph_fixtures import node_list_text, perturbed_states
    _, states = perturbed_states(10)
    p = tmp_path / "nodes.toml"
    p.write_text(node_list_text(states, chain=False, all_pairs=True, tof="2d", patches=2))
    return p


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="prctl and /proc are Linux")
@pytest.mark.parametrize("sig", [signal.SIGINT, signal.SIGKILL])
def test_pool_workers_end_with_the_command(tmp_path, sig):
    """Ctrl-C (SIGINT to the process group) or SIGKILL during the leg stage: no worker survives,
    so a pipe reader such as 'tee' sees its end; Ctrl-C gives one line and status 130."""
    nodes = _many_nodes(tmp_path)
    # started as a terminal starts a command, with Ctrl-C at its default: a shell runs a
    # background command (a test run started with '&') with SIGINT ignored, and the ignored
    # disposition is inherited across exec, so librate would never see the Ctrl-C
    p = subprocess.Popen([sys.executable, "-m", "librate_cli.main", "graph", "build", EM, f"--nodes={nodes}",
                          "--workers=2", "--no-catalog"], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                         start_new_session=True, cwd=tmp_path,
                         preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))
    workers = []
    deadline = time.time() + 90
    while time.time() < deadline and len(workers) < 2 and p.poll() is None:
        kids = _children(p.pid)
        workers = [k for k in kids if "spawn_main" in Path(f"/proc/{k}/cmdline").read_text(errors="replace")] \
            if kids else []
        time.sleep(0.05)
    assert workers, "no pool workers seen"
    # at once: the workers are still importing (a Ctrl-C then must not make them print either)
    if sig == signal.SIGINT:
        os.killpg(p.pid, signal.SIGINT)
    else:
        p.kill()
    try:
        _, err = p.communicate(timeout=30)     # returns only when every holder of the pipes is gone
    finally:
        if p.poll() is None:
            os.killpg(p.pid, signal.SIGKILL)
    t0 = time.time()
    while any(_alive(w) for w in workers) and time.time() - t0 < 10:
        time.sleep(0.05)
    assert not any(_alive(w) for w in workers)
    text = err.decode()
    if sig == signal.SIGINT:
        assert p.returncode == 130, text
        assert "Traceback" not in text and "KeyboardInterrupt" not in text, text
        assert text.rstrip().splitlines()[-1] == "librate: interrupted"


# ---- reproducible figures -----------------------------------------------------------------

def test_svg_figures_are_byte_identical(capsys, tmp_path):
    paths = []
    for k in range(2):
        p = tmp_path / f"h{k}.svg"
        assert main(["zvc", EM, "--jacobi=3.1", "--resolution=41", f"--plot={p}", "--quiet"]) == 0
        paths.append(p)
    capsys.readouterr()
    a, b = (p.read_bytes() for p in paths)
    assert b"clipPath" in a and b"<dc:date>" not in a
    assert a == b


# ---- OEM header and data checks in the library ----------------------------------------------

def test_oem_writer_refuses_a_bad_creation_date_and_control_characters(tmp_path):
    import numpy as np

    from cr3bp.io import export
    from cr3bp import system
    from cr3bp.time import frames
    from cr3bp.errors import InputError
    from cr3bp.io.export import write
    s = system("earth-moon")
    spec = frames.frame(s, "2031-03-01T00:00:00Z")
    seg = export.Segment(np.array([0.0, 0.01]), np.array([[1.1, 0, 0, 0, -0.15, 0]] * 2))
    good = export.Trajectory(spec, (seg,), "TDB", (), "OBJ", "ID")
    write(tmp_path / "ok.oem", good, creation_date="2031-03-01T00:00:00")
    for date in ("2031-03-01\nCOMMENT x", "yesterday", "2031-02-30"):
        with pytest.raises(InputError):
            write(tmp_path / "bad.oem", good, creation_date=date)
    for name in ("A\nB", "A\rB", "A\x00B"):
        bad = export.Trajectory(spec, (seg,), "TDB", (), name, "ID")
        with pytest.raises(InputError):
            write(tmp_path / "bad.oem", bad)
    nan_seg = export.Segment(np.array([0.0, 0.01]), np.array([[1.1, 0, 0, 0, -0.15, 0], [np.nan] * 6]))
    with pytest.raises(InputError, match="row 2"):
        write(tmp_path / "bad.csv", export.Trajectory(spec, (nan_seg,), "TDB", (), "OBJ", "ID"))
    assert sorted(p.name for p in tmp_path.iterdir()) == ["ok.oem"]
