"""Words the fresh-eyes trial found unclear: MAE and RMSE, the clipping note, the verdict.

Data: the Nile river flow series that statsmodels ships (statsmodels.datasets.nile, annual
volumes 1871-1970, 10^8 m^3). The benchmark MASE values set by hand are given beside each
check; the clipping case uses ((flow - 455) ** 2) / 1000, a never-negative skewed series built
from the same data (455 is just below the series' minimum, 456) whose normal bands without a
transform reach below 0.
"""

from __future__ import annotations

import dataclasses

import pandas as pd
import pytest
from dash import html

import forecasting_core as fc
from app import tables, wording
from app.board_views import reference_notes
from app.export import forecast_csv, report_html
from app.wording import better_benchmarks, hindcast_sentence


def _with_mase(comparison: fc.Comparison, label: str, mase: float) -> fc.Comparison:
    """``comparison`` with ``label``'s hindcast MASE set to ``mase`` (its own and its pairs)."""
    hc = comparison.hindcast

    def fix(s: fc.SkillScore) -> fc.SkillScore:
        return dataclasses.replace(s, mase=mase) if s.model == label else s

    hc = dataclasses.replace(
        hc,
        scores=tuple(fix(s) for s in hc.scores),
        paired=tuple((fix(a), fix(b)) for a, b in hc.paired),
    )
    return dataclasses.replace(comparison, hindcast=hc)


def _texts(node) -> list[str]:
    """Every string in a Dash component tree."""
    if isinstance(node, str):
        return [node]
    if isinstance(node, (list, tuple)):
        return [t for n in node for t in _texts(n)]
    children = getattr(node, "children", None)
    return _texts(children) if children is not None else []


# -- 1. RMSE below MAE is explained where the skill table is shown ----------------------------


def test_skill_table_says_mae_scores_the_median_and_rmse_the_mean():
    # absolute error is consistent for the median, squared error for the mean (Gneiting 2011,
    # "Making and evaluating point forecasts", JASA 106, 746-762), so the two can cross
    box = tables.skill_table()
    table = box.children[0]
    assert table.id == "bench-skill"
    assert "median" in table.tooltip_header["mae"] and "mean" in table.tooltip_header["rmse"]
    assert "RMSE can be below MAE" in " ".join(_texts(box))


def test_report_explains_rmse_below_mae_under_the_skill_table(comparison, forecast):
    page = report_html(forecast, comparison)
    skill = page.index("<h2>Hindcast skill</h2>")
    assert page.index("MAE scores the median forecast, RMSE the mean", skill) > skill


# -- 2. the note on band ends shown as 0 ------------------------------------------------------


@pytest.fixture(scope="module")
def clipped(nile: pd.Series) -> fc.Forecast:
    y = (nile - 455.0) ** 2 / 1000.0
    comparison = fc.compare_models(y, horizon=8, transform="none", max_p=2, max_q=2)
    return fc.make_forecast(comparison.best, horizon=8, levels=(50, 80, 95))


def test_clipping_note_has_its_own_banner_and_explains_expected(clipped):
    assert any(wording.is_clip_note(w) for w in clipped.warnings)
    # the mean of max(Y, 0) is above the median there: the table shows it, the note says why
    assert (clipped.table["mean"] > clipped.table["median"]).any()
    banner = reference_notes(clipped)
    text = " ".join(_texts(banner))
    assert "Never below zero" in text
    assert "Reference level" not in text.split("went below zero")[0]
    assert wording.CLIP_MEAN_NOTE in text


def test_csv_and_report_carry_the_expected_explanation(clipped):
    csv_lines = forecast_csv(clipped, None).splitlines()
    assert any(wording.CLIP_MEAN_NOTE in line for line in csv_lines if line.startswith("#"))
    assert wording.CLIP_MEAN_NOTE in report_html(clipped, None)


def test_reference_level_note_keeps_its_title(forecast):
    # the core's implausible-reference note ("more than ten times the largest value")
    far = dataclasses.replace(
        forecast,
        warnings=("The reference level 99999 is more than ten times the largest value on record.",),
    )
    text = " ".join(_texts(reference_notes(far)))
    assert "Reference level" in text and "Never below zero" not in text
    assert isinstance(reference_notes(far), html.Div)


# -- 3. the Board's verdict agrees with the Bench's rounding ----------------------------------


@pytest.mark.parametrize(
    ("naive", "said"),
    [
        # model MASE m vs last value: 1 - m / naive; the core's verdict says "by N%" from 0.5%
        # (forecasting_core._hindcast_scores.verdict), "by less than 1%" below it
        (1.0101, "errors were 1% smaller"),
        (1.003, "errors were less than 1% smaller"),
        (0.997, "did about as well as simply repeating the last observed value (within 1%)"),
        (0.90, "errors were 11% larger"),
    ],
)
def test_board_rounds_the_last_value_comparison_as_the_bench(comparison, naive, said):
    best = comparison.best.label
    fixed = _with_mase(_with_mase(comparison, best, 1.0), "last value", naive)
    assert said in hindcast_sentence(fixed, best)


@pytest.mark.parametrize(
    ("bench", "named"),
    [
        # the trial's scallop: drift 0.986 vs ARIMA 0.994, shown as "1% worse" in the table
        (0.986, True),
        (0.989, True),  # 0.994 / 0.989 - 1 = 0.51%: shown as 1% worse
        (0.9895, False),  # 0.45%: shown as 0% worse
        (0.994, False),
    ],
)
def test_benchmark_named_when_the_table_shows_at_least_one_percent(comparison, bench, named):
    best = comparison.best.label
    fixed = _with_mase(_with_mase(comparison, best, 0.994), "last value + drift", bench)
    # every benchmark else well above the model
    fixed = _with_mase(fixed, "long-run mean", 5.0)
    labels = [b[0] for b in better_benchmarks(fixed, best)]
    assert ("last value + drift" in labels) is named
    # the Benchmarks table's "Best ARIMA is" column: |1 - 0.994 / bench| in whole percent
    shown = round(abs(1 - 0.994 / bench) * 100)
    assert (shown >= 1) is named


def test_model_that_did_not_beat_the_last_value_hears_the_benchmark_also_did_better(comparison):
    best = comparison.best.label
    fixed = _with_mase(
        _with_mase(_with_mase(comparison, best, 1.10), "last value", 1.0), "long-run mean", 0.9
    )
    sentence = hindcast_sentence(fixed, best)
    assert "errors were 10% larger" in sentence
    assert (
        "The long-run mean benchmark also did better (errors 18% smaller, MASE 0.90 vs 1.10)"
        in (sentence)
    )
    assert "But" not in sentence and "weigh" not in sentence
    assert "consider using that benchmark's forecast, or check why the model does worse" in sentence


def test_model_that_beat_the_last_value_hears_but_and_a_concrete_step(comparison):
    best = comparison.best.label
    fixed = _with_mase(
        _with_mase(_with_mase(comparison, best, 0.9), "last value", 1.0), "long-run mean", 0.8
    )
    sentence = hindcast_sentence(fixed, best)
    assert "But on the same past forecasts the long-run mean benchmark" in sentence
    assert sentence.endswith(
        "consider using that benchmark's forecast, or check why the model does worse."
    )


def test_a_benchmark_better_by_less_than_a_hundredth_shows_three_decimals(comparison):
    # the trial's scallop: drift 0.986 vs the model's 0.994 would read "0.99 vs 0.99"
    best = comparison.best.label
    fixed = _with_mase(_with_mase(comparison, best, 0.994), "last value + drift", 0.986)
    fixed = _with_mase(_with_mase(fixed, "long-run mean", 5.0), "last value", 1.2)
    sentence = hindcast_sentence(fixed, best)
    assert "the last value + drift benchmark (errors 1% smaller, MASE 0.986 vs 0.994)" in sentence
    # the same rule as the core's verdict (forecasting_core.better_by)
    assert fc.better_by(0.994, 0.986) == 1


def test_band_caution_names_the_series_periods(comparison):
    # the core's rule (SkillScore.coverage_warning): the 80% band held under 65% of at least
    # 10 forecasts; made to hold 40% of 50, on a comparison said to be monthly
    best = comparison.best.label
    hc = comparison.hindcast

    def narrow(s: fc.SkillScore) -> fc.SkillScore:
        return dataclasses.replace(s, coverage80=40.0, forecasts=50) if s.model == best else s

    monthly = dataclasses.replace(
        comparison,
        frequency="monthly",
        hindcast=dataclasses.replace(hc, scores=tuple(narrow(s) for s in hc.scores)),
    )
    assert wording.band_caution(monthly, best).startswith("On past months the bands")
