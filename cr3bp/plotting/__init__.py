"""Figures (matplotlib, Agg backend). Every function takes an Axes (or makes a Figure) and
returns it; saving goes through :func:`save` (atomic, caption with the caution).

Modules: :mod:`.base` (primaries, Lagrange points, caption, save) and one module per subject,
added as the subjects land (trajectories, energy, orbits, manifolds, routes).
"""

from .base import caption, draw_primaries, new_figure, save
from .energy import draw_lagrange_points, plot_hill_region

__all__ = ["new_figure", "draw_primaries", "caption", "save", "draw_lagrange_points",
           "plot_hill_region"]
