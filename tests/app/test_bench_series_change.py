"""Model Bench settings when the chosen series changes, through the callbacks as Dash calls
them: whatever writes the settings (the Bench's "Run", a saved analysis opened by its link)
says which series and frequency they were made for, so a later upload of another frequency
resets the horizon (with a note), and a d or D set by hand goes back to Automatic on another
series, while a saved analysis opened keeps its own.

Data: the Nile's annual flow at Aswan, 1871-1970, and the monthly El Nino sea surface
temperatures, 1950-2010 (both open data shipped by statsmodels).
"""

from __future__ import annotations

import json

import pandas as pd
import pytest
import statsmodels.api as sm

from app import create_app, saved
from app.analysis import (
    DEFAULT_BENCH,
    SERIES_KEY,
    bench_for_series,
    bench_settings,
    board_state,
    comparison_key,
)
from app.state import resolve_selection, update_selection

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


def _annual_csv(nile: pd.Series, name: str) -> bytes:
    lines = [f"year,{name}"] + [f"{p.year},{v:g}" for p, v in nile.items()]
    return ("\n".join(lines) + "\n").encode()


@pytest.fixture(scope="module")
def nile_id(store, nile: pd.Series) -> str:
    return store.save(_annual_csv(nile, "nile"), "nile.csv")


@pytest.fixture(scope="module")
def copy_id(store, nile: pd.Series) -> str:
    return store.save(_annual_csv(nile, "nile_copy"), "nile_copy.csv")


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
        "max_p": 1,
        "max_q": 1,
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
    _request, new, alert = bench.run(1, *_controls(**changes), data)
    assert alert is None
    return new


def _restored(data) -> dict:
    return dict(zip(bench.RESTORE_OUT, bench.restore(1, data), strict=True))


def _monthly_analysis(elnino_id: str, **bench_changes) -> dict:
    # as the store keeps it: the settings without any frequency written beside them
    return {
        "id": "c" * 32,
        "dataset_id": elnino_id,
        "series": "sst",
        "settings": {"transform": "auto", "bench": {**DEFAULT_BENCH, "horizon": 12, **bench_changes}},
    }


# -- a saved analysis opened by its link, then a file of another frequency ------------------


def test_a_saved_monthly_analysis_then_an_annual_upload_resets_the_horizon_with_a_note(
    app, elnino_id, nile_id
):
    with app.server.test_request_context():
        # the link opens the saved monthly analysis (12 months ahead) ...
        opened = saved.selection_from_analysis(_monthly_analysis(elnino_id), None)
        assert _restored(opened)[("bench-horizon", "value")] == 12
        # ... then Intake takes an annual file (it changes only the dataset and series)
        uploads = [*opened["uploads"], nile_id]
        annual = update_selection(opened, dataset_id=nile_id, series="nile", uploads=uploads)
        shown = _restored(annual)
        key = comparison_key(resolve_selection(annual))
    assert shown[("bench-horizon", "value")] == DEFAULT_BENCH["horizon"]
    note = shown[("bench-settings-note", "children")]
    assert "Horizon reset to 5 years (the default)" in note
    assert "12 months set for monthly data" in note
    # the Board asks the same question: 5 years ahead, not 12
    assert json.loads(key[2])["horizon"] == 5


def test_the_board_after_a_saved_monthly_analysis_and_an_annual_upload_forecasts_5_years(
    app, elnino_id, nile_id
):
    with app.server.test_request_context():
        opened = saved.selection_from_analysis(_monthly_analysis(elnino_id), None)
        annual = update_selection(
            opened, dataset_id=nile_id, series="nile", uploads=[*opened["uploads"], nile_id]
        )
        state = board_state(annual, None)
    assert len(state["forecast"].to_frame()) == 5


def test_a_saved_analysis_writes_the_series_and_frequency_beside_its_settings(app, elnino_id):
    with app.server.test_request_context():
        opened = saved.selection_from_analysis(_monthly_analysis(elnino_id), None)
    assert opened["bench"]["frequency"] == "monthly"
    assert opened["bench"][SERIES_KEY] == [elnino_id, "sst"]
    # they are no settings: the saved settings and the comparison do not carry them
    assert "frequency" not in bench_settings(opened["bench"])


@pytest.mark.parametrize(
    ("made_for", "reset"),
    [
        ("elnino", True),  # a monthly series named: its frequency is looked up, it differs
        ("copy", False),  # an annual series named: same frequency, horizon kept
        (None, False),  # nothing named (made before the series was written): kept as it was
    ],
)
def test_settings_without_a_frequency_take_the_one_of_the_series_they_name(
    app, store, elnino_id, copy_id, nile_id, made_for, reset
):
    ids = {"elnino": [elnino_id, "sst"], "copy": [copy_id, "nile_copy"], None: None}
    raw = {**DEFAULT_BENCH, "horizon": 12}
    if ids[made_for] is not None:
        raw[SERIES_KEY] = ids[made_for]
    out, note = bench_for_series(raw, nile_id, "nile", "annual", store)
    assert out["horizon"] == (5 if reset else 12)
    assert ("Horizon reset" in (note or "")) is reset
    assert out["frequency"] == "annual" and out[SERIES_KEY] == [nile_id, "nile"]


# -- a number of differences set by hand belongs to its series -------------------------------


@pytest.mark.parametrize("other", ["copy", "elnino"])
def test_a_hand_set_d_goes_back_to_automatic_on_another_series(
    app, nile_id, copy_id, elnino_id, other
):
    target = {"copy": (copy_id, "nile_copy"), "elnino": (elnino_id, "sst")}[other]
    start = {"dataset_id": nile_id, "series": "nile", "uploads": [nile_id, copy_id, elnino_id]}
    with app.server.test_request_context():
        ran = _run(start, d=2, horizon=7)
        assert _restored(ran)[("bench-d", "value")] == 2
        moved = update_selection(ran, dataset_id=target[0], series=target[1])
        shown = _restored(moved)
        key = comparison_key(resolve_selection(moved))
    assert shown[("bench-d", "value")] == "auto"
    note = shown[("bench-settings-note", "children")]
    assert f"d was set by hand for nile; back to Automatic for {target[1]}." in note
    assert "d" not in json.loads(key[2])
    # another annual series keeps the horizon; the monthly one gets its default
    assert shown[("bench-horizon", "value")] == (7 if other == "copy" else 5)


def test_hand_set_d_and_big_d_both_go_back_on_another_monthly_series(app, store, elnino_id):
    data = sm.datasets.elnino.load_pandas().data
    lines = ["month,sst_copy"] + [
        f"{int(row['YEAR'])}-{i + 1:02d},{row[m]:g}"
        for _, row in data.iterrows()
        for i, m in enumerate(MONTHS)
    ]
    other = store.save(("\n".join(lines) + "\n").encode(), "elnino_copy.csv")
    raw = {**DEFAULT_BENCH, "d": 1, "D": 0, "frequency": "monthly", SERIES_KEY: [elnino_id, "sst"]}
    out, note = bench_for_series(raw, other, "sst_copy", "monthly", store)
    assert out["d"] is None and out["D"] is None
    assert note == "d and D were set by hand for sst; back to Automatic for sst_copy."


def test_a_hand_set_d_stays_on_its_own_series(app, nile_id):
    start = {"dataset_id": nile_id, "series": "nile", "uploads": [nile_id]}
    with app.server.test_request_context():
        ran = _run(start, d=1)
        shown = _restored(resolve_selection(ran))
    assert shown[("bench-d", "value")] == 1
    assert shown[("bench-settings-note", "children")] is None


def test_a_saved_analysis_opened_after_a_hand_set_d_keeps_its_own_d(app, nile_id, elnino_id):
    with app.server.test_request_context():
        ran = _run({"dataset_id": nile_id, "series": "nile", "uploads": [nile_id]}, d=2)
        opened = saved.selection_from_analysis(_monthly_analysis(elnino_id, d=1, D=0), ran)
        shown = _restored(opened)
    assert shown[("bench-d", "value")] == 1
    assert shown[("bench-D", "value")] == 0
    assert shown[("bench-horizon", "value")] == 12
    assert shown[("bench-settings-note", "children")] is None
