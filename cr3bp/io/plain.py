"""Plain values for JSON: the one ``default=`` hook every JSON writer of librate uses, and
:func:`plain`, which turns nested numpy values into lists and numbers ahead of writing."""

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


def plain(d):
    """``d`` with every numpy array and scalar inside dicts, lists and tuples made plain (lists,
    Python numbers); tuples become lists. Other values are returned as they are."""
    if isinstance(d, dict):
        return {k: plain(v) for k, v in d.items()}
    if isinstance(d, (list, tuple)):
        return [plain(v) for v in d]
    if isinstance(d, np.ndarray):
        return d.tolist()
    if isinstance(d, np.generic):
        return d.item()
    return d
