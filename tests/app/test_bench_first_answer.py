"""The Model Bench's first answer built into its layout from the result cache.

A page router call hands the Bench layout the session's selection; when the whole default
answer is already cached (the server prepares the demo's at start), the layout carries it and
no callback round trip is needed. The reference for each value is what the page's arrival
callbacks return for the same selection; "computed" is counted on the core's public API
(``compare_models``, ``run_hindcast``, ``check_residuals``, ``make_forecast``).

Data: the invented demo (sample_data/, documented in sample_data/README.md) and the Nile's
annual flow at Aswan, 1871-1970 (open data shipped by statsmodels) as an uploaded CSV.
"""

from __future__ import annotations

import importlib

import pandas as pd
import pytest
from dash._utils import to_json

import forecasting_core as fc
from app import create_app
from app.analysis import comparison_key
from app.cache import NotCached, cached_only, get_comparison
from app.state import resolve_selection
from app.warm import prepare_demo

COUNTED = ("compare_models", "run_hindcast", "make_forecast", "check_residuals")
SMALL = {"max_p": 1, "max_q": 1}


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


@pytest.fixture
def demo_app(tmp_path):
    return create_app({"DATA_DIR": str(tmp_path / "demo"), "CACHE_TYPE": "SimpleCache"})


@pytest.fixture
def bench(demo_app):
    """The Model Bench page module (importable once an app has registered the pages)."""
    return importlib.import_module("app.pages.bench")


def _nile_id(app, nile: pd.Series) -> str:
    lines = ["year,nile"] + [f"{p.year},{v:g}" for p, v in nile.items()]
    store = app.server.extensions["haulcast"]["store"]
    return store.save(("\n".join(lines) + "\n").encode(), "nile.csv")


def _table(layout, component_id: str):
    return next(c for c in layout._traverse() if getattr(c, "id", None) == component_id)  # noqa: SLF001


def test_a_new_visitor_gets_the_prepared_demo_answer_in_the_layout_without_computing(demo_app, bench, calls):
    prepare_demo(demo_app.server, limit=1)
    calls.clear()
    with demo_app.server.test_request_context():
        filled = bench.first_answer(None)
        layout = bench.layout(selection=None)
        request = bench._request(bench._selection_request(None))
        searched = bench._searched(request)
        replayed = bench._replayed(request)
    assert calls == []
    # what the arrival callbacks would show, value for value
    for spec, values in ((bench.SEARCH_OUT, searched), (bench.HINDCAST_OUT, replayed)):
        for key, value in zip(spec, values, strict=True):
            if key != ("bench-timing", "children"):  # the time the look-up took
                assert to_json(filled[key]) == to_json(value), key
    assert filled[("bench-candidates", "selected_rows")] == [0]
    assert filled[("bench-timing", "children")].startswith("Answered in")
    assert filled[("bench-prefill", "data")] == {"selection": None}
    # and the layout carries them: rows with real numbers, the picked row, the skill rows
    rows = _table(layout, "bench-candidates").data
    assert rows and all(isinstance(r["aicc"], float) for r in rows if r["status"] == "ok")
    assert _table(layout, "bench-candidates").selected_rows == [0]
    assert _table(layout, "bench-skill").data
    assert _table(layout, "bench-prefill").data == {"selection": None}


def test_a_cold_cache_leaves_the_answer_to_the_callbacks_and_computes_nothing(demo_app, bench, calls):
    with demo_app.server.test_request_context():
        assert bench.first_answer(None) == {}
        layout = bench.layout(selection=None)
    assert calls == []
    assert _table(layout, "bench-candidates").data == []
    assert _table(layout, "bench-prefill").data is None


def test_cached_only_looks_up_and_never_computes(demo_app, bench, calls):
    with demo_app.server.test_request_context():
        key = comparison_key(resolve_selection(None))
        with cached_only(), pytest.raises(NotCached):
            get_comparison(*key)
        assert calls == []
        computed = get_comparison(*key)
        with cached_only():
            looked_up = get_comparison(*key)
    assert calls == ["compare_models", "run_hindcast"]
    assert looked_up.best == computed.best


@pytest.mark.parametrize(
    ("changes", "max_p"),
    [
        # a model this comparison lacks: the best is shown picked (pick then writes the fix)
        ({"model": "ARIMA(9,9,9)"}, 5),
        # settings the bench refuses: answered with the defaults, as the callbacks do
        ({"bench": {"max_p": 9}}, 5),
        # settings whose comparison was never computed: left to the callbacks
        ({"bench": {"max_p": 2}}, None),
    ],
)
def test_the_layout_answers_a_changed_selection_as_the_callbacks_would(demo_app, bench, changes, max_p):
    prepare_demo(demo_app.server, limit=1)
    with demo_app.server.test_request_context():
        sel = {k: v for k, v in resolve_selection(None).items() if k != "is_demo"}
        filled = bench.first_answer({**sel, **changes})
    if max_p is None:
        assert filled == {}
        return
    assert filled[("bench-max-p", "value")] == max_p
    assert filled[("bench-candidates", "selected_rows")] == [0]
    # the selection it was built for, as the session holds it (the page compares the two)
    assert filled[("bench-prefill", "data")] == {"selection": {**sel, **changes}}


def test_another_sessions_upload_never_reaches_the_layout(demo_app, bench, nile):
    prepare_demo(demo_app.server, limit=1)
    nile_id = _nile_id(demo_app, nile)
    mine = {"dataset_id": nile_id, "series": "nile", "bench": SMALL, "uploads": [nile_id]}
    with demo_app.server.test_request_context():
        # the uploader's own session: computed once by the callbacks, then in the layout
        bench._replayed(bench._request(bench._selection_request(mine)))
        own = bench.first_answer(mine)
        # another session naming the same dataset id without having uploaded it gets the demo
        other = bench.first_answer({"dataset_id": nile_id, "series": "nile", "uploads": []})
        demo = resolve_selection(None)
    assert "nile" in to_json(own[("bench-status", "children")])
    assert demo["series"] in to_json(other[("bench-status", "children")])
    shown = {k: v for k, v in other.items() if k != ("bench-prefill", "data")}
    assert nile_id not in to_json(list(shown.values()))
    assert all("nile" not in to_json(v) for v in shown.values())
