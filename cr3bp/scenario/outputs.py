"""The small writers every stage of a scenario run shares: JSON and CSV text with the caution,
figures saved in every requested format, progress lines. Imported by the run and by the
transfer stage alike (so neither imports the other back)."""

from __future__ import annotations

import json

import numpy as np
import csv
import io
from ..cautions import caution_lines
from ..io.atomic import save_figure
from ..io.plain import json_default


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
    """Save ``fig`` in every format (SVG without a date, for reproducible files); the PNG path."""
    import matplotlib.pyplot as plt  # lazy: heavy library (matplotlib)
    from ..plotting.base import caption as add_caption  # lazy: heavy library (matplotlib, via cr3bp.plotting.base)
    add_caption(fig, caption)
    first = None
    for f in formats:
        p = out.path(f"{stem}.{f}")
        save_figure(fig, p, dpi=130, metadata={"Date": None} if f == "svg" else None)
        first = first or p
    plt.close(fig)
    return {"path": first, "caption": caption}
