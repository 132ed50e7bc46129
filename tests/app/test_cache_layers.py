"""The app's result cache in layers: each setting recomputes only the layer that depends on it,
and the joined result equals a plain ``compare_models`` call.

The series is the Nile's annual flow at Aswan, 1871-1970 (open data shipped by statsmodels),
kept in the app's store as an uploaded CSV. The reference for every result is the core's own
public API called directly (``compare_models``, ``make_forecast``, ``check_residuals``).
"""

from __future__ import annotations

import threading

import pandas as pd
import pytest

import forecasting_core as fc
from app import create_app
from app.cache import (
    HINDCAST_SETTINGS,
    get_comparison,
    get_forecast,
    get_residuals,
    settings_json,
    split_settings,
)

#: A small grid keeps each comparison well under a second on the 2-core test machine.
SMALL = {"max_p": 1, "max_q": 1}
COUNTED = ("compare_models", "run_hindcast", "make_forecast", "check_residuals")


@pytest.fixture
def app(tmp_path):
    return create_app(
        {"DATA_DIR": str(tmp_path / "data"), "CACHE_TYPE": "SimpleCache", "LOAD_SAMPLES": False}
    )


@pytest.fixture
def nile_id(app, nile: pd.Series) -> str:
    lines = ["year,nile"] + [f"{p.year},{v:g}" for p, v in nile.items()]
    store = app.server.extensions["haulcast"]["store"]
    return store.save(("\n".join(lines) + "\n").encode(), "nile.csv")


@pytest.fixture
def calls(monkeypatch) -> list[str]:
    """Names of the core functions called, in order (each still does its real work)."""
    seen: list[str] = []
    for name in COUNTED:
        real = getattr(fc, name)

        def counting(*args, _real=real, _name=name, **kwargs):
            seen.append(_name)
            return _real(*args, **kwargs)

        monkeypatch.setattr(fc, name, counting)
    return seen


def _plain(app, nile_id: str, settings: dict) -> fc.Comparison:
    y = app.server.extensions["haulcast"]["store"].load_table(nile_id).series["nile"]
    return fc.compare_models(y, **settings)


def _same_comparison(got: fc.Comparison, want: fc.Comparison) -> None:
    a, b = got.to_dict(), want.to_dict()
    # the time of computation is the search's, not this call's
    a["provenance"].pop("computed_utc")
    b["provenance"].pop("computed_utc")
    assert a == b
    # every candidate, rejected ones too (whose NaN scores never compare equal as dataclasses)
    assert [(c.to_dict(), dict(c.params)) for c in got.candidates] == [
        (c.to_dict(), dict(c.params)) for c in want.candidates
    ]
    assert got.benchmarks == want.benchmarks
    assert got.best == want.best
    if want.hindcast is None:
        assert got.hindcast is None
    else:
        assert got.hindcast.scores == want.hindcast.scores
        pd.testing.assert_frame_equal(got.hindcast.errors, want.hindcast.errors)


@pytest.mark.parametrize(
    "settings",
    [
        {"horizon": 5},
        {**SMALL, "horizon": 3, "hindcast_origins": 6},
        {**SMALL, "transform": "log", "constant": True},
        {**SMALL, "hindcast": False},
        # a hindcast the core cannot run (100 origins on 100 values) becomes a warning
        {**SMALL, "hindcast_origins": 100},
    ],
)
def test_the_layered_comparison_equals_a_plain_compare_models(app, nile_id, settings):
    with app.server.test_request_context():
        got = get_comparison(nile_id, "nile", settings_json(settings))
        again = get_comparison(nile_id, "nile", settings_json(settings))
    want = _plain(app, nile_id, settings)
    _same_comparison(got, want)
    _same_comparison(again, got)
    if settings.get("hindcast_origins") == 100:
        assert want.hindcast is None
        assert any(w.startswith("Hindcast not run: origins must be") for w in got.warnings)


@pytest.mark.parametrize(
    ("change", "ran"),
    [
        ({}, []),
        ({"horizon": 3}, ["run_hindcast"]),
        ({"hindcast_origins": 5}, ["run_hindcast"]),
        ({"hindcast": False}, []),
        ({"transform": "log"}, ["compare_models", "run_hindcast"]),
        ({"max_p": 2}, ["compare_models", "run_hindcast"]),
        ({"constant": False}, ["compare_models", "run_hindcast"]),
    ],
)
def test_changing_one_setting_reruns_only_what_depends_on_it(app, nile_id, calls, change, ran):
    base = {**SMALL, "horizon": 5}
    with app.server.test_request_context():
        get_comparison(nile_id, "nile", settings_json(base))
        assert calls == ["compare_models", "run_hindcast"]
        calls.clear()
        got = get_comparison(nile_id, "nile", settings_json({**base, **change}))
    assert calls == ran
    assert got.settings["horizon"] == {**base, **change}["horizon"]


def test_the_reference_level_and_the_horizon_rerun_only_the_forecast(app, nile_id, calls):
    key = settings_json({**SMALL, "horizon": 5})
    with app.server.test_request_context():
        comparison = get_comparison(nile_id, "nile", key)
        label = comparison.best.label
        calls.clear()
        first = get_forecast(nile_id, "nile", key, label, 5, (50, 80, 95), None)
        assert calls == ["make_forecast"]
        with_ref = get_forecast(nile_id, "nile", key, label, 5, (50, 80, 95), 800.0)
        get_forecast(nile_id, "nile", key, label, 5, (50, 80, 95), 800.0)
        # a new hindcast horizon leaves the fitted model, so the forecast, alone
        get_forecast(nile_id, "nile", settings_json({**SMALL, "horizon": 3}), label, 5, (50, 80, 95), 800.0)
        assert calls == ["make_forecast", "make_forecast"]
        get_forecast(nile_id, "nile", key, label, 8, (50, 80, 95), 800.0)
    assert calls == ["make_forecast"] * 3
    want = fc.make_forecast(comparison.best, horizon=5, levels=(50, 80, 95), reference=800.0)
    pd.testing.assert_frame_equal(with_ref.table, want.table)
    assert first.reference is None
    assert with_ref.reference == 800.0


def test_switching_the_picked_model_checks_only_its_residuals(app, nile_id, calls):
    key = settings_json({**SMALL, "horizon": 5})
    with app.server.test_request_context():
        comparison = get_comparison(nile_id, "nile", key)
        best, other = comparison.accepted[0], comparison.accepted[1]
        calls.clear()
        # the best model's checks come with the search
        own = get_residuals(nile_id, "nile", key, best.label)
        assert calls == []
        report = get_residuals(nile_id, "nile", key, other.label)
        get_residuals(nile_id, "nile", settings_json({**SMALL, "horizon": 2}), other.label)
    assert calls == ["check_residuals"]
    assert own.model == comparison.diagnostics.model == best.label
    pd.testing.assert_frame_equal(own.ljung_box, comparison.diagnostics.ljung_box)
    want = fc.check_residuals(other)
    assert report.verdict == want.verdict
    pd.testing.assert_frame_equal(report.ljung_box, want.ljung_box)


def test_two_requests_for_the_same_comparison_compute_it_once(app, nile_id, calls):
    key = settings_json({**SMALL, "horizon": 5})
    results: list[fc.Comparison] = []

    def ask() -> None:
        with app.server.test_request_context():
            results.append(get_comparison(nile_id, "nile", key))

    threads = [threading.Thread(target=ask) for _ in range(3)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=120)
    assert len(results) == 3
    assert calls == ["compare_models", "run_hindcast"]


def test_the_settings_reach_the_core_as_keywords(app, nile_id, monkeypatch):
    seen: list[dict] = []
    real = fc.compare_models

    def recording(y, **kwargs):
        seen.append(kwargs)
        return real(y, **kwargs)

    monkeypatch.setattr(fc, "compare_models", recording)
    with app.server.test_request_context():
        get_comparison(nile_id, "nile", settings_json({**SMALL, "transform": "none", "horizon": 3}))
    # the search never sees the hindcast's settings, so they cannot split its cache entries
    assert seen == [{**SMALL, "transform": "none", "hindcast": False}]


def test_the_settings_split_between_search_and_hindcast():
    search, hind = split_settings({"transform": "log", "max_p": 2, "horizon": 4})
    assert search == {"transform": "log", "max_p": 2}
    assert hind == {"horizon": 4, "hindcast_origins": None, "hindcast": True}
    assert set(hind) == set(HINDCAST_SETTINGS)


@pytest.mark.parametrize(
    ("settings", "message"),
    [
        ({"horizon": 0}, r"horizon must be an integer from 1 to 30\. Got 0 instead\."),
        ({"horizon": "5"}, r"horizon must be an integer from 1 to 30\. Got '5' instead\."),
        ({"horizon": True}, r"horizon must be an integer from 1 to 30\. Got True instead\."),
        ({"hindcast_origins": 0}, r"hindcast_origins must be an integer from 1 to 1000\. Got 0"),
        ({"max_p": 9}, r"max_p must be an integer from 0 to 5\. Got 9 instead\."),
    ],
)
def test_bad_settings_raise_the_cores_message_and_are_not_cached(
    app, nile_id, calls, settings, message
):
    y = app.server.extensions["haulcast"]["store"].load_table(nile_id).series["nile"]
    with pytest.raises(fc.InputError, match=message):
        fc.compare_models(y, **settings)  # the core's own wording, for the record
    for _ in range(2):
        with app.server.test_request_context(), pytest.raises(fc.InputError, match=message):
            get_comparison(nile_id, "nile", settings_json(settings))


@pytest.mark.parametrize(
    ("path", "cache_control"),
    [
        ("/assets/haulcast-mark.svg", "private, max-age=3600"),
        ("/assets/haulcast.css?m=1700000000.0", "private, max-age=31536000"),
    ],
)
def test_assets_may_be_kept_by_the_browser(app, path, cache_control):
    # common practice: fingerprinted files cached long, the rest briefly (RFC 9111 max-age)
    response = app.server.test_client().get(path)
    assert response.status_code == 200
    assert response.headers["Cache-Control"] == cache_control


def test_pages_and_callbacks_get_no_asset_caching(app):
    response = app.server.test_client().get("/bench")
    assert "max-age" not in response.headers.get("Cache-Control", "")


def test_annual_data_has_one_cache_entry_whether_the_seasonal_box_is_ticked(app, nile_id, calls):
    # the core's seasonal=None and seasonal=False both mean "no seasonal terms" for annual data
    from app.analysis import comparison_for, comparison_key

    base = {"dataset_id": nile_id, "series": "nile", "transform": "auto"}
    ticked = {**base, "bench": {"max_p": 1, "max_q": 1, "seasonal": True}}
    unticked = {**base, "bench": {"max_p": 1, "max_q": 1, "seasonal": False}}
    with app.server.test_request_context():
        assert comparison_key(ticked) == comparison_key(unticked)
        comparison_for(ticked)
        comparison_for(unticked)
    assert calls == ["compare_models", "run_hindcast"]


def test_the_demo_prepared_at_start_makes_a_first_visit_a_cache_hit(tmp_path, calls):
    # the server's background start-up work (app.warm) on the demo's default series
    from app.analysis import comparison_for, search_for
    from app.state import resolve_selection
    from app.warm import prepare_demo

    demo_app = create_app({"DATA_DIR": str(tmp_path / "demo"), "CACHE_TYPE": "SimpleCache"})
    done = prepare_demo(demo_app.server, limit=1)
    with demo_app.server.test_request_context():
        first = resolve_selection(None)
        assert done == [first["series"]]
        assert calls.count("compare_models") == 1
        calls.clear()
        comparison_for(first)
        search_for(first)
    assert calls == []
