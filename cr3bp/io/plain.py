"""Plain values for JSON: the one ``default=`` hook every JSON writer of librate uses."""

from __future__ import annotations

import numpy as np


def json_default(o):
    """numpy arrays and scalars as lists and numbers; result objects through ``to_dict()``."""
    if isinstance(o, np.ndarray):
        return o.tolist()
    if isinstance(o, np.generic):
        return o.item()
    if hasattr(o, "to_dict"):
        return o.to_dict()
    raise TypeError(f"cannot write {type(o).__name__} as JSON")
