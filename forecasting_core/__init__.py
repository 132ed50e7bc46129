"""Haulcast's forecasting core: pure computation for catch and abundance forecasts.

The public API is what ``__all__`` lists; every ``_module`` behind it is private. This package
never imports dash, flask or plotly.

>>> import forecasting_core as fc
>>> table = fc.read_table("landings.csv")                      # doctest: +SKIP
>>> report = fc.assess_stationarity(table.series["hake_t"])    # doctest: +SKIP
>>> comparison = fc.compare_models(y, horizon=5)               # doctest: +SKIP
>>> forecast = fc.make_forecast(comparison.best, horizon=5)    # doctest: +SKIP
"""

from forecasting_core._batch import iter_batch, run_batch
from forecasting_core._benchmarks import fit_benchmarks
from forecasting_core._diagnostics import check_residuals
from forecasting_core._fastarma import warm_up
from forecasting_core._forecast import make_forecast
from forecasting_core._hindcast import run_hindcast
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
