"""The app factory, its configuration, the result cache and the alert pattern, without a browser
(Flask's test client stands in for it)."""

from __future__ import annotations

import base64
import logging
import re
from pathlib import Path

import dash
import pytest
from dash import html
from dash.exceptions import PreventUpdate
from flask import Flask

import forecasting_core as fc
from app import PAGES, create_app
from app.cache import cache_config, get_comparison, get_stationarity, settings_json
from app.ui import PALETTE, alert, guarded

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture
def app(tmp_path):
    return create_app({"DATA_DIR": str(tmp_path / "data"), "CACHE_TYPE": "SimpleCache"})


@pytest.fixture
def client(app):
    return app.server.test_client()


def test_create_app_returns_a_dash_app_on_a_flask_server(app, tmp_path):
    assert isinstance(app, dash.Dash)
    assert isinstance(app.server, Flask)
    assert (tmp_path / "data" / "datasets").is_dir()
    assert app.server.config["DATA_DIR"] == str(tmp_path / "data")


def test_debug_is_off_and_assets_are_served_locally(app):
    assert app.server.debug is False
    assert app.config.serve_locally is True
    assert not app.config.external_scripts
    assert not app.config.external_stylesheets


def test_the_page_references_no_address_outside_this_server(client):
    body = client.get("/intake").get_data(as_text=True)
    sources = re.findall(r'(?:src|href)="([^"]+)"', body)
    assert sources, "expected script and stylesheet tags"
    assert not [s for s in sources if re.match(r"^(https?:)?//", s)], sources
    assert "fonts.googleapis" not in body and "cdn." not in body


def test_every_script_and_stylesheet_of_the_page_is_served_here(client):
    body = client.get("/intake").get_data(as_text=True)
    sources = re.findall(r'(?:src|href)="(/[^"]+)"', body)
    assert any("haulcast.css" in s for s in sources)
    for src in sources:
        assert client.get(src).status_code == 200, src


def test_plotly_js_is_served_by_this_server(client):
    # dcc.Graph loads plotly.js lazily from the plotly package's own data, through this server
    response = client.get("/_dash-component-suites/plotly/package_data/plotly.min.js")
    assert response.status_code == 200
    assert len(response.get_data()) > 1_000_000


@pytest.mark.parametrize(("module", "path", "name", "step"), PAGES)
def test_each_page_is_registered_at_its_route_in_order(client, module, path, name, step):
    page = dash.page_registry[f"app.pages.{module}"]
    assert page["path"] == path
    assert page["title"] == f"{name} \u00b7 Haulcast"
    assert page["order"] == step
    assert client.get(path).status_code == 200


def test_an_unknown_address_gets_our_not_found_page(client):
    assert (
        client.get("/no-such-page").status_code == 200
    )  # Dash answers every path; the page says so
    page = next(p for m, p in dash.page_registry.items() if m.endswith("not_found_404"))
    assert page["title"] == "Page not found \u00b7 Haulcast"


def test_root_is_the_home_page_of_saved_analyses(client):
    response = client.get("/?present=1")
    assert response.status_code == 200
    page = dash.page_registry["app.pages.home"]
    assert page["path"] == "/"
    assert page["title"] == "Saved analyses \u00b7 Haulcast"


def test_the_shell_keeps_one_session_store_for_the_selection(app):
    layout = app.layout() if callable(app.layout) else app.layout
    stores = [c for c in layout._traverse() if getattr(c, "id", None) == "hc-selection"]
    assert len(stores) == 1
    assert stores[0].storage_type == "session"


def test_the_factory_can_build_several_apps_with_all_their_callbacks(tmp_path):
    first = create_app({"DATA_DIR": str(tmp_path / "a"), "LOAD_SAMPLES": False})
    second = create_app({"DATA_DIR": str(tmp_path / "b"), "LOAD_SAMPLES": False})
    deps_first = first.server.test_client().get("/_dash-dependencies").json
    deps_second = second.server.test_client().get("/_dash-dependencies").json
    outputs = sorted(d["output"] for d in deps_first)
    assert outputs == sorted(d["output"] for d in deps_second)
    assert any("intake-series-graph.figure" in o for o in outputs)


def test_every_app_serves_the_javascript_of_the_inline_clientside_callbacks(tmp_path):
    # Dash hands the inline clientside functions to the first app that renders a page and
    # empties its global list; a second app without them fails in the browser with
    # "Cannot read properties of undefined (reading 'apply')".
    pages = []
    for name in ("a", "b"):
        app = create_app({"DATA_DIR": str(tmp_path / name), "LOAD_SAMPLES": False})
        pages.append(app.server.test_client().get("/board").get_data(as_text=True))
    for html_text in pages:
        assert "board-save-name" in html_text or "dash_clientside" in html_text
        assert html_text.count("window.dash_clientside") >= 3
    assert pages[0].count("<script>") == pages[1].count("<script>")


def test_samples_load_by_default_and_can_be_left_out(app, tmp_path):
    assert len(app.server.extensions["haulcast"]["store"].list()) == len(
        list((ROOT / "sample_data").glob("*.csv"))
    )
    bare = create_app({"DATA_DIR": str(tmp_path / "bare"), "LOAD_SAMPLES": False})
    assert bare.server.extensions["haulcast"]["store"].list() == []


@pytest.mark.parametrize(
    ("asked", "kept"),
    [(10**12, fc.MAX_FILE_BYTES), (1_000_000, 1_000_000), (None, fc.MAX_FILE_BYTES)],
)
def test_the_upload_cap_never_exceeds_the_cores_file_limit(tmp_path, asked, kept):
    config = {"DATA_DIR": str(tmp_path), "LOAD_SAMPLES": False}
    if asked is not None:
        config["MAX_UPLOAD_BYTES"] = asked
    app = create_app(config)
    assert app.server.config["MAX_UPLOAD_BYTES"] == kept
    assert app.server.extensions["haulcast"]["store"].max_bytes == kept
    # the request body may carry the base64 upload (4/3 of the bytes) and no more than that by much
    assert kept * 4 / 3 < app.server.config["MAX_CONTENT_LENGTH"] < kept * 1.5 + 2_000_000


def test_the_cache_is_on_disk_under_the_data_folder_by_default(tmp_path):
    cfg = cache_config({}, tmp_path)
    assert cfg["CACHE_TYPE"] == "FileSystemCache"
    assert cfg["CACHE_DIR"] == str(tmp_path / "cache")
    assert (tmp_path / "cache").is_dir()


def test_a_redis_url_switches_the_cache_to_redis(tmp_path):
    cfg = cache_config(
        {"CACHE_REDIS_URL": "redis://cachehost:6379/2", "CACHE_TYPE": "SimpleCache"}, tmp_path
    )
    assert cfg["CACHE_TYPE"] == "RedisCache"
    assert cfg["CACHE_REDIS_URL"] == "redis://cachehost:6379/2"


def test_settings_json_is_canonical():
    assert settings_json({"transform": "auto", "horizon": 5}) == settings_json(
        {"horizon": 5, "transform": "auto"}
    )
    assert settings_json(None) == "{}"


def test_stationarity_is_memoized_per_dataset_series_and_transform(app, monkeypatch):
    calls = []
    real = fc.assess_stationarity

    def counting(y, **kwargs):
        calls.append((y.name, kwargs.get("transform")))
        return real(y, **kwargs)

    monkeypatch.setattr(fc, "assess_stationarity", counting)
    store = app.server.extensions["haulcast"]["store"]
    with app.server.test_request_context():
        first = get_stationarity(store.default_id(), "plaice_t", "none")
        again = get_stationarity(store.default_id(), "plaice_t", "none")
        get_stationarity(store.default_id(), "plaice_t", "log")
    assert first.d == again.d
    assert calls == [("plaice_t", "none"), ("plaice_t", "log")]


# The comparison's memoization (in layers) is tested in tests/app/test_cache_layers.py.


@pytest.mark.parametrize(
    ("series", "settings", "message"),
    [
        (
            "no_such_series",
            "{}",
            r"series must be one of the usable series of this dataset \('hake_t'",
        ),
        ("hake_t", "[1, 2]", "settings must be a JSON object. Got list instead"),
        ("hake_t", "{not json", "settings must be a JSON object"),
    ],
)
def test_bad_comparison_requests_raise_input_errors(app, series, settings, message):
    store = app.server.extensions["haulcast"]["store"]
    with app.server.test_request_context(), pytest.raises(fc.InputError, match=message):
        get_comparison(store.default_id(), series, settings)


def test_an_unknown_transform_is_refused(app):
    store = app.server.extensions["haulcast"]["store"]
    with (
        app.server.test_request_context(),
        pytest.raises(fc.InputError, match="transform must be one of auto"),
    ):
        get_stationarity(store.default_id(), "hake_t", "sqrt")


# -- the alert pattern --------------------------------------------------------------------------


def _text(component) -> str:
    if isinstance(component, str):
        return component
    children = getattr(component, "children", None)
    if children is None:
        return ""
    if isinstance(children, list | tuple):
        return "".join(_text(c) for c in children)
    return _text(children)


def test_input_errors_become_an_alert_with_the_message_verbatim():
    @guarded("reading the file")
    def callback_body():
        raise fc.InputError("horizon must be an integer from 1 to 30. Got 0 instead.")

    box = callback_body()
    assert isinstance(box, html.Div)
    assert box.role == "alert" and "hc-alert" in box.className
    assert "horizon must be an integer from 1 to 30. Got 0 instead." in _text(box)


def test_unexpected_errors_become_a_plain_alert_and_go_to_the_log(caplog):
    @guarded("comparing models", outputs=3, alert_at=2, fallback=[None, "keep", None])
    def callback_body():
        raise ZeroDivisionError("secret internals")

    with caplog.at_level(logging.ERROR, logger="haulcast.app"):
        values = callback_body()
    assert values[:2] == [None, "keep"]
    text = _text(values[2])
    assert (
        "Something went wrong while comparing models \u2014 the details are in the server log."
        in text
    )
    assert "secret internals" not in text and "Traceback" not in text
    assert "ZeroDivisionError" in caplog.text


def test_prevent_update_passes_through_the_guard():
    @guarded("doing nothing")
    def callback_body():
        raise PreventUpdate

    with pytest.raises(PreventUpdate):
        callback_body()


def test_a_guarded_callback_returns_its_values_untouched():
    @guarded("adding", outputs=2)
    def callback_body(a, b):
        return [a + b, None]

    assert callback_body(1, 2) == [3, None]


def test_a_fallback_of_the_wrong_length_is_a_programming_error():
    @guarded("x", outputs=2, fallback=[None])
    def callback_body():
        raise fc.InputError("bad")

    with pytest.raises(ValueError, match="fallback must have 2 values. Got 1 instead"):
        callback_body()


def test_alert_kinds_carry_an_icon_and_a_word():
    for kind, word in (("error", "Error"), ("warning", "Warning"), ("info", "Note"), ("ok", "OK")):
        box = alert("x", kind)
        assert f"hc-alert--{kind}" in box.className
        assert word in _text(box)


def test_the_palette_matches_the_css_variables():
    css = (ROOT / "assets" / "haulcast.css").read_text()
    variables = dict(re.findall(r"--hc-([a-z-]+):\s*(#[0-9a-fA-F]{6})", css))
    for key, value in PALETTE.items():
        assert variables.get(key.replace("_", "-"), "").lower() == value.lower(), key


def test_upload_contents_are_decoded_from_the_data_url():
    from app.intake_views import decode_upload

    raw = b"year,cod_t\n2000,1\n"
    # reference: the standard library's base64 encoder, as browsers write data URLs
    url = "data:text/csv;base64," + base64.b64encode(raw).decode()
    assert decode_upload(url) == raw


def test_the_command_line_has_the_documented_options():
    from app.__main__ import build_parser, main

    args = build_parser().parse_args([])
    assert (args.host, args.port, args.data_dir) == ("127.0.0.1", 8050, None)
    args = build_parser().parse_args(
        ["--host", "0.0.0.0", "--port", "9000", "--data-dir", "/tmp/x"]
    )
    assert (args.host, args.port, args.data_dir) == ("0.0.0.0", 9000, "/tmp/x")
    assert main(["--port", "0"]) == 2
