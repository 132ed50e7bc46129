"""Forecast bands, reference-level probabilities and forecast tables.

Every model gives a normal predictive distribution N(mu_h, s_h^2) on the transformed scale
for step h. On the original scale:

* the median and the band ends are the back-transformed normal quantiles (a monotone
  transform maps quantiles exactly, so log and Box-Cox bands are positive and asymmetric);
* the mean is the bias-adjusted back-transformed mean (``mean_back_transform``; for the log
  the lognormal mean exp(mu + s^2 / 2));
* the probability of falling below a reference level R is Phi((T(R) - mu_h) / s_h), T the
  transform (0 when R <= 0 under log or Box-Cox, whose values are always positive).

With ``band_source="hindcast errors"`` the bands come instead from the model's own past
h-step errors in a hindcast: e = T(actual) - T(median) on the transformed scale (a
difference without a transform, a log ratio under the log). The band for level L at step h
is T^-1(mu_h + the (50 - L/2)% and (50 + L/2)% empirical quantiles of the step-h errors)
(numpy's default linear interpolation), and P(below R) is the share of past errors e with
mu_h + e < T(R). Median and mean stay the model's.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd
from scipy.stats import norm

from forecasting_core._arima import filter_candidate
from forecasting_core._nonneg import clip_at_zero
from forecasting_core._results import (
    Benchmark,
    Candidate,
    Forecast,
    Hindcast,
    InputError,
    TransformSpec,
    frequency_of,
    time_label,
)

__all__ = ["make_forecast", "predictive"]

BAND_SOURCES = ("model", "hindcast errors")
#: Fewer past errors than this per step make empirical bands unreliable (a warning says so).
MIN_ERRORS = 8


@functools.cache
def _quantile(level: int) -> float:
    """Standard normal quantile of the upper end of a central ``level``% band (scipy, once)."""
    return norm.ppf(0.5 + level / 200.0)


def predictive(model: Candidate | Benchmark, steps: int) -> tuple[np.ndarray, np.ndarray]:
    """Predictive mean and variance on the transformed scale for steps 1..``steps``.

    Parameters
    ----------
    model : Candidate or Benchmark
        An accepted candidate (its stored parameters are applied to its series by the
        Kalman filter, without refitting) or a fitted benchmark.
    steps : int
        Steps ahead at the series' frequency, counted from the last period of ``model.series``.

    Returns
    -------
    mean, variance : numpy.ndarray
        Length ``steps``, on the transformed scale.
    """
    steps = int(steps)
    if isinstance(model, Benchmark):
        from forecasting_core._benchmarks import predict_benchmark

        mean, var = predict_benchmark(model, steps)
        return np.asarray(mean, dtype=float), np.asarray(var, dtype=float)
    if not model.ok:
        raise InputError(f"model must be an accepted candidate. Got {model.label}, rejected: {model.reason}")
    res = filter_candidate(model)
    fc = res.get_forecast(steps)
    return np.asarray(fc.predicted_mean, dtype=float), np.asarray(fc.var_pred_mean, dtype=float)


def _back(z: np.ndarray, spec: TransformSpec) -> np.ndarray:
    if spec.name == "none":
        return np.asarray(z, dtype=float)
    from forecasting_core._transform import back_transform

    return np.asarray(back_transform(np.asarray(z, dtype=float), spec), dtype=float)


def _forward(x: float | np.ndarray, spec: TransformSpec) -> np.ndarray:
    """Original -> transformed scale for any value (non-positive values under log/Box-Cox -> -inf)."""
    v = np.atleast_1d(np.asarray(x, dtype=float))
    if spec.name == "none":
        return v
    out = np.full(v.shape, -np.inf)
    pos = v > 0
    if pos.any():
        from forecasting_core._transform import transform_series

        out[pos] = np.asarray(transform_series(v[pos], spec), dtype=float)
    out[np.isnan(v)] = np.nan
    return out


def _mean_back(mu: np.ndarray, var: np.ndarray, spec: TransformSpec) -> np.ndarray:
    if spec.name == "none":
        return np.asarray(mu, dtype=float)
    from forecasting_core._transform import mean_back_transform

    return np.asarray(mean_back_transform(mu, var, spec), dtype=float)


def _check_levels(levels: Any) -> tuple[int, ...]:
    if isinstance(levels, int | float):
        levels = (levels,)
    try:
        values = [float(v) for v in levels]
    except (TypeError, ValueError):
        raise InputError(f"levels must be integers from 1 to 99 in increasing order. Got {levels!r} instead.") from None
    if (
        not values
        or any(isinstance(v, bool) or not v.is_integer() or not 1 <= v <= 99 for v in values)
        or any(b <= a for a, b in zip(values, values[1:], strict=False))
    ):
        raise InputError(f"levels must be integers from 1 to 99 in increasing order. Got {tuple(levels)!r} instead.")
    return tuple(int(v) for v in values)


def _check_reference(reference: Any) -> float | None:
    if reference is None:
        return None
    if isinstance(reference, bool) or not isinstance(reference, int | float | np.integer | np.floating) or not math.isfinite(reference):
        raise InputError(f"reference must be a finite number or None. Got {reference!r} instead.")
    return float(reference)


def _errors_by_step(hindcast: Hindcast, label: str, horizon: int, spec: TransformSpec) -> dict[int, np.ndarray]:
    frame = hindcast.errors
    rows = frame[frame["model"] == label]
    if rows.empty:
        raise InputError(f"hindcast must contain errors of {label!r}. Got only {sorted(set(frame['model']))} instead.")
    out = {}
    for h in range(1, horizon + 1):
        part = rows[rows["step"] == h]
        e = _forward(part["actual"].to_numpy(float), spec) - _forward(part["median"].to_numpy(float), spec)
        out[h] = e[np.isfinite(e)]
    return out


def make_forecast(
    model: Candidate | Benchmark,
    horizon: int = 5,
    levels: Sequence[int] = (50, 80, 95),
    reference: float | None = None,
    *,
    band_source: str = "model",
    hindcast: Hindcast | None = None,
) -> Forecast:
    """Forecast table on the original scale for an accepted candidate or a benchmark.

    Parameters
    ----------
    model : Candidate or Benchmark
    horizon : int
        Steps ahead at the series' frequency (years, quarters or months), 1 to 50.
    levels : sequence of int
        Central band levels in percent, integers from 1 to 99, increasing.
    reference : float, optional
        Reference level on the original scale (e.g. a limit reference point, in the series'
        unit); adds the probability that each future period falls below it.
    band_source : {"model", "hindcast errors"}
        Bands from the model's predictive distribution, or from the empirical quantiles of
        the model's own past errors in ``hindcast`` (see the module notes).
    hindcast : Hindcast, optional
        Required with ``band_source="hindcast errors"``; it must hold errors of this model
        (same label) for every step up to ``horizon``.

    Returns
    -------
    Forecast
        ``table`` columns: time, step, mean, median, lo/hi per level, prob_below_reference.
    """
    if not isinstance(model, Candidate | Benchmark):
        raise InputError(f"model must be a Candidate or a Benchmark. Got {type(model).__name__} instead.")
    if isinstance(horizon, bool) or not isinstance(horizon, int | np.integer) or not 1 <= horizon <= 50:
        raise InputError(f"horizon must be an integer from 1 to 50. Got {horizon!r} instead.")
    horizon = int(horizon)
    levels_t = _check_levels(levels)
    ref = _check_reference(reference)
    if band_source not in BAND_SOURCES:
        raise InputError(f"band_source must be one of 'model', 'hindcast errors'. Got {band_source!r} instead.")
    if band_source == "hindcast errors" and hindcast is None:
        raise InputError("hindcast must be given with band_source='hindcast errors'. Got None instead.")
    if isinstance(model, Candidate) and not model.ok:
        raise InputError(f"model must be an accepted candidate. Got {model.label}, rejected: {model.reason}")

    spec = model.transform
    y = model.series
    frequency = frequency_of(y)
    mu, var = predictive(model, horizon)
    sd = np.sqrt(np.maximum(var, 0.0))
    future = pd.period_range(start=y.index[-1] + 1, periods=horizon, freq=y.index.freq)
    table: dict[str, Any] = {
        "time": [time_label(p) for p in future],
        "step": np.arange(1, horizon + 1),
        "mean": _mean_back(mu, var, spec),
        "median": _back(mu, spec),
    }
    warnings_: list[str] = []
    t_ref = float(_forward(ref, spec)[0]) if ref is not None else math.nan
    if band_source == "model":
        for lv in levels_t:
            zq = _quantile(lv)
            table[f"lo{lv}"] = _back(mu - zq * sd, spec)
            table[f"hi{lv}"] = _back(mu + zq * sd, spec)
        if ref is None:
            prob = np.full(horizon, math.nan)
        elif t_ref == -math.inf:
            prob = np.zeros(horizon)
        else:
            with np.errstate(divide="ignore", invalid="ignore"):
                prob = norm.cdf((t_ref - mu) / sd)
    else:
        errors = _errors_by_step(hindcast, model.label, horizon, spec)  # type: ignore[arg-type]
        few = [h for h, e in errors.items() if len(e) < MIN_ERRORS]
        if any(len(e) == 0 for e in errors.values()):
            empty = [h for h, e in errors.items() if len(e) == 0]
            raise InputError(
                f"horizon must be at most the hindcast's longest step with errors. Got {horizon} "
                f"instead (no past errors at step {empty[0]})."
            )
        if few:
            warnings_.append(
                f"Bands from hindcast errors rest on fewer than {MIN_ERRORS} past errors at step(s) "
                f"{', '.join(str(h) for h in few)}; treat them as rough."
            )
        for lv in levels_t:
            lo = np.array([np.quantile(errors[h], 0.5 - lv / 200.0) for h in range(1, horizon + 1)])
            hi = np.array([np.quantile(errors[h], 0.5 + lv / 200.0) for h in range(1, horizon + 1)])
            table[f"lo{lv}"] = _back(mu + lo, spec)
            table[f"hi{lv}"] = _back(mu + hi, spec)
        if ref is None:
            prob = np.full(horizon, math.nan)
        else:
            prob = np.array([float(np.mean(mu[h - 1] + errors[h] < t_ref)) for h in range(1, horizon + 1)])
    table["prob_below_reference"] = prob
    # A series that is never negative (catch, CPUE): median and bands of max(Y, 0), see _nonneg.
    clipped = clip_at_zero(table, levels_t, np.asarray(y, dtype=float), mu, sd, spec.name, ref)
    if clipped:
        warnings_.append(clipped)
    if ref is not None and ref <= 0 and spec.name in ("log", "boxcox"):
        warnings_.append(
            f"The reference level {ref:g} is at or below zero, which a {spec.name}-scale model "
            "never reaches: the chance of falling below it is 0. Check the reference level."
        )
    observed = np.asarray(model.series, dtype=float)
    observed = observed[np.isfinite(observed)]
    if ref is not None and observed.size and ref > 10 * np.max(np.abs(observed)):
        warnings_.append(
            f"The reference level {ref:g} is more than ten times the largest value on record "
            f"({np.max(np.abs(observed)):g}). Check its unit."
        )
    if not np.all(np.isfinite(table[f"hi{levels_t[-1]}"])):
        warnings_.append("The widest band has no upper end on the original scale (Box-Cox pole).")
    return Forecast(
        series_name=str(y.name) if y.name is not None else "series",
        model=model.label,
        frequency=frequency,
        horizon=horizon,
        levels=levels_t,
        reference=ref,
        table=pd.DataFrame(table),
        band_source=band_source,
        transform=spec,
        warnings=tuple(warnings_),
    )
