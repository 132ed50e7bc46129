"""ADF, KPSS, differencing order (d <= 2), seasonal differencing, ACF/PACF. STUB."""

from __future__ import annotations

import pandas as pd

from forecasting_core._results import StationarityReport


def assess_stationarity(y: pd.Series, *, transform: str = "none", alpha: float = 0.05) -> StationarityReport:
    """Choose d (KPSS sequence at 5%, ADF cross-check, d <= 2) and seasonal D (<= 1)."""
    raise NotImplementedError
