"""librate systems: the tabulated primary pairs and their units."""

from .. import common

NAME = "systems"
ORDER = 10
HELP = "list the tabulated systems, their mass ratios and units"
EXAMPLE = "librate systems --format json"


def add_arguments(p):
    common.add_output_options(p)


def run(args):
    from cr3bp import api, system_names
    systems = [api.system(n) for n in system_names()]
    headers = ["system", "mu", "length_km", "time_unit_days", "velocity_kms", "period_days"]
    rows = [[s.name, s.mu, s.length_km, s.time_days, s.velocity_kms, s.period_days] for s in systems]
    table = common.format_table(headers, rows, title="CR3BP systems (larger primary first)")
    common.emit(args, payload={"systems": [s.to_dict() for s in systems]}, headers=headers, rows=rows,
                table=table)
    return 0
