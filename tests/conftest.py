"""Shared test settings. Tolerances are named in physical units where they are physical."""

import os

os.environ.setdefault("MPLBACKEND", "Agg")

ONE_KM = 1.0
ONE_METER = 1e-3  # in km
