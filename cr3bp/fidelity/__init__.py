"""From CR3BP design to an ephemeris model: point-mass dynamics from our tables, transition."""
