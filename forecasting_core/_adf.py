"""The augmented Dickey-Fuller test with the lag length chosen by AIC, in plain numpy.

``statsmodels.tsa.stattools.adfuller(x, regression, autolag="AIC")`` fits one statsmodels OLS
model per candidate lag length (11 of them for 50 annual values) and most of its time is
spent building those model objects. This module runs the same regressions with
``numpy.linalg.lstsq`` on the same design matrices and takes the p-value and critical values
from statsmodels' MacKinnon tables, so the answer is statsmodels' own (the tests compare the
two on several hundred series). Only what Haulcast uses is implemented: ``regression`` "c" or
"ct", ``autolag="AIC"``, the default maximum lag.
"""

from __future__ import annotations

import numpy as np
from statsmodels.tsa.adfvalues import mackinnoncrit, mackinnonp

__all__ = ["adf_aic"]

_LOG_2PI = float(np.log(2.0 * np.pi))


def _design(
    x: np.ndarray, lags: int, regression: str, *, prepend: bool
) -> tuple[np.ndarray, np.ndarray]:
    """``(endog, exog)`` of the ADF regression with ``lags`` lagged differences.

    Columns as statsmodels builds them: the lagged level, then lagged differences 1..lags;
    the deterministic terms (constant, then trend 1..nobs) before them when ``prepend``
    (the lag search) and after them otherwise (the final regression).
    """
    dx = np.diff(x)
    nobs = dx.size - lags
    cols = [x[-nobs - 1 : -1]]
    cols += [dx[lags - j : lags - j + nobs] for j in range(1, lags + 1)]
    trend = [np.ones(nobs)]
    if regression == "ct":
        trend.append(np.arange(1.0, nobs + 1.0))
    parts = trend + cols if prepend else cols + trend
    return dx[-nobs:], np.column_stack(parts)


def _ols(endog: np.ndarray, exog: np.ndarray) -> tuple[np.ndarray, float, int]:
    """Coefficients, residual sum of squares and rank of the least-squares fit."""
    beta, _res, rank, _sv = np.linalg.lstsq(exog, endog, rcond=None)
    resid = endog - exog @ beta
    return beta, float(resid @ resid), int(rank)


def adf_aic(x: np.ndarray, regression: str) -> tuple[float, float, int, int, dict[str, float]]:
    """ADF statistic, MacKinnon p-value, lags used, observations used and critical values.

    Parameters
    ----------
    x : numpy.ndarray
        The series, no missing values, not constant, at least 8 values.
    regression : {"c", "ct"}
        Constant only, or constant and linear trend.

    Returns
    -------
    tuple
        ``(stat, pvalue, usedlag, nobs, {"1%", "5%", "10%"})`` as
        ``adfuller(x, regression=regression, autolag="AIC")`` returns them.

    Raises
    ------
    ValueError
        When the series is too short for the regression (as statsmodels does).
    """
    x = np.asarray(x, dtype=float)
    n = x.shape[0]
    ntrend = len(regression)
    maxlag = min(n // 2 - ntrend - 1, int(np.ceil(12.0 * np.power(n / 100.0, 1 / 4.0))))
    if maxlag < 0:
        raise ValueError("sample size is too short to use selected regression component")
    # The lag search uses the sample of the longest lag for every candidate (statsmodels' way).
    endog, full = _design(x, maxlag, regression, prepend=True)
    nobs = endog.size
    start = ntrend + 1
    best: tuple[float, int] | None = None
    for cols in range(start, start + maxlag + 1):
        _beta, ssr, rank = _ols(endog, full[:, :cols])
        llf = -nobs / 2.0 * (_LOG_2PI + np.log(ssr / nobs) + 1.0)
        aic = -2.0 * llf + 2.0 * rank
        if best is None or (aic, cols) < best:
            best = (aic, cols)
    assert best is not None
    usedlag = best[1] - start
    endog, exog = _design(x, usedlag, regression, prepend=False)
    beta, ssr, rank = _ols(endog, exog)
    nobs = endog.size
    sigma2 = ssr / (nobs - rank)
    cov00 = float(np.linalg.pinv(exog.T @ exog)[0, 0]) * sigma2
    stat = float(beta[0] / np.sqrt(cov00))
    pvalue = float(mackinnonp(stat, regression=regression, N=1))
    crit = mackinnoncrit(N=1, regression=regression, nobs=nobs)
    return stat, pvalue, usedlag, nobs, {"1%": crit[0], "5%": crit[1], "10%": crit[2]}
