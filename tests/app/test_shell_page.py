"""A new visitor's Model Bench built into the shell (no page-router round trip).

When the browser fetches the shell (``/_dash-layout``) for /bench and the demo's default
answer is cached, the shell carries the page a new visitor would get (``hc-shell-content``)
and names it (``hc-shell-page``); the page's layout then answers the router's first call for
a new visitor with ``no_update``. The reference for the content is what the Bench's own
layout builds for a session without a selection; "computed" is counted on the core's public
API, as in test_bench_first_answer.py.

Data: the invented demo (sample_data/, documented in sample_data/README.md) and the Nile's
annual flow at Aswan, 1871-1970 (open data shipped by statsmodels) as an uploaded CSV.
"""

from __future__ import annotations

import importlib
import json

import pandas as pd
import pytest
from dash import no_update
from dash._utils import to_json

import forecasting_core as fc
from app import SHELL_CONTENT_ID, SHELL_PAGE_ID, create_app
from app.state import resolve_selection
from app.warm import prepare_demo

COUNTED = ("compare_models", "run_hindcast", "make_forecast", "check_residuals")


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
    return importlib.import_module("app.pages.bench")


def _shell(app, referrer: str | None) -> dict:
    """The shell as the browser gets it, fetched from the page at ``referrer``."""
    headers = {"Referer": referrer} if referrer else {}
    response = app.server.test_client().get("/_dash-layout", headers=headers)
    assert response.status_code == 200
    return response.get_json()


def _store(node, component_id: str):
    """The ``data`` of the store ``component_id`` in a layout given as JSON."""
    if isinstance(node, list):
        for child in node:
            found = _store(child, component_id)
            if found is not None:
                return found
        return None
    if not isinstance(node, dict) or "props" not in node:
        return None
    if node["props"].get("id") == component_id:
        return node["props"].get("data", "missing")
    return _store(node["props"].get("children"), component_id)


def test_the_shell_for_bench_carries_the_new_visitors_page_without_computing(demo_app, bench, calls):
    prepare_demo(demo_app.server, limit=1)
    calls.clear()
    shell = _shell(demo_app, "http://localhost/bench")
    assert calls == []
    content = _store(shell, SHELL_CONTENT_ID)
    with demo_app.server.test_request_context():
        expected = json.loads(to_json(bench.layout(selection=None)))
    # the page a session without a selection gets from the router, the first answer in it
    assert content == expected
    assert _store(content, "bench-prefill") == {"selection": None}
    assert _store(shell, SHELL_PAGE_ID) == {"path": "/bench"}
    # the page slot itself stays empty: the browser fills it for a new visitor only
    assert '"id": "bench-candidates"' not in json.dumps(shell).replace(json.dumps(content), "")


@pytest.mark.parametrize(
    "referrer",
    [
        None,  # no address: nothing to build
        "http://localhost/board",  # another page
        "http://localhost/bench?analysis=abc",  # a saved analysis: the router restores it
        "http://elsewhere.example/bench",  # not this server's page
    ],
)
def test_only_a_plain_bench_address_gets_a_page_in_the_shell(demo_app, referrer):
    prepare_demo(demo_app.server, limit=1)
    shell = _shell(demo_app, referrer)
    assert _store(shell, SHELL_CONTENT_ID) is None
    assert _store(shell, SHELL_PAGE_ID) is None


def test_a_cold_cache_builds_nothing_into_the_shell_and_computes_nothing(demo_app, calls):
    shell = _shell(demo_app, "http://localhost/bench")
    assert calls == []
    assert _store(shell, SHELL_CONTENT_ID) is None
    assert _store(shell, SHELL_PAGE_ID) is None


@pytest.mark.parametrize(
    ("selection", "shell_page", "query", "kept"),
    [
        (None, {"path": "/bench"}, {}, True),  # the new visitor keeps the page in the shell
        ("demo", {"path": "/bench"}, {}, False),  # a session with a selection gets its own
        (None, None, {}, False),  # the shell had no page (or the router answered already)
        (None, {"path": "/board"}, {}, False),  # the shell holds another page
        (None, {"path": "/bench"}, {"analysis": "abc"}, False),  # an address with a query
    ],
)
def test_the_router_keeps_the_shells_page_only_for_a_new_visitor(
    demo_app, bench, selection, shell_page, query, kept
):
    with demo_app.server.test_request_context():
        sel = None if selection is None else {k: v for k, v in resolve_selection(None).items() if k != "is_demo"}
        page = bench.layout(selection=sel, shell_page=shell_page, **query)
    assert (page is no_update) is kept


def _nile_id(app, nile: pd.Series) -> str:
    lines = ["year,nile"] + [f"{p.year},{v:g}" for p, v in nile.items()]
    store = app.server.extensions["haulcast"]["store"]
    return store.save(("\n".join(lines) + "\n").encode(), "nile.csv")


def test_an_upload_never_reaches_the_shell(demo_app, bench, nile):
    prepare_demo(demo_app.server, limit=1)
    nile_id = _nile_id(demo_app, nile)
    mine = {"dataset_id": nile_id, "series": "nile", "bench": {"max_p": 1, "max_q": 1}, "uploads": [nile_id]}
    with demo_app.server.test_request_context():
        bench._replayed(bench._request(bench._selection_request(mine)))  # the uploader's answer, cached
    text = json.dumps(_store(_shell(demo_app, "http://localhost/bench"), SHELL_CONTENT_ID))
    assert resolve_selection(None, demo_app.server.extensions["haulcast"]["store"])["series"] in text
    assert nile_id not in text and "nile" not in text
