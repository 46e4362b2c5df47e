"""Status codes of the integrator and its step limit, shared by the compiled kernels
(:mod:`.dop853`, and the ahead-of-time build of it, :mod:`.prebuilt`) and the Python entry
points, which must not import numba to read them. The codes are explained in :mod:`.dop853`.
"""

STATUS_TIME, STATUS_EVENT, STATUS_IMPACT, STATUS_ESCAPE = 0, 1, 2, 3
STATUS_MAX_STEPS, STATUS_STALLED, STATUS_NONFINITE = -1, -2, -3
STATUS_NAMES = {0: "time", 1: "event", 2: "impact", 3: "escape", -1: "max-steps",
                -2: "stalled", -3: "non-finite"}
DEFAULT_MAX_STEPS = 1_000_000
