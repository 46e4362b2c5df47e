"""
The Lagrange points of the Earth-Moon system
============================================

The five equilibria of the rotating frame (``cr3bp.points``), with their Jacobi constants.
"""

import matplotlib.pyplot as plt

import cr3bp
from cr3bp.plotting.base import axis_labels, caption, draw_primaries

em = cr3bp.system("earth-moon")
pts = cr3bp.points(em)
for p in pts:
    print(f"{p.name}: x = {p.position[0]: .6f} LU, y = {p.position[1]: .6f} LU, C = {p.jacobi:.6f}")

fig, ax = plt.subplots(figsize=(6.4, 5.6))
draw_primaries(ax, em, view="xy")
for p in pts:
    ax.plot(p.position[0], p.position[1], "+", color="tab:purple", ms=10)
    ax.annotate(p.name, (p.position[0], p.position[1]), xytext=(5, 5), textcoords="offset points")
axis_labels(ax, em, view="xy")
ax.set_aspect("equal")
ax.set_title("Earth-Moon Lagrange points (CR3BP, rotating frame)", fontsize=9)
caption(fig)
