"""Residual checks. STUB."""

from __future__ import annotations


def check_residuals(candidate):
    """Ljung-Box, residual ACF, Jarque-Bera, largest standardized residuals."""
    raise NotImplementedError
