"""Units read by the operations commands (shadow, keep, disperse): one table of the small
velocities (navigation and execution errors, burns) and one reader of times in seconds."""

#: Velocities below a meter per second, beside the m/s and km/s of :mod:`cr3bp.units`.
SMALL_VELOCITY = {"mm/s": 1e-3, "cm/s": 1e-2}


def velocity_mps(option, text):
    """A velocity with its unit (mm/s, cm/s, m/s, km/s) -> m/s, not negative."""
    from cr3bp.errors import InputError, shown
    from cr3bp.validate import finite_number, quantity
    t = str(text).strip()
    for unit, k in SMALL_VELOCITY.items():
        if t.endswith(unit):
            v = finite_number(option, t[:-len(unit)]) * k
            break
    else:
        try:
            v = quantity(option, t, "velocity") * 1000.0
        except InputError:
            raise InputError(f"{option} '{shown(text)}' must be a velocity with its unit: mm/s, cm/s, m/s or "
                             "km/s, e.g. 1cm/s") from None
    if not v >= 0:
        raise InputError(f"{option} '{shown(text)}' must not be negative")
    return v


def seconds(option, text, system=None):
    """A time with its unit -> seconds (TU needs a system with units)."""
    from cr3bp import units
    from cr3bp.errors import InputError
    q = units.parse(text, "time")
    if q.unit == "TU":
        if system is None or not system.dimensional:
            raise InputError(f"{option} '{text}' is in TU; give it in s, min, h or d here")
        return q.nondim(system) * system.time_s
    return q.si()
