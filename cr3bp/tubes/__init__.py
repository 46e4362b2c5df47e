"""Tubes: the invariant manifolds of a periodic orbit (:mod:`.manifolds`), Poincaré sections
and their crossings (:mod:`.sections`; the batch propagation both use is
:mod:`cr3bp.integrate.batch`), the connections found where tubes meet on a section
(:mod:`.connections`), legs between a parking orbit and a periodic orbit through its first
periapsis (:mod:`.parking`), the time of flight to arrival at an orbit (:mod:`.arrival`), and
transit classification (:mod:`.transit`)."""
