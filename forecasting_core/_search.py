"""Candidate fitting and order search (exhaustive and stepwise). STUB."""

from __future__ import annotations

from forecasting_core._results import Candidate, Comparison


def fit_model(y, order, seasonal_order=None, constant=None, transform="none") -> Candidate:
    """Fit one ARIMA order (forced orders go through the same checks)."""
    raise NotImplementedError


def compare_models(y, horizon: int = 5, transform: str = "auto", **settings) -> Comparison:
    """Search orders, fit benchmarks, run the hindcast and residual checks."""
    raise NotImplementedError
