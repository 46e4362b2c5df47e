"""librate points: the five Lagrange points, their energies and linear modes."""

from .. import common

NAME = "points"
KERNELS = common.DYNAMICS_KERNELS
ORDER = 20
HELP = "Lagrange points L1..L5: positions, distances, Jacobi constants, linear modes, stability"
EXAMPLE = "librate points --system earth-moon"

HEADERS = ["point", "x_lu", "y_lu", "z_lu", "from_primary_km", "from_secondary_km", "from_barycentre_km",
           "jacobi", "saddle_exponent", "efolding_days", "omega_inplane", "period_inplane_days",
           "omega_vertical", "period_vertical_days", "stability"]


def add_arguments(p):
    common.add_system_options(p)
    common.add_output_options(p)


def stability_text(point, mu, mu_r):
    if point.collinear:
        return "unstable: saddle x centre x centre"
    if point.modes.linearly_stable:
        return "linearly stable: mu < mu_R"
    return "unstable: mu > mu_R"


def point_record(point, system, mu_r):
    """The JSON object of one point (keys documented in the user guide, docs/manual/points.md)."""
    d = point.to_dict()
    dim = system.dimensional
    dist = point.distances()
    d["distance_km"] = {k: v * system.length_km for k, v in dist.items()} if dim else None
    periods = point.modes.periods_tu()
    d["periods_tu"] = periods
    d["periods_days"] = {k: v * system.time_days for k, v in periods.items()} if dim else None
    d["stability"] = stability_text(point, system.mu, mu_r)
    return d


def run(args):
    from cr3bp import api
    from cr3bp.equilibria import routh_critical_mu
    system = common.resolve_system(args)
    pts = api.points(system)
    mu_r = routh_critical_mu()
    dim = system.dimensional
    rows = []
    for p in pts:
        dist = p.distances()
        per = p.modes.periods_tu()
        m = p.modes

        def km(key):
            return dist[key] * system.length_km if dim else None

        def days(key):
            return per[key] * system.time_days if dim and key in per else None

        wp = m.omega_inplane if p.collinear else None
        rows.append([p.name, float(p.position[0]), float(p.position[1]), float(p.position[2]),
                     km("primary"), km("secondary"), km("barycentre"), p.jacobi,
                     m.saddle_exponent, days("efolding"), wp, days("inplane"),
                     m.omega_vertical, days("vertical"), stability_text(p, system.mu, mu_r)])
    triangular_stable = bool(pts[3].modes.linearly_stable)
    payload = {
        "system": system.name,
        "mu": system.mu,
        "units": system.to_dict(),
        "points": [point_record(p, system, mu_r) for p in pts],
        "routh_critical_mu": mu_r,
        "triangular_linearly_stable": triangular_stable,
    }
    p1, p2 = system.names
    title = (f"Lagrange points of {system.name} (mu = {system.mu:.10g}); rotating barycentric frame, "
             f"{p1} at x = -mu, {p2} at x = 1 - mu")
    km_head = [f"from {p1} [km]", f"from {p2} [km]", "from barycentre [km]"]
    table = common.format_table(["point", "x [LU]", "y [LU]", "z [LU]"] + km_head + ["Jacobi C"],
                                [r[:7] + [f"{r[7]:.10f}"] for r in rows], title=title)
    table += "\n" + common.format_table(
        ["point", "lambda [1/TU]", "e-fold [d]", "omega_p [rad/TU]", "in-plane period [d]",
         "omega_v [rad/TU]", "vertical period [d]", "stability"],
        [[r[0]] + r[8:] for r in rows], title="Linear modes")
    notes = [
        "",
        "lambda: saddle exponent (deviations grow as exp(lambda t)); e-fold = 1/lambda.",
        "omega_p, omega_v: in-plane and out-of-plane linear frequencies (Richardson 1980 for L1-L3);",
        "  L4/L5 have two in-plane frequencies when stable: see --format json (omega_long, omega_short).",
        f"Routh's critical mass ratio mu_R = {mu_r:.10f}: L4/L5 are "
        f"{'linearly stable' if triangular_stable else 'unstable'} here (mu = {system.mu:.6g}).",
    ]
    if not dim:
        notes.append("This custom system has no dimensional units: km and days are shown as '-'.")
    common.emit(args, payload=payload, headers=HEADERS, rows=rows, table=table + "\n".join(notes) + "\n",
                comments=[title])
    return 0
