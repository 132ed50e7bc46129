"""Bands, reference-level probabilities, forecast tables. STUB."""

from __future__ import annotations


def make_forecast(model, horizon: int = 5, levels=(50, 80, 95), reference=None):
    """Forecast bands on the original scale for a Candidate or Benchmark."""
    raise NotImplementedError
