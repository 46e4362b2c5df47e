"""
A tube and its Poincaré cut
===========================

The unstable manifold of an L1 Lyapunov orbit (``cr3bp.manifold``), grown to the plane
through the Moon, and its cut there (``cr3bp.section``) in the (y, vy) plane.
"""

import matplotlib.pyplot as plt

import cr3bp
from cr3bp.plotting.manifolds import plot_section_map

em = cr3bp.system("earth-moon")
l1 = cr3bp.orbit(em, "lyapunov L1 jacobi=3.15")
tube = cr3bp.manifold(l1, "unstable", points=80, until="section:x=1-mu")
cut = cr3bp.section(tube, "x=1-mu")
print(tube)
print(f"{len(cut)} of {cut.n_trajectories} trajectories cross x = 1 - mu")

fig, (a, b) = plt.subplots(1, 2, figsize=(15, 5.5))
fig.subplots_adjust(wspace=0.6, right=0.86)
tube.plot(ax=a)
plot_section_map([cut], ("y", "vy"), ax=b)
