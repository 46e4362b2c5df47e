"""Living on the orbit at a date: eclipses, ground-station visibility and phasing.

- :mod:`.eclipses`     conical umbra/penumbra of the Earth and the Moon, eclipse passes
- :mod:`.placement`    a periodic orbit placed at an epoch (geocentric J2000 positions)
- :mod:`.visibility`   Earth rotation angle, station elevation, visibility intervals
- :mod:`.phasing`      eclipse history at a phase, and the scan of phases
- :mod:`.keeping`      station-keeping Monte Carlo in the ephemeris model
- :mod:`.dispersion`   insertion dispersion: Monte Carlo and linear covariance of the corrections
"""
