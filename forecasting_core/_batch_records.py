"""The forecast JSON object of DESIGN.md: one series' comparison and forecast as a record.

:func:`compute_one` compares models for one series and forecasts it; :func:`forecast_record`
and :func:`error_record` build the JSON-safe objects that ``forecast --json``, ``batch --json``
and :func:`run_batch` return. No clock time is recorded, so the same data and settings give the
same object in any process.
"""

from __future__ import annotations

import hashlib
import math
import platform
from collections.abc import Mapping
from dataclasses import replace
from typing import Any

import pandas as pd

from forecasting_core._hindcast_scores import better_by, mase_pair
from forecasting_core._results import (
    CAUTIONS,
    Comparison,
    Forecast,
    InputError,
    Problem,
    Table,
    _clean,
)

#: Band levels of every exported forecast (percent).
LEVELS: tuple[int, ...] = (50, 80, 95)
#: Top-level keys of one forecast object, in order (DESIGN.md contract plus cautions and provenance).
RECORD_KEYS: tuple[str, ...] = (
    "series", "observations", "frequency", "transform", "model", "candidates", "hindcast",
    "forecast", "warnings", "cautions", "provenance",
)  # fmt: skip


def package_versions() -> dict[str, str]:
    """Versions of Python and of every package that shapes a result."""
    import numpy
    import scipy
    import statsmodels

    from forecasting_core import __version__

    return {
        "haulcast": __version__,
        "python": platform.python_version(),
        "numpy": numpy.__version__,
        "pandas": pd.__version__,
        "scipy": scipy.__version__,
        "statsmodels": statsmodels.__version__,
    }


def series_sha256(y: pd.Series) -> str:
    """Content hash of one series: its periods and values (NaN included) as text."""
    text = "\n".join(
        f"{p}\t{'' if pd.isna(v) else repr(float(v))}" for p, v in zip(y.index, y, strict=True)
    )
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def provenance(
    y: pd.Series,
    settings: Mapping[str, Any],
    *,
    data_sha256: str | None = None,
    source: str | None = None,
    resolved: Mapping[str, Any] | None = None,
) -> dict[str, Any]:
    """What produced a result: data hashes, settings and package versions.

    ``settings`` are the ones asked for; ``resolved`` (optional) every setting the model
    comparison actually used (differences, search, transform). No clock time is recorded,
    so that the same data and settings give the same object.
    """
    out = {
        "source": source,
        "data_sha256": data_sha256,
        "series_sha256": series_sha256(y),
        "settings": dict(settings),
        "versions": package_versions(),
    }
    if resolved is not None:
        out["resolved_settings"] = dict(resolved)
    return _clean(out)


def hindcast_summary(comparison: Comparison) -> dict[str, Any] | None:
    """The ``hindcast`` object of the contract, for the chosen model.

    ``origins`` is the number of origins; ``mase``, ``rmse`` and ``coverage`` (percent) are
    the chosen model's scores.
    """
    h = comparison.hindcast
    if h is None:
        return None
    s = h.score(comparison.best.label) or (h.scores[0] if h.scores else None)
    if s is None:
        return None
    return _clean(
        {
            "origins": len(h.origins),
            "mase": s.mase,
            "rmse": s.rmse,
            "coverage": {"80": s.coverage80, "95": s.coverage95},
        }
    )


def _better_benchmarks(comparison: Comparison) -> list[str]:
    """Warnings for benchmarks other than the last value that did better than the chosen model.

    A benchmark did better when its MASE is lower by at least 0.5% of the model's, on the
    forecasts both made (:func:`forecasting_core._hindcast_scores.better_by`).
    """
    h = comparison.hindcast
    mine = h.score(comparison.best.label) if h is not None else None
    if mine is None or not math.isfinite(mine.mase):
        return []
    out = []
    for s in h.scores:
        if s.kind != "benchmark" or s.model == "last value":
            continue
        # on the forecasts both made (the pair the Bench and the Board show)
        pair = h.versus(s.model, mine.model)
        a, b = (pair[0].mase, pair[1].mase) if pair is not None else (mine.mase, s.mase)
        pct = better_by(a, b)  # the one rule of the verdict, the Bench and the Board
        if pct is not None:
            out.append(
                f"On the hindcast the {s.model} benchmark scored a lower MASE than "
                f"{mine.model} on the same forecasts ({mase_pair(b, a)}, errors {pct}% smaller)."
            )
    return out


def forecast_record(
    comparison: Comparison,
    forecast: Forecast,
    settings: Mapping[str, Any],
    *,
    data_sha256: str | None = None,
    source: str | None = None,
    series: pd.Series | None = None,
) -> dict[str, Any]:
    """Build the forecast JSON object of DESIGN.md (plus ``cautions`` and ``provenance``).

    Parameters
    ----------
    comparison : Comparison
        The model comparison; its ``best`` is the model reported.
    forecast : Forecast
        Bands from that model.
    settings : Mapping
        Every setting that produced the result (recorded in ``provenance``).
    data_sha256, source : str, optional
        Hash and name of the file the series came from.
    series : pandas.Series, optional
        The series (default: the one the chosen model was fitted to).
    """
    best = comparison.best
    warnings: list[str] = []
    for w in (*comparison.warnings, *forecast.warnings):
        if w not in warnings:
            warnings.append(w)
    h = comparison.hindcast
    if h is not None and h.verdict and "did not beat" in h.verdict and h.verdict not in warnings:
        warnings.append(h.verdict)
    score = h.score(best.label) if h is not None else None
    if score is not None and (caution := score.coverage_warning(comparison.frequency)):
        warnings.append(caution)
    warnings.extend(w for w in _better_benchmarks(comparison) if w not in warnings)
    diag = comparison.diagnostics
    if diag is not None and diag.verdict and (
        not diag.white_noise or "not normal" in diag.verdict or "Unusually large" in diag.verdict
    ):  # the residual verdict, when it holds a caution (the Board's CSV has it too)
        warnings.append(f"Residuals of {diag.model}: {diag.verdict}")
    record = {
        "series": comparison.series_name,
        "observations": comparison.observations,
        "frequency": comparison.frequency,
        "transform": comparison.transform.to_dict(),
        "model": best.model_dict(),
        "candidates": [c.brief_dict() for c in comparison.accepted],
        "hindcast": hindcast_summary(comparison),
        "forecast": forecast.rows(),
        "warnings": warnings,
        "cautions": list(forecast.cautions or CAUTIONS),
        "provenance": provenance(
            series if series is not None else best.series,
            settings,
            data_sha256=data_sha256,
            source=source,
            resolved=comparison.settings,
        ),
    }
    return _clean(record)


def error_record(
    name: str, message: str, settings: Mapping[str, Any], *, kind: str = "data", **where: Any
) -> dict[str, Any]:
    """The entry of a series that could not be forecast.

    ``error_kind`` is ``"data"`` when the series or the settings cannot be used (a plain
    message says why) and ``"internal"`` for anything else.
    """
    return _clean(
        {
            "series": name,
            "error": message,
            "error_kind": kind,
            "cautions": list(CAUTIONS),
            "provenance": {
                "source": where.get("source"),
                "data_sha256": where.get("data_sha256"),
                "settings": dict(settings),
                "versions": package_versions(),
            },
        }
    )


def compute_one(
    y: pd.Series,
    horizon: int,
    *,
    transform: str = "auto",
    reference: float | None = None,
    levels: tuple[int, ...] = LEVELS,
    data_sha256: str | None = None,
    source: str | None = None,
    **compare_settings: Any,
) -> tuple[Comparison, Forecast, dict[str, Any]]:
    """Compare models for one series and forecast it.

    Returns the Comparison, the Forecast and the JSON contract object.

    Parameters
    ----------
    y : pandas.Series
        Original-scale values on an annual, quarterly or monthly PeriodIndex.
    horizon : int
        Steps ahead at the series' frequency.
    transform : {"auto", "none", "log", "boxcox"}
    reference : float, optional
        Reference level on the original scale (probability of falling below it per step).
    levels : tuple of int
        Band levels in percent.
    **compare_settings
        Passed to :func:`compare_models` (e.g. a forced ``order``).
    """
    from forecasting_core._forecast import make_forecast
    from forecasting_core._search import compare_models

    comparison = compare_models(y, horizon=horizon, transform=transform, **compare_settings)
    if not comparison.best.ok:
        raise InputError(
            comparison.warnings[0] if comparison.warnings else
            f"no model could be fitted to series {comparison.series_name!r}."
        )  # fmt: skip
    forecast = make_forecast(comparison.best, horizon=horizon, levels=levels, reference=reference)
    settings = {
        "horizon": horizon,
        "transform": transform,
        "reference": reference,
        "levels": list(levels),
        **{k: (list(v) if isinstance(v, tuple) else v) for k, v in compare_settings.items()},
    }
    record = forecast_record(
        comparison, forecast, settings, data_sha256=data_sha256, source=source, series=y
    )
    return comparison, forecast, record


def problem_text(p: Problem) -> str:
    """One problem as plain text: "row 27, 2021, column 'cod_t': message"."""
    where = ", ".join(
        x
        for x in (
            f"row {p.row}" if p.row is not None else "",
            p.time or "",
            f"column {p.column!r}" if p.column is not None else "",
        )
        if x
    )
    return f"{where}: {p.message}" if where else p.message


def unusable_message(table: Table, name: str) -> str:
    """Plain message for a series the file check marked unusable, naming rows and years."""
    parts = [
        problem_text(replace(p, column=None))
        for p in table.info[name].problems
        if p.severity == "error"
    ]
    detail = "; ".join(parts) if parts else "it has no usable values."
    return f"series {name!r} cannot be used: {detail}"


def data_warnings(table: Table, name: str) -> list[str]:
    """The file check's findings that concern series ``name``, as record warnings.

    File-wide findings come first (those ``check --json`` lists at the top level: no column,
    or a column that is not a series, such as the time column), then the series' own ones
    (without its column, which the record names already). Each reads as ``check`` writes it,
    with the 1-based file row and the year: "File check: row 15: row 15 repeats row 14
    exactly; it was kept once."
    """
    series_names = set(table.info)
    found = [p for p in table.problems if p.column is None or p.column not in series_names]
    own = table.info[name].problems if name in table.info else ()
    out: list[str] = []
    for text in (
        *(problem_text(p) for p in found),
        *(problem_text(replace(p, column=None)) for p in own),
    ):
        line = f"File check: {text}"
        if line not in out:
            out.append(line)
    return out


def with_data_warnings(record: dict[str, Any], found: list[str]) -> dict[str, Any]:
    """The record with the file check's findings (:func:`data_warnings`) before its own warnings.

    Error records and records without findings come back unchanged; the key order stays.
    """
    if not found or "error" in record or "warnings" not in record:
        return record
    return {**record, "warnings": [*found, *(w for w in record["warnings"] if w not in found)]}
