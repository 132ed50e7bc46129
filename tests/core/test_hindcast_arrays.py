"""The hindcast's array shortcuts give the numbers of the plain Series-based functions.

The hindcast refits every benchmark at every origin on numpy arrays (``_bench_step``) and
scores forecasts from per-model blocks of arrays. The references here are the public
functions the shortcuts stand in for: ``fit_benchmark`` on the data up to the origin followed
by ``predict_benchmark``, and the scores read from the errors frame. Equality is exact.
Series are seeded random walks (invented, for the comparison only).
"""

from __future__ import annotations

import re
from dataclasses import replace

import numpy as np
import pandas as pd
import pytest

from forecasting_core._benchmarks import _transformed, fit_benchmark, predict_benchmark
from forecasting_core._hindcast import _bench_step, run_hindcast
from forecasting_core._results import InputError, TransformSpec


def _series(freq: str, gaps: bool, seed: int) -> pd.Series:
    rng = np.random.default_rng(seed)
    n = 40
    x = np.exp(5.0 + np.cumsum(rng.normal(0.0, 0.1, n)))
    if gaps:
        x[rng.choice(np.arange(2, n), 4, replace=False)] = np.nan
    return pd.Series(x, index=pd.period_range("1990", periods=n, freq=freq), name="s")


@pytest.mark.parametrize("freq", ["Y", "Q", "M"])
@pytest.mark.parametrize("gaps", [False, True])
@pytest.mark.parametrize("method", ["refit", "fixed"])
@pytest.mark.parametrize("transform", ["none", "log", "boxcox"])
def test_benchmark_step_equals_fit_then_predict_on_the_data_up_to_the_origin(freq, gaps, method, transform):
    y = _series(freq, gaps, seed=len(freq) + 3 * gaps)
    spec = TransformSpec(transform, 0.3 if transform == "boxcox" else None)
    m = {"Y": 1, "Q": 4, "M": 12}[freq]
    keys = ["naive", "drift", "mean"] + (["seasonal_naive"] if m > 1 else [])
    z_all = _transformed(y, spec)
    for key in keys:
        try:
            model = fit_benchmark(y, key, spec)
        except InputError:  # e.g. a season never observed
            model = fit_benchmark(y, "naive", spec)
            model = replace(model, key=key)
        for t in range(14, len(y) - 1, 5):
            train = y.iloc[: t + 1]
            try:
                fitted = replace(model, series=train) if method == "fixed" else fit_benchmark(train, key, spec)
                want = predict_benchmark(fitted, 3)
            except (InputError, IndexError) as exc:  # the same failure either way
                with pytest.raises(type(exc), match=f"^{re.escape(str(exc))}$"):
                    _bench_step(model, z_all[: t + 1], 3, method, m)
                continue
            got = _bench_step(model, z_all[: t + 1], 3, method, m)
            np.testing.assert_array_equal(got[0], want[0])
            np.testing.assert_array_equal(got[1], want[1])


def test_benchmark_step_raises_the_same_message_as_fit_benchmark():
    y = pd.Series([5.0, np.nan, 6.0, np.nan, 7.0], index=pd.period_range("2001", periods=5, freq="Y"))
    spec = TransformSpec("none")
    model = fit_benchmark(pd.Series([1.0, 2.0, 3.0], index=y.index[:3]), "naive", spec)
    with pytest.raises(InputError) as want:
        fit_benchmark(y, "naive", spec)
    with pytest.raises(InputError, match="needs at least 1 pair of consecutive") as got:
        _bench_step(model, _transformed(y, spec), 2, "refit", 1)
    assert str(got.value) == str(want.value)


@pytest.mark.parametrize("gaps", [False, True])
def test_scores_equal_plain_numpy_on_the_errors_frame(gaps):
    y = _series("Y", gaps, seed=11)
    spec = TransformSpec("log")
    models = [fit_benchmark(y, k, spec) for k in ("drift", "mean", "naive")]
    h = run_hindcast(y, models, horizon=4, origins=8)
    for s in h.scores:
        rows = h.errors[h.errors["model"] == s.model]
        x, med, mean = (rows[c].to_numpy(float) for c in ("actual", "median", "mean"))
        lo, hi = rows["lo80"].to_numpy(float), rows["hi80"].to_numpy(float)
        assert s.forecasts == len(rows)
        assert s.origins == rows["origin"].nunique()
        assert s.mae == float(np.mean(np.abs(x - med)))
        assert s.rmse == float(np.sqrt(np.mean((x - mean) ** 2)))
        assert s.coverage80 == float(100.0 * np.mean((x >= lo) & (x <= hi)))
