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
    """``obj`` as indented, key-sorted JSON text (numpy values made plain)."""
    return json.dumps(obj, indent=2, sort_keys=True, default=json_default) + "\n"


def csv_text(headers, rows, comments=()) -> str:
    """CSV text: ``comments`` and the caution as ``#`` lines, the header row, then ``rows``
    (floats written with ``repr``, so they read back exactly)."""
    buf = io.StringIO()
    for c in list(comments) + caution_lines():
        buf.write(f"# {c}\n")
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(headers)
    for r in rows:
        w.writerow([repr(float(v)) if isinstance(v, (float, np.floating)) else v for v in r])
    return buf.getvalue()


def say(progress, text):
    """One progress line, when the caller asked for them."""
    if progress is not None:
        progress(text)


def save_figures(fig, out, stem, formats, caption):
    """Save ``fig`` in every format (SVG without a date, for reproducible files); the PNG path.

    When ``out.figures`` is a catalogue, a figure whose content key
    (:func:`cr3bp.plotting.fingerprint.fingerprint`: its artists, the caption, the formats,
    the code and matplotlib's settings) is stored there is not drawn: its stored files, the
    bytes an earlier drawing gave, are written instead. A figure drawn is stored."""
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
