"""Tubes: the invariant manifolds of a periodic orbit (:mod:`.manifolds`), Poincaré sections
and their crossings (:mod:`.sections`, with the batch propagation both use), and the
connections found where tubes meet on a section (:mod:`.connections`)."""
