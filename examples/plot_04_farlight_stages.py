"""
Farlight, stage by stage
========================

The demo mission (``examples/farlight.toml``) from Python: the relay's 9:2 near-rectilinear
halo, the direct departure from a 200 km low Earth parking orbit to it (departure burn, C3,
Earth-relative speed, inclination, insertion burn), and the relay's eclipses over a year. All
Δv and times are CR3BP values.
"""

import cr3bp
from cr3bp.plotting.base import caption
from cr3bp.plotting.departures import plot_departure
from cr3bp.transfers.departure import design_departure

em = cr3bp.system("earth-moon")
relay = cr3bp.orbit(em, "halo L2 south resonance=9:2")
print(relay)

dep = design_departure(relay, 200.0, path="direct")
print(f"departure {dep.departure_dv_mps:.1f} m/s, C3 {dep.c3_km2_s2:.2f} km²/s², "
      f"{dep.departure_speed_kms:.3f} km/s after the burn, inclination {dep.inclination_deg:.2f}° "
      f"to the Moon's orbit plane; insertion {dep.dv_mps - dep.departure_dv_mps:.1f} m/s; "
      f"total {dep.dv_mps:.1f} m/s in {dep.tof_days:.2f} d (CR3BP)")

history = cr3bp.shadow(relay, "2031-03-01T00:00:00Z", span="365d")
print(f"{len(history.passes)} eclipse passes in a year, {history.total_min():.0f} min in shadow")

fig = plot_departure(dep, summary=True)
caption(fig, "Farlight: the direct departure from a 200 km Earth parking orbit to the relay's orbit, "
             "rotating Earth-Moon frame; below, zoomed on the relay's orbit.")
