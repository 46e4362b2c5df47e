"""Periodic orbits: seeds, correction, continuation, families, stability."""

from .orbit import PeriodicOrbit

__all__ = ["PeriodicOrbit"]
