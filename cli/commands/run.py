"""librate run: the whole pipeline from a scenario file."""

from .. import common

NAME = "run"
ORDER = 5
HELP = "run a mission scenario end to end: orbits, checks, transfers, exports, report"
EXAMPLE = "librate run examples/farlight.toml --out out"


def add_arguments(p):
    p.add_argument("scenario", help="scenario file (TOML; its format: docs/scenario-format.rst, or the docs site)")
    p.add_argument("--out", required=True, metavar="DIR", help="folder for the results")
    p.add_argument("--catalog", metavar="PATH", help="orbit catalogue (default: the per-user one)")
    p.add_argument("--workers", type=int, metavar="N", help="worker processes for transfer legs")
    p.add_argument("--scheduler", metavar="ADDRESS", help="dask.distributed scheduler for transfer legs")
    p.add_argument("--check-only", action="store_true", help="check the scenario and stop")
    common.add_verbosity(p)


def run(args):
    """Check (scenario and --out), then run; a scenario with problems prints one line per
    problem, FILE:LINE: key: message (cli.common.run_command), and exits 2 with nothing written."""
    import time
    from cr3bp.scenario import run as mission
    from cr3bp.catalog import default_path
    from cr3bp.errors import InputError
    if args.workers is not None and args.workers < 1:
        raise InputError(f"--workers {args.workers} must be at least 1")
    plan = mission.prepare(args.scenario)
    mission.check_output_folder(args.out, plan.path, args.catalog or default_path(),
                                mission.planned_files(plan.data))
    common.progress(args, f"scenario {args.scenario}: '{plan.name}', {len(plan.orbit_specs)} orbit(s), "
                          f"{len(plan.data.get('transfers', []))} transfer(s), "
                          f"{len(plan.data.get('exports', []))} export(s)")
    if args.check_only:
        print(f"{args.scenario}: no problems found" + common.caution_footer())
        return 0
    t0 = time.time()
    stage = {"n": 0}

    def say(text):
        stage["n"] += 1
        common.progress(args, f"[{time.time() - t0:6.1f} s] {text}")

    from cr3bp.catalog import Catalog
    result = mission.run(plan, args.out, catalog=Catalog(args.catalog) if args.catalog else None,
                         workers=args.workers, scheduler=args.scheduler, progress=say)
    failed = [f"{o}: {c.name}" for o, cs in result.checks.items() for c in cs if not c.passed]
    lines = [f"done in {result.seconds:.1f} s; results in {result.folder}/",
             f"  report:   {result.report}", f"  manifest: {result.manifest}",
             f"  files:    {len(result.files)}"]
    if failed:
        lines.append("  constraints NOT met: " + "; ".join(failed))
    else:
        lines.append("  every constraint checked is met")
    print("\n".join(lines) + common.caution_footer())
    return 0
