"""Time and place: time scales and epochs (:mod:`.scales`), where the bodies are
(:mod:`.ephemeris`, reading DE421's tables in :mod:`.ephemeris_tables` or the analytic series of
:mod:`.ephemeris_series`), and the frames a rotating-frame state is carried into (:mod:`.frames`)."""
