"""Plain values for JSON: the one ``default=`` hook every JSON writer of librate uses, and
:func:`plain`, which turns nested numpy values into lists and numbers ahead of writing."""

from __future__ import annotations

import numpy as np


def json_default(o):
    """The ``default`` hook of :func:`json.dumps` for the library's values.

    numpy arrays and scalars become lists and numbers; result objects go through ``to_dict()``.

    Parameters
    ----------
    o : object
        A value :mod:`json` cannot write by itself.

    Returns
    -------
    object
        A plain value.

    Raises
    ------
    TypeError
        A value with no plain form (as :func:`json.dumps` expects).

    Examples
    --------
    >>> import json, numpy as np
    >>> json.dumps({"x": np.arange(2)}, default=json_default)
    '{"x": [0, 1]}'

    References
    ----------
    RFC 8259, "The JavaScript Object Notation (JSON) Data Interchange Format" (2017).
    """
    if isinstance(o, np.ndarray):
        return o.tolist()
    if isinstance(o, np.generic):
        return o.item()
    if hasattr(o, "to_dict"):
        return o.to_dict()
    raise TypeError(f"cannot write {type(o).__name__} as JSON")


def plain(d):
    """``d`` with every numpy array and scalar inside dicts, lists and tuples made plain.

    Arrays become lists, numpy scalars Python numbers, tuples lists; other values are returned as
    they are.

    Parameters
    ----------
    d : object
        A nested value.

    Returns
    -------
    object
        The same structure with plain values.

    Raises
    ------
    RecursionError
        A structure nested deeper than Python's recursion limit.

    Examples
    --------
    >>> import numpy as np
    >>> plain({"a": (np.float64(1.5), np.arange(2))})
    {'a': [1.5, [0, 1]]}

    References
    ----------
    RFC 8259, "The JavaScript Object Notation (JSON) Data Interchange Format" (2017).
    """
    if isinstance(d, dict):
        return {k: plain(v) for k, v in d.items()}
    if isinstance(d, (list, tuple)):
        return [plain(v) for v in d]
    if isinstance(d, np.ndarray):
        return d.tolist()
    if isinstance(d, np.generic):
        return d.item()
    return d
