"""librate run: the whole pipeline from a scenario file."""

from .. import common

NAME = "run"
ORDER = 5
HELP = "run a mission scenario end to end: orbits, checks, transfers, exports, report"
EXAMPLE = "librate run examples/farlight.toml --out out"


def add_arguments(p):
    p.add_argument("scenario", help="scenario file (TOML; its format: docs/scenario-format.rst, or the docs site)")
    p.add_argument("--out", required=True, metavar="DIR", help="folder for the results")
    common.add_catalog_options(p, used_by_default=True, opt_out=False)
    common.add_workers_option(p, "worker processes for transfer legs (default: the scenario's "
                                 "settings.workers, else all cores)")
    p.add_argument("--scheduler", metavar="ADDRESS", help="dask.distributed scheduler for transfer legs")
    p.add_argument("--check-only", action="store_true", help="check the scenario and stop")
    p.add_argument("--recompute", action="store_true",
                   help="compute everything again even when --out holds a finished run of the same "
                        "scenario, code and packages with every file unchanged (by default such a run "
                        "is reported, not recomputed: its files are checked against the manifest's "
                        "SHA-256)")
    common.add_verbosity(p)


def run(args):
    """Check (scenario and --out), then run, both with cr3bp.api.run; a scenario with problems prints one line per
    problem, FILE:LINE: key: message (cli.common.run_command), and exits 2 with nothing written."""
    import time
    from cr3bp import api
    workers = common.workers(args)
    catalog = common.catalog_file(args)
    if not (args.check_only or args.recompute):
        # before the run's heavy imports: an unchanged rerun costs hashing only
        from cr3bp.scenario.reuse import try_reuse
        from cr3bp.errors import InputError
        if catalog is not None and not catalog.strip():
            raise InputError("the catalogue path is empty; give a file path")
        earlier = try_reuse(args.scenario, args.out)
        if earlier is not None:
            common.progress(args, f"nothing to compute: {args.out} holds the run of "
                                  f"{earlier.finished_utc} of this scenario with the same code and "
                                  f"packages, every file unchanged (SHA-256 against its manifest); "
                                  f"--recompute runs it again")
            _summary(earlier)
            return 0
    plan = api.run(args.scenario, args.out, catalog=catalog, check_only=True)
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

    result = api.run(plan, args.out, catalog=catalog, workers=workers, scheduler=args.scheduler,
                     progress=say, reuse=False)
    _summary(result)
    return 0


def _summary(result):
    failed = [f"{o}: {c.name}" for o, cs in result.checks.items() for c in cs if not c.passed]
    lines = [f"done in {result.seconds:.1f} s; results in {result.folder}/",
             f"  report:   {result.report}", f"  manifest: {result.manifest}",
             f"  files:    {len(result.files)}"]
    if failed:
        lines.append("  constraints NOT met: " + "; ".join(failed))
    else:
        lines.append("  every constraint checked is met")
    print("\n".join(lines) + common.caution_footer())
