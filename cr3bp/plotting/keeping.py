"""Station-keeping histogram: Δv per year of the Monte Carlo trials (ephemeris model)."""

from __future__ import annotations

import numpy as np
from matplotlib.ticker import MaxNLocator

from .base import new_figure, save


def histogram(budget, path, title: str = "", text: str = ""):
    """Two panels: Δv per year of each trial (mean and 95th percentile marked) and the size of
    every executed burn; saved to ``path`` with the caution for the ephemeris model.

    Parameters
    ----------
    budget : Budget
        From :func:`cr3bp.operations.keeping.budget`.
    path : str or path-like
        The file written.
    title, text : str
        Figure title; caption lines before the caution.

    Returns
    -------
    path : the given ``path``

    Raises
    ------
    OSError
        The file cannot be written.

    Examples
    --------
    A station-keeping budget takes minutes and the call writes a file, so it is not run:

    >>> from cr3bp import orbit, system
    >>> from cr3bp.operations.keeping import Errors, budget
    >>> from cr3bp.plotting.keeping import histogram
    >>> nrho = orbit(system("earth-moon"), "halo L2 south resonance=9:2")                 # doctest: +SKIP
    >>> b = budget(nrho, "2031-03-01T00:00:00 TDB", 60.0, Errors(1.0, 0.01, 0.01, 0.001), 20)  # doctest: +SKIP
    >>> histogram(b, "out/keeping.png")                                                   # doctest: +SKIP
    'out/keeping.png'

    References
    ----------
    .. [1] matplotlib documentation, :meth:`matplotlib.axes.Axes.hist`.
    """
    fig, axes = new_figure(ncols=2, size=(11.0, 4.6))
    ax1, ax2 = np.ravel(axes)
    py = budget.per_year_mps
    s = budget.summary()
    ax1.hist(py, bins=max(5, min(40, int(np.sqrt(py.size)) * 2)), color="tab:blue", alpha=0.8,
             edgecolor="white")
    mean, p95 = s["dv_per_year_mps"]["mean"], s["dv_per_year_mps"]["p95"]
    ax1.axvline(mean, color="k", lw=1.2, label=f"mean {mean:.3g} m/s")
    ax1.axvline(p95, color="tab:red", lw=1.2, ls="--", label=f"95th percentile {p95:.3g} m/s")
    ax1.set_xlabel("Δv per year, m/s (ephemeris model)")
    ax1.set_ylabel("trials")
    ax1.legend(fontsize=8)
    ax1.set_title(f"{budget.trials} trials", fontsize=9)
    b = budget.burn_mps
    burns = b[b > 0] * 100.0
    if burns.size:
        ax2.hist(burns, bins=40, color="tab:green", alpha=0.8, edgecolor="white")
    ax2.set_xlabel("Δv per maneuver, cm/s (ephemeris model)")
    ax2.set_ylabel("maneuvers")
    ax2.set_title(f"{burns.size} burns executed, {s['skipped_under_min_burn']} under the minimum skipped",
                  fontsize=9)
    if title:
        fig.suptitle(title, fontsize=10)
    for ax in (ax1, ax2):
        ax.yaxis.set_major_locator(MaxNLocator(integer=True))
    fig.tight_layout(rect=(0.0, 0.1, 1.0, 1.0))     # room for the caption below the axes
    return save(fig, path, text, model="ephemeris")
