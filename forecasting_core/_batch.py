"""Many series at once, in worker processes. STUB."""

from __future__ import annotations


def run_batch(path, horizon: int = 5, **settings):
    """Compare and forecast every usable series of a file."""
    raise NotImplementedError
