"""The forecast record: score past published forecasts against newer data of the same stock.

A published forecast is kept as it was (a :class:`Forecast` or its ``to_dict()`` JSON). When
a newer dataset of the same series arrives, each forecast period falls in one of three groups:

* **scored**: the newer data has a value for it. Error = realised - median (original scale;
  the median because absolute error is consistent for the median, as in the hindcast);
  percentage error = 100 x error / realised (Hyndman & Koehler 2006, "Another look at
  measures of forecast accuracy", IJF 22: p_t = 100 e_t / Y_t; NaN when the realised value
  is 0); inside the L% band when lo_L <= realised <= hi_L (ends included, as the hindcast).
* **pending**: after the newer data's last observed period (not yet realised);
* **missing**: no value in the newer data (a gap, or before its first period).

Pending and missing periods are listed, never scored.

**MASE** (Hyndman & Koehler 2006): each absolute error is divided by the in-sample mean
absolute naive change of the data up to the forecast's origin (the period before its first
forecast period): one-period changes for annual data, seasonal changes (lag 4 or 12, the
seasonal naive method) for quarterly and monthly data, the same convention as the hindcast.
The data up to the origin is the history given for that forecast, or else the newer series
cut at the origin (the same thing unless the older values were revised). The record's MASE
pools every scored period of every forecast.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
import pandas as pd

from forecasting_core._basics import PANDAS_FREQ, PERIODS, InputError, frequency_of, time_label
from forecasting_core._hindcast import naive_scale
from forecasting_core._model_results import Forecast
from forecasting_core._record_results import (
    MIN_SCORED,
    ForecastRecord,
    PastForecastScore,
    period_word,
)

__all__ = ["score_forecast_record"]

ForecastLike = Forecast | Mapping[str, Any]


def _num(value: Any) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        return math.nan
    return v if math.isfinite(v) else math.nan


def _as_rows(item: ForecastLike, which: str) -> tuple[dict[str, Any], list[dict[str, Any]]]:
    """(head, rows) of one forecast: head has series, model, frequency, levels; each row has
    time, step, median, mean and a ``(lo, hi)`` per level."""
    if isinstance(item, Forecast):
        head = {
            "series": item.series_name,
            "model": item.model,
            "frequency": item.frequency,
            "levels": tuple(int(v) for v in item.levels),
        }
        rows = []
        for r in item.table.to_dict("records"):
            rows.append(
                {
                    "time": str(r["time"]),
                    "step": int(r["step"]),
                    "median": _num(r.get("median")),
                    "mean": _num(r.get("mean")),
                    "bands": {
                        lv: (_num(r.get(f"lo{lv}")), _num(r.get(f"hi{lv}")))
                        for lv in head["levels"]
                    },
                }
            )
        return head, rows
    if not isinstance(item, Mapping) or not isinstance(item.get("forecast"), list | tuple):
        raise InputError(
            f"{which} must be a Forecast or its to_dict() JSON (a mapping with a 'forecast' list). "
            f"Got {type(item).__name__} instead."
        )
    try:
        levels = tuple(int(v) for v in item.get("levels") or ())
    except (TypeError, ValueError):
        raise InputError(
            f"{which} levels must be integers. Got {item.get('levels')!r} instead."
        ) from None
    head = {
        "series": str(item.get("series") or ""),
        "model": str(item.get("model") or ""),
        "frequency": item.get("frequency"),
        "levels": levels,
    }
    rows = []
    for i, r in enumerate(item["forecast"], start=1):
        if not isinstance(r, Mapping) or "time" not in r:
            raise InputError(
                f"{which} period {i} must be a mapping with a 'time'. Got {r!r:.80} instead."
            )
        intervals = r.get("intervals") if isinstance(r.get("intervals"), Mapping) else {}
        bands: dict[int, tuple[float, float]] = {}
        for key, pair in intervals.items():
            try:
                lv = int(key)
                lo, hi = pair
            except (TypeError, ValueError):
                raise InputError(
                    f"{which} period {i} band {key!r} must be a [low, high] pair. Got {pair!r:.80} instead."
                ) from None
            bands[lv] = (_num(lo), _num(hi))
        step = r.get("step")
        rows.append(
            {
                "time": str(r["time"]),
                "step": int(step)
                if isinstance(step, int | float) and not isinstance(step, bool)
                else i,
                "median": _num(r.get("median")),
                "mean": _num(r.get("mean")),
                "bands": bands,
            }
        )
    if not head["levels"]:
        head["levels"] = tuple(sorted({lv for r in rows for lv in r["bands"]}))
    return head, rows


def _period(label: str, frequency: str, which: str) -> pd.Period:
    try:
        p = pd.Period(label, freq=PANDAS_FREQ[frequency])
    except (ValueError, TypeError):
        p = None
    if p is None or time_label(p) != label.strip():
        examples = {"annual": "2026", "quarterly": "2026-Q3", "monthly": "2026-07"}[frequency]
        raise InputError(
            f"{which} period times must be written like {examples!r} for {frequency} data. "
            f"Got {label!r} instead."
        )
    return p


def _check_series(series: Any) -> pd.Series:
    if not isinstance(series, pd.Series):
        raise InputError(
            f"series must be a pandas Series with a PeriodIndex. Got {type(series).__name__} instead."
        )
    # frequency_of raises InputError for anything but a yearly, quarterly or monthly PeriodIndex
    frequency_of(series)
    if series.index.has_duplicates:
        dup = time_label(series.index[series.index.duplicated()][0])
        raise InputError(f"series periods must be unique. Got {dup} more than once.")
    try:
        values = pd.to_numeric(series, errors="raise").astype(float)
    except (TypeError, ValueError):
        raise InputError("series values must be numbers (blank for missing).") from None
    return values.sort_index()


def _unique_labels(labels: Sequence[str]) -> list[str]:
    seen: dict[str, int] = {}
    out = []
    for lab in labels:
        if lab in seen:
            seen[lab] += 1
            lab = f"{lab} ({seen[lab]})"
        else:
            seen[lab] = 1
        out.append(lab)
    return out


def _score_one(
    head: dict[str, Any],
    rows: list[dict[str, Any]],
    y: pd.Series,
    history: pd.Series | None,
    label: str,
    frequency: str,
    which: str,
) -> PastForecastScore:
    levels = tuple(sorted(head["levels"]))
    warnings: list[str] = []
    periods = [_period(r["time"], frequency, which) for r in rows]
    if not periods:
        raise InputError(f"{which} must have at least one forecast period. Got none.")
    first = min(periods)
    origin = first - 1
    observed = y[y.notna()]
    last = observed.index.max() if len(observed) else None

    base = history if history is not None else y
    base = base[base.index <= origin]
    lag = PERIODS[frequency]
    scale = naive_scale(base.to_numpy(float), lag) if len(base) else math.nan
    if not (math.isfinite(scale) and scale > 0):
        warnings.append(
            f"{label}: no usable MASE scale from the data up to {time_label(origin)} "
            f"(needs two observed values {lag} period(s) apart that differ); MASE left out."
        )
        scale = math.nan

    records = []
    for r, p in zip(rows, periods, strict=True):
        actual = _num(y.get(p)) if p in y.index else math.nan
        if math.isfinite(actual):
            status = "scored"
        elif last is None or p > last:
            status = "pending"
        else:
            status = "missing"
        rec: dict[str, Any] = {
            "forecast": label,
            "time": time_label(p),
            "step": r["step"],
            "status": status,
            "actual": actual if status == "scored" else math.nan,
            "median": r["median"],
            "mean": r["mean"],
        }
        for lv in levels:
            lo, hi = r["bands"].get(lv, (math.nan, math.nan))
            rec[f"lo{lv}"], rec[f"hi{lv}"] = lo, hi
            ok = status == "scored" and math.isfinite(lo) and math.isfinite(hi)
            rec[f"inside{lv}"] = bool(lo <= actual <= hi) if ok else pd.NA
        err = actual - r["median"] if status == "scored" else math.nan
        rec["error"] = err
        rec["pct_error"] = 100.0 * err / actual if status == "scored" and actual != 0 else math.nan
        rec["scaled_error"] = (
            abs(err) / scale if math.isfinite(err) and math.isfinite(scale) else math.nan
        )
        records.append(rec)

    columns = ["forecast", "time", "step", "status", "actual", "median", "mean"]
    for lv in levels:
        columns += [f"lo{lv}", f"hi{lv}"]
    columns += [f"inside{lv}" for lv in levels] + ["error", "pct_error", "scaled_error"]
    table = pd.DataFrame(records, columns=columns)
    for lv in levels:
        table[f"inside{lv}"] = table[f"inside{lv}"].astype("boolean")
    return PastForecastScore(
        label=label,
        series_name=head["series"],
        model=head["model"],
        frequency=frequency,
        origin=time_label(origin),
        levels=levels,
        scale=scale,
        table=table,
        warnings=tuple(warnings),
    )


def score_forecast_record(
    forecasts: ForecastLike | Sequence[ForecastLike],
    series: pd.Series,
    *,
    labels: Sequence[str] | None = None,
    histories: Sequence[pd.Series | None] | None = None,
) -> ForecastRecord:
    """Score past published forecasts of one stock against newer data of that stock.

    Parameters
    ----------
    forecasts : Forecast, dict, or a sequence of them
        Past forecasts as :class:`Forecast` objects or their ``to_dict()`` JSON (as a store
        keeps them). Each must have the frequency of ``series``.
    series : pandas.Series
        The newer data: original-scale values on an annual, quarterly or monthly
        PeriodIndex (gaps are NaN), normally with more periods than the forecasts' data.
    labels : sequence of str, optional
        A name per forecast (e.g. an analysis title); default ``"<model>, data to <origin>"``.
        Repeated names get `` (2)``, `` (3)`` appended.
    histories : sequence of pandas.Series or None, optional
        Per forecast, the data it was made from, used only for its MASE scale (the in-sample
        mean absolute naive change up to its origin; lag 1 for annual data, the seasonal lag
        4 or 12 for quarterly or monthly data). ``None`` (or an entry None) uses the newer
        series cut at the origin.

    Returns
    -------
    ForecastRecord
        Per forecast and period: realised value, median, mean, band ends, inside each band,
        error (realised - median), percentage error; pooled coverage against nominal and
        MASE; pending (not yet realised) and missing periods listed, never scored; a caveat
        when fewer than 10 periods are scored.

    Raises
    ------
    InputError
        No forecast, a forecast that is not a Forecast or its JSON, a frequency different from
        the series', unreadable period times, or labels/histories of the wrong length.

    Examples
    --------
    >>> record = fc.score_forecast_record(published.forecast, newer)   # doctest: +SKIP
    >>> record.headline()                                              # doctest: +SKIP
    'Of 5 past forecast years, 4 fell inside the 80% band (80% expected), ...'
    """
    if isinstance(forecasts, Forecast | Mapping):
        items: list[ForecastLike] = [forecasts]
    elif isinstance(forecasts, Sequence) and not isinstance(forecasts, str | bytes):
        items = list(forecasts)
    else:
        raise InputError(
            f"forecasts must be a Forecast, its to_dict() JSON, or a list of them. Got {type(forecasts).__name__} instead."
        )
    if not items:
        raise InputError("forecasts must hold at least one past forecast. Got none.")
    y = _check_series(series)
    frequency = frequency_of(series)
    for name, seq in (("labels", labels), ("histories", histories)):
        if seq is not None and (isinstance(seq, str) or len(seq) != len(items)):
            got = "a string" if isinstance(seq, str) else f"{len(seq)}"
            raise InputError(
                f"{name} must have one entry per forecast ({len(items)}). Got {got} instead."
            )

    parsed = []
    for i, item in enumerate(items, start=1):
        which = f"forecast {i}"
        head, rows = _as_rows(item, which)
        if head["frequency"] != frequency:
            raise InputError(
                f"{which} frequency must match the series ({frequency}). Got {head['frequency']!r} instead."
            )
        parsed.append((head, rows, which))

    warnings: list[str] = []
    name = str(series.name) if series.name is not None else ""
    default_labels = []
    for head, rows, which in parsed:
        times = [_period(r["time"], frequency, which) for r in rows]
        origin = time_label(min(times) - 1) if times else "?"
        default_labels.append(f"{head['model'] or 'forecast'}, data to {origin}")
        if name and head["series"] and head["series"] != name:
            warnings.append(f"{which} was made for {head['series']!r}, the newer data is {name!r}.")
    chosen = _unique_labels([str(v) for v in labels] if labels is not None else default_labels)

    scores = []
    for k, (head, rows, which) in enumerate(parsed):
        hist = histories[k] if histories is not None else None
        if hist is not None:
            hist = _check_series(hist)
        scores.append(_score_one(head, rows, y, hist, chosen[k], frequency, which))
        warnings.extend(scores[-1].warnings)

    levels = tuple(sorted({lv for s in scores for lv in s.levels}))
    inside = {lv: sum(s.inside(lv) for s in scores if lv in s.levels) for lv in levels}
    scored_by_level = {
        lv: sum(int(s.table[f"inside{lv}"].notna().sum()) for s in scores if lv in s.levels)
        for lv in levels
    }
    scaled = pd.concat(
        [s.table.loc[s.table["status"] == "scored", "scaled_error"] for s in scores],
        ignore_index=True,
    ).astype(float)
    scaled = scaled[np.isfinite(scaled.to_numpy())]
    mase = float(scaled.mean()) if len(scaled) else math.nan

    n = sum(s.scored for s in scores)
    observed = y[y.notna()]
    last = time_label(observed.index.max()) if len(observed) else ""
    if n == 0:
        caveat = f"No period of these past forecasts has a value in this data (to {last or 'no value'}): nothing to score yet."
    elif n < MIN_SCORED:
        caveat = f"{n} {period_word(frequency, n)} scored: too few to judge coverage (at least {MIN_SCORED} are needed)."
    else:
        caveat = None
    return ForecastRecord(
        series_name=name or (parsed[0][0]["series"] or ""),
        frequency=frequency,
        last_observed=last,
        forecasts=tuple(scores),
        levels=levels,
        inside=inside,
        scored_by_level=scored_by_level,
        mase=mase,
        caveat=caveat,
        warnings=tuple(warnings),
    )
