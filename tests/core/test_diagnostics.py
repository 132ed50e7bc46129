"""Residual checks against the Ljung-Box formula, scipy and statsmodels."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from scipy.signal import lfilter

import forecasting_core as fc
from forecasting_core._search import fit_order

NONE = fc.TransformSpec("none")


def annual(values, start: int = 1950) -> pd.Series:
    return pd.Series(np.asarray(values, dtype=float), index=pd.period_range(str(start), periods=len(values), freq="Y"), name="y")


@pytest.fixture(scope="module")
def ar1_fit() -> fc.Candidate:
    rng = np.random.default_rng(50)
    return fit_order(annual(lfilter([1.0], [1.0, -0.6], rng.normal(size=120)) + 5), (1, 0, 0), None, True, NONE)


def test_ljung_box_q_matches_the_published_formula(ar1_fit):
    # Ljung & Box (1978): Q = n (n + 2) sum_{k=1..L} r_k^2 / (n - k), chi-square with
    # L - (p + q) degrees of freedom (scipy.stats.chi2.sf as the reference tail).
    report = fc.check_residuals(ar1_fit)
    e = report.residuals.to_numpy()
    n = len(e)
    x = e - e.mean()
    r = np.array([np.sum(x[:-k] * x[k:]) / np.sum(x * x) for k in range(1, 11)])
    lags = np.arange(1, 11)
    q = n * (n + 2) * np.cumsum(r**2 / (n - lags))
    lb = report.ljung_box
    assert list(lb["lag"]) == list(lags)  # annual: min(10, n / 5) = 10 for n = 120
    np.testing.assert_allclose(lb["q"], q, rtol=1e-10)
    np.testing.assert_allclose(lb["df"], lags - 1)
    np.testing.assert_allclose(lb["pvalue"].iloc[1:], stats.chi2.sf(q[1:], lags[1:] - 1), rtol=1e-10)
    assert np.isnan(lb["pvalue"].iloc[0])  # no degrees of freedom left at lag 1
    np.testing.assert_allclose(report.acf, r, rtol=1e-10)


def test_ljung_box_agrees_with_statsmodels(ar1_fit):
    from statsmodels.stats.diagnostic import acorr_ljungbox

    report = fc.check_residuals(ar1_fit)
    ref = acorr_ljungbox(report.residuals.to_numpy(), lags=10, model_df=1)
    np.testing.assert_allclose(report.ljung_box["q"], ref["lb_stat"], rtol=1e-10)


def test_jarque_bera_is_scipys(ar1_fit):
    report = fc.check_residuals(ar1_fit)
    ref = stats.jarque_bera(report.residuals.to_numpy())
    assert report.jarque_bera == pytest.approx(ref.statistic)
    assert report.jarque_bera_pvalue == pytest.approx(ref.pvalue)


def test_white_noise_residuals_get_the_plain_verdict(ar1_fit):
    report = fc.check_residuals(ar1_fit)
    assert report.white_noise
    assert report.verdict.startswith("Residuals look like white noise")


def test_autocorrelation_left_names_the_lag():
    # An AR(2) with a strong second lag fitted as AR(1) leaves autocorrelation.
    rng = np.random.default_rng(51)
    y = annual(lfilter([1.0], [1.0, 0.0, -0.7], rng.normal(size=150)))
    c = fit_order(y, (1, 0, 0), None, True, NONE)
    report = fc.check_residuals(c)
    assert not report.white_noise
    assert "Autocorrelation left at lag 2" in report.verdict
    assert "try adding an AR or MA term" in report.verdict


def test_an_outlier_year_is_named():
    rng = np.random.default_rng(52)
    values = rng.normal(size=60) + 10
    values[30] += 8  # 1980
    report = fc.check_residuals(fit_order(annual(values), (0, 0, 0), None, True, NONE))
    assert report.largest[0][0] == "1980"
    assert "1980" in report.verdict


def test_burn_in_and_missing_years_are_left_out():
    rng = np.random.default_rng(53)
    values = np.cumsum(rng.normal(size=40))
    values[[5, 6]] = np.nan
    c = fit_order(annual(values), (0, 1, 0), None, False, NONE)
    report = fc.check_residuals(c)
    assert len(report.residuals) == 40 - 1 - 2
    assert report.residuals.index[0] == pd.Period("1951", freq="Y")


@pytest.mark.parametrize(("freq", "n", "lag"), [("M", 120, 24), ("Q", 60, 8)])
def test_seasonal_frequencies_use_their_own_lag(freq, n, lag):
    rng = np.random.default_rng(54)
    y = pd.Series(rng.normal(size=n) + 3, index=pd.period_range("2000-01", periods=n, freq=freq))
    report = fc.check_residuals(fit_order(y, (1, 0, 0), None, True, NONE))
    assert report.ljung_box["lag"].iloc[-1] == lag
