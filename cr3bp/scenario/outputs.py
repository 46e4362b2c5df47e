"""The small writers every stage of a scenario run shares: JSON and CSV text with the caution,
figures saved in every requested format, progress lines. Imported by the run and by the
transfer stage alike (so neither imports the other back)."""

from __future__ import annotations

import csv
import io
import json

import numpy as np

from ..cautions import caution_lines
from ..errors import LibrateError
from ..io.atomic import save_figure, write_bytes
from ..io.plain import json_default
from ..plotting.fingerprint import fingerprint


def json_text(obj) -> str:
    """``obj`` as indented, key-sorted JSON text (numpy values made plain).

    Parameters
    ----------
    obj : object
        A nested value.

    Returns
    -------
    str
        JSON text ending in a newline.

    Raises
    ------
    TypeError
        A value with no plain form.

    Examples
    --------
    >>> print(json_text({"b": 1, "a": np.float64(0.5)}), end="")
    {
      "a": 0.5,
      "b": 1
    }

    References
    ----------
    RFC 8259, "The JavaScript Object Notation (JSON) Data Interchange Format" (2017).
    """
    return json.dumps(obj, indent=2, sort_keys=True, default=json_default) + "\n"


def csv_text(headers, rows, comments=()) -> str:
    """CSV text: ``comments`` and the caution as ``#`` lines, the header row, then ``rows``.

    Floats are written with ``repr``, so they read back exactly.

    Parameters
    ----------
    headers : sequence of str
        The column names.
    rows : iterable of sequence
        The rows.
    comments : sequence of str, optional
        Lines before the caution.

    Returns
    -------
    str
        The text.

    Raises
    ------
    csv.Error
        A value the writer cannot quote.

    Examples
    --------
    >>> csv_text(["a"], [[0.1]], ["demo"]).splitlines()[-2:]
    ['a', '0.1']

    References
    ----------
    RFC 4180, "Common Format and MIME Type for Comma-Separated Values (CSV) Files" (2005).
    """
    buf = io.StringIO()
    for c in list(comments) + caution_lines():
        buf.write(f"# {c}\n")
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(headers)
    for r in rows:
        w.writerow([repr(float(v)) if isinstance(v, (float, np.floating)) else v for v in r])
    return buf.getvalue()


def say(progress, text):
    """One progress line, when the caller asked for them.

    Parameters
    ----------
    progress : callable(str) or None
        Where the line goes.
    text : str
        The line.

    Returns
    -------
    None

    Raises
    ------
    Exception
        Whatever ``progress`` raises.

    Examples
    --------
    >>> say(print, "orbits: 2 of 2")
    orbits: 2 of 2

    References
    ----------
    Common practice (numerics never print; the caller chooses what a person sees).
    """
    if progress is not None:
        progress(text)


def save_figures(fig, out, stem, formats, caption):
    """Save ``fig`` in every format (SVG without a date, for reproducible files).

    When ``out.figures`` is a catalogue, a figure whose content key
    (:func:`cr3bp.plotting.fingerprint.fingerprint`: its artists, the caption, the formats,
    the code and matplotlib's settings) is stored there is not drawn: its stored files, the
    bytes an earlier drawing gave, are written instead. A figure drawn is stored.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure (closed afterwards).
    out : Outputs
        Where the files go.
    stem : str
        The file name without suffix.
    formats : sequence of str
        ``"png"``, ``"svg"``, ...
    caption : str
        The caption drawn in the figure.

    Returns
    -------
    dict
        ``{"path": first file, "caption": caption, "reused": bool}``.

    Raises
    ------
    OutputError
        A file cannot be written.

    Examples
    --------
    >>> import tempfile
    >>> from pathlib import Path
    >>> from matplotlib.figure import Figure
    >>> from cr3bp.scenario.run import Outputs
    >>> out = Outputs(Path(tempfile.mkdtemp()))
    >>> save_figures(Figure(), out, "demo", ["svg"], "a caption")["path"].name
    'demo.svg'

    References
    ----------
    Hunter, J. D., "Matplotlib: A 2D graphics environment", Computing in Science & Engineering
    9(3), 90 (2007).
    """
    import matplotlib.pyplot as plt  # lazy: heavy library (matplotlib)
    from ..plotting.base import caption as add_caption  # lazy: heavy library (matplotlib, via cr3bp.plotting.base)
    store = getattr(out, "figures", None)
    key = fingerprint(fig, caption, tuple(formats), FIGURE_DPI) if store is not None else None
    if key is not None:
        stored = [store.get_figure(key, f) for f in formats]
        if all(b is not None for b in stored):
            plt.close(fig)
            paths = [out.path(f"{stem}.{f}") for f in formats]
            for p, data in zip(paths, stored):
                write_bytes(p, data)
            return {"path": paths[0] if paths else None, "caption": caption, "reused": True}
    add_caption(fig, caption)
    paths = []
    for f in formats:
        p = out.path(f"{stem}.{f}")
        save_figure(fig, p, dpi=FIGURE_DPI, metadata={"Date": None} if f == "svg" else None)
        paths.append(p)
    plt.close(fig)
    if key is not None:
        try:
            for f, p in zip(formats, paths):
                store.put_figure(key, f, p.read_bytes())
        except LibrateError:
            pass            # a read-only or full catalogue: the figure is drawn next time too
    return {"path": paths[0] if paths else None, "caption": caption, "reused": False}


#: Resolution of the scenario's raster figures (dots per inch).
FIGURE_DPI = 130
