"""Residual checks of a fitted ARIMA candidate.

* Residuals: the standardized one-step prediction errors of the Kalman filter with the
  candidate's estimates, v_t / sqrt(F_t), on the transformed scale. The first d + D m values
  (the diffuse start of the differenced states) are left out, and so are missing periods.
* Ljung-Box (Ljung & Box 1978, Biometrika 65): Q(L) = n (n + 2) sum_{k=1..L} r_k^2 / (n - k)
  with r_k the residual autocorrelations (the gaps are closed up), referred to a chi-square
  with L - (p + q + P + Q) degrees of freedom. L: min(10, n / 5) for annual data, 8 for
  quarterly and 24 for monthly data (common practice), never fewer than p + q + P + Q + 1.
* Residual ACF with the approximate 95% limit 1.96 / sqrt(n).
* Jarque-Bera normality test (scipy.stats.jarque_bera).
* The five largest |standardized residuals| with their periods; |z| > 3 is named in the verdict.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
from scipy import stats

from forecasting_core._arima import filter_candidate
from forecasting_core._results import (
    Candidate,
    InputError,
    ResidualReport,
    frequency_of,
    time_label,
)

__all__ = ["check_residuals", "ljung_box"]

#: Standardized residuals beyond this are named as outliers in the verdict.
OUTLIER_Z = 3.0


def _acf(e: np.ndarray, nlags: int) -> np.ndarray:
    x = e - e.mean()
    denom = float(np.dot(x, x))
    return np.array([float(np.dot(x[: len(x) - k], x[k:])) / denom for k in range(1, nlags + 1)])


def ljung_box(e: np.ndarray, lags: int, fitted_params: int = 0) -> pd.DataFrame:
    """Ljung-Box Q for lags 1..``lags``; degrees of freedom reduced by ``fitted_params``.

    Returns a frame with columns lag, q, df, pvalue (pvalue NaN where df <= 0).
    """
    e = np.asarray(e, dtype=float)
    n = len(e)
    r = _acf(e, lags)
    k = np.arange(1, lags + 1)
    q = n * (n + 2) * np.cumsum(r**2 / (n - k))
    df = k - fitted_params
    with np.errstate(invalid="ignore"):
        p = np.where(df > 0, stats.chi2.sf(q, np.maximum(df, 1)), np.nan)
    return pd.DataFrame({"lag": k, "q": q, "df": df, "pvalue": p})


def default_lags(frequency: str, n: int) -> int:
    """Ljung-Box lag for the frequency: annual min(10, n/5), quarterly 8, monthly 24."""
    if frequency == "monthly":
        return 24
    if frequency == "quarterly":
        return 8
    return max(1, min(10, n // 5))


def check_residuals(candidate: Candidate, *, lags: int | None = None) -> ResidualReport:
    """Ljung-Box, residual ACF, Jarque-Bera and the largest standardized residuals.

    Parameters
    ----------
    candidate : Candidate
        An accepted candidate.
    lags : int, optional
        Ljung-Box lag (periods at the series' frequency); default by frequency (module notes).

    Returns
    -------
    ResidualReport
    """
    if not isinstance(candidate, Candidate) or not candidate.ok:
        raise InputError(
            "candidate must be an accepted ARIMA candidate. Got "
            f"{getattr(candidate, 'label', type(candidate).__name__)} instead."
        )
    res = filter_candidate(candidate)
    seasonal = candidate.seasonal_order
    burn = candidate.order[1] + (seasonal[1] * seasonal[3] if seasonal else 0)
    std = np.asarray(res.filter_results.standardized_forecasts_error[0], dtype=float)
    index = candidate.series.index
    observed = np.isfinite(np.asarray(candidate.series, dtype=float))
    std = np.where(observed, std, np.nan)  # statsmodels reports 0 for a missing period
    resid = pd.Series(std, index=index, name="standardized residual").iloc[burn:]
    resid = resid[np.isfinite(resid.to_numpy())]
    e = resid.to_numpy()
    n = len(e)
    frequency = frequency_of(candidate.series)
    npar = candidate.order[0] + candidate.order[2] + (seasonal[0] + seasonal[2] if seasonal else 0)
    if lags is None:
        lags = default_lags(frequency, n)
    elif isinstance(lags, bool) or not isinstance(lags, int | np.integer) or lags < 1:
        raise InputError(f"lags must be a positive integer. Got {lags!r} instead.")
    lags = int(min(max(int(lags), npar + 1), n - 2))
    lb = ljung_box(e, lags, npar)
    acf = _acf(e, lags)
    limit = 1.96 / math.sqrt(n)
    jb = stats.jarque_bera(e)
    order = np.argsort(-np.abs(e), kind="stable")[: min(5, n)]
    largest = tuple((time_label(resid.index[i]), float(e[i])) for i in order)

    final = lb.iloc[-1]
    p_final = float(final["pvalue"])
    white = not (math.isfinite(p_final) and p_final < 0.05)
    parts = []
    if white:
        parts.append(
            "Residuals look like white noise"
            + (f" (Ljung-Box p = {p_final:.2f} at lag {lags})." if math.isfinite(p_final) else ".")
        )
    else:
        over = np.flatnonzero(np.abs(acf) > limit)
        lag_at = int(over[np.argmax(np.abs(acf[over]))] + 1) if over.size else int(np.argmax(np.abs(acf)) + 1)
        m = seasonal[3] if seasonal else (4 if frequency == "quarterly" else 12 if frequency == "monthly" else 1)
        hint = "a seasonal AR or MA term" if m > 1 and lag_at % m == 0 else "an AR or MA term"
        parts.append(
            f"Autocorrelation left at lag {lag_at} (Ljung-Box p = {p_final:.2g} at lag {lags}): try adding {hint}."
        )
    if float(jb.pvalue) < 0.05:
        parts.append(
            f"The residuals are not normal (Jarque-Bera p = {float(jb.pvalue):.2g}), so the outer bands may be off."
        )
    outliers = [(t, v) for t, v in largest if abs(v) > OUTLIER_Z]
    if outliers:
        named = ", ".join(f"{t} ({v:+.1f} sd)" for t, v in outliers)
        parts.append(f"Unusually large residuals in {named}: check those periods for data or reporting changes.")
    return ResidualReport(
        model=candidate.label,
        residuals=resid,
        ljung_box=lb,
        jarque_bera=float(jb.statistic),
        jarque_bera_pvalue=float(jb.pvalue),
        acf=tuple(float(v) for v in acf),
        limit=limit,
        largest=largest,
        verdict=" ".join(parts),
        white_noise=white,
    )
