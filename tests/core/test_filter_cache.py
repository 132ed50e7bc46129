"""The chosen model's statsmodels results are kept for its forecast and residual checks.

Reference: a fresh statsmodels ``ARIMA(...).filter(params)`` on the same data (the numbers a
kept result must equal). The series is statsmodels' bundled Nile dataset (annual flow of the
Nile at Aswan, 1871-1970).
"""

from __future__ import annotations

import threading
import warnings
from dataclasses import replace

import numpy as np
import pandas as pd
import pytest
from statsmodels.datasets import nile
from statsmodels.tsa.arima.model import ARIMA

import forecasting_core as fc
from forecasting_core import _arima, _filter_cache


@pytest.fixture(scope="module")
def nile_series() -> pd.Series:
    data = nile.load_pandas().data
    return pd.Series(
        data["volume"].to_numpy(float),
        index=pd.period_range(str(int(data["year"].iloc[0])), periods=len(data), freq="Y"),
        name="nile",
    )


def test_filtering_the_same_candidate_again_reuses_the_result(nile_series):
    best = fc.fit_model(nile_series, (1, 1, 1))
    first = _arima.filter_candidate(best)
    assert _arima.filter_candidate(best) is first
    # a rank() copy of the candidate (same data and parameters) finds it too
    assert _arima.filter_candidate(replace(best, weight=0.5)) is first
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fresh = ARIMA(nile_series.to_numpy(float), order=(1, 1, 1)).filter(
            np.array([best.params[n] for n in ("ar.L1", "ma.L1", "sigma2")])
        )
    assert first.llf == fresh.llf
    np.testing.assert_array_equal(first.get_forecast(5).predicted_mean, fresh.get_forecast(5).predicted_mean)


def test_other_parameters_or_data_are_filtered_afresh(nile_series):
    best = fc.fit_model(nile_series, (1, 1, 1))
    first = _arima.filter_candidate(best)
    moved = replace(best, params={**best.params, "ar.L1": best.params["ar.L1"] + 0.01})
    assert _arima.filter_candidate(moved) is not first
    shorter = replace(best, series=nile_series.iloc[:-1])
    assert _arima.filter_candidate(shorter).nobs == len(nile_series) - 1


def test_kept_results_are_per_thread_and_bounded(nile_series):
    best = fc.fit_model(nile_series, (0, 1, 1))
    mine = _arima.filter_candidate(best)
    other = []
    worker = threading.Thread(target=lambda: other.append(_arima.filter_candidate(best)))
    worker.start()
    worker.join()
    assert other[0] is not mine and other[0].llf == mine.llf
    for k in range(_filter_cache.FILTER_CACHE_SIZE + 2):
        _arima.filter_candidate(replace(best, params={**best.params, "ma.L1": -0.5 + 0.01 * k}))
    assert len(_filter_cache._FILTERED.results) == _filter_cache.FILTER_CACHE_SIZE
