"""The scenario room: a TOML mission file checked, run and reported (schema, run, transfers,
report, checks, and the small writers they share in :mod:`cr3bp.scenario.outputs`)."""
