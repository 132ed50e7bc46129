"""Haulcast's forecasting core: pure computation for catch and abundance forecasts.

The public API is what ``__all__`` lists; every ``_module`` behind it is private. This package
never imports dash, flask or plotly.

>>> import forecasting_core as fc
>>> table = fc.read_table("landings.csv")                      # doctest: +SKIP
>>> report = fc.assess_stationarity(table.series["hake_t"])    # doctest: +SKIP
>>> comparison = fc.compare_models(y, horizon=5)               # doctest: +SKIP
>>> forecast = fc.make_forecast(comparison.best, horizon=5)    # doctest: +SKIP
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # the names as type checkers see them; at run time they load on first use
    from forecasting_core._batch import iter_batch, run_batch
    from forecasting_core._benchmarks import fit_benchmarks
    from forecasting_core._diagnostics import check_residuals
    from forecasting_core._forecast import make_forecast
    from forecasting_core._hindcast import run_hindcast
    from forecasting_core._hindcast_scores import better_by
    from forecasting_core._record import score_forecast_record
    from forecasting_core._results import (
        CAUTIONS,
        Benchmark,
        Candidate,
        Comparison,
        Correlogram,
        Forecast,
        ForecastRecord,
        Hindcast,
        InputError,
        PastForecastScore,
        Problem,
        ResidualReport,
        SeriesInfo,
        SkillScore,
        StationarityReport,
        StationarityTest,
        Table,
        TransformSpec,
        frequency_of,
        time_label,
    )
    from forecasting_core._search import compare_models, fit_model
    from forecasting_core._stationarity import assess_stationarity
    from forecasting_core._table import MAX_FILE_BYTES, read_table
    from forecasting_core._transform import (
        back_transform,
        boxcox_mle_lambda,
        choose_transform,
        guerrero_lambda,
        mean_back_transform,
        transform_series,
    )

# Public name -> private module. Names load on first use (PEP 562), so ``python -m
# forecasting_core --help`` and argument errors answer without loading pandas, scipy,
# statsmodels or numba; ``from forecasting_core import compare_models`` works as before.
_LAZY = {
    "iter_batch": "_batch",
    "run_batch": "_batch",
    "fit_benchmarks": "_benchmarks",
    "check_residuals": "_diagnostics",
    "make_forecast": "_forecast",
    "run_hindcast": "_hindcast",
    "better_by": "_hindcast_scores",
    "score_forecast_record": "_record",
    **dict.fromkeys(
        (
            "CAUTIONS Benchmark Candidate Comparison Correlogram Forecast ForecastRecord Hindcast "
            "InputError PastForecastScore Problem ResidualReport SeriesInfo SkillScore "
            "StationarityReport StationarityTest Table TransformSpec frequency_of time_label"
        ).split(),
        "_results",
    ),
    "compare_models": "_search",
    "fit_model": "_search",
    "assess_stationarity": "_stationarity",
    "MAX_FILE_BYTES": "_table",
    "read_table": "_table",
    **dict.fromkeys(
        (
            "back_transform boxcox_mle_lambda choose_transform guerrero_lambda "
            "mean_back_transform transform_series"
        ).split(),
        "_transform",
    ),
}


def warm_up() -> None:
    """Load every core module, then compile (or load from numba's cache) the fast path's code.

    A server calls this at start, and a batch before its worker processes fork, so that no
    request or worker pays for loading pandas, scipy, statsmodels and numba or for the compile
    (tens of seconds cold on a 2-core machine, about a second from the caches). Safe to call
    twice.
    """
    for module in sorted(set(_LAZY.values())):
        importlib.import_module(f"forecasting_core.{module}")
    from forecasting_core._fastarma import warm_up as compile_fast_path

    compile_fast_path()


def __getattr__(name: str) -> Any:
    """Load a public name's module on first use and keep the name (PEP 562)."""
    module = _LAZY.get(name)
    if module is None:
        raise AttributeError(f"module 'forecasting_core' has no attribute {name!r}")
    value = getattr(importlib.import_module(f"forecasting_core.{module}"), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))


__version__ = "0.1.0"

__all__ = [
    "Benchmark",
    "CAUTIONS",
    "Candidate",
    "Comparison",
    "Correlogram",
    "Forecast",
    "ForecastRecord",
    "Hindcast",
    "InputError",
    "MAX_FILE_BYTES",
    "PastForecastScore",
    "Problem",
    "ResidualReport",
    "SeriesInfo",
    "SkillScore",
    "StationarityReport",
    "StationarityTest",
    "Table",
    "TransformSpec",
    "__version__",
    "assess_stationarity",
    "back_transform",
    "better_by",
    "boxcox_mle_lambda",
    "check_residuals",
    "choose_transform",
    "compare_models",
    "fit_benchmarks",
    "fit_model",
    "frequency_of",
    "guerrero_lambda",
    "iter_batch",
    "make_forecast",
    "mean_back_transform",
    "read_table",
    "run_batch",
    "run_hindcast",
    "score_forecast_record",
    "time_label",
    "transform_series",
    "warm_up",
]
