"""
Farlight, stage by stage
========================

The demo mission (``examples/farlight.toml``) from Python: the relay's 9:2 near-rectilinear
halo, the L1 staging halo, legs from a 100 km lunar orbit onto the staging halo, and the
relay's eclipses over a year. All Δv and times are CR3BP values.
"""

import matplotlib.pyplot as plt

import cr3bp

em = cr3bp.system("earth-moon")
relay = cr3bp.orbit(em, "halo L2 south resonance=9:2")
staging = cr3bp.orbit(em, "halo L1 north az=12000km")
print(relay)
print(staging)

legs = cr3bp.connect("parking moon 100km", staging, candidates=3)
for leg in legs:
    print(f"{leg.kind}: {leg.dv_mps:8.1f} m/s (CR3BP), {leg.tof_days:6.2f} d")

history = cr3bp.shadow(relay, "2031-03-01T00:00:00Z", span="365d")
print(f"{len(history.passes)} eclipse passes in a year, {history.total_min():.0f} min in shadow")

fig, (a, b) = plt.subplots(1, 2, figsize=(12, 5))
relay.plot(ax=a, view="xz")
staging.plot(ax=b, view="xz")
