"""last value, drift, long-run mean, same season last year. STUB."""

from __future__ import annotations


def fit_benchmarks(y, transform="none"):
    """Fit every benchmark suited to the series' frequency."""
    raise NotImplementedError
