"""Saved analyses between the session and the store: the pure helpers in app/saved.py and the
field checks of the board's panel (app/saved_views.py).

Forecast data: the Nile river flow series that statsmodels ships (statsmodels.datasets.nile,
annual volumes 1871-1970, 10^8 m^3); the analysis records are written here by hand.
"""

from __future__ import annotations

import json
from types import SimpleNamespace

import pytest

import forecasting_core as fc
from app import saved
from app.analysis import DEFAULT_BENCH
from app.saved_views import optional, required
from app.state import update_selection

DATASET = "ab" * 32


def _analysis(**kw):
    base = {
        "id": "a" * 32,
        "version": 1,
        "parent_id": None,
        "dataset_id": DATASET,
        "series": "hake_t",
        "title": "Hake outlook",
        "season": "2026",
        "settings": {
            "transform": "log",
            "bench": {**DEFAULT_BENCH, "horizon": 3},
            "model": "ARIMA(1,1,0)",
            "reference": 900.0,
            "horizon": 3,
            "levels": [50, 80, 95],
        },
        "model": "ARIMA(1,1,0)",
        "forecast": {},
        "status": "published",
        "author": "Ana",
        "created_at": "2026-12-01T20:00:00+00:00",
        "published_at": None,
        "signoffs": (),
    }
    base.update(kw)
    return SimpleNamespace(**base)


# -- restoring a saved analysis into the session's selection ---------------------------------


def test_opening_an_analysis_restores_its_settings_and_makes_its_dataset_visible():
    session = update_selection(None, uploads=["cd" * 32], dataset_id="cd" * 32, series="cod_t")
    sel = saved.selection_from_analysis(_analysis(), session)
    assert sel["dataset_id"] == DATASET and sel["series"] == "hake_t"
    assert sel["transform"] == "log"
    assert sel["bench"]["horizon"] == 3
    assert sel["model"] == "ARIMA(1,1,0)" and sel["reference"] == 900.0
    assert sel["analysis"] == "a" * 32
    assert sel["uploads"] == ["cd" * 32, DATASET]  # the session's own upload stays


def test_changing_the_series_leaves_the_analysis_but_a_setting_change_keeps_it():
    sel = saved.selection_from_analysis(_analysis())
    assert update_selection(sel, bench={**DEFAULT_BENCH, "horizon": 4})["analysis"] == "a" * 32
    assert update_selection(sel, series="cod_t")["analysis"] is None
    assert update_selection(sel, dataset_id="cd" * 32)["analysis"] is None


def test_overlay_without_an_opened_analysis_is_the_session_selection():
    session = update_selection(None, dataset_id=DATASET, series="hake_t", reference=5.0)
    assert saved.overlay(session, None) == session
    opened = {"selection": saved.selection_from_analysis(_analysis())}
    over = saved.overlay(session, opened)
    assert over["reference"] == 900.0 and over["analysis"] == "a" * 32


@pytest.mark.parametrize(
    ("change", "same"),
    [
        ({}, True),
        ({"reference": 901.0}, False),
        ({"reference": None}, False),
        ({"transform": "none"}, False),
        ({"model": "ARIMA(0,1,1)"}, False),
        ({"bench": {**DEFAULT_BENCH, "horizon": 3, "max_p": 2}}, False),
    ],
)
def test_same_settings_notices_every_change(change, same):
    stored = _analysis().settings
    current = {**stored, **change}
    assert saved.same_settings(stored, current) is same


def test_settings_from_a_selection_name_the_model_and_fill_the_bench_defaults():
    sel = update_selection(None, dataset_id=DATASET, series="hake_t", transform="log")
    settings = saved.settings_from_selection(sel, 12.5, "ARIMA(0,1,1)")
    assert settings["bench"] == DEFAULT_BENCH
    assert settings["horizon"] == DEFAULT_BENCH["horizon"]
    assert settings == json.loads(json.dumps(settings))  # JSON-safe as stored


# -- the same numbers on reopening ------------------------------------------------------------


@pytest.fixture(scope="module")
def nile_forecast(comparison) -> fc.Forecast:
    return fc.make_forecast(comparison.best, horizon=5, levels=(50, 80, 95), reference=800.0)


def test_a_forecast_recomputed_from_the_same_data_and_settings_matches_the_saved_json(
    nile, nile_forecast
):
    # saved as the store keeps it: through JSON text
    stored = json.loads(json.dumps(nile_forecast.to_dict()))
    again = fc.compare_models(nile, horizon=5)
    recomputed = fc.make_forecast(again.best, horizon=5, levels=(50, 80, 95), reference=800.0)
    # exactly: not one digit differs
    assert saved.forecast_differences(stored, recomputed.to_dict(), rel=0.0) == []
    assert saved.forecast_matches(stored, recomputed.to_dict())


def test_a_changed_band_or_reference_is_named_with_its_period(nile_forecast, comparison):
    stored = nile_forecast.to_dict()
    changed = json.loads(json.dumps(stored))
    changed["forecast"][1]["intervals"]["80"][0] += 1.0
    diffs = saved.forecast_differences(stored, changed)
    assert len(diffs) == 1 and diffs[0].startswith(f"{stored['forecast'][1]['time']} 80% band")
    other = fc.make_forecast(comparison.best, horizon=5, levels=(50, 80, 95), reference=700.0)
    diffs = saved.forecast_differences(stored, other.to_dict())
    assert diffs[0] == "reference was 800.0, now 700.0"
    assert any("prob_below_reference" in d for d in diffs)


def test_the_season_defaults_to_the_first_forecast_period(nile_forecast):
    # the Nile record ends in 1970, so the first forecast period is 1971
    assert saved.season_label(nile_forecast.to_dict()) == "1971"
    assert saved.season_label({"forecast": []}) == ""


# -- versions, order and search on the home page --------------------------------------------


def _chain():
    v1 = _analysis(id="1" * 32, version=1, created_at="2026-01-01T00:00:00+00:00")
    v2 = _analysis(
        id="2" * 32,
        version=2,
        parent_id=v1.id,
        status="draft",
        created_at="2026-01-02T00:00:00+00:00",
    )
    v3 = _analysis(
        id="3" * 32,
        version=3,
        parent_id=v2.id,
        status="draft",
        created_at="2026-01-03T00:00:00+00:00",
    )
    return v1, v2, v3


def test_the_newest_version_of_a_chain_is_found_from_any_version():
    v1, v2, v3 = _chain()
    assert saved.newest_version(v1, [v1, v2, v3]) is v3
    assert saved.newest_version(v3, [v1, v2, v3]) is None
    assert saved.newest_in_chain(v1, [v3, v2, v1]) is v3
    assert saved.newest_in_chain(v3, [v3, v2, v1]) is None


def test_the_latest_version_and_the_latest_published_one_are_listed_by_default():
    v1, v2, v3 = _chain()
    other = _analysis(id="9" * 32, series="cod_t")
    # v1 is the published one: a draft revision does not hide it
    assert saved.latest_versions([v3, other, v2, v1]) == [v3, other, v1]
    assert saved.latest_versions([v3, v2]) == [v3]
    assert saved.superseded_ids([v1, v2, v3]) == {v1.id, v2.id}
    assert saved.newer_version_numbers([v3, other, v2, v1]) == {v1.id: 3, v2.id: 3}


def test_groups_by_stock_then_season_newest_first():
    rows = [
        _analysis(id="1" * 32, series="plaice_t", season="2025"),
        _analysis(id="2" * 32, series="Hake_t", season="2025"),
        _analysis(id="3" * 32, series="plaice_t", season="2026"),
    ]
    groups = saved.group_analyses(rows, "stock")
    assert [(h, [a.id[0] for a in g]) for h, g in groups] == [
        ("Hake_t", ["2"]),
        ("plaice_t", ["3", "1"]),
    ]
    by_season = saved.group_analyses(rows, "season")
    assert [h for h, _ in by_season] == ["2026", "2025"]
    assert [a.id[0] for a in saved.group_analyses(rows, "newest")[0][1]] == ["1", "2", "3"]


@pytest.mark.parametrize(
    ("query", "found"),
    [
        ("", True),
        ("hake", True),
        ("HAKE 2026", True),
        ("ana", True),
        ("ben manager", True),
        ("cod", False),
    ],
)
def test_search_needs_every_word_somewhere_in_the_analysis(query, found):
    a = _analysis(signoffs=(SimpleNamespace(name="Ben", role="Manager"),))
    assert saved.matches_query(a, query) is found


def test_rows_open_on_the_forecast_board_by_id():
    assert saved.open_href(_analysis()) == "/board?analysis=" + "a" * 32
    assert saved.looks_like_id("a" * 32) and not saved.looks_like_id("../" + "a" * 29)


def test_times_read_as_utc_minutes():
    assert saved.fmt_time("2026-12-01T21:04:09+00:00") == "2026-12-01 21:04 UTC"
    assert saved.fmt_time(None) == ""


# -- the panel's fields --------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("value", "message"),
    [
        (None, "Your name is needed"),
        ("   ", "Your name is needed"),
        ("x" * 121, "at most 120 characters. Got 121"),
    ],
)
def test_a_blank_or_long_name_gets_a_plain_message(value, message):
    with pytest.raises(fc.InputError, match=message):
        required(value, "Your name")


def test_fields_are_trimmed_and_inner_space_collapsed():
    assert required("  Ana   Ortiz ", "Your name") == "Ana Ortiz"
    assert optional(None, "Note") == ""
    with pytest.raises(fc.InputError, match="Note must be at most 5 characters"):
        optional("abcdef", "Note", 5)
