"""Real core results shared by the app's figure and export tests (Nile flow, statsmodels)."""

from __future__ import annotations

import pandas as pd
import pytest

import forecasting_core as fc


@pytest.fixture(scope="session")
def comparison(nile: pd.Series) -> fc.Comparison:
    return fc.compare_models(nile, horizon=5)


@pytest.fixture(scope="session")
def forecast(comparison: fc.Comparison) -> fc.Forecast:
    return fc.make_forecast(comparison.best, horizon=5, levels=(50, 80, 95), reference=800.0)
