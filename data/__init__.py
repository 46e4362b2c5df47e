"""Data tables shipped with librate (installed as ``cr3bp.data``). Each value names its source."""
