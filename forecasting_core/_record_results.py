"""Result types of the forecast record: how past published forecasts did against newer data.

Built by :func:`forecasting_core.score_forecast_record` (``_record.py``); re-exported by
``_results.py`` like every other result. Same three views as the rest of the core:
``to_frame()``, ``to_dict()`` and ``summary()``.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import pandas as pd

from forecasting_core._basics import _clean

__all__ = ["MIN_SCORED", "ForecastRecord", "PastForecastScore", "period_word"]

#: Fewer scored periods than this say too little about band coverage: the record carries a
#: caveat instead of a verdict. Our rule, the same threshold as the hindcast's coverage warning.
#: Even at 10 independent periods an 80% band that really holds 80% of outcomes shows 6 or fewer
#: inside about 12% of the time (binomial: P(X <= 6) = 0.121 for X ~ Bin(10, 0.8), scipy), and
#: periods of one forecast are not independent, so fewer periods cannot tell good bands from poor.
MIN_SCORED = 10

#: Status of one past forecast period against the newer data.
STATUSES = ("scored", "pending", "missing")

_WORDS = {
    "annual": ("year", "years"),
    "quarterly": ("quarter", "quarters"),
    "monthly": ("month", "months"),
}


_CHANGE = {
    "annual": "year-to-year change",
    "quarterly": "change from the same quarter a year earlier",
    "monthly": "change from the same month a year earlier",
}


def period_word(frequency: str, n: int) -> str:
    """``"year"``/``"years"`` (``"quarter"``, ``"month"``) for ``n`` periods of ``frequency``."""
    one, many = _WORDS.get(frequency, ("period", "periods"))
    return one if n == 1 else many


def _pct(k: int, n: int) -> float:
    return 100.0 * k / n if n else math.nan


def _mean_finite(values: pd.Series) -> float:
    v = pd.to_numeric(values, errors="coerce").astype(float)
    v = v[v.notna() & (v != float("inf"))]
    return float(v.mean()) if len(v) else math.nan


def _inside_counts(
    table: pd.DataFrame, levels: tuple[int, ...]
) -> tuple[dict[int, int], dict[int, int]]:
    """Per level: periods inside the band, and periods scored that carry the band."""
    inside: dict[int, int] = {}
    scored: dict[int, int] = {}
    rows = table[table["status"] == "scored"] if len(table) else table
    for lv in levels:
        col = f"inside{lv}"
        if col not in rows:
            inside[lv], scored[lv] = 0, 0
            continue
        known = rows[col].dropna()
        inside[lv] = int(known.astype(bool).sum())
        scored[lv] = len(known)
    return inside, scored


def _rows_dict(table: pd.DataFrame, levels: tuple[int, ...]) -> list[dict[str, Any]]:
    out = []
    for r in table.to_dict("records"):
        row = {
            k: r.get(k)
            for k in (
                "forecast",
                "time",
                "step",
                "status",
                "actual",
                "median",
                "mean",
                "error",
                "pct_error",
                "scaled_error",
            )
        }
        row["bands"] = {
            str(lv): [r.get(f"lo{lv}"), r.get(f"hi{lv}")] for lv in levels if f"lo{lv}" in r
        }
        row["inside"] = {
            str(lv): (None if pd.isna(r.get(f"inside{lv}")) else bool(r.get(f"inside{lv}")))
            for lv in levels
            if f"inside{lv}" in r
        }
        out.append(row)
    return _clean(out)


@dataclass(frozen=True)
class PastForecastScore:
    """How one past published forecast did against newer data of the same stock.

    Parameters
    ----------
    label : str
        Name of the past forecast (unique within a record), e.g. an analysis title.
    series_name : str
        Series the forecast was made for.
    model : str
        Label of the model that produced it.
    frequency : {"annual", "quarterly", "monthly"}
    origin : str
        Last period of the data the forecast was made from (the period before its first).
    levels : tuple of int
        Band levels in percent carried by the forecast, e.g. (50, 80, 95).
    scale : float
        MASE denominator: in-sample mean absolute naive change of the data up to ``origin``
        (lag 1 for annual data, lag m = 4 or 12 for quarterly or monthly data); NaN when
        fewer than two observed values a lag apart exist.
    table : pandas.DataFrame
        One row per forecast period: forecast, time, step, status (``"scored"``,
        ``"pending"``: after the newer data's last observed period, ``"missing"``: no value in
        the newer data), actual, median, mean, lo{L}/hi{L} and inside{L} (nullable boolean,
        band ends included) per level, error (actual - median, original scale), pct_error
        (100 x error / actual), scaled_error (abs(error) / scale). Unscored periods have
        missing actual, error and inside values.
    warnings : tuple of str
    """

    label: str
    series_name: str
    model: str
    frequency: str
    origin: str
    levels: tuple[int, ...]
    scale: float
    table: pd.DataFrame = field(repr=False)
    warnings: tuple[str, ...] = ()

    def _times(self, status: str) -> tuple[str, ...]:
        return tuple(str(t) for t in self.table.loc[self.table["status"] == status, "time"])

    @property
    def scored(self) -> int:
        """Number of periods realised in the newer data and scored."""
        return int((self.table["status"] == "scored").sum())

    @property
    def pending(self) -> tuple[str, ...]:
        """Periods after the newer data's last observed period (not yet realised)."""
        return self._times("pending")

    @property
    def missing(self) -> tuple[str, ...]:
        """Periods without a value in the newer data (a gap, or before its first period)."""
        return self._times("missing")

    @property
    def mase(self) -> float:
        """Mean scaled absolute error of the median over the scored periods (NaN without any)."""
        return _mean_finite(self.table.loc[self.table["status"] == "scored", "scaled_error"])

    def inside(self, level: int) -> int:
        """Scored periods inside the ``level``% band (ends included)."""
        return _inside_counts(self.table, (int(level),))[0][int(level)]

    def coverage(self, level: int) -> float:
        """Percentage of scored periods inside the ``level``% band (NaN without any)."""
        inside, scored = _inside_counts(self.table, (int(level),))
        return _pct(inside[int(level)], scored[int(level)])

    def to_frame(self) -> pd.DataFrame:
        return self.table.copy()

    def to_dict(self) -> dict[str, Any]:
        return _clean(
            {
                "label": self.label,
                "series": self.series_name,
                "model": self.model,
                "frequency": self.frequency,
                "origin": self.origin,
                "levels": list(self.levels),
                "scale": self.scale,
                "scored": self.scored,
                "pending": list(self.pending),
                "missing": list(self.missing),
                "mase": self.mase,
                "coverage": {str(lv): self.coverage(lv) for lv in self.levels},
                "periods": _rows_dict(self.table, self.levels),
                "warnings": list(self.warnings),
            }
        )

    def summary(self) -> str:
        word = period_word(self.frequency, self.scored)
        name = self.label
        if self.model not in name or self.origin not in name:
            name += f" ({self.model}, data to {self.origin})"
        text = f"{name}: {self.scored} {word} scored"
        if self.scored:
            parts = [f"{self.inside(lv)} inside the {lv}% band" for lv in self.levels]
            text += " (" + ", ".join(parts) + ")"
            if not math.isnan(self.mase):
                text += f", MASE {self.mase:.2f}"
        if self.pending:
            text += f"; not yet realised: {', '.join(self.pending)}"
        if self.missing:
            text += f"; missing in the newer data: {', '.join(self.missing)}"
        return text + "."


@dataclass(frozen=True)
class ForecastRecord:
    """The running track record of a stock's past published forecasts.

    Parameters
    ----------
    series_name : str
        The stock (series) of the newer data.
    frequency : {"annual", "quarterly", "monthly"}
    last_observed : str
        Last period with a value in the newer data.
    forecasts : tuple of PastForecastScore
        One per past forecast, in the order given.
    levels : tuple of int
        Every band level carried by at least one forecast, increasing.
    inside : mapping of int to int
        Per level: scored periods inside that band, pooled over the forecasts.
    scored_by_level : mapping of int to int
        Per level: scored periods whose forecast carries that band.
    mase : float
        Pooled MASE: mean of abs(error) / scale over every scored period with a usable
        scale (each period scaled by its own forecast's scale). NaN when none.
    caveat : str or None
        Plain warning when too few periods are scored to judge the bands
        (fewer than :data:`MIN_SCORED`).
    warnings : tuple of str
    """

    series_name: str
    frequency: str
    last_observed: str
    forecasts: tuple[PastForecastScore, ...]
    levels: tuple[int, ...]
    inside: Mapping[int, int]
    scored_by_level: Mapping[int, int]
    mase: float
    caveat: str | None = None
    warnings: tuple[str, ...] = ()

    @property
    def periods_scored(self) -> int:
        """Scored periods over all forecasts (a year forecast twice counts twice)."""
        return sum(f.scored for f in self.forecasts)

    @property
    def forecasts_scored(self) -> int:
        """Past forecasts with at least one scored period."""
        return sum(1 for f in self.forecasts if f.scored)

    @property
    def pending(self) -> tuple[str, ...]:
        """``"<forecast label>: <time>"`` for every period not yet realised."""
        return tuple(f"{f.label}: {t}" for f in self.forecasts for t in f.pending)

    @property
    def missing(self) -> tuple[str, ...]:
        """``"<forecast label>: <time>"`` for every period missing in the newer data."""
        return tuple(f"{f.label}: {t}" for f in self.forecasts for t in f.missing)

    def coverage(self, level: int) -> float:
        """Percentage of scored periods inside the ``level``% band (NaN without any)."""
        lv = int(level)
        return _pct(self.inside.get(lv, 0), self.scored_by_level.get(lv, 0))

    def coverage_frame(self) -> pd.DataFrame:
        """One row per level: level, nominal (%), scored, inside, coverage (%)."""
        return pd.DataFrame(
            [
                {
                    "level": lv,
                    "nominal": float(lv),
                    "scored": self.scored_by_level.get(lv, 0),
                    "inside": self.inside.get(lv, 0),
                    "coverage": self.coverage(lv),
                }
                for lv in self.levels
            ],
            columns=["level", "nominal", "scored", "inside", "coverage"],
        )

    def step_frame(self) -> pd.DataFrame:
        """Per step ahead (1 = the first forecast period): scored, inside{L} per level, mase.

        Bands and errors usually grow with the step, so the first steps of past forecasts
        say most about next season's forecast.
        """
        frame = self.to_frame()
        columns = ["step", "scored", *[f"inside{lv}" for lv in self.levels], "mase"]
        if not len(frame):
            return pd.DataFrame(columns=columns)
        rows = []
        for step, part in frame[frame["status"] == "scored"].groupby("step", sort=True):
            row: dict[str, Any] = {"step": int(step), "scored": len(part)}
            for lv in self.levels:
                col = f"inside{lv}"
                row[col] = int(part[col].dropna().astype(bool).sum()) if col in part else 0
            row["mase"] = _mean_finite(part["scaled_error"])
            rows.append(row)
        return pd.DataFrame(rows, columns=columns)

    def headline(self) -> str:
        """The sentence a manager reads first, e.g. "Of 15 past forecast years, 12 fell inside
        the 80% band (80% expected) ..."."""
        n = self.periods_scored
        word = period_word(self.frequency, n)
        if n == 0:
            one = period_word(self.frequency, 1)
            if len(self.forecasts) == 1:
                return f"The past forecast has no realised {one} in this data yet."
            return f"None of the {len(self.forecasts)} past forecasts has a realised {one} in this data yet."
        order = sorted(self.levels, key=lambda lv: (lv != 80, -lv))
        parts = []
        for i, lv in enumerate(order):
            k, m = self.inside.get(lv, 0), self.scored_by_level.get(lv, 0)
            if m == 0:
                continue
            of = "" if m == n else f" of {m}"
            verb = "fell inside" if i == 0 else "inside"
            parts.append(f"{k}{of} {verb} the {lv}% band ({lv}% expected)")
        text = f"Of {n} past forecast {word}, " + _join(parts) + "."
        if not math.isnan(self.mase):
            text += (
                f" MASE {self.mase:.2f} (1 means errors as large as the typical "
                f"{_CHANGE.get(self.frequency, 'one-period change')} before each forecast; "
                "lower is better)."
            )
        return text

    def to_frame(self) -> pd.DataFrame:
        """Every period of every past forecast (the forecasts' tables stacked)."""
        frames = [f.table for f in self.forecasts if len(f.table)]
        return pd.concat(frames, ignore_index=True) if frames else pd.DataFrame()

    def to_dict(self) -> dict[str, Any]:
        return _clean(
            {
                "series": self.series_name,
                "frequency": self.frequency,
                "last_observed": self.last_observed,
                "forecasts_scored": self.forecasts_scored,
                "periods_scored": self.periods_scored,
                "coverage": {
                    str(lv): {
                        "nominal": lv,
                        "scored": self.scored_by_level.get(lv, 0),
                        "inside": self.inside.get(lv, 0),
                        "percent": self.coverage(lv),
                    }
                    for lv in self.levels
                },
                "mase": self.mase,
                "by_step": self.step_frame().to_dict("records"),
                "pending": list(self.pending),
                "missing": list(self.missing),
                "headline": self.headline(),
                "caveat": self.caveat,
                "forecasts": [f.to_dict() for f in self.forecasts],
                "warnings": list(self.warnings),
            }
        )

    def summary(self) -> str:
        lines = [
            f"Forecast record of {self.series_name} (data to {self.last_observed})",
            self.headline(),
        ]
        if self.caveat:
            lines.append(f"Caveat: {self.caveat}")
        lines.extend(f"  {f.summary()}" for f in self.forecasts)
        lines.extend(f"Warning: {w}" for w in self.warnings)
        return "\n".join(lines)


def _join(parts: list[str]) -> str:
    if len(parts) <= 1:
        return "".join(parts)
    return ", ".join(parts[:-1]) + " and " + parts[-1]
