"""The design report: one self-contained HTML file (figures embedded) an analyst can send on.

The report reads the same plain dictionaries every stage produces (``to_dict()``), so what it
shows is what the tables and exports say. The caution and the model's assumptions stand at the
top, in a box that cannot be scrolled past unseen; the caution is said once there, not under
every figure (each embedded figure carries it once in its own caption).
"""

from __future__ import annotations

import base64
import html
import math
from pathlib import Path

from ..io.atomic import write_text
from ..cautions import CAUTION

ASSUMPTIONS = (
    "Circular restricted three-body problem: two primaries on circular orbits about their "
    "barycentre, the spacecraft massless.",
    "Point-mass gravity only: no oblateness, no third bodies (e.g. the Sun in the Earth-Moon "
    "problem), no solar radiation pressure or other perturbations.",
    "Maneuvers are impulsive; Δv figures exclude gravity losses, navigation and margins.",
    "Dimensional values use the tabulated constants of data/systems.toml; dates anchor the "
    "rotating frame as stated with each export.",
)

_STYLE = """
body { font-family: system-ui, sans-serif; margin: 2rem auto; max-width: 70rem; color: #1a1a1a; }
.caution { border: 3px solid #b00020; background: #fff4f4; padding: 1rem 1.25rem; font-weight: 600; }
.assumptions { background: #f6f6f6; padding: 0.5rem 1.25rem; }
table { border-collapse: collapse; margin: 0.5rem 0 1rem; font-size: 0.9rem; }
th, td { border: 1px solid #ccc; padding: 0.25rem 0.5rem; text-align: right; }
th { background: #eee; } td.l, th.l { text-align: left; }
.pass { color: #0a6b1f; font-weight: 600; } .fail { color: #b00020; font-weight: 600; }
figure { margin: 1rem 0; } figure img { max-width: 100%; border: 1px solid #ddd; }
figcaption { font-size: 0.8rem; color: #444; }
"""


def esc(v) -> str:
    """HTML-escape a value's text.

    Parameters
    ----------
    v : object
        The value.

    Returns
    -------
    str
        Escaped text.

    Raises
    ------
    Exception
        Whatever ``str(v)`` raises.

    Examples
    --------
    >>> esc("<a & b>")
    '&lt;a &amp; b&gt;'

    References
    ----------
    WHATWG, "HTML Living Standard", https://html.spec.whatwg.org/ (tables, ``img`` with data URLs).
    """
    return html.escape(str(v))


def fmt(v) -> str:
    """A value as report text: 6 significant digits, "–" for none or non-finite, yes/no.

    Parameters
    ----------
    v : object
        The value.

    Returns
    -------
    str
        HTML-safe text.

    Raises
    ------
    Exception
        Whatever ``str(v)`` raises.

    Examples
    --------
    >>> fmt(1.23456789), fmt(None), fmt(True), fmt([1.0, 2.5])
    ('1.23457', '–', 'yes', '1, 2.5')

    References
    ----------
    WHATWG, "HTML Living Standard", https://html.spec.whatwg.org/ (tables, ``img`` with data URLs).
    """
    if v is None:
        return "–"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, float):
        if not math.isfinite(v):
            return "–"
        return f"{v:.6g}" if abs(v) < 1e6 else f"{v:,.0f}"
    if isinstance(v, (list, tuple)):
        return ", ".join(fmt(x) for x in v)
    return esc(v)


def table(headers, rows, left=1) -> str:
    """An HTML table; the first ``left`` columns are left-aligned.

    Parameters
    ----------
    headers : sequence of str
        Column names (escaped).
    rows : iterable of sequence
        Cells (HTML, written as given).
    left : int, optional
        Left-aligned columns.

    Returns
    -------
    str
        HTML.

    Raises
    ------
    TypeError
        Rows that are not sequences.

    Examples
    --------
    >>> table(["x"], [["1"]])
    '<table><thead><tr><th class="l">x</th></tr></thead><tbody><tr><td class="l">1</td></tr></tbody></table>'

    References
    ----------
    WHATWG, "HTML Living Standard", https://html.spec.whatwg.org/ (tables, ``img`` with data URLs).
    """
    head = "".join(f'<th class="{"l" if i < left else ""}">{esc(h)}</th>' for i, h in enumerate(headers))
    body = "".join(
        "<tr>" + "".join(f'<td class="{"l" if i < left else ""}">{c}</td>' for i, c in enumerate(r)) + "</tr>"
        for r in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def kv_table(pairs) -> str:
    """A two-column quantity/value table.

    Parameters
    ----------
    pairs : iterable of (str, object)
        Names and values (formatted with :func:`fmt`).

    Returns
    -------
    str
        HTML.

    Raises
    ------
    ValueError
        Items that are not pairs.

    Examples
    --------
    >>> '<td class="l">period</td>' in kv_table([("period", 6.5)])
    True

    References
    ----------
    WHATWG, "HTML Living Standard", https://html.spec.whatwg.org/ (tables, ``img`` with data URLs).
    """
    return table(["quantity", "value"], [(esc(k), fmt(v)) for k, v in pairs])


def figure(path, caption: str) -> str:
    """An <img> with the file's bytes embedded (PNG or SVG) and its caption. The caution stands
    once at the top of the report (and once inside each figure, in the image's own caption),
    not again under every figure.

    Parameters
    ----------
    path : str or pathlib.Path
        A PNG or SVG file.
    caption : str
        The caption.

    Returns
    -------
    str
        HTML.

    Raises
    ------
    OSError
        The file cannot be read.

    Examples
    --------
    >>> html_text = figure("orbits.png", "The orbits")        # doctest: +SKIP

    References
    ----------
    WHATWG, "HTML Living Standard", https://html.spec.whatwg.org/ (tables, ``img`` with data URLs).; RFC 2397, "The 'data' URL scheme" (1998).
    """
    path = Path(path)
    data = path.read_bytes()
    mime = "image/svg+xml" if path.suffix.lower() == ".svg" else "image/png"
    b64 = base64.b64encode(data).decode("ascii")
    return (f'<figure><img alt="{esc(caption)}" src="data:{mime};base64,{b64}">'
            f"<figcaption>{esc(caption)}</figcaption></figure>")


def check_row(check: dict) -> tuple:
    """A constraint row: name, required, actual, margin, pass/fail.

    Parameters
    ----------
    check : dict
        :meth:`CheckResult.to_dict` of the check.

    Returns
    -------
    tuple of str
        Cells (HTML).

    Raises
    ------
    AttributeError
        Not a dict.

    Examples
    --------
    >>> from cr3bp.scenario.checks import CheckResult
    >>> check_row(CheckResult("max_period", "period", 7.0, 6.5, 0.5, "d", True).to_dict())[-1]
    '<span class="pass">PASS</span>'

    References
    ----------
    WHATWG, "HTML Living Standard", https://html.spec.whatwg.org/ (tables, ``img`` with data URLs).
    """
    ok = bool(check.get("passed"))
    return (esc(check.get("name", "")), fmt(check.get("required")), fmt(check.get("actual")),
            fmt(check.get("margin")), f'<span class="{"pass" if ok else "fail"}">{"PASS" if ok else "FAIL"}</span>')


def document(title: str, sections: list[tuple[str, str]]) -> str:
    """The whole HTML page: the caution (once, at the top), assumptions, then the given
    (heading, html) sections.

    Parameters
    ----------
    title : str
        The page title.
    sections : iterable of (str, str)
        Heading and HTML of each section.

    Returns
    -------
    str
        The page.

    Raises
    ------
    ValueError
        Sections that are not pairs.

    Examples
    --------
    >>> "preliminary" in document("Demo", [("Orbits", "<p>none</p>")])
    True

    References
    ----------
    WHATWG, "HTML Living Standard", https://html.spec.whatwg.org/ (tables, ``img`` with data URLs).; Common practice (preliminary mission design outputs carry their model and a caution;
    :mod:`cr3bp.cautions`).
    """
    parts = [
        "<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
        f"<title>{esc(title)}</title><style>{_STYLE}</style></head><body>",
        f"<h1>{esc(title)}</h1>",
        f'<div class="caution" id="caution">{esc(CAUTION)}</div>',
        '<div class="assumptions"><h2>Model assumptions</h2><ul>'
        + "".join(f"<li>{esc(a)}</li>" for a in ASSUMPTIONS) + "</ul></div>",
    ]
    for heading, body in sections:
        parts.append(f"<section><h2>{esc(heading)}</h2>{body}</section>")
    parts.append("</body></html>")
    return "\n".join(parts)


def write(path, title: str, sections) -> Path:
    """Write the HTML page atomically.

    Parameters
    ----------
    path : str or pathlib.Path
        The file.
    title : str
        The page title.
    sections : iterable of (str, str)
        Heading and HTML of each section.

    Returns
    -------
    pathlib.Path
        The file written.

    Raises
    ------
    OutputError
        The file cannot be written.

    Examples
    --------
    >>> import tempfile
    >>> p = write(Path(tempfile.mkdtemp()) / "r.html", "Demo", [])
    >>> p.read_text().startswith("<!DOCTYPE html>")
    True

    References
    ----------
    WHATWG, "HTML Living Standard", https://html.spec.whatwg.org/ (tables, ``img`` with data URLs).
    """
    write_text(path, document(title, sections))
    return Path(path)
