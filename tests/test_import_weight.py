"""What a command imports (not how long it takes: speed is judged in benchmarks/).

A `librate orbit` request answered from the catalogue must not pull in plotting, graph or
cluster libraries, scipy (any of it), numba (it runs on the ahead-of-time built kernels of
``cr3bp.integrate.prebuilt``, which ``make`` builds) or the other command modules: each would
cost start-up time of a command that answers in well under a second.
Checked in a fresh interpreter, on the modules it has loaded when the command returns.
"""

import json
import subprocess
import sys

from cr3bp import system
from cr3bp.catalog import Catalog
from cr3bp.integrate import prebuilt
from cr3bp.orbits import continuation
from cr3bp.orbits.request import compute_into_catalog, parse_request

#: module prefixes a catalogued orbit request must not load
HEAVY = ("matplotlib", "networkx", "dask", "distributed", "scipy", "numba", "llvmlite")


def _loaded_after(code):
    """sys.modules (sorted list) of a fresh interpreter after running ``code``."""
    prog = code + "\nimport json, sys\nprint('MODULES=' + json.dumps(sorted(sys.modules)))\n"
    r = subprocess.run([sys.executable, "-c", prog], capture_output=True, text=True, timeout=300)
    assert r.returncode == 0, r.stderr
    line = [x for x in r.stdout.splitlines() if x.startswith("MODULES=")][-1]
    return r.stdout, json.loads(line[len("MODULES="):])


def _heavy(mods):
    return sorted(m for m in mods if any(m == h or m.startswith(h + ".") for h in HEAVY))


def test_import_cr3bp_is_light():
    """``import cr3bp`` (and its error types, which every command imports) loads no numba,
    scipy or matplotlib; the public names still resolve on first use."""
    _, mods = _loaded_after("import cr3bp\nfrom cr3bp.errors import InputError")
    assert not [m for m in mods if m.split(".")[0] in ("numba", "scipy", "matplotlib", "networkx")]
    out, _ = _loaded_after("import cr3bp\nprint(cr3bp.system('earth-moon').name, callable(cr3bp.propagate))")
    assert "earth-moon True" in out


def test_catalogued_orbit_request_loads_no_heavy_module(tmp_path):
    assert prebuilt.find() is not None, "no current prebuilt kernels: run 'make kernels'"
    em = system("earth-moon")
    path = tmp_path / "cat.sqlite"
    spec = parse_request("lyapunov L1 jacobi=3.1")
    with Catalog(path) as cat:
        fam = compute_into_catalog(cat, em, spec, stops=continuation.Stops(max_members=12))
    jac = 0.5 * (fam.members[4].jacobi + fam.members[5].jacobi)
    argv = ["orbit", "--system", "earth-moon", "--family", "lyapunov", "--point", "L1",
            "--jacobi", f"{jac:.12f}", "--catalog", str(path), "-q", "--format", "json"]
    out, mods = _loaded_after(f"from librate_cli.main import main\nassert main({argv!r}) == 0")
    d = json.loads(out[:out.index("MODULES=")])
    assert abs(d["jacobi"] - jac) < 1e-9            # the request was really answered
    assert _heavy(mods) == []
    # only the command that runs is imported, not every command module
    others = [m for m in mods if m.startswith("librate_cli.commands.")
              and not m.rsplit(".", 1)[1].startswith("_") and m != "librate_cli.commands.orbit"]
    assert others == []
