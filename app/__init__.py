"""Haulcast's dashboard: the Dash app factory.

>>> from app import create_app
>>> app = create_app({"DATA_DIR": "/tmp/haulcast"})        # doctest: +SKIP
>>> app.server.run(port=8050)                              # doctest: +SKIP

Configuration keys (all optional):

``DATA_DIR``
    Folder for datasets and the result cache (default ``$HAULCAST_DATA_DIR`` or
    ``~/.haulcast``).
``CACHE_TYPE`` / ``CACHE_REDIS_URL`` / ``CACHE_DEFAULT_TIMEOUT``
    See :mod:`app.cache` (filesystem cache under ``DATA_DIR/cache`` by default).
``MAX_UPLOAD_BYTES``
    Largest upload accepted, in bytes (default and upper limit:
    ``forecasting_core.MAX_FILE_BYTES``, 20 MB).
``LOAD_SAMPLES``
    Load the demo datasets from ``sample_data/`` at start (default True).
``SAMPLE_DIR``
    Where the demo datasets are (default: the repository's ``sample_data/``).
``ACCESS_KEY``
    The team server's shared access key, or None (default) for an open server; see
    :mod:`app.access` for it and the session cookie settings (``ACCESS_COOKIE_SECURE`` ...).

The layout is the shell (top bar, the ``hc-selection`` session store, a global alert slot)
around Dash's page container; each module in ``app/pages`` registers its page and owns its
callbacks. Debug mode is off and every asset (plotly.js, CSS, images) is served by this
server: nothing is fetched from the internet.
"""

from __future__ import annotations

import functools
import importlib
import json
import logging
import os
import sys
from collections.abc import Mapping
from pathlib import Path
from typing import Any

import dash
from dash import Input, Output, State, dash_table, dcc, html
from dash import _callback as _dash_callback
from dash import _utils as _dash_utils
from flask import Flask

import forecasting_core as fc
from app.access import LOGOUT_PATH, install_access
from app.api import register_api
from app.cache import init_cache
from app.errors import install_error_handlers
from app.state import SELECTION_ID, TRANSFORM_LABELS, resolve_selection
from app.store import DatasetStore
from app.ui import error_alert, guarded

__all__ = ["PAGES", "create_app", "resolve_selection"]

logger = logging.getLogger("haulcast.app")

ROOT = Path(__file__).resolve().parents[1]
ASSETS_DIR = ROOT / "assets"
SAMPLE_DIR = ROOT / "sample_data"

#: The three pages in order: (module, path, name, step).
PAGES: tuple[tuple[str, str, str, int], ...] = (
    ("intake", "/intake", "Intake", 1),
    ("bench", "/bench", "Model Bench", 2),
    ("board", "/board", "Forecast Board", 3),
)
#: The home page (the team's saved analyses), before the steps and without a number.
HOME_PAGE: tuple[str, str, str, int] = ("home", "/", "Home", 0)

_INDEX = """<!DOCTYPE html>
<html lang="en">
    <head>
        {%metas%}
        <title>{%title%}</title>
        <link rel="icon" type="image/svg+xml" href="/assets/haulcast-mark.svg">
        {%css%}
    </head>
    <body>
        <noscript>Haulcast needs JavaScript switched on in this browser.</noscript>
        {%app_entry%}
        <footer>
            {%config%}
            {%scripts%}
            <!--chunks-->
            {%renderer%}
            <!--after-->
        </footer>
    </body>
</html>
"""


#: Script chunks Dash would fetch only once a page's layout is in and shows a table or a
#: dropdown (paths under the component suites). The page loads them with its other scripts
#: (as Dash's ``eager_loading`` does, but without plotly.js, which only the charts need), so
#: the browser compiles them while it waits for the layout and a table draws without waiting.
EAGER_CHUNKS: tuple[str, ...] = (
    "dash/dash_table/async-highlight.js",  # the table asks for it before it is ready
    "dash/dash_table/async-table.js",
    "dash/dcc/async-dropdown.js",
)


def _index_string(prefix: str) -> str:
    """:data:`_INDEX` with a ``<script>`` for each of :data:`EAGER_CHUNKS` under ``prefix``."""
    tags = "\n            ".join(
        f'<script src="{prefix}_dash-component-suites/{chunk}"></script>' for chunk in EAGER_CHUNKS
    )
    return _INDEX.replace("<!--chunks-->", tags).replace("<!--after-->", _TABLE_FIRST)


#: Runs the table chunk's code while the browser waits for the shell (just after Dash has
#: started and asked for it; Dash would run it when the first table is drawn, after the
#: shell). 7559 is the table module of
#: dash_table 7.4 (its loader: ``Promise.all([n.e(254), n.e(214)]).then(n.bind(n, 7559))``);
#: another version may number it otherwise: then this does nothing and the table's code
#: runs when Dash asks for it, as before.
_TABLE_FIRST = """<script>setTimeout(function () { try {
                (self.webpackChunkdash_table = self.webpackChunkdash_table || []).push(
                    [["hc-table-first"], {}, function (require) { require(7559); }]);
            } catch (e) {} }, 0);</script>"""


def _defaults() -> dict[str, Any]:
    return {
        "DATA_DIR": os.environ.get("HAULCAST_DATA_DIR") or str(Path.home() / ".haulcast"),
        "CACHE_TYPE": "FileSystemCache",
        "CACHE_REDIS_URL": os.environ.get("HAULCAST_REDIS_URL") or None,
        "MAX_UPLOAD_BYTES": fc.MAX_FILE_BYTES,
        "LOAD_SAMPLES": True,
        "SAMPLE_DIR": str(SAMPLE_DIR),
        "ACCESS_KEY": None,
    }


def _context_item(label: str, value_id: str) -> html.Div:
    """One labelled value of the top bar's current selection (filled by a callback)."""
    return html.Div(
        [
            html.Span(label, className="hc-context__label"),
            html.Span("\u2014", id=value_id, className="hc-context__value"),
        ],
        className="hc-context__item",
    )


def create_app(config: Mapping[str, Any] | None = None) -> dash.Dash:
    """Build the Haulcast Dash app.

    Parameters
    ----------
    config : mapping, optional
        Keys described in the module docstring; anything else is copied into the Flask
        config as well.

    Returns
    -------
    dash.Dash
        ``app.server`` is the Flask server (WSGI application) to serve.
    """
    cfg = {**_defaults(), **dict(config or {})}
    data_dir = Path(cfg["DATA_DIR"]).expanduser()
    data_dir.mkdir(parents=True, exist_ok=True)
    max_bytes = min(int(cfg["MAX_UPLOAD_BYTES"]), int(fc.MAX_FILE_BYTES))
    cfg["MAX_UPLOAD_BYTES"] = max_bytes

    server = Flask("app", root_path=str(ROOT))
    server.config.update({k: v for k, v in cfg.items() if k.isupper()})
    server.config["DATA_DIR"] = str(data_dir)
    # An upload travels base64-encoded inside a JSON callback body: allow a third more plus slack.
    server.config["MAX_CONTENT_LENGTH"] = int(max_bytes * 1.4) + 1_000_000
    server.config["PROPAGATE_EXCEPTIONS"] = False
    install_access(server)  # the key check runs before every other request hook

    store = DatasetStore(data_dir, max_bytes=max_bytes)
    if cfg.get("LOAD_SAMPLES", True):
        store.load_samples(cfg.get("SAMPLE_DIR") or SAMPLE_DIR)
        from app.demo_record import seed_demo_record  # the demo's forecast record

        seed_demo_record(store, cfg.get("SAMPLE_DIR") or SAMPLE_DIR)
    server.extensions["haulcast"] = {"store": store, "config": cfg}
    init_cache(server, cfg, data_dir)
    register_api(server)  # the read-only JSON API under /api (app/api.py)

    app = dash.Dash(
        "app",
        server=server,
        use_pages=True,
        pages_folder="",
        assets_folder=str(ASSETS_DIR),
        serve_locally=True,
        title="Haulcast",
        update_title=None,
        suppress_callback_exceptions=True,
        index_string=_INDEX,
        meta_tags=[{"name": "viewport", "content": "width=device-width, initial-scale=1"}],
        on_error=_on_error,
        # page layouts see the session's selection (the Model Bench builds its first answer in)
        # and which page the shell was built with (see _shell_page)
        routing_callback_inputs={
            "selection": State(SELECTION_ID, "data"),
            "shell_page": State(SHELL_PAGE_ID, "data"),
        },
    )
    app.index_string = _index_string(app.config.requests_pathname_prefix)
    _attach_pages(app)
    app.layout = _shell_layout
    _register_shell_callbacks(app)
    install_error_handlers(app)
    return app


# ---------------------------------------------------------------------------------------------
# Pages
# ---------------------------------------------------------------------------------------------


@functools.cache
def _page_callbacks() -> tuple[tuple[Any, ...], tuple[tuple[str, Any], ...], tuple[str, ...]]:
    """Import the page modules once per process and take their ``dash.callback`` registrations.

    Dash keeps ``dash.callback`` registrations, and the JavaScript of inline
    ``clientside_callback`` functions, in process-wide lists that the first app to serve a
    request consumes. Taking them here and handing each app its own copy lets ``create_app``
    be called more than once in a process (tests do).
    """
    before_list = len(_dash_callback.GLOBAL_CALLBACK_LIST)
    before_scripts = len(_dash_callback.GLOBAL_INLINE_SCRIPTS)
    before_keys = set(_dash_callback.GLOBAL_CALLBACK_MAP)
    for module_name, path, name, step in (HOME_PAGE, *PAGES):
        full = f"app.pages.{module_name}"
        try:
            module = importlib.import_module(full)
        except ModuleNotFoundError as err:
            if err.name != full:
                raise
            logger.warning("Page module %s is missing; showing a placeholder at %s", full, path)
            dash.register_page(
                full,
                path=path,
                name=name,
                order=step,
                title=f"{name} \u00b7 Haulcast",
                layout=_placeholder_layout(name, step),
            )
            continue
        page = dash.page_registry.get(full)
        if page is not None and page.get("layout") is None and hasattr(module, "layout"):
            page["layout"] = module.layout
    dash.register_page(
        "app.not_found_404",
        path="/404",
        title="Page not found \u00b7 Haulcast",
        layout=_not_found_layout(),
    )
    new_list = tuple(_dash_callback.GLOBAL_CALLBACK_LIST[before_list:])
    del _dash_callback.GLOBAL_CALLBACK_LIST[before_list:]
    new_map = tuple(
        (k, _dash_callback.GLOBAL_CALLBACK_MAP.pop(k))
        for k in list(_dash_callback.GLOBAL_CALLBACK_MAP)
        if k not in before_keys
    )
    new_scripts = tuple(_dash_callback.GLOBAL_INLINE_SCRIPTS[before_scripts:])
    del _dash_callback.GLOBAL_INLINE_SCRIPTS[before_scripts:]
    return new_list, new_map, new_scripts


def _attach_pages(app: dash.Dash) -> None:
    callbacks, callback_map, scripts = _page_callbacks()
    for key, spec in callback_map:
        app.callback_map[key] = spec
    app._callback_list.extend(callbacks)  # noqa: SLF001 - see _page_callbacks
    app._inline_scripts.extend(scripts)  # noqa: SLF001 - see _page_callbacks


def _not_found_layout() -> html.Div:
    from app.ui import page_header

    return html.Div(
        [
            page_header("Page not found", "There is no page at this address."),
            html.P(
                [
                    "Start at ",
                    dcc.Link("Intake", href="/intake"),
                    " to bring in data, or go to the ",
                    dcc.Link("Forecast Board", href="/board"),
                    ".",
                ]
            ),
        ],
        className="hc-page",
    )


def _placeholder_layout(name: str, step: int) -> html.Div:
    from app.ui import page_header

    return html.Div(
        [page_header(name, "This page is not available on this server yet.", step=step)],
        className="hc-page",
    )


# ---------------------------------------------------------------------------------------------
# Shell
# ---------------------------------------------------------------------------------------------


def _shell_layout() -> html.Div:
    nav = [
        dcc.Link(
            html.Span(HOME_PAGE[2], className="hc-nav__home"),
            href=HOME_PAGE[1],
            id=f"hc-nav-{HOME_PAGE[0]}",
            className="hc-nav__link",
        )
    ] + [
        dcc.Link(
            [
                html.Span(str(step), className="hc-nav__num"),
                html.Span(name, className="hc-nav__name"),
            ],
            href=path,
            id=f"hc-nav-{module}",
            className="hc-nav__link",
        )
        for module, path, name, step in PAGES
    ]
    content, marker = _shell_page()
    return html.Div(
        [
            dcc.Location(id="hc-url"),
            dcc.Store(id=SELECTION_ID, storage_type="session"),
            dcc.Store(id=SHELL_PAGE_ID, data=marker),
            dcc.Store(id=SHELL_CONTENT_ID, data=content),
            html.A("Skip to the page content", href="#hc-main", className="hc-skip"),
            html.Header(
                [
                    dcc.Link(
                        [
                            html.Img(
                                src=dash.get_asset_url("haulcast-mark.svg"),
                                alt="",
                                className="hc-brand__mark",
                            ),
                            html.Span("Haulcast", className="hc-brand__name"),
                        ],
                        href="/",
                        className="hc-brand",
                        id="hc-brand",
                    ),
                    html.Nav(nav, className="hc-nav", **{"aria-label": "Steps"}),
                    html.Div(
                        [
                            _context_item("Dataset", "hc-context-dataset"),
                            _context_item("Series", "hc-context-series"),
                            _context_item("Transform", "hc-context-transform"),
                            _context_item("Model", "hc-context-model"),
                        ],
                        id="hc-context",
                        className="hc-context",
                        **{"aria-live": "polite"},
                    ),
                ],
                className="hc-topbar",
            ),
            html.Div(id="hc-global-alert", className="hc-global-alert"),
            html.Main(dash.page_container, id="hc-main", className="hc-main"),
            _lazy_warmers(),
            html.Footer(
                [
                    html.Span(f"Haulcast {fc.__version__}"),
                    html.Span(
                        "Statistical projections from past values only \u2014 not a stock assessment."
                    ),
                    *_forget_key_link(),
                ],
                className="hc-footer",
            ),
        ],
        className="hc-shell",
    )


#: The stores naming the page built into the shell for a new visitor (None once routed) and
#: holding it until it is drawn (see _shell_page).
SHELL_PAGE_ID = "hc-shell-page"
SHELL_CONTENT_ID = "hc-shell-content"


def _shell_page() -> tuple[Any, dict[str, str] | None]:
    """The page a new visitor opened, built into the shell, and the marker naming it.

    Dash fills the page slot with a callback once the browser has the shell: one more round
    trip before anything of the page shows. When the shell is fetched for a page whose module
    has ``prefilled()`` (the Model Bench, when its first answer is cached) and the address
    has no query, the page as a new visitor (no session selection) would get it goes into
    the shell's :data:`SHELL_CONTENT_ID` store, and :data:`SHELL_PAGE_ID` holds
    ``{"path": ...}``. In the browser a clientside callback puts it into the page slot for
    a new visitor only, once the table code is ready (a table drawn before its code has
    loaded is held back by React); the page's layout answers the router's first call for a
    new visitor with ``no_update``. A returning session gets its own page from the router as
    before. Returns ``(None, None)`` otherwise.
    """
    from urllib.parse import urlsplit

    from flask import has_request_context, request

    if not has_request_context() or not request.path.endswith("_dash-layout"):
        return None, None
    address = urlsplit(request.referrer or "")
    if address.query or address.netloc != request.host:
        return None, None
    try:
        path = "/" + (dash.strip_relative_path(address.path) or "")
    except Exception:  # noqa: BLE001 - an address outside the app: nothing built in
        return None, None
    for page in dash.page_registry.values():
        if page.get("path") != path:
            continue
        build = getattr(sys.modules.get(page["module"]), "prefilled", None)
        content = build() if callable(build) else None
        if content is None:
            return None, None
        # a store holds plain data: the page as the JSON the router would have sent
        return json.loads(_dash_utils.to_json(content)), {"path": path}
    return None, None


def _lazy_warmers() -> html.Div:
    """A hidden, empty table and dropdown, drawn with the shell while the page is fetched.

    Dash draws tables and dropdowns with React's lazy components: the first one drawn
    waits for its code and then for React, which holds content back for about half a second
    after a placeholder was shown. Drawn here first, the page's own tables and dropdowns
    draw at once when the page comes.
    """
    return html.Div(
        [
            dash_table.DataTable(id="hc-warm-table", columns=[{"name": "-", "id": "x"}], data=[]),
            dcc.Dropdown(id="hc-warm-dropdown", options=[], value=None),
        ],
        hidden=True,
        className="hc-warmers",
        **{"aria-hidden": "true"},
    )


def _forget_key_link() -> list[Any]:
    """A "forget the access key" link in the footer when this server has a key."""
    from flask import current_app, has_app_context

    if not (has_app_context() and current_app.config.get("ACCESS_KEY")):
        return []
    return [html.A("Forget the access key", href=LOGOUT_PATH, className="hc-footer__key")]


def _register_shell_callbacks(app: dash.Dash) -> None:
    @app.callback(
        Output("hc-context-dataset", "children"),
        Output("hc-context-series", "children"),
        Output("hc-context-transform", "children"),
        Output("hc-context-model", "children"),
        Output("hc-global-alert", "children"),
        Output("hc-context-dataset", "title"),
        Output("hc-context-series", "title"),
        Input(SELECTION_ID, "data"),
    )
    @guarded("showing the current selection", outputs=7, alert_at=4)
    def show_context(data: Mapping[str, Any] | None) -> list[Any]:
        from app.store import get_store

        store = get_store()
        sel = resolve_selection(data, store)
        title = None
        if sel["dataset_id"] is None:
            name: Any = "none loaded"
        else:
            meta = store.meta(sel["dataset_id"])
            title = meta.filename + (" (demo data)" if meta.sample else " (your upload)")
            name = (
                [meta.filename, html.Span(" demo", className="hc-tag")]
                if meta.sample
                else meta.filename
            )
        return [
            name,
            sel["series"] or "\u2014",
            TRANSFORM_LABELS.get(sel["transform"], sel["transform"]),
            sel["model"] or "best by AICc",
            None,
            title,
            sel["series"],  # the full name when a long one is cut short with an ellipsis
        ]

    # a new visitor's page built into the shell (see _shell_page), drawn once the table code
    # is ready; the router's answer to a returning session's selection replaces nothing here
    app.clientside_callback(
        """
        function(content, selection) {
            if (!content || selection != null) return window.dash_clientside.no_update;
            performance.mark("hc-shell-page-asked");
            const path = window.location.pathname;
            const table = window.dash_table && window.dash_table.DataTable;
            return Promise.resolve(table && table._dashprivate_isLazyComponentReady).then(() => {
                // the visitor may have gone to another page meanwhile
                if (window.location.pathname !== path) return window.dash_clientside.no_update;
                performance.mark("hc-shell-page-drawn");
                return content;
            });
        }
        """,
        Output("_pages_content", "children", allow_duplicate=True),
        Input(SHELL_CONTENT_ID, "data"),
        State(SELECTION_ID, "data"),
        prevent_initial_call="initial_duplicate",
    )
    # the page built into the shell stands only until the router's first answer
    app.clientside_callback(
        "function(_title) { return null; }",
        Output(SHELL_PAGE_ID, "data"),
        Input("_pages_store", "data"),
        prevent_initial_call=True,
    )

    @app.callback(
        [Output(f"hc-nav-{module}", "className") for module, *_ in (HOME_PAGE, *PAGES)],
        Input("hc-url", "pathname"),
    )
    def mark_current(pathname: str | None) -> list[str]:
        path = (pathname or "/").rstrip("/") or "/"
        return [
            "hc-nav__link hc-nav__link--current" if path == page_path else "hc-nav__link"
            for _module, page_path, *_ in (HOME_PAGE, *PAGES)
        ]


def _on_error(err: Exception) -> None:
    """Last line of defence for a callback that is not ``guarded``: an alert at the top."""
    dash.set_props("hc-global-alert", {"children": error_alert(err, "updating the page")})
