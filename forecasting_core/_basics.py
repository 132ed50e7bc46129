"""Shared basics of every result: frequencies, time labels, the cautions and InputError."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any, Literal

import numpy as np
import pandas as pd

Severity = Literal["error", "warning"]
Frequency = Literal["annual", "quarterly", "monthly"]

#: Observations per year for each frequency we accept.
PERIODS: dict[str, int] = {"annual": 1, "quarterly": 4, "monthly": 12}
#: pandas period codes for each frequency.
PANDAS_FREQ: dict[str, str] = {"annual": "Y-DEC", "quarterly": "Q-DEC", "monthly": "M"}

#: Shown beside every published forecast and written into every export.
CAUTIONS: tuple[str, ...] = (
    "These forecasts are statistical projections from past values only. They are not stock "
    "assessments and do not replace the assessment, advice and decision process of the "
    "responsible management body.",
    "A forecast is only as good as the data: changes in fishing effort, regulation or reporting "
    "break the past pattern the model relies on.",
)


class InputError(ValueError):
    """The data or the arguments cannot be used.

    The message is plain language naming the file row, year or column and saying what is
    allowed ("must be X. Got Y instead."). The command line turns it into exit code 2 and the
    app into an alert; it is never shown as a traceback.
    """


def frequency_of(series: pd.Series) -> str:
    """Return ``"annual"``, ``"quarterly"`` or ``"monthly"`` for a series with a PeriodIndex."""
    index = series.index
    if not isinstance(index, pd.PeriodIndex):
        raise InputError(
            f"series must have a yearly, quarterly or monthly PeriodIndex. Got {type(index).__name__} instead."
        )
    code = index.freqstr.upper()
    if code.startswith("Y") or code.startswith("A"):
        return "annual"
    if code.startswith("Q"):
        return "quarterly"
    if code.startswith("M"):
        return "monthly"
    raise InputError(f"series frequency must be annual, quarterly or monthly. Got {index.freqstr!r} instead.")


def period_length(series: pd.Series) -> int:
    """Observations per year (1, 4 or 12)."""
    return PERIODS[frequency_of(series)]


def time_label(period: pd.Period) -> str:
    """Write a period as ``2026``, ``2026-Q3`` or ``2026-07`` (the JSON contract's ``time``)."""
    code = period.freqstr.upper()
    if code.startswith("Q"):
        return f"{period.year}-Q{period.quarter}"
    if code.startswith("M"):
        return f"{period.year}-{period.month:02d}"
    return f"{period.year}"


def _clean(value: Any) -> Any:
    """Turn numpy scalars, NaN and tuples into JSON-ready Python values."""
    kind = type(value)
    # The common plain types first (a record holds thousands of them): same answers as below.
    if kind is float:
        return value if math.isfinite(value) else None
    if kind is str or kind is int or kind is bool or value is None:
        return value
    if kind is dict:
        return {k if type(k) is str else str(k): _clean(v) for k, v in value.items()}
    if kind is list or kind is tuple:
        return [v if type(v) is float and math.isfinite(v) else _clean(v) for v in value]
    if isinstance(value, Mapping):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, list | tuple | np.ndarray):
        return [_clean(v) for v in value]
    if isinstance(value, np.integer | bool | np.bool_) and not isinstance(value, float):
        return bool(value) if isinstance(value, bool | np.bool_) else int(value)
    if isinstance(value, float | np.floating):
        v = float(value)
        return None if math.isnan(v) or math.isinf(v) else v
    if isinstance(value, pd.Period):
        return time_label(value)
    return value
