"""The forecast record: past published forecasts scored against newer data.

Hand-worked examples: every expected number is worked out in the comments beside it.
Definitions checked (Hyndman & Koehler 2006, "Another look at measures of forecast accuracy",
IJF 22, from memory): error e_t = Y_t - F_t (realised minus the point forecast, here the
median); percentage error p_t = 100 e_t / Y_t; MASE = mean(|e_t|) / scale, the scale being the
in-sample MAE of the naive method (lag 1), or of the seasonal naive method (lag m) for
seasonal data. "Inside the band" includes its ends (common practice; the hindcast does the same).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import forecasting_core as fc


def annual(start: int, values: list[float], name: str = "hake_t") -> pd.Series:
    index = pd.period_range(str(start), periods=len(values), freq="Y")
    return pd.Series(np.asarray(values, dtype=float), index=index, name=name)


def past_forecast(
    rows: list[tuple[str, float, dict[int, tuple[float, float]]]],
    *,
    frequency: str = "annual",
    series: str = "hake_t",
    model: str = "ARIMA(0,1,0)",
) -> dict:
    """A forecast in the JSON form a store keeps (Forecast.to_dict())."""
    levels = sorted({lv for _, _, bands in rows for lv in bands})
    return {
        "series": series,
        "model": model,
        "frequency": frequency,
        "horizon": len(rows),
        "levels": levels,
        "reference": None,
        "band_source": "model",
        "transform": {"name": "none", "lambda": None},
        "forecast": [
            {
                "time": t,
                "step": i,
                "mean": med,
                "median": med,
                "intervals": {str(lv): list(b) for lv, b in bands.items()},
                "prob_below_reference": None,
            }
            for i, (t, med, bands) in enumerate(rows, start=1)
        ],
        "warnings": [],
        "cautions": list(fc.CAUTIONS),
    }


# History 2011-2015: 10, 12, 11, 14, 13. Naive one-year changes |12-10|=2, |11-12|=1,
# |14-11|=3, |13-14|=1: scale = (2+1+3+1)/4 = 1.75.
HISTORY = [10.0, 12.0, 11.0, 14.0, 13.0]
# Realised 2016-2018: 15, 12, 20.
NEWER = annual(2011, [*HISTORY, 15.0, 12.0, 20.0])
WORKED = past_forecast(
    [
        ("2016", 13.0, {50: (12.0, 14.0), 80: (11.0, 15.0), 95: (10.0, 16.0)}),
        ("2017", 13.5, {50: (12.5, 14.5), 80: (11.5, 15.5), 95: (10.0, 17.0)}),
        ("2018", 14.0, {50: (12.5, 15.5), 80: (11.0, 17.0), 95: (9.0, 19.0)}),
    ]
)


def test_worked_example_errors_and_bands_per_period():
    record = fc.score_forecast_record(WORKED, NEWER)
    (past,) = record.forecasts
    t = past.table
    assert list(t["status"]) == ["scored"] * 3
    assert list(t["actual"]) == [15.0, 12.0, 20.0]
    # errors: 15-13 = 2, 12-13.5 = -1.5, 20-14 = 6
    assert list(t["error"]) == pytest.approx([2.0, -1.5, 6.0])
    # percentage errors: 100*2/15 = 13.333..., 100*(-1.5)/12 = -12.5, 100*6/20 = 30
    assert list(t["pct_error"]) == pytest.approx([13.3333333, -12.5, 30.0])
    # 50%: 15 > 14, 12 < 12.5, 20 > 15.5 -> none inside
    assert list(t["inside50"]) == [False, False, False]
    # 80%: 15 is the upper end (ends count), 12 in [11.5, 15.5], 20 > 17
    assert list(t["inside80"]) == [True, True, False]
    # 95%: 15 in [10, 16], 12 in [10, 17], 20 > 19
    assert list(t["inside95"]) == [True, True, False]
    # scaled errors: 2/1.75 = 1.142857, 1.5/1.75 = 0.857143, 6/1.75 = 3.428571
    assert list(t["scaled_error"]) == pytest.approx([1.142857, 0.857143, 3.428571], rel=1e-5)
    assert past.origin == "2015"
    assert past.scale == pytest.approx(1.75)


def test_worked_example_track_record_and_caveat():
    record = fc.score_forecast_record(WORKED, NEWER)
    # MASE = (2 + 1.5 + 6) / 3 / 1.75 = 9.5 / 5.25 = 1.809524
    assert record.mase == pytest.approx(1.809524, rel=1e-5)
    assert record.forecasts[0].mase == pytest.approx(1.809524, rel=1e-5)
    assert record.periods_scored == 3
    assert record.forecasts_scored == 1
    assert dict(record.inside) == {50: 0, 80: 2, 95: 2}
    # coverage 2 of 3 = 66.67%
    assert record.coverage(80) == pytest.approx(66.666667)
    frame = record.coverage_frame()
    assert list(frame["nominal"]) == [50.0, 80.0, 95.0]
    assert list(frame["scored"]) == [3, 3, 3]
    assert record.caveat == "3 years scored: too few to judge coverage (at least 10 are needed)."
    assert record.headline().startswith(
        "Of 3 past forecast years, 2 fell inside the 80% band (80% expected), "
        "2 inside the 95% band (95% expected) and 0 inside the 50% band (50% expected)."
    )
    assert "MASE 1.81" in record.headline()


def test_exact_realisation_gives_zero_error():
    medians = [13.0, 13.5, 14.0]
    newer = annual(2011, [*HISTORY, *medians])
    record = fc.score_forecast_record(WORKED, newer)
    t = record.to_frame()
    assert list(t["error"]) == [0.0, 0.0, 0.0]
    assert list(t["pct_error"]) == [0.0, 0.0, 0.0]
    assert record.mase == 0.0
    # a median inside its own bands: every band holds every period
    assert all(record.coverage(lv) == 100.0 for lv in (50, 80, 95))


def test_forecast_object_and_its_json_score_the_same(nile):
    # A real forecast of the Nile flow (statsmodels' dataset) made from data to 1960,
    # scored on the full series to 1970 (the realised values are the dataset's own).
    model = fc.fit_model(nile.loc[:"1960"], order=(0, 1, 1))
    forecast = fc.make_forecast(model, horizon=5)
    from_object = fc.score_forecast_record(forecast, nile)
    from_json = fc.score_forecast_record(json.loads(json.dumps(forecast.to_dict())), nile)
    pd.testing.assert_frame_equal(from_object.to_frame(), from_json.to_frame())
    t = from_object.to_frame()
    assert list(t["time"]) == ["1961", "1962", "1963", "1964", "1965"]
    realised = nile.loc["1961":"1965"].to_numpy()
    assert t["actual"].to_numpy() == pytest.approx(realised)
    assert t["error"].to_numpy() == pytest.approx(realised - forecast.table["median"].to_numpy())
    # scale: mean |y_t - y_{t-1}| over 1871-1960, straight from numpy
    scale = np.mean(np.abs(np.diff(nile.loc[:"1960"].to_numpy())))
    assert from_object.forecasts[0].scale == pytest.approx(scale)
    assert from_object.mase == pytest.approx(np.mean(np.abs(t["error"])) / scale)


def test_periods_after_the_newer_data_are_pending_not_scored():
    newer = annual(2011, [*HISTORY, 15.0])  # only 2016 realised
    record = fc.score_forecast_record(WORKED, newer)
    past = record.forecasts[0]
    assert past.scored == 1
    assert past.pending == ("2017", "2018")
    assert record.pending == (
        "ARIMA(0,1,0), data to 2015: 2017",
        "ARIMA(0,1,0), data to 2015: 2018",
    )
    assert record.periods_scored == 1
    # only the 2016 error counts: 2 / 1.75
    assert record.mase == pytest.approx(2 / 1.75)
    assert record.caveat.startswith("1 year scored: too few to judge coverage")
    assert record.headline().startswith("Of 1 past forecast year, 1 fell inside the 80% band")


def test_no_overlap_scores_nothing():
    record = fc.score_forecast_record(WORKED, annual(2011, HISTORY))
    assert record.periods_scored == 0
    assert record.forecasts[0].pending == ("2016", "2017", "2018")
    assert math.isnan(record.mase)
    assert math.isnan(record.coverage(80))
    assert (
        record.caveat
        == "No period of these past forecasts has a value in this data (to 2015): nothing to score yet."
    )
    assert record.headline() == "The past forecast has no realised year in this data yet."
    assert record.to_frame()["inside80"].isna().all()


def test_gap_in_the_newer_data_is_missing_not_scored():
    newer = annual(2011, [*HISTORY, 15.0, math.nan, 20.0])
    record = fc.score_forecast_record(WORKED, newer)
    past = record.forecasts[0]
    assert past.missing == ("2017",)
    assert past.pending == ()
    assert past.scored == 2
    assert dict(record.scored_by_level) == {50: 2, 80: 2, 95: 2}
    # 80%: 2016 inside (upper end), 2018 outside -> 1 of 2
    assert record.inside[80] == 1
    # MASE = (2 + 6) / 2 / 1.75 = 2.285714
    assert record.mase == pytest.approx(2.285714, rel=1e-5)
    row = record.to_frame().set_index("time").loc["2017"]
    assert row["status"] == "missing" and math.isnan(row["error"]) and pd.isna(row["inside80"])


def test_period_before_the_newer_data_starts_is_missing():
    newer = annual(2017, [12.0, 20.0])  # 2016 is not in the newer file at all
    record = fc.score_forecast_record(WORKED, newer, histories=[annual(2011, HISTORY)])
    assert record.forecasts[0].missing == ("2016",)
    assert record.periods_scored == 2


def test_history_given_sets_the_scale():
    # A revised history 2011-2015 of 10, 14, 10, 14, 10: changes 4, 4, 4, 4 -> scale 4.
    revised = annual(2011, [10.0, 14.0, 10.0, 14.0, 10.0])
    record = fc.score_forecast_record(WORKED, NEWER, histories=[revised])
    assert record.forecasts[0].scale == 4.0
    # MASE = (2 + 1.5 + 6) / 3 / 4 = 0.791667
    assert record.mase == pytest.approx(0.791667, rel=1e-5)


def test_monthly_labels_and_seasonal_naive_scale():
    # History 2023-01..2024-02; the two pairs 12 months apart: |13-10| = 3, |18-20| = 2,
    # so the seasonal naive scale is 2.5.
    hist = [10, 20, 30, 40, 50, 60, 70, 80, 90, 100, 110, 120, 13, 18]
    values = [*hist, 33.0, 50.0]  # realised 2024-03 = 33, 2024-04 = 50
    index = pd.period_range("2023-01", periods=len(values), freq="M")
    newer = pd.Series(np.asarray(values, float), index=index, name="squid")
    past = past_forecast(
        [("2024-03", 30.0, {80: (25.0, 35.0)}), ("2024-04", 40.0, {80: (35.0, 45.0)})],
        frequency="monthly",
        series="squid",
    )
    record = fc.score_forecast_record(past, newer)
    t = record.to_frame()
    assert record.forecasts[0].origin == "2024-02"
    assert record.forecasts[0].scale == pytest.approx(2.5)
    # errors 3 and 10; percentage 100*3/33 = 9.0909, 100*10/50 = 20
    assert list(t["error"]) == [3.0, 10.0]
    assert list(t["pct_error"]) == pytest.approx([9.090909, 20.0])
    assert list(t["inside80"]) == [True, False]
    # MASE = (3/2.5 + 10/2.5) / 2 = (1.2 + 4) / 2 = 2.6
    assert record.mase == pytest.approx(2.6)
    assert record.levels == (80,)
    assert record.headline().startswith("Of 2 past forecast months, 1 fell inside the 80% band")
    assert "same month a year earlier" in record.headline()


def test_quarterly_labels():
    index = pd.period_range("2020Q1", periods=10, freq="Q")
    newer = pd.Series(np.arange(10.0) + 1, index=index, name="cpue")
    past = past_forecast(
        [("2022-Q1", 9.0, {80: (8.0, 10.0)})], frequency="quarterly", series="cpue"
    )
    record = fc.score_forecast_record(past, newer)
    # 2022-Q1 is the 9th quarter: value 9 -> error 0; lag-4 changes of 1..8 are all 4
    assert record.forecasts[0].origin == "2021-Q4"
    assert record.forecasts[0].scale == 4.0
    assert record.to_frame()["error"].tolist() == [0.0]


def test_coverage_pools_the_forecasts_and_labels_stay_unique():
    later = past_forecast([("2018", 19.0, {80: (17.0, 21.0)})])
    record = fc.score_forecast_record([WORKED, later], NEWER, labels=["Season 2016", "Season 2016"])
    assert [f.label for f in record.forecasts] == ["Season 2016", "Season 2016 (2)"]
    # 80%: 2 of 3 from the first forecast, 20 in [17, 21] from the second -> 3 of 4
    assert record.inside[80] == 3 and record.scored_by_level[80] == 4
    # the second forecast has no 50%/95% bands: those levels count only the first's 3 periods
    assert record.scored_by_level[95] == 3
    assert record.periods_scored == 4
    assert "3 of 4 fell inside" not in record.headline()  # n == periods scored at 80%
    assert record.headline().startswith("Of 4 past forecast years, 3 fell inside the 80% band")
    assert "2 of 3 inside the 95% band" in record.headline()


def test_enough_periods_carry_no_caveat():
    rows = [(str(2016 + i), 13.0, {80: (0.0, 100.0)}) for i in range(10)]
    newer = annual(2011, [*HISTORY, *([13.0] * 10)])
    record = fc.score_forecast_record(past_forecast(rows), newer)
    assert record.periods_scored == 10
    assert record.caveat is None


def test_zero_realised_value_has_no_percentage_error():
    newer = annual(2011, [*HISTORY, 0.0, 12.0, 20.0])
    t = fc.score_forecast_record(WORKED, newer).to_frame()
    assert math.isnan(t["pct_error"].iloc[0])
    assert t["error"].iloc[0] == -13.0


def test_flat_history_leaves_mase_out_with_a_warning():
    newer = annual(2011, [5.0, 5.0, 5.0, 5.0, 5.0, 15.0, 12.0, 20.0])
    record = fc.score_forecast_record(WORKED, newer)
    assert math.isnan(record.mase)
    assert any("no usable MASE scale" in w for w in record.warnings)
    assert "MASE" not in record.headline()


def test_other_series_name_is_a_warning():
    record = fc.score_forecast_record(WORKED, NEWER.rename("plaice_t"))
    assert record.warnings == ("forecast 1 was made for 'hake_t', the newer data is 'plaice_t'.",)


def test_to_dict_is_strict_json():
    data = fc.score_forecast_record(
        WORKED, annual(2011, [*HISTORY, 15.0, math.nan, 20.0])
    ).to_dict()
    text = json.dumps(data, allow_nan=False)
    back = json.loads(text)
    assert back["coverage"]["80"] == {"nominal": 80, "scored": 2, "inside": 1, "percent": 50.0}
    period = back["forecasts"][0]["periods"][1]
    assert period["status"] == "missing" and period["inside"]["80"] is None
    assert back["forecasts"][0]["periods"][0]["bands"]["80"] == [11.0, 15.0]
    assert [r["step"] for r in back["by_step"]] == [1, 3]  # step 2 (2017) is missing


@pytest.mark.parametrize(
    ("forecasts", "kwargs", "match"),
    [
        ([], {}, "forecasts must hold at least one past forecast. Got none."),
        ("2016", {}, "forecasts must be a Forecast, its to_dict"),
        ([{"model": "x"}], {}, "forecast 1 must be a Forecast or its to_dict"),
        (
            [WORKED, {**WORKED, "frequency": "monthly"}],
            {},
            r"forecast 2 frequency must match the series \(annual\). Got 'monthly' instead.",
        ),
        (
            [WORKED],
            {"labels": ["a", "b"]},
            r"labels must have one entry per forecast \(1\). Got 2 instead.",
        ),
        (
            [WORKED],
            {"histories": []},
            r"histories must have one entry per forecast \(1\). Got 0 instead.",
        ),
        (
            [{**WORKED, "forecast": [{**WORKED["forecast"][0], "time": "2016-13"}]}],
            {},
            "forecast 1 period times must be written like '2026' for annual data. Got '2016-13' instead.",
        ),
        ([{**WORKED, "forecast": []}], {}, "forecast 1 must have at least one forecast period"),
    ],
)
def test_bad_input_names_the_problem(forecasts, kwargs, match):
    with pytest.raises(fc.InputError, match=match):
        fc.score_forecast_record(forecasts, NEWER, **kwargs)


def test_series_without_periods_is_refused():
    with pytest.raises(fc.InputError, match="PeriodIndex"):
        fc.score_forecast_record(WORKED, pd.Series([1.0, 2.0]))


def test_blank_values_after_the_last_observed_period_are_pending():
    # a file with rows for 2017-2018 left blank: those years are not yet realised
    record = fc.score_forecast_record(WORKED, annual(2011, [*HISTORY, 15.0, math.nan, math.nan]))
    assert record.forecasts[0].pending == ("2017", "2018")
    assert record.missing == ()


def test_summary_lists_pending_periods():
    text = fc.score_forecast_record(WORKED, annual(2011, [*HISTORY, 15.0])).summary()
    assert "not yet realised: 2017, 2018" in text
    assert text.splitlines()[0] == "Forecast record of hake_t (data to 2016)"


@settings(max_examples=40, deadline=None)
@given(
    medians=st.lists(st.floats(1.0, 1e4), min_size=1, max_size=6),
    widths=st.tuples(st.floats(0.0, 50.0), st.floats(0.0, 50.0), st.floats(0.0, 50.0)),
    realised=st.lists(st.floats(0.5, 2e4), min_size=6, max_size=6),
)
def test_nested_bands_give_nested_counts_and_errors_add_up(medians, widths, realised):
    # bands widen with the level (50 inside 80 inside 95), so the inside counts can only grow
    w50, w80, w95 = sorted(widths)
    rows = [
        (str(2016 + i), m, {50: (m - w50, m + w50), 80: (m - w80, m + w80), 95: (m - w95, m + w95)})
        for i, m in enumerate(medians)
    ]
    newer = annual(2011, [*HISTORY, *realised])
    record = fc.score_forecast_record(past_forecast(rows), newer)
    assert record.inside[50] <= record.inside[80] <= record.inside[95] <= record.periods_scored
    t = record.to_frame()
    assert t["error"].to_numpy() == pytest.approx(np.asarray(realised[: len(medians)]) - medians)
    # exact realisation of the medians: zero error everywhere
    exact = fc.score_forecast_record(past_forecast(rows), annual(2011, [*HISTORY, *medians]))
    assert (exact.to_frame()["error"] == 0).all() and exact.mase == 0.0


def test_step_frame_splits_the_record_by_steps_ahead():
    later = past_forecast([("2017", 12.0, {80: (11.0, 13.0)}), ("2018", 19.0, {80: (17.0, 21.0)})])
    record = fc.score_forecast_record([WORKED, later], NEWER)
    steps = record.step_frame().set_index("step")
    # step 1: 2016 from WORKED (inside 80) and 2017 from `later` (12 in [11, 13]) -> 2 of 2
    assert steps.loc[1, "scored"] == 2 and steps.loc[1, "inside80"] == 2
    # step 3: only 2018 from WORKED, outside its 80% band
    assert steps.loc[3, "scored"] == 1 and steps.loc[3, "inside80"] == 0
    # step 1 MASE: WORKED 2016 |2| / 1.75 and `later` 2017 |12 - 12| / scale(2011-2016) = 0;
    # mean (1.142857 + 0) / 2 = 0.571429
    assert steps.loc[1, "mase"] == pytest.approx(0.571429, rel=1e-5)
