"""Files in and out: trajectory sampling and the OEM, CSV and JSON writers and readers
(:mod:`.export`), a stitched route's trajectory table and export (:mod:`.route`), plain JSON
values (:mod:`.plain`), and every file written to a temporary name and renamed into place
(:mod:`.atomic`); TOML inputs checked against a schema written as data (:mod:`.toml_schema`)."""
