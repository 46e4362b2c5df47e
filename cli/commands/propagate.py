"""librate propagate: integrate one state in the CR3BP (or the Earth-Moon-Sun bicircular model)
and report where it goes."""

from .. import common

NAME = "propagate"
ORDER = 20
HELP = "propagate a state (optionally with its state transition matrix) and report the end"
EXAMPLE = ("librate propagate --system earth-moon --state 0.8234,0,0.0224,0,0.1343,0 "
           "--time 12d --stm")

#: compiled kernels this command uses (checked for the first-run compile notice)
KERNELS = (("cr3bp.integrate.dop853", "integrate"),)
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
    common.add_plot_option(g, "draw the trajectory")
    m = p.add_argument_group("model")
    m.add_argument("--model", default="cr3bp", metavar="NAME",
                   help="cr3bp (default) or bicircular: the Earth-Moon CR3BP with the Sun on a "
                        "circle about the barycentre (earth-moon only)")
    m.add_argument("--sun-phase", metavar="ANGLE",
                   help="bicircular: the Sun's angle from the Earth-Moon line at the start, with "
                        "a unit: 45deg or 0.785rad (0: new moon, 180deg: full moon; default 0)")
    m.add_argument("--epoch", metavar="ISO",
                   help="bicircular: the date of the start (ISO 8601, UTC unless it names its "
                        "scale); the Sun's phase is taken from the ephemeris at that date")
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


MODELS = ("cr3bp", "bicircular")


def _angle_rad(text, name):
    """'45deg' or '0.785rad' -> radians, checked as cr3bp.propagate_state checks its sun_phase."""
    from cr3bp.api import _angle_rad as angle_rad
    return angle_rad(text, name)


def _model(args, system):
    """None for the CR3BP, else the BicircularSystem the options ask for."""
    from cr3bp.errors import InputError
    name = str(args.model).strip().lower()
    if name not in MODELS:
        raise InputError(f"--model {args.model!r} is not known; allowed: {', '.join(MODELS)}")
    if name == "cr3bp":
        for opt, v in (("--sun-phase", args.sun_phase), ("--epoch", args.epoch)):
            if v is not None:
                raise InputError(f"{opt} goes with --model bicircular")
        return None
    from cr3bp.bicircular import bicircular_system
    if args.sun_phase is not None and args.epoch is not None:
        raise InputError("give --sun-phase or --epoch, not both")
    phase = 0.0 if args.sun_phase is None else _angle_rad(args.sun_phase, "--sun-phase")
    return bicircular_system(system, sun_phase=phase, epoch=args.epoch)


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
    from cr3bp import api, validate

    system = common.resolve_system(args)
    state = _parse_state(args.state, system, args.km)
    state = validate.state(system, state)
    from cr3bp.validate import quantity
    t_final = quantity("--time", args.time, "time", system)
    rtol = validate.tolerance("--rtol", args.rtol)
    atol = validate.tolerance("--atol", args.atol)
    t_eval = _output_times(args, system, t_final)         # refuses too many points, as --step
    _model(args, system)                                   # refuses the model's options, as options
    common.progress(args, f"propagating for {t_final:.6g} TU...", verbose_only=True)
    p = api.propagate_state(system, state, t_final, stm=args.stm, rtol=rtol, atol=atol,
                            step=None if t_eval is None else args.step, model=str(args.model).strip().lower(),
                            sun_phase=args.sun_phase, epoch=args.epoch)
    arc, model = p.arc, p.model
    dim = system.dimensional
    c0, c1 = p.energy_initial, p.energy_final
    t_days = arc.t_final * system.time_days if dim else None
    payload = p.to_dict()
    headers, rows = p.headers(), p.rows()

    table = _table(system, arc, state, c0, c1, t_days, args.stm, model)
    comments = [f"librate propagate: system {system.name}, status {arc.status}, "
                f"t_final {arc.t_final!r} TU, rtol {rtol:g}, atol {atol:g}"]
    if model is not None:
        comments.append(_model_line(model))
    if args.plot:
        import numpy as np
        from cr3bp.plotting import save
        from cr3bp.plotting.trajectories import plot_views
        span = f"{t_days:.4g} days" if dim else f"{arc.t_final:.4g} TU"
        shown = arc.states
        if t_eval is None:  # draw the curve from the dense output, not the step points
            shown = p.sample(PLOT_POINTS)
        where = system.name if model is None else f"{system.name} with the Sun (bicircular)"
        fig = plot_views(shown, system, title=f"{where}: propagated {span} ({arc.status})")
        drift = (f"Jacobi drift {c1 - c0:.2e}" if model is None else
                 f"Sun phase {model.sun_phase_deg:.2f} deg at t = 0; H change {c1 - c0:.2e}")
        save(fig, args.plot, text=f"librate propagate; start {np.round(state, 6).tolist()}; "
                                  f"rtol {rtol:g}, atol {atol:g}; {drift}",
             model="cr3bp" if model is None else "bicircular")
        common.progress(args, f"wrote {args.plot}")
    common.emit(args, payload=payload, headers=headers, rows=rows, table=table, comments=comments,
                model="cr3bp" if model is None else "bicircular")
    return 0


def _to_km(system, s):
    return [float(v) * system.length_km for v in s[:3]] + \
           [float(v) * system.velocity_kms for v in s[3:6]]


def _model_line(model):
    line = (f"model: bicircular (Earth-Moon CR3BP with the Sun on a circle, Boudad, Howell & Davis "
            f"2020); Sun phase at t = 0: {model.sun_phase_deg:.4f} deg")
    if model.epoch_tdb_s is not None:
        from cr3bp.time.frames import epoch_to_text
        line += f" (from the ephemeris at {epoch_to_text(model.epoch_tdb_s, 'UTC')} UTC)"
    return line


def _table(system, arc, state, c0, c1, t_days, stm, model=None):
    dim = system.dimensional
    head = ["", *STATE_NAMES]
    rows = [["initial [LU, LU/TU]", *map(float, state)], ["final [LU, LU/TU]", *map(float, arc.final_state)]]
    if dim:
        rows += [["initial [km, km/s]", *_to_km(system, state)],
                 ["final [km, km/s]", *_to_km(system, arc.final_state)]]
    when = f"{arc.t_final:.12g} TU" + (f" = {t_days:.9g} days" if dim else "")
    text = common.format_table(head, rows, title=f"librate propagate: {system.name}, status "
                                                 f"{arc.status} at t = {when}")
    if model is None:
        energy = f"Jacobi constant: initial {c0:.15g}, final {c1:.15g}, drift {c1 - c0:.3e}"
    else:
        energy = (f"{_model_line(model)}\nHamiltonian H = 2U - v^2 - 2 m_s/a_s (not conserved: the "
                  f"Sun moves): initial {c0:.15g}, final {c1:.15g}, change {c1 - c0:.3e}")
    lines = [
        "",
        energy,
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
