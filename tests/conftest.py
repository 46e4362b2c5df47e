"""Shared test settings. Tolerances are named in physical units where they are physical."""

import os
import tempfile

os.environ.setdefault("MPLBACKEND", "Agg")
# commands that use the per-user catalogue write into a throw-away one, never the user's
os.environ["LIBRATE_CATALOG"] = os.path.join(tempfile.mkdtemp(prefix="librate-test-"), "catalog.sqlite")

ONE_KM = 1.0
ONE_METER = 1e-3  # in km
