"""Benchmarks against the formulas of Hyndman & Athanasopoulos, Forecasting: Principles and
Practice, 3rd ed. (FPP3), section 5.5, worked by hand on small series.

Residual variance, FPP3 section 5.5: sigma^2 = sum(e_t^2) / (T - K - M), K parameters,
M residuals that cannot be formed (naive K=0, M=1; drift K=1, M=1; mean K=1, M=0;
seasonal naive K=0, M=m).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from forecasting_core._benchmarks import fit_benchmark, fit_benchmarks, predict_benchmark
from forecasting_core._results import InputError, TransformSpec

# Five annual values, T = 5.
ANNUAL = pd.Series(
    [10.0, 12.0, 11.0, 15.0, 14.0], index=pd.period_range("2001", periods=5, freq="Y")
)
# Two years of quarterly values, m = 4, T = 8.
QUARTERLY = pd.Series(
    [5.0, 7.0, 6.0, 9.0, 6.0, 8.0, 8.0, 10.0],
    index=pd.period_range("2020Q1", periods=8, freq="Q"),
)
H = np.arange(1, 7)


def test_last_value_point_and_band_follow_sqrt_h():
    # By hand: differences 2, -1, 4, -1; squares sum 22; sigma^2 = 22 / (5 - 0 - 1) = 5.5.
    # FPP3 5.5: point y_T = 14, sd_h = sigma sqrt(h).
    b = fit_benchmark(ANNUAL, "naive")
    assert b.label == "last value"
    assert b.sigma2 == pytest.approx(5.5)
    mean, var = predict_benchmark(b, 6)
    np.testing.assert_allclose(mean, 14.0)
    np.testing.assert_allclose(np.sqrt(var), math.sqrt(5.5) * np.sqrt(H))


def test_drift_point_and_band_follow_sqrt_h_one_plus_h_over_t():
    # By hand: c = (14 - 10) / 4 = 1; residuals 2-1, -1-1, 4-1, -1-1 = 1, -2, 3, -2;
    # squares sum 18; sigma^2 = 18 / (5 - 1 - 1) = 6.
    # FPP3 5.5: point y_T + h c, sd_h = sigma sqrt(h (1 + h / T)), T = 5.
    b = fit_benchmark(ANNUAL, "drift")
    assert b.label == "last value + drift"
    assert b.drift == pytest.approx(1.0)
    assert b.sigma2 == pytest.approx(6.0)
    mean, var = predict_benchmark(b, 6)
    np.testing.assert_allclose(mean, 14.0 + H)
    np.testing.assert_allclose(np.sqrt(var), math.sqrt(6.0) * np.sqrt(H * (1 + H / 5)))


def test_long_run_mean_point_and_band_follow_sqrt_one_plus_one_over_t():
    # By hand: mean 62 / 5 = 12.4; deviations -2.4, -0.4, -1.4, 2.6, 1.6; squares
    # 5.76 + 0.16 + 1.96 + 6.76 + 2.56 = 17.2; sigma^2 = 17.2 / (5 - 1 - 0) = 4.3.
    # FPP3 5.5: sd = sigma sqrt(1 + 1/T) = sqrt(4.3 * 1.2), the same at every step.
    b = fit_benchmark(ANNUAL, "mean")
    assert b.label == "long-run mean"
    assert b.sigma2 == pytest.approx(4.3)
    mean, var = predict_benchmark(b, 6)
    np.testing.assert_allclose(mean, 12.4)
    np.testing.assert_allclose(np.sqrt(var), math.sqrt(4.3 * 1.2))


def test_same_season_last_year_point_and_band_follow_sqrt_k_plus_one():
    # By hand: lag-4 differences 6-5, 8-7, 8-6, 10-9 = 1, 1, 2, 1; squares sum 7;
    # sigma^2 = 7 / (8 - 0 - 4) = 1.75. Points repeat the last year: 6, 8, 8, 10, 6, 8, 8, 10.
    # FPP3 5.5: sd_h = sigma sqrt(k + 1), k = floor((h - 1) / m): k = 0 for h 1..4, 1 for 5..8.
    b = fit_benchmark(QUARTERLY, "seasonal_naive")
    assert b.label == "same season last year"
    assert b.sigma2 == pytest.approx(1.75)
    mean, var = predict_benchmark(b, 9)
    np.testing.assert_allclose(mean, [6, 8, 8, 10, 6, 8, 8, 10, 6])
    k = (np.arange(1, 10) - 1) // 4
    np.testing.assert_allclose(np.sqrt(var), math.sqrt(1.75) * np.sqrt(k + 1))


def test_ninety_five_percent_band_half_width_is_1_96_sd():
    # FPP3 5.5 table of multipliers: 95% -> 1.96 (scipy.stats.norm.ppf(0.975) = 1.95996).
    from scipy.stats import norm

    _, var = predict_benchmark(fit_benchmark(ANNUAL, "naive"), 3)
    half = norm.ppf(0.975) * np.sqrt(var)
    np.testing.assert_allclose(half, 1.96 * np.sqrt(5.5 * np.arange(1, 4)), rtol=1e-3)


@pytest.mark.parametrize(
    ("series", "keys"),
    [
        (ANNUAL, ["naive", "drift", "mean"]),
        (QUARTERLY, ["naive", "drift", "mean", "seasonal_naive"]),
    ],
)
def test_seasonal_benchmark_only_for_seasonal_frequencies(series, keys):
    assert [b.key for b in fit_benchmarks(series)] == keys


def test_labels_are_the_design_names():
    # Names fixed in DESIGN.md ("benchmark models").
    assert [b.label for b in fit_benchmarks(QUARTERLY)] == [
        "last value",
        "last value + drift",
        "long-run mean",
        "same season last year",
    ]


def test_missing_last_value_uses_last_observed_and_widens_band():
    # The final year is missing: the last observed value (14, 2005) is carried forward and the
    # 2007 forecast is two random-walk steps from it: var = 2 sigma^2, sigma^2 = 22 / 4 as above
    # (the difference into the missing year cannot be formed and is left out).
    y = pd.concat([ANNUAL, pd.Series([np.nan], index=pd.period_range("2006", periods=1, freq="Y"))])
    b = fit_benchmark(y, "naive")
    assert b.sigma2 == pytest.approx(5.5)
    mean, var = predict_benchmark(b, 2)
    np.testing.assert_allclose(mean, 14.0)
    np.testing.assert_allclose(var, [5.5 * 2, 5.5 * 3])


def test_missing_middle_year_keeps_drift_as_first_to_last_slope():
    # 10, 12, NaN, 15, 14: drift = (14 - 10) / 4 = 1 (first-to-last slope); the available
    # one-year differences are 2 and -1 -> residuals 1 and -2, sigma^2 = 5 / (2 - 1) = 5.
    y = ANNUAL.copy()
    y.iloc[2] = np.nan
    b = fit_benchmark(y, "drift")
    assert b.drift == pytest.approx(1.0)
    assert b.sigma2 == pytest.approx(5.0)


def test_missing_same_season_value_reaches_back_a_year():
    # 2021Q2 missing: the Q2 forecast for 2022 comes from 2020Q2 (7) and is two seasonal
    # random-walk steps away: var = 2 sigma^2. Lag-4 differences left: 1, 2, 1 -> sigma^2 = 6/3.
    y = QUARTERLY.copy()
    y.iloc[5] = np.nan
    b = fit_benchmark(y, "seasonal_naive")
    assert b.sigma2 == pytest.approx(2.0)
    mean, var = predict_benchmark(b, 4)
    np.testing.assert_allclose(mean, [6, 7, 8, 10])
    np.testing.assert_allclose(var, [2.0, 4.0, 2.0, 2.0])


def test_log_transform_works_on_the_log_scale():
    # On the log scale the last-value variance is the mean squared log difference.
    y = pd.Series([1.0, np.e, 1.0, np.e], index=pd.period_range("2001", periods=4, freq="Y"))
    b = fit_benchmark(y, "naive", TransformSpec("log"))
    assert b.sigma2 == pytest.approx(1.0)
    mean, _ = predict_benchmark(b, 1)
    np.testing.assert_allclose(mean, 1.0)


@pytest.mark.parametrize(
    ("key", "values", "match"),
    [
        ("drift", [1.0, 2.0], "needs at least 2 pairs"),
        ("mean", [1.0], "needs at least 2 observed values"),
        ("seasonal_naive", [1.0, 2.0, 3.0], "quarterly or monthly data"),
        ("holt", [1.0, 2.0, 3.0], "benchmark must be one of"),
    ],
)
def test_unusable_benchmark_request_says_why(key, values, match):
    y = pd.Series(values, index=pd.period_range("2001", periods=len(values), freq="Y"))
    with pytest.raises(InputError, match=match):
        fit_benchmark(y, key)


def test_steps_must_be_positive():
    with pytest.raises(InputError, match="steps must be a positive integer. Got 0 instead."):
        predict_benchmark(fit_benchmark(ANNUAL, "naive"), 0)


@pytest.mark.parametrize(
    ("key", "sd"),
    [
        # FPP3 5.5 by hand on ANNUAL (T = 5): sigma^2 5.5 (naive), 6 (drift), 4.3 (mean).
        ("naive", math.sqrt(5.5) * np.sqrt([1, 2, 3])),
        ("drift", math.sqrt(6.0) * np.sqrt(np.array([1, 2, 3]) * (1 + np.array([1, 2, 3]) / 5))),
        ("mean", np.full(3, math.sqrt(4.3 * 1.2))),
    ],
)
def test_published_band_widths_come_through_make_forecast(key, sd):
    # 95% band = point -+ 1.96 sd (FPP3 5.5; scipy.stats.norm.ppf(0.975) = 1.959964).
    from scipy.stats import norm

    from forecasting_core import make_forecast

    table = make_forecast(fit_benchmark(ANNUAL, key), horizon=3, levels=(80, 95)).table
    np.testing.assert_allclose(table["hi95"] - table["lo95"], 2 * norm.ppf(0.975) * sd, rtol=1e-9)
    np.testing.assert_allclose(table["hi80"] - table["lo80"], 2 * norm.ppf(0.9) * sd, rtol=1e-9)
