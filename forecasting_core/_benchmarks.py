"""Benchmark methods: last value, last value + drift, long-run mean, same season last year.

Every benchmark works on the transformed scale ``z = transform(y)`` and gives a normal
predictive distribution there, with the standard deviations of Hyndman & Athanasopoulos,
*Forecasting: Principles and Practice*, 3rd ed., section 5.5 (``T`` observations, residual
standard deviation ``sigma``, horizon ``h``):

=====================  ==========================  ==============================
method                 point forecast              sd of the h-step forecast
=====================  ==========================  ==============================
last value             z_T                         sigma sqrt(h)
last value + drift     z_T + h c                   sigma sqrt(h (1 + h / T))
long-run mean          mean(z)                     sigma sqrt(1 + 1 / T)
same season last year  z_{T + h - m (k + 1)}       sigma sqrt(k + 1), k = floor((h - 1) / m)
=====================  ==========================  ==============================

``sigma`` follows the same section: ``sigma^2 = sum(e_t^2) / (T - K - M)`` over the residuals
``e_t`` of the method, with ``K`` parameters estimated and ``M`` residuals that cannot be
formed (naive: K = 0, M = 1; drift: K = 1, M = 1; mean: K = 1, M = 0; seasonal naive: K = 0,
M = m). In other words, the divisor is the number of residuals available minus ``K``.

Missing periods (NaN) are handled as follows, so that the formulas above are recovered exactly
when nothing is missing:

* the residuals are the one-period (or one-season) differences whose two ends are both
  observed; ``sigma^2`` is the sum of their squares over (their number minus ``K``);
* "last value" is the last observed value; when it lies ``j`` periods before the period being
  forecast, the random-walk variance ``j sigma^2`` is used (``j = h`` without gaps at the end);
* the drift ``c`` is ``(z_last - z_first) / (t_last - t_first)``, the slope of the line through
  the first and last observed values (the usual definition; equal to the mean of the
  differences when nothing is missing), and ``T`` in its band is ``t_last - t_first + 1``;
* the long-run mean and its ``T`` use the observed values only;
* "same season last year" takes, for each season, its last observed value; when that value is
  ``j`` seasons (years) before the target, the variance is ``j sigma^2`` (``j = k + 1``
  without gaps).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from forecasting_core._results import Benchmark, InputError, TransformSpec, period_length

#: Benchmark keys in display order, with their labels.
LABELS: dict[str, str] = {
    "naive": "last value",
    "drift": "last value + drift",
    "mean": "long-run mean",
    "seasonal_naive": "same season last year",
}


def _resolve_spec(y: pd.Series, spec: TransformSpec | str) -> TransformSpec:
    if isinstance(spec, TransformSpec):
        return spec
    if spec == "none":
        return TransformSpec("none", None, "chosen by the user")
    from forecasting_core._transform import choose_transform

    return choose_transform(y, spec)


def _transformed(y: pd.Series, spec: TransformSpec) -> np.ndarray:
    """Original-scale series -> float array on the transformed scale (NaN kept)."""
    values = np.asarray(y, dtype=float)
    if spec.name == "none":
        return values.copy()
    from forecasting_core._transform import transform_series

    return np.asarray(transform_series(values, spec), dtype=float)


def _lag_differences(z: np.ndarray, lag: int) -> np.ndarray:
    """Differences ``z_t - z_{t-lag}`` whose two ends are observed."""
    if len(z) <= lag:
        return np.empty(0)
    d = z[lag:] - z[:-lag]
    return d[np.isfinite(d)]


def _observed_positions(z: np.ndarray) -> np.ndarray:
    return np.flatnonzero(np.isfinite(z))


def _need(key: str, have: int, need: int, what: str) -> None:
    if have < need:
        raise InputError(
            f"the {LABELS[key]!r} benchmark needs at least {need} {what}. Got {have} instead."
        )


def sigma2_and_drift(key: str, z: np.ndarray, m: int) -> tuple[float, float | None]:
    """(sigma2, drift) of benchmark ``key`` on transformed values ``z`` (NaN for gaps).

    ``m`` is the season length in periods (1 for annual data). Shared by :func:`fit_benchmark`
    and the hindcast's array refits, so both give the same numbers.
    """
    obs = _observed_positions(z)
    drift: float | None = None
    if key == "naive":
        e = _lag_differences(z, 1)
        _need(key, len(e), 1, "pair of consecutive observed periods")
        sigma2 = float(np.sum(e**2) / len(e))
    elif key == "drift":
        e = _lag_differences(z, 1)
        _need(key, len(e), 2, "pairs of consecutive observed periods")
        first, last = obs[0], obs[-1]
        drift = float((z[last] - z[first]) / (last - first))
        sigma2 = float(np.sum((e - drift) ** 2) / (len(e) - 1))
    elif key == "mean":
        zo = z[obs]
        _need(key, len(zo), 2, "observed values")
        sigma2 = float(np.sum((zo - zo.mean()) ** 2) / (len(zo) - 1))
    else:
        if m == 1:
            raise InputError(
                "the 'same season last year' benchmark needs quarterly or monthly data. "
                "Got annual data instead."
            )
        e = _lag_differences(z, m)
        _need(key, len(e), 1, f"pair of observed values {m} periods apart")
        seasons_seen = {int(p) % m for p in obs}
        if len(seasons_seen) < m:
            raise InputError(
                f"the 'same season last year' benchmark needs a value in every one of the {m} "
                f"seasons. Got {len(seasons_seen)} instead."
            )
        sigma2 = float(np.sum(e**2) / len(e))
    return sigma2, drift


def fit_benchmark(y: pd.Series, key: str, spec: TransformSpec | str = "none") -> Benchmark:
    """Fit one benchmark method.

    Parameters
    ----------
    y : pandas.Series
        Original-scale values on an annual, quarterly or monthly PeriodIndex; gaps are NaN.
    key : {"naive", "drift", "mean", "seasonal_naive"}
        ``seasonal_naive`` is only for quarterly and monthly data.
    spec : TransformSpec or str
        Transform of the values; a string is resolved with ``choose_transform``.

    Returns
    -------
    Benchmark
        ``sigma2`` is the residual variance on the transformed scale (see the module notes for
        gaps); ``drift`` the slope per period (drift only).

    Raises
    ------
    InputError
        Unknown key, seasonal benchmark on annual data, or too few observations.
    """
    if key not in LABELS:
        raise InputError(f"benchmark must be one of {', '.join(LABELS)}. Got {key!r} instead.")
    m = period_length(y)
    spec = _resolve_spec(y, spec)
    z = _transformed(y, spec)
    sigma2, drift = sigma2_and_drift(key, z, m)
    return Benchmark(
        key=key, label=LABELS[key], sigma2=sigma2, drift=drift, transform=spec, series=y
    )


def fit_benchmarks(y: pd.Series, spec: TransformSpec | str = "none") -> tuple[Benchmark, ...]:
    """Fit every benchmark suited to the series' frequency.

    Parameters
    ----------
    y : pandas.Series
        Original-scale values on an annual, quarterly or monthly PeriodIndex; gaps are NaN.
    spec : TransformSpec or str
        Transform of the values (the same as the ARIMA candidates', so that scores compare).

    Returns
    -------
    tuple of Benchmark
        last value, last value + drift, long-run mean, and (quarterly and monthly data) same
        season last year, in that order. A benchmark the series is too short for is left out.
    """
    spec = _resolve_spec(y, spec)
    keys = ["naive", "drift", "mean"]
    if period_length(y) > 1:
        keys.append("seasonal_naive")
    out = []
    for key in keys:
        try:
            out.append(fit_benchmark(y, key, spec))
        except InputError:
            continue
    return tuple(out)


def predict_benchmark(bench: Benchmark, steps: int) -> tuple[np.ndarray, np.ndarray]:
    """Predictive mean and variance of a benchmark, on the transformed scale.

    Parameters
    ----------
    bench : Benchmark
    steps : int
        Steps ahead at the series' frequency (years, quarters or months), from 1.

    Returns
    -------
    mean, variance : numpy.ndarray
        Arrays of length ``steps`` for steps 1..``steps`` after the last period of the series.
    """
    if int(steps) != steps or steps < 1:
        raise InputError(f"steps must be a positive integer. Got {steps!r} instead.")
    steps = int(steps)
    z = _transformed(bench.series, bench.transform)
    n = len(z)
    obs = _observed_positions(z)
    last = obs[-1]
    target = np.arange(n, n + steps)  # 0-based positions of the forecast periods
    s2 = bench.sigma2
    if bench.key == "naive":
        j = target - last
        return np.full(steps, z[last]), s2 * j
    if bench.key == "drift":
        c = float(bench.drift or 0.0)
        big_t = obs[-1] - obs[0] + 1
        j = target - last
        return z[last] + c * j, s2 * j * (1.0 + j / big_t)
    if bench.key == "mean":
        zo = z[obs]
        return np.full(steps, zo.mean()), np.full(steps, s2 * (1.0 + 1.0 / len(zo)))
    if bench.key == "seasonal_naive":
        m = period_length(bench.series)
        mean = np.empty(steps)
        var = np.empty(steps)
        for i, t in enumerate(target):
            same = obs[(obs % m) == (t % m)]
            src = int(same[-1])
            mean[i] = z[src]
            var[i] = s2 * ((t - src) // m)
        return mean, var
    raise InputError(f"benchmark must be one of {', '.join(LABELS)}. Got {bench.key!r} instead.")

