"""Model Bench settings through its callbacks, as Dash calls them: settings that depend on the
series' frequency go back to their defaults when a series of another frequency is chosen (with
a note), and the number of differences d (and seasonal D) can be fixed, reaching the core, the
status line, the saved analysis' settings and the report.

Data: the Nile's annual flow at Aswan, 1871-1970, and the monthly El Nino sea surface
temperatures, 1950-2010 (both open data shipped by statsmodels).
"""

from __future__ import annotations

import json

import pandas as pd
import pytest
import statsmodels.api as sm

import forecasting_core as fc
from app import create_app, saved
from app.analysis import (
    DEFAULT_BENCH,
    bench_for_frequency,
    bench_settings,
    compare_kwargs,
    comparison_for,
    comparison_key,
)
from app.export_settings import settings_rows
from app.state import resolve_selection, update_selection

#: A small grid keeps each comparison well under a second on the 2-core test machine.
SMALL = {"max_p": 1, "max_q": 1}
MONTHS = ("JAN", "FEB", "MAR", "APR", "MAY", "JUN", "JUL", "AUG", "SEP", "OCT", "NOV", "DEC")


@pytest.fixture(scope="module")
def app(tmp_path_factory):
    return create_app(
        {
            "DATA_DIR": str(tmp_path_factory.mktemp("data")),
            "CACHE_TYPE": "SimpleCache",
            "LOAD_SAMPLES": False,
        }
    )


@pytest.fixture(scope="module", autouse=True)
def bench(app):
    """The Model Bench page module (its pages register once an app exists)."""
    from app.pages import bench as page

    globals()["bench"] = page
    return page


@pytest.fixture(scope="module")
def store(app):
    return app.server.extensions["haulcast"]["store"]


@pytest.fixture(scope="module")
def nile_id(store, nile: pd.Series) -> str:
    lines = ["year,nile"] + [f"{p.year},{v:g}" for p, v in nile.items()]
    return store.save(("\n".join(lines) + "\n").encode(), "nile.csv")


@pytest.fixture(scope="module")
def elnino_id(store) -> str:
    data = sm.datasets.elnino.load_pandas().data
    lines = ["month,sst"] + [
        f"{int(row['YEAR'])}-{i + 1:02d},{row[m]:g}"
        for _, row in data.iterrows()
        for i, m in enumerate(MONTHS)
    ]
    return store.save(("\n".join(lines) + "\n").encode(), "elnino.csv")


def _controls(**changes):
    """The settings panel's values as the "Run" callback reads them (the page's defaults)."""
    values = {
        "search": "auto",
        "max_p": 5,
        "max_q": 5,
        "seasonal": ["on"],
        "transform": "auto",
        "constant": "auto",
        "origins": None,
        "horizon": 5,
        "d": "auto",
        "D": "auto",
    }
    values.update(changes)
    return list(values.values())


def _run(data, **changes):
    request, new, alert = bench.run(1, *_controls(**changes), data)
    assert alert is None
    return request, new


def _restored(data) -> dict:
    values = bench.restore(1, data)
    return dict(zip(bench.RESTORE_OUT, values, strict=True))


def _text(component) -> str:
    return json.dumps(component, default=lambda c: c.to_plotly_json())


# -- settings that depend on the frequency ----------------------------------------------------


def test_a_run_on_annual_data_leaves_a_monthly_series_its_seasonal_terms_and_own_horizon(
    app, nile_id, elnino_id
):
    # on annual data the seasonal box is greyed out and unticked; Run with 6 years ahead
    start = {"dataset_id": nile_id, "series": "nile", "uploads": [nile_id, elnino_id]}
    with app.server.test_request_context():
        _request, annual = _run(start, seasonal=[], horizon=6)
        assert bench_settings(annual["bench"])["horizon"] == 6
        # then a monthly series is chosen on Intake (it changes only the dataset and series)
        monthly = update_selection(annual, dataset_id=elnino_id, series="sst")
        shown = _restored(monthly)
        key = comparison_key(resolve_selection(monthly))
    assert shown[("bench-seasonal", "value")] == ["on"]
    assert shown[("bench-horizon", "value")] == DEFAULT_BENCH["horizon"]
    note = shown[("bench-settings-note", "children")]
    assert "Horizon reset to 5 months (the default)" in note
    assert "6 years set for annual data" in note
    # the comparison the Bench and the Board ask for searches seasonal terms, 5 months ahead
    settings = json.loads(key[2])
    assert settings["seasonal"] is None and settings["horizon"] == 5


def test_a_monthly_run_with_seasonal_terms_off_does_not_carry_over_to_another_frequency(
    app, nile_id, elnino_id
):
    start = {"dataset_id": elnino_id, "series": "sst", "uploads": [nile_id, elnino_id]}
    with app.server.test_request_context():
        _request, monthly = _run(start, seasonal=[], D=0, horizon=12, origins=8)
        assert bench_settings(monthly["bench"])["seasonal"] is False
        annual = update_selection(monthly, dataset_id=nile_id, series="nile")
        shown = _restored(annual)
        back = update_selection(resolve_selection(annual), dataset_id=elnino_id, series="sst")
        again = _restored(back)
    assert shown[("bench-horizon", "value")] == 5
    assert shown[("bench-origins", "value")] is None
    assert "12 months set for monthly data" in shown[("bench-settings-note", "children")]
    # back on the monthly series after the annual one: the defaults, seasonal terms on
    assert again[("bench-seasonal", "value")] == ["on"]
    assert again[("bench-D", "value")] == "auto"
    assert again[("bench-D", "disabled")] is False


def test_settings_for_a_series_of_the_same_frequency_are_kept(app, nile_id, store, nile):
    lines = ["year,nile_copy"] + [f"{p.year},{v:g}" for p, v in nile.items()]
    other = store.save(("\n".join(lines) + "\n").encode(), "nile_copy.csv")
    start = {"dataset_id": nile_id, "series": "nile", "uploads": [nile_id, other]}
    with app.server.test_request_context():
        _request, sel = _run(start, horizon=9, origins=12)
        shown = _restored(update_selection(sel, dataset_id=other, series="nile_copy"))
    assert shown[("bench-horizon", "value")] == 9
    assert shown[("bench-origins", "value")] == 12
    assert shown[("bench-settings-note", "children")] is None


@pytest.mark.parametrize(
    ("bench", "frequency", "changed", "note"),
    [
        (None, "monthly", None, None),  # a new session: the defaults anyway
        ({**DEFAULT_BENCH, "horizon": 7}, "monthly", None, None),  # frequency unknown: kept
        ({**DEFAULT_BENCH, "horizon": 7, "frequency": "monthly"}, "monthly", None, None),
        (
            {**DEFAULT_BENCH, "horizon": 1, "seasonal": False, "frequency": "annual"},
            "quarterly",
            {"horizon": 5, "seasonal": True},
            "Horizon reset to 5 quarters (the default): the 1 year set for annual data",
        ),
        (
            {**DEFAULT_BENCH, "D": 1, "d": 1, "max_p": 2, "frequency": "monthly"},
            "annual",
            {"D": None},
            "Horizon reset to 5 years (the default): the 5 months set for monthly data",
        ),
    ],
)
def test_bench_for_frequency_resets_only_what_depends_on_the_frequency(
    bench, frequency, changed, note
):
    out, said = bench_for_frequency(bench, frequency)
    if changed is None:
        assert out == bench and said is None
        return
    assert said.startswith(note)
    want = {**bench, **changed, "frequency": frequency}
    assert out == want
    # the settings not tied to the frequency stay (here d = 1 and p <= 2)
    assert bench_settings(out)["d"] == bench.get("d")


def test_a_saved_analysis_opened_keeps_its_own_settings(app, elnino_id, nile_id):
    # an analysis saved with seasonal terms off on monthly data, opened after an annual Run
    analysis = {
        "id": "a" * 32,
        "dataset_id": elnino_id,
        "series": "sst",
        "settings": {"transform": "none", "bench": {**DEFAULT_BENCH, "seasonal": False, "horizon": 3}},
    }
    with app.server.test_request_context():
        _request, annual = _run({"dataset_id": nile_id, "series": "nile", "uploads": [nile_id]}, horizon=6)
        sel = saved.selection_from_analysis(analysis, annual)
        shown = _restored(sel)
    assert shown[("bench-seasonal", "value")] == []
    assert shown[("bench-horizon", "value")] == 3
    assert shown[("bench-settings-note", "children")] is None


# -- the number of differences ----------------------------------------------------------------


@pytest.mark.parametrize(
    ("raw", "message"),
    [
        ({"d": 3}, r"Differences d must be an integer from 0 to 2\. Got 3 instead\."),
        ({"d": "one"}, r"Differences d must be an integer from 0 to 2\. Got 'one' instead\."),
        ({"D": 2}, r"Seasonal differences D must be an integer from 0 to 1\. Got 2 instead\."),
    ],
)
def test_a_bad_number_of_differences_is_named_as_the_page_labels_it(raw, message):
    with pytest.raises(fc.InputError, match=message):
        bench_settings(raw)


def test_automatic_differences_leave_the_comparison_key_as_before():
    # "Automatic" passes no d or D, so results cached (or prepared at start) still match
    assert "d" not in compare_kwargs(DEFAULT_BENCH, "auto")
    assert "D" not in compare_kwargs(DEFAULT_BENCH, "auto")
    assert bench_settings({"d": "auto", "D": "auto"}) == DEFAULT_BENCH


@pytest.mark.parametrize("d", [0, 1])
def test_a_fixed_d_reaches_the_core_the_status_line_and_the_report(app, nile_id, nile, d):
    start = {"dataset_id": nile_id, "series": "nile", "uploads": [nile_id]}
    with app.server.test_request_context():
        request, sel = _run(start, max_p=1, max_q=1, d=d)
        comparison = comparison_for(request)
        status = bench._searched(request)[0]  # what render shows after "Run"
        shown = _restored(sel)
        stored = saved.settings_from_selection(resolve_selection(sel), None)
    # the same comparison as compare_models asked for that d directly
    plain = fc.compare_models(nile, horizon=5, **SMALL, d=d)
    assert comparison.best.label == plain.best.label
    assert comparison.settings["d"] == d
    assert {c.order[1] for c in comparison.candidates} == {d}
    assert f"d = {d} (set here)" in _text(status)
    assert shown[("bench-d", "value")] == d
    # kept with the saved analysis' settings, and shown in the report's settings table
    assert stored["bench"]["d"] == d
    assert settings_rows(comparison.settings, comparison)["Differences"] == f"d = {d}"


def test_automatic_d_says_it_came_from_the_stationarity_tests(app, nile_id):
    start = {"dataset_id": nile_id, "series": "nile", "uploads": [nile_id]}
    with app.server.test_request_context():
        request, sel = _run(start, max_p=1, max_q=1)
        status = bench._searched(request)[0]  # what render shows after "Run"
        comparison = comparison_for(request)
    used = comparison.settings["d"]
    assert f"d = {used} (from the stationarity tests)" in _text(status)


def test_seasonal_differences_reach_the_core_only_with_seasonal_terms(app, elnino_id):
    sel = {"dataset_id": elnino_id, "series": "sst", "transform": "none"}
    with app.server.test_request_context():
        on = json.loads(comparison_key({**sel, "bench": {**SMALL, "D": 1, "d": 0}})[2])
        off = json.loads(comparison_key({**sel, "bench": {**SMALL, "D": 1, "seasonal": False}})[2])
    assert (on["d"], on["D"]) == (0, 1)
    assert "D" not in off  # the core refuses D = 1 without seasonal terms


def test_seasonal_differences_are_not_offered_for_annual_data(app, nile_id):
    start = {"dataset_id": nile_id, "series": "nile", "uploads": [nile_id]}
    with app.server.test_request_context():
        request, sel = _run(start, D=1)
        shown = _restored(sel)
        key = json.loads(comparison_key({**start, "bench": {"D": 1}})[2])
    assert request["bench"]["D"] is None
    assert shown[("bench-D", "disabled")] is True
    assert "D" not in key


def test_run_with_unchanged_settings_keeps_the_model_picked_in_a_saved_analysis(app, nile_id):
    # the frequency written beside the settings is no change of settings
    analysis = {
        "id": "b" * 32,
        "dataset_id": nile_id,
        "series": "nile",
        "settings": {"transform": "auto", "bench": dict(DEFAULT_BENCH), "model": "ARIMA(0,1,1)"},
    }
    with app.server.test_request_context():
        sel = saved.selection_from_analysis(analysis, None)
        _request, new = _run(sel)
        _request, changed = _run(sel, horizon=4)
    assert new["bench"]["frequency"] == "annual"
    assert new["model"] == "ARIMA(0,1,1)" and new["analysis"] == "b" * 32
    assert changed["model"] is None


@pytest.mark.parametrize(("d", "said"), [(0, "d = 0 (set on the Model Bench)"), (None, "(from the stationarity tests)")])
def test_the_exports_say_where_d_came_from(app, nile_id, d, said):
    from app import board_exports

    start = {"dataset_id": nile_id, "series": "nile", "uploads": [nile_id]}
    with app.server.test_request_context():
        _request, sel = _run(start, max_p=1, max_q=1, d="auto" if d is None else d)
        csv_file, alert = board_exports.download_csv(1, None, sel, None)
        assert alert is None
        html_file, alert = board_exports.download_html(1, None, sel, None)
        assert alert is None
    lines = [line for line in csv_file["content"].splitlines() if line.startswith("# differences:")]
    assert len(lines) == 1 and said in lines[0]
    assert "Differences" in html_file["content"] and said in html_file["content"]
