"""librate propagate: integrate one state in the CR3BP and report where it goes."""

from .. import common

NAME = "propagate"
ORDER = 20
HELP = "propagate a state (optionally with its state transition matrix) and report the end"
EXAMPLE = ("librate propagate --system earth-moon --state 0.8234,0,0.0224,0,0.1343,0 "
           "--time 12d --stm")

#: compiled kernels this command uses (checked for the first-run compile notice)
KERNELS = (("cr3bp.integrate.dop853", "integrate"),)
PLOT_SUFFIXES = (".png", ".pdf", ".svg")
MAX_OUTPUT_POINTS = 1_000_000
PLOT_POINTS = 2000
STATE_NAMES = ("x", "y", "z", "vx", "vy", "vz")


def add_arguments(p):
    common.add_system_options(p)
    g = p.add_argument_group("propagation")
    g.add_argument("--state", required=True, metavar="X,Y,Z,VX,VY,VZ",
                   help="initial state, barycentric rotating frame: LU and LU/TU, or km and km/s "
                        "with --km")
    g.add_argument("--km", action="store_true", help="the state is given in km and km/s")
    g.add_argument("--time", required=True, metavar="DURATION",
                   help="how long to propagate, with a unit: 12d, 36h, 2.5TU, 1e6s (negative: "
                        "backward in time)")
    g.add_argument("--stm", action="store_true",
                   help="also integrate the state transition matrix and report it")
    g.add_argument("--rtol", default="1e-12", metavar="TOL",
                   help="relative tolerance in [1e-14, 1e-3] (default 1e-12)")
    g.add_argument("--atol", default="1e-12", metavar="TOL",
                   help="absolute tolerance in [1e-14, 1e-3] (default 1e-12)")
    g.add_argument("--step", metavar="DURATION",
                   help="output spacing, e.g. 1h (from the dense output); default: every "
                        "integration step")
    g.add_argument("--plot", metavar="FILE", help="save a figure of the trajectory (.png, .pdf, .svg)")
    common.add_output_options(p)


def _parse_state(text, system, km):
    from cr3bp.errors import StateError
    parts = [t.strip() for t in str(text).split(",")]
    if len(parts) != 6:
        raise StateError(f"--state {text!r} has {len(parts)} values; give six numbers "
                         "x,y,z,vx,vy,vz separated by commas")
    values = []
    for name, t in zip(STATE_NAMES, parts):
        try:
            v = float(t)
        except ValueError:
            raise StateError(f"--state entry {name} = {t!r} is not a number") from None
        if v != v or v in (float("inf"), float("-inf")):
            raise StateError(f"--state entry {name} = {t!r} is not finite")
        values.append(v)
    if km:
        system.require_dimensional("--km")
        values = [v / system.length_km for v in values[:3]] + \
                 [v / system.velocity_kms for v in values[3:]]
    return values


def _output_times(args, system, t_final):
    import numpy as np

    from cr3bp.errors import InputError
    if args.step is None:
        return None
    from cr3bp.validate import quantity
    step = quantity("--step", args.step, "time", system, sign="positive")
    n = int(np.floor(abs(t_final) / step + 1e-9))
    if n + 2 > MAX_OUTPUT_POINTS:
        raise InputError(f"--step {args.step!r} gives {n + 2} output points; allowed at most "
                         f"{MAX_OUTPUT_POINTS}")
    sign = 1.0 if t_final >= 0 else -1.0
    t = sign * step * np.arange(n + 1)
    if abs(t[-1]) < abs(t_final) * (1 - 1e-12):
        t = np.append(t, t_final)
    else:
        t[-1] = t_final
    return t


def run(args):
    from pathlib import Path

    import numpy as np

    from cr3bp import propagate, validate
    from cr3bp.dynamics import jacobi
    from cr3bp.errors import InputError
    from cr3bp.integrate import impact

    system = common.resolve_system(args)
    state = _parse_state(args.state, system, args.km)
    state = validate.state(system, state)
    from cr3bp.validate import quantity
    t_final = quantity("--time", args.time, "time", system)
    rtol = validate.tolerance("--rtol", args.rtol)
    atol = validate.tolerance("--atol", args.atol)
    t_eval = _output_times(args, system, t_final)
    if args.plot and Path(args.plot).suffix.lower() not in PLOT_SUFFIXES:
        raise InputError(f"--plot {args.plot!r}: the file name must end in "
                         f"{', '.join(PLOT_SUFFIXES)}")
    events = [impact(k, r, label=f"impact {name}")
              for k, (r, name) in enumerate(zip(system.radii, system.names)) if r > 0]

    common.progress(args, f"propagating for {t_final:.6g} TU...", verbose_only=True)
    arc = propagate(system, state, t_final, stm=args.stm, rtol=rtol, atol=atol, events=events,
                    t_eval=t_eval)

    dim = system.dimensional
    c0 = jacobi(system.mu, state)
    c1 = jacobi(system.mu, arc.final_state)
    t_days = arc.t_final * system.time_days if dim else None
    payload = {
        "system": system.name,
        "status": arc.status,
        "t_final": arc.t_final,
        "t_final_days": t_days,
        "initial_state": state.tolist(),
        "final_state": arc.final_state.tolist(),
        "jacobi_initial": c0,
        "jacobi_final": c1,
        "jacobi_drift": c1 - c0,
        "events": [{"name": e.name, "t": e.t, "t_days": e.t * system.time_days if dim else None,
                    "state": e.state.tolist()} for e in arc.events],
        "steps": arc.nsteps,
        "rhs_evaluations": arc.nfev,
        "rtol": rtol,
        "atol": atol,
    }
    if dim:
        payload["final_state_km"] = _to_km(system, arc.final_state)
    if args.stm:
        payload["stm"] = arc.stm.tolist()

    # CSV: one row per output time
    headers = ["t_tu", "t_days", "x_lu", "y_lu", "z_lu", "vx_vu", "vy_vu", "vz_vu", "jacobi"]
    if dim:
        headers += ["x_km", "y_km", "z_km", "vx_kms", "vy_kms", "vz_kms"]
    cs = jacobi(system.mu, arc.states) if len(arc.t) else np.empty(0)
    rows = []
    for k in range(len(arc.t)):
        s = arc.states[k]
        row = [float(arc.t[k]), float(arc.t[k] * system.time_days) if dim else "",
               *map(float, s), float(cs[k])]
        if dim:
            row += _to_km(system, s)
        rows.append(row)

    table = _table(system, arc, state, c0, c1, t_days, args.stm)
    comments = [f"librate propagate: system {system.name}, status {arc.status}, "
                f"t_final {arc.t_final!r} TU, rtol {rtol:g}, atol {atol:g}"]
    if args.plot:
        from cr3bp.plotting import save
        from cr3bp.plotting.trajectories import plot_views
        span = f"{t_days:.4g} days" if dim else f"{arc.t_final:.4g} TU"
        shown = arc.states
        if t_eval is None:  # draw the curve from the dense output, not the step points
            t_plot = np.linspace(0.0, arc.t_final, PLOT_POINTS)
            shown = propagate(system, state, arc.t_final, rtol=rtol, atol=atol,
                              t_eval=t_plot).states
        fig = plot_views(shown, system,
                         title=f"{system.name}: propagated {span} ({arc.status})")
        save(fig, args.plot, text=f"librate propagate; start {np.round(state, 6).tolist()}; "
                                  f"rtol {rtol:g}, atol {atol:g}; Jacobi drift {c1 - c0:.2e}")
        common.progress(args, f"wrote {args.plot}")
    common.emit(args, payload=payload, headers=headers, rows=rows, table=table, comments=comments)
    return 0


def _to_km(system, s):
    return [float(v) * system.length_km for v in s[:3]] + \
           [float(v) * system.velocity_kms for v in s[3:6]]


def _table(system, arc, state, c0, c1, t_days, stm):
    dim = system.dimensional
    head = ["", *STATE_NAMES]
    rows = [["initial [LU, LU/TU]", *map(float, state)], ["final [LU, LU/TU]", *map(float, arc.final_state)]]
    if dim:
        rows += [["initial [km, km/s]", *_to_km(system, state)],
                 ["final [km, km/s]", *_to_km(system, arc.final_state)]]
    when = f"{arc.t_final:.12g} TU" + (f" = {t_days:.9g} days" if dim else "")
    text = common.format_table(head, rows, title=f"librate propagate: {system.name}, status "
                                                 f"{arc.status} at t = {when}")
    lines = [
        "",
        f"Jacobi constant: initial {c0:.15g}, final {c1:.15g}, drift {c1 - c0:.3e}",
        f"steps: {arc.nsteps} accepted, {arc.nfev} right-hand-side evaluations",
    ]
    if arc.events:
        lines.append("events:")
        for e in arc.events:
            tt = f"{e.t:.12g} TU" + (f" = {e.t * system.time_days:.9g} days" if dim else "")
            lines.append(f"  {e.name} at t = {tt}")
    else:
        lines.append("events: none")
    if stm:
        lines.append("state transition matrix (final, rows d(final)/d(initial)):")
        for r in arc.stm:
            lines.append("  " + "  ".join(f"{v: .9e}" for v in r))
    return text + "\n".join(lines) + "\n"
