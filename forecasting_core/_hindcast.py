"""Rolling-origin evaluation and skill scores. STUB."""

from __future__ import annotations


def run_hindcast(y, models, horizon: int = 5, origins: int | None = None):
    """Replay past origins for ARIMA candidates and benchmarks."""
    raise NotImplementedError
