"""
A family of planar Lyapunov orbits about L1
===========================================

``cr3bp.family`` grows the family by continuation, locating its bifurcations; ``plot`` draws
its members coloured by Jacobi constant.
"""

import cr3bp

em = cr3bp.system("earth-moon")
fam = cr3bp.family(em, "lyapunov", point="L1", members=30)
print(fam)
for b in fam.bifurcations:
    print(f"bifurcation ({b.kind}) after member {b.index}: Jacobi constant {b.orbit.jacobi:.6f}")

ax = fam.plot()
