"""Transfers: the node list of a transfer graph (:mod:`.nodes`), two-impulse legs
(:mod:`.targeting`), the graph built from them (:mod:`.graph`), the route search over it
(:mod:`.search`), and the best route stitched by multiple shooting (:mod:`.stitch`)."""
