"""Tubes: the invariant manifolds of a periodic orbit (:mod:`.manifolds`), Poincaré sections
and their crossings (:mod:`.sections`; the batch propagation both use is
:mod:`cr3bp.integrate.batch`), and the
connections found where tubes meet on a section (:mod:`.connections`)."""
