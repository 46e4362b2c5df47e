"""The one caution every human-facing output carries (CLI footer, report, plot caption, file header).

The caution names the model the numbers belong to: the circular restricted three-body model
unless an output comes from another one (``model="bicircular"``)."""

import textwrap


#: model key -> (the model in the long caution, the model in the short caption)
MODELS = {
    "cr3bp": ("the circular restricted three-body model", "CR3BP"),
    "bicircular": ("the bicircular restricted four-body model (Earth, Moon and Sun)", "bicircular-model"),
    "ephemeris": ("a point-mass ephemeris model (DE421 positions, no higher-order gravity)", "ephemeris-model"),
}


def caution(model: str = "cr3bp") -> str:
    """The caution for results of ``model`` (a key of :data:`MODELS`).

    Parameters
    ----------
    model : str, optional
        ``"cr3bp"``, ``"ephemeris"``, ...

    Returns
    -------
    str
        One paragraph.

    Raises
    ------
    KeyError
        An unknown model.

    Examples
    --------
    >>> caution().startswith("CAUTION: preliminary design in")
    True

    References
    ----------
    Common practice (results of preliminary design carry a caution and their model); the
    wording is the project's own (:mod:`cr3bp.cautions`).
    """
    return (f"CAUTION: preliminary design in {MODELS[model][0]}. "
            "Verify every result in a high-fidelity model, and have it reviewed by qualified, "
            "licensed mission analysts under the applicable agency and range-safety rules, "
            "before any flight decision.")


def caution_short(model: str = "cr3bp") -> str:
    """Short form for plot captions, where space is scarce. Same meaning, same words.

    Parameters
    ----------
    model : str, optional
        A key of :data:`MODELS`.

    Returns
    -------
    str
        One sentence.

    Raises
    ------
    KeyError
        An unknown model.

    Examples
    --------
    >>> "high-fidelity model" in caution_short()
    True

    References
    ----------
    Common practice (results of preliminary design carry a caution and their model); the
    wording is the project's own (:mod:`cr3bp.cautions`).
    """
    return (f"Preliminary {MODELS[model][1]} design: verify in a high-fidelity model and have it reviewed by "
            "qualified, licensed mission analysts under agency and range-safety rules before any flight decision.")


CAUTION = caution()
CAUTION_SHORT = caution_short()


def caution_lines(prefix="", width=88, model: str = "cr3bp"):
    """The caution wrapped to ``width`` columns, each line starting with ``prefix``.

    Parameters
    ----------
    prefix : str, optional
        E.g. ``"# "`` for a CSV header or ``"COMMENT "`` for an OEM.
    width : int, optional
        Columns.
    model : str, optional
        A key of :data:`MODELS`.

    Returns
    -------
    list of str
        The lines.

    Raises
    ------
    KeyError
        An unknown model.

    Examples
    --------
    >>> all(len(line) <= 60 and line.startswith("# ") for line in caution_lines("# ", 60))
    True

    References
    ----------
    Common practice (results of preliminary design carry a caution and their model); the
    wording is the project's own (:mod:`cr3bp.cautions`).
    """

    return [prefix + line for line in textwrap.wrap(caution(model), width - len(prefix))]
