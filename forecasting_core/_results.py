"""Frozen result types shared by every step of the core.

Every result is a frozen dataclass with fixed field types and three views:
``to_frame()`` (a pandas DataFrame), ``to_dict()`` (plain JSON-ready Python) and
``summary()`` (plain text an analyst can paste into a report). statsmodels objects never
appear here: results carry numbers, labels and pandas objects only.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import pandas as pd

from forecasting_core._basics import (  # noqa: F401 - re-exported for the rest of the core
    CAUTIONS,
    PANDAS_FREQ,
    PERIODS,
    Frequency,
    InputError,
    Severity,
    _clean,
    frequency_of,
    period_length,
    time_label,
)
from forecasting_core._model_results import (  # noqa: F401 - re-exported
    Benchmark,
    Candidate,
    Comparison,
    Forecast,
    Hindcast,
    ResidualReport,
    SkillScore,
    TransformSpec,
)
from forecasting_core._record_results import ForecastRecord, PastForecastScore  # noqa: F401 - re-exported

# ---------------------------------------------------------------------------------------------
# Intake
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Problem:
    """One finding about an input file.

    Parameters
    ----------
    severity : {"error", "warning"}
        ``error``: the series (or file) cannot be used; ``warning``: it can, with care.
    message : str
        Plain-language description: what was found and what is allowed.
    row : int or None
        1-based row number in the file as a spreadsheet shows it (the header is row 1).
    time : str or None
        The year or period concerned, written as in :func:`time_label`.
    column : str or None
        The file column (or series) concerned.
    """

    severity: Severity
    message: str
    row: int | None = None
    time: str | None = None
    column: str | None = None

    def to_dict(self) -> dict[str, Any]:
        return {
            "severity": self.severity,
            "row": self.row,
            "time": self.time,
            "column": self.column,
            "message": self.message,
        }

    def summary(self) -> str:
        where = ", ".join(
            part
            for part in (
                f"row {self.row}" if self.row is not None else "",
                f"{self.time}" if self.time is not None else "",
                f"column {self.column!r}" if self.column is not None else "",
            )
            if part
        )
        return f"{self.severity.upper():7s} {where + ': ' if where else ''}{self.message}"


@dataclass(frozen=True)
class SeriesInfo:
    """What was kept of one series.

    Parameters
    ----------
    name : str
        Series (column or stock) name as in the file.
    frequency : {"annual", "quarterly", "monthly"}
    observations : int
        Non-missing values kept.
    missing : int
        Missing periods inside ``start``..``end`` (kept as NaN).
    start, end : str
        First and last period with a value.
    usable : bool
        False when an error-level problem prevents modelling.
    unit : str or None
        Unit given in the file (long layout ``unit`` column, or a header such as ``hake_t``).
    problems : tuple of Problem
        Problems that concern this series.
    """

    name: str
    frequency: str
    observations: int
    missing: int
    start: str
    end: str
    usable: bool
    unit: str | None = None
    problems: tuple[Problem, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "observations": self.observations,
            "missing": self.missing,
            "start": self.start,
            "end": self.end,
            "frequency": self.frequency,
            "unit": self.unit,
            "usable": self.usable,
            "problems": [p.to_dict() for p in self.problems],
        }


@dataclass(frozen=True)
class Table:
    """An input file read into series plus every problem found.

    Parameters
    ----------
    series : Mapping[str, pandas.Series]
        Name -> float series on a complete PeriodIndex (gaps are NaN, never dropped).
        Only series without error-level problems appear here.
    info : Mapping[str, SeriesInfo]
        Name -> what was kept, for every series found (usable or not), in file order.
    problems : tuple of Problem
        Every problem, file-level and per series, in file order.
    layout : {"wide", "long"}
    source : str
        File name as given.
    sha256 : str
        Content hash of the raw bytes.
    """

    series: Mapping[str, pd.Series]
    info: Mapping[str, SeriesInfo]
    problems: tuple[Problem, ...]
    layout: str
    source: str
    sha256: str

    @property
    def errors(self) -> tuple[Problem, ...]:
        return tuple(p for p in self.problems if p.severity == "error")

    @property
    def warnings(self) -> tuple[Problem, ...]:
        return tuple(p for p in self.problems if p.severity == "warning")

    def to_frame(self) -> pd.DataFrame:
        """Wide frame: one column per usable series, indexed by period."""
        if not self.series:
            return pd.DataFrame()
        return pd.concat(self.series, axis=1)

    def problems_frame(self) -> pd.DataFrame:
        return pd.DataFrame(
            [p.to_dict() for p in self.problems],
            columns=["severity", "row", "time", "column", "message"],
        )

    def to_dict(self) -> dict[str, Any]:
        series_names = set(self.info)
        return {
            "source": self.source,
            "sha256": self.sha256,
            "layout": self.layout,
            "series": [info.to_dict() for info in self.info.values()],
            "problems": [
                p.to_dict() for p in self.problems if p.column is None or p.column not in series_names
            ],
        }

    def summary(self) -> str:
        lines = [f"{self.source} ({self.layout} layout, sha256 {self.sha256[:12]})"]
        for info in self.info.values():
            state = "usable" if info.usable else "NOT usable"
            unit = f" [{info.unit}]" if info.unit else ""
            span = (
                "no values"
                if not info.start
                else f"{info.start}-{info.end}"
                if info.frequency == "annual"
                else f"{info.start} to {info.end}"
            )
            lines.append(
                f"  {info.name}{unit}: {info.frequency}, {span}, "
                f"{info.observations} values, {info.missing} missing - {state}"
            )
        if self.problems:
            n_err, n_warn = len(self.errors), len(self.warnings)
            lines.append(
                f"Problems ({n_err} error{'s' if n_err != 1 else ''}, "
                f"{n_warn} warning{'s' if n_warn != 1 else ''}):"
            )
            lines.extend("  " + p.summary() for p in self.problems)
        else:
            lines.append("No problems found.")
        return "\n".join(lines)


# ---------------------------------------------------------------------------------------------
# Stationarity
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class StationarityTest:
    """One ADF or KPSS test on one differencing level.

    Parameters
    ----------
    test : {"ADF", "KPSS"}
    regression : {"level", "trend"}
        Deterministic terms: constant only, or constant and linear trend.
    differences : int
        Ordinary differences applied before the test (0, 1 or 2).
    seasonal_differences : int
        Seasonal differences applied before the test (0 or 1).
    statistic, pvalue : float
        pvalue may be a bound (statsmodels interpolates KPSS inside its table).
    lags : int
        Lags used (ADF: augmentation lags; KPSS: bandwidth).
    critical_values : Mapping[str, float]
        Keys such as ``"1%"``, ``"5%"``, ``"10%"`` (KPSS adds ``"2.5%"``).
    null : str
        The null hypothesis in words.
    rejected : bool
        Null rejected at 5%.
    pvalue_bound : {"at most", "at least"} or None
        Set when the statistic lies outside the tabulated range (KPSS): the true p-value is
        at most (or at least) ``pvalue``. None when ``pvalue`` is interpolated or exact.
    """

    test: str
    regression: str
    differences: int
    seasonal_differences: int
    statistic: float
    pvalue: float
    lags: int
    critical_values: Mapping[str, float]
    null: str
    rejected: bool
    pvalue_bound: str | None = None

    def to_dict(self) -> dict[str, Any]:
        return _clean(
            {
                "test": self.test,
                "regression": self.regression,
                "differences": self.differences,
                "seasonal_differences": self.seasonal_differences,
                "statistic": self.statistic,
                "pvalue": self.pvalue,
                "lags": self.lags,
                "critical_values": dict(self.critical_values),
                "null": self.null,
                "rejected_at_5pct": self.rejected,
                "pvalue_bound": self.pvalue_bound,
            }
        )


@dataclass(frozen=True)
class Correlogram:
    """Sample ACF and PACF of one differencing level.

    Parameters
    ----------
    differences, seasonal_differences : int
    lags : tuple of int
        1..max lag (periods at the series' frequency).
    acf, pacf : tuple of float
    limit : float
        Approximate 95% limit, 1.96 / sqrt(n).
    """

    differences: int
    seasonal_differences: int
    lags: tuple[int, ...]
    acf: tuple[float, ...]
    pacf: tuple[float, ...]
    limit: float

    def to_frame(self) -> pd.DataFrame:
        return pd.DataFrame({"lag": self.lags, "acf": self.acf, "pacf": self.pacf})

    def to_dict(self) -> dict[str, Any]:
        return _clean(
            {
                "differences": self.differences,
                "seasonal_differences": self.seasonal_differences,
                "lags": list(self.lags),
                "acf": list(self.acf),
                "pacf": list(self.pacf),
                "limit": self.limit,
            }
        )


@dataclass(frozen=True)
class StationarityReport:
    """How many differences make a series stationary, and the evidence.

    Parameters
    ----------
    series_name : str
    frequency : str
    transform : str
        Transform applied before testing (``"none"``, ``"log"``, ``"boxcox"``).
    d : int
        Ordinary differences chosen (0..2) by the KPSS sequence at 5%.
    seasonal_d : int
        Seasonal differences chosen (0 or 1; always 0 for annual data).
    seasonal_strength : float or None
        Seasonal strength in [0, 1] (None for annual data).
    tests : tuple of StationarityTest
    correlograms : tuple of Correlogram
    differenced : Mapping[int, pandas.Series]
        0, 1, 2 -> the (seasonally differenced when ``seasonal_d`` is 1) series after that many
        ordinary differences, on the transformed scale.
    verdict : str
        Plain-language paragraph for a report.
    tests_disagree : bool
        ADF and KPSS point to different d.
    """

    series_name: str
    frequency: str
    transform: str
    d: int
    seasonal_d: int
    seasonal_strength: float | None
    tests: tuple[StationarityTest, ...]
    correlograms: tuple[Correlogram, ...]
    differenced: Mapping[int, pd.Series] = field(repr=False)
    verdict: str = ""
    tests_disagree: bool = False

    def to_frame(self) -> pd.DataFrame:
        return pd.DataFrame([t.to_dict() for t in self.tests])

    def to_dict(self) -> dict[str, Any]:
        return _clean(
            {
                "d": self.d,
                "seasonal_d": self.seasonal_d,
                "seasonal_strength": self.seasonal_strength,
                "transform": self.transform,
                "tests": [t.to_dict() for t in self.tests],
                "tests_disagree": self.tests_disagree,
                "verdict": self.verdict,
            }
        )

    def summary(self) -> str:
        lines = [f"Stationarity of {self.series_name} ({self.frequency}, transform {self.transform})"]
        for t in self.tests:
            lines.append(
                f"  {t.test:4s} {t.regression:5s} d={t.differences} D={t.seasonal_differences}: "
                f"stat {t.statistic:8.3f}  p {t.pvalue:6.3f}  lags {t.lags:2d}  "
                f"{'rejects' if t.rejected else 'keeps'} '{t.null}'"
            )
        lines.append(f"  Chosen: d = {self.d}, D = {self.seasonal_d}")
        lines.append("  " + self.verdict)
        return "\n".join(lines)
