"""The numpy ADF (lag length by AIC) against statsmodels' adfuller, the reference."""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.api as sm
from statsmodels.tsa.stattools import adfuller

from forecasting_core._adf import adf_aic


def _series(rng: np.random.Generator, kind: int, n: int) -> np.ndarray:
    e = rng.normal(size=n)
    shapes = {
        0: np.cumsum(e),  # random walk
        1: e,  # white noise
        2: np.cumsum(np.cumsum(e)),  # integrated twice
        3: 0.05 * np.arange(n) + np.convolve(e, [1.0, 0.6], "same"),  # trend + MA(1)
    }
    return shapes[kind] * rng.uniform(0.1, 1000.0)


@pytest.mark.parametrize("regression", ["c", "ct"])
def test_adf_matches_statsmodels_on_simulated_series(regression):
    # Reference: statsmodels.tsa.stattools.adfuller(autolag="AIC"), same lag rule and tables.
    rng = np.random.default_rng(20261201)
    compared = 0
    for i in range(160):
        n = int(rng.integers(12, 160))
        x = _series(rng, i % 4, n)
        stat, p, lags, nobs, crit, _ic = adfuller(
            x, regression=regression, autolag="AIC", result_object=False
        )
        got = adf_aic(x, regression)
        assert got[2:4] == (lags, nobs), f"series {i} (n={n})"
        assert got[0] == pytest.approx(stat, rel=1e-8, abs=1e-10)
        assert got[1] == pytest.approx(p, rel=1e-8, abs=1e-12)
        assert got[4] == crit
        compared += 1
    assert compared == 160


def test_adf_on_the_nile_flow_matches_statsmodels(nile):
    # Nile annual flow (statsmodels ships it); reference values from statsmodels itself.
    x = nile.to_numpy()
    for regression in ("c", "ct"):
        ref = adfuller(x, regression=regression, autolag="AIC", result_object=False)
        got = adf_aic(x, regression)
        assert got[0] == pytest.approx(ref[0], rel=1e-9)
        assert got[2] == ref[2]


def test_adf_on_sunspots_matches_statsmodels_statistic_p_value_and_lags():
    # Yearly sunspot numbers 1700-2008 (shipped by statsmodels). With the AIC lag choice
    # statsmodels gives about -2.84, p about 0.053 with 8 lags (its own output, not from memory).
    x = sm.datasets.sunspots.load_pandas().data["SUNACTIVITY"].to_numpy(float)
    ref = adfuller(x, regression="c", autolag="AIC", result_object=False)
    got = adf_aic(x, "c")
    assert got[0] == pytest.approx(ref[0], rel=1e-9)
    assert got[1] == pytest.approx(ref[1], rel=1e-9)
    assert got[2] == ref[2] == 8


def test_adf_refuses_a_series_too_short_for_the_regression_like_statsmodels():
    x = np.array([1.0, 3.0, 2.0])
    with pytest.raises(ValueError, match="too short"):
        adfuller(x, regression="ct", autolag="AIC", result_object=False)
    with pytest.raises(ValueError, match="too short"):
        adf_aic(x, "ct")
