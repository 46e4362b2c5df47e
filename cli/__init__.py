"""The ``librate`` command (installed as the package ``librate_cli``). Thin: parse, call, format."""
