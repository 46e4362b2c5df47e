"""Transfers: the leg type and its record (:mod:`.leg`), the node list of a transfer graph
(:mod:`.nodes`), two-impulse legs (:mod:`.targeting`), the graph built from them (:mod:`.graph`)
with its legs run as parallel tasks (:mod:`.tasks`), the route search over it (:mod:`.search`),
the best route stitched by multiple shooting (:mod:`.stitch`), and the one design pipeline that
joins them for ``librate route`` and scenario transfers (:mod:`.design`)."""
