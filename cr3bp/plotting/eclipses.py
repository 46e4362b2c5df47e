"""Eclipse timeline: shadow passes over the span, one row per body and kind."""

from __future__ import annotations

import numpy as np

from .base import new_figure, save

ROWS = (("earth", "umbra"), ("earth", "penumbra"), ("moon", "umbra"), ("moon", "penumbra"))
COLOURS = {"umbra": "0.1", "penumbra": "tab:orange"}


def timeline(history, epoch_tdb_s: float, path, title: str = "", text: str = ""):
    """Draw the passes of ``history`` (days from the epoch, one row per body and kind); save to ``path``.

    Parameters
    ----------
    history : object with ``passes`` and ``span_s``
        The shadow passes (:class:`cr3bp.operations.eclipses.Pass`) and the span, s.
    epoch_tdb_s : float
        Epoch of day 0, TDB seconds.
    path : str or path-like
        The file written (captioned with the caution).
    title, text : str
        Axes title; caption lines before the caution.

    Returns
    -------
    path : the given ``path``

    Raises
    ------
    OSError
        The file cannot be written.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> from cr3bp.operations.eclipses import Pass
    >>> from cr3bp.plotting.eclipses import timeline
    >>> h = SimpleNamespace(passes=[Pass("earth", "umbra", 3600.0, 5400.0, 0.0, 4500.0)], span_s=86400.0)
    >>> timeline(h, 0.0, "out/eclipses.png")  # doctest: +SKIP
    'out/eclipses.png'

    References
    ----------
    .. [1] matplotlib documentation, :meth:`matplotlib.axes.Axes.broken_barh`.
    """
    return save(timeline_figure(history, epoch_tdb_s, title), path, text)


def timeline_figure(history, epoch_tdb_s: float, title: str = ""):
    """The figure of :func:`timeline`, not saved (the caller captions and saves it).

    Parameters
    ----------
    history : object with ``passes`` and ``span_s``
    epoch_tdb_s : float
        Epoch of day 0, TDB seconds.
    title : str

    Returns
    -------
    matplotlib Figure

    Raises
    ------
    None

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> from cr3bp.operations.eclipses import Pass
    >>> from cr3bp.plotting.eclipses import timeline_figure
    >>> h = SimpleNamespace(passes=[Pass("earth", "umbra", 3600.0, 5400.0, 0.0, 4500.0)], span_s=86400.0)
    >>> ax = timeline_figure(h, 0.0, "eclipses").axes[0]
    >>> ax.get_yticklabels()[0].get_text().splitlines(), [float(v) for v in ax.get_xlim()]
    (['Earth umbra', '1 passes, 30 min'], [0.0, 1.0])

    References
    ----------
    .. [1] matplotlib documentation, :meth:`matplotlib.axes.Axes.broken_barh`.
    """
    rows = list(ROWS)
    fig, ax = new_figure(size=(9.0, 4.6))
    labels = []
    for k, (body, kind) in enumerate(rows):
        spans = [((p.start_tdb_s - epoch_tdb_s) / 86400.0, max(p.duration_s / 86400.0, 0.02))
                 for p in history.passes if p.body == body and p.kind == kind]
        if spans:
            ax.broken_barh(spans, (k - 0.35, 0.7), color=COLOURS[kind])
        tot = sum(p.duration_s for p in history.passes if p.body == body and p.kind == kind) / 60.0
        labels.append(f"{body.capitalize()} {kind}\n{len(spans)} passes, {tot:.0f} min")
    ax.set_yticks(np.arange(len(labels)))
    ax.set_yticklabels(labels, fontsize=7)
    ax.set_ylim(len(labels) - 0.5, -0.5)
    span_d = (history.span_s) / 86400.0
    ax.set_xlim(0.0, span_d)
    ax.set_xlabel("days from the epoch (TDB)")
    ax.grid(axis="x", color="0.85")
    ax.set_title(title, fontsize=9)
    fig.tight_layout()
    return fig
