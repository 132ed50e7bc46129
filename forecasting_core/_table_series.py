"""One series from its observations: duplicates, gaps, text cells, minimums, checks.

Used by :mod:`forecasting_core._table`. Periods are handled as integer ordinals (the year for
annual data, ``year * 4 + quarter - 1`` and ``year * 12 + month - 1`` otherwise) until the final
:class:`pandas.PeriodIndex` is built.
"""

from __future__ import annotations

import math
import re
from collections import defaultdict
from dataclasses import dataclass

import numpy as np
import pandas as pd

from forecasting_core._results import PANDAS_FREQ, PERIODS, Problem, SeriesInfo
from forecasting_core._table_parse import compact

#: Fewest non-missing values a series needs to be modelled, by frequency. Annual: 15 (the
#: issue's rule); quarterly 20 (five years) and monthly 36 (three years), as assess_stationarity
#: requires; enough for a seasonal difference plus a few parameters (common practice).
MIN_OBSERVATIONS: dict[str, int] = {"annual": 15, "quarterly": 20, "monthly": 36}

#: At most this many single-cell problems of one kind are listed one by one per series.
MAX_LISTED = 10

_NUMBER_IN_TEXT = re.compile(r"[-+]?\d+(?:[.,]\d+)?")


@dataclass
class Obs:
    """One cell of one series: file row, period ordinal, parse outcome."""

    row: int
    ordinal: int
    kind: str  # "num", "na" or "text"
    value: float
    raw: str
    unit: str | None = None


def ordinal_parts(freq: str, ordinal: int) -> tuple[int, int]:
    """(year, sub-period) of an ordinal."""
    per = PERIODS[freq]
    return ordinal // per, ordinal % per + 1


def label(freq: str, ordinal: int) -> str:
    """``2026``, ``2026-Q3`` or ``2026-07``, as :func:`forecasting_core.time_label` writes them."""
    year, sub = ordinal_parts(freq, ordinal)
    if freq == "quarterly":
        return f"{year}-Q{sub}"
    if freq == "monthly":
        return f"{year}-{sub:02d}"
    return str(year)


def period(freq: str, ordinal: int) -> pd.Period:
    year, sub = ordinal_parts(freq, ordinal)
    if freq == "quarterly":
        return pd.Period(year=year, quarter=sub, freq=PANDAS_FREQ[freq])
    if freq == "monthly":
        return pd.Period(year=year, month=sub, freq=PANDAS_FREQ[freq])
    return pd.Period(year=year, freq=PANDAS_FREQ[freq])


def times_text(freq: str, ordinals: list[int]) -> str:
    """Compact list of periods: ``1984, 1990-1992`` or ``1990-03 to 1990-05``."""
    sep = "-" if freq == "annual" else " to "
    return compact(ordinals, fmt=lambda o: label(freq, o), sep=sep)


def rows_text(rows: list[int]) -> str:
    text = compact(rows)
    return ("row " if len(set(rows)) == 1 else "rows ") + text


def words_for(freq: str) -> str:
    return "years" if freq == "annual" else "periods"


def _num(v: float) -> str:
    return f"{v:.10g}"


def _short(text: str, limit: int = 40) -> str:
    text = " ".join(text.split())
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _text_hint(raw: str, decimal: str) -> str:
    found = _NUMBER_IN_TEXT.search(raw)
    if decimal == "." and re.fullmatch(r"[-+]?\d+,\d+", raw):
        return f" This file uses a decimal point: write {raw.replace(',', '.')}."
    if decimal == "," and re.fullmatch(r"[-+]?\d+\.\d+", raw):
        return f" This file uses a decimal comma: write {raw.replace('.', ',')}."
    if found and found.group(0) != raw:
        return f" If {found.group(0)} is meant, write only the number (units belong in the header)."
    return " Write a number, or leave the cell empty for a missing value."


def build_series(
    name: str,
    obs: list[Obs],
    freq: str,
    *,
    unit: str | None,
    decimal: str,
    problems: list[Problem] | None = None,
) -> tuple[SeriesInfo, pd.Series | None]:
    """Turn the observations of one series into a float series on a complete PeriodIndex.

    Returns the :class:`SeriesInfo` (always) and the series (None when an error-level problem
    makes it unusable). ``problems`` are found earlier (e.g. rows whose time cannot be read).
    """
    found: list[Problem] = list(problems or [])

    def add(severity: str, message: str, row: int | None, ordinal: int | None) -> None:
        time = label(freq, ordinal) if ordinal is not None else None
        found.append(Problem(severity, message, row=row, time=time, column=name))  # type: ignore[arg-type]

    # Text in numeric cells: missing, with a warning per cell (the first MAX_LISTED).
    texts = [o for o in obs if o.kind == "text"]
    for o in texts[:MAX_LISTED]:
        add(
            "warning",
            f"{_short(o.raw)!r} is not a number; the cell was read as missing.{_text_hint(o.raw, decimal)}",
            o.row,
            o.ordinal,
        )
    if len(texts) > MAX_LISTED:
        rest = texts[MAX_LISTED:]
        add(
            "warning",
            f"{len(rest)} more cells hold text instead of a number ({rows_text([o.row for o in rest])}); "
            "they were read as missing.",
            rest[0].row,
            rest[0].ordinal,
        )

    # Units (long layout): one unit per series.
    units = [o for o in obs if o.unit]
    if units:
        first = units[0]
        change = next((o for o in units if o.unit != first.unit), None)
        if change is not None:
            add(
                "error",
                f"the unit changes from {first.unit!r} (row {first.row}) to {change.unit!r} in row "
                f"{change.row}; convert all values of the series to one unit.",
                change.row,
                change.ordinal,
            )
        unit = first.unit

    # Duplicated periods.
    by_time: dict[int, list[Obs]] = defaultdict(list)
    for o in obs:
        by_time[o.ordinal].append(o)
    values: dict[int, float] = {}
    source_row: dict[int, int] = {}
    explicit_missing: dict[int, Obs] = {}
    conflicts: list[tuple[int, int]] = []
    for ordinal in sorted(by_time):
        group = by_time[ordinal]
        if len(group) == 1:
            o = group[0]
            if o.kind == "num":
                values[ordinal] = o.value
                source_row[ordinal] = o.row
            else:
                explicit_missing[ordinal] = o
            continue
        group.sort(key=lambda o: o.row)
        nums = [o for o in group if o.kind == "num"]
        distinct = {o.value for o in nums}
        where = f"{label(freq, ordinal)} appears in rows {compact([o.row for o in group])}"
        if len(distinct) > 1:
            conflicts.append((ordinal, nums[1].row))
            if len(conflicts) <= 5:
                shown = " and ".join(f"{_num(o.value)} (row {o.row})" for o in nums[:4])
                add(
                    "error",
                    f"{where} with different values: {shown}. Keep one row per period and delete the others.",
                    nums[1].row,
                    ordinal,
                )
        elif len(group) > 1 and nums and len(nums) < len(group):
            add(
                "warning",
                f"{where}; only row {nums[0].row} has a value ({_num(nums[0].value)}), which was used.",
                group[0].row,
                ordinal,
            )
        elif len(group) > 1 and nums:
            add(
                "warning",
                f"{where} with the same value ({_num(nums[0].value)}); it was kept once.",
                group[1].row,
                ordinal,
            )
        if nums:
            values[ordinal] = nums[0].value
            source_row[ordinal] = nums[0].row
        else:
            explicit_missing[ordinal] = group[0]

    if len(conflicts) > 5:
        rest = conflicts[5:]
        add(
            "error",
            f"{len(rest)} more {words_for(freq)} appear in several rows with different values "
            f"({times_text(freq, [o for o, _ in rest])}).",
            rest[0][1],
            rest[0][0],
        )
    if not values:
        message = (
            "the column has a header but no values; add the values or delete the column."
            if not texts
            else "the column holds no number at all; write the values as plain numbers."
        )
        add("error", message, obs[0].row if obs else None, None)
        info = SeriesInfo(name, freq, 0, 0, "", "", False, unit=unit, problems=tuple(found))
        return info, None

    first, last = min(values), max(values)
    inside = range(first, last + 1)
    absent = [o for o in inside if o not in values and o not in explicit_missing]
    blank = [
        explicit_missing[o]
        for o in inside
        if o in explicit_missing and explicit_missing[o].kind == "na"
    ]
    n_periods = last - first + 1
    words = "years" if freq == "annual" else "periods"
    if blank:
        add(
            "warning",
            f"empty or NA cells in {rows_text([o.row for o in blank])} "
            f"({times_text(freq, [o.ordinal for o in blank])}); kept as missing.",
            blank[0].row,
            blank[0].ordinal,
        )
    if absent:
        add(
            "warning",
            f"{len(absent)} {words if len(absent) > 1 else words[:-1]} inside {label(freq, first)}-{label(freq, last)} "
            f"{'have' if len(absent) > 1 else 'has'} no usable row in the file: "
            f"{times_text(freq, absent)}; kept as missing values, not filled in.",
            None,
            absent[0],
        )

    n_obs = len(values)
    n_missing = n_periods - n_obs
    arr = np.array([values[o] for o in sorted(values)], dtype=float)
    needed = MIN_OBSERVATIONS[freq]
    first_row = source_row[first]
    if n_obs < needed:
        add(
            "error",
            f"the series has {n_obs} non-missing value{'s' if n_obs != 1 else ''} "
            f"({label(freq, first)}-{label(freq, last)}); {'an' if freq == 'annual' else 'a'} {freq} series needs at least {needed} "
            "to choose, fit and check a model. Add more values or use a longer series.",
            first_row,
            first,
        )
    if n_obs >= 2 and float(arr.max()) == float(arr.min()):
        add(
            "error",
            f"all {n_obs} values are {_num(float(arr[0]))}; a constant series has nothing to model. "
            "Check that the right column was exported.",
            first_row,
            first,
        )
    if n_missing and n_missing > n_periods / 3:
        add(
            "warning",
            f"{n_missing} of {n_periods} {words} are missing; forecasts from such a gappy series are uncertain.",
            first_row,
            first,
        )
    for kind, test, advice in (
        (
            "negative",
            lambda v: v < 0,
            "fine for anomalies or differences, but catches, landings and survey indices cannot be negative (check the sign); log and Box-Cox transforms need values above zero.",
        ),
        (
            "zero",
            lambda v: v == 0,
            "zeros block the log and Box-Cox transforms (use transform 'none'); if a zero means 'not recorded', leave the cell empty instead.",
        ),
    ):
        hits = [o for o in sorted(values) if test(values[o])]
        if hits:
            shown = ", ".join(
                f"{label(freq, o)} (row {source_row[o]}: {_num(values[o])})" for o in hits[:5]
            )
            more = f" and {len(hits) - 5} more" if len(hits) > 5 else ""
            count = (
                f"{len(hits)} of {n_obs} values are {kind}" if len(hits) > 1 else f"1 {kind} value"
            )
            add("warning", f"{count}: {shown}{more}; {advice}", source_row[hits[0]], hits[0])

    found.sort(key=lambda p: (p.row is None, p.row or 0))
    usable = not any(p.severity == "error" for p in found)
    index = pd.period_range(start=period(freq, first), periods=n_periods, freq=PANDAS_FREQ[freq])
    data = np.full(n_periods, math.nan)
    for o, v in values.items():
        data[o - first] = v
    series = pd.Series(data, index=index, name=name, dtype=float)
    info = SeriesInfo(
        name=name,
        frequency=freq,
        observations=n_obs,
        missing=n_missing,
        start=label(freq, first),
        end=label(freq, last),
        usable=usable,
        unit=unit,
        problems=tuple(found),
    )
    return info, (series if usable else None)
